"""Batch isothermal (PT) flash: stability test, split into up to three phases, certification of
the answer, phase properties."""

from __future__ import annotations

import dataclasses

import numpy as np
from numpy.typing import ArrayLike, NDArray

from .._errors import InputError
from . import kernels as _k
from ._mixture import Mixture
from ._properties import phase_properties, single_phase_label
from ._result import FlashResult, FlashStatus, PhaseKind, PhaseLabel, PhaseProperties

__all__ = ["flash"]

_SUM_TOL = 1e-6  # feed fractions must sum to 1 within this
_MAX_LISTED = 5  # bad-cell indices quoted in an error message


def flash(
    mixture: Mixture,
    pressure: ArrayLike,
    temperature: ArrayLike,
    z: ArrayLike,
    *,
    k_init: ArrayLike | None = None,
) -> FlashResult:
    """Isothermal flash (up to three phases, every answer certified) of a batch of cells.

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
        started cold. A warm-started split that converges to a non-trivial two-phase answer
        skips the feed's stability test but is certified like a cold one (see Notes);
        otherwise the cell is solved exactly as without ``k_init``.

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
    substitution with GDEM acceleration and a Newton finish (:mod:`gridflash.thermo.kernels.split`).
    Where substitution fails, the trial phase of the most negative tangent-plane distance is
    iterated to its stationary point and the Gibbs energy is minimised directly from a split
    with a small amount of it, by Newton's method on a Hessian shifted to be positive definite
    (Michelsen & Mollerup 2007, ch. 10: a negative tangent-plane distance guarantees a
    lower-Gibbs split with a small amount of the trial phase). A converged split whose Gibbs
    energy exceeds the feed's by more than 1e-10 (per mole, over RT) is flagged. The vapour is
    the phase of larger Z.

    Certification: a feed the two Wilson trials call stable gets the extended stability test
    (pure-component corner screen and near-pure trial phases, see
    :mod:`gridflash.thermo._stability`), and a converged split is tested the same way against
    the tangent plane of its phases (at equilibrium every phase has the same one, so the first
    phase's ``d_i = ln x_i + ln phi_i(x)`` stands for all). A trial phase with tangent-plane
    distance below -1e-8 means the answer is a local minimum or misses a phase: the trial
    phase is added and the split repeated by the multiphase substitution of Michelsen (1994)
    with a Newton finish on the Gibbs energy (:mod:`gridflash.thermo.kernels.multiphase`),
    which drops the phases not needed (so a wrong two-phase split becomes the right two-phase
    split, or three phases), up to three rounds. A cell is ``converged`` (status 0) when its
    fugacity residual is below 1e-10, its material balance below 1e-12 and its phases pass this
    test; a split that fails it is flagged ``NOT_CERTIFIED`` (e.g. four phases would coexist;
    at most three are computed) or ``THREE_PHASE_FAILED``, never stored as converged.

    Phases: up to three. ``y``/``vapour_fraction`` hold the phase of largest Z, ``x`` the
    liquid of larger Z, ``x2``/``second_liquid_fraction`` the liquid of smallest Z (water or a
    CO2-rich liquid are denser in moles than an oil); ``liquid_kind``, ``vapour_kind`` and
    ``second_liquid_kind`` say what each is (:class:`PhaseKind`).

    The computation of each cell is compiled (:mod:`gridflash.thermo.kernels`) and does not
    depend on the other cells of the batch.

    Examples
    --------
    >>> import gridflash
    >>> mix = gridflash.Mixture(["C1", "nC4"])
    >>> r = gridflash.flash(mix, 5e6, 300.0, [0.5, 0.5])
    >>> int(r.phase_count[0]), bool(r.converged[0])
    (2, True)
    """
    _check_mixture(mixture)
    p, t, zz, k0 = _validate(mixture, pressure, temperature, z, k_init)
    return _flash_arrays(mixture, p, t, zz, k0)


