"""Two-phase isothermal split on batches of cells.

Successive substitution on ``ln K`` (``ln K_i <- ln phi_i^L - ln phi_i^V``, with the vapour fraction
from Rachford-Rice at every step) accelerated by the Crowe-Nishio dominant-eigenvalue method (GDEM)
and safeguarded by the Gibbs energy, then a Newton finish that minimises the Gibbs energy in the
vapour mole numbers ``v_i`` (Michelsen, Fluid Phase Equilib. 9 (1982) 21, "Part II. Phase-split
calculation"; Michelsen & Mollerup 2007, ch. 10)::

    g_i(v) = ln(y_i phi_i^V) - ln(x_i phi_i^L)          (the gradient of G / RT)
    dg_i/dv_j = [delta_ij / y_i - 1 + Phi^V_ij] / V + [delta_ij / x_i - 1 + Phi^L_ij] / L

where ``Phi_ij = n d(ln phi_i)/dn_j``. The Newton system is scaled symmetrically by
``sqrt(v_i l_i / z_i)``; each step is shortened to keep ``0 < v_i < z_i`` and halved while it
raises the Gibbs energy. In the robust mode the scaled Hessian is shifted to be positive definite,
which turns the Newton iteration into a descent method that reaches a Gibbs-energy minimum from a
stability-test trial phase even where substitution collapses to the trivial solution.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from ._cubic import CubicModel, PhaseState, ln_phi_derivatives, phase_state
from ._linalg import solve_cells
from ._rachford_rice import RachfordRiceStatus, rachford_rice
from ._result import FlashStatus

__all__ = ["SplitResult", "newton_split", "split_gibbs", "two_phase_split"]

TOL_RESIDUAL = 1e-10  # max |ln f_i^V - ln f_i^L| of a converged cell
TOL_BALANCE = 1e-12  # material balance of a converged cell
_NEWTON_TARGET = 1e-12  # Newton keeps going below TOL_RESIDUAL while it still gains
_SWITCH_RESIDUAL = 1e-5  # substitution hands over to Newton below this residual...
_SWITCH_AFTER = 25  # ...or after this many substitution steps
_GDEM_EVERY = 5
_NEWTON_MIN_PHASE = 1e-6  # smallest phase amount for which substitution hands over to Newton
_TRIVIAL_LNK = 1e-5  # max |ln K| below this: the phases have become identical
_MAX_SS = 200
_MAX_NEWTON = 60
_MAX_NEWTON_ROBUST = 150
_MAX_HALVINGS = 8
_WARM_MAX_SS = 20  # a warm start that has not reached Newton by then is abandoned
_MIN_EIG = 1e-6  # robust mode: smallest eigenvalue kept in the scaled Hessian


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


class _Out:
    """Output arrays of a split, filled cell by cell."""

    def __init__(self, z: np.ndarray) -> None:
        n, nc = z.shape
        self.z = z
        self.status = np.full(n, FlashStatus.MAX_ITERATIONS, dtype=np.int8)
        self.iterations = np.zeros(n, dtype=np.int32)
        self.beta = np.full(n, np.nan)
        self.x = np.full((n, nc), np.nan)
        self.y = np.full((n, nc), np.nan)
        self.ln_k = np.full((n, nc), np.nan)
        self.z_liquid = np.full(n, np.nan)
        self.z_vapour = np.full(n, np.nan)
        self.residual = np.full(n, np.nan)
        self.balance = np.full(n, np.nan)
        self.gibbs = np.full(n, np.nan)

    def store(self, idx, ev: _Eval, mask, code) -> None:
        present = self.z[idx] > 0.0
        b, x, y = ev.beta[mask], ev.x[mask], ev.y[mask]
        self.beta[idx] = b
        self.x[idx] = x
        self.y[idx] = y
        with np.errstate(divide="ignore", invalid="ignore"):
            ln_ratio = np.log(np.where(present, y, 1.0) / np.where(present, x, 1.0))
        self.ln_k[idx] = np.where(present, ln_ratio, ev.ln_k_next[mask])
        self.z_liquid[idx] = ev.liq.z[mask]
        self.z_vapour[idx] = ev.vap.z[mask]
        self.residual[idx] = ev.residual[mask]
        self.gibbs[idx] = ev.gibbs[mask]
        with np.errstate(invalid="ignore"):
            self.balance[idx] = np.maximum(
                np.abs(np.sum(y - x, axis=1)),
                np.max(np.abs(self.z[idx] - (1.0 - b)[:, None] * x - b[:, None] * y), axis=1),
            )
        self.status[idx] = code

    def result(self) -> SplitResult:
        return SplitResult(
            status=self.status, beta=self.beta, x=self.x, y=self.y, ln_k=self.ln_k,
            z_liquid=self.z_liquid, z_vapour=self.z_vapour, iterations=self.iterations,
            residual=self.residual, material_balance=self.balance, gibbs=self.gibbs,
        )


@dataclass(eq=False)
class _Eval:
    """EOS evaluation of a trial split."""

    beta: np.ndarray
    x: np.ndarray
    y: np.ndarray
    liq: PhaseState
    vap: PhaseState
    residual: np.ndarray
    ln_k_next: np.ndarray
    gibbs: np.ndarray
    rr_ok: np.ndarray

    def take(self, mask) -> _Eval:
        return _Eval(self.beta[mask], self.x[mask], self.y[mask], _sub(self.liq, mask),
                     _sub(self.vap, mask), self.residual[mask], self.ln_k_next[mask],
                     self.gibbs[mask], self.rr_ok[mask])

    def put(self, mask, other: _Eval) -> None:
        for name in ("beta", "x", "y", "residual", "ln_k_next", "gibbs", "rr_ok"):
            getattr(self, name)[mask] = getattr(other, name)
        for ph in ("liq", "vap"):
            a, b = getattr(self, ph), getattr(other, ph)
            for f in ("z", "ln_phi", "a", "b", "psi"):
                getattr(a, f)[mask] = getattr(b, f)


def _sub(state: PhaseState, mask) -> PhaseState:
    return PhaseState(z=state.z[mask], ln_phi=state.ln_phi[mask], a=state.a[mask],
                      b=state.b[mask], psi=state.psi[mask])


def _xlogx_sum(frac, ln_phi, present):
    with np.errstate(divide="ignore", invalid="ignore"):
        t = np.where(present, frac * (np.log(np.where(present, frac, 1.0)) + ln_phi), 0.0)
    return t.sum(axis=1)


def split_gibbs(beta, x, y, ln_phi_l, ln_phi_v, present):
    """Gibbs energy of a split per mole of feed, over RT (ideal-gas reference terms dropped)."""
    return beta * _xlogx_sum(y, ln_phi_v, present) + (1.0 - beta) * _xlogx_sum(x, ln_phi_l, present)


def _evaluate(model, sa, bi, present, beta, x, y, ln_k=None) -> _Eval:
    liq = phase_state(model, x, sa, bi)
    vap = phase_state(model, y, sa, bi)
    ln_k_next = liq.ln_phi - vap.ln_phi
    with np.errstate(divide="ignore", invalid="ignore"):
        if ln_k is None:
            ln_k = np.log(np.where(present, y, 1.0) / np.where(present, x, 1.0))
        r = np.where(present, ln_k - ln_k_next, 0.0)
        residual = np.max(np.abs(r), axis=1)
        gibbs = split_gibbs(beta, x, y, liq.ln_phi, vap.ln_phi, present)
    ok = np.ones(beta.shape, dtype=bool)
    return _Eval(beta, x, y, liq, vap, residual, ln_k_next, gibbs, ok)


def _evaluate_lnk(model, sa, bi, z, present, ln_k) -> _Eval:
    """Phase compositions from ln K via Rachford-Rice (negative flash allowed), then the EOS."""
    with np.errstate(over="ignore"):
        k = np.exp(ln_k)
    rr = rachford_rice(k, z)
    below = rr.status == RachfordRiceStatus.ALL_K_BELOW_ONE
    above = rr.status == RachfordRiceStatus.ALL_K_ABOVE_ONE
    beta = np.where(below, 0.0, np.where(above, 1.0, rr.beta))
    with np.errstate(invalid="ignore", over="ignore", divide="ignore"):
        x = z / (1.0 + beta[:, None] * (k - 1.0))
        x = np.where(above[:, None], z / k, x)
        y = k * x
        x = x / x.sum(axis=1, keepdims=True)
        y = y / y.sum(axis=1, keepdims=True)
    ev = _evaluate(model, sa, bi, present, beta, x, y, ln_k=ln_k)
    ev.rr_ok = rr.status == RachfordRiceStatus.CONVERGED
    return ev


def _evaluate_v(model, sa, bi, z, present, v) -> _Eval:
    """Phase compositions from vapour mole numbers (per mole of feed), then the EOS."""
    l = z - v
    vs = v.sum(axis=1)
    ls = l.sum(axis=1)
    with np.errstate(invalid="ignore", divide="ignore"):
        y = v / vs[:, None]
        x = l / ls[:, None]
    return _evaluate(model, sa, bi, present, vs, x, y)


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
        iteration leaves the two-phase region or is slow, so that the caller falls back to a full
        stability test.

    Returns
    -------
    SplitResult
    """
    n, nc = z.shape
    present = z > 0.0
    out = _Out(z)
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
        ev = _evaluate_lnk(model, sqrt_a[active], b_i[active], zz, pres, ln_k[active])
        out.iterations[active] = it
        inside = ev.rr_ok & (ev.beta > 0.0) & (ev.beta < 1.0)

        # GDEM safeguard: an accelerated step that raised the Gibbs energy is replaced by the
        # plain substitution step it was extrapolated from.
        g_prev = gibbs_prev[active]
        worse = accelerated[active] & inside & (ev.gibbs > g_prev + 1e-12 * np.abs(g_prev))
        if worse.any():
            redo = active[worse]
            ev.put(worse, _evaluate_lnk(model, sqrt_a[redo], b_i[redo], z[redo], present[redo],
                                        plain_next[redo]))
            ln_k[redo] = plain_next[redo]
            inside = ev.rr_ok & (ev.beta > 0.0) & (ev.beta < 1.0)
        accelerated[active] = False
        lk = ln_k[active]

        finite = (np.isfinite(ev.residual) & np.isfinite(ev.beta)
                  & np.all(np.isfinite(ev.ln_k_next), axis=1))
        trivial = finite & (np.max(np.abs(np.where(pres, lk, 0.0)), axis=1) < _TRIVIAL_LNK)
        converged = finite & ~trivial & inside & (ev.residual < TOL_RESIDUAL)
        # Newton works on both phases' mole numbers; with one phase almost absent it is
        # ill-conditioned, so such splits are left to substitution (with Rachford-Rice exact).
        newton_ok = inside & (np.minimum(ev.beta, 1.0 - ev.beta) > _NEWTON_MIN_PHASE)
        switch = finite & ~trivial & ~converged & newton_ok & (
            (ev.residual < _SWITCH_RESIDUAL) | (it >= _SWITCH_AFTER)
        )
        outside = finite & ~trivial & ~converged & ~switch & ~inside
        give_up = outside if (warm and it >= 3) else np.zeros_like(outside)
        last = np.full_like(finite, it == max_ss)
        for mask, code in (
            (converged, FlashStatus.CONVERGED),
            (trivial, FlashStatus.TRIVIAL_SOLUTION),
            (give_up, FlashStatus.NO_TWO_PHASE_ROOT),
            (~finite, FlashStatus.ROOT_FAILURE),
            (switch, FlashStatus.MAX_ITERATIONS),  # provisional: Newton takes over
            (last & outside & ~give_up, FlashStatus.NO_TWO_PHASE_ROOT),
            (last & finite & ~trivial & ~converged & ~switch & ~outside, FlashStatus.MAX_ITERATIONS),
        ):
            if mask.any():
                out.store(active[mask], ev, mask, code)
        to_newton[active[switch]] = True
        keep = ~(converged | trivial | give_up | ~finite | switch | last)
        idx = active[keep]
        nxt = ev.ln_k_next[keep]
        cur = lk[keep]
        gibbs_prev[idx] = np.where(inside[keep], ev.gibbs[keep], np.inf)
        if it % _GDEM_EVERY == 0:
            acc_step = _gdem(nxt, cur, prev[idx])
            changed = np.any(acc_step != nxt, axis=1) & inside[keep]
            plain_next[idx] = nxt
            accelerated[idx] = changed
            nxt = np.where(changed[:, None], acc_step, nxt)
        prev[idx] = cur
        ln_k[idx] = nxt
        active = idx

    cells = np.flatnonzero(to_newton)
    if cells.size:
        v0 = np.where(present[cells], out.beta[cells, None] * out.y[cells], 0.0)
        nr = newton_split(model, sqrt_a[cells], b_i[cells], z[cells], v0)
        _copy_into(out, cells, nr)
    return out.result()


