"""Compiled per-cell phase properties (the implementation behind :mod:`._properties`).

Volume-shifted molar volume, molar and mass density, molar mass, the Lohrenz-Bray-Clark
viscosity with the Stiel-Thodos / Herning-Zipperer dilute-gas term and the phase-identification
parameter of single phases; the equations are given in
the docstrings of :mod:`._properties`. Compiled like the flash kernels (``nogil``, disk cache) so
that worker threads run them in parallel.
"""

from __future__ import annotations

import math

import numpy as np

from ._policy import R, kernel

ATM = 101325.0  # Pa, exact
_NAN = math.nan


@kernel
def xi_cell(tc, pc, mw):
    """Viscosity-reducing parameter ``Tc^(1/6) / (M^(1/2) Pc^(2/3))``, Tc in K, Pc in Pa."""
    return tc ** (1.0 / 6.0) / (math.sqrt(mw) * (pc / ATM) ** (2.0 / 3.0))


@kernel
def stiel_thodos_cell(tc, xi, t):
    """Dilute-gas viscosity of one component, cP (Stiel & Thodos 1961)."""
    tr = t / tc
    if tr <= 1.5:
        return 34e-5 * tr**0.94 / xi
    return 17.78e-5 * abs(4.58 * tr - 1.67) ** 0.625 / xi


@kernel
def stiel_thodos_batch(tc, pc, mw, t, out):
    """Dilute-gas viscosities (n, nc), Pa s."""
    nc = tc.shape[0]
    xi = np.empty(nc)
    for i in range(nc):
        xi[i] = xi_cell(tc[i], pc[i], mw[i])
    for c in range(t.shape[0]):
        for i in range(nc):
            out[c, i] = stiel_thodos_cell(tc[i], xi[i], t[c]) * 1e-3


@kernel
def lbc_cell(tc, pc, mw, vc, sqrt_mw, mu_i, x, molar_density):
    """Lohrenz-Bray-Clark viscosity of one phase, Pa s; ``mu_i`` dilute-gas viscosities, cP."""
    num = 0.0
    den = 0.0
    tpc = 0.0
    ppc = 0.0
    mwm = 0.0
    vpc = 0.0
    for i in range(x.shape[0]):
        num += x[i] * mu_i[i] * sqrt_mw[i]
        den += x[i] * sqrt_mw[i]
        tpc += x[i] * tc[i]
        ppc += x[i] * pc[i]
        mwm += x[i] * mw[i]
        vpc += x[i] * vc[i]
    mu_star = num / den
    rho_r = molar_density * vpc
    poly = 0.1023 + rho_r * (
        0.023364 + rho_r * (0.058533 + rho_r * (-0.040758 + rho_r * 0.0093324))
    )
    mu = mu_star + (poly**4 - 1e-4) / xi_cell(tpc, ppc, mwm)
    return mu * 1e-3


@kernel
def lbc_batch(tc, pc, mw, vc, t, x, molar_density, out):
    """Lohrenz-Bray-Clark viscosities (n,), Pa s; rows of x holding NaN give NaN."""
    n, nc = x.shape
    xi = np.empty(nc)
    sqrt_mw = np.empty(nc)
    mu_i = np.empty(nc)
    for i in range(nc):
        xi[i] = xi_cell(tc[i], pc[i], mw[i])
        sqrt_mw[i] = math.sqrt(mw[i])
    t_mu = _NAN  # the temperature mu_i was computed at
    for c in range(n):
        ok = True
        for i in range(nc):
            if not math.isfinite(x[c, i]):
                ok = False
        if not ok:
            out[c] = _NAN
            continue
        if not t[c] == t_mu:
            for i in range(nc):
                mu_i[i] = stiel_thodos_cell(tc[i], xi[i], t[c])
            t_mu = t[c]
        out[c] = lbc_cell(tc, pc, mw, vc, sqrt_mw, mu_i, x[c], molar_density[c])


@kernel
def properties_batch(
    tc, pc, mw, vc, shift, p, t, x, z_factor, volume, density, mass_density, molar_mass, viscosity
):
    """Properties of n phases of composition ``x`` (n, nc) and compressibility ``z_factor`` (n,).

    NaN in a row of ``x`` or in ``z_factor`` propagates to that row's properties.
    """
    n, nc = x.shape
    for c in range(n):
        s = 0.0
        m = 0.0
        for i in range(nc):
            s += x[c, i] * shift[i]
            m += x[c, i] * mw[i]
        v = z_factor[c] * R * t[c] / p[c] - s
        volume[c] = v
        density[c] = 1.0 / v
        molar_mass[c] = m
        mass_density[c] = m * 1e-3 * density[c]
    lbc_batch(tc, pc, mw, vc, t, x, density, viscosity)


@kernel
def pip_cell(ac, m, b, tc, one_minus_k, d1, d2, t, v, x):
    """Phase-identification parameter of one phase of composition ``x`` at ``(T, V)``.

    ``PI = V [(d2P/dTdV) / (dP/dT)_V - (d2P/dV2)_T / (dP/dV)_T]`` (Venkatarathnam & Oellrich
    2011) for ``P = RT / (V - b) - a / ((V + d1 b)(V + d2 b))`` with van der Waals
    mixing of ``a(T)`` and ``b``; ``V`` is the EOS (unshifted) molar volume, m3/mol.
    """
    nc = x.shape[0]
    a = 0.0
    da = 0.0
    bm = 0.0
    for i in range(nc):
        bm += x[i] * b[i]
    for i in range(nc):
        if x[i] == 0.0:
            continue
        si = 1.0 + m[i] * (1.0 - math.sqrt(t / tc[i]))
        ai = ac[i] * si * si
        dai = -ac[i] * m[i] * si / math.sqrt(t * tc[i])
        for j in range(nc):
            if x[j] == 0.0:
                continue
            sj = 1.0 + m[j] * (1.0 - math.sqrt(t / tc[j]))
            aj = ac[j] * sj * sj
            daj = -ac[j] * m[j] * sj / math.sqrt(t * tc[j])
            root = math.sqrt(ai * aj)
            w = x[i] * x[j] * one_minus_k[i, j]
            a += w * root
            da += w * (dai * aj + ai * daj) / (2.0 * root)
    vb = v - bm
    den = (v + d1 * bm) * (v + d2 * bm)
    dden = 2.0 * v + (d1 + d2) * bm
    p_v = -R * t / (vb * vb) + a * dden / (den * den)
    p_vv = 2.0 * R * t / (vb * vb * vb) + a * (2.0 / (den * den) - 2.0 * dden * dden / den**3)
    p_t = R / vb - da / den
    p_tv = -R / (vb * vb) + da * dden / (den * den)
    return v * (p_tv / p_t - p_vv / p_v), bm / v


@kernel
def phase_label_batch(ac, m, b, tc, one_minus_k, d1, d2, p, t, x, z_factor, dilute, out):
    """Labels (1 vapour-like, 2 liquid-like) of n single phases; see :mod:`.._properties`."""
    for c in range(x.shape[0]):
        v = z_factor[c] * R * t[c] / p[c]
        pip, packing = pip_cell(ac, m, b, tc, one_minus_k, d1, d2, t[c], v, x[c])
        out[c] = 2 if pip > 1.0 and packing >= dilute else 1
