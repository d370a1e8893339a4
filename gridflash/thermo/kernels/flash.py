"""The whole flash of a batch: stability test, split, Gibbs-descent fallback, warm starts.

The driver is documented in :mod:`gridflash.thermo._flash`.
"""

from __future__ import annotations

import math

import numpy as np

from ._policy import kernel
from .codes import (
    CONVERGED,
    GIBBS_INCREASE,
    MAX_ITERATIONS,
    NO_TWO_PHASE_ROOT,
    ROOT_FAILURE,
    ROOT_MIN_GIBBS,
)
from .eos import phase_cell, reduced_cell, wilson_ln_k_cell
from .split import GIBBS_TOL, NEWTON_WM, SPLIT_WS, evaluate_v, newton_cell, split_cell, xlogx
from .stability import STAB_MAXITER, STAB_TOL, STABILITY_WS, TRIAL_WM, stability_cell

_NAN = math.nan
_INF = math.inf

# Scratch sizes (rows of nc, and (nc, nc) matrices).
FLASH_WS = max(STABILITY_WS, SPLIT_WS)
FLASH_WM = max(TRIAL_WM, NEWTON_WM)


_DESCENT_FRACTIONS = (0.01, 0.05, 0.2, 0.4, 0.6, 0.8, 0.95)


@kernel
def _gibbs_descent_cell(
    z, present, ln_phi_z, sqrt_a, b_i, omk, d1, d2, ln_kw, o_x, o_y, o_lnk, ws, wm
):
    """Robust split from the most negative stationary point of tm (see _flash._gibbs_descent).

    ``ws`` and ``wm``: scratch of FLASH_WS rows of nc and FLASH_WM (nc, nc) matrices.
    """
    nc = z.shape[0]
    trials = np.empty((2, nc))
    trial_tm = np.empty(2)
    seed = np.empty(nc)
    _, _, st_it, _, _ = stability_cell(
        z,
        present,
        ln_phi_z,
        sqrt_a,
        b_i,
        omk,
        d1,
        d2,
        ln_kw,
        STAB_TOL,
        STAB_MAXITER,
        False,
        trials,
        trial_tm,
        seed,
        ws,
        wm,
    )
    tv = trial_tm[0] if math.isfinite(trial_tm[0]) else _INF
    tl = trial_tm[1] if math.isfinite(trial_tm[1]) else _INF
    which = 0 if tv <= tl else 1
    best_v = np.empty(nc)
    v = np.empty(nc)
    x = np.empty(nc)
    y = np.empty(nc)
    lnphi_l = np.empty(nc)
    lnphi_v = np.empty(nc)
    psi_l = np.empty(nc)
    psi_v = np.empty(nc)
    lnk_next = np.empty(nc)
    best_g = _INF
    first = True
    for frac in _DESCENT_FRACTIONS:
        for i in range(nc):
            if present[i]:
                v[i] = min(frac * trials[which, i], (1.0 - 1e-6) * z[i])
                if not math.isfinite(v[i]):
                    v[i] = 0.5 * z[i]
            else:
                v[i] = 0.0
        _, ev = evaluate_v(
            z, present, v, x, y, sqrt_a, b_i, omk, d1, d2, lnphi_l, lnphi_v, psi_l, psi_v, lnk_next
        )
        g = ev[3] if math.isfinite(ev[3]) else _INF
        if first or g < best_g:
            for i in range(nc):
                best_v[i] = v[i]
            if g < best_g:
                best_g = g
            first = False
    status, beta, zl, zv, n_it, res, bal, gibbs = newton_cell(
        z, present, sqrt_a, b_i, omk, d1, d2, best_v, True, o_x, o_y, o_lnk, ws, wm
    )
    return status, beta, zl, zv, n_it + st_it, res, bal, gibbs


