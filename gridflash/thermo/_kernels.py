"""Compiled per-cell kernels of the thermodynamics layer (numba).

This module holds the one implementation of each numerical algorithm of the flash: cubic roots,
fugacity coefficients and their composition derivatives, Rachford-Rice, the stability test, the
two-phase split and its Newton finish. Each ``*_cell`` function works on one cell (1-D arrays
over components); the batch functions loop over cells in compiled code, release the GIL
(``nogil``), and are wrapped by the public numpy-facing functions in ``_cubic.py``,
``_rachford_rice.py``, ``_stability.py``, ``_split.py`` and ``_flash.py``, where the methods,
equations and references are documented.

Compiled code is cached on disk (``cache=True``) so that only the first import on a machine pays
the compilation (measured in ``benchmarks/bench_kernel.py``). A cell's arithmetic never depends
on the other cells of its batch.
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit

R = 8.314462618  # J/(mol K), CODATA 2018

_JIT = {"cache": True, "nogil": True, "error_model": "numpy"}

# Root choice codes
ROOT_MIN_GIBBS = 0
ROOT_VAPOUR = 1
ROOT_LIQUID = 2

# Flash status codes (public as _result.FlashStatus)
CONVERGED = 0
MAX_ITERATIONS = 1
TRIVIAL_SOLUTION = 2
ROOT_FAILURE = 3
NO_TWO_PHASE_ROOT = 4
GIBBS_INCREASE = 5

# Rachford-Rice status codes (public as _rachford_rice.RachfordRiceStatus)
RR_CONVERGED = 0
RR_ALL_K_BELOW_ONE = 1
RR_ALL_K_ABOVE_ONE = 2
RR_MAX_ITERATIONS = 3
RR_AT_LOWER_LIMIT = 4
RR_AT_UPPER_LIMIT = 5

# Rachford-Rice
RR_TOL = 1e-14
RR_MAXITER = 200

# Stability test
STAB_TOL = 1e-10  # max |ln W_i + ln phi_i(w) - d_i| at a stationary point
TM_UNSTABLE = -1e-10  # tm below this at a stationary point: unstable
TM_EARLY_EXIT = -1e-6  # tm below this during iterations: unstable, stop early
TRIVIAL_KS = 1e-8  # sum (ln Ks)^2 below this with tm >= 0: converging to the feed
STAB_MAXITER = 200
STAB_GDEM_EVERY = 3
STAB_NEWTON_AFTER = 12
STAB_MAX_HALVINGS = 8
# Stability outcomes
STABLE = 0
UNSTABLE = 1
INCONCLUSIVE = 2
FAILED = 3

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

_NAN = math.nan
_INF = math.inf

# Scratch sizes (rows of nc, and (nc, nc) matrices) of the per-cell functions, which take their
# work arrays from the caller so that a batch allocates them once, not once per cell.
DLNPHI_WS = 7
TRIAL_WS = 12 + DLNPHI_WS
TRIAL_WM = 2
STABILITY_WS = 3 + TRIAL_WS
NEWTON_WS = 13 + DLNPHI_WS
NEWTON_WM = 3
SPLIT_WS = 13 + max(2, NEWTON_WS)
FLASH_WS = max(STABILITY_WS, SPLIT_WS)
FLASH_WM = max(TRIAL_WM, NEWTON_WM)


# --------------------------------------------------------------------------------------------
# EOS
# --------------------------------------------------------------------------------------------


@njit(**_JIT)
def reduced_cell(ac, m, b, tc, p, t, sqrt_a, b_i):
    """sqrt(A_i) and B_i of one cell, written into ``sqrt_a`` and ``b_i``."""
    rt = R * t
    for i in range(tc.shape[0]):
        sa = abs(1.0 + m[i] * (1.0 - math.sqrt(t / tc[i])))
        sqrt_a[i] = math.sqrt(ac[i] * p) * sa / rt
        b_i[i] = b[i] * p / rt


@njit(**_JIT)
def wilson_ln_k_cell(pc, tc, omega, p, t):
    """Wilson's ``ln K = ln(Pc / P) + 5.373 (1 + w)(1 - Tc / T)`` (Wilson 1968)."""
    return math.log(pc / p) + 5.373 * (1.0 + omega) * (1.0 - tc / t)


