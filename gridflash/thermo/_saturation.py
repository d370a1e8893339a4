"""Pure-component saturation (vapour) pressure from the cubic EOS."""

from __future__ import annotations

import numpy as np
from numpy.typing import NDArray

from ._cubic import CubicModel, R, cubic_roots

__all__ = ["pure_vapour_pressure", "saturation_pressure"]

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


def saturation_pressure(
    mixture, temperature, z, p_two_phase, p_one_phase, *, rtol=1e-10, maxiter=80
):
    """Bubble- or dew-point pressure of each feed between a two-phase and a one-phase pressure.

    The boundary is located by bisection in ``ln P`` on the phase count of the full flash
    (stability test included), so it is the pressure at which :func:`gridflash.flash` itself
    changes its answer; the kind of point follows from the vapour fraction just inside the
    two-phase region (near 0: bubble point, near 1: dew point).

    Parameters
    ----------
    mixture : Mixture
    temperature : ndarray, shape (n,)
        K.
    z : ndarray, shape (n, nc)
    p_two_phase, p_one_phase : ndarray, shape (n,)
        Pressures (Pa) at which the flash finds two phases and one phase respectively.
    rtol : float
        Relative width of the final bracket.

    Returns
    -------
    pressure : ndarray, shape (n,)
        Pa; NaN where the brackets were not a two-phase / one-phase pair.
    kind : ndarray of int8, shape (n,)
        1 bubble point, 2 dew point, 3 vapour pressure of a single-component feed (where the
        brackets are ignored: a pure component's two-phase region is a line), 0 unknown.
    incipient : ndarray, shape (n, nc)
        Composition of the incipient phase at the inside end of the final bracket.
    """
    from ._flash import flash  # the flash is the oracle; imported here to avoid a cycle

    t = np.asarray(temperature, dtype=float)
    zz = np.asarray(z, dtype=float)
    lo = np.log(np.asarray(p_two_phase, dtype=float))  # inside (two-phase) end
    hi = np.log(np.asarray(p_one_phase, dtype=float))  # outside (one-phase) end
    n = t.shape[0]
    check = flash(
        mixture, np.exp(np.concatenate([lo, hi])), np.concatenate([t, t]), np.concatenate([zz, zz])
    )
    valid = (check.phase_count[:n] == 2) & (check.phase_count[n:] == 1)
    valid &= check.converged[:n] & check.converged[n:] & (np.sum(zz > 0.0, axis=1) > 1)
    for _ in range(maxiter):
        width = np.abs(hi - lo)
        todo = valid & (width > rtol)
        if not todo.any():
            break
        mid = 0.5 * (lo[todo] + hi[todo])
        r = flash(mixture, np.exp(mid), t[todo], zz[todo])
        two = r.phase_count == 2
        idx = np.flatnonzero(todo)
        lo[idx[two]] = mid[two]
        hi[idx[~two]] = mid[~two]
    inside = flash(mixture, np.exp(lo), t, zz)
    beta = inside.vapour_fraction
    kind = np.where(valid & (inside.phase_count == 2), np.where(beta < 0.5, 1, 2), 0).astype(
        np.int8
    )
    incipient = np.where(
        (kind == 1)[:, None], inside.y, np.where((kind == 2)[:, None], inside.x, np.nan)
    )
    pressure = np.where(valid, np.exp(0.5 * (lo + hi)), np.nan)
    pure = np.sum(zz > 0.0, axis=1) == 1
    if pure.any():
        comp = np.argmax(zz[pure], axis=1)
        p_pure, _, _, ok = pure_vapour_pressure(mixture.model, comp, t[pure])
        pressure[pure] = np.where(ok, p_pure, np.nan)
        kind[pure] = np.where(ok, 3, 0)
        incipient[pure] = np.where(ok[:, None], zz[pure], np.nan)
    return pressure, kind, incipient
