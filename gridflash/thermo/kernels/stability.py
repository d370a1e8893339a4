"""Michelsen tangent-plane-distance stability test, per cell.

The method is documented in :mod:`gridflash.thermo._stability`.
"""

from __future__ import annotations

import math

import numpy as np

from ._policy import kernel
from .codes import FAILED, INCONCLUSIVE, ROOT_MIN_GIBBS, STABLE, UNSTABLE
from .eos import DLNPHI_WS, dlnphi_cell, phase_cell, solve_cell

_NAN = math.nan
_INF = math.inf

# Stability test
STAB_TOL = 1e-10  # max |ln W_i + ln phi_i(w) - d_i| at a stationary point
TM_UNSTABLE = -1e-10  # tm below this at a stationary point: unstable
TM_EARLY_EXIT = -1e-6  # tm below this during iterations: unstable, stop early
TRIVIAL_KS = 1e-8  # sum (ln Ks)^2 below this with tm >= 0: converging to the feed
STAB_MAXITER = 200
STAB_GDEM_EVERY = 3
STAB_NEWTON_AFTER = 12
STAB_MAX_HALVINGS = 8

# Scratch sizes (rows of nc, and (nc, nc) matrices).
TRIAL_WS = 12 + DLNPHI_WS
TRIAL_WM = 2
STABILITY_WS = 3 + TRIAL_WS


@kernel
def _gdem(x_new, x_cur, x_prev, present, everywhere, out):
    num = 0.0
    den = 0.0
    for i in range(x_new.shape[0]):
        d1 = x_new[i] - x_cur[i]
        d0 = x_cur[i] - x_prev[i]
        num += d1 * d1
        den += d0 * d1
    factor = 0.0
    if den != 0.0:
        lam = num / den
        if math.isfinite(lam) and 0.0 < lam < 0.95:
            factor = lam / (1.0 - lam)
    for i in range(x_new.shape[0]):
        if everywhere or present[i]:
            out[i] = x_new[i] + factor * (x_new[i] - x_cur[i])
        else:
            out[i] = x_new[i]


@kernel
def stability_trial(
    z,
    present,
    ln_phi_z,
    sqrt_a,
    b_i,
    omk,
    d1,
    d2,
    ks0,
    tol,
    maxiter,
    early_exit,
    ks_out,
    ws,
    wm,
):
    """Iterate one trial phase (ln Ks = ln W - ln z) to a conclusion.

    Returns (outcome, tm, iterations); the final ln Ks is written into ``ks_out``. ``ws`` and
    ``wm`` are scratch of TRIAL_WS rows of nc and TRIAL_WM (nc, nc) matrices.
    """
    nc = z.shape[0]
    ks = ws[0]
    acc_ks = ws[1]
    prev1 = ws[2]
    ks_new = ws[3]
    r = ws[4]
    w_moles = ws[5]
    w = ws[6]
    ln_phi = ws[7]
    psi = ws[8]
    step = ws[9]
    rhs = ws[10]
    d_alpha = ws[11]
    dphi = wm[0]
    h = wm[1]
    for i in range(nc):
        ks[i] = ks0[i] if present[i] else 0.0
        acc_ks[i] = 0.0
        prev1[i] = 0.0
    acc_tm = _INF
    tm_out = _NAN
    halvings = 0
    n_accepted = 0
    outcome = INCONCLUSIVE
    iters = maxiter
    for it in range(1, maxiter + 1):
        sum_w = 0.0
        for i in range(nc):
            w_moles[i] = z[i] * math.exp(ks[i])
            sum_w += w_moles[i]
        for i in range(nc):
            w[i] = w_moles[i] / sum_w
        zph, aph, bph = phase_cell(w, sqrt_a, b_i, omk, d1, d2, ROOT_MIN_GIBBS, ln_phi, psi)
        tm = 1.0 - sum_w
        res = 0.0
        ssq = 0.0
        for i in range(nc):
            if present[i]:
                ks_new[i] = ln_phi_z[i] - ln_phi[i]
                r[i] = ks[i] - ks_new[i]
            else:
                ks_new[i] = 0.0
                r[i] = 0.0
            tm += w_moles[i] * r[i]
            res = max(res, abs(r[i]))
            ssq += ks[i] * ks[i]
        if not (math.isfinite(tm) and math.isfinite(res)):
            outcome = FAILED
            iters = it
            break
        if tm > acc_tm + 1e-13 * max(1.0, abs(acc_tm)):
            if halvings >= STAB_MAX_HALVINGS:
                outcome = UNSTABLE if acc_tm < TM_UNSTABLE else STABLE
                for i in range(nc):
                    ks[i] = acc_ks[i]
                iters = it
                break
            for i in range(nc):
                ks[i] = 0.5 * (ks[i] + acc_ks[i])
            halvings += 1
            continue
        tm_out = tm
        if early_exit and tm < TM_EARLY_EXIT:
            outcome = UNSTABLE
            iters = it
            break
        if res < tol:
            outcome = UNSTABLE if tm < TM_UNSTABLE else STABLE
            iters = it
            break
        if tm >= 0.0 and ssq < TRIVIAL_KS:
            outcome = STABLE
            iters = it
            break
        for i in range(nc):
            acc_ks[i] = ks[i]
        acc_tm = tm
        halvings = 0
        n_accepted += 1
        if n_accepted >= STAB_NEWTON_AFTER:
            # Newton step in alpha = 2 sqrt(W) (Michelsen 1982).
            dlnphi_cell(zph, aph, bph, psi, sqrt_a, b_i, omk, d1, d2, dphi, ws[12:])
            for i in range(nc):
                swi = math.sqrt(w_moles[i])
                rhs[i] = -swi * r[i]
                for j in range(nc):
                    h[i, j] = swi * math.sqrt(w_moles[j]) * dphi[i, j] / sum_w
                h[i, i] += 1.0
            ok = solve_cell(h, rhs, d_alpha)
            tau = 1.0
            if ok:
                for i in range(nc):
                    if present[i] and d_alpha[i] < 0.0:
                        tau = min(tau, 0.9 * (2.0 * math.sqrt(w_moles[i])) / -d_alpha[i])
                for i in range(nc):
                    if present[i]:
                        na = 2.0 * math.sqrt(w_moles[i]) + tau * d_alpha[i]
                        step[i] = math.log((na / 2.0) ** 2 / z[i])
                        if not math.isfinite(step[i]):
                            ok = False
                    else:
                        step[i] = 0.0
            if not ok:
                for i in range(nc):
                    step[i] = ks[i] - r[i]
        elif n_accepted % STAB_GDEM_EVERY == 0:
            _gdem(ks_new, ks, prev1, present, False, step)
        else:
            for i in range(nc):
                step[i] = ks_new[i]
        for i in range(nc):
            prev1[i] = ks[i]
            ks[i] = step[i]
    for i in range(nc):
        ks_out[i] = ks[i]
    return outcome, tm_out, iters


