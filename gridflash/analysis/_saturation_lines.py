"""Saturation lines of a table: bubble/dew pressures per (temperature, composition), cricondenbars.

For every line of a table at fixed temperature and composition, the stored phase counts along
the pressure axis show between which grid pressures the feed leaves the two-phase region. The
saturation pressure itself is not read off the grid: it is solved for between those two grid
pressures by :func:`gridflash.thermo.saturation_pressure` (bisection on the flash's own phase
count, finished by Newton's method on the incipient-phase equations and accepted only where the
flash agrees 1e-7 either side), so it is the pressure at which the table's flash changes its
answer. Along each
composition, the largest saturation pressure over temperature (the cricondenbar) is refined by a
bracketed golden-section search over temperature.

Pure numpy and the thermodynamics layer, plus reading and writing the store's arrays.
"""

from __future__ import annotations

import contextlib
import os
import warnings
from collections.abc import Iterator
from concurrent.futures import ThreadPoolExecutor
from pathlib import Path

import numpy as np
import xarray as xr
from numpy.typing import NDArray

from .._errors import StoreError
from ..store import consolidate, mixture_from_store, open_table, write_line_variables
from ..thermo import Mixture, flash, saturation_pressure

__all__ = [
    "SATURATION_VARIABLES",
    "add_saturation_lines",
    "saturation_lines",
]

#: Variables this module adds to a store.
SATURATION_VARIABLES: tuple[str, ...] = (
    "saturation_pressure",
    "saturation_kind",
    "lower_saturation_pressure",
    "lower_saturation_kind",
    "cricondenbar_pressure",
    "cricondenbar_temperature",
)

#: Relative width of the final bracket where the solver has to finish by bisection.
_RTOL = 1e-10
#: Golden-section search over temperature stops when its bracket is this narrow (K).
_T_TOL = 0.05
#: Step (fraction of the end interval) used to see which way the saturation pressure slopes at
#: an end of the temperature axis.
_END_STEP = 1e-3
#: Factor and number of steps by which a one-phase bracket end is raised when it is not.
_RAISE_FACTOR = 1.25
_MIN_LINES_PER_THREAD = 64  # below this, one thread (thread start-up would dominate)
#: Most lines solved in one call: a call flashes two cells per line at once, with every
#: intermediate array, so this bounds the step's memory on tables of any size.
_MAX_LINES_PER_CALL = 4096
_RAISE_STEPS = 20
_INV_PHI = (np.sqrt(5.0) - 1.0) / 2.0

_KIND_ATTRS = {
    "units": "1",
    "flag_values": [0, 1, 2, 3],
    "flag_meanings": "not_found bubble_point dew_point vapour_pressure",
}


