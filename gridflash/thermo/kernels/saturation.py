"""Saturation point (bubble / dew) by Newton's method on the incipient-phase equations.

Used by :func:`gridflash.thermo.saturation_pressure`, where the method is documented.
"""

from __future__ import annotations

import math

import numpy as np

from ._policy import kernel
from .codes import ROOT_MIN_GIBBS
from .eos import DLNPHI_WS, dlnphi_cell, phase_cell, reduced_cell, solve_cell
from .split import TRIVIAL_LNK

SAT_TOL = 1e-12
SAT_MAXITER = 50
SAT_DLNP = 1e-6  # relative pressure step of the finite-difference d/d ln P


# Rows of the saturation workspace ``ws`` (8, nc).
_W, _WN, _LNPHI_W, _LNPHI_Z, _PSI_W, _PSI_Z, _SQRT_A, _B_I = range(8)


@kernel
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


@kernel
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


@kernel
def saturation_newton_batch(eos, z, t, lnp0, u0, lnp, converged, u_out):
    for c in range(z.shape[0]):
        lnp[c], converged[c] = saturation_newton_cell(eos, z[c], t[c], lnp0[c], u0[c], u_out[c])