@kernel
def stability_cell(
    z,
    present,
    ln_phi_z,
    sqrt_a,
    b_i,
    omk,
    d1,
    d2,
    ln_kw,
    tol,
    maxiter,
    early_exit,
    trials,
    trial_tm,
    seed,
    ws,
    wm,
):
    """Both Wilson-started trials of one cell.

    Returns (stable, tpd, iterations, conclusive, root_failure); fills ``trials`` (2, nc),
    ``trial_tm`` (2,) and ``seed`` (nc,) (the split's initial ln K; NaN where stable).
    ``ws`` and ``wm`` are scratch of STABILITY_WS rows of nc and TRIAL_WM (nc, nc) matrices.
    """
    nc = z.shape[0]
    ks_v = ws[0]
    ks_l = ws[1]
    neg = ws[2]
    tws = ws[3:]
    for i in range(nc):
        neg[i] = -ln_kw[i]
    fluid = (z, present, ln_phi_z, sqrt_a, b_i, omk, d1, d2)
    out_v, tm_v, it_v = stability_trial(*fluid, ln_kw, tol, maxiter, early_exit, ks_v, tws, wm)
    out_l, tm_l, it_l = stability_trial(*fluid, neg, tol, maxiter, early_exit, ks_l, tws, wm)
    unstable_v = out_v == UNSTABLE
    unstable_l = out_l == UNSTABLE
    unstable = unstable_v or unstable_l
    root_failure = (out_v == FAILED or out_l == FAILED) and not unstable
    conclusive = unstable or (out_v == STABLE and out_l == STABLE)
    sum_v = 0.0
    sum_l = 0.0
    for i in range(nc):
        sum_v += z[i] * math.exp(ks_v[i])
        sum_l += z[i] * math.exp(ks_l[i])
    ln_sum_v = math.log(sum_v)
    ln_sum_l = math.log(sum_l)
    for i in range(nc):
        trials[0, i] = z[i] * math.exp(ks_v[i]) / sum_v
        trials[1, i] = z[i] * math.exp(ks_l[i]) / sum_l
        if not unstable:
            seed[i] = _NAN
        elif unstable_v and unstable_l:
            seed[i] = (ks_v[i] - ln_sum_v) - (ks_l[i] - ln_sum_l)
        elif unstable_v:
            seed[i] = ks_v[i] - ln_sum_v
        else:
            seed[i] = -(ks_l[i] - ln_sum_l)
    trial_tm[0] = tm_v
    trial_tm[1] = tm_l
    tpd = (
        min(tm_v, tm_l)
        if (math.isfinite(tm_v) and math.isfinite(tm_l))
        else (tm_v if math.isfinite(tm_v) else tm_l)
    )
    return (not unstable), tpd, it_v + it_l, conclusive, root_failure


