"""Look up points in a table: multilinear interpolation, phase-boundary flags, exact refinement.

A table holds flash answers at the nodes of a pressure x temperature x composition grid. Between
nodes, every continuous field (vapour fraction, phase compositions, K-values, densities,
viscosities...) is interpolated multilinearly from the ``2**d`` surrounding nodes. That is only
right where those nodes agree on the phase state: across a bubble or dew line the vapour
fraction has a kink, a phase appears or vanishes and its properties jump from a value to NaN.
Each point therefore says whether its surrounding nodes disagree on the phase count
(``boundary``); with ``refine=True`` such points are answered by an exact flash of the table's
own fluid instead.

Single-phase points are interpolated by state, not by label. A single phase's properties are
continuous wherever no phase boundary lies between the nodes, but the table files them under
``liquid_*`` or ``vapour_*`` by the node's vapour-like / liquid-like label, a convention that can
flip between two single-phase nodes (above the cricondentherm, in the dense supercritical
region). Where the surrounding nodes are all single-phase and their labels differ
(``label_change``), each node's single-phase value is taken from whichever slot its label puts it
in, those values are interpolated, and the result is filed under the label the table's own flash
gives at the point (its labelling rule applied there; vapour fraction 1 or 0 to match), so the
point gets the phase's density, viscosity, molar mass and composition instead of a vapour
fraction of 0.5 and NaN densities.
"""

from __future__ import annotations

import os
from collections.abc import Sequence
from dataclasses import dataclass
from itertools import product
from pathlib import Path

import numpy as np
import xarray as xr
from numpy.typing import ArrayLike, NDArray

from .._errors import ConfigError, InputError, StoreError
from ..config import pressure_to_pa, temperature_from_kelvin, temperature_to_kelvin
from ..store import VARIABLES, mixture_from_store

__all__ = ["DEFAULT_LOOKUP_VARIABLES", "lookup"]

#: Fields interpolated when ``variables`` is not given: the phase split and phase properties.
DEFAULT_LOOKUP_VARIABLES: tuple[str, ...] = (
    "vapour_fraction",
    "liquid_composition",
    "vapour_composition",
    "k_value",
    *(f"{phase}_{prop}" for phase in ("liquid", "vapour") for prop in (
        "density", "viscosity", "molar_density", "molar_volume", "molar_mass", "z_factor")),
)

#: Relative tolerance within which a query on a single-valued axis (or at an axis end) counts
#: as on the axis; it absorbs the rounding of unit conversions (e.g. degC -> K).
_AXIS_RTOL = 1e-9

_VARIABLE_BY_NAME = {v.name: v for v in VARIABLES}
_VAPOUR_LIKE = 1  # PhaseLabel.VAPOUR_LIKE, the flag value the store documents


@dataclass(frozen=True)
class _Axis:
    """Where each query point falls along one grid dimension."""

    lower: NDArray[np.intp]  # index of the lower bracketing node
    weight: NDArray[np.float64]  # weight of the upper node (0 .. 1)
    inside: NDArray[np.bool_]


