"""Pure-component saturation (vapour) pressure from the cubic EOS."""

from __future__ import annotations

import numpy as np
from numpy.typing import NDArray

from .._errors import InputError
from ._cubic import CubicModel, R, cubic_roots

__all__ = ["pure_vapour_pressure", "saturation_pressure"]

_TOL = 1e-12
_MAXITER = 100
_NEWTON_BRACKET = 0.05  # bisection narrows brackets wider than this (relative) before Newton


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
    mixture, temperature, z, p_two_phase, p_one_phase, *, rtol=1e-10, maxiter=80,
    brackets_known=None,
):
    """Bubble- or dew-point pressure of each feed between a two-phase and a one-phase pressure.

    The bracket is first narrowed by bisection in ``ln P`` on the phase count of the full flash
    (stability test included) to a relative width of 5e-2. Newton's
    method on the incipient-phase equations ``ln(w_i / z_i) + ln phi_i(w) - ln phi_i(z) = 0``,
    ``sum w_i = 1`` (Michelsen & Mollerup 2007, ch. 12) then gives the EOS saturation pressure,
    started from that end's K-values. The answer is kept only if the flash agrees with it: two
    phases 1e-7 (relative) inside it and one phase 1e-7 outside. Where Newton fails or the flash
    disagrees, bisection continues down to ``rtol``, so the result is always the pressure at
    which :func:`gridflash.flash` itself changes its answer. The kind of point follows from the
    vapour fraction just inside the two-phase region (near 0: bubble point, near 1: dew point).

    Parameters
    ----------
    mixture : Mixture
    temperature : ndarray, shape (n,)
        K.
    z : ndarray, shape (n, nc)
    p_two_phase, p_one_phase : ndarray, shape (n,)
        Pressures (Pa) at which the flash finds two phases and one phase respectively.
    rtol : float
        Relative width of the final bracket where bisection has to finish the job.
    brackets_known : ndarray of bool, shape (n,), optional
        True where the caller already knows that the flash converges to two phases at
        ``p_two_phase`` and to one phase at ``p_one_phase`` (e.g. neighbouring grid cells of a
        table this flash computed); those brackets are not flashed again. Default: every
        bracket is checked. Single-component feeds are never flashed for the check.

    Returns
    -------
    pressure : ndarray, shape (n,)
        Pa; NaN where the brackets were not a two-phase / one-phase pair.
    kind : ndarray of int8, shape (n,)
        1 bubble point, 2 dew point, 3 vapour pressure of a single-component feed (where the
        brackets are ignored: a pure component's two-phase region is a line), 0 unknown.
    incipient : ndarray, shape (n, nc)
        Composition of the incipient phase.
    """
    from . import kernels as _k
    from ._flash import flash  # the flash is the oracle; imported here to avoid a cycle

    t = np.ascontiguousarray(temperature, dtype=float)
    zz = np.ascontiguousarray(z, dtype=float)
    lo = np.log(np.asarray(p_two_phase, dtype=float))  # inside (two-phase) end
    hi = np.log(np.asarray(p_one_phase, dtype=float))  # outside (one-phase) end
    n = t.shape[0]
    valid = np.sum(zz > 0.0, axis=1) > 1
    known = np.zeros(n, dtype=bool) if brackets_known is None else np.asarray(brackets_known)
    if known.shape != (n,):
        raise InputError(f"brackets_known has shape {known.shape}, expected ({n},)")
    idx = np.flatnonzero(valid & ~known)
    if idx.size:
        m_ = idx.size
        check = flash(mixture, np.exp(np.concatenate([lo[idx], hi[idx]])),
                      np.concatenate([t[idx], t[idx]]), np.concatenate([zz[idx], zz[idx]]))
        valid[idx] = (check.phase_count[:m_] == 2) & (check.phase_count[m_:] == 1)
        valid[idx] &= check.converged[:m_] & check.converged[m_:]

    def bisect(until):
        for _ in range(maxiter):
            todo = valid & (np.abs(hi - lo) > until)
            if not todo.any():
                break
            mid = 0.5 * (lo[todo] + hi[todo])
            r = flash(mixture, np.exp(mid), t[todo], zz[todo])
            two = r.phase_count == 2
            idx = np.flatnonzero(todo)
            lo[idx[two]] = mid[two]
            hi[idx[~two]] = mid[~two]

    bisect(max(_NEWTON_BRACKET, rtol))
    inside = flash(mixture, np.exp(lo), t, zz)
    beta = inside.vapour_fraction
    kind = np.where(valid & (inside.phase_count == 2), np.where(beta < 0.5, 1, 2), 0).astype(
        np.int8
    )
    incipient = np.where(
        (kind == 1)[:, None], inside.y, np.where((kind == 2)[:, None], inside.x, np.nan)
    )
    pressure = np.full(n, np.nan)
    cand = np.flatnonzero(kind > 0)
    if cand.size:
        model = mixture.model
        with np.errstate(divide="ignore", invalid="ignore"):
            u0 = np.where(zz[cand] > 0.0, np.log(incipient[cand] / zz[cand]), 0.0)
        u0 = np.where(np.isfinite(u0), u0, 0.0)
        lnp = np.empty(cand.size)
        ok = np.empty(cand.size, dtype=np.bool_)
        u = np.empty((cand.size, zz.shape[1]))
        eos = (model.ac, model.m, model.b, model.tc, model.one_minus_k, model.delta1, model.delta2)
        _k.saturation_newton_batch(
            eos, zz[cand], t[cand], lo[cand].copy(), np.ascontiguousarray(u0), lnp, ok, u
        )
        # The Newton answer must sit inside the bracket and agree with the flash.
        span = np.abs(hi[cand] - lo[cand])
        ok &= np.abs(lnp - 0.5 * (lo[cand] + hi[cand])) <= 0.5 * span + 1e-12
        sign = np.sign(hi[cand] - lo[cand])  # +1 where the one-phase side is at higher pressure
        d = 1e-7
        probe = flash(
            mixture,
            np.exp(np.concatenate([lnp - sign * d, lnp + sign * d])),
            np.concatenate([t[cand], t[cand]]),
            np.concatenate([zz[cand], zz[cand]]),
        )
        m_ = cand.size
        ok &= (probe.phase_count[:m_] == 2) & (probe.phase_count[m_:] == 1)
        good = cand[ok]
        pressure[good] = np.exp(lnp[ok])
        w = zz[good] * np.exp(u[ok])
        incipient[good] = w / w.sum(axis=1, keepdims=True)
        # The kind from the vapour fraction 1e-7 inside the boundary.
        kind[good] = np.where(probe.vapour_fraction[:m_][ok] < 0.5, 1, 2)
        valid[good] = False
    # Where Newton did not settle it: bisection down to rtol, the kind and the incipient phase
    # from the flash at the two-phase end of the final bracket.
    bisect(rtol)
    rest = np.flatnonzero(valid & np.isnan(pressure))
    if rest.size:
        pressure[rest] = np.exp(0.5 * (lo[rest] + hi[rest]))
        end = flash(mixture, np.exp(lo[rest]), t[rest], zz[rest])
        bubble = end.vapour_fraction < 0.5
        kind[rest] = np.where(end.phase_count == 2, np.where(bubble, 1, 2), 0)
        incipient[rest] = np.where(bubble[:, None], end.y, end.x)
    pure = np.sum(zz > 0.0, axis=1) == 1
    if pure.any():
        comp = np.argmax(zz[pure], axis=1)
        p_pure, _, _, ok_pure = pure_vapour_pressure(mixture.model, comp, t[pure])
        pressure[pure] = np.where(ok_pure, p_pure, np.nan)
        kind[pure] = np.where(ok_pure, 3, 0)
        incipient[pure] = np.where(ok_pure[:, None], zz[pure], np.nan)
    return pressure, kind, incipient
