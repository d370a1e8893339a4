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

Substitution hands over to Newton below a residual of 1e-3 (at once for a warm start) or after
25 steps, provided both phases hold more than 1e-6 of the feed; GDEM extrapolation every fifth
step is kept only if it lowers the Gibbs energy. A split whose ``max |ln K|`` falls below 1e-5
has collapsed to the trivial solution.

The per-cell implementation is :func:`split_cell` (substitution) and
:func:`newton_cell` (Newton finish, and the robust Gibbs descent used by the flash where
substitution fails); :func:`gridflash.flash` is the way to run it.
"""

from __future__ import annotations

import math

import numpy as np

from ._policy import kernel
from .codes import (
    CONVERGED,
    MAX_ITERATIONS,
    NO_TWO_PHASE_ROOT,
    ROOT_FAILURE,
    ROOT_MIN_GIBBS,
    RR_ALL_K_ABOVE_ONE,
    RR_ALL_K_BELOW_ONE,
    RR_CONVERGED,
    TRIVIAL_SOLUTION,
)
from .eos import DLNPHI_WS, dlnphi_cell, phase_cell, solve_cell
from .rachford_rice import RR_MAXITER, RR_TOL, rachford_rice_cell
from .stability import _gdem

_NAN = math.nan
_INF = math.inf

# Two-phase split
TOL_RESIDUAL = 1e-10  # max |ln f_i^V - ln f_i^L| of a converged cell
TOL_BALANCE = 1e-12  # material balance of a converged cell
NEWTON_TARGET = 1e-12
SWITCH_RESIDUAL = 1e-3
WARM_SWITCH_RESIDUAL = 1.0  # a neighbour's K-values are close: Newton at once
SWITCH_AFTER = 25
SPLIT_GDEM_EVERY = 5
NEWTON_MIN_PHASE = 1e-6
TRIVIAL_LNK = 1e-5
MAX_SS = 200
WARM_MAX_SS = 20
MAX_NEWTON = 60
MAX_NEWTON_ROBUST = 150
MAX_HALVINGS = 8
MIN_EIG = 1e-6
GIBBS_TOL = 1e-10


# Scratch sizes (rows of nc, and (nc, nc) matrices).
NEWTON_WS = 13 + DLNPHI_WS
NEWTON_WM = 3
SPLIT_WS = 13 + max(2, NEWTON_WS)


@kernel
def xlogx(frac, ln_phi, present):
    s = 0.0
    for i in range(frac.shape[0]):
        if present[i] and frac[i] > 0.0:
            s += frac[i] * (math.log(frac[i]) + ln_phi[i])
        elif present[i] and not frac[i] == 0.0:
            s += _NAN
    return s


@kernel
def _evaluate(
    z,
    present,
    beta,
    x,
    y,
    sqrt_a,
    b_i,
    omk,
    d1,
    d2,
    ln_k,
    use_ln_k,
    lnphi_l,
    lnphi_v,
    psi_l,
    psi_v,
    lnk_next,
):
    """EOS at a trial split; returns (z_l, z_v, residual, gibbs, a_l, b_l, a_v, b_v).

    The residual is ``max_i |ln K_i - (ln phi_i^L - ln phi_i^V)|`` over present components,
    with ``ln K`` given (``use_ln_k``) or ``ln(y / x)``; NaN if any term is not finite.
    """
    nc = z.shape[0]
    zl, al, bl = phase_cell(x, sqrt_a, b_i, omk, d1, d2, ROOT_MIN_GIBBS, lnphi_l, psi_l)
    zv, av, bv = phase_cell(y, sqrt_a, b_i, omk, d1, d2, ROOT_MIN_GIBBS, lnphi_v, psi_v)
    res = 0.0
    bad = False
    for i in range(nc):
        lnk_next[i] = lnphi_l[i] - lnphi_v[i]
        if present[i]:
            lk = ln_k[i] if use_ln_k else math.log(y[i] / x[i])
            diff = abs(lk - lnk_next[i])
            if math.isfinite(diff):
                res = max(res, diff)
            else:
                bad = True
    if bad:
        res = _NAN
    gibbs = beta * xlogx(y, lnphi_v, present) + (1.0 - beta) * xlogx(x, lnphi_l, present)
    return zl, zv, res, gibbs, al, bl, av, bv


@kernel
def from_lnk(z, present, ln_k, x, y, ws):
    """Rachford-Rice split for ln K; returns (beta, rr_ok). ``ws``: 2 rows of scratch."""
    nc = z.shape[0]
    k = ws[0]
    for i in range(nc):
        k[i] = math.exp(ln_k[i])
    beta, st, _, _ = rachford_rice_cell(k, z, False, 0.0, 1.0, RR_TOL, RR_MAXITER, ws[1])
    if st == RR_ALL_K_BELOW_ONE:
        beta = 0.0
    elif st == RR_ALL_K_ABOVE_ONE:
        beta = 1.0
    sx = 0.0
    sy = 0.0
    for i in range(nc):
        if st == RR_ALL_K_ABOVE_ONE:
            x[i] = z[i] / k[i]
        else:
            x[i] = z[i] / (1.0 + beta * (k[i] - 1.0))
        y[i] = k[i] * x[i]
        sx += x[i]
        sy += y[i]
    for i in range(nc):
        x[i] /= sx
        y[i] /= sy
    return beta, st == RR_CONVERGED


@kernel
def _evaluate_lnk(
    z, present, lnk, x, y, sqrt_a, b_i, omk, d1, d2, lnphi_l, lnphi_v, psi_l, psi_v, lnk_next, ws
):
    """Rachford-Rice split for ln K, then the EOS; returns (beta, inside, z_l, z_v, residual,
    gibbs), ``inside`` meaning Rachford-Rice converged with 0 < beta < 1."""
    beta, rr_ok = from_lnk(z, present, lnk, x, y, ws)
    zl, zv, res, gibbs, _, _, _, _ = _evaluate(
        z,
        present,
        beta,
        x,
        y,
        sqrt_a,
        b_i,
        omk,
        d1,
        d2,
        lnk,
        True,
        lnphi_l,
        lnphi_v,
        psi_l,
        psi_v,
        lnk_next,
    )
    return beta, rr_ok and 0.0 < beta < 1.0, zl, zv, res, gibbs


@kernel
def _store(o_x, o_y, o_lnk, x, y, lnk_next, present):
    for i in range(x.shape[0]):
        o_x[i] = x[i]
        o_y[i] = y[i]
        if present[i]:
            o_lnk[i] = math.log(y[i] / x[i])
        else:
            o_lnk[i] = lnk_next[i]


@kernel
def _balance(z, beta, x, y):
    s = 0.0
    m = 0.0
    for i in range(z.shape[0]):
        s += y[i] - x[i]
        m = max(m, abs(z[i] - (1.0 - beta) * x[i] - beta * y[i]))
    return max(abs(s), m)


@kernel
def split_cell(z, present, sqrt_a, b_i, omk, d1, d2, ln_k0, warm, o_x, o_y, o_lnk, ws, wm):
    """Successive substitution with GDEM, then Newton. Outputs compositions into o_x, o_y, o_lnk.

    Returns (status, beta, z_l, z_v, iterations, residual, balance, gibbs). ``ws`` and ``wm``
    are scratch of SPLIT_WS rows of nc and NEWTON_WM (nc, nc) matrices.
    """
    nc = z.shape[0]
    lnk = ws[0]
    prev = ws[1]
    plain_next = ws[2]
    nxt = ws[3]
    acc = ws[4]
    x = ws[5]
    y = ws[6]
    lnphi_l = ws[7]
    lnphi_v = ws[8]
    psi_l = ws[9]
    psi_v = ws[10]
    lnk_next = ws[11]
    v0 = ws[12]
    sub = ws[13:]
    for i in range(nc):
        lnk[i] = ln_k0[i]
        prev[i] = 0.0
        plain_next[i] = 0.0
    gibbs_prev = _INF
    accelerated = False
    status = MAX_ITERATIONS
    beta_o = _NAN
    zl_o = _NAN
    zv_o = _NAN
    res_o = _NAN
    bal_o = _NAN
    g_o = _NAN
    for i in range(nc):
        o_x[i] = _NAN
        o_y[i] = _NAN
        o_lnk[i] = _NAN
    if warm:
        # A neighbour's K-values: where Rachford-Rice splits them into two phases of more than
        # NEWTON_MIN_PHASE each and they are not trivial, the substitution below would hand its
        # first point to Newton at once (WARM_SWITCH_RESIDUAL), so Newton starts there itself:
        # the same start, one EOS evaluation of the split fewer. A start whose residual is not
        # between TOL_RESIDUAL and WARM_SWITCH_RESIDUAL (Newton returns no iterations) goes the
        # substitution's way, as before.
        beta, inside = from_lnk(z, present, lnk, x, y, sub)
        maxlnk = 0.0
        for i in range(nc):
            if present[i]:
                maxlnk = max(maxlnk, abs(lnk[i]))
        if inside and min(beta, 1.0 - beta) > NEWTON_MIN_PHASE and maxlnk >= TRIVIAL_LNK:
            for i in range(nc):
                v0[i] = beta * y[i] if present[i] else 0.0
            out = newton_cell(
                z, present, sqrt_a, b_i, omk, d1, d2, v0, False, o_x, o_y, o_lnk, sub, wm,
                TOL_RESIDUAL, WARM_SWITCH_RESIDUAL,
            )
            if out[4] > 0:
                return out
    max_ss = WARM_MAX_SS if warm else MAX_SS
    iters = 0
    to_newton = False
    # The split at the current ln K (its arrays are updated in place).
    trial = (z, present, lnk, x, y, sqrt_a, b_i, omk, d1, d2, lnphi_l, lnphi_v, psi_l, psi_v)
    trial = trial + (lnk_next, sub)
    for it in range(1, max_ss + 1):
        iters = it
        beta, inside, zl, zv, res, gibbs = _evaluate_lnk(*trial)
        if accelerated and inside and gibbs > gibbs_prev + 1e-12 * abs(gibbs_prev):
            for i in range(nc):
                lnk[i] = plain_next[i]
            beta, inside, zl, zv, res, gibbs = _evaluate_lnk(*trial)
        accelerated = False
        finite = math.isfinite(res) and math.isfinite(beta)
        maxlnk = 0.0
        for i in range(nc):
            if not math.isfinite(lnk_next[i]):
                finite = False
            if present[i]:
                maxlnk = max(maxlnk, abs(lnk[i]))
        trivial = finite and maxlnk < TRIVIAL_LNK
        converged = finite and (not trivial) and inside and res < TOL_RESIDUAL
        newton_ok = inside and min(beta, 1.0 - beta) > NEWTON_MIN_PHASE
        switch = (
            finite
            and (not trivial)
            and (not converged)
            and newton_ok
            and (res < (WARM_SWITCH_RESIDUAL if warm else SWITCH_RESIDUAL) or it >= SWITCH_AFTER)
        )
        outside = finite and (not trivial) and (not converged) and (not switch) and (not inside)
        give_up = outside and warm and it >= 3
        last = it == max_ss
        code = -1
        if converged:
            code = CONVERGED
        elif trivial:
            code = TRIVIAL_SOLUTION
        elif give_up:
            code = NO_TWO_PHASE_ROOT
        elif not finite:
            code = ROOT_FAILURE
        elif switch:
            code = MAX_ITERATIONS
        elif last and outside:
            code = NO_TWO_PHASE_ROOT
        elif last:
            code = MAX_ITERATIONS
        if code >= 0:
            status = code
            beta_o = beta
            zl_o = zl
            zv_o = zv
            res_o = res
            g_o = gibbs
            _store(o_x, o_y, o_lnk, x, y, lnk_next, present)
            bal_o = _balance(z, beta, x, y)
            to_newton = switch
            break
        gibbs_prev = gibbs if inside else _INF
        for i in range(nc):
            nxt[i] = lnk_next[i]
        if it % SPLIT_GDEM_EVERY == 0:
            _gdem(nxt, lnk, prev, present, True, acc)
            changed = False
            for i in range(nc):
                if acc[i] != nxt[i]:
                    changed = True
            changed = changed and inside
            for i in range(nc):
                plain_next[i] = nxt[i]
            accelerated = changed
            if changed:
                for i in range(nc):
                    nxt[i] = acc[i]
        for i in range(nc):
            prev[i] = lnk[i]
            lnk[i] = nxt[i]
    if to_newton:
        for i in range(nc):
            v0[i] = beta_o * o_y[i] if present[i] else 0.0
        status, beta_o, zl_o, zv_o, n_it, res_o, bal_o, g_o = newton_cell(
            z, present, sqrt_a, b_i, omk, d1, d2, v0, False, o_x, o_y, o_lnk, sub, wm, 0.0, _INF
        )
        iters += n_it
    return status, beta_o, zl_o, zv_o, iters, res_o, bal_o, g_o


@kernel
def evaluate_v(
    z, present, v, x, y, sqrt_a, b_i, omk, d1, d2, lnphi_l, lnphi_v, psi_l, psi_v, lnk_next
):
    """EOS at the split given by vapour mole numbers; returns (V, _evaluate's tuple)."""
    nc = z.shape[0]
    vs = 0.0
    ls = 0.0
    for i in range(nc):
        vs += v[i]
        ls += z[i] - v[i]
    for i in range(nc):
        y[i] = v[i] / vs
        x[i] = (z[i] - v[i]) / ls
    out = _evaluate(
        z,
        present,
        vs,
        x,
        y,
        sqrt_a,
        b_i,
        omk,
        d1,
        d2,
        x,
        False,
        lnphi_l,
        lnphi_v,
        psi_l,
        psi_v,
        lnk_next,
    )
    return vs, out


@kernel
def newton_cell(
    z, present, sqrt_a, b_i, omk, d1, d2, v0, robust, o_x, o_y, o_lnk, ws, wm, start_lo, start_hi
):
    """Newton minimisation of the split's Gibbs energy in vapour mole numbers.

    Returns (status, beta, z_l, z_v, iterations, residual, balance, gibbs). ``ws`` and ``wm``
    are scratch of NEWTON_WS rows of nc and NEWTON_WM (nc, nc) matrices. With a finite
    ``start_hi``, a start whose residual is not finite and in ``[start_lo, start_hi)`` is
    refused: nothing is written and 0 iterations are returned.
    """
    nc = z.shape[0]
    v = ws[0]
    acc_v = ws[1]
    step = ws[2]
    x = ws[3]
    y = ws[4]
    lnphi_l = ws[5]
    lnphi_v = ws[6]
    psi_l = ws[7]
    psi_v = ws[8]
    lnk_next = ws[9]
    rhs = ws[10]
    sol = ws[11]
    scale = ws[12]
    dws = ws[13:]
    dl = wm[0]
    dv = wm[1]
    jac = wm[2]
    for i in range(nc):
        v[i] = v0[i] if present[i] else 0.0
        acc_v[i] = v[i]
        step[i] = 0.0
    acc_g = _INF
    tau = 1.0
    halvings = 0
    best = _INF
    stall = 0
    status = MAX_ITERATIONS
    beta_o = _NAN
    zl_o = _NAN
    zv_o = _NAN
    res_o = _NAN
    bal_o = _NAN
    g_o = _NAN
    iters = 0
    max_iter = (MAX_NEWTON_ROBUST if robust else MAX_NEWTON) + MAX_HALVINGS
    for _ in range(max_iter):
        vs, ev = evaluate_v(
            z, present, v, x, y, sqrt_a, b_i, omk, d1, d2, lnphi_l, lnphi_v, psi_l, psi_v, lnk_next
        )
        zl, zv, res, gibbs, al, bl, av, bv = ev
        iters += 1
        finite = math.isfinite(res) and math.isfinite(gibbs)
        if iters == 1 and start_hi < _INF and not (finite and start_lo <= res < start_hi):
            return status, beta_o, zl_o, zv_o, 0, res_o, bal_o, g_o
        accept = finite and gibbs <= acc_g + 1e-12 * max(1.0, abs(acc_g))
        if not accept:
            if halvings < MAX_HALVINGS and math.isfinite(acc_g):
                halvings += 1
                tau *= 0.5
                for i in range(nc):
                    v[i] = acc_v[i] + tau * step[i]
                continue
            break
        improving = res < 0.5 * best
        stall = 0 if improving else stall + 1
        maxlnk = 0.0
        for i in range(nc):
            if present[i]:
                maxlnk = max(maxlnk, abs(math.log(y[i] / x[i])))
        trivial = maxlnk < TRIVIAL_LNK
        if res <= best or trivial:
            # Keep the best point so far (and a collapsed one, to report it).
            if trivial:
                status = TRIVIAL_SOLUTION
            else:
                status = CONVERGED if res < TOL_RESIDUAL else MAX_ITERATIONS
                best = res
            beta_o, zl_o, zv_o, res_o, g_o = vs, zl, zv, res, gibbs
            _store(o_x, o_y, o_lnk, x, y, lnk_next, present)
            bal_o = _balance(z, vs, x, y)
        if trivial:
            break
        stalled = stall >= 3 and best < 1e-8
        if res < NEWTON_TARGET or stalled:
            break
        # Newton direction on the symmetrically scaled Hessian of G.
        ls = 1.0 - vs
        dlnphi_cell(zl, al, bl, psi_l, sqrt_a, b_i, omk, d1, d2, dl, dws)
        dlnphi_cell(zv, av, bv, psi_v, sqrt_a, b_i, omk, d1, d2, dv, dws)
        for i in range(nc):
            if present[i]:
                scale[i] = math.sqrt(v[i] * (z[i] - v[i]) / z[i])
                rhs[i] = -scale[i] * (math.log(y[i]) + lnphi_v[i] - math.log(x[i]) - lnphi_l[i])
            else:
                scale[i] = 1.0
                rhs[i] = 0.0
        for i in range(nc):
            for j in range(nc):
                if present[i] and present[j]:
                    jac[i, j] = (
                        scale[i] * ((dv[i, j] - 1.0) / vs + (dl[i, j] - 1.0) / ls) * scale[j]
                    )
                else:
                    jac[i, j] = 0.0
            if present[i]:
                jac[i, i] += scale[i] * scale[i] * (1.0 / (vs * y[i]) + 1.0 / (ls * x[i]))
            else:
                jac[i, i] += 1.0
        if robust:
            finite_j = True
            for i in range(nc):
                for j in range(nc):
                    if not math.isfinite(jac[i, j]):
                        finite_j = False
            if finite_j:
                lam_min = np.linalg.eigvalsh(jac)[0]
                if lam_min < MIN_EIG:
                    for i in range(nc):
                        jac[i, i] += MIN_EIG - lam_min + 1e-3
        ok = solve_cell(jac, rhs, sol)
        t = 1.0
        for i in range(nc):
            step[i] = sol[i] * scale[i] if ok else _NAN
        for i in range(nc):
            if present[i] and step[i] < 0.0:
                t = min(t, 0.95 * v[i] / -step[i])
            elif present[i] and step[i] > 0.0:
                t = min(t, 0.95 * (z[i] - v[i]) / step[i])
        for i in range(nc):
            if not math.isfinite(step[i]):
                step[i] = 0.0
        for i in range(nc):
            acc_v[i] = v[i]
            v[i] = v[i] + t * step[i]
        acc_g = gibbs
        tau = t
        halvings = 0
    return status, beta_o, zl_o, zv_o, iters, res_o, bal_o, g_o
