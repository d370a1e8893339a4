"""Batch isothermal (PT) flash: stability test, two-phase split, phase properties."""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike, NDArray

from .._errors import InputError
from ._cubic import phase_state, reduced_parameters
from ._mixture import Mixture
from ._properties import phase_properties, single_phase_label, wilson_ln_k
from ._result import FlashResult, FlashStatus, PhaseLabel
from ._split import SplitResult, newton_split, two_phase_split
from ._stability import stability_test

__all__ = ["flash"]

_SUM_TOL = 1e-6  # feed fractions must sum to 1 within this
_GIBBS_TOL = 1e-10  # a split may not raise the Gibbs energy (per mole, / RT) by more than this
_MAX_LISTED = 5  # bad-cell indices quoted in an error message


def flash(
    mixture: Mixture,
    pressure: ArrayLike,
    temperature: ArrayLike,
    z: ArrayLike,
    *,
    k_init: ArrayLike | None = None,
) -> FlashResult:
    """Isothermal two-phase flash of a batch of cells.

    Parameters
    ----------
    mixture : Mixture
    pressure : float or array_like, shape (n,)
        Pa.
    temperature : float or array_like, shape (n,)
        K.
    z : array_like, shape (n, nc) or (nc,)
        Feed mole fractions; each row must sum to 1 within 1e-6 (it is then normalised exactly).
        Components may be exactly zero.
    k_init : array_like, shape (n, nc) or (nc,), optional
        Warm-start K-values, e.g. a neighbouring cell's converged answer. Rows containing NaN are
        started cold. A warm-started split that converges to a non-trivial two-phase answer is
        accepted without a stability test; otherwise the cell is solved exactly as without
        ``k_init``.

    Returns
    -------
    FlashResult

    Raises
    ------
    InputError
        (a ``ValueError``) naming the argument, the number of bad cells and the first indices:
        non-positive or non-finite pressure, non-finite or non-positive temperature, negative or
        non-finite fractions, rows not summing to 1, shape mismatches, non-positive K-values.

    Notes
    -----
    Every cell is first tested for stability by Michelsen's tangent-plane-distance method
    (:mod:`gridflash.thermo._stability`); unstable feeds are split into two phases by successive
    substitution with GDEM acceleration and a Newton finish (:mod:`gridflash.thermo._split`).
    A cell is ``converged`` when its fugacity residual is below 1e-10 and its material balance
    below 1e-12; otherwise its ``status`` says why.

    Examples
    --------
    >>> import gridflash
    >>> mix = gridflash.Mixture(["C1", "nC4"])
    >>> r = gridflash.flash(mix, 5e6, 300.0, [0.5, 0.5])
    >>> int(r.phase_count[0]), bool(r.converged[0])
    (2, True)
    """
    if not isinstance(mixture, Mixture):
        raise InputError(f"mixture must be a gridflash.Mixture, got {type(mixture).__name__}")
    p, t, zz, k0 = _validate(mixture, pressure, temperature, z, k_init)
    return _flash_arrays(mixture, p, t, zz, k0)


def _bad_cells(name: str, mask: NDArray[np.bool_], what: str) -> InputError:
    idx = np.flatnonzero(mask)
    listed = ", ".join(str(i) for i in idx[:_MAX_LISTED])
    more = ", ..." if idx.size > _MAX_LISTED else ""
    return InputError(f"{name}: {idx.size} cell(s) {what} (first indices: {listed}{more})")


