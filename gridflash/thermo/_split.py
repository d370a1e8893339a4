"""Two-phase isothermal split on batches of cells.

Successive substitution on ``ln K`` (``ln K_i <- ln phi_i^L - ln phi_i^V``, with the vapour fraction
from Rachford-Rice at every step) accelerated by the Crowe-Nishio dominant-eigenvalue method (GDEM)
and safeguarded by the Gibbs energy, then a Newton finish that minimises the Gibbs energy in the
vapour mole numbers ``v_i`` (Michelsen, Fluid Phase Equilib. 9 (1982) 21, "Part II. Phase-split
calculation"; Michelsen & Mollerup 2007, ch. 10)::

    g_i(v) = ln(y_i phi_i^V) - ln(x_i phi_i^L)          (the gradient of G / RT)
    dg_i/dv_j = [delta_ij / y_i - 1 + Phi^V_ij] / V + [delta_ij / x_i - 1 + Phi^L_ij] / L

where ``Phi_ij = n d(ln phi_i)/dn_j``. The Newton system is scaled symmetrically by
``sqrt(v_i l_i / z_i)``; each step is shortened to keep ``0 < v_i < z_i`` and halved while it
raises the Gibbs energy. In the robust mode the scaled Hessian is shifted to be positive definite,
which turns the Newton iteration into a descent method that reaches a Gibbs-energy minimum from a
stability-test trial phase even where substitution collapses to the trivial solution.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from . import _kernels as _k
from ._cubic import CubicModel

__all__ = ["SplitResult", "newton_split", "two_phase_split"]

TOL_RESIDUAL = _k.TOL_RESIDUAL  # max |ln f_i^V - ln f_i^L| of a converged cell
TOL_BALANCE = _k.TOL_BALANCE  # material balance of a converged cell


@dataclass(frozen=True, eq=False)
class SplitResult:
    """Two-phase split outcome, one entry per cell (fields as in :class:`FlashResult`)."""

    status: NDArray[np.int8]
    beta: NDArray[np.float64]
    x: NDArray[np.float64]
    y: NDArray[np.float64]
    ln_k: NDArray[np.float64]
    z_liquid: NDArray[np.float64]
    z_vapour: NDArray[np.float64]
    iterations: NDArray[np.int32]
    residual: NDArray[np.float64]
    material_balance: NDArray[np.float64]
    gibbs: NDArray[np.float64]


def _run(model, sqrt_a, b_i, z, start, *, warm=False, newton_only=False, robust=False):
    z = np.ascontiguousarray(z, dtype=float)
    n, nc = z.shape
    out = SplitResult(
        status=np.empty(n, dtype=np.int8),
        beta=np.empty(n),
        x=np.empty((n, nc)),
        y=np.empty((n, nc)),
        ln_k=np.empty((n, nc)),
        z_liquid=np.empty(n),
        z_vapour=np.empty(n),
        iterations=np.empty(n, dtype=np.int32),
        residual=np.empty(n),
        material_balance=np.empty(n),
        gibbs=np.empty(n),
    )
    _k.split_batch(
        z,
        np.ascontiguousarray(sqrt_a),
        np.ascontiguousarray(b_i),
        model.one_minus_k,
        model.delta1,
        model.delta2,
        np.ascontiguousarray(start, dtype=float),
        bool(warm),
        bool(newton_only),
        bool(robust),
        out.status,
        out.beta,
        out.x,
        out.y,
        out.ln_k,
        out.z_liquid,
        out.z_vapour,
        out.iterations,
        out.residual,
        out.material_balance,
        out.gibbs,
    )
    return out


def two_phase_split(
    model: CubicModel,
    sqrt_a: NDArray[np.float64],
    b_i: NDArray[np.float64],
    z: NDArray[np.float64],
    ln_k0: NDArray[np.float64],
    *,
    warm: bool = False,
) -> SplitResult:
    """Converge the two-phase split of every cell from initial ``ln K``.

    Parameters
    ----------
    model : CubicModel
    sqrt_a, b_i : ndarray, shape (n, nc)
        Reduced EOS parameters (:func:`reduced_parameters`).
    z : ndarray, shape (n, nc)
        Feed mole fractions.
    ln_k0 : ndarray, shape (n, nc)
        Initial ln K-values (from a stability test, or a neighbouring cell's converged answer).
    warm : bool
        A warm start: give up early (status ``NO_TWO_PHASE_ROOT`` or ``MAX_ITERATIONS``) when the
        iteration leaves the two-phase region or has not reached Newton after 20 steps, so that
        the caller falls back to a full stability test.

    Returns
    -------
    SplitResult

    Notes
    -----
    Substitution hands over to Newton below a residual of 1e-3 (at once for a warm start) or
    after 25 steps, provided both phases hold more than 1e-6 of the feed; GDEM extrapolation
    every fifth step is kept only if it lowers the Gibbs energy. A split whose ``max |ln K|``
    falls below 1e-5 has collapsed to the trivial solution.
    """
    return _run(model, sqrt_a, b_i, z, ln_k0, warm=warm)


def newton_split(
    model: CubicModel,
    sqrt_a: NDArray[np.float64],
    b_i: NDArray[np.float64],
    z: NDArray[np.float64],
    v0: NDArray[np.float64],
    *,
    robust: bool = False,
) -> SplitResult:
    """Minimise the Gibbs energy of the split by Newton's method in vapour mole numbers.

    Parameters
    ----------
    v0 : ndarray, shape (n, nc)
        Initial vapour mole numbers per mole of feed, ``0 < v0_i < z_i`` for present components.
    robust : bool
        Shift the scaled Hessian to be positive definite (a descent method from any start).

    Returns
    -------
    SplitResult
        ``iterations`` counts the Newton iterations (each Gibbs-energy halving included).
    """
    return _run(model, sqrt_a, b_i, z, v0, newton_only=True, robust=robust)
