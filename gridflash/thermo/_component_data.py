"""Built-in pure-component constants.

Every row gives critical temperature ``tc`` (K), critical pressure ``pc`` (bar in this table,
converted to Pa on use), acentric factor ``omega``, molar mass ``mw`` (g/mol) and critical volume
``vc`` (cm3/mol, converted to m3/mol on use).

Source of every value in ``_ROWS``: B. E. Poling, J. M. Prausnitz and J. P. O'Connell, *The
Properties of Gases and Liquids*, 5th ed., McGraw-Hill, 2001, Appendix A, Section A (values
transcribed from memory of that table; the test suite checks each one against the ``chemicals``
package's critical-property databases, see ``tests/test_components.py``).

Volume shift: ``LIQUID_DENSITY_07`` gives each built-in component's saturated-liquid molar
density at ``Tr = 0.7`` (``T = 0.7 tc`` with ``tc`` of ``_ROWS``); the Peneloux shift of a built-in
component is chosen so that the equation of state in use reproduces it (see
``_volume_shift.py``). Rackett compressibility ``zra`` is not tabulated here: for other
components it is estimated by the Yamada-Gunn correlation (see ``_components.py``) and the shift
derived from it by Peneloux's rule.
"""

from __future__ import annotations

#: Source label stored with each built-in component (and in a store's provenance).
SOURCE = (
    "Poling, Prausnitz & O'Connell (2001), The Properties of Gases and Liquids, 5th ed., App. A"
)

# name, shorthand, aliases, tc [K], pc [bar], omega [-], mw [g/mol], vc [cm3/mol]
_ROWS: tuple[tuple[str, str, tuple[str, ...], float, float, float, float, float], ...] = (
    ("nitrogen", "N2", (), 126.20, 33.98, 0.037, 28.014, 90.10),
    ("carbon dioxide", "CO2", (), 304.12, 73.74, 0.225, 44.010, 94.07),
    ("hydrogen sulfide", "H2S", ("hydrogen sulphide",), 373.40, 89.63, 0.090, 34.082, 98.50),
    ("water", "H2O", (), 647.14, 220.64, 0.344, 18.015, 55.95),
    ("methane", "C1", (), 190.56, 45.99, 0.011, 16.043, 98.60),
    ("ethane", "C2", (), 305.32, 48.72, 0.099, 30.070, 145.50),
    ("propane", "C3", (), 369.83, 42.48, 0.152, 44.097, 200.00),
    ("isobutane", "iC4", ("i-butane", "2-methylpropane"), 407.85, 36.40, 0.186, 58.123, 262.70),
    ("n-butane", "nC4", ("butane",), 425.12, 37.96, 0.200, 58.123, 255.00),
    ("isopentane", "iC5", ("i-pentane", "2-methylbutane"), 460.39, 33.81, 0.229, 72.150, 306.00),
    ("n-pentane", "nC5", ("pentane",), 469.70, 33.70, 0.252, 72.150, 313.00),
    ("n-hexane", "nC6", ("hexane",), 507.60, 30.25, 0.300, 86.177, 368.00),
    ("n-heptane", "nC7", ("heptane",), 540.20, 27.40, 0.350, 100.204, 428.00),
    ("n-octane", "nC8", ("octane",), 568.70, 24.90, 0.399, 114.231, 492.00),
    ("n-nonane", "nC9", ("nonane",), 594.60, 22.90, 0.445, 128.258, 555.00),
    ("n-decane", "nC10", ("decane",), 617.70, 21.10, 0.490, 142.285, 624.00),
)

#: Source of ``LIQUID_DENSITY_07`` (all components but water).
LIQUID_DENSITY_SOURCE = (
    "Perry's Chemical Engineers' Handbook, 8th ed. (2008), Table 2-32, DIPPR equation 105 "
    "coefficients (as distributed in the chemicals package), evaluated at 0.7 tc"
)
#: Source of water's value.
WATER_DENSITY_SOURCE = (
    "IAPWS steam tables, saturated liquid at 453.0 K (v = 0.001127 m3/kg at 180 degC, from memory)"
)

#: Saturated-liquid molar density at Tr = 0.7, mol/m3 (temperature in the comment).
LIQUID_DENSITY_07: dict[str, float] = {
    "N2": 26924.1,  # 88.34 K
    "CO2": 27131.7,  # 212.88 K (the correlation extrapolated below the triple point, 216.6 K)
    "H2S": 25217.2,  # 261.38 K
    "H2O": 0.887e6 / 18.015,  # 453.0 K; WATER_DENSITY_SOURCE
    "C1": 24183.2,  # 133.39 K
    "C2": 16791.0,  # 213.72 K
    "C3": 12421.7,  # 258.88 K
    "iC4": 9756.5,  # 285.50 K
    "nC4": 9874.1,  # 297.58 K
    "iC5": 8184.4,  # 322.27 K
    "nC5": 8171.9,  # 328.79 K
    "nC6": 6973.5,  # 355.32 K
    "nC7": 6068.6,  # 378.14 K
    "nC8": 5371.2,  # 398.09 K
    "nC9": 4803.9,  # 416.22 K
    "nC10": 4338.9,  # 432.39 K
}
