"""Vectorised Rachford-Rice solver for the two-phase split.

Solves, for every cell, ``g(beta) = sum_i z_i (K_i - 1) / (1 + beta (K_i - 1)) = 0`` for the vapour
fraction ``beta`` (Rachford & Rice, J. Pet. Technol. 4 (1952) 19). ``g`` is strictly decreasing
between the asymptotes ``1 / (1 - K_max)`` and ``1 / (1 - K_min)`` (only components present in the
feed count), so the root is unique there; the solver keeps a bracket inside that window and takes
Newton steps, falling back to bisection whenever a step would leave the bracket (Michelsen &
Mollerup 2007, ch. 10). It cannot diverge.
"""

from __future__ import annotations

import enum
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

__all__ = ["RachfordRiceResult", "RachfordRiceStatus", "rachford_rice"]

_TOL = 1e-14  # |g| relative to sum_i |z_i (K_i - 1) / (1 + beta (K_i - 1))|
_MAXITER = 200


class RachfordRiceStatus(enum.IntEnum):
    """Outcome codes of :func:`rachford_rice`."""

    CONVERGED = 0
    ALL_K_BELOW_ONE = 1  # no root: g < 0 throughout; the feed is liquid by these K-values
    ALL_K_ABOVE_ONE = 2  # no root: g > 0 throughout; the feed is vapour by these K-values
    MAX_ITERATIONS = 3
    AT_LOWER_LIMIT = 4  # root below the requested lower limit; beta set to the limit
    AT_UPPER_LIMIT = 5  # root above the requested upper limit; beta set to the limit


@dataclass(frozen=True, eq=False)
class RachfordRiceResult:
    """Per-cell Rachford-Rice solution.

    Attributes
    ----------
    beta : ndarray, shape (n,)
        Vapour fraction (NaN where no root exists).
    status : ndarray of int8, shape (n,)
        :class:`RachfordRiceStatus` codes.
    iterations : ndarray of int32, shape (n,)
    residual : ndarray, shape (n,)
        ``|g(beta)|`` divided by ``sum_i |z_i (K_i - 1) / (1 + beta (K_i - 1))|``.
    """

    beta: NDArray[np.float64]
    status: NDArray[np.int8]
    iterations: NDArray[np.int32]
    residual: NDArray[np.float64]


def _g_and_slope(beta, km1, z):
    denom = 1.0 + beta[:, None] * km1
    terms = z * km1 / denom
    g = terms.sum(axis=1)
    dg = -(terms * km1 / denom).sum(axis=1)
    scale = np.abs(terms).sum(axis=1)
    return g, dg, scale


def rachford_rice(
    k_values: NDArray[np.float64],
    z: NDArray[np.float64],
    *,
    limits: tuple[float, float] | None = None,
    tol: float = _TOL,
    maxiter: int = _MAXITER,
) -> RachfordRiceResult:
    """Solve the Rachford-Rice equation for every cell.

    Parameters
    ----------
    k_values : ndarray, shape (n, nc)
        Positive, finite K-values.
    z : ndarray, shape (n, nc)
        Feed mole fractions (components at exactly zero are ignored).
    limits : (float, float), optional
        Negative-flash limits ``(lo, hi)`` on beta, e.g. ``(0.0, 1.0)`` for a physical split. A
        root outside them is replaced by the nearer limit and flagged ``AT_LOWER_LIMIT`` /
        ``AT_UPPER_LIMIT``. Without limits the root is sought in the whole window between the
        asymptotes (negative flash).
    tol : float
        Relative residual at which a cell is converged.
    maxiter : int

    Returns
    -------
    RachfordRiceResult

    Notes
    -----
    Convergence is declared when ``|g| <= tol * sum_i |terms_i|`` or when the bracket can no longer
    be narrowed in floating point (the root is then known to the last bit).

    References
    ----------
    Rachford, H. H. and Rice, J. D. (1952); Michelsen, M. L. and Mollerup, J. M. (2007),
    *Thermodynamic Models: Fundamentals and Computational Aspects*, 2nd ed., ch. 10.

    Examples
    --------
    >>> import numpy as np
    >>> r = rachford_rice(np.array([[2.0, 0.5]]), np.array([[0.5, 0.5]]))
    >>> float(r.beta[0])
    0.5
    """
    k = np.asarray(k_values, dtype=float)
    z = np.asarray(z, dtype=float)
    n = k.shape[0]
    present = z > 0.0
    km1 = np.where(present, k - 1.0, 0.0)
    kmax = np.max(np.where(present, k, -np.inf), axis=1)
    kmin = np.min(np.where(present, k, np.inf), axis=1)

    beta = np.full(n, np.nan)
    status = np.full(n, RachfordRiceStatus.MAX_ITERATIONS, dtype=np.int8)
    iterations = np.zeros(n, dtype=np.int32)
    residual = np.full(n, np.nan)

    below = kmax <= 1.0
    above = (kmin >= 1.0) & ~below
    status[below] = RachfordRiceStatus.ALL_K_BELOW_ONE
    status[above] = RachfordRiceStatus.ALL_K_ABOVE_ONE
    solvable = ~(below | above)

    with np.errstate(divide="ignore"):
        lo = np.where(solvable, 1.0 / (1.0 - kmax), np.nan)
        hi = np.where(solvable, 1.0 / (1.0 - kmin), np.nan)

    if limits is not None:
        lim_lo, lim_hi = float(limits[0]), float(limits[1])
        if not lim_lo < lim_hi:
            raise ValueError(f"limits must be increasing, got {limits!r}")
        # Where a limit lies inside the window, g's sign there says whether the root is beyond it.
        for lim, is_lower in ((lim_lo, True), (lim_hi, False)):
            inside = solvable & (lo < lim) & (lim < hi)
            if not inside.any():
                continue
            g_lim, _, _ = _g_and_slope(np.full(n, lim), km1, z)
            beyond = inside & ((g_lim <= 0.0) if is_lower else (g_lim >= 0.0))
            beta[beyond] = lim
            status[beyond] = (
                RachfordRiceStatus.AT_LOWER_LIMIT if is_lower else RachfordRiceStatus.AT_UPPER_LIMIT
            )
            residual[beyond] = np.abs(g_lim[beyond])
            solvable &= ~beyond
            if is_lower:
                lo = np.where(inside & ~beyond, lim, lo)
            else:
                hi = np.where(inside & ~beyond, lim, hi)
        # Limits outside the window on the wrong side leave the root beyond them.
        out_lo = solvable & (hi <= lim_lo)
        out_hi = solvable & (lo >= lim_hi)
        beta[out_lo], status[out_lo] = lim_lo, RachfordRiceStatus.AT_LOWER_LIMIT
        beta[out_hi], status[out_hi] = lim_hi, RachfordRiceStatus.AT_UPPER_LIMIT
        solvable &= ~(out_lo | out_hi)

    idx = np.flatnonzero(solvable)
    if idx.size:
        kk = k[idx]
        b, st, it, res = _solve_bracketed(
            km1[idx], z[idx], lo[idx], hi[idx], kk == kmax[idx, None], kk == kmin[idx, None],
            tol, maxiter,
        )
        beta[idx], status[idx], iterations[idx], residual[idx] = b, st, it, res
    return RachfordRiceResult(beta=beta, status=status, iterations=iterations, residual=residual)