def saturation_lines(
    table: xr.Dataset, *, mixture: Mixture | None = None, threads: int | None = None
) -> xr.Dataset:
    """Saturation pressures of every (temperature, composition) line and the cricondenbars.

    Parameters
    ----------
    table : xarray.Dataset
        A grid table (:func:`gridflash.open_table`) with ``phase_count`` over ``pressure`` x
        ``temperature`` x the composition dimension.
    mixture : Mixture, optional
        The fluid; default the table's own (:func:`gridflash.store.mixture_from_store`).
    threads : int, optional
        Threads to solve the lines in (default: one per core). The answers do not depend on it.

    Returns
    -------
    xarray.Dataset
        Over ``temperature`` and the composition dimension:

        - ``saturation_pressure`` (Pa), ``saturation_kind``: the **upper** boundary of the
          two-phase region, the pressure above which the feed is single-phase (bubble point of
          an oil, upper dew point of a gas condensate), solved between the highest two-phase
          grid pressure of the line and the single-phase grid pressure above it;
        - ``lower_saturation_pressure`` (Pa), ``lower_saturation_kind``: the **lower**
          boundary, where the lowest grid pressures are single-phase and the two-phase region
          starts above them (the lower dew point of a gas condensate), solved between the
          lowest two-phase grid pressure and the single-phase one below it;

        and over the composition dimension ``cricondenbar_pressure`` (Pa) and
        ``cricondenbar_temperature`` (K). Kinds: 0 not found, 1 bubble point, 2 dew point,
        3 vapour pressure of a single-component feed.

    Notes
    -----
    **Which boundaries.** The upper boundary is what a reservoir or PVT engineer calls *the*
    saturation pressure (the pressure a depletion leaves single-phase conditions at), so it is
    stored as ``saturation_pressure``; the lower boundary is stored separately because a gas
    condensate's envelope has both in a typical table. A line whose stored phase count changes
    more than twice (two-phase, single, two-phase again) has only its outermost boundaries
    stored. A line with no two-phase cell, or whose highest (lowest) grid pressure is still
    two-phase, has no upper (lower) point within the table: NaN, kind 0.

    **Single-component feeds** (a stream that is one component, at an end of a mixing line) have
    a two-phase region that is a line in the P-T plane, which a grid cannot bracket; for them
    ``saturation_pressure`` is the EOS vapour pressure (kind 3) at every temperature below the
    component's critical temperature, whether or not it lies within the table's pressures.

    **Cricondenbar.** For each composition (single-component feeds excepted: their saturation
    curve simply ends at the critical point) the grid temperature with the largest upper
    saturation pressure is found. At an interior grid temperature the maximum lies between its
    two neighbours; at an end of the temperature axis, one more saturation pressure a step
    inside the end (``1e-3`` of the end interval) shows whether the curve turns down inside the
    range (then the maximum lies in the end interval) or still rises towards the end (then the
    cricondenbar lies outside the table's temperatures: NaN). The maximum is then refined by a
    golden-section search (Kiefer, Proc. AMS 4 (1953) 502) over temperature on that bracket,
    down to 0.05 K (the pressure is flat there, so its error is of second order), every
    evaluation a :func:`~gridflash.thermo.saturation_pressure` call; the
    largest pressure evaluated (grid temperature included) is returned. Where any temperature
    of the composition is still two-phase at the top of the table, the cricondenbar lies above
    the table's pressures: NaN.
    """
    dims = _grid_dims(table)
    comp_dim = dims[2]
    mixture = mixture_from_store(table) if mixture is None else mixture
    pressure = np.asarray(table.pressure.values, dtype=float)
    temperature = np.asarray(table.temperature.values, dtype=float)
    count = np.asarray(table.phase_count.transpose(*dims).values)
    # Without the stored convergence flags every bracket is flashed again.
    converged = (np.asarray(table.converged.transpose(*dims).values, dtype=bool)
                 if "converged" in table.data_vars else np.zeros(count.shape, dtype=bool))
    feeds = np.asarray(table.feed_composition.transpose(comp_dim, "component").values, float)
    feeds = feeds / feeds.sum(axis=1, keepdims=True)
    n_p, n_t, n_c = count.shape
    lines = count.reshape(n_p, n_t * n_c)
    line_converged = converged.reshape(n_p, n_t * n_c)
    t_line = np.repeat(temperature, n_c)
    z_line = np.tile(feeds, (n_t, 1))
    pure_comp = np.sum(feeds > 0.0, axis=1) == 1
    pure = np.tile(pure_comp, n_t)

    two = lines == 2
    has_two = two.any(axis=0)
    cols = np.arange(lines.shape[1])
    k_up = n_p - 1 - np.argmax(two[::-1], axis=0)
    up_ok = has_two & (k_up < n_p - 1)
    up_ok &= lines[np.minimum(k_up + 1, n_p - 1), cols] == 1
    k_lo = np.argmax(two, axis=0)
    lo_ok = has_two & (k_lo > 0) & (lines[np.maximum(k_lo - 1, 0), cols] == 1) & ~pure

    upper_p = np.full(lines.shape[1], np.nan)
    upper_kind = np.zeros(lines.shape[1], dtype=np.int8)
    lower_p = np.full(lines.shape[1], np.nan)
    lower_kind = np.zeros(lines.shape[1], dtype=np.int8)

    # One batch: upper brackets, pure-component lines (brackets ignored), lower brackets.
    up_idx = np.flatnonzero(up_ok | pure)
    lo_idx = np.flatnonzero(lo_ok)
    inside = np.concatenate([
        np.where(pure[up_idx], pressure[0], pressure[k_up[up_idx]]), pressure[k_lo[lo_idx]]])
    outside = np.concatenate([
        np.where(pure[up_idx], pressure[-1], pressure[np.minimum(k_up[up_idx] + 1, n_p - 1)]),
        pressure[np.maximum(k_lo[lo_idx] - 1, 0)]])
    idx = np.concatenate([up_idx, lo_idx])
    # The table's own flash gave these brackets: two phases inside, one outside (see up_ok and
    # lo_ok); where both ends converged they need no second flash.
    k_in = np.concatenate([k_up[up_idx], k_lo[lo_idx]])
    k_out = np.concatenate([np.minimum(k_up[up_idx] + 1, n_p - 1), np.maximum(k_lo[lo_idx] - 1, 0)])
    known = np.concatenate([up_ok[up_idx], lo_ok[lo_idx]])
    known &= line_converged[k_in, idx] & line_converged[k_out, idx]
    if idx.size:
        p_sat, kind = _saturation_threads(
            mixture, t_line[idx], z_line[idx], inside, outside, threads, known
        )
        n_up = up_idx.size
        upper_p[up_idx], upper_kind[up_idx] = p_sat[:n_up], kind[:n_up]
        lower_p[lo_idx], lower_kind[lo_idx] = p_sat[n_up:], kind[n_up:]

    upper_p = upper_p.reshape(n_t, n_c)
    above_table = (two[-1] & ~pure).reshape(n_t, n_c).any(axis=0)
    bracket_two = np.where(up_ok, pressure[k_up], np.nan).reshape(n_t, n_c)
    bracket_one = np.where(up_ok, pressure[np.minimum(k_up + 1, n_p - 1)], np.nan)
    cb_p, cb_t = _cricondenbars(mixture, temperature, feeds, upper_p, bracket_two,
                                bracket_one.reshape(n_t, n_c), ~pure_comp & ~above_table,
                                threads)

    tc = table[comp_dim]
    coords = {"temperature": table.temperature, comp_dim: tc}
    line_dims = ("temperature", comp_dim)
    out = xr.Dataset(
        {
            "saturation_pressure": (line_dims, upper_p, {
                "units": "Pa",
                "long_name": "saturation pressure: upper boundary of the two-phase region "
                "(bubble or upper dew point), solved between the grid pressures where the "
                "stored phase count changes",
                "comment": "NaN where the line has no such change within the table; for a "
                "single-component feed the EOS vapour pressure (kind 3)"}),
            "saturation_kind": (line_dims, upper_kind.reshape(n_t, n_c), {
                **_KIND_ATTRS, "long_name": "kind of saturation point of saturation_pressure"}),
            "lower_saturation_pressure": (line_dims, lower_p.reshape(n_t, n_c), {
                "units": "Pa",
                "long_name": "lower boundary of the two-phase region (lower dew point), solved "
                "between the lowest two-phase grid pressure and the single-phase one below it",
                "comment": "NaN where the lowest grid pressures are already two-phase"}),
            "lower_saturation_kind": (line_dims, lower_kind.reshape(n_t, n_c), {
                **_KIND_ATTRS,
                "long_name": "kind of saturation point of lower_saturation_pressure"}),
            "cricondenbar_pressure": ((comp_dim,), cb_p, {
                "units": "Pa",
                "long_name": "cricondenbar: largest saturation pressure over temperature "
                "(golden-section search between grid temperatures)",
                "comment": "NaN where the maximum is not within the table's temperatures or "
                "pressures, and for single-component feeds"}),
            "cricondenbar_temperature": ((comp_dim,), cb_t, {
                "units": "K", "long_name": "temperature of the cricondenbar"}),
        },
        coords=coords,
    )
    return out