def flash_slabs(
    mixture: Mixture,
    pressure: ArrayLike,
    temperature: ArrayLike,
    z: ArrayLike,
    slab_cells: int,
    *,
    warm_start: bool = True,
) -> FlashResult:
    """Flash cells stored slab after slab, each warm-started from the previous slab.

    The cells are consecutive slabs of ``slab_cells`` cells each, cell ``j`` of one slab being
    the neighbour of cell ``j`` of the next (e.g. one pressure after another of a grid). With
    ``warm_start``, each cell after the first slab is started from the K-values of the same cell
    of the previous slab where that cell converged to two phases, exactly as :func:`flash` with
    ``k_init`` would be called slab by slab, but in one compiled call; where that cell
    converged to three phases, from its three phases. Other arguments and the
    result are those of :func:`flash`.
    """
    _check_mixture(mixture)
    if (
        isinstance(slab_cells, bool)
        or not isinstance(slab_cells, int | np.integer)
        or (slab_cells < 1)
    ):
        raise InputError(f"slab_cells={slab_cells!r} must be a positive integer")
    p, t, zz, _ = _validate(mixture, pressure, temperature, z, None)
    if zz.shape[0] % slab_cells:
        raise InputError(f"{zz.shape[0]} cells do not make whole slabs of {slab_cells}")
    return _flash_arrays(mixture, p, t, zz, None, chain=int(slab_cells) if warm_start else 0)


def _check_mixture(mixture) -> None:
    if not isinstance(mixture, Mixture):
        raise InputError(f"mixture must be a gridflash.Mixture, got {type(mixture).__name__}")


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
    shapes = {
        "z rows": zz.shape[0],
        "pressure": p.size if p.ndim else 1,
        "temperature": t.size if t.ndim else 1,
    }
    if any(size not in (1, n) for size in shapes.values()):
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
            raise InputError(
                f"k_init has shape {np.shape(k_init)}, expected ({n}, {nc}) or ({nc},)"
            )
        k0 = np.broadcast_to(k0, (n, nc)).astype(float)
        given = np.all(np.isfinite(k0), axis=1)
        bad = given & np.any(k0 <= 0.0, axis=1)
        bad |= np.any(np.isinf(k0), axis=1)
        if bad.any():
            raise _bad_cells("k_init", bad, "hold non-positive or infinite K-values")
    return p, t, zz, k0


