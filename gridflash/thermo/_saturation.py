"""Pure-component saturation (vapour) pressure from the cubic EOS."""

from __future__ import annotations

import numpy as np
from numpy.typing import NDArray

from ._cubic import R, CubicModel, cubic_roots

__all__ = ["pure_vapour_pressure"]

_TOL = 1e-12
_MAXITER = 100


def _pure_ln_phi(z, a, b, d1, d2):
    with np.errstate(invalid="ignore", divide="ignore"):
        return z - 1.0 - np.log(z - b) - a / (b * (d1 - d2)) * np.log((z + d1 * b) / (z + d2 * b))


def pure_vapour_pressure(
    model: CubicModel, component: NDArray[np.intp], temperature: NDArray[np.float64]
) -> tuple[NDArray[np.float64], NDArray[np.float64], NDArray[np.float64], NDArray[np.bool_]]:
    """Vapour pressure of pure components predicted by the EOS.

    Solves ``ln phi^L(P) = ln phi^V(P)`` by Newton's method in ``ln P``
    (``d(ln phi^L - ln phi^V)/d ln P = Z^L - Z^V``), starting from Edmister's estimate
    ``log10(P / Pc) = 7/3 (1 + w)(1 - Tc / T)``; where the cubic has a single root the pressure is
    moved towards the three-root region first.

    Parameters
    ----------
    model : CubicModel
    component : ndarray of int, shape (n,)
        Component index of each point.
    temperature : ndarray, shape (n,)
        Below the component's critical temperature.

    Returns
    -------
    pressure, z_liquid, z_vapour : ndarray, shape (n,)
    converged : ndarray of bool, shape (n,)
    """
    idx = np.asarray(component, dtype=np.intp)
    t = np.asarray(temperature, dtype=float)
    tc = model.tc[idx]
    ac, m, b = model.ac[idx], model.m[idx], model.b[idx]
    d1, d2 = model.delta1, model.delta2
    alpha = (1.0 + m * (1.0 - np.sqrt(t / tc))) ** 2
    a_t = ac * alpha
    pc, omega = model.pc[idx], model.omega[idx]
    ln_p = np.log(pc) + np.log(10.0) * 7.0 / 3.0 * (1.0 + omega) * (1.0 - tc / t)
    conv = np.zeros(t.shape, dtype=bool)
    zl = np.full(t.shape, np.nan)
    zv = np.full(t.shape, np.nan)
    below_tc = t < tc
    for _ in range(_MAXITER):
        p = np.exp(ln_p)
        a_red = a_t * p / (R * t) ** 2
        b_red = b * p / (R * t)
        z_max, z_min, three = cubic_roots(a_red, b_red, d1, d2)
        ok = three & (z_min > b_red)
        f = _pure_ln_phi(z_min, a_red, b_red, d1, d2) - _pure_ln_phi(z_max, a_red, b_red, d1, d2)
        df = z_min - z_max
        with np.errstate(invalid="ignore", divide="ignore"):
            step = np.where(ok, -f / df, 0.0)
        step = np.clip(step, -1.0, 1.0)
        # Single root: vapour-like (above the inflection) -> raise P; liquid-like -> lower it.
        infl = (1.0 + b_red - (d1 + d2) * b_red) / 3.0
        step = np.where(ok, step, np.where(z_max > infl, 0.2, -0.2))
        done = ok & (np.abs(f) < _TOL)
        conv |= done & below_tc
        zl = np.where(done, z_min, zl)
        zv = np.where(done, z_max, zv)
        if np.all(conv | ~below_tc):
            break
        ln_p = np.where(conv | ~below_tc, ln_p, ln_p + step)
    p = np.where(conv, np.exp(ln_p), np.nan)
    return p, zl, zv, conv