@njit(**_JIT)
def wilson_batch(pc, tc, omega, p, t, out):
    for c in range(p.shape[0]):
        for i in range(pc.shape[0]):
            out[c, i] = wilson_ln_k_cell(pc[i], tc[i], omega[i], p[c], t[c])


@njit(**_JIT)
def _polish(z, c2, c1, c0):
    for _ in range(2):
        f = ((z + c2) * z + c1) * z + c0
        df = (3.0 * z + 2.0 * c2) * z + c1
        if df != 0.0:
            step = f / df
            if math.isfinite(step):
                z = z - step
    return z


@njit(**_JIT)
def cubic_roots_cell(a, b, d1, d2):
    """Largest and smallest real roots of the reduced cubic and whether three real roots exist."""
    u = d1 + d2
    w = d1 * d2
    c2 = -(1.0 + b - u * b)
    c1 = a + w * b * b - u * b - u * b * b
    c0 = -(a * b + w * b * b + w * b * b * b)
    p = c1 - c2 * c2 / 3.0
    q = 2.0 * c2 * c2 * c2 / 27.0 - c2 * c1 / 3.0 + c0
    disc = (q / 2.0) ** 2 + (p / 3.0) ** 3
    shift = -c2 / 3.0
    three = disc < 0.0
    if three:
        r = math.sqrt(-p / 3.0)
        cos_arg = (-q / 2.0) / (r * r * r)
        cos_arg = min(1.0, max(-1.0, cos_arg))
        phi = math.acos(cos_arg)
        t_max = 2.0 * r * math.cos(phi / 3.0)
        t_min = 2.0 * r * math.cos((phi - 4.0 * math.pi) / 3.0)
    else:
        sq = math.sqrt(disc)
        arg = -q / 2.0 - math.copysign(sq, q)
        u1 = math.copysign(abs(arg) ** (1.0 / 3.0), arg)
        t1 = u1 - p / (3.0 * u1) if u1 != 0.0 else 0.0
        z1 = _polish(t1 + shift, c2, c1, c0)
        return z1, z1, three
    z_max = _polish(t_max + shift, c2, c1, c0)
    z_min = _polish(t_min + shift, c2, c1, c0)
    return z_max, z_min, three


@njit(**_JIT)
def _logs(z, b, d1, d2):
    """``ln(Z - B)`` and ``ln((Z + d1 B) / (Z + d2 B))`` of a root."""
    return math.log(z - b), math.log((z + d1 * b) / (z + d2 * b))


@njit(**_JIT)
def phase_cell(x, sqrt_a, b_i, omk, d1, d2, root, ln_phi, psi):
    """Z, A and B of a phase of composition ``x``; ln phi and psi written into the arrays.

    Z is NaN (and ln phi NaN) where the cubic has no root above B.
    """
    nc = x.shape[0]
    a = 0.0
    bm = 0.0
    sx = ln_phi  # scratch until ln phi is written below
    for i in range(nc):
        sx[i] = sqrt_a[i] * x[i]
    for j in range(nc):
        s = 0.0
        for i in range(nc):
            s += sx[i] * omk[i, j]
        psi[j] = sqrt_a[j] * s
    for i in range(nc):
        a += x[i] * psi[i]
        bm += x[i] * b_i[i]
    if not (a > 0.0 and bm > 0.0) or not (math.isfinite(a) and math.isfinite(bm)):
        for i in range(nc):
            ln_phi[i] = _NAN
        return _NAN, a, bm
    z_max, z_min, three = cubic_roots_cell(a, bm, d1, d2)
    min_ok = three and z_min > bm
    if root == ROOT_VAPOUR:
        z = z_max
    elif root == ROOT_LIQUID:
        z = z_min if min_ok else z_max
    else:
        z = z_max
    if not z > bm:
        for i in range(nc):
            ln_phi[i] = _NAN
        return _NAN, a, bm
    lz, log_term = _logs(z, bm, d1, d2)
    q = a / (bm * (d1 - d2))
    if root == ROOT_MIN_GIBBS and min_ok:
        # The root of lower Gibbs energy: G_dep / RT = Z - ln(Z - B) - q ln(...) (+ const).
        lz_min, log_min = _logs(z_min, bm, d1, d2)
        if z_min - lz_min - q * log_min < z_max - lz - q * log_term:
            z = z_min
            lz = lz_min
            log_term = log_min
    coef = q * log_term
    for i in range(nc):
        br = b_i[i] / bm
        ln_phi[i] = br * (z - 1.0) - lz - coef * (2.0 * psi[i] / a - br)
    return z, a, bm