def _validate(mixture, pressure, temperature, z, k_init):
    nc = mixture.n_components
    try:
        zz = np.asarray(z, dtype=float)
    except (TypeError, ValueError):
        raise InputError(f"z must be an array of mole fractions, got {type(z).__name__}") from None
    if zz.ndim == 1:
        zz = zz[None, :]
    if zz.ndim != 2 or zz.shape[1] != nc:
        raise InputError(
            f"z has shape {np.shape(z)}, expected (n, {nc}) or ({nc},) for the mixture's "
            f"{nc} components ({', '.join(mixture.names)})"
        )
    try:
        p = np.asarray(pressure, dtype=float)
        t = np.asarray(temperature, dtype=float)
    except (TypeError, ValueError):
        raise InputError("pressure and temperature must be numbers or arrays of numbers") from None
    for name, arr in (("pressure", p), ("temperature", t)):
        if arr.ndim > 1:
            raise InputError(f"{name} must be a scalar or a 1-D array, got shape {arr.shape}")
    n = max(zz.shape[0], p.size if p.ndim else 1, t.size if t.ndim else 1)
    shapes = {"z rows": zz.shape[0], "pressure": p.size if p.ndim else 1,
              "temperature": t.size if t.ndim else 1}
    for name, size in shapes.items():
        if size not in (1, n):
            raise InputError(
                f"shape mismatch: {', '.join(f'{k} has {v}' for k, v in shapes.items())}; "
                "each must be 1 or the common number of cells"
            )
    p = np.broadcast_to(p, (n,)).astype(float)
    t = np.broadcast_to(t, (n,)).astype(float)
    zz = np.broadcast_to(zz, (n, nc)).astype(float)

    bad = ~np.isfinite(p) | (p <= 0.0)
    if bad.any():
        raise _bad_cells("pressure", bad, "are not finite and positive (Pa)")
    bad = ~np.isfinite(t) | (t <= 0.0)
    if bad.any():
        raise _bad_cells("temperature", bad, "are not finite and positive (K)")
    bad = np.any(~np.isfinite(zz), axis=1)
    if bad.any():
        raise _bad_cells("z", bad, "hold NaN or infinite fractions")
    bad = np.any(zz < 0.0, axis=1)
    if bad.any():
        raise _bad_cells("z", bad, "hold negative fractions")
    sums = zz.sum(axis=1)
    bad = np.abs(sums - 1.0) > _SUM_TOL
    if bad.any():
        raise _bad_cells("z", bad, f"do not sum to 1 within {_SUM_TOL:g}")
    zz = zz / sums[:, None]

    k0 = None
    if k_init is not None:
        try:
            k0 = np.asarray(k_init, dtype=float)
        except (TypeError, ValueError):
            raise InputError("k_init must be an array of K-values") from None
        if k0.ndim == 1:
            k0 = k0[None, :]
        if k0.ndim != 2 or k0.shape[1] != nc or k0.shape[0] not in (1, n):
            raise InputError(f"k_init has shape {np.shape(k_init)}, expected ({n}, {nc}) or ({nc},)")
        k0 = np.broadcast_to(k0, (n, nc)).astype(float)
        given = np.all(np.isfinite(k0), axis=1)
        bad = given & np.any(k0 <= 0.0, axis=1)
        bad |= np.any(np.isinf(k0), axis=1)
        if bad.any():
            raise _bad_cells("k_init", bad, "hold non-positive or infinite K-values")
    return p, t, zz, k0


def _flash_arrays(mixture: Mixture, p, t, z, k0) -> FlashResult:
    n, nc = z.shape
    model = mixture.model
    sqrt_a, b_i = reduced_parameters(model, p, t)
    feed = phase_state(model, z, sqrt_a, b_i)
    present = z > 0.0

    status = np.full(n, FlashStatus.CONVERGED, dtype=np.int8)
    phase_count = np.ones(n, dtype=np.int8)
    beta = np.full(n, np.nan)
    x = np.full((n, nc), np.nan)
    y = np.full((n, nc), np.nan)
    ln_k = np.full((n, nc), np.nan)
    z_liq = np.full(n, np.nan)
    z_vap = np.full(n, np.nan)
    iterations = np.zeros(n, dtype=np.int32)
    stab_iters = np.zeros(n, dtype=np.int32)
    residual = np.zeros(n)
    balance = np.zeros(n)
    tpd = np.full(n, np.nan)
    gibbs_split = np.full(n, np.nan)

    feed_ok = np.isfinite(feed.z) & np.all(np.isfinite(feed.ln_phi), axis=1)
    status[~feed_ok] = FlashStatus.ROOT_FAILURE

    def take(cells, sp: SplitResult, mask):
        c = cells[mask]
        beta[c] = sp.beta[mask]
        x[c] = sp.x[mask]
        y[c] = sp.y[mask]
        ln_k[c] = sp.ln_k[mask]
        z_liq[c] = sp.z_liquid[mask]
        z_vap[c] = sp.z_vapour[mask]
        residual[c] = sp.residual[mask]
        balance[c] = sp.material_balance[mask]
        gibbs_split[c] = sp.gibbs[mask]
        status[c] = sp.status[mask]
        phase_count[c] = 2

    # Warm start: split straight from the given K-values.
    cold = feed_ok.copy()
    if k0 is not None:
        warm_cells = np.flatnonzero(feed_ok & np.all(np.isfinite(k0), axis=1))
        if warm_cells.size:
            sp = two_phase_split(model, sqrt_a[warm_cells], b_i[warm_cells], z[warm_cells],
                                 np.log(k0[warm_cells]), warm=True)
            iterations[warm_cells] += sp.iterations
            ok = _good_split(sp)
            take(warm_cells, sp, ok)
            cold[warm_cells[ok]] = False

    # Cold path: stability test, then split of the unstable feeds.
    cold_cells = np.flatnonzero(cold)
    if cold_cells.size:
        c = cold_cells
        ln_kw = wilson_ln_k(model.tc, model.pc, model.omega, p[c], t[c])
        st = stability_test(model, sqrt_a[c], b_i[c], z[c], feed.ln_phi[c], ln_kw)
        stab_iters[c] = st.iterations
        iterations[c] += st.iterations
        tpd[c] = st.tpd
        stable = st.stable
        status[c[stable & ~st.conclusive]] = np.where(
            st.root_failure[stable & ~st.conclusive], FlashStatus.ROOT_FAILURE,
            FlashStatus.MAX_ITERATIONS,
        )
        unstable_cells = c[~stable]
        if unstable_cells.size:
            u = unstable_cells
            sp = two_phase_split(model, sqrt_a[u], b_i[u], z[u], st.ln_k_seed[~stable])
            iterations[u] += sp.iterations
            ok = _good_split(sp)
            take(u, sp, np.ones(u.size, dtype=bool))
            failed = u[~ok]
            if failed.size:
                # Where substitution failed, minimise the Gibbs energy directly from the
                # stability test's trial phase, iterated to its stationary point.
                fb = _gibbs_descent(model, sqrt_a[failed], b_i[failed], z[failed],
                                    feed.ln_phi[failed], ln_kw[np.isin(c, failed)])
                iterations[failed] += fb.iterations
                ok2 = _good_split(fb)
                take(failed, fb, ok2)
                still = failed[~ok2]
                status[still] = np.where(status[still] == FlashStatus.CONVERGED,
                                         FlashStatus.NO_TWO_PHASE_ROOT, status[still])

    # Gibbs energy of every converged split must not exceed the feed's.
    two = phase_count == 2
    with np.errstate(divide="ignore", invalid="ignore"):
        g_feed = np.sum(np.where(present, z * (np.log(np.where(present, z, 1.0)) + feed.ln_phi), 0.0), axis=1)
    worse = two & (status == FlashStatus.CONVERGED) & (gibbs_split > g_feed + _GIBBS_TOL)
    status[worse] = FlashStatus.GIBBS_INCREASE

    # Vapour is the phase of larger Z (larger molar volume at the same P and T).
    swap = two & (z_vap < z_liq)
    if swap.any():
        beta[swap] = 1.0 - beta[swap]
        x[swap], y[swap] = y[swap].copy(), x[swap].copy()
        z_liq[swap], z_vap[swap] = z_vap[swap].copy(), z_liq[swap].copy()
        ln_k[swap] = -ln_k[swap]

    # Single-phase cells.
    one = ~two
    label = np.full(n, PhaseLabel.TWO_PHASE, dtype=np.int8)
    if one.any():
        label[one] = single_phase_label(mixture.tc, mixture.vc, z[one], t[one])
        vap_like = one & (label == PhaseLabel.VAPOUR_LIKE)
        liq_like = one & (label == PhaseLabel.LIQUID_LIKE)
        beta[vap_like] = 1.0
        beta[liq_like] = 0.0
        y[vap_like] = z[vap_like]
        x[liq_like] = z[liq_like]
        z_vap[vap_like] = feed.z[vap_like]
        z_liq[liq_like] = feed.z[liq_like]
        ln_k[one] = np.nan
        residual[one] = 0.0
        balance[one] = 0.0

    converged = status == FlashStatus.CONVERGED
    liquid = phase_properties(mixture, p, t, x, z_liq)
    vapour = phase_properties(mixture, p, t, y, z_vap)
    return FlashResult(
        phase_count=phase_count,
        vapour_fraction=beta,
        x=x,
        y=y,
        K=np.exp(ln_k),
        converged=converged,
        status=status,
        iterations=iterations,
        stability_iterations=stab_iters,
        residual=residual,
        material_balance=balance,
        phase_label=label,
        tpd=tpd,
        liquid=liquid,
        vapour=vapour,
    )


