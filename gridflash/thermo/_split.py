"""Two-phase isothermal split on batches of cells.

Successive substitution on ``ln K`` (``ln K_i <- ln phi_i^L - ln phi_i^V``, with the vapour fraction
from Rachford-Rice at every step) accelerated by the Crowe-Nishio dominant-eigenvalue method (GDEM)
and safeguarded by the Gibbs energy, then a Newton finish on the fugacity residual in the vapour
mole numbers ``v_i`` (Michelsen, Fluid Phase Equilib. 9 (1982) 21, "Part II. Phase-split
calculation"; Michelsen & Mollerup 2007, ch. 10)::

    g_i(v) = ln(y_i phi_i^V) - ln(x_i phi_i^L)
    dg_i/dv_j = [delta_ij / y_i - 1 + Phi^V_ij] / V + [delta_ij / x_i - 1 + Phi^L_ij] / L

where ``Phi_ij = n d(ln phi_i)/dn_j``. The Newton system is scaled symmetrically by
``sqrt(v_i l_i / z_i)`` and each step is shortened to keep ``0 < v_i < z_i`` and halved while it
raises the Gibbs energy.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from ._cubic import CubicModel, PhaseState, ln_phi_derivatives, phase_state
from ._rachford_rice import RachfordRiceStatus, rachford_rice
from ._result import FlashStatus

__all__ = ["SplitResult", "two_phase_split"]

TOL_RESIDUAL = 1e-10  # max |ln f_i^V - ln f_i^L| of a converged cell
TOL_BALANCE = 1e-12  # material balance of a converged cell
_NEWTON_TARGET = 1e-12  # Newton keeps going below TOL_RESIDUAL while it still gains
_SWITCH_RESIDUAL = 1e-5  # substitution hands over to Newton below this residual...
_SWITCH_AFTER = 25  # ...or after this many substitution steps
_GDEM_EVERY = 5
_TRIVIAL_LNK = 1e-5  # max |ln K| below this: the phases have become identical
_MAX_SS = 200
_MAX_NEWTON = 40
_WARM_MAX_SS = 20  # a warm start that has not reached Newton by then is abandoned


@dataclass(frozen=True, eq=False)
class SplitResult:
    """Two-phase split outcome, one entry per cell (fields as in :class:`FlashResult`)."""

    status: NDArray[np.int8]
    beta: NDArray[np.float64]
    x: NDArray[np.float64]
    y: NDArray[np.float64]
    ln_k: NDArray[np.float64]
    z_liquid: NDArray[np.float64]
    z_vapour: NDArray[np.float64]
    iterations: NDArray[np.int32]
    residual: NDArray[np.float64]
    material_balance: NDArray[np.float64]
    gibbs: NDArray[np.float64]


@dataclass(eq=False)
class _Eval:
    beta: np.ndarray
    x: np.ndarray
    y: np.ndarray
    liq: PhaseState
    vap: PhaseState
    residual: np.ndarray
    ln_k_next: np.ndarray
    gibbs: np.ndarray
    rr_ok: np.ndarray


def _xlogx_sum(frac, ln_phi, present):
    with np.errstate(divide="ignore", invalid="ignore"):
        t = np.where(present, frac * (np.log(np.where(present, frac, 1.0)) + ln_phi), 0.0)
    return t.sum(axis=1)


def _evaluate_phases(model, sa, bi, z, present, beta, x, y, ln_k_for_residual=None):
    liq = phase_state(model, x, sa, bi)
    vap = phase_state(model, y, sa, bi)
    ln_k_next = liq.ln_phi - vap.ln_phi
    with np.errstate(divide="ignore", invalid="ignore"):
        if ln_k_for_residual is None:
            ln_k_for_residual = np.log(np.where(present, y, 1.0) / np.where(present, x, 1.0))
        r = np.where(present, ln_k_for_residual - ln_k_next, 0.0)
        residual = np.max(np.abs(r), axis=1)
        gibbs = beta * _xlogx_sum(y, vap.ln_phi, present) + (1.0 - beta) * _xlogx_sum(
            x, liq.ln_phi, present
        )
    return liq, vap, ln_k_next, residual, gibbs


def _evaluate_lnk(model, sa, bi, z, present, ln_k):
    """Phase compositions from ln K via Rachford-Rice (negative flash allowed), then the EOS."""
    k = np.exp(ln_k)
    rr = rachford_rice(k, z)
    beta = rr.beta
    below = rr.status == RachfordRiceStatus.ALL_K_BELOW_ONE
    above = rr.status == RachfordRiceStatus.ALL_K_ABOVE_ONE
    beta = np.where(below, 0.0, np.where(above, 1.0, beta))
    with np.errstate(invalid="ignore", over="ignore", divide="ignore"):
        x = z / (1.0 + beta[:, None] * (k - 1.0))
        x = np.where(above[:, None], z / k, x)
        y = k * x
        x = x / x.sum(axis=1, keepdims=True)
        y = y / y.sum(axis=1, keepdims=True)
    liq, vap, ln_k_next, residual, gibbs = _evaluate_phases(
        model, sa, bi, z, present, beta, x, y, ln_k_for_residual=ln_k
    )
    rr_ok = ~(below | above) & (rr.status == RachfordRiceStatus.CONVERGED)
    return _Eval(beta, x, y, liq, vap, residual, ln_k_next, gibbs, rr_ok)


def two_phase_split(
    model: CubicModel,
    sqrt_a: NDArray[np.float64],
    b_i: NDArray[np.float64],
    z: NDArray[np.float64],
    ln_k0: NDArray[np.float64],
    *,
    warm: bool = False,
) -> SplitResult:
    """Converge the two-phase split of every cell from initial ``ln K``.

    Parameters
    ----------
    model : CubicModel
    sqrt_a, b_i : ndarray, shape (n, nc)
        Reduced EOS parameters (:func:`reduced_parameters`).
    z : ndarray, shape (n, nc)
        Feed mole fractions.
    ln_k0 : ndarray, shape (n, nc)
        Initial ln K-values (from a stability test, or a neighbour's converged answer).
    warm : bool
        A warm start: give up early (status ``NO_TWO_PHASE_ROOT`` or ``MAX_ITERATIONS``) when the
        iteration leaves the two-phase region or does not approach convergence, so that the
        caller can fall back to a full stability test.

    Returns
    -------
    SplitResult
    """
    n, nc = z.shape
    present = z > 0.0
    status = np.full(n, FlashStatus.MAX_ITERATIONS, dtype=np.int8)
    iterations = np.zeros(n, dtype=np.int32)
    out_beta = np.full(n, np.nan)
    out_x = np.full((n, nc), np.nan)
    out_y = np.full((n, nc), np.nan)
    out_lnk = np.full((n, nc), np.nan)
    out_zl = np.full(n, np.nan)
    out_zv = np.full(n, np.nan)
    out_res = np.full(n, np.nan)
    out_mb = np.full(n, np.nan)
    out_g = np.full(n, np.nan)

    def store(idx, ev_beta, ev_x, ev_y, liq, vap, residual, gibbs, ln_k, code):
        out_beta[idx] = ev_beta
        out_x[idx] = ev_x
        out_y[idx] = ev_y
        out_zl[idx] = liq.z
        out_zv[idx] = vap.z
        out_res[idx] = residual
        out_g[idx] = gibbs
        out_lnk[idx] = ln_k
        zz = z[idx]
        with np.errstate(invalid="ignore"):
            mb = np.maximum(
                np.abs(np.sum(ev_y - ev_x, axis=1)),
                np.max(np.abs(zz - (1.0 - ev_beta)[:, None] * ev_x - ev_beta[:, None] * ev_y), axis=1),
            )
        out_mb[idx] = mb
        status[idx] = code

    # ---- successive substitution with GDEM ----
    ln_k = np.array(ln_k0, dtype=float, copy=True)
    prev = np.zeros_like(ln_k)
    plain_next = np.zeros_like(ln_k)
    gibbs_prev = np.full(n, np.inf)
    accelerated = np.zeros(n, dtype=bool)
    to_newton = np.zeros(n, dtype=bool)
    active = np.arange(n)
    max_ss = _WARM_MAX_SS if warm else _MAX_SS
    for it in range(1, max_ss + 1):
        if active.size == 0:
            break
        zz, pres = z[active], present[active]
        lk = ln_k[active]
        ev = _evaluate_lnk(model, sqrt_a[active], b_i[active], zz, pres, lk)
        iterations[active] = it
        inside = ev.rr_ok & (ev.beta > 0.0) & (ev.beta < 1.0)

        # GDEM safeguard: an accelerated step that raised the Gibbs energy is replaced by the
        # plain substitution step it was extrapolated from.
        acc = accelerated[active]
        worse = acc & inside & (ev.gibbs > gibbs_prev[active] + 1e-12 * np.abs(gibbs_prev[active]))
        if worse.any():
            redo = active[worse]
            ev_r = _evaluate_lnk(model, sqrt_a[redo], b_i[redo], z[redo], present[redo], plain_next[redo])
            ln_k[redo] = plain_next[redo]
            lk = ln_k[active]
            _merge(ev, ev_r, worse)
            inside = ev.rr_ok & (ev.beta > 0.0) & (ev.beta < 1.0)
        accelerated[active] = False

        finite = np.isfinite(ev.residual) & np.isfinite(ev.beta) & np.all(np.isfinite(ev.ln_k_next), axis=1)
        lk_present = np.where(pres, lk, 0.0)
        trivial = finite & (np.max(np.abs(lk_present), axis=1) < _TRIVIAL_LNK)
        converged = finite & ~trivial & inside & (ev.residual < TOL_RESIDUAL)
        switch = finite & ~trivial & ~converged & inside & (
            (ev.residual < _SWITCH_RESIDUAL) | (it >= _SWITCH_AFTER)
        )
        outside = finite & ~trivial & ~converged & ~switch & ~inside
        give_up = np.zeros_like(finite)
        if warm and it >= 3:
            give_up = outside
        bad = ~finite

        ln_k_final = np.where(pres, np.log(np.where(pres, ev.y, 1.0) / np.where(pres, ev.x, 1.0)), ev.ln_k_next)
        for mask, code in (
            (converged, FlashStatus.CONVERGED),
            (trivial, FlashStatus.TRIVIAL_SOLUTION),
            (give_up, FlashStatus.NO_TWO_PHASE_ROOT),
            (bad, FlashStatus.ROOT_FAILURE),
        ):
            if mask.any():
                idx = active[mask]
                store(idx, ev.beta[mask], ev.x[mask], ev.y[mask], _sub(ev.liq, mask), _sub(ev.vap, mask),
                      ev.residual[mask], ev.gibbs[mask], ln_k_final[mask], code)
        if switch.any():
            idx = active[switch]
            to_newton[idx] = True
            store(idx, ev.beta[switch], ev.x[switch], ev.y[switch], _sub(ev.liq, switch),
                  _sub(ev.vap, switch), ev.residual[switch], ev.gibbs[switch], ln_k_final[switch],
                  FlashStatus.MAX_ITERATIONS)

        keep = ~(converged | trivial | give_up | bad | switch)
        if it == max_ss:
            # Out of substitution steps: record the last state as not converged.
            if keep.any():
                idx = active[keep]
                store(idx, ev.beta[keep], ev.x[keep], ev.y[keep], _sub(ev.liq, keep), _sub(ev.vap, keep),
                      ev.residual[keep], ev.gibbs[keep], ln_k_final[keep],
                      np.where(outside[keep], FlashStatus.NO_TWO_PHASE_ROOT, FlashStatus.MAX_ITERATIONS))
            break
        idx = active[keep]
        nxt = ev.ln_k_next[keep]
        cur = lk[keep]
        gibbs_prev[idx] = np.where(inside[keep], ev.gibbs[keep], np.inf)
        if it % _GDEM_EVERY == 0 and it >= 3:
            acc_step = _gdem(nxt, cur, prev[idx])
            changed = np.any(acc_step != nxt, axis=1) & inside[keep]
            plain_next[idx] = nxt
            accelerated[idx] = changed
            nxt = np.where(changed[:, None], acc_step, nxt)
        prev[idx] = cur
        ln_k[idx] = nxt
        active = idx

    # ---- Newton on the fugacity residual in vapour mole numbers ----
    newton_idx = np.flatnonzero(to_newton)
    if newton_idx.size:
        _newton(model, sqrt_a, b_i, z, present, newton_idx, iterations, store,
                out_beta, out_x, out_y, out_res, out_g, warm)

    return SplitResult(
        status=status, beta=out_beta, x=out_x, y=out_y, ln_k=out_lnk, z_liquid=out_zl,
        z_vapour=out_zv, iterations=iterations, residual=out_res, material_balance=out_mb,
        gibbs=out_g,
    )


def _sub(state: PhaseState, mask) -> PhaseState:
    return PhaseState(z=state.z[mask], ln_phi=state.ln_phi[mask], a=state.a[mask], b=state.b[mask],
                      psi=state.psi[mask])


def _merge(ev: _Eval, other: _Eval, mask) -> None:
    for name in ("beta", "x", "y", "residual", "ln_k_next", "gibbs", "rr_ok"):
        getattr(ev, name)[mask] = getattr(other, name)
    for ph in ("liq", "vap"):
        a, b = getattr(ev, ph), getattr(other, ph)
        for f in ("z", "ln_phi", "a", "b", "psi"):
            getattr(a, f)[mask] = getattr(b, f)


def _gdem(x_new, x_cur, x_prev):
    d1 = x_new - x_cur
    d0 = x_cur - x_prev
    num = np.sum(d1 * d1, axis=1)
    den = np.sum(d0 * d1, axis=1)
    with np.errstate(divide="ignore", invalid="ignore"):
        lam = num / den
    ok = np.isfinite(lam) & (lam > 0.0) & (lam < 0.95)
    factor = np.where(ok, lam / (1.0 - lam), 0.0)
    return x_new + factor[:, None] * d1


def _newton(model, sqrt_a, b_i, z, present, idx0, iterations, store, out_beta, out_x, out_y,
            out_res, out_g, warm):
    nc = z.shape[1]
    eye = np.eye(nc)
    v = out_beta[idx0, None] * out_y[idx0]
    v = np.where(present[idx0], v, 0.0)
    best_res = out_res[idx0].copy()
    gibbs = out_g[idx0].copy()
    active = np.arange(idx0.size)
    stall = np.zeros(idx0.size, dtype=np.int8)
    vv = v
    for _ in range(_MAX_NEWTON):
        if active.size == 0:
            break
        cells = idx0[active]
        zz, pres = z[cells], present[cells]
        sa, bi = sqrt_a[cells], b_i[cells]
        va = vv[active]
        la = zz - va
        vsum = va.sum(axis=1)
        lsum = la.sum(axis=1)
        y = va / vsum[:, None]
        x = la / lsum[:, None]
        liq, vap, ln_k_next, residual, g_now = _evaluate_phases(model, sa, bi, zz, pres, vsum, x, y)
        iterations[cells] += 1
        finite = np.isfinite(residual)
        # Stalled (no longer gaining) or reached the target: stop.
        improving = residual < 0.5 * best_res[active]
        stall[active] = np.where(improving, 0, stall[active] + 1)
        best_res[active] = np.fmin(best_res[active], residual)
        done = ~finite | (residual < _NEWTON_TARGET) | (stall[active] >= 3)
        # Record every evaluated state that is the best so far.
        better = finite & (residual <= best_res[active])
        if better.any():
            m = better
            ln_k = np.where(pres[m], np.log(np.where(pres[m], y[m], 1.0) / np.where(pres[m], x[m], 1.0)),
                            ln_k_next[m])
            code = np.where(residual[m] < TOL_RESIDUAL, FlashStatus.CONVERGED, FlashStatus.MAX_ITERATIONS)
            store(cells[m], vsum[m], x[m], y[m], _sub(liq, m), _sub(vap, m), residual[m], g_now[m],
                  ln_k, code)
        keep = ~done
        if not keep.any():
            break
        k = keep
        c = cells[k]
        dl = ln_phi_derivatives(model, _sub(liq, k), sa[k], bi[k])
        dv = ln_phi_derivatives(model, _sub(vap, k), sa[k], bi[k])
        pk = pres[k]
        xk, yk = x[k], y[k]
        vk, lk = vsum[k][:, None], lsum[k][:, None]
        with np.errstate(divide="ignore", invalid="ignore"):
            diag = np.where(pk, 1.0 / (vk * np.where(pk, yk, 1.0)) + 1.0 / (lk * np.where(pk, xk, 1.0)), 1.0)
        jac = (dv - 1.0) / vk[:, :, None] + (dl - 1.0) / lk[:, :, None]
        jac = jac * (pk[:, :, None] & pk[:, None, :])
        jac = jac + diag[:, :, None] * eye
        grad = np.where(pk, np.log(np.where(pk, yk, 1.0)) + vap.ln_phi[k]
                        - np.log(np.where(pk, xk, 1.0)) - liq.ln_phi[k], 0.0)
        with np.errstate(invalid="ignore", divide="ignore"):
            scale = np.where(pk, np.sqrt(np.where(pk, va[k] * la[k] / np.where(pk, zz[k], 1.0), 1.0)), 1.0)
        js = scale[:, :, None] * jac * scale[:, None, :]
        try:
            step = -np.linalg.solve(js, (scale * grad)[:, :, None])[:, :, 0] * scale
        except np.linalg.LinAlgError:
            step = np.full_like(grad, np.nan)
        # Keep 0 < v_i < z_i.
        with np.errstate(divide="ignore", invalid="ignore"):
            lim_lo = np.where(pk & (step < 0.0), va[k] / -step, np.inf)
            lim_hi = np.where(pk & (step > 0.0), la[k] / step, np.inf)
        tau = np.minimum(1.0, 0.95 * np.minimum(lim_lo.min(axis=1), lim_hi.min(axis=1)))
        step = np.where(np.isfinite(step), step, 0.0)
        new_v = va[k] + tau[:, None] * step
        # Halve steps that raise the Gibbs energy (checked on the next evaluation cheaply).
        new_v = _gibbs_line_search(model, sa[k], bi[k], zz[k], pk, va[k], new_v, g_now[k])
        vv[active[k]] = new_v
        active = active[k]


def _gibbs_line_search(model, sa, bi, z, present, v_old, v_new, g_old, max_halvings=4):
    v = v_new
    todo = np.arange(v.shape[0])
    for _ in range(max_halvings):
        if todo.size == 0:
            break
        vt = v[todo]
        lt = z[todo] - vt
        vs, ls = vt.sum(axis=1), lt.sum(axis=1)
        x = lt / ls[:, None]
        y = vt / vs[:, None]
        liq = phase_state(model, x, sa[todo], bi[todo])
        vap = phase_state(model, y, sa[todo], bi[todo])
        g = vs * _xlogx_sum(y, vap.ln_phi, present[todo]) + ls * _xlogx_sum(x, liq.ln_phi, present[todo])
        worse = ~(g <= g_old[todo] + 1e-10 * np.maximum(1.0, np.abs(g_old[todo])))
        if not worse.any():
            break
        w = todo[worse]
        v[w] = 0.5 * (v[w] + v_old[w])
        todo = w
    return v
