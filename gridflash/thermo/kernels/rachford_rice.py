"""Two-phase Rachford-Rice, per cell, solved inside its asymptote window.

The method is documented in :mod:`gridflash.thermo._rachford_rice`.
"""

from __future__ import annotations

import math

import numpy as np

from ._policy import kernel
from .codes import (
    RR_ALL_K_ABOVE_ONE,
    RR_ALL_K_BELOW_ONE,
    RR_AT_LOWER_LIMIT,
    RR_AT_UPPER_LIMIT,
    RR_CONVERGED,
    RR_MAX_ITERATIONS,
)
from .eos import solve_cell

_NAN = math.nan
_INF = math.inf

# Rachford-Rice
RR_TOL = 1e-14
RR_MAXITER = 200


@kernel
def _rr_g(beta, k, z):
    g = 0.0
    for i in range(k.shape[0]):
        if z[i] > 0.0:
            km1 = k[i] - 1.0
            g += z[i] * km1 / (1.0 + beta * km1)
    return g


@kernel
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


@kernel
def rachford_rice_batch(
    k, z, has_limits, lim_lo, lim_hi, tol, maxiter, beta, status, iters, residual
):
    work = np.empty(k.shape[1])
    for c in range(k.shape[0]):
        beta[c], status[c], iters[c], residual[c] = rachford_rice_cell(
            k[c], z[c], has_limits, lim_lo, lim_hi, tol, maxiter, work
        )


# Multiphase Rachford-Rice (Michelsen 1994), at most MAX_PHASES phases.
MAX_PHASES = 3
MRR_TOL = 1e-13  # max |dQ / d beta_k| over the phases present at the minimum
MRR_MAXITER = 100
MRR_MAX_HALVINGS = 30


@kernel
def _mrr_q(z, present, theta, beta, n_phase, e):
    """Q(beta) of the multiphase Rachford-Rice minimisation; E_i written into ``e``."""
    q = 0.0
    for k in range(n_phase):
        q += beta[k]
    for i in range(z.shape[0]):
        if present[i]:
            s = 0.0
            for k in range(n_phase):
                s += beta[k] * theta[k, i]
            e[i] = s
            q -= z[i] * math.log(s)
    return q


@kernel
def multiphase_rachford_rice_cell(z, present, ln_phi, n_phase, beta, tol, maxiter, ws):
    """Phase fractions of one cell from fugacity coefficients; returns (converged, iterations).

    ``ln_phi`` (MAX_PHASES, nc): ln phi of each phase (rows below ``n_phase``); ``beta``
    (MAX_PHASES,): initial fractions in, the minimiser out (>= 0, some > 0). ``ws``: scratch of
    MAX_PHASES + 1 rows of nc. The method is documented in ``_rachford_rice.py``.
    """
    nc = z.shape[0]
    theta = ws[:MAX_PHASES]
    e = ws[MAX_PHASES]
    g = np.empty(MAX_PHASES)
    h = np.empty((MAX_PHASES, MAX_PHASES))
    hf = np.empty((MAX_PHASES, MAX_PHASES))
    rhs = np.empty(MAX_PHASES)
    d = np.empty(MAX_PHASES)
    free = np.empty(MAX_PHASES, dtype=np.int64)
    trial = np.empty(MAX_PHASES)
    # theta_ki = phi_ri / phi_ki with r the phase of least ln phi_i: scaling row i of theta by a
    # constant leaves the gradient and the minimiser unchanged and keeps theta in (0, 1].
    for i in range(nc):
        if present[i]:
            low = ln_phi[0, i]
            for k in range(1, n_phase):
                low = min(low, ln_phi[k, i])
            for k in range(n_phase):
                theta[k, i] = math.exp(low - ln_phi[k, i])
    total = 0.0
    for k in range(n_phase):
        beta[k] = max(beta[k], 0.0)
        total += beta[k]
    if not total > 0.0:
        for k in range(n_phase):
            beta[k] = 1.0 / n_phase
    q = _mrr_q(z, present, theta, beta, n_phase, e)
    for it in range(1, maxiter + 1):
        for k in range(n_phase):
            s = 0.0
            for i in range(nc):
                if present[i]:
                    s += z[i] * theta[k, i] / e[i]
            g[k] = 1.0 - s
            for m in range(k, n_phase):
                s = 0.0
                for i in range(nc):
                    if present[i]:
                        s += z[i] * theta[k, i] * theta[m, i] / (e[i] * e[i])
                h[k, m] = s
                h[m, k] = s
        # Karush-Kuhn-Tucker: a phase at zero stays there while its gradient is non-negative.
        nf = 0
        worst = 0.0
        for k in range(n_phase):
            if beta[k] > 0.0 or g[k] < 0.0:
                free[nf] = k
                nf += 1
                worst = max(worst, abs(g[k]))
        if worst < tol:
            return True, it
        # Newton direction on the free phases; a phase at zero that the direction would make
        # negative is held at zero and the direction solved again without it.
        while True:
            for a in range(nf):
                rhs[a] = -g[free[a]]
                for b in range(nf):
                    hf[a, b] = h[free[a], free[b]]
            if not solve_cell(hf[:nf, :nf], rhs[:nf], d[:nf]):
                return False, it
            held = -1
            for a in range(nf):
                if beta[free[a]] <= 0.0 and d[a] < 0.0:
                    held = a
            if held < 0:
                break
            for a in range(held, nf - 1):
                free[a] = free[a + 1]
            nf -= 1
            if nf == 0:
                return worst < 1e3 * tol, it
        # Longest step keeping every fraction non-negative (the phase that limits it leaves),
        # then halved while Q rises.
        step = 1.0
        limit = -1
        for a in range(nf):
            if d[a] < 0.0 and -beta[free[a]] / d[a] < step:
                step = -beta[free[a]] / d[a]
                limit = free[a]
        accepted = False
        for _ in range(MRR_MAX_HALVINGS):
            for k in range(n_phase):
                trial[k] = beta[k]
            for a in range(nf):
                trial[free[a]] = max(beta[free[a]] + step * d[a], 0.0)
            if limit >= 0:
                trial[limit] = 0.0
            q_new = _mrr_q(z, present, theta, trial, n_phase, e)
            if math.isfinite(q_new) and q_new <= q + 1e-15 * abs(q):
                accepted = True
                break
            step *= 0.5
            limit = -1
        if not accepted:
            _mrr_q(z, present, theta, beta, n_phase, e)
            return worst < 1e3 * tol, it
        for k in range(n_phase):
            beta[k] = trial[k]
        q = q_new
    return False, maxiter