@njit(**_JIT)
def dlnphi_cell(z, a, b, psi, sqrt_a, b_i, omk, d1, d2, out, ws):
    """``n d ln phi_i / d n_j`` at constant T, P into ``out`` (nc, nc).

    ``ws``: scratch of at least DLNPHI_WS rows of nc.
    """
    nc = psi.shape[0]
    u = d1 + d2
    w = d1 * d2
    c2 = -(1.0 + b - u * b)
    c1 = a + w * b * b - u * b - u * b * b
    f_z = 3.0 * z * z + 2.0 * c2 * z + c1
    f_a = z - b
    f_b = (
        -(1.0 - u) * z * z
        + (2.0 * w * b - u - 2.0 * u * b) * z
        - (a + 2.0 * w * b + 3.0 * w * b * b)
    )
    log_term = math.log((z + d1 * b) / (z + d2 * b))
    q = a / b
    inv_delta = 1.0 / (d1 - d2)
    na = ws[0]
    nb = ws[1]
    nz = ws[2]
    br = ws[3]
    s = ws[4]
    nq = ws[5]
    nl = ws[6]
    for j in range(nc):
        na[j] = 2.0 * psi[j] - 2.0 * a
        nb[j] = b_i[j] - b
        nz[j] = -(f_a * na[j] + f_b * nb[j]) / f_z
        br[j] = b_i[j] / b
        s[j] = 2.0 * psi[j] / a - br[j]
        nq[j] = q * (na[j] / a - nb[j] / b)
        nl[j] = (nz[j] + d1 * nb[j]) / (z + d1 * b) - (nz[j] + d2 * nb[j]) / (z + d2 * b)
    zb = z - b
    for i in range(nc):
        for j in range(nc):
            a_ij = sqrt_a[i] * sqrt_a[j] * omk[i, j]
            ns = (
                2.0 * a_ij / a
                + 2.0 * psi[i] / a
                - 4.0 * psi[i] * psi[j] / (a * a)
                + br[i] * br[j]
                - br[i]
            )
            t1 = br[i] * (nz[j] - (z - 1.0) / b * nb[j])
            t2 = -(nz[j] - nb[j]) / zb
            t3 = -inv_delta * (nq[j] * s[i] * log_term + q * ns * log_term + q * s[i] * nl[j])
            out[i, j] = t1 + t2 + t3


@njit(**_JIT)
def solve_cell(a, b, x):
    """Solve ``a x = b`` by Gaussian elimination with partial pivoting; False if singular.

    ``a`` and ``b`` are overwritten.
    """
    n = b.shape[0]
    for k in range(n):
        piv = k
        big = abs(a[k, k])
        for i in range(k + 1, n):
            if abs(a[i, k]) > big:
                big = abs(a[i, k])
                piv = i
        if not big > 0.0 or not math.isfinite(big):
            return False
        if piv != k:
            for j in range(n):
                tmp = a[k, j]
                a[k, j] = a[piv, j]
                a[piv, j] = tmp
            tmp = b[k]
            b[k] = b[piv]
            b[piv] = tmp
        for i in range(k + 1, n):
            f = a[i, k] / a[k, k]
            if f != 0.0:
                for j in range(k, n):
                    a[i, j] -= f * a[k, j]
                b[i] -= f * b[k]
    for i in range(n - 1, -1, -1):
        s = b[i]
        for j in range(i + 1, n):
            s -= a[i, j] * x[j]
        x[i] = s / a[i, i]
    for i in range(n):
        if not math.isfinite(x[i]):
            return False
    return True


