"""The whole flash of a batch: stability test, split, Gibbs-descent fallback, certification of
the answer by a stability test of its phases, three-phase split, warm starts.

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
    NOT_CERTIFIED,
    ROOT_FAILURE,
    ROOT_MIN_GIBBS,
    THREE_PHASE_FAILED,
)
from .eos import phase_cell, pure_ln_phi_cell, reduced_cell, wilson_ln_k_cell
from .multiphase import multiphase_split_cell
from .rachford_rice import MAX_PHASES
from .split import (
    GIBBS_TOL,
    NEWTON_WM,
    SPLIT_WS,
    evaluate_v,
    from_lnk,
    newton_cell,
    split_cell,
    xlogx,
)
from .stability import (
    EXTENDED_WS,
    NEAR_PURE_REST,
    NEAR_PURE_WS,
    STAB_MAXITER,
    STAB_TOL,
    STABILITY_WS,
    TM_CERTIFY,
    TRIAL_WM,
    corner_screen,
    near_pure_trials,
    stability_cell,
)

_NAN = math.nan
_INF = math.inf

# Scratch sizes (rows of nc, and (nc, nc) matrices).
FLASH_WS = max(STABILITY_WS, SPLIT_WS, EXTENDED_WS)
FLASH_WM = max(TRIAL_WM, NEWTON_WM)


_DESCENT_FRACTIONS = (0.01, 0.05, 0.2, 0.4, 0.6, 0.8, 0.95)
CERTIFY_ROUNDS = 3  # certification -> re-split rounds before a cell is flagged NOT_CERTIFIED


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
        z, present, sqrt_a, b_i, omk, d1, d2, best_v, True, o_x, o_y, o_lnk, ws, wm, 0.0, _INF
    )
    return status, beta, zl, zv, n_it + st_it, res, bal, gibbs


@kernel
def extended_test(
    ref, present, ln_phi_ref, sqrt_a, b_i, omk, d1, d2, ln_phi_pure, gate, w_out, ws, wm
):
    """The pure-component corner screen, then near-pure trial phases, of the reference phase
    ``ref``; returns (lowest tm, iterations). The lowest-tm composition is in ``w_out``.
    ``ws``: EXTENDED_WS rows of nc."""
    nc = ref.shape[0]
    corner = ws[NEAR_PURE_WS]
    low, which = corner_screen(ref, present, ln_phi_ref, ln_phi_pure, corner)
    tm, iters, _ = near_pure_trials(
        ref, present, ln_phi_ref, sqrt_a, b_i, omk, d1, d2, corner, gate, w_out, ws, wm
    )
    if low < tm:
        # The corner itself is the lowest tm seen; a trial phase with every component present
        # stands for it where no trial was run.
        tm = low
        if not math.isfinite(w_out[0]):
            for i in range(nc):
                w_out[i] = 1.0 - NEAR_PURE_REST if i == which else NEAR_PURE_REST * ref[i]
    return tm, iters


@kernel
def certify_phases(comp, present, sqrt_a, b_i, omk, d1, d2, ln_phi_pure, gate, w_out, ws, wm):
    """Stability test of a converged answer, with its first phase as the reference (at
    equilibrium every phase has the same tangent plane); returns (lowest tm, iterations)."""
    ln_phi = ws[NEAR_PURE_WS + 1]
    psi = ws[NEAR_PURE_WS + 2]
    zr, _, _ = phase_cell(comp[0], sqrt_a, b_i, omk, d1, d2, ROOT_MIN_GIBBS, ln_phi, psi)
    if not math.isfinite(zr):
        return _NAN, 0
    return extended_test(
        comp[0], present, ln_phi, sqrt_a, b_i, omk, d1, d2, ln_phi_pure, gate, w_out, ws, wm
    )


@kernel
def _write_phases(c, z, present, comp, beta, n_phase, sqrt_a, b_i, omk, d1, d2, out):
    """Write a two- or three-phase answer held in ``comp``/``beta`` into row ``c`` of the
    outputs: the vapour slot takes the phase of largest Z, the liquid slot the liquid of larger
    Z and the second-liquid slot the other one."""
    x, y, x2, beta_v, beta_2, ln_k, z_liq, z_vap, z_liq2 = out
    nc = z.shape[0]
    ln_phi = np.empty((MAX_PHASES, nc))
    psi = np.empty(nc)
    zf = np.empty(MAX_PHASES)
    for k in range(n_phase):
        zf[k], _, _ = phase_cell(comp[k], sqrt_a, b_i, omk, d1, d2, ROOT_MIN_GIBBS, ln_phi[k], psi)
    v = 0
    for k in range(1, n_phase):
        if zf[k] > zf[v]:
            v = k
    lq = -1
    l2 = -1
    for k in range(n_phase):
        if k != v:
            if lq < 0:
                lq = k
            elif zf[k] > zf[lq]:
                l2 = lq
                lq = k
            else:
                l2 = k
    beta_v[c] = beta[v]
    z_vap[c] = zf[v]
    z_liq[c] = zf[lq]
    for i in range(nc):
        x[c, i] = comp[lq, i]
        y[c, i] = comp[v, i]
        if present[i]:
            ln_k[c, i] = math.log(comp[v, i] / comp[lq, i])
        else:
            ln_k[c, i] = ln_phi[lq, i] - ln_phi[v, i]
    if l2 >= 0:
        beta_2[c] = beta[l2]
        z_liq2[c] = zf[l2]
        for i in range(nc):
            x2[c, i] = comp[l2, i]


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
    certify,
    gate,
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
    x2,
    beta2,
    z_liq2,
    cert_iters,
):
    """Flash every cell; fills the output arrays (see _flash._flash_arrays).

    Warm starts: with ``use_k0``, from the rows of ``k0`` without NaN; else with ``chain > 0``,
    cell ``c`` from the answer of cell ``c - chain`` where that cell converged to two or three
    phases. With ``certify`` False the cell is solved the way it was before certification
    existed (two Wilson trials, no test of the answer, at most two phases): kept only to
    measure the cost of certification. ``gate`` (nc,): the corner tm below which a component
    gets a near-pure trial phase.
    """
    n, nc = z.shape
    sqrt_a = np.empty(nc)
    b_i = np.empty(nc)
    present = np.empty(nc, dtype=np.bool_)
    lnphi_z = np.empty(nc)
    lnphi_pure = np.empty(nc)
    psi = np.empty(nc)
    ln_kw = np.empty(nc)
    lnk0 = np.empty(nc)
    trials = np.empty((2, nc))
    trial_tm = np.empty(2)
    seed = np.empty(nc)
    sx = np.empty(nc)
    sy = np.empty(nc)
    slnk = np.empty(nc)
    w_trial = np.empty(nc)
    comp = np.empty((MAX_PHASES, nc))
    fr = np.empty(MAX_PHASES)
    saved = np.empty((MAX_PHASES, nc))
    saved_fr = np.empty(MAX_PHASES)
    ws = np.empty((FLASH_WS, nc))
    wm = np.empty((FLASH_WM, nc, nc))
    out = (x, y, x2, beta, beta2, ln_k, z_liq, z_vap, z_liq2)
    # What depends on P and T only -- sqrt(A_i), B_i, the pure components' ln phi, Wilson's
    # K-values -- is kept from the previous cell where that cell had the same P and T (a grid's
    # cells along the composition axis): the same numbers as computing them again.
    pure_ready = False
    wilson_ready = False
    for c in range(n):
        zc = z[c]
        if c == 0 or not (p[c] == p[c - 1] and t[c] == t[c - 1]):
            reduced_cell(ac, m, b, tc, p[c], t[c], sqrt_a, b_i)
            pure_ready = False
            wilson_ready = False
        for i in range(nc):
            present[i] = zc[i] > 0.0
        zf, _, _ = phase_cell(zc, sqrt_a, b_i, omk, d1, d2, ROOT_MIN_GIBBS, lnphi_z, psi)
        z_feed[c] = zf
        status[c] = CONVERGED
        phase_count[c] = 1
        beta[c] = _NAN
        beta2[c] = 0.0
        z_liq[c] = _NAN
        z_vap[c] = _NAN
        z_liq2[c] = _NAN
        iterations[c] = 0
        stab_iters[c] = 0
        cert_iters[c] = 0
        residual[c] = 0.0
        balance[c] = 0.0
        tpd[c] = _NAN
        for i in range(nc):
            x[c, i] = _NAN
            y[c, i] = _NAN
            x2[c, i] = _NAN
            ln_k[c, i] = _NAN
        feed_ok = math.isfinite(zf)
        for i in range(nc):
            if not math.isfinite(lnphi_z[i]):
                feed_ok = False
        if not feed_ok:
            status[c] = ROOT_FAILURE
            continue
        if certify and not pure_ready:
            pure_ln_phi_cell(sqrt_a, b_i, omk, d1, d2, lnphi_pure)
            pure_ready = True
        st, bt, zl, zv, res, bal, g = CONVERGED, _NAN, _NAN, _NAN, _NAN, _NAN, _NAN
        n_phase = 0  # phases of a converged answer held in comp / fr (0: none yet)
        from_split = False  # the answer is the two-phase split's (sx, sy, slnk)
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
            if status[prev] == CONVERGED and phase_count[prev] == 3:
                fr[0] = 1.0 - beta[prev] - beta2[prev]
                fr[1] = beta[prev]
                fr[2] = beta2[prev]
                for i in range(nc):
                    comp[0, i] = x[prev, i]
                    comp[1, i] = y[prev, i]
                    comp[2, i] = x2[prev, i]
                st, n_new, it, res, bal, g = multiphase_split_cell(
                    zc, present, sqrt_a, b_i, omk, d1, d2, 3, comp, fr
                )
                iterations[c] += it
                if st == CONVERGED and n_new > 1:
                    n_phase = n_new
                    residual[c] = res
                    balance[c] = bal
        if warm and n_phase == 0:
            st, bt, zl, zv, it, res, bal, g = split_cell(
                zc, present, sqrt_a, b_i, omk, d1, d2, lnk0, True, sx, sy, slnk, ws, wm
            )
            iterations[c] += it
            if st == CONVERGED and 0.0 < bt < 1.0:
                n_phase = 2
                from_split = True
            elif certify:
                # The split in vapour mole numbers loses precision where one phase holds almost
                # none of a component (water and oil); the multiphase substitution, which
                # computes each phase's composition directly, starts from the warm K-values.
                bt0, rr_ok = from_lnk(zc, present, lnk0, comp[0], comp[1], ws)
                fr[0] = 1.0 - bt0
                fr[1] = bt0
                st_m, n_new, it_m, res_m, bal_m, g_m = ROOT_FAILURE, 0, 0, _NAN, _NAN, _NAN
                if rr_ok and 0.0 < bt0 < 1.0:
                    st_m, n_new, it_m, res_m, bal_m, g_m = multiphase_split_cell(
                        zc, present, sqrt_a, b_i, omk, d1, d2, 2, comp, fr
                    )
                iterations[c] += it_m
                if st_m == CONVERGED and n_new > 1:
                    n_phase = n_new
                    residual[c] = res_m
                    balance[c] = bal_m
                    g = g_m
        if n_phase == 0:
            if not wilson_ready:
                for i in range(nc):
                    ln_kw[i] = wilson_ln_k_cell(pc[i], tc[i], omega[i], p[c], t[c])
                wilson_ready = True
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
            if stable and conclusive and certify:
                tm_e, e_it = extended_test(
                    zc,
                    present,
                    lnphi_z,
                    sqrt_a,
                    b_i,
                    omk,
                    d1,
                    d2,
                    lnphi_pure,
                    gate,
                    w_trial,
                    ws,
                    wm,
                )
                stab_iters[c] += e_it
                iterations[c] += e_it
                if tm_e < TM_CERTIFY:
                    stable = False
                    tpd[c] = tm_e
                    for i in range(nc):
                        seed[i] = math.log(w_trial[i] / zc[i]) if present[i] else 0.0
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
            if st == CONVERGED:
                n_phase = 2
                from_split = True
            elif certify:
                # Both two-phase routes failed: split into the two Wilson trial phases and the
                # lowest near-pure trial phase, and let the substitution drop what is not needed.
                tm_e, e_it = extended_test(
                    zc,
                    present,
                    lnphi_z,
                    sqrt_a,
                    b_i,
                    omk,
                    d1,
                    d2,
                    lnphi_pure,
                    gate,
                    w_trial,
                    ws,
                    wm,
                )
                n_try = 3 if tm_e < TM_CERTIFY else 2
                for i in range(nc):
                    comp[0, i] = trials[0, i]
                    comp[1, i] = trials[1, i]
                    comp[2, i] = w_trial[i]
                for k in range(MAX_PHASES):
                    fr[k] = 1.0 / n_try
                st_m, n_new, it_m, res_m, bal_m, g_m = multiphase_split_cell(
                    zc, present, sqrt_a, b_i, omk, d1, d2, n_try, comp, fr
                )
                cert_iters[c] += e_it + it_m
                iterations[c] += e_it + it_m
                if st_m == CONVERGED and n_new > 1:
                    n_phase = n_new
                    residual[c] = res_m
                    balance[c] = bal_m
                    g = g_m
        if from_split:
            fr[0] = 1.0 - bt
            fr[1] = bt
            for i in range(nc):
                comp[0, i] = sx[i]
                comp[1, i] = sy[i]
            residual[c] = res
            balance[c] = bal
        st_final = st if n_phase == 0 else CONVERGED
        if certify and n_phase > 0:
            certified = False
            for _ in range(CERTIFY_ROUNDS):
                tm_c, c_it = certify_phases(
                    comp, present, sqrt_a, b_i, omk, d1, d2, lnphi_pure, gate, w_trial, ws, wm
                )
                cert_iters[c] += c_it
                iterations[c] += c_it
                if not tm_c < TM_CERTIFY:
                    certified = not math.isnan(tm_c)
                    break
                if n_phase == MAX_PHASES:
                    break
                # Add the trial phase and split again: the substitution removes a phase that is
                # not needed, so this also reaches a lower-Gibbs two-phase answer.
                for k in range(n_phase):
                    saved_fr[k] = fr[k]
                    for i in range(nc):
                        saved[k, i] = comp[k, i]
                n_old = n_phase
                for i in range(nc):
                    comp[n_phase, i] = w_trial[i]
                fr[n_phase] = 0.0
                st_m, n_new, it_m, res_m, bal_m, g_m = multiphase_split_cell(
                    zc, present, sqrt_a, b_i, omk, d1, d2, n_phase + 1, comp, fr
                )
                cert_iters[c] += it_m
                iterations[c] += it_m
                if st_m != CONVERGED or n_new < 2:
                    n_phase = n_old
                    for k in range(n_phase):
                        fr[k] = saved_fr[k]
                        for i in range(nc):
                            comp[k, i] = saved[k, i]
                    st_final = THREE_PHASE_FAILED
                    break
                n_phase = n_new
                from_split = False
                residual[c] = res_m
                balance[c] = bal_m
                g = g_m
            if st_final == CONVERGED and not certified:
                st_final = NOT_CERTIFIED
        if n_phase == 0:
            # A two-phase answer that did not converge (flagged), as the split left it.
            n_phase = 2
            from_split = True
            residual[c] = res
            balance[c] = bal
            fr[0] = 1.0 - bt
            fr[1] = bt
        phase_count[c] = n_phase
        status[c] = st_final
        if from_split:
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
        else:
            _write_phases(c, zc, present, comp, fr, n_phase, sqrt_a, b_i, omk, d1, d2, out)
        g_feed = xlogx(zc, lnphi_z, present)
        if status[c] == CONVERGED and g > g_feed + GIBBS_TOL:
            status[c] = GIBBS_INCREASE
