"""Pictures of a table: phase maps and property maps on any two grid axes, as PNG files.

matplotlib is an optional dependency (``pip install "gridflash[plot]"``); it is imported only
when a picture is drawn. Figures are plain :class:`matplotlib.figure.Figure` objects (no pyplot
state), so the functions are safe in scripts, servers and tests alike.

A phase map colours every grid node by its phase state (two phases, one vapour-like phase, one
liquid-like phase), draws the stored saturation line (see
:mod:`gridflash.analysis._saturation_lines`) where pressure is one of the axes, contours the vapour
fraction inside the two-phase region and marks unconverged cells. Property maps show the
liquid and vapour mass densities and viscosities the same way, blank where a phase is absent.
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
from ..config import pressure_to_pa, pressure_unit, temperature_to_kelvin, temperature_unit

__all__ = [
    "PHASE_COLOURS",
    "PLOT_KINDS",
    "parse_at",
    "phase_map",
    "plot_table",
    "property_map",
]

#: Fill colours of the phase states, indexed by ``phase_label`` (0 two-phase, 1 vapour-like,
#: 2 liquid-like, 3 three-phase).
PHASE_COLOURS: tuple[str, ...] = ("#f2c14e", "#bfe3f0", "#7fb685", "#c8553d")
_PHASE_NAMES = ("two phases", "one phase, vapour-like", "one phase, liquid-like", "three phases")
_SATURATION_COLOUR = "#8c1c13"
_CONTOUR_COLOUR = "#3b3b3b"
_ABSENT_COLOUR = "#e6e6e6"
_VF_LEVELS = (0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7, 0.8, 0.9)

#: Figures :func:`plot_table` can draw, and the variables each one shows.
PLOT_KINDS: dict[str, tuple[str, ...]] = {
    "phase": ("phase_label",),
    "density": ("liquid_density", "vapour_density"),
    "viscosity": ("liquid_viscosity", "vapour_viscosity"),
}
_PROPERTY_SCALE = {"kg m-3": (1.0, "kg/m³"), "Pa s": (1e3, "mPa·s")}

_GRID_AXES = ("pressure", "temperature")


@dataclass(frozen=True)
class _Slice:
    """A 2-D cut through the table: the two plotted dimensions and the fixed nodes."""

    x: str
    y: str
    fixed: dict[str, int]  # dimension -> node index
    data: xr.Dataset  # selected, dims (y, x) order on transpose


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
        Value of each remaining dimension, in the table's units (Pa, K, the composition
        coordinate); the nearest grid node is used. A dimension left out is fixed at its first
        node.
    pressure_unit, temperature_unit : str
        Units shown on the axes (any accepted by the config, e.g. ``bar``, ``MPa``, ``psia``;
        ``degC``, ``K``, ``degF``).
    contours : bool
        Draw labelled vapour-fraction contours inside the two-phase region.

    Returns
    -------
    matplotlib.figure.Figure
        One axes; its first collection is the phase-state mesh (values 0 two-phase,
        1 vapour-like, 2 liquid-like, masked where not computed), coloured with
        :data:`PHASE_COLOURS`. The saturation line (where pressure is an axis) is a line
        labelled ``"saturation pressure"``.

    Raises
    ------
    InputError
        Unknown or repeated axes, unknown units.
    GridflashError
        matplotlib is not installed.
    """
    figure_cls = _matplotlib()
    cut = _cut(table, x, y, at)
    scale = _Scales(pressure_unit, temperature_unit)
    fig = figure_cls(figsize=(7.5, 5.6), dpi=100, layout="constrained")
    ax = fig.add_subplot()
    from matplotlib.colors import ListedColormap
    from matplotlib.patches import Patch

    xs, ys = scale.values(table, cut.x), scale.values(table, cut.y)
    label = cut.data.phase_label.transpose(cut.y, cut.x).values.astype(float)
    label = np.ma.masked_less(label, 0.0)
    ax.pcolormesh(xs, ys, label, shading="nearest", cmap=ListedColormap(PHASE_COLOURS),
                  vmin=-0.5, vmax=len(PHASE_COLOURS) - 0.5)
    handles: list[Any] = [Patch(facecolor=c, edgecolor="#888888", label=n)
                          for c, n in zip(PHASE_COLOURS, _PHASE_NAMES, strict=True)]
    if contours:
        vf = cut.data.vapour_fraction.transpose(cut.y, cut.x).values
        two = cut.data.phase_count.transpose(cut.y, cut.x).values == 2
        masked = np.ma.masked_where(~two, vf)
        if two.sum() >= 4 and min(xs.size, ys.size) >= 2:
            cs = ax.contour(xs, ys, masked, levels=_VF_LEVELS, colors=_CONTOUR_COLOUR,
                            linewidths=0.8)
            if cs.allsegs and any(len(s) for s in cs.allsegs):
                ax.clabel(cs, fmt="%.1f", fontsize=7)
                handles.append(_line_handle(_CONTOUR_COLOUR, "-", "vapour fraction (mol/mol)",
                                            width=0.8))
    handles += _draw_saturation(ax, table, cut, scale)
    bad = ~cut.data.converged.transpose(cut.y, cut.x).values & (
        cut.data.phase_count.transpose(cut.y, cut.x).values > 0)
    if bad.any():
        yy, xx = np.nonzero(bad)
        ax.plot(xs[xx], ys[yy], linestyle="none", marker="x", color="black", markersize=6,
                label="not converged")
        handles.append(_line_handle("black", "none", "not converged", marker="x"))
    _decorate(ax, table, cut, scale, "Phase map")
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
        Two axes (liquid, vapour); each one's first collection holds the plotted values in the
        shown units, masked where the phase is absent (drawn in light grey).
    """
    if kind not in ("density", "viscosity"):
        raise InputError(f"kind={kind!r} must be 'density' or 'viscosity'")
    figure_cls = _matplotlib()
    cut = _cut(table, x, y, at)
    scale = _Scales(pressure_unit, temperature_unit)
    fig = figure_cls(figsize=(11.0, 4.8), dpi=100, layout="constrained")
    axes = fig.subplots(1, 2, sharex=True, sharey=True)
    xs, ys = scale.values(table, cut.x), scale.values(table, cut.y)
    for ax, name in zip(axes, PLOT_KINDS[kind], strict=True):
        var = cut.data[name]
        factor, unit = _PROPERTY_SCALE.get(var.attrs.get("units", ""), (1.0, var.attrs.get(
            "units", "")))
        values = np.ma.masked_invalid(var.transpose(cut.y, cut.x).values * factor)
        ax.set_facecolor(_ABSENT_COLOUR)
        mesh = ax.pcolormesh(xs, ys, values, shading="nearest",
                             cmap="cividis" if kind == "density" else "magma")
        phase = name.split("_")[0]
        fig.colorbar(mesh, ax=ax, label=f"{phase} {kind} ({unit})")
        handles = _draw_saturation(ax, table, cut, scale)
        _decorate(ax, table, cut, scale, f"{phase.capitalize()} {kind}")
        if handles:
            ax.legend(handles=handles, loc="best", fontsize=7)
    fig.text(0.5, 0.005, "light grey: phase absent", ha="center", va="bottom", fontsize=8)
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
        As for :func:`phase_map`.
    out : path, optional
        Folder for the files (created if needed); default ``<store name>_plots`` next to the
        store, or the current folder for an opened table.
    kinds : sequence of {"phase", "density", "viscosity"}
        Which figures to write.
    dpi : int
        Resolution of the PNG files.

    Returns
    -------
    list of Path
        The files written, named ``<kind>_<y>_vs_<x>[_<dim>-<value>...].png``.
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
    cut = _cut(table, x, y, at)
    scale = _Scales(pressure_unit, temperature_unit)
    suffix = "".join(f"_{dim}-{scale.text(table, dim, table[dim].values[i])}"
                     for dim, i in cut.fixed.items() if table.sizes[dim] > 1)
    try:
        folder.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise StoreError(f"cannot create the folder {str(folder)!r}: {exc.strerror}") from None
    written = []
    for kind in kinds:
        if kind == "phase":
            fig = phase_map(table, x=cut.x, y=cut.y, at=_at_values(table, cut),
                            pressure_unit=pressure_unit, temperature_unit=temperature_unit)
        else:
            fig = property_map(table, kind, x=cut.x, y=cut.y, at=_at_values(table, cut),
                               pressure_unit=pressure_unit, temperature_unit=temperature_unit)
        name = re.sub(r"[^A-Za-z0-9_.=+-]", "", f"{kind}_{cut.y}_vs_{cut.x}{suffix}") + ".png"
        target = folder / name
        try:
            fig.savefig(target, dpi=dpi)
        except OSError as exc:
            raise StoreError(f"cannot write {str(target)!r}: {exc.strerror}") from None
        written.append(target)
    return written


def parse_at(table: xr.Dataset, items: Sequence[str]) -> dict[str, float]:
    """Parse ``DIM=VALUE`` texts (``temperature=80degC``, ``pressure=150bar``,
    ``mixing_ratio=0.3``) into table units.

    Pressures and temperatures need a unit (any the config accepts); composition coordinates
    are plain numbers. ``composition`` names the table's composition dimension.

    Raises
    ------
    InputError
        Malformed text, unknown dimension or unit.
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
    return out


