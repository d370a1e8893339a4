"""Pictures of a table: phase maps, property maps and ternary views, as PNG files.

matplotlib is an optional dependency (``pip install "gridflash[plot]"``); it is imported only
when a picture is drawn. Figures are plain :class:`matplotlib.figure.Figure` objects (no pyplot
state), so the functions are safe in scripts, servers and tests alike.

What is drawn
-------------
A map is drawn from fields, not from grid tiles: the two plotted axes are sampled at
``RESOLUTION`` display points each (the grid nodes among them) between their first and last
node, and every display point is answered by :func:`gridflash.lookup` with ``refine=True`` --
multilinear interpolation of the table where its surrounding nodes agree on the phase state, an
exact flash of the table's own fluid where they do not. The phase boundary is the contour
between one and two phases of that field, so it is a smooth line at its true place (to the
display resolution, about 0.6 % of an axis) rather than straight segments between grid
temperatures; the table's stored saturation pressures are marked on it where the plane holds
them. The axes end at the first and last node: nothing is drawn outside the data.

A value fixed with ``at`` may lie between nodes (the fields are interpolated there too) but not
outside the table: that is an :class:`~gridflash.InputError`. A ``mixture`` axis (a simplex or a
list of compositions) cannot be interpolated: along it the nodes are shown, labelled by their
stream fractions, and a simplex of three streams has a ternary view (:func:`ternary_map`) of
exact flashes at a fixed pressure and temperature, with the stored nodes marked.
"""

from __future__ import annotations

import os
import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np
import xarray as xr

from .._errors import ConfigError, GridflashError, InputError, StoreError
from ..config import (
    pressure_from_pa,
    pressure_to_pa,
    pressure_unit,
    temperature_from_kelvin,
    temperature_to_kelvin,
    temperature_unit,
)

__all__ = [
    "PHASE_COLOURS",
    "PLOT_KINDS",
    "RESOLUTION",
    "parse_at",
    "phase_map",
    "plot_table",
    "property_map",
    "ternary_map",
]

#: Fill colours of the phase states, indexed by ``phase_label`` (0 two-phase, 1 vapour-like,
#: 2 liquid-like, 3 three-phase).
PHASE_COLOURS: tuple[str, ...] = ("#f2c14e", "#bfe3f0", "#7fb685", "#c8553d")
_PHASE_NAMES = ("two phases", "one phase, vapour-like", "one phase, liquid-like", "three phases")
_SATURATION_COLOUR = "#8c1c13"
_CONTOUR_COLOUR = "#3b3b3b"
_ABSENT_COLOUR = "#e6e6e6"
_VF_LEVELS = (0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7, 0.8, 0.9)
#: Display points along each continuous plotted axis (the grid nodes are added to them).
RESOLUTION = 161
#: Ternary views: divisions of each side of the triangle of exact flashes.
_TERNARY_DIVISIONS = 48
#: Contour labels closer than this (a fraction of the axes) to one already placed are left out.
_LABEL_SPACING = 0.09

#: Figures :func:`plot_table` can draw, and the variables each one shows.
PLOT_KINDS: dict[str, tuple[str, ...]] = {
    "phase": ("phase_label",),
    "density": ("liquid_density", "vapour_density"),
    "viscosity": ("liquid_viscosity", "vapour_viscosity"),
    "ternary": ("phase_label",),
}
_PROPERTY_SCALE = {"kg m-3": (1.0, "kg/m³"), "Pa s": (1e3, "mPa·s")}

_GRID_AXES = ("pressure", "temperature")


@dataclass(frozen=True)
class _Slice:
    """A 2-D cut through the table: the two plotted dimensions and the fixed values."""

    x: str
    y: str
    fixed: dict[str, float]  # dimension -> value in table units (Pa, K, ratio, mixture index)


@dataclass(frozen=True)
class _Field:
    """The looked-up fields at the display points of a cut: ``get(name)`` is (ny, nx)."""

    xs: np.ndarray  # display points along x, table units
    ys: np.ndarray
    points: xr.Dataset

    def get(self, name: str) -> np.ndarray:
        return np.asarray(self.points[name].values).reshape(self.ys.size, self.xs.size)


def _matplotlib():
    try:
        import matplotlib  # noqa: F401
        from matplotlib.figure import Figure
    except ImportError:
        raise GridflashError(
            "plotting needs matplotlib, which is not installed; install it with "
            "pip install 'gridflash[plot]'"
        ) from None
    return Figure


# --------------------------------------------------------------------------------------------
# Public functions
# --------------------------------------------------------------------------------------------