def _solve_bracketed(km1, z, lo, hi, at_lo, at_hi, tol, maxiter):
    """Safeguarded Newton inside the open bracket ``(lo, hi)`` where ``g(lo+) > 0 > g(hi-)``.

    The unknown is the distance ``d`` from the asymptote nearer the root, ``beta = base + s d``
    (``base = lo, s = +1`` or ``base = hi, s = -1``), with denominators written as
    ``c_i + s d (K_i - 1)``, ``c_i = 1 + base (K_i - 1)`` and ``c_i = 0`` exactly for the
    component(s) defining that asymptote. This keeps full relative precision when the root lies
    very close to an asymptote (the cancellation in ``1 + beta (K_i - 1)`` noted by Nielsen &
    Lia, Fluid Phase Equilib. 2023).
    """
    m = lo.shape[0]
    # Which half of the window holds the root (g decreasing): g(mid) > 0 -> upper half.
    mid = 0.5 * (lo + hi)
    g_mid, _, _ = _g_and_slope(mid, km1, z)
    upper = g_mid > 0.0
    base = np.where(upper, hi, lo)
    sign = np.where(upper, -1.0, 1.0)
    c = 1.0 + base[:, None] * km1
    c = np.where(np.where(upper[:, None], at_hi, at_lo), 0.0, c)
    d_lo = np.zeros(m)  # the asymptote itself (excluded)
    d_hi = 0.5 * (hi - lo)  # the midpoint
    # Start from beta = 0.5 where that is in the chosen half, else the middle of the half.
    d0 = sign * (0.5 - base)
    d = np.where((d0 > 0.0) & (d0 < d_hi), d0, 0.5 * d_hi)
    if np.any(g_mid == 0.0):
        d = np.where(g_mid == 0.0, d_hi, d)
    status = np.full(m, RachfordRiceStatus.MAX_ITERATIONS, dtype=np.int8)
    iterations = np.zeros(m, dtype=np.int32)
    residual = np.full(m, np.nan)
    active = np.arange(m)
    for it in range(1, maxiter + 1):
        dd = d[active]
        sg = sign[active]
        k1 = km1[active]
        denom = c[active] + (sg * dd)[:, None] * k1
        terms = z[active] * k1 / denom
        g = terms.sum(axis=1)
        # dg/dd = s dg/dbeta
        dg = -sg * (terms * k1 / denom).sum(axis=1)
        scale = np.abs(terms).sum(axis=1)
        res = np.abs(g) / np.where(scale > 0.0, scale, 1.0)
        residual[active] = res
        iterations[active] = it
        # g(d) is decreasing in d on the lower side (s = +1) and increasing on the upper side.
        root_beyond = np.where(sg > 0.0, g > 0.0, g < 0.0)  # root at larger d
        lo_a = np.where(root_beyond, dd, d_lo[active])
        hi_a = np.where(root_beyond, d_hi[active], dd)
        d_lo[active], d_hi[active] = lo_a, hi_a
        with np.errstate(divide="ignore", invalid="ignore"):
            newton = dd - g / dg
        half = 0.5 * (lo_a + hi_a)
        ok = np.isfinite(newton) & (newton > lo_a) & (newton < hi_a)
        new = np.where(ok, newton, half)
        stuck = (new == dd) | (half == lo_a) | (half == hi_a)
        done = (res <= tol) | (g == 0.0) | stuck
        d[active] = np.where(done, dd, new)
        status[active[done]] = RachfordRiceStatus.CONVERGED
        active = active[~done]
        if active.size == 0:
            break
    beta = base + sign * d
    return beta, status, iterations, residual
