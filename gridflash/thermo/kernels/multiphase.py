"""Multiphase (up to three phases) isothermal split on one cell.

Used where the stability test of a converged two-phase answer finds a trial phase of negative
tangent-plane distance (:mod:`gridflash.thermo._flash` documents when). The phases start from the
two-phase answer plus that trial phase, or from a neighbouring cell's phases (warm start).

Successive substitution (Michelsen, Comput. Chem. Eng. 18 (1994) 545, "Calculation of multiphase
equilibrium", section 2): with the fugacity coefficients ``phi_ik`` of the current phases, the
phase fractions minimise the convex function (eq. 6)::

    Q(beta) = sum_k beta_k - sum_i z_i ln E_i,    E_i = sum_k beta_k / phi_ik,   beta_k >= 0

(:func:`.rachford_rice.multiphase_rachford_rice_cell`), and the new compositions are
``x_ik = z_i / (phi_ik E_i)`` (eq. 5). A phase whose fraction is zero at the minimum has
``sum_i x_ik <= 1``, i.e. a non-negative tangent-plane distance against the others, and is
removed; two phases that become identical are merged. Where substitution has not converged
after 40 steps, it hands over to Newton's method.

Newton finish on the Gibbs energy (Michelsen & Mollerup 2007, ch. 10, the multiphase form of
eq. 10.16): with a reference phase ``r`` (the largest) and the mole numbers ``n_ki`` of the other
phases as unknowns (``n_ri = z_i - sum_k n_ki``), the gradient and Hessian of ``G / RT`` are::

    g_ki = ln(x_ki phi_ki) - ln(x_ri phi_ri)
    H_(ki),(lj) = delta_kl A^k_ij + A^r_ij,   A^k_ij = (delta_ij / x_ki - 1 + Phi^k_ij) / beta_k

with ``Phi^k_ij = n d ln phi_i / d n_j`` of phase ``k``. The system is scaled symmetrically by
``sqrt(n_ki n_ri / (n_ki + n_ri))``, shifted to be positive definite where it is not, each step
is shortened to keep every mole number positive and halved while it raises the Gibbs energy.
"""

from __future__ import annotations

import math

import numpy as np

from ._policy import kernel
from .codes import (
    CONVERGED,
    MAX_ITERATIONS,
    ROOT_FAILURE,
    ROOT_MIN_GIBBS,
    TRIVIAL_SOLUTION,
)
from .eos import DLNPHI_WS, dlnphi_cell, phase_cell, solve_cell
from .rachford_rice import MAX_PHASES, MRR_MAXITER, MRR_TOL, multiphase_rachford_rice_cell
from .split import MAX_HALVINGS, MIN_EIG, NEWTON_TARGET, TOL_BALANCE, TOL_RESIDUAL, xlogx

_NAN = math.nan
_INF = math.inf

MSS_MAXITER = 300
MSS_SWITCH_AFTER = 40
SAME_PHASE_LNX = 1e-4  # max_i |ln x_ki - ln x_li| below this: one phase
MNEWTON_MAXITER = 80


@kernel
def phases_eos(comp, n_phase, present, sqrt_a, b_i, omk, d1, d2, ln_phi, psi, zab):
    """EOS of the phases ``comp[:n_phase]``; ln phi and psi rows, (Z, A, B) into ``zab``.

    Returns (ok, residual): residual ``max |ln(x_ki phi_ki) - ln(x_0i phi_0i)|`` over present
    components; ok False where a root or a value is not finite.
    """
    for k in range(n_phase):
        zk, ak, bk = phase_cell(
            comp[k], sqrt_a, b_i, omk, d1, d2, ROOT_MIN_GIBBS, ln_phi[k], psi[k]
        )
        zab[k, 0] = zk
        zab[k, 1] = ak
        zab[k, 2] = bk
        if not math.isfinite(zk):
            return False, _NAN
    res = 0.0
    for i in range(comp.shape[1]):
        if present[i]:
            mu0 = math.log(comp[0, i]) + ln_phi[0, i]
            for k in range(1, n_phase):
                diff = abs(math.log(comp[k, i]) + ln_phi[k, i] - mu0)
                if not math.isfinite(diff):
                    return False, _NAN
                res = max(res, diff)
    return True, res