def phase_map(
    table: xr.Dataset,
    *,
    x: str = "temperature",
    y: str = "pressure",
    at: Mapping[str, float] | None = None,
    pressure_unit: str = "bar",
    temperature_unit: str = "degC",
    contours: bool = True,
):
    """Phase map of a table on two of its grid axes, the others fixed.

    Parameters
    ----------
    table : xarray.Dataset
        A grid table from :func:`gridflash.open_table`.
    x, y : str
        Dimensions on the horizontal and vertical axes: ``"pressure"``, ``"temperature"``,
        ``"composition"`` or the composition dimension's own name (``mixing_ratio``,
        ``mixture``).
    at : mapping, optional
        Value of each remaining dimension, in the table's units (Pa, K, the mixing ratio, or a
        mixture index); between nodes the fields are interpolated. A dimension left out is fixed
        at its first node.
    pressure_unit, temperature_unit : str
        Units shown on the axes (any accepted by the config, e.g. ``bar``, ``MPa``, ``psia``;
        ``degC``, ``K``, ``degF``).
    contours : bool
        Draw labelled vapour-fraction contours inside the two-phase region.

    Returns
    -------
    matplotlib.figure.Figure
        One axes; its first collection is the phase-state mesh at the display points (values
        0 two-phase, 1 vapour-like, 2 liquid-like, 3 three-phase), coloured with
        :data:`PHASE_COLOURS`. The phase boundary is a dark red line; stored saturation
        pressures in the plane are markers labelled ``"saturation pressure"``.

    Raises
    ------
    InputError
        Unknown or repeated axes, unknown units, an ``at`` value outside the table.
    GridflashError
        matplotlib is not installed.
    """
    figure_cls = _matplotlib()
    cut = _cut(table, x, y, at)
    scale = _Scales(pressure_unit, temperature_unit)
    field = _field(table, cut)
    fig = figure_cls(figsize=(7.8, 5.6), dpi=100, layout="constrained")
    ax = fig.add_subplot()
    from matplotlib.colors import ListedColormap
    from matplotlib.patches import Patch

    xs, ys = scale.convert(cut.x, field.xs), scale.convert(cut.y, field.ys)
    label = np.ma.masked_less(field.get("phase_label").astype(float), 0.0)
    ax.pcolormesh(xs, ys, label, shading="nearest", cmap=ListedColormap(PHASE_COLOURS),
                  vmin=-0.5, vmax=len(PHASE_COLOURS) - 0.5, rasterized=True)
    handles: list[Any] = [Patch(facecolor=c, edgecolor="#888888", label=n)
                          for c, n in zip(PHASE_COLOURS, _PHASE_NAMES, strict=True)]
    if contours and "mixture" not in (cut.x, cut.y):  # no in-between along a mixture axis
        handles += _vapour_fraction_contours(ax, xs, ys, field.get("vapour_fraction"),
                                             field.get("phase_count") == 2)
    handles += _boundary(ax, table, cut, scale, field)
    handles += _stored_saturation(ax, table, cut, scale)
    handles += _unconverged(ax, table, cut, scale)
    _decorate(ax, table, cut, scale, field, "Phase map")
    ax.legend(handles=handles, loc="upper left", bbox_to_anchor=(1.01, 1.0), fontsize=8,
              frameon=False)
    return fig


def property_map(
    table: xr.Dataset,
    kind: str = "density",
    *,
    x: str = "temperature",
    y: str = "pressure",
    at: Mapping[str, float] | None = None,
    pressure_unit: str = "bar",
    temperature_unit: str = "degC",
):
    """Liquid and vapour property maps (two panels) on two grid axes, the others fixed.

    Parameters
    ----------
    table : xarray.Dataset
    kind : {"density", "viscosity"}
        Mass densities (kg/m³) or viscosities (mPa·s) of the liquid and the vapour phase.
    x, y, at, pressure_unit, temperature_unit
        As for :func:`phase_map`.

    Returns
    -------
    matplotlib.figure.Figure
        Two axes (liquid, vapour); each one's first collection holds the looked-up values at the
        display points in the shown units, masked where the phase is absent (drawn in light
        grey).
    """
    if kind not in ("density", "viscosity"):
        raise InputError(f"kind={kind!r} must be 'density' or 'viscosity'")
    figure_cls = _matplotlib()
    cut = _cut(table, x, y, at)
    scale = _Scales(pressure_unit, temperature_unit)
    field = _field(table, cut)
    fig = figure_cls(figsize=(11.0, 4.8), dpi=100, layout="constrained")
    axes = fig.subplots(1, 2, sharex=True, sharey=True)
    xs, ys = scale.convert(cut.x, field.xs), scale.convert(cut.y, field.ys)
    for ax, name in zip(axes, PLOT_KINDS[kind], strict=True):
        units = str(table[name].attrs.get("units", ""))
        factor, unit = _PROPERTY_SCALE.get(units, (1.0, units))
        values = np.ma.masked_invalid(field.get(name) * factor)
        ax.set_facecolor(_ABSENT_COLOUR)
        mesh = ax.pcolormesh(xs, ys, values, shading="nearest", rasterized=True,
                             cmap="cividis" if kind == "density" else "magma")
        phase = name.split("_")[0]
        fig.colorbar(mesh, ax=ax, label=f"{phase} {kind} ({unit})")
        handles = _boundary(ax, table, cut, scale, field)
        _decorate(ax, table, cut, scale, field, f"{phase.capitalize()} {kind}")
        if handles:
            ax.legend(handles=handles, loc="best", fontsize=7)
    fig.text(0.5, 0.005, "light grey: phase absent", ha="center", va="bottom", fontsize=8)
    return fig