def _flash_arrays(
    mixture: Mixture, p, t, z, k0, chain: int = 0, *, certify: bool = True
) -> FlashResult:
    """The compiled flash of validated arrays. ``certify=False`` runs the path used before
    certification existed (two Wilson trials, no test of the answer, at most two phases); it
    exists only so that benchmarks can measure what certification costs."""
    n, nc = z.shape
    model = mixture.model
    status = np.empty(n, dtype=np.int8)
    phase_count = np.empty(n, dtype=np.int8)
    beta = np.empty(n)
    x = np.empty((n, nc))
    y = np.empty((n, nc))
    ln_k = np.empty((n, nc))
    z_liq = np.empty(n)
    z_vap = np.empty(n)
    z_feed = np.empty(n)
    iterations = np.empty(n, dtype=np.int32)
    stab_iters = np.empty(n, dtype=np.int32)
    residual = np.empty(n)
    balance = np.empty(n)
    tpd = np.empty(n)
    x2 = np.empty((n, nc))
    beta2 = np.empty(n)
    z_liq2 = np.empty(n)
    cert_iters = np.empty(n, dtype=np.int32)
    use_k0 = k0 is not None
    _k.flash_batch(
        model.ac,
        model.m,
        model.b,
        model.tc,
        model.pc,
        model.omega,
        model.one_minus_k,
        model.delta1,
        model.delta2,
        np.ascontiguousarray(p),
        np.ascontiguousarray(t),
        np.ascontiguousarray(z),
        np.ascontiguousarray(k0) if use_k0 else np.empty((1, nc)),
        use_k0,
        chain,
        bool(certify),
        _trial_gates(mixture),
        status,
        phase_count,
        beta,
        x,
        y,
        ln_k,
        z_liq,
        z_vap,
        z_feed,
        iterations,
        stab_iters,
        residual,
        balance,
        tpd,
        x2,
        beta2,
        z_liq2,
        cert_iters,
    )

    # Single-phase cells: labelled, and reported as the feed in the phase of their label.
    one = phase_count == 1
    label = np.where(phase_count == 3, PhaseLabel.THREE_PHASE, PhaseLabel.TWO_PHASE)
    label = label.astype(np.int8)
    if one.any():
        label[one] = single_phase_label(mixture, p[one], t[one], z[one], z_feed[one])
        vap_like = one & (label == PhaseLabel.VAPOUR_LIKE)
        liq_like = one & (label == PhaseLabel.LIQUID_LIKE)
        beta[vap_like] = 1.0
        beta[liq_like] = 0.0
        y[vap_like] = z[vap_like]
        x[liq_like] = z[liq_like]
        z_vap[vap_like] = z_feed[vap_like]
        z_liq[liq_like] = z_feed[liq_like]
    kinds = _phase_kinds(mixture, p, t, x, y, x2, z_vap)

    liquid = phase_properties(mixture, p, t, x, z_liq)
    vapour = phase_properties(mixture, p, t, y, z_vap)
    second = _where_three(mixture, p, t, x2, z_liq2, phase_count == 3)
    return FlashResult(
        phase_count=phase_count,
        vapour_fraction=beta,
        x=x,
        y=y,
        K=np.exp(ln_k),
        converged=status == FlashStatus.CONVERGED,
        status=status,
        iterations=iterations,
        stability_iterations=stab_iters,
        residual=residual,
        material_balance=balance,
        phase_label=label,
        tpd=tpd,
        liquid=liquid,
        vapour=vapour,
        second_liquid_fraction=beta2,
        x2=x2,
        liquid_kind=kinds[0],
        vapour_kind=kinds[1],
        second_liquid_kind=kinds[2],
        certification_iterations=cert_iters,
        second_liquid=second,
    )


def _where_three(mixture: Mixture, p, t, x2, z_liq2, three) -> PhaseProperties:
    """Second-liquid properties: computed for the three-phase cells, NaN elsewhere."""
    if three.all():
        return phase_properties(mixture, p, t, x2, z_liq2)
    sub = phase_properties(mixture, p[three], t[three], x2[three], z_liq2[three])
    out = {}
    for f in dataclasses.fields(PhaseProperties):
        full = np.full(p.shape, np.nan)
        full[three] = getattr(sub, f.name)
        out[f.name] = full
    return PhaseProperties(**out)


def _trial_gates(mixture: Mixture) -> NDArray[np.float64]:
    """Corner tm below which each component gets a near-pure trial phase (see
    :mod:`gridflash.thermo._stability`): every component in a mixture with water."""
    water = "H2O" in mixture.names
    return np.full(mixture.n_components, _k.WATER_GATE if water else _k.CORNER_GATE)


def _phase_kinds(mixture: Mixture, p, t, x, y, x2, z_vap) -> tuple[NDArray[np.int8], ...]:
    """:class:`PhaseKind` of the liquid, vapour and second-liquid slots (see its docstring)."""
    names = mixture.names

    def share(comp, name):
        return comp[:, names.index(name)] if name in names else np.zeros(comp.shape[0])

    def liquid_kind(comp):
        kind = np.full(comp.shape[0], PhaseKind.HYDROCARBON_LIQUID, dtype=np.int8)
        kind[share(comp, "CO2") > 0.5] = PhaseKind.CO2_RICH_LIQUID
        kind[share(comp, "H2O") > 0.5] = PhaseKind.AQUEOUS_LIQUID
        kind[np.isnan(comp[:, 0])] = PhaseKind.ABSENT
        return kind

    vapour = liquid_kind(y)
    there = ~np.isnan(y[:, 0])
    if there.any():
        like = single_phase_label(mixture, p[there], t[there], y[there], z_vap[there])
        vapour[np.flatnonzero(there)[like == PhaseLabel.VAPOUR_LIKE]] = PhaseKind.VAPOUR
    return liquid_kind(x), vapour, liquid_kind(x2)