def _copy_into(out: _Out, cells, res: SplitResult) -> None:
    out.status[cells] = res.status
    out.iterations[cells] += res.iterations
    for name, src in (("beta", res.beta), ("x", res.x), ("y", res.y), ("ln_k", res.ln_k),
                      ("z_liquid", res.z_liquid), ("z_vapour", res.z_vapour),
                      ("residual", res.residual), ("balance", res.material_balance),
                      ("gibbs", res.gibbs)):
        getattr(out, name)[cells] = src


def _gdem(x_new, x_cur, x_prev):
    """Crowe-Nishio dominant-eigenvalue extrapolation of a fixed-point sequence."""
    d1 = x_new - x_cur
    d0 = x_cur - x_prev
    num = np.sum(d1 * d1, axis=1)
    den = np.sum(d0 * d1, axis=1)
    with np.errstate(divide="ignore", invalid="ignore"):
        lam = num / den
        ok = np.isfinite(lam) & (lam > 0.0) & (lam < 0.95)
        factor = np.where(ok, lam / (1.0 - lam), 0.0)
    return x_new + factor[:, None] * d1


def newton_split(
    model: CubicModel,
    sqrt_a: NDArray[np.float64],
    b_i: NDArray[np.float64],
    z: NDArray[np.float64],
    v0: NDArray[np.float64],
    *,
    robust: bool = False,
) -> SplitResult:
    """Minimise the Gibbs energy of the split by Newton's method in vapour mole numbers.

    Parameters
    ----------
    v0 : ndarray, shape (n, nc)
        Initial vapour mole numbers per mole of feed, ``0 < v0_i < z_i`` for present components.
    robust : bool
        Shift the scaled Hessian to be positive definite (a descent method from any start).

    Returns
    -------
    SplitResult
        ``iterations`` counts the Newton iterations (each Gibbs-energy halving included).
    """
    n, nc = z.shape
    present = z > 0.0
    out = _Out(z)
    eye = np.eye(nc)
    v = np.where(present, v0, 0.0)
    acc_v = v.copy()
    acc_g = np.full(n, np.inf)
    step = np.zeros_like(v)
    tau = np.ones(n)
    halvings = np.zeros(n, dtype=np.int8)
    best = np.full(n, np.inf)
    stall = np.zeros(n, dtype=np.int8)
    active = np.arange(n)
    max_iter = (_MAX_NEWTON_ROBUST if robust else _MAX_NEWTON) + _MAX_HALVINGS
    for _ in range(max_iter):
        if active.size == 0:
            break
        pres = present[active]
        ev = _evaluate_v(model, sqrt_a[active], b_i[active], z[active], pres, v[active])
        out.iterations[active] += 1
        finite = np.isfinite(ev.residual) & np.isfinite(ev.gibbs)
        g_ok = ev.gibbs <= acc_g[active] + 1e-12 * np.maximum(1.0, np.abs(acc_g[active]))
        accept = finite & g_ok
        # Rejected: halve the step back towards the last accepted point.
        reject = ~accept & (halvings[active] < _MAX_HALVINGS) & np.isfinite(acc_g[active])
        exhausted = ~accept & ~reject
        if reject.any():
            r = active[reject]
            halvings[r] += 1
            tau[r] *= 0.5
            v[r] = acc_v[r] + tau[r, None] * step[r]
        # Accepted points: record when best so far, test convergence.
        improving = accept & (ev.residual < 0.5 * best[active])
        stall[active] = np.where(accept, np.where(improving, 0, stall[active] + 1), stall[active])
        better = accept & (ev.residual <= best[active])
        if better.any():
            code = np.where(ev.residual[better] < TOL_RESIDUAL, FlashStatus.CONVERGED,
                            FlashStatus.MAX_ITERATIONS)
            out.store(active[better], ev, better, code)
            best[active[better]] = ev.residual[better]
        lnk = np.where(pres, np.log(np.where(pres, ev.y, 1.0) / np.where(pres, ev.x, 1.0)), 0.0)
        trivial = accept & (np.max(np.abs(lnk), axis=1) < _TRIVIAL_LNK)
        if trivial.any():
            out.store(active[trivial], ev, trivial, FlashStatus.TRIVIAL_SOLUTION)
        # "Stalled" only counts near convergence, where rounding limits further gains; far from
        # it the residual may rise while the Gibbs energy falls.
        stalled = (stall[active] >= 3) & (best[active] < 1e-8)
        done = exhausted | trivial | (accept & ((ev.residual < _NEWTON_TARGET) | stalled))
        go = accept & ~done
        if go.any():
            c = active[go]
            e = ev.take(go)
            step_c = _newton_direction(model, sqrt_a[c], b_i[c], z[c], present[c], v[c], e, eye,
                                       robust)
            vc = v[c]
            lc = z[c] - vc
            pc = present[c]
            with np.errstate(divide="ignore", invalid="ignore"):
                lim_lo = np.where(pc & (step_c < 0.0), vc / -step_c, np.inf)
                lim_hi = np.where(pc & (step_c > 0.0), lc / step_c, np.inf)
            t = np.minimum(1.0, 0.95 * np.minimum(lim_lo.min(axis=1), lim_hi.min(axis=1)))
            step_c = np.where(np.isfinite(step_c), step_c, 0.0)
            acc_v[c] = vc
            acc_g[c] = e.gibbs
            step[c] = step_c
            tau[c] = t
            halvings[c] = 0
            v[c] = vc + t[:, None] * step_c
        active = active[~done]
    return out.result()