def lookup(
    table: xr.Dataset | str | os.PathLike[str],
    pressure: ArrayLike,
    temperature: ArrayLike,
    composition: ArrayLike | None = None,
    *,
    pressure_unit: str = "Pa",
    temperature_unit: str = "K",
    variables: Sequence[str] | None = None,
    outside: str = "raise",
    refine: bool = False,
) -> xr.Dataset:
    """Interpolate a table at arbitrary points, flagging points next to a phase boundary.

    Parameters
    ----------
    table : xarray.Dataset or path
        A table opened with :func:`gridflash.open_table`, or the path of its store. Lookups
        read only the grid cells they need; for many calls on one table, ``table.load()`` it
        once.
    pressure, temperature : array_like
        Query points, in ``pressure_unit`` and ``temperature_unit``; scalars and arrays are
        broadcast against each other and ``composition`` to one 1-D set of points.
    composition : array_like, optional
        Coordinate of each point along the table's composition axis: for a ``mixing_ratio``
        axis the mole fraction of the second stream (0 .. 1, interpolated linearly, as the feed
        is linear in it); for a ``mixture`` axis (simplex or list of compositions) the integer
        index of a stored mixture (not interpolated: a mixture index has no in-between). May be
        left out when the axis has a single point.
    pressure_unit : str
        ``Pa`` (default), ``kPa``, ``MPa``, ``bar``, ``psia`` or ``atm`` (absolute).
    temperature_unit : str
        ``K`` (default), ``degC`` or ``degF``.
    variables : sequence of str, optional
        Float fields of the table to interpolate; default :data:`DEFAULT_LOOKUP_VARIABLES`
        (vapour fraction, phase compositions, K-values and the per-phase properties).
    outside : {"raise", "nan"}
        What a point outside the table's range does: raise an :class:`InputError` naming it,
        or give NaN fields (``inside`` False, ``phase_count`` 0).
    refine : bool
        Replace the interpolated answer at every ``boundary`` or ``label_change`` point by an
        exact flash of the table's stored fluid (:func:`~gridflash.store.mixture_from_store`)
        at the point's pressure, temperature and feed, warm-started from the K-values of the
        surrounding two-phase node with the largest interpolation weight. The warm start only
        saves iterations: a warm start is kept only when it converges to a two-phase split,
        otherwise the point is solved cold, so the answers equal a cold flash (phase count
        identical, vapour fraction within 1e-8).

    Returns
    -------
    xarray.Dataset
        Dimension ``point`` (and ``component`` for per-component fields), with

        - coordinates ``pressure`` (Pa), ``temperature`` (K) and the composition coordinate of
          each point, and ``component``;
        - every interpolated field, with the table's ``units`` and ``long_name``;
        - ``feed_composition`` (point, component): the feed at the point;
        - ``phase_count`` (int8): the count the surrounding nodes agree on, the flash's count
          where refined, 0 where they disagree and the point was not refined, or outside;
        - ``phase_label`` (int8): likewise for two-phase / vapour-like / liquid-like; at a
          ``label_change`` point the label the table's flash gives there; -1 where unknown;
        - ``boundary`` (bool): the surrounding nodes disagree on the phase count, so the
          interpolated phase split is not to be trusted;
        - ``label_change`` (bool): the surrounding nodes are all single-phase but labelled both
          vapour-like and liquid-like;
        - ``converged`` (bool): every surrounding node converged (the flash, where refined);
        - ``refined`` (bool): the point holds an exact flash, not an interpolation;
        - ``inside`` (bool): the point lies within the table.

        "Surrounding nodes" are the corners of the grid cell holding the point that carry a
        non-zero interpolation weight, so a point exactly on a node is that node's stored value.

    Raises
    ------
    InputError
        A point is outside the table and ``outside="raise"``; unknown units or variables;
        ``composition`` missing where the table has several compositions; a ``mixture`` index
        that is not an integer.
    StoreError
        The table has no pressure x temperature x composition grid (e.g. a sampled table).

    Notes
    -----
    Multilinear interpolation on the grid axes as stored (pressure in Pa, temperature in K, the
    mixing ratio), the tensor-product form of linear interpolation that
    ``scipy.interpolate.RegularGridInterpolator(method="linear")`` also computes. The phase
    flags can only see boundaries the grid resolves: a two-phase sliver narrower than a grid
    cell, with all corners single-phase, is not flagged.

    Examples
    --------
    ::

        >>> import gridflash
        >>> table = gridflash.open_table("volatile_oil_co2.zarr").load()
        >>> out = gridflash.lookup(table, [150.0, 210.0], 85.0, [0.25, 0.4],
        ...                        pressure_unit="bar", temperature_unit="degC", refine=True)
        >>> out.vapour_fraction.values, out.boundary.values, out.refined.values
    """
    if outside not in ("raise", "nan"):
        raise InputError(f"outside={outside!r} must be 'raise' or 'nan'")
    ds = _as_table(table)
    dims = _grid_dims(ds)
    comp_dim = dims[2]
    names = _check_variables(ds, dims, variables)
    try:
        p_query = np.atleast_1d(pressure_to_pa(np.asarray(pressure, dtype=float), pressure_unit,
                                               key="pressure"))
        t_query = np.atleast_1d(temperature_to_kelvin(np.asarray(temperature, dtype=float),
                                                      temperature_unit, key="temperature"))
    except ConfigError as exc:
        raise InputError(str(exc)) from None
    except (TypeError, ValueError):
        raise InputError("pressure and temperature must be numbers or arrays of numbers") from None
    comp_values = _values(ds, comp_dim)
    if composition is None:
        if comp_values.size != 1:
            raise InputError(
                f"composition is required: the table has {comp_values.size} points along "
                f"{comp_dim!r} ({_span(comp_values)})"
            )
        composition = comp_values[0]
    try:
        c_query = np.asarray(composition, dtype=float)
    except (TypeError, ValueError):
        raise InputError(f"composition must be numbers along {comp_dim!r}") from None
    try:
        p_query, t_query, c_query = (np.ravel(a) for a in np.broadcast_arrays(
            p_query, t_query, np.atleast_1d(c_query)))
    except ValueError:
        raise InputError(
            f"pressure {np.shape(pressure)}, temperature {np.shape(temperature)} and composition "
            f"{np.shape(composition)} cannot be broadcast to one set of points"
        ) from None

    axes = (
        _locate(_values(ds, "pressure"), p_query),
        _locate(_values(ds, "temperature"), t_query),
        _locate_discrete(comp_values, c_query, comp_dim) if comp_dim == "mixture"
        else _locate(comp_values, c_query),
    )
    inside = axes[0].inside & axes[1].inside & axes[2].inside
    if outside == "raise" and not inside.all():
        raise InputError(_outside_message(ds, dims, axes, (p_query, t_query, c_query),
                                          pressure_unit, temperature_unit))

    # Corner nodes (flat indices into the grid) and weights, shape (n_points, 2**3). Along an
    # axis where a point sits on a node (weight 0) both corners are that node, so a corner
    # without weight repeats one with weight: it brings in neither a NaN nor a phase count of
    # its own. Points outside use node 0 with weight 0.
    shape = tuple(ds.sizes[d] for d in dims)
    corner_flat = np.empty((p_query.size, 8), dtype=np.intp)
    corner_w = np.ones((p_query.size, 8))
    for k, offsets in enumerate(product((0, 1), repeat=3)):
        idx = []
        for axis, off in zip(axes, offsets, strict=True):
            idx.append(np.where(inside, axis.lower + off * (axis.weight > 0.0), 0))
            corner_w[:, k] *= axis.weight if off else 1.0 - axis.weight
        corner_flat[:, k] = np.ravel_multi_index(idx, shape)
    corner_w[~inside] = 0.0

    partners = [_partner(n) for n in names if _partner(n) in ds.data_vars]
    wanted = [*names, *partners, "phase_count", "phase_label", "converged",
              *(["k_value"] if refine else [])]
    gathered = _gather(ds, dims, wanted, corner_flat, shape)
    count, label = gathered["phase_count"], gathered["phase_label"]
    count_lo, count_hi = count.min(axis=1), count.max(axis=1)
    label_lo, label_hi = label.min(axis=1), label.max(axis=1)
    boundary = inside & (count_lo != count_hi)
    label_change = inside & ~boundary & (label_lo != label_hi)
    agreed = inside & ~boundary
    out_count = np.where(agreed, count_lo, 0).astype(np.int8)
    out_label = np.where(agreed, label_lo, -1).astype(np.int8)
    converged = inside & gathered["converged"].all(axis=1)

    fields: dict[str, NDArray[np.float64]] = {}
    for name in names:
        fields[name] = _interpolate(corner_w, gathered[name])
        fields[name][~inside] = np.nan
    single = agreed & (out_count == 1)
    if "vapour_fraction" in fields:  # exactly 1 or 0, not a weighted sum of ones rounded
        fields["vapour_fraction"][single] = (out_label[single] == _VAPOUR_LIKE).astype(float)
    feed = _feeds(ds, comp_dim, axes[2], c_query, inside)
    if label_change.any():
        out_label[label_change] = _by_state(
            names, gathered, corner_w, label_change, fields,
            _point_labels(ds, p_query[label_change], t_query[label_change], feed[label_change],
                          gathered["phase_label"][label_change], corner_w[label_change]))

    refined = np.zeros(p_query.size, dtype=bool)
    if refine:
        todo = np.flatnonzero(boundary | label_change)
        if todo.size:
            refined[todo] = True
            result = _refine(ds, p_query[todo], t_query[todo], feed[todo],
                             gathered["k_value"][todo], gathered["phase_count"][todo],
                             corner_w[todo])
            for name in names:
                fields[name][todo] = _result_field(result, name)
            out_count[todo] = result.phase_count
            out_label[todo] = result.phase_label
            converged[todo] = result.converged

    return _as_dataset(ds, comp_dim, names, fields, p_query, t_query, c_query, feed, out_count,
                       out_label, boundary, label_change, converged, refined, inside)