def _gibbs_descent(model, sqrt_a, b_i, z, ln_phi_z, ln_kw) -> SplitResult:
    """Split from the most negative stationary point of tm, by robust Newton on the Gibbs energy.

    The initial vapour mole numbers are ``beta w`` for the trial phase ``w`` with the lowest
    ``tm``, with ``beta`` chosen from a few candidates by the lowest Gibbs energy (Michelsen &
    Mollerup 2007, ch. 10: a negative tangent-plane distance guarantees a lower-Gibbs split
    with a small amount of the trial phase).
    """
    st = stability_test(model, sqrt_a, b_i, z, ln_phi_z, ln_kw, early_exit=False)
    which = np.argmin(np.nan_to_num(st.trial_tm, nan=np.inf), axis=0)
    w = np.where((which == 0)[:, None], st.trials[0], st.trials[1])
    present = z > 0.0
    best_v = None
    best_g = np.full(z.shape[0], np.inf)
    for frac in (0.01, 0.05, 0.2, 0.4, 0.6, 0.8, 0.95):
        v = np.where(present, np.minimum(frac * w, (1.0 - 1e-6) * z), 0.0)
        v = np.where(np.isfinite(v), v, 0.5 * z)
        from ._split import _evaluate_v  # noqa: PLC0415

        ev = _evaluate_v(model, sqrt_a, b_i, z, present, v)
        g = np.where(np.isfinite(ev.gibbs), ev.gibbs, np.inf)
        better = g < best_g
        best_v = v if best_v is None else np.where(better[:, None], v, best_v)
        best_g = np.where(better, g, best_g)
    res = newton_split(model, sqrt_a, b_i, z, best_v, robust=True)
    object.__setattr__(res, "iterations", res.iterations + st.iterations)
    return res


def _good_split(sp: SplitResult) -> NDArray[np.bool_]:
    return (sp.status == FlashStatus.CONVERGED) & (sp.beta > 0.0) & (sp.beta < 1.0)