def ternary_map(
    table: xr.Dataset,
    *,
    at: Mapping[str, float] | None = None,
    pressure_unit: str = "bar",
    temperature_unit: str = "degC",
    divisions: int = _TERNARY_DIVISIONS,
):
    """Ternary phase map of a three-stream simplex table at a fixed pressure and temperature.

    The triangle's corners are the three streams; a feed lies at the barycentric point of its
    stream fractions. The colours are exact flashes of the table's own fluid
    (:func:`~gridflash.store.mixture_from_store`) at the centroids of a lattice of
    ``divisions**2`` small triangles, the vapour-fraction contours come from flashes at the
    lattice nodes, and the table's stored mixtures are marked, filled with their stored phase
    state, so the picture shows where the table's nodes sit in the phase diagram.

    Parameters
    ----------
    table : xarray.Dataset
        A grid table whose ``mixture`` axis mixes three streams.
    at : mapping, optional
        ``pressure`` (Pa) and ``temperature`` (K); each defaults to its first node, and may lie
        between nodes but not outside the table.
    pressure_unit, temperature_unit : str
        Units of the title.
    divisions : int
        Lattice divisions of each side.

    Returns
    -------
    matplotlib.figure.Figure
        One axes; its first collection holds the phase state of each small triangle.

    Raises
    ------
    InputError
        The table has no three-stream mixture axis, ``at`` fixes another axis or lies outside
        the table.
    """
    figure_cls = _matplotlib()
    comp = _comp_dim(table)
    streams = [str(s) for s in table.stream.values] if "stream" in table.coords else []
    if comp != "mixture" or len(streams) != 3 or "stream_fraction" not in table:
        raise InputError(
            "a ternary view needs a table whose composition axis mixes three streams (a simplex "
            f"or list of three streams); this one has {comp!r} over {len(streams)} stream(s)"
        )
    fixed = {d: v for d, v in (at or {}).items()}
    unknown = [d for d in fixed if _dim(table, d, "at") not in _GRID_AXES]
    if unknown:
        raise InputError(f"a ternary view fixes pressure and temperature only, not {unknown!r}")
    values = {d: _fixed_value(table, d, fixed.get(d)) for d in _GRID_AXES}
    scale = _Scales(pressure_unit, temperature_unit)
    from matplotlib.colors import ListedColormap
    from matplotlib.patches import Patch
    from matplotlib.tri import Triangulation

    from ..store import mixture_from_store
    from ..thermo import flash

    n = int(divisions)
    nodes = np.array([(i, j, n - i - j) for i in range(n + 1) for j in range(n + 1 - i)],
                     dtype=float) / n
    tri = Triangulation(*_barycentric_xy(nodes))
    centroids = nodes[tri.triangles].mean(axis=1)
    streams_z = np.asarray(table.stream_composition.transpose("stream", "component").values)
    mixture = mixture_from_store(table)
    p, t = values["pressure"], values["temperature"]

    def flashed(fractions: np.ndarray):
        z = fractions @ streams_z
        return flash(mixture, np.full(len(z), p), np.full(len(z), t), z / z.sum(axis=1)[:, None])

    at_faces, at_nodes = flashed(centroids), flashed(nodes)
    fig = figure_cls(figsize=(7.8, 6.4), dpi=100, layout="constrained")
    ax = fig.add_subplot()
    ax.tripcolor(tri, facecolors=at_faces.phase_label.astype(float),
                 cmap=ListedColormap(PHASE_COLOURS), vmin=-0.5, vmax=len(PHASE_COLOURS) - 0.5,
                 rasterized=True)
    handles: list[Any] = [Patch(facecolor=c, edgecolor="#888888", label=n)
                          for c, n in zip(PHASE_COLOURS, _PHASE_NAMES, strict=True)]
    two = at_nodes.phase_count == 2
    if two.sum() >= 3:
        vf = np.where(two, at_nodes.vapour_fraction, np.nan)
        masked = Triangulation(tri.x, tri.y, tri.triangles,
                               mask=~two[tri.triangles].all(axis=1))
        cs = ax.tricontour(masked, np.nan_to_num(vf, nan=-1.0), levels=_VF_LEVELS,
                           colors=_CONTOUR_COLOUR, linewidths=0.8)
        if _label_contours(ax, cs):
            handles.append(_line_handle(_CONTOUR_COLOUR, "-", "vapour fraction (mol/mol)",
                                        width=0.8))
    stored = table.stream_fraction.transpose("mixture", "stream").values
    sx, sy = _barycentric_xy(stored)
    index = {d: _bracket(table, d, values[d]) for d in _GRID_AXES}
    labels = table.phase_label.isel({d: i[0] for d, i in index.items()}).values
    ax.scatter(sx, sy, c=[PHASE_COLOURS[int(v)] if v >= 0 else "white" for v in labels],
               edgecolors="black", linewidths=0.6, s=22, zorder=3)
    handles.append(_line_handle("black", "none", "stored mixtures (nearest node's state)",
                                marker="o"))
    corners = _barycentric_xy(np.eye(3))
    for k, name in enumerate(streams):
        ax.annotate(name.replace("_", " "), (corners[0][k], corners[1][k]), fontsize=9,
                    ha=("right", "left", "center")[k], va=("top", "top", "bottom")[k],
                    xytext=((-4, -4), (4, -4), (0, 6))[k], textcoords="offset points")
    ax.plot(*np.append(corners, corners[:, :1], axis=1), color="black", linewidth=1.0)
    ax.set_aspect("equal")
    ax.set_axis_off()
    ax.set_title(f"Phase map at {scale.text('pressure', p, pretty=True)}, "
                 f"{scale.text('temperature', t, pretty=True)} (exact flashes)", fontsize=10)
    ax.legend(handles=handles, loc="upper left", bbox_to_anchor=(1.01, 1.0), fontsize=8,
              frameon=False)
    return fig


