"""Cubic equation of state, per cell: reduced parameters, Wilson K-values, cubic roots,
lowest-Gibbs root, fugacity coefficients and their composition derivatives, and a small
dense linear solve shared by the Newton iterations.

The methods and equations are documented in :mod:`gridflash.thermo._cubic`.
"""

from __future__ import annotations

import math

import numpy as np

from ._policy import R, kernel
from .codes import ROOT_LIQUID, ROOT_MIN_GIBBS

_NAN = math.nan
_INF = math.inf

# Scratch rows of nc of dlnphi_cell.
DLNPHI_WS = 7


@kernel
def reduced_cell(ac, m, b, tc, p, t, sqrt_a, b_i):
    """sqrt(A_i) and B_i of one cell, written into ``sqrt_a`` and ``b_i``."""
    rt = R * t
    for i in range(tc.shape[0]):
        sa = abs(1.0 + m[i] * (1.0 - math.sqrt(t / tc[i])))
        sqrt_a[i] = math.sqrt(ac[i] * p) * sa / rt
        b_i[i] = b[i] * p / rt


@kernel
def wilson_ln_k_cell(pc, tc, omega, p, t):
    """Wilson's ``ln K = ln(Pc / P) + 5.373 (1 + w)(1 - Tc / T)`` (Wilson 1968)."""
    return math.log(pc / p) + 5.373 * (1.0 + omega) * (1.0 - tc / t)


@kernel
def wilson_batch(pc, tc, omega, p, t, out):
    for c in range(p.shape[0]):
        for i in range(pc.shape[0]):
            out[c, i] = wilson_ln_k_cell(pc[i], tc[i], omega[i], p[c], t[c])


@kernel
def _polish(z, c2, c1, c0):
    for _ in range(2):
        f = ((z + c2) * z + c1) * z + c0
        df = (3.0 * z + 2.0 * c2) * z + c1
        if df != 0.0:
            step = f / df
            if math.isfinite(step):
                z = z - step
    return z


@kernel
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


@kernel
def _logs(z, b, d1, d2):
    """``ln(Z - B)`` and ``ln((Z + d1 B) / (Z + d2 B))`` of a root."""
    return math.log(z - b), math.log((z + d1 * b) / (z + d2 * b))


@kernel
def _root(a, bm, d1, d2, root):
    """The chosen root Z of the reduced cubic with ``ln(Z - B)``, the log term and
    ``q = A / (B (d1 - d2))``; Z is NaN where there is no root above B."""
    z_max, z_min, three = cubic_roots_cell(a, bm, d1, d2)
    min_ok = three and z_min > bm
    if root == ROOT_LIQUID and min_ok:
        z = z_min
    else:
        z = z_max
    q = a / (bm * (d1 - d2))
    if not z > bm:
        return _NAN, _NAN, _NAN, q
    lz, log_term = _logs(z, bm, d1, d2)
    if root == ROOT_MIN_GIBBS and min_ok:
        # The root of lower Gibbs energy: G_dep / RT = Z - ln(Z - B) - q ln(...) (+ const).
        lz_min, log_min = _logs(z_min, bm, d1, d2)
        if z_min - lz_min - q * log_min < z_max - lz - q * log_term:
            z = z_min
            lz = lz_min
            log_term = log_min
    return z, lz, log_term, q


@kernel
def pure_ln_phi_cell(sqrt_a, b_i, omk, d1, d2, out):
    """ln phi of each pure component at the cell's P and T (lowest-Gibbs root) into ``out``.

    For a pure component ``A = A_i``, ``B = B_i`` and the mixture formula reduces to
    ``ln phi = Z - 1 - ln(Z - B) - A / (B (d1 - d2)) ln((Z + d1 B) / (Z + d2 B))``; one cubic
    per component, independent of the number of components. NaN where there is no root.
    """
    for i in range(b_i.shape[0]):
        a = sqrt_a[i] * sqrt_a[i] * omk[i, i]
        z, lz, log_term, q = _root(a, b_i[i], d1, d2, ROOT_MIN_GIBBS)
        out[i] = z - 1.0 - lz - q * log_term


@kernel
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
    z, lz, log_term, q = _root(a, bm, d1, d2, root)
    if not z > bm:
        for i in range(nc):
            ln_phi[i] = _NAN
        return _NAN, a, bm
    coef = q * log_term
    for i in range(nc):
        br = b_i[i] / bm
        ln_phi[i] = br * (z - 1.0) - lz - coef * (2.0 * psi[i] / a - br)
    return z, a, bm


@kernel
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


@kernel
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


@kernel
def reduced_batch(ac, m, b, tc, p, t, sqrt_a, b_i):
    for c in range(p.shape[0]):
        reduced_cell(ac, m, b, tc, p[c], t[c], sqrt_a[c], b_i[c])


@kernel
def cubic_roots_batch(a, b, d1, d2, z_max, z_min, three):
    for c in range(a.shape[0]):
        z_max[c], z_min[c], three[c] = cubic_roots_cell(a[c], b[c], d1, d2)


@kernel
def phase_batch(x, sqrt_a, b_i, omk, d1, d2, root, z, a, b, ln_phi, psi):
    for c in range(x.shape[0]):
        z[c], a[c], b[c] = phase_cell(x[c], sqrt_a[c], b_i[c], omk, d1, d2, root, ln_phi[c], psi[c])


@kernel
def dlnphi_batch(z, a, b, psi, sqrt_a, b_i, omk, d1, d2, out):
    ws = np.empty((DLNPHI_WS, psi.shape[1]))
    for c in range(z.shape[0]):
        dlnphi_cell(z[c], a[c], b[c], psi[c], sqrt_a[c], b_i[c], omk, d1, d2, out[c], ws)
