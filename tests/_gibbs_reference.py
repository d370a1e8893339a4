"""An independent, deliberately plain reference for the flash tests.

A scalar Peng-Robinson (1978 alpha) implementation written separately from gridflash's kernel
(roots by numpy.roots, fugacity coefficients from the textbook formula of Peng & Robinson 1976,
eq. 21), and a direct minimisation of the total Gibbs energy of a two-phase split with
scipy.optimize from several starting points. Slow, simple and independent of gridflash's
stability test, split and root selection.
"""

from __future__ import annotations

import math

import numpy as np
from scipy.optimize import minimize

R = 8.314462618


class PlainPR:
    def __init__(self, tc, pc, omega, kij):
        self.tc = np.asarray(tc, float)
        self.pc = np.asarray(pc, float)
        w = np.asarray(omega, float)
        self.m = np.where(
            w > 0.49,
            0.379642 + 1.48503 * w - 0.164423 * w**2 + 0.016666 * w**3,
            0.37464 + 1.54226 * w - 0.26992 * w**2,
        )
        self.kij = np.asarray(kij, float)

    def params(self, p, t):
        ai = 0.45723553 * (R * self.tc) ** 2 / self.pc * (1 + self.m * (1 - np.sqrt(t / self.tc))) ** 2
        bi = 0.07779607 * R * self.tc / self.pc
        aij = np.sqrt(np.outer(ai, ai)) * (1 - self.kij)
        return aij * p / (R * t) ** 2, bi * p / (R * t)

    def ln_phi(self, x, p, t):
        """ln phi and molar residual Gibbs energy / RT at the lowest-Gibbs root."""
        aij, bi = self.params(p, t)
        a = x @ aij @ x
        b = x @ bi
        roots = np.roots([1, -(1 - b), a - 3 * b * b - 2 * b, -(a * b - b * b - b**3)])
        real = roots[np.abs(roots.imag) < 1e-10].real
        real = real[real > b]
        s2 = math.sqrt(2)
        best = None
        for z in real:
            lnphi = (
                bi / b * (z - 1)
                - math.log(z - b)
                - a / (2 * s2 * b) * (2 * (aij @ x) / a - bi / b)
                * math.log((z + (1 + s2) * b) / (z + (1 - s2) * b))
            )
            g = float(x @ lnphi)
            if best is None or g < best[1]:
                best = (lnphi, g)
        return best


def total_gibbs(model: PlainPR, v, z, p, t):
    l = z - v
    out = 0.0
    for n in (v, l):
        tot = n.sum()
        frac = n / tot
        lnphi, _ = model.ln_phi(frac, p, t)
        mask = n > 0
        out += float(np.sum(n[mask] * (np.log(frac[mask]) + lnphi[mask])))
    return out


def minimise_gibbs(model: PlainPR, z, p, t, starts):
    """Lowest total Gibbs energy over two-phase splits, from several starting vapour fractions.

    Returns (g_feed, best_g, best_v).
    """
    zpos = z > 0
    zz = z[zpos]
    lnphi_f, _ = model.ln_phi(z, p, t)
    g_feed = float(np.sum(zz * (np.log(zz) + lnphi_f[zpos])))
    best_g, best_v = g_feed, None

    def fun(u):
        v = np.zeros_like(z)
        v[zpos] = zz / (1 + np.exp(-u))  # v_i in (0, z_i)
        return total_gibbs(model, v, z, p, t)

    for s in starts:
        u0 = np.log(s[zpos] / (zz - s[zpos]))
        res = minimize(fun, u0, method="L-BFGS-B", options={"ftol": 1e-15, "gtol": 1e-11,
                                                             "maxiter": 3000})
        if res.fun < best_g:
            best_g = float(res.fun)
            v = np.zeros_like(z)
            v[zpos] = zz / (1 + np.exp(-res.x))
            best_v = v
    return g_feed, best_g, best_v
