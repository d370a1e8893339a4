"""Splitting a plus-fraction into single carbon-number (SCN) fractions.

Two jobs, both on the plus-fraction alone:

* :func:`gamma_fractions` - mole fractions and molar masses of SCN fractions from Whitson's
  three-parameter gamma distribution over molar mass;
* :func:`constant_watson_sg` - specific gravity of each fraction from one Watson characterisation
  factor chosen so that the fractions, mixed at additive volumes, reproduce the plus-fraction's
  specific gravity.

References
----------
Whitson, C. H. (1983), "Characterizing hydrocarbon plus fractions", SPE J. 23(4), 683-694.
Whitson, C. H. and Brule, M. R. (2000), *Phase Behavior*, SPE Monograph 20, chapter 5.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray
from scipy.special import gammainc, gammaincc

from .._errors import InputError
from ._correlations import _WHITSON_KW, whitson_specific_gravity

__all__ = [
    "GammaFractions",
    "constant_watson_sg",
    "default_eta",
    "gamma_fractions",
    "scn_lower_boundary",
]

#: The split stops at the last carbon number whose plus-tail still carries at least this share of
#: the plus-fraction's moles; heavier fractions would be numerically empty and would make the
#: molar mass of the absorbing last fraction (found by difference) lose precision.
_MIN_TAIL_SHARE = 1e-6
#: Largest carbon number accepted for the split.
MAX_CARBON_LIMIT = 200


def scn_lower_boundary(carbon_number: int | NDArray[np.int_]) -> NDArray[np.float64]:
    """Molar-mass boundary between SCN ``n - 1`` and SCN ``n``: ``14 n - 6`` g/mol.

    This is Whitson & Brule's rule for the minimum molar mass of a C_n+ fraction (``eta = 14 n -
    6``; from memory) applied at every carbon number, so that SCN ``n`` occupies molar masses
    ``[14 n - 6, 14 n + 8)`` and splitting a C7+ or a C10+ of the same oil uses the same
    boundaries. Each step is one CH2 group (14 g/mol, rounded as in the rule).
    """
    return 14.0 * np.asarray(carbon_number, dtype=float) - 6.0


def default_eta(carbon_number: int) -> float:
    """Default gamma-distribution location ``eta = 14 n - 6`` for a C_n+ fraction, g/mol.

    Whitson & Brule (2000), chapter 5 (from memory): ``eta`` is the smallest molar mass present in
    the plus fraction, 92 g/mol for C7+.
    """
    return float(scn_lower_boundary(carbon_number))


@dataclass(frozen=True)
class GammaFractions:
    """SCN fractions of one plus-fraction.

    Attributes
    ----------
    carbon_number : ndarray of int, shape (n,)
        Carbon numbers ``n_plus ... n_last``; the last entry is the plus-fraction ``C{n_last}+``
        that absorbs the distribution's tail.
    mole_fraction : ndarray, shape (n,)
        Mole fractions in the same basis as the plus-fraction's mole fraction (they sum to it).
    mw : ndarray, shape (n,)
        Molar masses, g/mol.
    boundaries : ndarray, shape (n + 1,)
        Molar-mass boundaries, g/mol: ``eta``, the SCN boundaries, then ``inf``.
    alpha, eta, beta : float
        Gamma-distribution parameters (``beta = (M_plus - eta) / alpha``).
    analytic_tail_mw : float
        Mean molar mass of the tail from the distribution itself, before the mass balance closure
        (kept as a diagnostic: it agrees with ``mw[-1]`` to about 1e-8 relative).
    """

    carbon_number: NDArray[np.int_]
    mole_fraction: NDArray[np.float64]
    mw: NDArray[np.float64]
    boundaries: NDArray[np.float64]
    alpha: float
    eta: float
    beta: float
    analytic_tail_mw: float


def interval_moments(
    lower: NDArray[np.float64],
    upper: NDArray[np.float64],
    alpha: float,
    eta: float,
    beta: float,
) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """Probability and mean molar mass of each molar-mass interval of the gamma distribution.

    For ``p(M) = (M - eta)^(alpha-1) exp(-(M - eta)/beta) / (beta^alpha Gamma(alpha))`` and
    ``y = (M - eta)/beta``, the probability of ``[a, b)`` is ``P(alpha, y_b) - P(alpha, y_a)`` and
    the first moment is ``eta P + alpha beta [P(alpha+1, y_b) - P(alpha+1, y_a)]``, with ``P`` the
    regularised lower incomplete gamma function (Whitson 1983). Differences
    are taken on the upper (complemented) function where that is more accurate.

    Returns
    -------
    probability : ndarray
    mean_mw : ndarray
        Mean molar mass of each interval, g/mol.
    """
    ya = np.maximum((lower - eta) / beta, 0.0)
    yb = np.maximum((upper - eta) / beta, 0.0)
    prob = _incomplete_difference(alpha, ya, yb)
    first = _incomplete_difference(alpha + 1.0, ya, yb)
    with np.errstate(invalid="ignore", divide="ignore"):
        mean = eta + alpha * beta * first / prob
    return prob, mean


def _incomplete_difference(a: float, ya: NDArray[np.float64], yb: NDArray[np.float64]):
    """``P(a, yb) - P(a, ya)`` computed from whichever tail is smaller at ``ya``."""
    lower_form = gammainc(a, yb) - gammainc(a, ya)
    upper_form = gammaincc(a, ya) - gammaincc(a, yb)
    use_upper = gammainc(a, ya) > 0.5
    return np.where(use_upper, upper_form, lower_form)


def gamma_fractions(
    carbon_number: int,
    mole_fraction: float,
    mw: float,
    *,
    max_carbon: int = 45,
    alpha: float = 1.0,
    eta: float | None = None,
) -> GammaFractions:
    """Split a plus-fraction into SCN fractions with Whitson's three-parameter gamma distribution.

    Parameters
    ----------
    carbon_number : int
        First carbon number of the plus-fraction (7 for C7+).
    mole_fraction : float
        Mole fraction of the plus-fraction (any basis; the fractions sum to it).
    mw : float
        Molar mass of the plus-fraction, g/mol.
    max_carbon : int, default 45
        Carbon number of the last fraction, which is itself a plus-fraction ``C{max_carbon}+``.
    alpha : float, default 1
        Shape parameter (1 gives the exponential distribution, Whitson's default).
    eta : float, optional
        Location (smallest molar mass in the plus-fraction), g/mol; default ``14 n - 6``.

    Returns
    -------
    GammaFractions

    Raises
    ------
    InputError
        If ``mw`` does not exceed ``eta``, or ``eta`` is not below the first SCN's upper boundary,
        or ``max_carbon`` is not above ``carbon_number``.

    Notes
    -----
    Boundaries: SCN ``n`` spans ``[14 n - 6, 14 n + 8)`` g/mol (see :func:`scn_lower_boundary`);
    the first SCN starts at ``eta``. The last fraction runs from its lower boundary to infinity.

    Closure: mole fractions and mean molar masses of all fractions but the last come from the
    incomplete gamma function (:func:`interval_moments`); the last fraction then takes the
    remaining moles ``z_N = z_plus - sum(z_i)`` and the remaining mass
    ``M_N = (z_plus M_plus - sum(z_i M_i)) / z_N`` (the mass-balance closure of Whitson & Brule
    2000), so the plus-fraction's moles and mass are reproduced to rounding. Because ``z_N`` is
    found by difference, the split stops early (the last fraction becomes ``C{k}+`` with
    ``k < max_carbon``) when the tail beyond ``C{max_carbon}`` would hold less than 1e-6 of the
    plus-fraction's moles; the difference then stays accurate to about 1e-9 relative.
    """
    n_plus = _check_int("plus-fraction carbon_number", carbon_number, 1, MAX_CARBON_LIMIT - 1)
    n_max = _check_int("max_carbon", max_carbon, 2, MAX_CARBON_LIMIT)
    if n_max <= n_plus:
        raise InputError(
            f"max_carbon={max_carbon!r} must be above the plus-fraction's carbon number "
            f"{carbon_number!r}; the split produces C{n_plus} ... C{{max_carbon}}+"
        )
    z_plus = float(mole_fraction)
    m_plus = float(mw)
    if not (np.isfinite(alpha) and alpha > 0):
        raise InputError(f"alpha={alpha!r}; the gamma shape parameter must be a positive number")
    eta_value = default_eta(n_plus) if eta is None else float(eta)
    first_upper = float(scn_lower_boundary(n_plus + 1))
    if not (np.isfinite(eta_value) and 0 < eta_value < first_upper):
        raise InputError(
            f"eta={eta!r} g/mol; it must be positive and below {first_upper!r} g/mol, the upper "
            f"molar-mass boundary of C{n_plus}"
        )
    if not m_plus > eta_value:
        raise InputError(
            f"plus-fraction molar mass {mw!r} g/mol must exceed eta={eta_value!r} g/mol, the "
            f"smallest molar mass in a C{n_plus}+ fraction; check the molar mass or pass eta"
        )
    beta = (m_plus - eta_value) / alpha

    # Last carbon number: the tail beyond C{k-1} must keep at least _MIN_TAIL_SHARE of the moles.
    candidates = np.arange(n_plus + 1, n_max + 1)
    tails = gammaincc(alpha, (scn_lower_boundary(candidates) - eta_value) / beta)
    keep = candidates[tails >= _MIN_TAIL_SHARE]
    n_last = int(keep[-1]) if keep.size else n_plus

    carbons = np.arange(n_plus, n_last + 1)
    bounds = np.concatenate(
        ([eta_value], scn_lower_boundary(np.arange(n_plus + 1, n_last + 1)), [np.inf])
    )
    prob, mean = interval_moments(bounds[:-1], bounds[1:], alpha, eta_value, beta)
    z = z_plus * prob
    m = mean.copy()
    analytic_tail = float(mean[-1])
    # Mass-balance closure on the last (tail) fraction.
    z[-1] = z_plus - np.sum(z[:-1])
    m[-1] = (z_plus * m_plus - np.sum(z[:-1] * m[:-1])) / z[-1]
    for arr in (carbons, z, m, bounds):
        arr.setflags(write=False)
    return GammaFractions(
        carbon_number=carbons,
        mole_fraction=z,
        mw=m,
        boundaries=bounds,
        alpha=float(alpha),
        eta=eta_value,
        beta=beta,
        analytic_tail_mw=analytic_tail,
    )


def constant_watson_sg(
    mole_fraction: NDArray[np.float64], mw: NDArray[np.float64], sg_plus: float
) -> tuple[NDArray[np.float64], float]:
    """Specific gravities of SCN fractions at one Watson factor matching the plus-fraction's SG.

    Each fraction gets ``SG_i = (4.5579 M_i^0.15178 / Kw)^(1/0.84573)`` (Whitson's approximation
    of the Watson factor, see :func:`~gridflash.thermo._correlations.whitson_watson_k`). With
    additive volumes the plus-fraction's SG is ``sum(z_i M_i) / sum(z_i M_i / SG_i)``; since every
    ``SG_i`` is proportional to ``Kw^(-1/0.84573)`` the matching ``Kw`` has the closed form used
    here, and no iteration is needed.

    Parameters
    ----------
    mole_fraction, mw : ndarray, shape (n,)
        Mole fractions and molar masses (g/mol) of the SCN fractions of the plus-fraction.
    sg_plus : float
        Specific gravity of the plus-fraction.

    Returns
    -------
    sg : ndarray, shape (n,)
        Specific gravity of each fraction.
    kw : float
        The Watson characterisation factor shared by all fractions.
    """
    mass = mole_fraction * mw
    exponent = _WHITSON_KW[2]
    # SG_i(Kw) = SG_i(Kw=1) * Kw^(-1/exponent), so 1/SG_plus = Kw^(1/exponent) * inv_sg_unit.
    inv_sg_unit = np.sum(mass / whitson_specific_gravity(mw, 1.0)) / np.sum(mass)
    kw = float((1.0 / (sg_plus * inv_sg_unit)) ** exponent)
    return whitson_specific_gravity(mw, kw), kw


def _check_int(what: str, value: object, low: int, high: int) -> int:
    if isinstance(value, bool) or not isinstance(value, (int, np.integer)):
        raise InputError(f"{what}={value!r} must be an integer carbon number")
    if not low <= int(value) <= high:
        raise InputError(f"{what}={value!r} must be between {low} and {high}")
    return int(value)
