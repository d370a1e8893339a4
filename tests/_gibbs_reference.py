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
        self.omega = w

    def params(self, p, t):
        ai = (
            0.45723553
            * (R * self.tc) ** 2
            / self.pc
            * (1 + self.m * (1 - np.sqrt(t / self.tc))) ** 2
        )
        bi = 0.07779607 * R * self.tc / self.pc
        aij = np.sqrt(np.outer(ai, ai)) * (1 - self.kij)
        return aij * p / (R * t) ** 2, bi * p / (R * t)

    def ln_phi(self, x, p, t):
        """ln phi and molar residual Gibbs energy / RT at the lowest-Gibbs root."""
        aij, bi = self.params(p, t)
        a = x @ aij @ x
        b = x @ bi
        if not np.all(np.isfinite([a, b])):
            return np.full(x.shape, np.nan), np.nan
        roots = np.roots([1, -(1 - b), a - 3 * b * b - 2 * b, -(a * b - b * b - b**3)])
        real = roots[np.abs(roots.imag) < 1e-10].real
        real = real[real > b]
        s2 = math.sqrt(2)
        best = None
        for z in real:
            lnphi = (
                bi / b * (z - 1)
                - math.log(z - b)
                - a
                / (2 * s2 * b)
                * (2 * (aij @ x) / a - bi / b)
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
        res = minimize(
            fun, u0, method="L-BFGS-B", options={"ftol": 1e-15, "gtol": 1e-11, "maxiter": 3000}
        )
        if res.fun < best_g:
            best_g = float(res.fun)
            v = np.zeros_like(z)
            v[zpos] = zz / (1 + np.exp(-res.x))
            best_v = v
    return g_feed, best_g, best_v


def gibbs_and_gradient(model: PlainPR, v, z, p, t):
    """Total Gibbs energy / RT of the split and its gradient ln f^V - ln f^L (present comps)."""
    present = z > 0
    l = z - v
    vs, ls = v.sum(), l.sum()
    y, x = v / vs, l / ls
    lnphi_v, _ = model.ln_phi(y, p, t)
    lnphi_l, _ = model.ln_phi(x, p, t)
    with np.errstate(divide="ignore", invalid="ignore"):
        lf_v = np.where(present, np.log(np.where(present, y, 1.0)) + lnphi_v, 0.0)
        lf_l = np.where(present, np.log(np.where(present, x, 1.0)) + lnphi_l, 0.0)
    g = float(np.sum(np.where(present, v * lf_v + l * lf_l, 0.0)))
    return g, lf_v - lf_l


def classify(model: PlainPR, z, p, t, *, clear=1e-11, none=1e-14, extra_start=None):
    """Phase count by direct Gibbs minimisation from several starts independent of gridflash.

    Starts: Wilson K-values with vapour fractions 0.05, 0.5, 0.95, and their inverse. The
    search stops as soon as a start has lowered G by ten times ``clear`` (the split is proven).
    ``extra_start`` (vapour mole numbers, e.g. the split a flash reported) is tried first: the
    Gibbs energies are those of this module's own Peng-Robinson, so a split found from it is
    verified independently.
    Returns (label, delta_g) with label 2 (a split lowers G by more than ``clear``), 1 (no split
    lowers it by more than ``none``) or 0 (in between: indeterminate at this precision).
    """
    present = z > 0
    zz = z[present]
    lnphi_f, _ = model.ln_phi(z, p, t)
    g_feed = float(np.sum(zz * (np.log(zz) + lnphi_f[present])))
    lnk = np.log(model.pc / p) + 5.373 * (1 + model.omega) * (1 - model.tc / t)
    best = g_feed

    def fun(u):
        s = 1.0 / (1.0 + np.exp(-np.clip(u, -30.0, 30.0)))
        v = np.zeros_like(z)
        v[present] = zz * s
        with np.errstate(all="ignore"):
            g, grad = gibbs_and_gradient(model, v, z, p, t)
        if not np.isfinite(g):
            return 1e6, np.zeros_like(u)
        return g, grad[present] * zz * s * (1 - s)

    starts = []
    if extra_start is not None:
        starts.append(np.asarray(extra_start, float))
    for sign in (1.0, -1.0):
        k = np.exp(sign * lnk)
        for beta in (0.05, 0.5, 0.95):
            x = z / (1 + beta * (k - 1))
            x /= x.sum()
            y = k * x
            y /= y.sum()
            starts.append(beta * y)
    for start in starts:
        v = np.clip(start, 1e-12 * z, z * (1 - 1e-9))[present]
        u0 = np.log(v / (zz - v))
        res = minimize(
            fun,
            u0,
            jac=True,
            method="TNC",
            bounds=[(-30.0, 30.0)] * u0.size,
            options={"ftol": 1e-16, "gtol": 1e-12, "maxfun": 400},
        )
        best = min(best, float(res.fun))
        if best < g_feed - 10 * clear:
            return 2, best - g_feed
    dg = best - g_feed
    label = 2 if dg < -clear else (1 if dg > -none else 0)
    return label, dg


def phase_moles(u, z):
    """Mole numbers (n_phases, nc) from unconstrained variables u (n_phases - 1, nc): the feed
    of each component is shared among the phases by a softmax (phase 0 has logit 0)."""
    logits = np.vstack([np.zeros((1, z.size)), u])
    logits -= logits.max(axis=0)
    share = np.exp(logits)
    share /= share.sum(axis=0)
    return share * z


def total_gibbs_phases(model: PlainPR, moles, p, t):
    """Total Gibbs energy / RT (up to the pure-component terms) of phases given as mole numbers."""
    out = 0.0
    for n in moles:
        tot = n.sum()
        if tot <= 0.0:
            continue
        frac = n / tot
        lnphi, _ = model.ln_phi(frac, p, t)
        mask = n > 0
        out += float(np.sum(n[mask] * (np.log(frac[mask]) + lnphi[mask])))
    return out


def minimise_gibbs_phases(model: PlainPR, z, p, t, starts):
    """Lowest total Gibbs energy over splits into as many phases as each start has, by
    scipy.optimize.minimize (L-BFGS-B, numerical gradients) from every start.

    ``starts``: sequence of mole-number arrays (n_phases, nc) that sum to ``z`` over phases.
    Returns (best_g, best_moles).
    """
    present = z > 0
    zz = z[present]
    best_g, best = math.inf, None
    for start in starts:
        start = np.clip(np.asarray(start, float)[:, present], 1e-300, None)
        u0 = np.log(start[1:] / start[0]).ravel()
        shape = (start.shape[0] - 1, zz.size)

        def fun(u, shape=shape):
            with np.errstate(all="ignore"):
                g = total_gibbs_phases(model, phase_moles(u.reshape(shape), zz), p, t)
            return g if np.isfinite(g) else 1e6

        res = minimize(
            fun, np.clip(u0, -60, 60), method="L-BFGS-B",
            options={"ftol": 1e-16, "gtol": 1e-11, "maxiter": 5000, "maxfun": 100000},
        )
        if res.fun < best_g:
            best_g = float(res.fun)
            moles = np.zeros((shape[0] + 1, z.size))
            moles[:, present] = phase_moles(res.x.reshape(shape), zz)
            best = moles
    return best_g, best