# --------------------------------------------------------------------------------------------
# Slicing, units, decoration
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
    at = dict(at or {})
    fixed: dict[str, int] = {}
    for name, value in at.items():
        dim = _dim(table, name, "at")
        if dim in (xd, yd):
            raise InputError(f"at[{name!r}] fixes a plotted axis; leave it out or plot others")
        nodes = np.asarray(table[dim].values, dtype=float)
        fixed[dim] = int(np.argmin(np.abs(nodes - float(value))))
    for dim in ("pressure", "temperature", comp):
        if dim not in (xd, yd) and dim not in fixed:
            fixed[dim] = 0
    data = table.isel(fixed)
    return _Slice(xd, yd, fixed, data)


def _at_values(table: xr.Dataset, cut: _Slice) -> dict[str, float]:
    return {dim: float(table[dim].values[i]) for dim, i in cut.fixed.items()}


class _Scales:
    """Conversion of the SI axes to the units shown, and their labels."""

    def __init__(self, p_unit: str, t_unit: str) -> None:
        try:
            self.p_unit = pressure_unit(p_unit, key="pressure_unit")
            self.t_unit = temperature_unit(t_unit, key="temperature_unit")
        except ConfigError as exc:
            raise InputError(str(exc)) from None
        self.p_factor = float(pressure_to_pa(1.0, self.p_unit))
        # T/K = offset + factor * t; from two temperatures valid in every unit
        low = float(temperature_to_kelvin(1000.0, self.t_unit))
        self.t_factor = (float(temperature_to_kelvin(2000.0, self.t_unit)) - low) / 1000.0
        self.t_offset = low - 1000.0 * self.t_factor

    def convert(self, dim: str, values) -> np.ndarray:
        values = np.asarray(values, dtype=float)
        if dim == "pressure":
            return values / self.p_factor
        if dim == "temperature":
            return (values - self.t_offset) / self.t_factor
        return values

    def values(self, table: xr.Dataset, dim: str) -> np.ndarray:
        return self.convert(dim, table[dim].values)

    def text(self, table: xr.Dataset, dim: str, value: float, *, pretty: bool = False) -> str:
        """A value in the shown units: ``80degC`` (file names) or ``80 °C`` (titles)."""
        shown = float(self.convert(dim, value))
        gap = " " if pretty else ""
        if dim == "pressure":
            return f"{shown:g}{gap}{self.p_unit}"
        if dim == "temperature":
            unit = {"degC": "°C", "degF": "°F"}.get(self.t_unit, self.t_unit)
            return f"{shown:g}{gap}{unit if pretty else self.t_unit}"
        return f"{shown:g}"

    def label(self, table: xr.Dataset, dim: str) -> str:
        if dim == "pressure":
            return f"pressure ({self.p_unit}, absolute)"
        if dim == "temperature":
            shown = {"degC": "°C", "degF": "°F"}.get(self.t_unit, self.t_unit)
            return f"temperature ({shown})"
        if dim == "mixing_ratio" and "stream" in table.coords and table.sizes["stream"] == 2:
            second = str(table.stream.values[1]).replace("_", " ")
            return f"mixing ratio (mole fraction of {second} in the feed)"
        if dim == "mixture":
            return "mixture number"
        return str(table[dim].attrs.get("long_name", dim))


