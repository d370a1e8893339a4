"""Michelsen tangent-plane-distance stability test on batches of cells.

For a feed ``z`` with ``d_i = ln z_i + ln phi_i(z)``, the modified tangent-plane distance of trial
mole numbers ``W`` is (Michelsen, Fluid Phase Equilib. 9 (1982) 1, eq. 20)::

    tm(W) = 1 + sum_i W_i (ln W_i + ln phi_i(w) - d_i - 1),   w = W / sum(W)

A negative ``tm`` anywhere proves the feed unstable. Two trial phases are started from Wilson's
K-values, one vapour-like (``W = z K``) and one liquid-like (``W = z / K``), and iterated to a
stationary point by successive substitution ``ln W_i <- d_i - ln phi_i(w)`` with Crowe-Nishio
dominant-eigenvalue (GDEM) acceleration every few steps, switching to Newton's method in the
variables ``alpha_i = 2 sqrt(W_i)`` (Michelsen & Mollerup 2007, ch. 9) when substitution is slow.

Internally the trial is carried as ``ln Ks_i = ln W_i - ln z_i`` so that components absent from the
feed (``z_i = 0``) stay finite. A step that raises ``tm`` (substitution can cycle where the
lowest-Gibbs root of the trial phase switches) is halved back towards the last accepted point; a
trial that cannot lower ``tm`` after eight halvings sits at a local minimum of ``tm`` (a kink of
the Gibbs surface) and is concluded from the sign of ``tm`` there. A trial is stable when it
reaches a stationary point with ``tm >= -1e-10`` or approaches the feed itself
(``sum (ln Ks)^2 < 1e-8`` with ``tm >= 0``); unstable as soon as ``tm < -1e-6`` (or at a
stationary point with ``tm < -1e-10``). The compiled per-cell iteration is
``kernels.stability.stability_trial``; :func:`stability_test` runs these two trials.

The extended test (used by :func:`gridflash.flash` on every feed the Wilson trials call stable,
and to certify every converged answer) adds, against a reference phase ``r``:

1. **The pure-component corner screen.** At ``W = e_i``, ``tm = ln phi_i^pure - ln r_i -
   ln phi_i(r)``: one pure-component cubic per component and cell (shared by the feed and every
   phase of that cell), so it costs almost nothing. A negative value proves instability
   (Michelsen & Mollerup 2007, ch. 9: any point of negative tm does).
2. **Near-pure trial phases** (Michelsen 1982, section 4; Michelsen & Mollerup 2007, ch. 9,
   recommend pure-component initial estimates for liquid-liquid and water systems), started at
   ``W_i = 0.999``, the rest in the reference's ratios, iterated as above to a stationary point
   or to ``tm < -1e-8``, in increasing order of their corner tm, until one finds instability.
   Which components get one: in a mixture that contains water, every component whose corner tm
   is below 5 (water-rich and hydrocarbon-rich liquids are the phases the Wilson K-values, which
   know nothing of polarity, miss; on H2O + C1 + nC10 cells such trials found instability with
   corner tm up to 3.9); elsewhere, components whose corner tm is below 0.1 (on CO2 + C1 + C16
   cells at 280-320 K the near-pure CO2 trial found the missed CO2-rich liquid with corner tm
   0.02, and on hydrocarbon grids no near-pure trial found anything the Wilson trials had not).

**What the test can still miss.** A stationary point of negative tm is found only if one of the
trials reaches it: a phase whose composition is far from both Wilson estimates and from every
pure component whose trial runs (outside water mixtures, a component with corner tm above
0.1) goes unseen, for example a liquid-liquid split among hydrocarbons and CO2 in which neither
liquid is nearly pure and the Wilson trials converge elsewhere, or a second, unusual phase in a
mixture of custom (user-defined) components with strong interaction parameters. Trials stop at
``tm < -1e-8``: a phase that lowers the Gibbs energy by less than that (per mole, over RT) is not
reported. The gates above were chosen on the grids named there; they are heuristics, not
guarantees.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from . import kernels as _k
from ._cubic import CubicModel

__all__ = ["StabilityResult", "stability_test"]

_TOL = _k.STAB_TOL  # max |ln W_i + ln phi_i(w) - d_i| at a stationary point
_MAXITER = _k.STAB_MAXITER


@dataclass(frozen=True, eq=False)
class StabilityResult:
    """Outcome of the stability test, one entry per cell.

    Attributes
    ----------
    stable : ndarray of bool, shape (n,)
    tpd : ndarray, shape (n,)
        Lowest ``tm`` reached over both trials.
    ln_k_seed : ndarray, shape (n, nc)
        Initial ``ln K`` for the two-phase split, built from the unstable trial phase(s);
        NaN where stable.
    iterations : ndarray of int32, shape (n,)
        Iterations of both trials together.
    conclusive : ndarray of bool, shape (n,)
        False where a trial ran out of iterations or met a root failure without proving
        instability.
    root_failure : ndarray of bool, shape (n,)
    trials : ndarray, shape (2, n, nc)
        Final trial-phase compositions ``w`` (vapour-like, liquid-like).
    trial_tm : ndarray, shape (2, n)
        ``tm`` of each trial at its final point.
    """

    stable: NDArray[np.bool_]
    tpd: NDArray[np.float64]
    ln_k_seed: NDArray[np.float64]
    iterations: NDArray[np.int32]
    conclusive: NDArray[np.bool_]
    root_failure: NDArray[np.bool_]
    trials: NDArray[np.float64]
    trial_tm: NDArray[np.float64]


def stability_test(
    model: CubicModel,
    sqrt_a: NDArray[np.float64],
    b_i: NDArray[np.float64],
    z: NDArray[np.float64],
    ln_phi_z: NDArray[np.float64],
    ln_k_wilson: NDArray[np.float64],
    *,
    tol: float = _TOL,
    maxiter: int = _MAXITER,
    early_exit: bool = True,
) -> StabilityResult:
    """Test every feed in a batch for phase stability.

    Parameters
    ----------
    model : CubicModel
    sqrt_a, b_i : ndarray, shape (n, nc)
        Reduced EOS parameters of the cells (:func:`reduced_parameters`).
    z : ndarray, shape (n, nc)
        Feed mole fractions.
    ln_phi_z : ndarray, shape (n, nc)
        ln fugacity coefficients of the feed (min-Gibbs root).
    ln_k_wilson : ndarray, shape (n, nc)
        Initial ln K-values (Wilson's correlation).
    early_exit : bool
        Stop a trial as soon as ``tm`` is clearly negative (the feed is then proven unstable).
        Without it every trial is iterated to its stationary point, which gives a better
        initial phase for a difficult split.

    Returns
    -------
    StabilityResult

    References
    ----------
    Michelsen, M. L. (1982), The isothermal flash problem. Part I. Stability, Fluid Phase
    Equilib. 9, 1-19. Crowe, A. M. and Nishio, M. (1975), AIChE J. 21, 528.
    """
    z = np.ascontiguousarray(z, dtype=float)
    n, nc = z.shape
    stable = np.empty(n, dtype=np.bool_)
    tpd = np.empty(n)
    iterations = np.empty(n, dtype=np.int32)
    conclusive = np.empty(n, dtype=np.bool_)
    root_failure = np.empty(n, dtype=np.bool_)
    trials = np.empty((2, n, nc))
    trial_tm = np.empty((2, n))
    seed = np.empty((n, nc))
    _k.stability_batch(
        z,
        np.ascontiguousarray(ln_phi_z),
        np.ascontiguousarray(sqrt_a),
        np.ascontiguousarray(b_i),
        model.one_minus_k,
        model.delta1,
        model.delta2,
        np.ascontiguousarray(ln_k_wilson),
        float(tol),
        int(maxiter),
        bool(early_exit),
        stable,
        tpd,
        iterations,
        conclusive,
        root_failure,
        trials,
        trial_tm,
        seed,
    )
    return StabilityResult(
        stable=stable,
        tpd=tpd,
        ln_k_seed=seed,
        iterations=iterations,
        conclusive=conclusive,
        root_failure=root_failure,
        trials=trials,
        trial_tm=trial_tm,
    )