def plot_table(
    store: str | os.PathLike[str] | xr.Dataset,
    *,
    x: str = "temperature",
    y: str = "pressure",
    at: Mapping[str, float] | None = None,
    out: str | os.PathLike[str] | None = None,
    kinds: Sequence[str] = ("phase", "density", "viscosity"),
    pressure_unit: str = "bar",
    temperature_unit: str = "degC",
    dpi: int = 120,
) -> list[Path]:
    """Write PNG figures of a table: a phase map and property maps (``gridflash plot``).

    Parameters
    ----------
    store : path or xarray.Dataset
        The store (or a table already opened).
    x, y, at, pressure_unit, temperature_unit
        As for :func:`phase_map` (a ternary view uses ``at`` only).
    out : path, optional
        Folder for the files (created if needed); default ``<store name>_plots`` next to the
        store, or the current folder for an opened table.
    kinds : sequence of {"phase", "density", "viscosity", "ternary"}
        Which figures to write.
    dpi : int
        Resolution of the PNG files.

    Returns
    -------
    list of Path
        The files written, named ``<kind>_<y>_vs_<x>[_<dim>-<value>...].png`` (a ternary view:
        ``ternary_pressure-<value>_temperature-<value>.png``).
    """
    from ..store import open_table

    unknown = [k for k in kinds if k not in PLOT_KINDS]
    if unknown:
        raise InputError(f"unknown figure kind(s) {unknown!r}; choose from {', '.join(PLOT_KINDS)}")
    _matplotlib()
    if isinstance(store, xr.Dataset):
        table = store
        folder = Path(out) if out is not None else Path.cwd()
    else:
        path = Path(store).expanduser()
        table = open_table(path)
        folder = Path(out) if out is not None else path.parent / f"{path.stem}_plots"
    scale = _Scales(pressure_unit, temperature_unit)
    maps = [k for k in kinds if k != "ternary"]
    cut = _cut(table, x, y, at) if maps else None
    try:
        folder.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise StoreError(f"cannot create the folder {str(folder)!r}: {exc.strerror}") from None
    written = []
    for kind in kinds:
        if kind == "ternary":
            fixed = {d: _fixed_value(table, d, (at or {}).get(d)) for d in _GRID_AXES}
            fig = ternary_map(table, at=fixed, pressure_unit=pressure_unit,
                              temperature_unit=temperature_unit)
            stem = "ternary" + "".join(f"_{d}-{scale.text(d, v)}" for d, v in fixed.items())
        else:
            assert cut is not None
            options = {"x": cut.x, "y": cut.y, "at": cut.fixed, "pressure_unit": pressure_unit,
                       "temperature_unit": temperature_unit}
            fig = (phase_map(table, **options) if kind == "phase"
                   else property_map(table, kind, **options))
            stem = f"{kind}_{cut.y}_vs_{cut.x}" + "".join(
                f"_{dim}-{scale.text(dim, value)}" for dim, value in cut.fixed.items()
                if table.sizes[dim] > 1)
        target = folder / (re.sub(r"[^A-Za-z0-9_.=+-]", "", stem) + ".png")
        try:
            fig.savefig(target, dpi=dpi)
        except OSError as exc:
            raise StoreError(f"cannot write {str(target)!r}: {exc.strerror}") from None
        written.append(target)
    return written