def _newton_direction(model, sa, bi, z, present, v, ev: _Eval, eye, robust):
    dl = ln_phi_derivatives(model, ev.liq, sa, bi)
    dv = ln_phi_derivatives(model, ev.vap, sa, bi)
    vs = ev.beta[:, None]
    ls = 1.0 - vs
    x, y = ev.x, ev.y
    with np.errstate(divide="ignore", invalid="ignore"):
        diag = np.where(present, 1.0 / (vs * np.where(present, y, 1.0))
                        + 1.0 / (ls * np.where(present, x, 1.0)), 1.0)
        jac = (dv - 1.0) / vs[:, :, None] + (dl - 1.0) / ls[:, :, None]
        jac = jac * (present[:, :, None] & present[:, None, :]) + diag[:, :, None] * eye
        grad = np.where(present, np.log(np.where(present, y, 1.0)) + ev.vap.ln_phi
                        - np.log(np.where(present, x, 1.0)) - ev.liq.ln_phi, 0.0)
        l = z - v
        scale = np.where(present, np.sqrt(np.where(present, v * l / np.where(present, z, 1.0), 1.0)), 1.0)
    js = scale[:, :, None] * jac * scale[:, None, :]
    if robust:
        ok = np.all(np.isfinite(js), axis=(1, 2))
        lam_min = np.full(js.shape[0], 1.0)
        if ok.any():
            lam_min[ok] = np.linalg.eigvalsh(js[ok])[:, 0]
        shift = np.where(lam_min < _MIN_EIG, _MIN_EIG - lam_min + 1e-3, 0.0)
        js = js + shift[:, None, None] * eye
    step = -solve_cells(js, scale * grad) * scale
    return step
