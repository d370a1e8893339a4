"""Published correlations for petroleum fractions: boiling point, critical constants, omega.

Every function takes and returns SI units (K, Pa, m3/mol, g/mol) and works elementwise on numpy
arrays; inside, each correlation is written in the units it was published in (degrees Rankine,
psia, ft3/lbmol) with the conversion done once at the boundary. Coefficients are quoted from the
papers as reproduced in C. H. Whitson and M. R. Brule, *Phase Behavior*, SPE Monograph 20 (2000),
chapter 5, and in T. Ahmed, *Equations of State and PVT Analysis* (2007), chapter 2; they were
transcribed from memory of those texts and are checked in ``tests/test_characterisation.py``
against the ``chemicals`` package's reference data for n-alkanes and against
``chemicals.acentric.LK_omega``.

``SG`` is the specific gravity at 60 degF / 60 degF (relative to water), dimensionless.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike, NDArray

__all__ = [
    "ACENTRIC_METHODS",
    "BOILING_POINT_METHODS",
    "CRITICAL_METHODS",
    "chueh_prausnitz_kij",
    "edmister_acentric",
    "generalized_scn_properties",
    "kesler_lee_critical",
    "lee_kesler_acentric",
    "riazi_daubert_1987_boiling_point",
    "riazi_daubert_critical",
    "riazi_daubert_critical_volume",
    "riazi_daubert_molar_mass",
    "soreide_boiling_point",
    "watson_k",
    "whitson_specific_gravity",
    "whitson_watson_k",
]

FloatArray = NDArray[np.float64]

_RANKINE_PER_KELVIN = 1.8
_PA_PER_PSI = 6894.757293168361  # 1 lbf/in2 = 0.45359237 kg * 9.80665 m/s2 / 0.0254**2 m2 (exact)
_PSIA_PER_ATM = 101325.0 / _PA_PER_PSI  # 14.6959...
_M3MOL_PER_FT3LBMOL = 0.028316846592 / 453.59237  # 1 ft3 / 1 lbmol, both exact definitions


def _as_float(x: ArrayLike) -> FloatArray:
    return np.asarray(x, dtype=float)


# --------------------------------------------------------------------------------------------
# Generalised single-carbon-number properties
# --------------------------------------------------------------------------------------------

#: Generalised SCN properties: carbon number, molar mass [g/mol], specific gravity.
#: Katz & Firoozabadi (1978), J. Pet. Tech. 30(11), 1649-1655, Table 1, as extended to C45 by
#: Whitson (1983), SPE J. 23(4), 683-694. Transcribed from memory of the table as printed in
#: Whitson & Brule (2000); the tests check the rows for smoothness and for a near-constant Watson
#: factor. Used only as defaults for measured SCN fractions given without molar mass or SG.
_KATZ_FIROOZABADI: tuple[tuple[int, float, float], ...] = (
    (6, 84.0, 0.690),
    (7, 96.0, 0.727),
    (8, 107.0, 0.749),
    (9, 121.0, 0.768),
    (10, 134.0, 0.782),
    (11, 147.0, 0.793),
    (12, 161.0, 0.804),
    (13, 175.0, 0.815),
    (14, 190.0, 0.826),
    (15, 206.0, 0.836),
    (16, 222.0, 0.843),
    (17, 237.0, 0.851),
    (18, 251.0, 0.856),
    (19, 263.0, 0.861),
    (20, 275.0, 0.866),
    (21, 291.0, 0.871),
    (22, 300.0, 0.876),
    (23, 312.0, 0.881),
    (24, 324.0, 0.885),
    (25, 337.0, 0.888),
    (26, 349.0, 0.892),
    (27, 360.0, 0.896),
    (28, 372.0, 0.899),
    (29, 382.0, 0.902),
    (30, 394.0, 0.905),
    (31, 404.0, 0.909),
    (32, 415.0, 0.912),
    (33, 426.0, 0.915),
    (34, 437.0, 0.917),
    (35, 445.0, 0.920),
    (36, 456.0, 0.922),
    (37, 464.0, 0.925),
    (38, 475.0, 0.927),
    (39, 484.0, 0.929),
    (40, 495.0, 0.931),
    (41, 502.0, 0.933),
    (42, 512.0, 0.934),
    (43, 521.0, 0.936),
    (44, 531.0, 0.938),
    (45, 539.0, 0.940),
)
_KF_BY_N = {row[0]: row[1:] for row in _KATZ_FIROOZABADI}
KATZ_FIROOZABADI_RANGE: tuple[int, int] = (_KATZ_FIROOZABADI[0][0], _KATZ_FIROOZABADI[-1][0])


def generalized_scn_properties(carbon_number: int) -> tuple[float, float]:
    """Generalised molar mass and specific gravity of a single carbon number.

    Parameters
    ----------
    carbon_number : int
        Carbon number, 6 to 45.

    Returns
    -------
    mw : float
        Molar mass, g/mol.
    sg : float
        Specific gravity (60 degF / 60 degF).

    Raises
    ------
    KeyError
        If the carbon number is outside the table (callers turn this into an InputError).

    References
    ----------
    Katz, D. L. and Firoozabadi, A. (1978), J. Pet. Tech. 30(11), 1649-1655; extended to C45 by
    Whitson, C. H. (1983), SPE J. 23(4), 683-694. Values from memory of the printed table.
    """
    return _KF_BY_N[int(carbon_number)]


# --------------------------------------------------------------------------------------------
# Watson characterisation factor
# --------------------------------------------------------------------------------------------

#: Whitson (1983) approximation Kw = 4.5579 M^0.15178 SG^-0.84573.
_WHITSON_KW = (4.5579, 0.15178, 0.84573)


def watson_k(tb: ArrayLike, sg: ArrayLike) -> FloatArray:
    """Watson (UOP) characterisation factor ``Kw = Tb^(1/3) / SG`` with ``Tb`` in degrees Rankine.

    Parameters
    ----------
    tb : array_like
        Normal boiling point, K.
    sg : array_like
        Specific gravity.

    References
    ----------
    Watson, K. M., Nelson, E. F. and Murphy, G. B. (1935), Ind. Eng. Chem. 27(12), 1460-1464.
    """
    return np.cbrt(_as_float(tb) * _RANKINE_PER_KELVIN) / _as_float(sg)


def whitson_watson_k(mw: ArrayLike, sg: ArrayLike) -> FloatArray:
    """Whitson's approximation of the Watson factor from molar mass and specific gravity.

    ``Kw = 4.5579 M^0.15178 SG^-0.84573`` (Whitson 1983, from the Riazi-Daubert 1980 boiling point
    correlation; from memory).

    References
    ----------
    Whitson, C. H. (1983), "Characterizing hydrocarbon plus fractions", SPE J. 23(4), 683-694.
    """
    a, b, c = _WHITSON_KW
    return a * _as_float(mw) ** b * _as_float(sg) ** (-c)


def whitson_specific_gravity(mw: ArrayLike, kw: ArrayLike) -> FloatArray:
    """Specific gravity from molar mass at a given Watson factor (inverts :func:`whitson_watson_k`).

    ``SG = (4.5579 M^0.15178 / Kw)^(1/0.84573)``.
    """
    a, b, c = _WHITSON_KW
    return (a * _as_float(mw) ** b / _as_float(kw)) ** (1.0 / c)


# --------------------------------------------------------------------------------------------
# Normal boiling point from molar mass and specific gravity
# --------------------------------------------------------------------------------------------


def soreide_boiling_point(mw: ArrayLike, sg: ArrayLike) -> FloatArray:
    """Normal boiling point of a petroleum fraction by Soreide's correlation.

    ``Tb [degR] = 1928.3 - 1.695e5 M^-0.03522 SG^3.266 exp(-4.922e-3 M - 4.7685 SG
    + 3.462e-3 M SG)``

    Parameters
    ----------
    mw : array_like
        Molar mass, g/mol.
    sg : array_like
        Specific gravity.

    Returns
    -------
    ndarray
        Normal boiling point, K.

    References
    ----------
    Soreide, I. (1989), *Improved Phase Behavior Predictions of Petroleum Reservoir Fluids from a
    Cubic Equation of State*, Dr. Ing. thesis, Norwegian Institute of Technology, Trondheim;
    as given in Whitson & Brule (2000), Eq. 5.x (from memory).
    """
    m = _as_float(mw)
    s = _as_float(sg)
    tb_r = 1928.3 - 1.695e5 * m**-0.03522 * s**3.266 * np.exp(
        -4.922e-3 * m - 4.7685 * s + 3.462e-3 * m * s
    )
    return tb_r / _RANKINE_PER_KELVIN


def riazi_daubert_1987_boiling_point(mw: ArrayLike, sg: ArrayLike) -> FloatArray:
    """Normal boiling point by the Riazi-Daubert (1987) molar-mass / specific-gravity correlation.

    ``Tb [degR] = 6.77857 M^0.401673 SG^-1.58262 exp(3.77409e-3 M + 2.984036 SG
    - 4.25288e-3 M SG)``

    References
    ----------
    Riazi, M. R. and Daubert, T. E. (1987), "Characterization parameters for petroleum fractions",
    Ind. Eng. Chem. Res. 26(4), 755-759 (coefficients from memory, as printed in Ahmed 2007).
    """
    m = _as_float(mw)
    s = _as_float(sg)
    tb_r = (
        6.77857
        * m**0.401673
        * s**-1.58262
        * np.exp(3.77409e-3 * m + 2.984036 * s - 4.25288e-3 * m * s)
    )
    return tb_r / _RANKINE_PER_KELVIN


# --------------------------------------------------------------------------------------------
# Critical temperature and pressure
# --------------------------------------------------------------------------------------------


def kesler_lee_critical(tb: ArrayLike, sg: ArrayLike) -> tuple[FloatArray, FloatArray]:
    """Critical temperature and pressure by the Kesler-Lee (1976) correlations.

    With ``Tb`` in degR and ``Pc`` in psia::

        Tc = 341.7 + 811 SG + (0.4244 + 0.1174 SG) Tb + (0.4669 - 3.2623 SG) 1e5 / Tb
        ln Pc = 8.3634 - 0.0566/SG - (0.24244 + 2.2898/SG + 0.11857/SG^2) 1e-3 Tb
                + (1.4685 + 3.648/SG + 0.47227/SG^2) 1e-7 Tb^2
                - (0.42019 + 1.6977/SG^2) 1e-10 Tb^3

    Parameters
    ----------
    tb : array_like
        Normal boiling point, K.
    sg : array_like
        Specific gravity.

    Returns
    -------
    tc : ndarray
        Critical temperature, K.
    pc : ndarray
        Critical pressure, Pa.

    References
    ----------
    Kesler, M. G. and Lee, B. I. (1976), "Improve prediction of enthalpy of fractions",
    Hydrocarbon Processing 55(3), 153-158 (coefficients from memory).
    """
    t = _as_float(tb) * _RANKINE_PER_KELVIN
    s = _as_float(sg)
    tc_r = 341.7 + 811.0 * s + (0.4244 + 0.1174 * s) * t + (0.4669 - 3.2623 * s) * 1e5 / t
    ln_pc = (
        8.3634
        - 0.0566 / s
        - (0.24244 + 2.2898 / s + 0.11857 / s**2) * 1e-3 * t
        + (1.4685 + 3.648 / s + 0.47227 / s**2) * 1e-7 * t**2
        - (0.42019 + 1.6977 / s**2) * 1e-10 * t**3
    )
    return tc_r / _RANKINE_PER_KELVIN, np.exp(ln_pc) * _PA_PER_PSI


def riazi_daubert_critical(tb: ArrayLike, sg: ArrayLike) -> tuple[FloatArray, FloatArray]:
    """Critical temperature and pressure by the Riazi-Daubert (1980) correlations.

    With ``Tb`` in degR: ``Tc [degR] = 24.2787 Tb^0.58848 SG^0.3596`` and
    ``Pc [psia] = 3.12281e9 Tb^-2.3125 SG^2.3201``.

    Returns
    -------
    tc : ndarray
        Critical temperature, K.
    pc : ndarray
        Critical pressure, Pa.

    References
    ----------
    Riazi, M. R. and Daubert, T. E. (1980), "Simplify property predictions", Hydrocarbon
    Processing 59(3), 115-116 (coefficients from memory).
    """
    t = _as_float(tb) * _RANKINE_PER_KELVIN
    s = _as_float(sg)
    tc_r = 24.2787 * t**0.58848 * s**0.3596
    pc_psia = 3.12281e9 * t**-2.3125 * s**2.3201
    return tc_r / _RANKINE_PER_KELVIN, pc_psia * _PA_PER_PSI


def riazi_daubert_critical_volume(tb: ArrayLike, sg: ArrayLike) -> FloatArray:
    """Critical molar volume by the Riazi-Daubert (1980) correlation.

    ``Vc [ft3/lbmol] = 7.0434e-7 Tb^2.3829 SG^-1.683`` with ``Tb`` in degR.

    Returns
    -------
    ndarray
        Critical volume, m3/mol.

    References
    ----------
    Riazi, M. R. and Daubert, T. E. (1980), Hydrocarbon Processing 59(3), 115-116 (coefficients
    from memory).
    """
    t = _as_float(tb) * _RANKINE_PER_KELVIN
    s = _as_float(sg)
    return 7.0434e-7 * t**2.3829 * s**-1.683 * _M3MOL_PER_FT3LBMOL


def riazi_daubert_molar_mass(tb: ArrayLike, sg: ArrayLike) -> FloatArray:
    """Molar mass by the Riazi-Daubert (1980) correlation ``M = 4.5673e-5 Tb^2.1962 SG^-1.0164``.

    ``Tb`` in K here (converted to degR inside). Used as a consistency check of the boiling-point
    correlations.
    """
    t = _as_float(tb) * _RANKINE_PER_KELVIN
    return 4.5673e-5 * t**2.1962 * _as_float(sg) ** -1.0164


# --------------------------------------------------------------------------------------------
# Acentric factor
# --------------------------------------------------------------------------------------------


def lee_kesler_acentric(tb: ArrayLike, tc: ArrayLike, pc: ArrayLike, sg: ArrayLike) -> FloatArray:
    """Acentric factor by the Lee-Kesler (1975) / Kesler-Lee (1976) correlations.

    With ``Tbr = Tb / Tc`` and ``Pbr = 1 atm / Pc``:

    * ``Tbr <= 0.8`` (Lee & Kesler 1975)::

        omega = (ln Pbr - 5.92714 + 6.09648/Tbr + 1.28862 ln Tbr - 0.169347 Tbr^6)
                / (15.2518 - 15.6875/Tbr - 13.4721 ln Tbr + 0.43577 Tbr^6)

    * ``Tbr > 0.8`` (Kesler & Lee 1976, in terms of the Watson factor ``Kw``)::

        omega = -7.904 + 0.1352 Kw - 0.007465 Kw^2 + 8.359 Tbr + (1.408 - 0.01063 Kw) / Tbr

    Parameters
    ----------
    tb, tc : array_like
        Normal boiling point and critical temperature, K.
    pc : array_like
        Critical pressure, Pa.
    sg : array_like
        Specific gravity (used for ``Kw`` when ``Tbr > 0.8``).

    References
    ----------
    Lee, B. I. and Kesler, M. G. (1975), AIChE J. 21(3), 510-527; Kesler, M. G. and Lee, B. I.
    (1976), Hydrocarbon Processing 55(3), 153-158 (from memory).
    """
    t_b = _as_float(tb)
    tbr = t_b / _as_float(tc)
    ln_pbr = np.log(101325.0 / _as_float(pc))
    ln_tbr = np.log(tbr)
    low = (ln_pbr - 5.92714 + 6.09648 / tbr + 1.28862 * ln_tbr - 0.169347 * tbr**6) / (
        15.2518 - 15.6875 / tbr - 13.4721 * ln_tbr + 0.43577 * tbr**6
    )
    kw = watson_k(t_b, sg)
    high = -7.904 + 0.1352 * kw - 0.007465 * kw**2 + 8.359 * tbr + (1.408 - 0.01063 * kw) / tbr
    return np.where(tbr <= 0.8, low, high)


def edmister_acentric(tb: ArrayLike, tc: ArrayLike, pc: ArrayLike) -> FloatArray:
    """Acentric factor by Edmister's (1958) correlation.

    ``omega = (3/7) log10(Pc / 1 atm) / (Tc / Tb - 1) - 1``

    References
    ----------
    Edmister, W. C. (1958), "Applied hydrocarbon thermodynamics, part 4: compressibility factors
    and equations of state", Petroleum Refiner 37(4), 173-179.
    """
    return (3.0 / 7.0) * np.log10(_as_float(pc) / 101325.0) / (
        _as_float(tc) / _as_float(tb) - 1.0
    ) - 1.0


# --------------------------------------------------------------------------------------------
# Interaction parameters
# --------------------------------------------------------------------------------------------


def chueh_prausnitz_kij(
    vc_i: ArrayLike, vc_j: ArrayLike, a: float = 0.18, b: float = 6.0
) -> FloatArray:
    """Binary interaction parameter from critical volumes, Chueh-Prausnitz form.

    ``kij = A [1 - (2 (Vci Vcj)^(1/6) / (Vci^(1/3) + Vcj^(1/3)))^B]``

    Chueh & Prausnitz (1967) proposed the bracket with ``B = 3`` (``A = 1``) for the combining rule
    of critical temperatures; ``A = 0.18, B = 6`` for methane with heavier hydrocarbons in a cubic
    EOS is common practice (values from memory, not from one published table). Only the ratio of
    the two volumes matters, so any consistent unit may be used.

    References
    ----------
    Chueh, P. L. and Prausnitz, J. M. (1967), "Vapor-liquid equilibria at high pressures:
    calculation of partial molar volumes in nonpolar liquid mixtures", AIChE J. 13(6), 1099-1107.
    """
    ci = np.cbrt(_as_float(vc_i))
    cj = np.cbrt(_as_float(vc_j))
    return a * (1.0 - (2.0 * np.sqrt(ci * cj) / (ci + cj)) ** b)


# --------------------------------------------------------------------------------------------
# Method registries (name -> label recorded in provenance)
# --------------------------------------------------------------------------------------------

#: Critical temperature / pressure methods.
CRITICAL_METHODS: dict[str, str] = {
    "kesler-lee": "Kesler & Lee (1976) Tc, Pc from Tb and SG",
    "riazi-daubert": "Riazi & Daubert (1980) Tc, Pc from Tb and SG",
}
#: Acentric-factor methods.
ACENTRIC_METHODS: dict[str, str] = {
    "lee-kesler": "Lee & Kesler (1975) omega for Tb/Tc <= 0.8, Kesler & Lee (1976) above",
    "edmister": "Edmister (1958) omega",
}
#: Boiling-point methods.
BOILING_POINT_METHODS: dict[str, str] = {
    "soreide": "Soreide (1989) Tb from M and SG",
    "riazi-daubert": "Riazi & Daubert (1987) Tb from M and SG",
}
