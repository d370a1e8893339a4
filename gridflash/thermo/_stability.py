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
feed (``z_i = 0``) stay finite.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from ._cubic import CubicModel, PhaseState, ln_phi_derivatives, phase_state
from ._linalg import solve_cells

__all__ = ["StabilityResult", "stability_test"]

_TOL = 1e-10  # max |ln W_i + ln phi_i(w) - d_i| at a stationary point
_TM_UNSTABLE = -1e-10  # tm below this at a stationary point: unstable
_TM_EARLY_EXIT = -1e-6  # tm below this during iterations: unstable, stop early (Michelsen 1982)
_TRIVIAL = 1e-8  # sum_i (ln Ks_i)^2 below this with tm >= 0: converging to the feed (trivial)
_MAXITER = 200
_GDEM_EVERY = 5
_NEWTON_AFTER = 12
_MAX_HALVINGS = 8


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
    n, nc = z.shape
    present = np.tile(z > 0.0, (2, 1))
    zz = np.tile(z, (2, 1))
    lnphi_zz = np.tile(ln_phi_z, (2, 1))
    sa = np.tile(sqrt_a, (2, 1))
    bb = np.tile(b_i, (2, 1))
    ln_ks0 = np.concatenate([ln_k_wilson, -ln_k_wilson])
    ln_ks, tm, iters, outcome = _iterate(
        model, sa, bb, zz, lnphi_zz, present, ln_ks0, tol, maxiter, early_exit
    )

    # outcome: 0 stable (trivial or tm >= 0 at a stationary point), 1 unstable, 2 inconclusive,
    # 3 root failure
    out_v, out_l = outcome[:n], outcome[n:]
    tm_v, tm_l = tm[:n], tm[n:]
    unstable_v, unstable_l = out_v == 1, out_l == 1
    unstable = unstable_v | unstable_l
    root_failure = ((out_v == 3) | (out_l == 3)) & ~unstable
    conclusive = unstable | ((out_v == 0) & (out_l == 0))

    ln_kv, ln_kl = ln_ks[:n], ln_ks[n:]
    with np.errstate(invalid="ignore", over="ignore"):
        # ln w = ln z + ln Ks - ln(sum W)
        ln_sum_v = np.log(np.sum(z * np.exp(ln_kv), axis=1))[:, None]
        ln_sum_l = np.log(np.sum(z * np.exp(ln_kl), axis=1))[:, None]
    # K = w_v / w_l when both trials are unstable, else w_v / z or z / w_l.
    seed_both = (ln_kv - ln_sum_v) - (ln_kl - ln_sum_l)
    seed_v = ln_kv - ln_sum_v
    seed_l = -(ln_kl - ln_sum_l)
    seed = np.where(
        (unstable_v & unstable_l)[:, None],
        seed_both,
        np.where(unstable_v[:, None], seed_v, seed_l),
    )
    seed = np.where(unstable[:, None], seed, np.nan)
    tpd = np.fmin(tm_v, tm_l)
    with np.errstate(over="ignore", invalid="ignore"):
        w_all = zz * np.exp(ln_ks)
        w_all = w_all / w_all.sum(axis=1, keepdims=True)
    return StabilityResult(
        trials=w_all.reshape(2, n, nc),
        trial_tm=tm.reshape(2, n),
        stable=~unstable,
        tpd=tpd,
        ln_k_seed=seed,
        iterations=(iters[:n] + iters[n:]).astype(np.int32),
        conclusive=conclusive,
        root_failure=root_failure,
    )