# --------------------------------------------------------------------------------------------
# Table checks
# --------------------------------------------------------------------------------------------


def _as_table(table: xr.Dataset | str | os.PathLike[str]) -> xr.Dataset:
    if isinstance(table, xr.Dataset):
        return table
    if isinstance(table, (str, os.PathLike)):
        from ..store import open_table

        return open_table(Path(table))
    raise InputError(
        f"table must be an xarray.Dataset from gridflash.open_table or a store path, got "
        f"{type(table).__name__}"
    )


def _grid_dims(ds: xr.Dataset) -> tuple[str, str, str]:
    if "phase_count" not in ds.data_vars:
        raise StoreError("the dataset has no 'phase_count'; give a table from gridflash.open_table")
    dims = tuple(ds.variables["phase_count"].dims)
    if len(dims) != 3 or dims[:2] != ("pressure", "temperature") or dims[2] not in (
        "mixing_ratio", "mixture"
    ):
        raise StoreError(
            f"lookup needs a pressure x temperature x composition grid, but this table's cells "
            f"are laid out along {dims!r}; look up points in a grid table (a sampled table has "
            "no grid to interpolate on)"
        )
    return dims  # type: ignore[return-value]


def _check_variables(ds: xr.Dataset, dims: tuple[str, ...],
                     variables: Sequence[str] | None) -> list[str]:
    if variables is None:
        return [v for v in DEFAULT_LOOKUP_VARIABLES if v in ds.data_vars]
    if isinstance(variables, str):
        variables = [variables]
    names = list(dict.fromkeys(variables))
    for name in names:
        if name not in ds.data_vars or tuple(ds.variables[name].dims[:3]) != dims:
            grid_floats = sorted(
                v for v in ds.data_vars
                if tuple(ds[v].dims[:3]) == dims and ds[v].dtype.kind == "f"
            )
            raise InputError(
                f"variables: {name!r} is not a per-cell field of this table; choose from "
                f"{', '.join(grid_floats)}"
            )
        if ds.variables[name].dtype.kind != "f":
            raise InputError(
                f"variables: {name!r} is not a float field and cannot be interpolated "
                "(phase_count, phase_label and converged are always returned)"
            )
    return names