def add_saturation_lines(path: str | os.PathLike[str]) -> xr.Dataset:
    """Compute the saturation lines of an existing store and store them in it.

    Stores written by a gridflash run already have them (the run computes them at its end);
    this recomputes them, e.g. for a store made before they existed.

    Parameters
    ----------
    path : str or path-like
        A complete gridflash store with a pressure x temperature x composition grid.

    Returns
    -------
    xarray.Dataset
        The variables written (see :func:`saturation_lines`).

    Raises
    ------
    StoreError
        Not a gridflash store, an unfinished run, or a table without a grid.
    """
    store = Path(path).expanduser()
    table = open_table(store)  # the same refusals as open_table (missing, foreign, unfinished)
    try:
        if tuple(table.phase_count.dims[:2]) != ("pressure", "temperature"):
            raise StoreError(
                f"{str(store)!r} has no pressure x temperature grid (a sampled table); "
                "saturation lines need a grid"
            )
        lines = saturation_lines(table.load())
    finally:
        table.close()
    write_line_variables(store, lines)
    consolidate(store)
    return lines


# --------------------------------------------------------------------------------------------
# Helpers
# --------------------------------------------------------------------------------------------


@contextlib.contextmanager
def _quiet() -> Iterator[None]:
    with warnings.catch_warnings():
        warnings.filterwarnings("ignore", message=".*[Cc]onsolidated metadata.*")
        yield