@kernel
def _drop(comp, beta, n_phase, k):
    """Remove phase ``k`` (the last phase moves into its place); returns the new count."""
    last = n_phase - 1
    if k != last:
        for i in range(comp.shape[1]):
            comp[k, i] = comp[last, i]
        beta[k] = beta[last]
    beta[last] = 0.0
    return last


@kernel
def merge_same(comp, beta, n_phase, present):
    """Merge phases whose compositions agree within SAME_PHASE_LNX; returns the new count."""
    k = 0
    while k < n_phase:
        m = k + 1
        while m < n_phase:
            gap = 0.0
            for i in range(comp.shape[1]):
                if present[i]:
                    gap = max(gap, abs(math.log(comp[k, i] / comp[m, i])))
            if gap < SAME_PHASE_LNX:
                beta[k] += beta[m]
                n_phase = _drop(comp, beta, n_phase, m)
            else:
                m += 1
        k += 1
    return n_phase


@kernel
def balance_of(z, comp, beta, n_phase):
    """``max(max_k |sum_i x_ki - 1|, max_i |z_i - sum_k beta_k x_ki|)``."""
    out = 0.0
    for k in range(n_phase):
        s = 0.0
        for i in range(z.shape[0]):
            s += comp[k, i]
        out = max(out, abs(s - 1.0))
    for i in range(z.shape[0]):
        s = 0.0
        for k in range(n_phase):
            s += beta[k] * comp[k, i]
        out = max(out, abs(z[i] - s))
    return out


@kernel
def multiphase_split_cell(z, present, sqrt_a, b_i, omk, d1, d2, n_phase, comp, beta):
    """Substitution then Newton from the phases ``comp[:n_phase]`` (fractions ``beta``).

    ``comp`` (MAX_PHASES, nc) and ``beta`` (MAX_PHASES,) are updated in place. Returns (status,
    n_phase, iterations, residual, balance, gibbs).
    """
    nc = z.shape[0]
    ln_phi = np.empty((MAX_PHASES, nc))
    psi = np.empty((MAX_PHASES, nc))
    zab = np.empty((MAX_PHASES, 3))
    rr_ws = np.empty((MAX_PHASES + 1, nc))
    for k in range(n_phase, MAX_PHASES):
        beta[k] = 0.0
    iters = 0
    for it in range(1, MSS_MAXITER + 1):
        iters = it
        ok, res = phases_eos(comp, n_phase, present, sqrt_a, b_i, omk, d1, d2, ln_phi, psi, zab)
        if not ok:
            return ROOT_FAILURE, n_phase, iters, _NAN, _NAN, _NAN
        if n_phase > 1 and res < TOL_RESIDUAL:
            merged = merge_same(comp, beta, n_phase, present)
            if merged == 1:
                return TRIVIAL_SOLUTION, 1, iters, 0.0, 0.0, _NAN
            if merged < n_phase:
                n_phase = merged
                continue
            bal = balance_of(z, comp, beta, n_phase)
            if bal < TOL_BALANCE:
                return (
                    CONVERGED,
                    n_phase,
                    iters,
                    res,
                    bal,
                    _gibbs(comp, beta, n_phase, ln_phi, present),
                )
        if n_phase > 1 and it >= MSS_SWITCH_AFTER:
            break
        rr_ok, _ = multiphase_rachford_rice_cell(
            z, present, ln_phi, n_phase, beta, MRR_TOL, MRR_MAXITER, rr_ws
        )
        if not rr_ok:
            return MAX_ITERATIONS, n_phase, iters, res, _NAN, _NAN
        theta = rr_ws[:MAX_PHASES]
        e = rr_ws[MAX_PHASES]
        for k in range(n_phase):
            s = 0.0
            for i in range(nc):
                comp[k, i] = z[i] * theta[k, i] / e[i] if present[i] else 0.0
                s += comp[k, i]
            for i in range(nc):
                comp[k, i] /= s
        k = 0
        while k < n_phase:
            if beta[k] <= 0.0 and n_phase > 1:
                n_phase = _drop(comp, beta, n_phase, k)
            else:
                k += 1
        n_phase = merge_same(comp, beta, n_phase, present)
        if n_phase == 1:
            return TRIVIAL_SOLUTION, 1, iters, 0.0, 0.0, _NAN
    status, n_new, n_it, res, bal, g = multiphase_newton_cell(
        z, present, sqrt_a, b_i, omk, d1, d2, n_phase, comp, beta
    )
    if status == CONVERGED and merge_same(comp, beta, n_new, present) < n_new:
        # Two phases met: the answer has fewer phases; the caller splits again.
        status = TRIVIAL_SOLUTION
    return status, n_new, iters + n_it, res, bal, g