# --------------------------------------------------------------------------------------------
# Locating points on the axes
# --------------------------------------------------------------------------------------------


def _locate(nodes: NDArray[np.float64], query: NDArray[np.float64]) -> _Axis:
    """Bracketing node and weight of each query value along an increasing axis."""
    nodes = np.asarray(nodes, dtype=float)
    n = nodes.size
    tol = _AXIS_RTOL * max(float(np.max(np.abs(nodes))), 1e-300)
    inside = np.isfinite(query) & (query >= nodes[0] - tol) & (query <= nodes[-1] + tol)
    q = np.clip(query, nodes[0], nodes[-1])
    if n == 1:
        return _Axis(np.zeros(q.shape, dtype=np.intp), np.zeros(q.shape), inside)
    lower = np.clip(np.searchsorted(nodes, q, side="right") - 1, 0, n - 2)
    span = nodes[lower + 1] - nodes[lower]
    weight = np.clip((q - nodes[lower]) / span, 0.0, 1.0)
    on_upper = weight >= 1.0  # the last node: lower it onto that node with weight 0
    lower = np.where(on_upper, lower + 1, lower)
    weight = np.where(inside & ~on_upper, weight, 0.0)
    return _Axis(lower.astype(np.intp), weight, inside)


def _locate_discrete(nodes: NDArray[np.float64], query: NDArray[np.float64], dim: str) -> _Axis:
    """A ``mixture`` index: exact integers only, never interpolated."""
    rounded = np.rint(query)
    finite = np.isfinite(query)
    bad = finite & (np.abs(query - rounded) > 1e-9)
    if bad.any():
        i = int(np.argmax(bad))
        raise InputError(
            f"composition[{i}] = {float(query[i])!r} is not a stored {dim!r} index; a mixture "
            "axis (simplex or list of compositions) is looked up by the integer index of a "
            "stored mixture, it cannot be interpolated"
        )
    position = np.searchsorted(nodes, rounded)
    position = np.clip(position, 0, nodes.size - 1)
    inside = finite & (nodes[position] == rounded)
    lower = np.where(inside, position, 0).astype(np.intp)
    return _Axis(lower, np.zeros(query.shape), inside)