def parse_at(table: xr.Dataset, items: Sequence[str]) -> dict[str, float]:
    """Parse ``DIM=VALUE`` texts (``temperature=80degC``, ``pressure=150bar``,
    ``mixing_ratio=0.3``) into table units, each inside the table's range.

    Pressures and temperatures need a unit (any the config accepts); composition coordinates
    are plain numbers. ``composition`` names the table's composition dimension.

    Raises
    ------
    InputError
        Malformed text, unknown dimension or unit, a value outside the table.
    """
    out: dict[str, float] = {}
    for item in items:
        name, sep, value = item.partition("=")
        if not sep or not value.strip():
            raise InputError(f"--at {item!r} must be DIM=VALUE, e.g. temperature=80degC")
        dim = _dim(table, name.strip(), "--at")
        match = re.fullmatch(r"\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*(\S*)\s*", value)
        if match is None:
            raise InputError(f"--at {item!r}: {value!r} is not a number with an optional unit")
        number, unit = float(match.group(1)), match.group(2)
        try:
            if dim == "pressure":
                if not unit:
                    raise InputError(f"--at {item!r}: give the pressure's unit, e.g. "
                                     f"pressure={number:g}bar")
                out[dim] = float(pressure_to_pa(number, unit, key="--at pressure"))
            elif dim == "temperature":
                if not unit:
                    raise InputError(f"--at {item!r}: give the temperature's unit, e.g. "
                                     f"temperature={number:g}degC")
                out[dim] = float(temperature_to_kelvin(number, unit, key="--at temperature"))
            else:
                if unit:
                    raise InputError(f"--at {item!r}: {dim} is a plain number, without a unit")
                out[dim] = number
        except ConfigError as exc:
            raise InputError(str(exc)) from None
        _fixed_value(table, dim, out[dim], shown=f"--at {item!r}")
    return out


# --------------------------------------------------------------------------------------------
# Slicing and the fields
# --------------------------------------------------------------------------------------------


def _comp_dim(table: xr.Dataset) -> str:
    if "phase_count" not in table.data_vars:
        raise StoreError("the dataset has no 'phase_count'; give a table from gridflash.open_table")
    dims = tuple(table.phase_count.dims)
    if len(dims) != 3 or dims[:2] != _GRID_AXES:
        raise StoreError(
            f"pictures need a pressure x temperature x composition grid; this table's cells are "
            f"laid out along {dims!r}"
        )
    return dims[2]


def _dim(table: xr.Dataset, name: str, what: str) -> str:
    comp = _comp_dim(table)
    if name == "composition":
        return comp
    if name in (*_GRID_AXES, comp):
        return name
    raise InputError(
        f"{what} {name!r} is not an axis of this table; choose from pressure, temperature, "
        f"{comp} (or 'composition')"
    )


def _nodes(table: xr.Dataset, dim: str) -> np.ndarray:
    return np.asarray(table[dim].values, dtype=float)


def _fixed_value(table: xr.Dataset, dim: str, value: float | None, *, shown: str = "") -> float:
    """``value`` checked against the axis (its first node when None)."""
    nodes = _nodes(table, dim)
    if value is None:
        return float(nodes[0])
    value = float(value)
    what = shown or f"at[{dim!r}] = {value!r}"
    if dim == "mixture":
        if value not in nodes:
            raise InputError(
                f"{what} is not a stored mixture index (0 .. {nodes.size - 1}); a mixture axis "
                "is not interpolated"
            )
        return value
    tol = 1e-9 * max(float(np.max(np.abs(nodes))), 1e-300)
    if not (np.isfinite(value) and nodes[0] - tol <= value <= nodes[-1] + tol):
        units = _TABLE_UNITS.get(dim, "")
        raise InputError(
            f"{what} is outside the table ({dim} {nodes[0]:g} .. {nodes[-1]:g}{units}); give a "
            "value inside it"
        )
    return float(np.clip(value, nodes[0], nodes[-1]))


_TABLE_UNITS = {"pressure": " Pa", "temperature": " K"}


def _cut(table: xr.Dataset, x: str, y: str, at: Mapping[str, float] | None) -> _Slice:
    comp = _comp_dim(table)
    xd, yd = _dim(table, x, "x axis"), _dim(table, y, "y axis")
    if xd == yd:
        raise InputError(f"x and y are both {xd!r}; choose two different axes")
    for dim in (xd, yd):
        if table.sizes[dim] < 2:
            raise InputError(
                f"the table has a single {dim!r} value; plot two axes that have several values"
            )
    given: dict[str, float] = {}
    for name, value in dict(at or {}).items():
        dim = _dim(table, name, "at")
        if dim in (xd, yd):
            raise InputError(f"at[{name!r}] fixes a plotted axis; leave it out or plot others")
        given[dim] = value
    fixed = {dim: _fixed_value(table, dim, given.get(dim))
             for dim in ("pressure", "temperature", comp) if dim not in (xd, yd)}
    return _Slice(xd, yd, fixed)