# --------------------------------------------------------------------------------------------
# Rachford-Rice
# --------------------------------------------------------------------------------------------


@njit(**_JIT)
def _rr_g(beta, k, z):
    g = 0.0
    for i in range(k.shape[0]):
        if z[i] > 0.0:
            km1 = k[i] - 1.0
            g += z[i] * km1 / (1.0 + beta * km1)
    return g


@njit(**_JIT)
def rachford_rice_cell(k, z, has_limits, lim_lo, lim_hi, tol, maxiter, c):
    """Vapour fraction of one cell; returns (beta, status, iterations, residual).

    ``c`` (nc,) is scratch.
    """
    nc = k.shape[0]
    kmax = -_INF
    kmin = _INF
    for i in range(nc):
        if z[i] > 0.0:
            kmax = max(kmax, k[i])
            kmin = min(kmin, k[i])
    if kmax <= 1.0:
        return _NAN, RR_ALL_K_BELOW_ONE, 0, _NAN
    if kmin >= 1.0:
        return _NAN, RR_ALL_K_ABOVE_ONE, 0, _NAN
    lo = 1.0 / (1.0 - kmax)
    hi = 1.0 / (1.0 - kmin)
    if has_limits:
        if lo < lim_lo < hi:
            g_lim = _rr_g(lim_lo, k, z)
            if g_lim <= 0.0:
                return lim_lo, RR_AT_LOWER_LIMIT, 0, abs(g_lim)
            lo_b = lim_lo
        else:
            lo_b = lo
        if lo < lim_hi < hi:
            g_lim = _rr_g(lim_hi, k, z)
            if g_lim >= 0.0:
                return lim_hi, RR_AT_UPPER_LIMIT, 0, abs(g_lim)
            hi_b = lim_hi
        else:
            hi_b = hi
        if hi <= lim_lo:
            return lim_lo, RR_AT_LOWER_LIMIT, 0, _NAN
        if lo >= lim_hi:
            return lim_hi, RR_AT_UPPER_LIMIT, 0, _NAN
        lo = lo_b
        hi = hi_b
        at_lo_exact = lo_b == 1.0 / (1.0 - kmax)
        at_hi_exact = hi_b == 1.0 / (1.0 - kmin)
    else:
        at_lo_exact = True
        at_hi_exact = True
    # Work in the distance d from the asymptote nearer the root (see _rachford_rice.py).
    mid = 0.5 * (lo + hi)
    g_mid = _rr_g(mid, k, z)
    upper = g_mid > 0.0
    base = hi if upper else lo
    sign = -1.0 if upper else 1.0
    for i in range(nc):
        c[i] = 1.0 + base * (k[i] - 1.0)
        if upper and at_hi_exact and k[i] == kmin:
            c[i] = 0.0
        if (not upper) and at_lo_exact and k[i] == kmax:
            c[i] = 0.0
    d_lo = 0.0
    d_hi = 0.5 * (hi - lo)
    d0 = sign * (0.5 - base)
    d = d0 if (d0 > 0.0 and d0 < d_hi) else 0.5 * d_hi
    if g_mid == 0.0:
        d = d_hi
    residual = _NAN
    for it in range(1, maxiter + 1):
        g = 0.0
        dg = 0.0
        scale = 0.0
        for i in range(nc):
            if z[i] > 0.0:
                km1 = k[i] - 1.0
                denom = c[i] + sign * d * km1
                term = z[i] * km1 / denom
                g += term
                dg += term * km1 / denom
                scale += abs(term)
        dg = -sign * dg
        residual = abs(g) / (scale if scale > 0.0 else 1.0)
        root_beyond = (g > 0.0) if sign > 0.0 else (g < 0.0)
        if root_beyond:
            d_lo = d
        else:
            d_hi = d
        newton = d - g / dg if dg != 0.0 else _NAN
        half = 0.5 * (d_lo + d_hi)
        if math.isfinite(newton) and d_lo < newton < d_hi:
            new = newton
        else:
            new = half
        stuck = new == d or half == d_lo or half == d_hi
        if residual <= tol or g == 0.0 or stuck:
            return base + sign * d, RR_CONVERGED, it, residual
        d = new
    return base + sign * d, RR_MAX_ITERATIONS, maxiter, residual