def _values(ds: xr.Dataset, name: str) -> NDArray[np.float64]:
    return np.asarray(ds.variables[name].values, dtype=float)


def _span(values: NDArray[np.float64], scale: float = 1.0, offset: float = 0.0,
          unit: str = "") -> str:
    lo, hi = values[0] / scale - offset, values[-1] / scale - offset
    text = f"{lo:g}" if values.size == 1 else f"{lo:g} .. {hi:g}"
    return f"{text} {unit}".rstrip()


def _kelvin_text(kelvin: float, unit: str) -> str:
    return f"{temperature_from_kelvin(kelvin, unit):g} {unit}"


def _outside_message(ds, dims, axes, queries, pressure_unit, temperature_unit) -> str:
    scale_p = float(pressure_to_pa(1.0, pressure_unit))
    for dim, axis, query in zip(dims, axes, queries, strict=True):
        if axis.inside.all():
            continue
        i = int(np.argmin(axis.inside))
        nodes = _values(ds, dim)
        if dim == "pressure":
            shown = f"{query[i] / scale_p:g} {pressure_unit}"
            span = _span(nodes, scale_p, unit=pressure_unit)
        elif dim == "temperature":
            shown = _kelvin_text(query[i], temperature_unit)
            span = " .. ".join(_kelvin_text(v, temperature_unit)
                               for v in (nodes[0], nodes[-1]))
        else:
            shown = f"{query[i]:g}"
            span = _span(nodes)
        return (f"{dim}[{i}] = {shown} is outside the table ({dim} {span}); look up points "
                "inside it, or pass outside='nan' to get NaN there")
    return "a point is outside the table"  # pragma: no cover - some axis is always outside


# --------------------------------------------------------------------------------------------
# Reading the corners, feeds, refinement
# --------------------------------------------------------------------------------------------