def _line_handle(colour: str, style: str, label: str, *, width: float = 1.6,
                 marker: str | None = None):
    from matplotlib.lines import Line2D

    return Line2D([], [], color=colour, linestyle=style, linewidth=width, marker=marker,
                  label=label)


def _draw_saturation(ax, table: xr.Dataset, cut: _Slice, scale: _Scales) -> list[Any]:
    """The stored saturation line(s) where pressure is one of the plotted axes."""
    if "pressure" not in (cut.x, cut.y) or "saturation_pressure" not in table:
        return []
    other = cut.x if cut.y == "pressure" else cut.y
    if other == "temperature":
        comp = [d for d in cut.fixed if d != "pressure"][0]
        sel = {comp: cut.fixed[comp]}
    else:
        sel = {"temperature": cut.fixed["temperature"]}
    along = scale.values(table, other)
    handles = []
    for name, style, text in (
        ("saturation_pressure", "-", "saturation pressure (bubble / dew point)"),
        ("lower_saturation_pressure", "--", "lower dew point"),
    ):
        if name not in table:
            continue
        p = scale.convert("pressure", table[name].isel(sel).values)
        if not np.isfinite(p).any():
            continue
        xy = (along, p) if cut.y == "pressure" else (p, along)
        ax.plot(*xy, linestyle=style, color=_SATURATION_COLOUR, linewidth=1.8, marker="o",
                markersize=3, label="saturation pressure" if name == "saturation_pressure"
                else text)
        handles.append(_line_handle(_SATURATION_COLOUR, style, text, marker="o"))
    if other == "temperature" and "cricondenbar_pressure" in table:
        comp = [d for d in cut.fixed if d != "pressure"][0]
        cb_p = float(table.cricondenbar_pressure.isel({comp: cut.fixed[comp]}).values)
        cb_t = float(table.cricondenbar_temperature.isel({comp: cut.fixed[comp]}).values)
        if np.isfinite(cb_p):
            point = (scale.convert("temperature", cb_t), scale.convert("pressure", cb_p))
            xy = point if cut.y == "pressure" else point[::-1]
            ax.plot(*xy, linestyle="none", marker="^", color=_SATURATION_COLOUR, markersize=8,
                    label="cricondenbar")
            handles.append(_line_handle(_SATURATION_COLOUR, "none", "cricondenbar", marker="^"))
    return handles


def _decorate(ax, table: xr.Dataset, cut: _Slice, scale: _Scales, what: str) -> None:
    ax.set_xlabel(scale.label(table, cut.x))
    ax.set_ylabel(scale.label(table, cut.y))
    xs, ys = scale.values(table, cut.x), scale.values(table, cut.y)
    ax.set_xlim(*_limits(xs))
    ax.set_ylim(*_limits(ys))
    fixed = [f"{_short(table, dim)} {scale.text(table, dim, table[dim].values[i], pretty=True)}"
             for dim, i in cut.fixed.items()]
    ax.set_title(f"{what}" + (f" at {', '.join(fixed)}" if fixed else ""), fontsize=10)


def _limits(values: np.ndarray) -> tuple[float, float]:
    if values.size == 1:
        return float(values[0]) - 0.5, float(values[0]) + 0.5
    first = (values[1] - values[0]) / 2.0
    last = (values[-1] - values[-2]) / 2.0
    return float(values[0] - first), float(values[-1] + last)


def _short(table: xr.Dataset, dim: str) -> str:
    return {"mixing_ratio": "mixing ratio", "mixture": "mixture"}.get(dim, dim)