# --------------------------------------------------------------------------------------------
# Stability test
# --------------------------------------------------------------------------------------------


@njit(**_JIT)
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


@njit(**_JIT)
def stability_trial(
    z, present, ln_phi_z, sqrt_a, b_i, omk, d1, d2, ks0, tol, maxiter, early_exit, ks_out, ws, wm
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


@njit(**_JIT)
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


# --------------------------------------------------------------------------------------------
# Two-phase split
# --------------------------------------------------------------------------------------------


@njit(**_JIT)
def _xlogx(frac, ln_phi, present):
    s = 0.0
    for i in range(frac.shape[0]):
        if present[i] and frac[i] > 0.0:
            s += frac[i] * (math.log(frac[i]) + ln_phi[i])
        elif present[i] and not frac[i] == 0.0:
            s += _NAN
    return s


@njit(**_JIT)
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
    gibbs = beta * _xlogx(y, lnphi_v, present) + (1.0 - beta) * _xlogx(x, lnphi_l, present)
    return zl, zv, res, gibbs, al, bl, av, bv


@njit(**_JIT)
def _from_lnk(z, present, ln_k, x, y, ws):
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


@njit(**_JIT)
def _evaluate_lnk(
    z, present, lnk, x, y, sqrt_a, b_i, omk, d1, d2, lnphi_l, lnphi_v, psi_l, psi_v, lnk_next, ws
):
    """Rachford-Rice split for ln K, then the EOS; returns (beta, inside, z_l, z_v, residual,
    gibbs), ``inside`` meaning Rachford-Rice converged with 0 < beta < 1."""
    beta, rr_ok = _from_lnk(z, present, lnk, x, y, ws)
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


@njit(**_JIT)
def _store(o_x, o_y, o_lnk, x, y, lnk_next, present):
    for i in range(x.shape[0]):
        o_x[i] = x[i]
        o_y[i] = y[i]
        if present[i]:
            o_lnk[i] = math.log(y[i] / x[i])
        else:
            o_lnk[i] = lnk_next[i]


@njit(**_JIT)
def _balance(z, beta, x, y):
    s = 0.0
    m = 0.0
    for i in range(z.shape[0]):
        s += y[i] - x[i]
        m = max(m, abs(z[i] - (1.0 - beta) * x[i] - beta * y[i]))
    return max(abs(s), m)


@njit(**_JIT)
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
            z, present, sqrt_a, b_i, omk, d1, d2, v0, False, o_x, o_y, o_lnk, sub, wm
        )
        iters += n_it
    return status, beta_o, zl_o, zv_o, iters, res_o, bal_o, g_o