@kernel
def _gibbs(comp, beta, n_phase, ln_phi, present):
    g = 0.0
    for k in range(n_phase):
        g += beta[k] * xlogx(comp[k], ln_phi[k], present)
    return g


@kernel
def _from_moles(z, present, moles, ref, n_phase, comp, beta):
    """Phase fractions and compositions from the mole numbers of the non-reference phases;
    False where a reference mole number is not positive."""
    nc = z.shape[0]
    for i in range(nc):
        s = 0.0
        for k in range(n_phase):
            if k != ref:
                s += moles[k, i]
        moles[ref, i] = z[i] - s if present[i] else 0.0
        if present[i] and not moles[ref, i] > 0.0:
            return False
    for k in range(n_phase):
        s = 0.0
        for i in range(nc):
            s += moles[k, i]
        beta[k] = s
        for i in range(nc):
            comp[k, i] = moles[k, i] / s
    return True


@kernel
def multiphase_newton_cell(z, present, sqrt_a, b_i, omk, d1, d2, n_phase, comp, beta):
    """Newton minimisation of the Gibbs energy of ``n_phase`` phases (2 or 3).

    Returns (status, n_phase, iterations, residual, balance, gibbs); ``comp`` and ``beta`` hold
    the best point reached.
    """
    nc = z.shape[0]
    ln_phi = np.empty((MAX_PHASES, nc))
    psi = np.empty((MAX_PHASES, nc))
    zab = np.empty((MAX_PHASES, 3))
    phi_d = np.empty((MAX_PHASES, nc, nc))
    dws = np.empty((DLNPHI_WS, nc))
    moles = np.empty((MAX_PHASES, nc))
    acc = np.empty((MAX_PHASES, nc))
    trial_c = np.empty((MAX_PHASES, nc))
    trial_b = np.empty(MAX_PHASES)
    best_c = np.empty((MAX_PHASES, nc))
    best_b = np.empty(MAX_PHASES)
    ref = 0
    for k in range(1, n_phase):
        if beta[k] > beta[ref]:
            ref = k
    m = (n_phase - 1) * nc
    jac = np.empty((m, m))
    rhs = np.empty(m)
    sol = np.empty(m)
    scale = np.empty(m)
    step = np.zeros((MAX_PHASES, nc))
    for k in range(n_phase):
        for i in range(nc):
            moles[k, i] = beta[k] * comp[k, i] if present[i] else 0.0
    _from_moles(z, present, moles, ref, n_phase, trial_c, trial_b)
    for k in range(n_phase):
        for i in range(nc):
            acc[k, i] = moles[k, i]
    acc_g = _INF
    tau = 1.0
    halvings = 0
    best = _INF
    stall = 0
    status = MAX_ITERATIONS
    res_o = _NAN
    g_o = _NAN
    have = False
    iters = 0
    for _ in range(MNEWTON_MAXITER + MAX_HALVINGS):
        inside = _from_moles(z, present, moles, ref, n_phase, trial_c, trial_b)
        ok = False
        res = _NAN
        g = _NAN
        if inside:
            ok, res = phases_eos(
                trial_c, n_phase, present, sqrt_a, b_i, omk, d1, d2, ln_phi, psi, zab
            )
            g = _gibbs(trial_c, trial_b, n_phase, ln_phi, present)
        iters += 1
        accept = ok and math.isfinite(g) and g <= acc_g + 1e-12 * max(1.0, abs(acc_g))
        if not accept:
            if halvings < MAX_HALVINGS and math.isfinite(acc_g):
                halvings += 1
                tau *= 0.5
                for k in range(n_phase):
                    for i in range(nc):
                        moles[k, i] = acc[k, i] + tau * step[k, i]
                continue
            break
        stall = 0 if res < 0.5 * best else stall + 1
        if res <= best:
            best = res
            have = True
            status = CONVERGED if res < TOL_RESIDUAL else MAX_ITERATIONS
            res_o = res
            g_o = g
            for k in range(n_phase):
                best_b[k] = trial_b[k]
                for i in range(nc):
                    best_c[k, i] = trial_c[k, i]
        if res < NEWTON_TARGET or (stall >= 3 and best < 1e-8):
            break
        for k in range(n_phase):
            dlnphi_cell(
                zab[k, 0], zab[k, 1], zab[k, 2], psi[k], sqrt_a, b_i, omk, d1, d2, phi_d[k], dws
            )
        # Unknowns: (block a over non-reference phases) x (component i).
        a = 0
        for k in range(n_phase):
            if k == ref:
                continue
            for i in range(nc):
                row = a * nc + i
                if present[i]:
                    nk = moles[k, i]
                    nr = moles[ref, i]
                    scale[row] = math.sqrt(nk * nr / (nk + nr))
                    rhs[row] = -scale[row] * (
                        math.log(trial_c[k, i])
                        + ln_phi[k, i]
                        - math.log(trial_c[ref, i])
                        - ln_phi[ref, i]
                    )
                else:
                    scale[row] = 1.0
                    rhs[row] = 0.0
            a += 1
        a = 0
        for k in range(n_phase):
            if k == ref:
                continue
            b = 0
            for m2 in range(n_phase):
                if m2 == ref:
                    continue
                for i in range(nc):
                    for j in range(nc):
                        row = a * nc + i
                        col = b * nc + j
                        if not (present[i] and present[j]):
                            jac[row, col] = 1.0 if row == col else 0.0
                            continue
                        h = (phi_d[ref, i, j] - 1.0) / trial_b[ref]
                        if i == j:
                            h += 1.0 / (trial_b[ref] * trial_c[ref, i])
                        if k == m2:
                            h += (phi_d[k, i, j] - 1.0) / trial_b[k]
                            if i == j:
                                h += 1.0 / (trial_b[k] * trial_c[k, i])
                        jac[row, col] = scale[row] * h * scale[col]
                b += 1
            a += 1
        finite = True
        for r in range(m):
            for c in range(m):
                if not math.isfinite(jac[r, c]):
                    finite = False
        if not finite:
            break
        lam_min = np.linalg.eigvalsh(jac)[0]
        if lam_min < MIN_EIG:
            for r in range(m):
                jac[r, r] += MIN_EIG - lam_min + 1e-3
        if not solve_cell(jac, rhs, sol):
            break
        t = 1.0
        a = 0
        for k in range(n_phase):
            if k == ref:
                continue
            for i in range(nc):
                step[k, i] = sol[a * nc + i] * scale[a * nc + i] if present[i] else 0.0
                if step[k, i] < 0.0:
                    t = min(t, 0.95 * moles[k, i] / -step[k, i])
            a += 1
        for i in range(nc):
            if present[i]:
                dr = 0.0
                for k in range(n_phase):
                    if k != ref:
                        dr -= step[k, i]
                if dr < 0.0:
                    t = min(t, 0.95 * moles[ref, i] / -dr)
        for k in range(n_phase):
            for i in range(nc):
                acc[k, i] = moles[k, i]
                if k != ref:
                    moles[k, i] = moles[k, i] + t * step[k, i]
        acc_g = g
        tau = t
        halvings = 0
    if not have:
        return ROOT_FAILURE, n_phase, iters, _NAN, _NAN, _NAN
    for k in range(n_phase):
        beta[k] = best_b[k]
        for i in range(nc):
            comp[k, i] = best_c[k, i]
    bal = balance_of(z, comp, beta, n_phase)
    if status == CONVERGED and not bal < TOL_BALANCE:
        status = MAX_ITERATIONS
    return status, n_phase, iters, res_o, bal, g_o