@kernel
def stability_batch(
    z,
    ln_phi_z,
    sqrt_a,
    b_i,
    omk,
    d1,
    d2,
    ln_kw,
    tol,
    maxiter,
    early_exit,
    stable,
    tpd,
    iters,
    conclusive,
    root_failure,
    trials,
    trial_tm,
    seed,
):
    nc = z.shape[1]
    present = np.empty(nc, dtype=np.bool_)
    tr = np.empty((2, nc))
    tt = np.empty(2)
    ws = np.empty((STABILITY_WS, nc))
    wm = np.empty((TRIAL_WM, nc, nc))
    for c in range(z.shape[0]):
        for i in range(nc):
            present[i] = z[c, i] > 0.0
        stable[c], tpd[c], iters[c], conclusive[c], root_failure[c] = stability_cell(
            z[c],
            present,
            ln_phi_z[c],
            sqrt_a[c],
            b_i[c],
            omk,
            d1,
            d2,
            ln_kw[c],
            tol,
            maxiter,
            early_exit,
            tr,
            tt,
            seed[c],
            ws,
            wm,
        )
        for i in range(nc):
            trials[0, c, i] = tr[0, i]
            trials[1, c, i] = tr[1, i]
        trial_tm[0, c] = tt[0]
        trial_tm[1, c] = tt[1]


# Extended test: pure-component corners and near-pure trial phases (see _stability.py).
TM_CERTIFY = -1e-8  # a trial phase with tm below this fails the certification of an answer
CORNER_GATE = 0.1  # near-pure trial of component i where tm at its corner is below this ...
WATER_GATE = 5.0  # ... or below this in a mixture that contains water
NEAR_PURE_REST = 1e-3  # the other components' share of a near-pure start (in the feed's ratios)
TRIAL_STATIONARY = 1e-7  # stationarity of a near-pure trial that ends at tm >= TM_CERTIFY
NEAR_PURE_WS = 2 + TRIAL_WS
EXTENDED_WS = 3 + NEAR_PURE_WS  # with the corner tm and a phase's ln phi and psi


@kernel
def corner_screen(ref, present, ln_phi_ref, ln_phi_pure, corner):
    """tm at every pure-component corner into ``corner``; returns (lowest tm, its component).

    With ``W = e_i`` the modified tangent-plane distance is ``tm = ln phi_i^pure - d_i``
    (``d_i = ln ref_i + ln phi_i(ref)``): one pure-component EOS value per component, already
    at hand. Components absent from ``ref`` get +inf (their ``d_i`` is -inf).
    """
    low = _INF
    which = -1
    for i in range(ref.shape[0]):
        corner[i] = _INF
        if present[i]:
            corner[i] = ln_phi_pure[i] - math.log(ref[i]) - ln_phi_ref[i]
            if not math.isfinite(corner[i]):
                corner[i] = _INF
            elif corner[i] < low:
                low = corner[i]
                which = i
    return low, which


@kernel
def near_pure_trials(
    ref, present, ln_phi_ref, sqrt_a, b_i, omk, d1, d2, corner, gate, w_out, ws, wm
):
    """Trial phases started near each pure component whose corner tm is below its ``gate``
    (nc,), in increasing order of that tm, until one reaches tm < TM_CERTIFY. The corners
    tried are set to +inf in ``corner``.

    Returns (lowest tm, iterations, tried): the composition of the lowest-tm trial is written
    into ``w_out`` (NaN if none was tried). ``ws``: NEAR_PURE_WS rows of nc; ``wm``: TRIAL_WM
    (nc, nc) matrices.
    """
    nc = ref.shape[0]
    ks0 = ws[0]
    ks = ws[1]
    tws = ws[2:]
    low = _INF
    iters = 0
    tried = 0
    for i in range(nc):
        w_out[i] = _NAN
    while True:
        pick = -1
        for i in range(nc):
            if present[i] and corner[i] < gate[i]:
                if pick < 0 or corner[i] < corner[pick]:
                    pick = i
        if pick < 0:
            break
        corner[pick] = _INF  # tried
        tried += 1
        for j in range(nc):
            share = 1.0 - NEAR_PURE_REST if j == pick else NEAR_PURE_REST * ref[j]
            ks0[j] = math.log(share / ref[j]) if present[j] else 0.0
        _, tm, it = stability_trial(
            ref,
            present,
            ln_phi_ref,
            sqrt_a,
            b_i,
            omk,
            d1,
            d2,
            ks0,
            TRIAL_STATIONARY,
            STAB_MAXITER,
            True,
            ks,
            tws,
            wm,
        )
        iters += it
        if math.isfinite(tm) and tm < low:
            low = tm
            s = 0.0
            for j in range(nc):
                w_out[j] = ref[j] * math.exp(ks[j]) if present[j] else 0.0
                s += w_out[j]
            for j in range(nc):
                w_out[j] /= s
        if low < TM_CERTIFY:
            break
    return low, iters, tried