def _iterate(model, sqrt_a, b_i, z, ln_phi_z, present, ln_ks0, tol, maxiter, early_exit):
    """Iterate every trial to a stationary point of tm, never accepting a step that raises tm.

    A step that raises ``tm`` (substitution can cycle where the lowest-Gibbs root of the trial
    phase switches) is halved back towards the last accepted point; a trial that cannot lower
    ``tm`` after ``_MAX_HALVINGS`` halvings is at a local minimum of ``tm`` (a kink of the Gibbs
    surface) and is concluded from the sign of ``tm`` there.
    """
    m, nc = z.shape
    ln_ks = np.where(present, ln_ks0, 0.0)
    tm = np.full(m, np.nan)
    iters = np.zeros(m, dtype=np.int32)
    outcome = np.full(m, 2, dtype=np.int8)
    prev1 = np.zeros_like(ln_ks)  # previous accepted iterate, for GDEM
    acc_ks = np.zeros_like(ln_ks)  # last accepted iterate
    acc_tm = np.full(m, np.inf)
    halvings = np.zeros(m, dtype=np.int8)
    n_accepted = np.zeros(m, dtype=np.int32)
    active = np.arange(m)
    for it in range(1, maxiter + 1):
        if active.size == 0:
            break
        z_a = z[active]
        pres = present[active]
        ks = ln_ks[active]
        with np.errstate(over="ignore", invalid="ignore"):
            w_moles = z_a * np.exp(ks)
            sum_w = w_moles.sum(axis=1)
            w = w_moles / sum_w[:, None]
        st = phase_state(model, w, sqrt_a[active], b_i[active])
        ks_new = np.where(pres, ln_phi_z[active] - st.ln_phi, 0.0)
        r = np.where(pres, ks - ks_new, 0.0)
        tm_a = 1.0 - sum_w + np.sum(w_moles * r, axis=1)
        res = np.max(np.abs(r), axis=1)
        iters[active] = it

        bad = ~np.isfinite(tm_a) | ~np.isfinite(res)
        prev_tm = acc_tm[active]
        rise = ~bad & (tm_a > prev_tm + 1e-13 * np.maximum(1.0, np.abs(prev_tm)))
        stuck = rise & (halvings[active] >= _MAX_HALVINGS)
        backtrack = rise & ~stuck
        accept = ~bad & ~rise
        tm[active] = np.where(accept, tm_a, tm[active])

        early = accept & (tm_a < _TM_EARLY_EXIT) & early_exit
        stationary = accept & ~early & (res < tol)
        trivial = accept & ~early & ~stationary & (tm_a >= 0.0) & (
            np.sum(ks * ks, axis=1) < _TRIVIAL
        )
        outcome[active[bad]] = 3
        outcome[active[early]] = 1
        outcome[active[stationary]] = np.where(tm_a[stationary] < _TM_UNSTABLE, 1, 0)
        outcome[active[trivial]] = 0
        outcome[active[stuck]] = np.where(prev_tm[stuck] < _TM_UNSTABLE, 1, 0)
        if stuck.any():
            ln_ks[active[stuck]] = acc_ks[active[stuck]]
        done = bad | early | stationary | trivial | stuck

        # Backtrack: halve the step towards the last accepted point.
        if backtrack.any():
            bi_ = active[backtrack]
            ln_ks[bi_] = 0.5 * (ln_ks[bi_] + acc_ks[bi_])
            halvings[bi_] += 1

        keep = accept & ~done
        idx = active[keep]
        if idx.size:
            ks_k, ks_new_k = ks[keep], ks_new[keep]
            acc_ks[idx] = ks_k
            acc_tm[idx] = tm_a[keep]
            halvings[idx] = 0
            n_accepted[idx] += 1
            newton = n_accepted[idx] >= _NEWTON_AFTER
            step = ks_new_k
            gd = (n_accepted[idx] % _GDEM_EVERY == 0) & ~newton
            if gd.any():
                step = np.where(gd[:, None], _gdem(ks_new_k, ks_k, prev1[idx], present[idx]), step)
            if newton.any():
                nk = np.flatnonzero(keep)[newton]
                step_n = _newton_step(
                    model, _sub(st, nk), sqrt_a[idx[newton]], b_i[idx[newton]], z[idx[newton]],
                    present[idx[newton]], ks_k[newton], r[nk], w_moles[nk], sum_w[nk],
                )
                step[newton] = step_n
            prev1[idx] = ks_k
            ln_ks[idx] = step
        active = active[~done]
    return ln_ks, tm, iters, outcome


def _sub(st: PhaseState, rows) -> PhaseState:
    return PhaseState(z=st.z[rows], ln_phi=st.ln_phi[rows], a=st.a[rows], b=st.b[rows],
                      psi=st.psi[rows])


def _gdem(x_new, x_cur, x_prev, present):
    """Crowe-Nishio dominant-eigenvalue extrapolation of a fixed-point sequence."""
    d1 = x_new - x_cur
    d0 = x_cur - x_prev
    num = np.sum(d1 * d1, axis=1)
    den = np.sum(d0 * d1, axis=1)
    with np.errstate(divide="ignore", invalid="ignore"):
        lam = num / den
    ok = np.isfinite(lam) & (lam > 0.0) & (lam < 0.95)
    factor = np.where(ok, lam / (1.0 - lam), 0.0)
    return np.where(present, x_new + factor[:, None] * d1, 0.0)


def _newton_step(model, st, sqrt_a, b_i, z, present, ks, r, w_moles, sum_w):
    """Newton step in alpha = 2 sqrt(W) (Michelsen 1982, with the r-term of the Hessian dropped)."""
    sub = st
    dphi = ln_phi_derivatives(model, sub, sqrt_a, b_i)  # n dln phi_i / dn_j
    sw = np.sqrt(w_moles)
    h = sw[:, :, None] * sw[:, None, :] * dphi / sum_w[:, None, None]
    nc = z.shape[1]
    h = h + np.eye(nc)
    g = sw * r
    d_alpha = -solve_cells(h, g)
    alpha = 2.0 * sw
    # Keep alpha positive: shorten the step where it would cross zero.
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = np.where(d_alpha < 0.0, alpha / -d_alpha, np.inf)
    tau = np.minimum(1.0, 0.9 * np.min(np.where(present, ratio, np.inf), axis=1))
    new_alpha = alpha + tau[:, None] * d_alpha
    with np.errstate(divide="ignore", invalid="ignore"):
        ks_newton = np.where(present, np.log((new_alpha / 2.0) ** 2 / np.where(present, z, 1.0)), 0.0)
    # Fall back to a substitution step where Newton failed numerically.
    ok = np.all(np.isfinite(ks_newton), axis=1)
    return np.where(ok[:, None], ks_newton, ks - r)