def _gather(ds: xr.Dataset, dims: tuple[str, ...], names: Sequence[str],
            flat: NDArray[np.intp], shape: tuple[int, ...]) -> dict[str, np.ndarray]:
    """Values of each variable at the corner nodes: (n, 8) or (n, 8, n_components)."""
    import dask
    import dask.array as da

    lazy = {}
    for name in dict.fromkeys(names):
        var = ds.variables[name]  # a Variable: much cheaper than a DataArray per call
        order = (*dims, *[d for d in var.dims if d not in dims])
        data = (var if var.dims == order else var.transpose(*order)).data
        if isinstance(data, da.Array):
            lazy[name] = data.vindex[np.unravel_index(flat, shape)]
        else:
            data = np.asarray(data)
            rows = data.reshape(int(np.prod(shape)), -1)[flat]
            lazy[name] = rows if data.ndim > len(shape) else rows[..., 0]
    keys = [k for k, v in lazy.items() if isinstance(v, da.Array)]
    if keys:
        computed = dask.compute(*(lazy[k] for k in keys), scheduler="threads")
        lazy.update(zip(keys, computed, strict=True))
    return lazy


def _feeds(ds: xr.Dataset, comp_dim: str, axis: _Axis, query: NDArray[np.float64],
           inside: NDArray[np.bool_]) -> np.ndarray:
    """Feed mole fractions at each point's composition coordinate."""
    feeds = np.asarray(ds.variables["feed_composition"].transpose(comp_dim, "component").values,
                       dtype=float)
    if comp_dim == "mixing_ratio" and "stream_composition" in ds and ds.sizes.get("stream") == 2:
        # The mixing line of the two streams, z = (1 - r) z_first + r z_second, as the stored
        # feeds were made (gridflash.config._composition.mixing_line).
        streams = np.asarray(ds.variables["stream_composition"].transpose("stream",
                                                                          "component").values)
        nodes = _values(ds, comp_dim)
        ratio = np.clip(query, nodes[0], nodes[-1])[:, None]
        out = (1.0 - ratio) * streams[0][None, :] + ratio * streams[1][None, :]
    else:
        upper = np.minimum(axis.lower + 1, feeds.shape[0] - 1)
        w = axis.weight[:, None]
        out = (1.0 - w) * feeds[axis.lower] + w * feeds[upper]
    out[~inside] = np.nan
    return out


def _interpolate(weights: NDArray[np.float64], values: np.ndarray) -> NDArray[np.float64]:
    """Weighted sum over the corners: (n, 8) weights with (n, 8) or (n, 8, nc) values."""
    values = np.asarray(values, dtype=float)
    return np.einsum("nk,nk->n" if values.ndim == 2 else "nk,nkc->nc", weights, values)


_PHASES = ("liquid", "vapour")


def _partner(name: str) -> str:
    """``liquid_density`` <-> ``vapour_density`` (and the compositions); '' for other fields."""
    phase, sep, prop = name.partition("_")
    if not sep or phase not in _PHASES:
        return ""
    return f"{_PHASES[1 - _PHASES.index(phase)]}_{prop}"


def _point_labels(ds, pressure, temperature, feed, corner_labels, weights) -> np.ndarray:
    """The single-phase label the table's flash gives at each point (its labelling rule applied
    at the point); the label of the heavier corners where that flash finds two phases (a sliver
    the grid does not resolve)."""
    from ..thermo import PhaseLabel, flash

    result = flash(mixture_from_store(ds), pressure, temperature,
                   feed / feed.sum(axis=1, keepdims=True))
    vapour_weight = np.where(corner_labels == PhaseLabel.VAPOUR_LIKE, weights, 0.0).sum(axis=1)
    heavier = np.where(vapour_weight >= 0.5 * weights.sum(axis=1), PhaseLabel.VAPOUR_LIKE,
                       PhaseLabel.LIQUID_LIKE)
    return np.where(result.phase_count == 1, result.phase_label, heavier)


