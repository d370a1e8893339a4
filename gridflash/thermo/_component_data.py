"""Built-in pure-component constants.

Every row gives critical temperature ``tc`` (K), critical pressure ``pc`` (bar in this table,
converted to Pa on use), acentric factor ``omega``, molar mass ``mw`` (g/mol) and critical volume
``vc`` (cm3/mol, converted to m3/mol on use).

Source of every value in ``_ROWS``: B. E. Poling, J. M. Prausnitz and J. P. O'Connell, *The
Properties of Gases and Liquids*, 5th ed., McGraw-Hill, 2001, Appendix A, Section A (values
transcribed from memory of that table; the test suite checks each one against the ``chemicals``
package's critical-property databases, see ``tests/test_components.py``).

Volume shift: ``LIQUID_DENSITY`` gives each built-in component's published saturated-liquid
molar density at one reduced temperature (``T = Tr tc`` with ``tc`` of ``_ROWS``); the Peneloux
shift of a built-in component is chosen so that the equation of state in use reproduces it (see
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

#: Source of ``LIQUID_DENSITY`` (all components but water).
LIQUID_DENSITY_SOURCE = (
    "Perry's Chemical Engineers' Handbook, 8th ed. (2008), Table 2-32, DIPPR equation 105 "
    "coefficients (as distributed in the chemicals package), evaluated at 0.75 tc"
)
#: Source of water's value.
WATER_DENSITY_SOURCE = (
    "IAPWS steam tables, saturated liquid at 453.0 K (v = 0.001127 m3/kg at 180 degC, from memory)"
)

#: Published saturated-liquid molar density of each built-in component, ``(Tr, mol/m3)``: at
#: Tr = 0.75, the middle of the range Tr 0.6-0.8 where liquid densities are checked (a constant
#: shift cannot follow the EOS's temperature slope; matching mid-range halves the largest error
#: of matching at Tr = 0.7), except water (IAPWS value at Tr = 0.7). Temperatures in comments.
LIQUID_DENSITY: dict[str, tuple[float, float]] = {
    "N2": (0.75, 25711.3),  # 94.65 K
    "CO2": (0.75, 25842.7),  # 228.09 K
    "H2S": (0.75, 24058.6),  # 280.05 K
    "H2O": (0.70, 0.887e6 / 18.015),  # 453.0 K; WATER_DENSITY_SOURCE
    "C1": (0.75, 23121.9),  # 142.92 K
    "C2": (0.75, 16028.0),  # 228.99 K
    "C3": (0.75, 11847.7),  # 277.37 K
    "iC4": (0.75, 9323.2),  # 305.89 K
    "nC4": (0.75, 9420.9),  # 318.84 K
    "iC5": (0.75, 7815.4),  # 345.29 K
    "nC5": (0.75, 7799.5),  # 352.27 K
    "nC6": (0.75, 6654.7),  # 380.70 K
    "nC7": (0.75, 5785.8),  # 405.15 K
    "nC8": (0.75, 5114.9),  # 426.53 K
    "nC9": (0.75, 4573.1),  # 445.95 K
    "nC10": (0.75, 4128.8),  # 463.28 K
}