def _grid_dims(ds: xr.Dataset) -> tuple[str, str, str]:
    if "phase_count" not in ds.data_vars:
        raise StoreError("the dataset has no 'phase_count'; give a table from gridflash.open_table")
    dims = tuple(ds.phase_count.dims)
    if len(dims) != 3 or dims[:2] != ("pressure", "temperature"):
        raise StoreError(
            f"saturation lines need a pressure x temperature x composition grid; this table's "
            f"cells are laid out along {dims!r}"
        )
    return dims  # type: ignore[return-value]


def _saturation_at(
    mixture: Mixture,
    temperature: NDArray[np.float64],
    z: NDArray[np.float64],
    p_two: NDArray[np.float64],
    p_one: NDArray[np.float64],
    threads: int | None,
) -> NDArray[np.float64]:
    """Upper saturation pressure at arbitrary temperatures, from approximate brackets.

    ``p_one`` is raised until the flash is single-phase there; where ``p_two`` is not a
    two-phase pressure the result is NaN.
    """
    p_one = p_one.copy()
    for _ in range(_RAISE_STEPS):
        r = flash(mixture, p_one, temperature, z)
        low = r.phase_count == 2
        if not low.any():
            break
        p_one[low] *= _RAISE_FACTOR
    p_sat, kind = _saturation_threads(mixture, temperature, z, p_two, p_one, threads)
    return np.where(kind > 0, p_sat, np.nan)