@kernel
def flash_batch(
    ac,
    m,
    b,
    tc,
    pc,
    omega,
    omk,
    d1,
    d2,
    p,
    t,
    z,
    k0,
    use_k0,
    chain,
    status,
    phase_count,
    beta,
    x,
    y,
    ln_k,
    z_liq,
    z_vap,
    z_feed,
    iterations,
    stab_iters,
    residual,
    balance,
    tpd,
):
    """Flash every cell; fills the output arrays (see _flash._flash_arrays).

    Warm starts: with ``use_k0``, from the rows of ``k0`` without NaN; else with ``chain > 0``,
    cell ``c`` from the ln K of cell ``c - chain`` where that cell converged to two phases.
    """
    n, nc = z.shape
    sqrt_a = np.empty(nc)
    b_i = np.empty(nc)
    present = np.empty(nc, dtype=np.bool_)
    lnphi_z = np.empty(nc)
    psi = np.empty(nc)
    ln_kw = np.empty(nc)
    lnk0 = np.empty(nc)
    trials = np.empty((2, nc))
    trial_tm = np.empty(2)
    seed = np.empty(nc)
    sx = np.empty(nc)
    sy = np.empty(nc)
    slnk = np.empty(nc)
    ws = np.empty((FLASH_WS, nc))
    wm = np.empty((FLASH_WM, nc, nc))
    for c in range(n):
        zc = z[c]
        reduced_cell(ac, m, b, tc, p[c], t[c], sqrt_a, b_i)
        for i in range(nc):
            present[i] = zc[i] > 0.0
        zf, _, _ = phase_cell(zc, sqrt_a, b_i, omk, d1, d2, ROOT_MIN_GIBBS, lnphi_z, psi)
        z_feed[c] = zf
        status[c] = CONVERGED
        phase_count[c] = 1
        beta[c] = _NAN
        z_liq[c] = _NAN
        z_vap[c] = _NAN
        iterations[c] = 0
        stab_iters[c] = 0
        residual[c] = 0.0
        balance[c] = 0.0
        tpd[c] = _NAN
        for i in range(nc):
            x[c, i] = _NAN
            y[c, i] = _NAN
            ln_k[c, i] = _NAN
        feed_ok = math.isfinite(zf)
        for i in range(nc):
            if not math.isfinite(lnphi_z[i]):
                feed_ok = False
        if not feed_ok:
            status[c] = ROOT_FAILURE
            continue
        g_split = _NAN
        done = False
        warm = False
        if use_k0:
            warm = True
            for i in range(nc):
                if not math.isfinite(k0[c, i]):
                    warm = False
            if warm:
                for i in range(nc):
                    lnk0[i] = math.log(k0[c, i])
        elif chain > 0 and c >= chain:
            prev = c - chain
            warm = status[prev] == CONVERGED and phase_count[prev] == 2
            for i in range(nc):
                lnk0[i] = ln_k[prev, i]
                if not math.isfinite(lnk0[i]):
                    warm = False
        if warm:
            st, bt, zl, zv, it, res, bal, g = split_cell(
                zc, present, sqrt_a, b_i, omk, d1, d2, lnk0, True, sx, sy, slnk, ws, wm
            )
            iterations[c] += it
            if st == CONVERGED and 0.0 < bt < 1.0:
                done = True
        if not done:
            for i in range(nc):
                ln_kw[i] = wilson_ln_k_cell(pc[i], tc[i], omega[i], p[c], t[c])
            stable, tpd_c, st_it, conclusive, root_failure = stability_cell(
                zc,
                present,
                lnphi_z,
                sqrt_a,
                b_i,
                omk,
                d1,
                d2,
                ln_kw,
                STAB_TOL,
                STAB_MAXITER,
                True,
                trials,
                trial_tm,
                seed,
                ws,
                wm,
            )
            stab_iters[c] = st_it
            iterations[c] += st_it
            tpd[c] = tpd_c
            if stable:
                if not conclusive:
                    status[c] = ROOT_FAILURE if root_failure else MAX_ITERATIONS
                continue
            st, bt, zl, zv, it, res, bal, g = split_cell(
                zc, present, sqrt_a, b_i, omk, d1, d2, seed, False, sx, sy, slnk, ws, wm
            )
            iterations[c] += it
            if not (st == CONVERGED and 0.0 < bt < 1.0):
                fx = np.empty(nc)
                fy = np.empty(nc)
                flnk = np.empty(nc)
                st2, bt2, zl2, zv2, it2, res2, bal2, g2 = _gibbs_descent_cell(
                    zc, present, lnphi_z, sqrt_a, b_i, omk, d1, d2, ln_kw, fx, fy, flnk, ws, wm
                )
                iterations[c] += it2
                if st2 == CONVERGED and 0.0 < bt2 < 1.0:
                    st, bt, zl, zv, res, bal, g = st2, bt2, zl2, zv2, res2, bal2, g2
                    for i in range(nc):
                        sx[i] = fx[i]
                        sy[i] = fy[i]
                        slnk[i] = flnk[i]
                elif st == CONVERGED:
                    st = NO_TWO_PHASE_ROOT
        # Two-phase answer (converged or flagged).
        phase_count[c] = 2
        status[c] = st
        residual[c] = res
        balance[c] = bal
        g_split = g
        g_feed = xlogx(zc, lnphi_z, present)
        if st == CONVERGED and g_split > g_feed + GIBBS_TOL:
            status[c] = GIBBS_INCREASE
        if zv < zl:  # the vapour is the phase of larger Z
            beta[c] = 1.0 - bt
            z_liq[c] = zv
            z_vap[c] = zl
            for i in range(nc):
                x[c, i] = sy[i]
                y[c, i] = sx[i]
                ln_k[c, i] = -slnk[i]
        else:
            beta[c] = bt
            z_liq[c] = zl
            z_vap[c] = zv
            for i in range(nc):
                x[c, i] = sx[i]
                y[c, i] = sy[i]
                ln_k[c, i] = slnk[i]