@njit(**_JIT)
def _evaluate_v(
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


@njit(**_JIT)
def newton_cell(z, present, sqrt_a, b_i, omk, d1, d2, v0, robust, o_x, o_y, o_lnk, ws, wm):
    """Newton minimisation of the split's Gibbs energy in vapour mole numbers.

    Returns (status, beta, z_l, z_v, iterations, residual, balance, gibbs). ``ws`` and ``wm``
    are scratch of NEWTON_WS rows of nc and NEWTON_WM (nc, nc) matrices.
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
        vs, ev = _evaluate_v(
            z, present, v, x, y, sqrt_a, b_i, omk, d1, d2, lnphi_l, lnphi_v, psi_l, psi_v, lnk_next
        )
        zl, zv, res, gibbs, al, bl, av, bv = ev
        iters += 1
        finite = math.isfinite(res) and math.isfinite(gibbs)
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


# --------------------------------------------------------------------------------------------
# The whole flash of a batch
# --------------------------------------------------------------------------------------------

_DESCENT_FRACTIONS = (0.01, 0.05, 0.2, 0.4, 0.6, 0.8, 0.95)


@njit(**_JIT)
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
        _, ev = _evaluate_v(
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


@njit(**_JIT)
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
        g_feed = _xlogx(zc, lnphi_z, present)
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


# --------------------------------------------------------------------------------------------
# Batch wrappers of the pieces (used by the public functions and the tests)
# --------------------------------------------------------------------------------------------


@njit(**_JIT)
def reduced_batch(ac, m, b, tc, p, t, sqrt_a, b_i):
    for c in range(p.shape[0]):
        reduced_cell(ac, m, b, tc, p[c], t[c], sqrt_a[c], b_i[c])


@njit(**_JIT)
def cubic_roots_batch(a, b, d1, d2, z_max, z_min, three):
    for c in range(a.shape[0]):
        z_max[c], z_min[c], three[c] = cubic_roots_cell(a[c], b[c], d1, d2)


@njit(**_JIT)
def phase_batch(x, sqrt_a, b_i, omk, d1, d2, root, z, a, b, ln_phi, psi):
    for c in range(x.shape[0]):
        z[c], a[c], b[c] = phase_cell(x[c], sqrt_a[c], b_i[c], omk, d1, d2, root, ln_phi[c], psi[c])


@njit(**_JIT)
def dlnphi_batch(z, a, b, psi, sqrt_a, b_i, omk, d1, d2, out):
    ws = np.empty((DLNPHI_WS, psi.shape[1]))
    for c in range(z.shape[0]):
        dlnphi_cell(z[c], a[c], b[c], psi[c], sqrt_a[c], b_i[c], omk, d1, d2, out[c], ws)


@njit(**_JIT)
def rachford_rice_batch(
    k, z, has_limits, lim_lo, lim_hi, tol, maxiter, beta, status, iters, residual
):
    work = np.empty(k.shape[1])
    for c in range(k.shape[0]):
        beta[c], status[c], iters[c], residual[c] = rachford_rice_cell(
            k[c], z[c], has_limits, lim_lo, lim_hi, tol, maxiter, work
        )


@njit(**_JIT)
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


# --------------------------------------------------------------------------------------------
# Saturation point (bubble / dew) by Newton's method on the incipient-phase equations
# --------------------------------------------------------------------------------------------

SAT_TOL = 1e-12
SAT_MAXITER = 50
SAT_DLNP = 1e-6  # relative pressure step of the finite-difference d/d ln P


# Rows of the saturation workspace ``ws`` (8, nc).
_W, _WN, _LNPHI_W, _LNPHI_Z, _PSI_W, _PSI_Z, _SQRT_A, _B_I = range(8)


@njit(**_JIT)
def _sat_residual(eos, z, present, t, lnp, u, ws, f):
    """Residuals at (u, ln P) into ``f``; returns (Z_w, A_w, B_w, sum w).

    ``eos`` is ``(ac, m, b, tc, omk, d1, d2)``; ``ws`` the workspace (rows named above).
    """
    ac, m, b, tc, omk, d1, d2 = eos
    nc = z.shape[0]
    w, wn = ws[_W], ws[_WN]
    reduced_cell(ac, m, b, tc, math.exp(lnp), t, ws[_SQRT_A], ws[_B_I])
    sw = 0.0
    for i in range(nc):
        w[i] = z[i] * math.exp(u[i]) if present[i] else 0.0
        sw += w[i]
    for i in range(nc):
        wn[i] = w[i] / sw
    zw, aw, bw = phase_cell(
        wn, ws[_SQRT_A], ws[_B_I], omk, d1, d2, ROOT_MIN_GIBBS, ws[_LNPHI_W], ws[_PSI_W]
    )
    phase_cell(z, ws[_SQRT_A], ws[_B_I], omk, d1, d2, ROOT_MIN_GIBBS, ws[_LNPHI_Z], ws[_PSI_Z])
    for i in range(nc):
        f[i] = u[i] + ws[_LNPHI_W, i] - ws[_LNPHI_Z, i] if present[i] else 0.0
    f[nc] = sw - 1.0
    return zw, aw, bw, sw


@njit(**_JIT)
def saturation_newton_cell(eos, z, t, lnp0, u0, u_out):
    """Saturation pressure of feed ``z`` at ``t`` from a start (ln P, u = ln(w / z)).

    Solves ``u_i + ln phi_i(w) - ln phi_i(z) = 0`` and ``sum w_i = 1`` for the incipient phase
    ``w = z exp(u)`` and ``ln P`` (Michelsen & Mollerup 2007, ch. 12), with the analytic
    composition Jacobian and a finite-difference pressure column. ``eos`` is
    ``(ac, m, b, tc, omk, d1, d2)``. Returns (ln P, converged); converged is False on a collapse
    to the trivial solution (``max |u| < 1e-5``).
    """
    omk, d1, d2 = eos[4], eos[5], eos[6]
    nc = z.shape[0]
    n = nc + 1
    present = np.empty(nc, dtype=np.bool_)
    u = np.empty(nc)
    for i in range(nc):
        present[i] = z[i] > 0.0
        u[i] = u0[i] if present[i] else 0.0
    ws = np.empty((8, nc))
    f = np.empty(n)
    f2 = np.empty(n)
    jac = np.empty((n, n))
    dphi = np.empty((nc, nc))
    dws = np.empty((DLNPHI_WS, nc))
    rhs = np.empty(n)
    step = np.empty(n)
    lnp = lnp0
    converged = False
    for _ in range(SAT_MAXITER):
        zw, aw, bw, sw = _sat_residual(eos, z, present, t, lnp, u, ws, f)
        norm = 0.0
        for i in range(n):
            norm = max(norm, abs(f[i]))
        if not math.isfinite(norm):
            break
        umax = 0.0
        for i in range(nc):
            if present[i]:
                umax = max(umax, abs(u[i]))
        if umax < TRIVIAL_LNK:
            break
        if norm < SAT_TOL:
            converged = True
            break
        dlnphi_cell(zw, aw, bw, ws[_PSI_W], ws[_SQRT_A], ws[_B_I], omk, d1, d2, dphi, dws)
        for i in range(nc):
            for j in range(nc):
                if present[i] and present[j]:
                    jac[i, j] = dphi[i, j] * ws[_W, j] / sw
                else:
                    jac[i, j] = 0.0
            jac[i, i] += 1.0
            jac[nc, i] = ws[_W, i]
        jac[nc, nc] = 0.0
        # d/d ln P by a forward difference (u fixed).
        _sat_residual(eos, z, present, t, lnp + SAT_DLNP, u, ws, f2)
        for i in range(nc):
            jac[i, nc] = (f2[i] - f[i]) / SAT_DLNP
        for i in range(n):
            rhs[i] = -f[i]
        if not solve_cell(jac, rhs, step):
            break
        scale = 1.0
        for i in range(nc):
            scale = max(scale, abs(step[i]))
        scale = max(scale, abs(step[nc]) / 0.2)
        for i in range(nc):
            if present[i]:
                u[i] += step[i] / scale
        lnp += step[nc] / scale
    for i in range(nc):
        u_out[i] = u[i]
    return lnp, converged


@njit(**_JIT)
def saturation_newton_batch(eos, z, t, lnp0, u0, lnp, converged, u_out):
    for c in range(z.shape[0]):
        lnp[c], converged[c] = saturation_newton_cell(eos, z[c], t[c], lnp0[c], u0[c], u_out[c])