def _saturation_threads(mixture, temperature, z, p_two, p_one, threads, known=None):
    """:func:`saturation_pressure` in ``threads`` threads (default one per core), on slices of
    at most ``_MAX_LINES_PER_CALL`` lines (the compiled flash releases the GIL), so memory is
    bounded by the slice, not by the table. Each line's answer is independent of the others, so
    the result is the same as one call. ``known``: brackets the table's flash already gave
    (``brackets_known``)."""
    n = temperature.shape[0]
    known = np.zeros(n, dtype=bool) if known is None else known
    parts = min(threads or os.cpu_count() or 1, max(1, n // _MIN_LINES_PER_THREAD))
    pieces = max(parts, -(-n // _MAX_LINES_PER_CALL))
    bounds = np.linspace(0, n, pieces + 1).astype(int)
    slices = [slice(a, b) for a, b in zip(bounds[:-1], bounds[1:], strict=True)]

    def solve(s: slice):
        return saturation_pressure(mixture, temperature[s], z[s], p_two[s], p_one[s],
                                   rtol=_RTOL, brackets_known=known[s])[:2]

    if parts <= 1:
        out = [solve(s) for s in slices]
    else:
        with ThreadPoolExecutor(max_workers=parts) as pool:
            out = list(pool.map(solve, slices))
    return np.concatenate([o[0] for o in out]), np.concatenate([o[1] for o in out])


def _cricondenbars(
    mixture: Mixture,
    temperature: NDArray[np.float64],
    feeds: NDArray[np.float64],
    p_sat: NDArray[np.float64],
    bracket_two: NDArray[np.float64],
    bracket_one: NDArray[np.float64],
    searchable: NDArray[np.bool_],
    threads: int | None,
) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """Cricondenbar of each composition (see :func:`saturation_lines`, Notes)."""
    n_t, n_c = p_sat.shape
    out_p = np.full(n_c, np.nan)
    out_t = np.full(n_c, np.nan)
    finite = np.isfinite(p_sat)
    ok = searchable & finite.any(axis=0) & (n_t > 1)
    if not ok.any():
        return out_p, out_t
    cols = np.flatnonzero(ok)
    j = np.nanargmax(np.where(finite[:, cols], p_sat[:, cols], -np.inf), axis=0)
    best_p = p_sat[j, cols]
    best_t = temperature[j]
    # Bracket pressures near the maximum: the neighbours' grid brackets.
    near = np.stack([np.clip(j + d, 0, n_t - 1) for d in (-1, 0, 1)])
    two = bracket_two[near, cols[None, :]]
    one = bracket_one[near, cols[None, :]]
    p_two = np.nanmin(np.where(np.isfinite(two), two, np.inf), axis=0)
    p_one = np.nanmax(np.where(np.isfinite(one), one, -np.inf), axis=0)
    z = feeds[cols]

    def evaluate(t: NDArray[np.float64], which: NDArray[np.intp]) -> NDArray[np.float64]:
        values = _saturation_at(mixture, t, z[which], p_two[which], p_one[which], threads)
        return np.where(np.isfinite(values), values, -np.inf)

    # Search brackets: interior maximum -> neighbours; end maximum -> the end interval if the
    # curve turns down inside it, otherwise no maximum within the range.
    lo = temperature[np.maximum(j - 1, 0)]
    hi = temperature[np.minimum(j + 1, n_t - 1)]
    at_start, at_end = j == 0, j == n_t - 1
    ends = np.flatnonzero(at_start | at_end)
    search = np.ones(cols.size, dtype=bool)
    if ends.size:
        step = _END_STEP * (hi[ends] - lo[ends])
        t_in = np.where(at_start[ends], temperature[0] + step, temperature[-1] - step)
        p_in = evaluate(t_in, ends)
        turns = p_in > best_p[ends]
        search[ends] = turns
        best_p[ends[turns]], best_t[ends[turns]] = p_in[turns], t_in[turns]
    active = np.flatnonzero(search)
    if active.size:
        a, b = lo[active].copy(), hi[active].copy()
        c = b - _INV_PHI * (b - a)
        d = a + _INV_PHI * (b - a)
        fc = evaluate(c, active)
        fd = evaluate(d, active)
        top_p = np.maximum(best_p[active], np.maximum(fc, fd))
        top_t = np.where(top_p == fc, c, np.where(top_p == fd, d, best_t[active]))
        while np.any(b - a > _T_TOL):
            left = fc >= fd  # the maximum lies in [a, d]
            b = np.where(left, d, b)
            a = np.where(left, a, c)
            new_c = b - _INV_PHI * (b - a)
            new_d = a + _INV_PHI * (b - a)
            x = np.where(left, new_c, new_d)
            moving = b - a > _T_TOL
            fx = np.full(x.shape, -np.inf)
            if moving.any():
                fx[moving] = evaluate(x[moving], active[moving])
            c, d = np.where(left, new_c, d), np.where(left, c, new_d)
            fc, fd = np.where(left, fx, fd), np.where(left, fc, fx)
            gain = fx > top_p
            top_p, top_t = np.where(gain, fx, top_p), np.where(gain, x, top_t)
        best_p[active], best_t[active] = top_p, top_t
    found = search & np.isfinite(best_p)
    out_p[cols[found]] = best_p[found]
    out_t[cols[found]] = best_t[found]
    return out_p, out_t

