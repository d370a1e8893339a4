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