def _by_state(names, gathered, weights, rows, fields, labels) -> np.ndarray:
    """Single-phase fields of the ``rows`` points, interpolated by state across a label change.

    Each corner's single-phase value is read from the slot its label files it under; the
    interpolated value goes to the slot of the point's label (``labels``), the other slot is NaN
    and the vapour fraction is 1 or 0. Returns the labels.
    """
    from ..thermo import PhaseLabel

    w = weights[rows]
    vapour_corner = gathered["phase_label"][rows] == PhaseLabel.VAPOUR_LIKE
    vapour = labels == PhaseLabel.VAPOUR_LIKE
    for name in names:
        partner = _partner(name)
        if name == "vapour_fraction":
            fields[name][rows] = np.where(vapour, 1.0, 0.0)
        elif partner and partner in gathered:
            phase = name.partition("_")[0]
            mine, theirs = gathered[name][rows], gathered[partner][rows]
            # the corner's single-phase value: from the vapour slot at vapour-like corners
            in_vapour = vapour_corner if phase == "vapour" else ~vapour_corner
            state = np.where(in_vapour.reshape(in_vapour.shape + (1,) * (mine.ndim - 2)),
                             mine, theirs)
            value = _interpolate(w, state)
            value[~(vapour if phase == "vapour" else ~vapour)] = np.nan
            fields[name][rows] = value
    return np.asarray(labels, dtype=np.int8)


def _refine(ds, pressure, temperature, feed, k_corners, count_corners, weights):
    """Exact flash at the given points, warm-started from the heaviest two-phase corner."""
    from ..thermo import flash

    mixture = mixture_from_store(ds)
    two = (count_corners == 2) & (weights > 0.0)
    best = np.argmax(np.where(two, weights, -1.0), axis=1)
    k_init = k_corners[np.arange(best.size), best].astype(float)
    k_init[~two.any(axis=1)] = np.nan  # no two-phase neighbour: start cold
    feed = feed / feed.sum(axis=1, keepdims=True)
    return flash(mixture, pressure, temperature, feed, k_init=k_init)


def _result_field(result, name: str) -> np.ndarray:
    """A store variable's values from a :class:`FlashResult` (via the store's schema)."""
    source = _VARIABLE_BY_NAME[name].source
    value = result
    for part in source.split("."):
        value = getattr(value, part)
    return np.asarray(value, dtype=float)


def _as_dataset(ds, comp_dim, names, fields, p, t, c, feed, count, label, boundary,
                label_change, converged, refined, inside) -> xr.Dataset:
    data = {}
    for name in names:
        dims = ("point",) if fields[name].ndim == 1 else ("point", "component")
        data[name] = (dims, fields[name], dict(ds.variables[name].attrs))
    data["feed_composition"] = (("point", "component"), feed,
                                {"units": "1", "long_name": "mole fraction of each component in "
                                 "the feed at the point"})
    data["phase_count"] = ("point", count, {
        "units": "1", "long_name": "number of phases: agreed by the surrounding grid nodes, or "
        "from an exact flash where refined", "comment": "0 where the surrounding nodes disagree "
        "and the point was not refined, or the point is outside the table"})
    data["phase_label"] = ("point", label, {
        "units": "1", "long_name": "phase state (0 two-phase, 1 vapour-like, 2 liquid-like); "
        "-1 where unknown"})
    data["boundary"] = ("point", boundary, {
        "units": "1", "long_name": "the surrounding grid nodes disagree on the phase count"})
    data["label_change"] = ("point", label_change, {
        "units": "1", "long_name": "the surrounding grid nodes are single-phase but labelled "
        "both vapour-like and liquid-like"})
    data["converged"] = ("point", converged, {
        "units": "1", "long_name": "every surrounding node converged (the flash, where refined)"})
    data["refined"] = ("point", refined, {
        "units": "1", "long_name": "answered by an exact flash instead of interpolation"})
    data["inside"] = ("point", inside, {"units": "1", "long_name": "the point is inside the "
                                        "table's range"})
    coords = {
        "pressure": ("point", p, {"units": "Pa", "long_name": "pressure (absolute)"}),
        "temperature": ("point", t, {"units": "K", "long_name": "temperature"}),
        comp_dim: ("point", c, dict(ds.variables[comp_dim].attrs)),
        "component": ("component", np.asarray(ds.variables["component"].values)),
    }
    return xr.Dataset(data, coords=coords)
