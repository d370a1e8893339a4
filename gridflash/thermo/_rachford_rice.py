"""Vectorised Rachford-Rice solver for the two-phase split.

Solves, for every cell, ``g(beta) = sum_i z_i (K_i - 1) / (1 + beta (K_i - 1)) = 0`` for the vapour
fraction ``beta`` (Rachford & Rice, J. Pet. Technol. 4 (1952) 19). ``g`` is strictly decreasing
between the asymptotes ``1 / (1 - K_max)`` and ``1 / (1 - K_min)`` (only components present in the
feed count), so the root is unique there; the solver keeps a bracket inside that window and takes
Newton steps, falling back to bisection whenever a step would leave the bracket (Michelsen &
Mollerup 2007, ch. 10). It cannot diverge.

The unknown is the distance ``d`` from the asymptote nearer the root, ``beta = base + s d``
(``base = lo, s = +1`` or ``base = hi, s = -1``), with denominators written as
``c_i + s d (K_i - 1)``, ``c_i = 1 + base (K_i - 1)`` and ``c_i = 0`` exactly for the
component(s) defining that asymptote. This keeps full relative precision when the root lies very
close to an asymptote (the cancellation in ``1 + beta (K_i - 1)`` noted by Nielsen & Lia, Fluid
Phase Equilib. 2023). The compiled per-cell solver is ``kernels.rachford_rice.rachford_rice_cell``.
"""

from __future__ import annotations

import enum
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from . import kernels as _k

__all__ = ["RachfordRiceResult", "RachfordRiceStatus", "rachford_rice"]

_TOL = _k.RR_TOL  # |g| relative to sum_i |z_i (K_i - 1) / (1 + beta (K_i - 1))|
_MAXITER = _k.RR_MAXITER


class RachfordRiceStatus(enum.IntEnum):
    """Outcome codes of :func:`rachford_rice`."""

    # The codes the compiled kernel sets (one definition, in kernels.codes).
    CONVERGED = _k.RR_CONVERGED
    ALL_K_BELOW_ONE = _k.RR_ALL_K_BELOW_ONE  # no root: g < 0 throughout; feed liquid by these K
    ALL_K_ABOVE_ONE = _k.RR_ALL_K_ABOVE_ONE  # no root: g > 0 throughout; feed vapour by these K
    MAX_ITERATIONS = _k.RR_MAX_ITERATIONS
    AT_LOWER_LIMIT = _k.RR_AT_LOWER_LIMIT  # root below the requested lower limit; beta = limit
    AT_UPPER_LIMIT = _k.RR_AT_UPPER_LIMIT  # root above the requested upper limit; beta = limit


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
    k = np.ascontiguousarray(k_values, dtype=float)
    z = np.ascontiguousarray(z, dtype=float)
    n = k.shape[0]
    if limits is not None:
        lim_lo, lim_hi = float(limits[0]), float(limits[1])
        if not lim_lo < lim_hi:
            raise ValueError(f"limits must be increasing, got {limits!r}")
    else:
        lim_lo, lim_hi = 0.0, 1.0
    beta = np.empty(n)
    status = np.empty(n, dtype=np.int8)
    iterations = np.empty(n, dtype=np.int32)
    residual = np.empty(n)
    _k.rachford_rice_batch(
        k,
        z,
        limits is not None,
        lim_lo,
        lim_hi,
        float(tol),
        int(maxiter),
        beta,
        status,
        iterations,
        residual,
    )
    return RachfordRiceResult(beta=beta, status=status, iterations=iterations, residual=residual)