def _display_points(table: xr.Dataset, dim: str) -> np.ndarray:
    """Display points along a plotted axis: the nodes, plus evenly spaced points between the
    first and last node along a continuous axis."""
    nodes = _nodes(table, dim)
    if dim == "mixture":
        return nodes
    return np.unique(np.concatenate([np.linspace(nodes[0], nodes[-1], RESOLUTION), nodes]))


def _field(table: xr.Dataset, cut: _Slice) -> _Field:
    """Every field of the cut at its display points (:func:`gridflash.lookup`, refined)."""
    from ._lookup import lookup

    xs, ys = _display_points(table, cut.x), _display_points(table, cut.y)
    grid_x, grid_y = np.meshgrid(xs, ys)
    where = {cut.x: grid_x.ravel(), cut.y: grid_y.ravel(), **cut.fixed}
    comp = _comp_dim(table)
    points = lookup(table, where["pressure"], where["temperature"], where[comp],
                    variables=[v for v in ("vapour_fraction", "liquid_density", "vapour_density",
                                           "liquid_viscosity", "vapour_viscosity")
                               if v in table.data_vars],
                    refine=True)
    return _Field(xs, ys, points)


def _bracket(table: xr.Dataset, dim: str, value: float) -> list[int]:
    """Indices of the node(s) at or around ``value`` along ``dim``."""
    nodes = _nodes(table, dim)
    hit = np.flatnonzero(np.isclose(nodes, value, rtol=1e-12, atol=0.0))
    if hit.size:
        return [int(hit[0])]
    upper = int(np.searchsorted(nodes, value))
    return [upper - 1, upper]


# --------------------------------------------------------------------------------------------
# Drawing
# --------------------------------------------------------------------------------------------


def _line_handle(colour: str, style: str, label: str, *, width: float = 1.6,
                 marker: str | None = None):
    from matplotlib.lines import Line2D

    return Line2D([], [], color=colour, linestyle=style, linewidth=width, marker=marker,
                  label=label)


def _vapour_fraction_contours(ax, xs, ys, vf, two) -> list[Any]:
    if two.sum() < 4 or min(xs.size, ys.size) < 2:
        return []
    cs = ax.contour(xs, ys, np.ma.masked_where(~two, vf), levels=_VF_LEVELS,
                    colors=_CONTOUR_COLOUR, linewidths=0.8)
    if not _label_contours(ax, cs):
        return []
    return [_line_handle(_CONTOUR_COLOUR, "-", "vapour fraction (mol/mol)", width=0.8)]


def _label_contours(ax, cs) -> bool:
    """Label each contour level once, at the middle of its longest piece, leaving out labels
    that would crowd one already placed (where the levels converge, near a critical point)."""
    to_axes = ax.transData + ax.transAxes.inverted()
    placed: list[np.ndarray] = []
    positions = []
    drawn = False
    for segments in cs.allsegs:
        pieces = [s for s in segments if len(s) >= 2]
        if not pieces:
            continue
        drawn = True
        longest = max(pieces, key=lambda s: np.sum(np.hypot(*np.diff(to_axes.transform(s),
                                                                      axis=0).T)))
        point = longest[len(longest) // 2]
        where = to_axes.transform(point)
        if all(np.hypot(*(where - other)) >= _LABEL_SPACING for other in placed):
            placed.append(where)
            positions.append(tuple(point))
    if positions:
        ax.clabel(cs, manual=positions, fmt="%.1f", fontsize=7, inline=True)
    return drawn


def _boundary(ax, table: xr.Dataset, cut: _Slice, scale: _Scales, field: _Field) -> list[Any]:
    """The phase boundary. With pressure on an axis: the saturation pressure solved at every
    display point of the other axis (:func:`gridflash.thermo.saturation_pressure`, bracketed by
    the display points where the phase count changes), one line per boundary counted from the
    top; otherwise the contour between one- and two-phase display points."""
    count = field.get("phase_count")
    if not ((count == 1).any() and (count == 2).any()):
        return []
    xs, ys = scale.convert(cut.x, field.xs), scale.convert(cut.y, field.ys)
    if "pressure" not in (cut.x, cut.y):
        ax.contour(xs, ys, np.where(count == 2, 2.0, 1.0), levels=[1.5],
                   colors=_SATURATION_COLOUR, linewidths=1.8)
    else:
        along, lines = _saturation_lines(table, cut, field)
        shown = scale.convert(cut.y if cut.x == "pressure" else cut.x, along)
        discrete = "mixture" in (cut.x, cut.y)  # one saturation pressure per stored mixture
        for line in lines:
            p = scale.convert("pressure", line)
            ax.plot(*((shown, p) if cut.y == "pressure" else (p, shown)),
                    color=_SATURATION_COLOUR, linewidth=0 if discrete else 1.8,
                    marker="_" if discrete else None, markersize=14, markeredgewidth=2.0)
    return [_line_handle(_SATURATION_COLOUR, "-", "phase boundary (bubble / dew points)")]


def _saturation_lines(table: xr.Dataset, cut: _Slice,
                      field: _Field) -> tuple[np.ndarray, list[np.ndarray]]:
    """Saturation pressures (Pa) along the non-pressure plotted axis: the display points of
    that axis, and one array per boundary (first: the highest pressure), NaN where absent."""
    from ..store import mixture_from_store
    from ..thermo import saturation_pressure

    count = field.get("phase_count")
    feed = np.asarray(field.points.feed_composition.values).reshape(*count.shape, -1)
    temperature = np.asarray(field.points.temperature.values).reshape(count.shape)
    pressures = field.ys if cut.y == "pressure" else field.xs
    if cut.x == "pressure":  # make pressure the first axis: (n_pressure, n_along)
        count, feed, temperature = count.T, feed.transpose(1, 0, 2), temperature.T
    along = field.xs if cut.y == "pressure" else field.ys
    changes = (count[1:] != count[:-1]) & (count[1:] > 0) & (count[:-1] > 0)
    i, j = np.nonzero(changes)  # between pressures i and i + 1, at display point j
    if i.size == 0:
        return along, []
    two_below = count[i, j] == 2
    p_two = np.where(two_below, pressures[i], pressures[i + 1])
    p_one = np.where(two_below, pressures[i + 1], pressures[i])
    solved, _, _ = saturation_pressure(mixture_from_store(table), temperature[i, j],
                                       feed[i, j], p_two, p_one)
    rank = np.zeros(i.size, dtype=int)  # 0 for the highest boundary of each display point
    for k in range(i.size):
        rank[k] = int(np.sum((j == j[k]) & (i > i[k])))
    lines = []
    for r in range(rank.max() + 1):
        line = np.full(along.size, np.nan)
        line[j[rank == r]] = solved[rank == r]
        lines.append(line)
    return along, lines


def _stored_saturation(ax, table: xr.Dataset, cut: _Slice, scale: _Scales) -> list[Any]:
    """The stored saturation pressures that lie in the plotted plane (a node there)."""
    if "pressure" not in (cut.x, cut.y) or "saturation_pressure" not in table:
        return []
    other = cut.x if cut.y == "pressure" else cut.y
    fixed_dim = next(d for d in cut.fixed if d != "pressure")
    index = _bracket(table, fixed_dim, cut.fixed[fixed_dim])
    if len(index) != 1:
        return []  # between nodes: no stored line in this plane
    sel = {fixed_dim: index[0]}
    along = scale.convert(other, _nodes(table, other))
    handles = []
    for name, marker, text in (("saturation_pressure", "o", "saturation pressure"),
                               ("lower_saturation_pressure", "s", "lower dew point")):
        if name not in table:
            continue
        p = scale.convert("pressure", table[name].isel(sel).values)
        if not np.isfinite(p).any():
            continue
        xy = (along, p) if cut.y == "pressure" else (p, along)
        ax.plot(*xy, linestyle="none", marker=marker, color=_SATURATION_COLOUR, markersize=3.5,
                label=text)
        handles.append(_line_handle(_SATURATION_COLOUR, "none", f"{text} (stored)",
                                    marker=marker))
    if other == "temperature" and "cricondenbar_pressure" in table:
        cb_p = float(table.cricondenbar_pressure.isel(sel).values)
        cb_t = float(table.cricondenbar_temperature.isel(sel).values)
        if np.isfinite(cb_p):
            point = (scale.convert("temperature", cb_t), scale.convert("pressure", cb_p))
            xy = point if cut.y == "pressure" else point[::-1]
            ax.plot(*xy, linestyle="none", marker="^", color=_SATURATION_COLOUR, markersize=8,
                    label="cricondenbar")
            handles.append(_line_handle(_SATURATION_COLOUR, "none", "cricondenbar", marker="^"))
    return handles


def _unconverged(ax, table: xr.Dataset, cut: _Slice, scale: _Scales) -> list[Any]:
    """Grid nodes of the plane (or of the planes around it) whose flash did not converge."""
    sel = {d: _bracket(table, d, v) for d, v in cut.fixed.items()}
    plane = table[["converged", "phase_count"]].isel(sel)
    bad = (~plane.converged & (plane.phase_count > 0)).any(dim=list(sel))
    bad = bad.transpose(cut.y, cut.x).values
    if not bad.any():
        return []
    yy, xx = np.nonzero(bad)
    xs = scale.convert(cut.x, _nodes(table, cut.x))
    ys = scale.convert(cut.y, _nodes(table, cut.y))
    ax.plot(xs[xx], ys[yy], linestyle="none", marker="x", color="black", markersize=6,
            label="not converged")
    return [_line_handle("black", "none", "not converged (grid node)", marker="x")]


def _decorate(ax, table: xr.Dataset, cut: _Slice, scale: _Scales, field: _Field,
              what: str) -> None:
    for dim, setter, limits, label in ((cut.x, ax.xaxis, ax.set_xlim, ax.set_xlabel),
                                       (cut.y, ax.yaxis, ax.set_ylim, ax.set_ylabel)):
        label(scale.label(table, dim))
        shown = scale.convert(dim, field.xs if dim == cut.x else field.ys)
        if dim == "mixture":
            _mixture_ticks(table, setter)
            limits(shown[0] - 0.5, shown[-1] + 0.5)  # one tile per stored mixture
        else:
            limits(shown[0], shown[-1])  # the data's extent, nothing beyond
    fixed = [scale.fixed_text(table, dim, value) for dim, value in cut.fixed.items()]
    ax.set_title(f"{what}" + (f" at {', '.join(fixed)}" if fixed else ""), fontsize=10)


def _mixture_ticks(table: xr.Dataset, axis) -> None:
    """Ticks of a mixture axis at the stored mixtures, labelled by their stream fractions."""
    from matplotlib.ticker import FixedLocator, FuncFormatter, MaxNLocator

    nodes = _nodes(table, "mixture")
    if "stream_fraction" not in table:
        axis.set_major_locator(MaxNLocator(integer=True))
        return
    fractions = table.stream_fraction.transpose("mixture", "stream").values
    step = -(-nodes.size // 8)
    axis.set_major_locator(FixedLocator(nodes[::step]))
    axis.set_minor_locator(FixedLocator(nodes))
    axis.set_major_formatter(FuncFormatter(
        lambda v, _: "/".join(f"{f:.2g}" for f in fractions[int(round(v))])
        if 0 <= round(v) < len(fractions) else ""))
    axis.set_tick_params(labelsize=7, labelrotation=30 if axis.axis_name == "x" else 0)


def _barycentric_xy(fractions: np.ndarray) -> np.ndarray:
    """Cartesian points of barycentric coordinates: stream 1 at (0, 0), 2 at (1, 0), 3 on top."""
    f = np.asarray(fractions, dtype=float)
    return np.array([f[:, 1] + 0.5 * f[:, 2], np.sqrt(3.0) / 2.0 * f[:, 2]])


class _Scales:
    """Conversion of the SI axes to the units shown, and their labels."""

    def __init__(self, p_unit: str, t_unit: str) -> None:
        try:
            self.p_unit = pressure_unit(p_unit, key="pressure_unit")
            self.t_unit = temperature_unit(t_unit, key="temperature_unit")
        except ConfigError as exc:
            raise InputError(str(exc)) from None

    def convert(self, dim: str, values) -> np.ndarray:
        values = np.asarray(values, dtype=float)
        if dim == "pressure":
            return np.asarray(pressure_from_pa(values, self.p_unit))
        if dim == "temperature":
            return np.asarray(temperature_from_kelvin(values, self.t_unit))
        return values

    def text(self, dim: str, value: float, *, pretty: bool = False) -> str:
        """A value in the shown units: ``80degC`` (file names) or ``80 °C`` (titles)."""
        shown = float(self.convert(dim, value))
        gap = " " if pretty else ""
        if dim == "pressure":
            return f"{shown:.4g}{gap}{self.p_unit}"
        if dim == "temperature":
            unit = {"degC": "°C", "degF": "°F"}.get(self.t_unit, self.t_unit)
            return f"{shown:.4g}{gap}{unit if pretty else self.t_unit}"
        return f"{shown:.4g}"

    def fixed_text(self, table: xr.Dataset, dim: str, value: float) -> str:
        """A fixed axis in a title: ``mixing ratio 0.3``, or a mixture by its streams."""
        if dim == "mixture" and "stream_fraction" in table:
            fractions = table.stream_fraction.isel(mixture=int(round(value))).values
            streams = [str(s).replace("_", " ") for s in table.stream.values]
            parts = [f"{f:.3g} {s}" for f, s in zip(fractions, streams, strict=True) if f > 0]
            return "feed " + " + ".join(parts)
        name = {"mixing_ratio": "mixing ratio"}.get(dim, dim)
        return f"{name} {self.text(dim, value, pretty=True)}"

    def label(self, table: xr.Dataset, dim: str) -> str:
        if dim == "pressure":
            return f"pressure ({self.p_unit}, absolute)"
        if dim == "temperature":
            shown = {"degC": "°C", "degF": "°F"}.get(self.t_unit, self.t_unit)
            return f"temperature ({shown})"
        if dim == "mixing_ratio" and "stream" in table.coords and table.sizes["stream"] == 2:
            second = str(table.stream.values[1]).replace("_", " ")
            return f"mixing ratio (mole fraction of {second} in the feed)"
        if dim == "mixture" and "stream" in table.coords:
            names = " / ".join(str(s).replace("_", " ") for s in table.stream.values)
            return f"feed: mole fractions of {names}"
        return str(table[dim].attrs.get("long_name", dim))
