"""Pictures: the phase map and property maps show the store's data, in the PNG files too."""

from __future__ import annotations

import sys

import numpy as np
import pytest
import xarray as xr
from click.testing import CliRunner
from matplotlib.colors import to_rgb
from matplotlib.image import imread

import gridflash
from gridflash.analysis._plot import PHASE_COLOURS, parse_at, phase_map, plot_table, property_map
from gridflash.cli import cli

from ._table_helpers import BINARY_CONFIG, build_store

PNG_MAGIC = b"\x89PNG\r\n\x1a\n"  # PNG specification (W3C, 2003), sec. 5.2


@pytest.fixture(scope="module")
def store(tmp_path_factory):
    return build_store(tmp_path_factory, "binary", BINARY_CONFIG)


@pytest.fixture(scope="module")
def table(store) -> xr.Dataset:
    return gridflash.open_table(store).load()


def _pixel_colour(image: np.ndarray, ax, x: float, y: float, half: int = 3) -> np.ndarray:
    """The most common colour in a small patch around data point (x, y) of a saved figure."""
    fig = ax.figure
    scale = image.shape[0] / (fig.get_size_inches()[1] * fig.dpi)
    px, py = ax.transData.transform((x, y)) * scale
    row, col = int(round(image.shape[0] - py)), int(round(px))
    patch = image[row - half:row + half + 1, col - half:col + half + 1, :3].reshape(-1, 3)
    colours, counts = np.unique(np.round(patch, 2), axis=0, return_counts=True)
    return colours[np.argmax(counts)]


def _interior_nodes(label: np.ndarray, value: int) -> list[tuple[int, int]]:
    """(row, col) of nodes whose neighbours (within the grid) all have the given phase label."""
    out = []
    for i in range(label.shape[0]):
        for j in range(label.shape[1]):
            if np.all(label[max(i - 1, 0):i + 2, max(j - 1, 0):j + 2] == value):
                out.append((i, j))
    return out


def _mesh(ax) -> np.ndarray:
    """The first collection's values as (rows, columns) of the display points."""
    mesh = ax.collections[0]
    coords = mesh.get_coordinates()
    return np.ma.filled(np.ma.asarray(mesh.get_array(), dtype=float), np.nan).reshape(
        coords.shape[0] - 1, coords.shape[1] - 1)


def _display(values: np.ndarray, n_nodes_between: int = 161) -> np.ndarray:
    """The display points of a continuous axis, as the plots make them."""
    return np.unique(np.concatenate([np.linspace(values[0], values[-1], n_nodes_between),
                                     values]))


def test_phase_map_shows_stored_states_at_nodes_and_exact_flashes_between(table):
    """At every grid node the map shows the stored phase state; between nodes it shows what an
    exact flash of the table's fluid gives (reference: gridflash.flash at a sample of display
    points) -- a field, not nearest-node tiles."""
    fig = phase_map(table, at={"mixing_ratio": 0.5})
    ax = fig.axes[0]
    shown = _mesh(ax)
    t, p = _display(table.temperature.values), _display(table.pressure.values)
    assert shown.shape == (p.size, t.size)
    stored = table.phase_label.sel(mixing_ratio=0.5).transpose("pressure", "temperature").values
    rows = np.searchsorted(p, table.pressure.values)
    cols = np.searchsorted(t, table.temperature.values)
    np.testing.assert_array_equal(shown[np.ix_(rows, cols)], stored)
    rng = np.random.default_rng(3)
    i, j = rng.integers(0, p.size, 400), rng.integers(0, t.size, 400)
    z = table.feed_composition.sel(mixing_ratio=0.5).values
    exact = gridflash.flash(gridflash.mixture_from_store(table), p[i], t[j], z)
    agree = np.mean(shown[i, j] == exact.phase_label)
    assert agree >= 0.98, agree  # the rest: label changes inside cells of agreeing corners
    assert ax.get_xlabel() == "temperature (°C)"
    assert ax.get_ylabel() == "pressure (bar, absolute)"
    assert "mixing ratio 0.5" in ax.get_title()
    # the axes end at the first and last node: nothing drawn beyond the data
    np.testing.assert_allclose(ax.get_xlim(), table.temperature.values[[0, -1]] - 273.15)
    np.testing.assert_allclose(ax.get_ylim(), table.pressure.values[[0, -1]] / 1e5)
    legend = [t.get_text() for t in ax.get_legend().get_texts()]
    assert {"two phases", "one phase, vapour-like", "one phase, liquid-like",
            "phase boundary (bubble / dew points)", "saturation pressure (stored)",
            "cricondenbar"} <= set(legend)


def test_phase_boundary_is_the_exact_saturation_line(table):
    """The drawn boundary is the saturation pressure at every display temperature (reference:
    gridflash.thermo.saturation_pressure bracketed independently by the grid nodes), smooth
    between grid temperatures, and the stored saturation pressures are marked on it."""
    from gridflash.thermo import saturation_pressure

    fig = phase_map(table, at={"mixing_ratio": 0.2}, pressure_unit="MPa", temperature_unit="K")
    ax = fig.axes[0]
    lines = [line for line in ax.get_lines() if line.get_linestyle() == "-"]
    upper = max(lines, key=lambda line: np.nanmax(line.get_ydata()))
    t_shown, p_shown = np.asarray(upper.get_xdata()), np.asarray(upper.get_ydata())
    assert t_shown.size > 100  # display points, not only the 7 grid temperatures
    stored = table.sel(mixing_ratio=0.2)
    mixture = gridflash.mixture_from_store(table)
    pressures = table.pressure.values
    for k in range(0, t_shown.size, 20):
        if not np.isfinite(p_shown[k]):
            continue
        counts = gridflash.flash(mixture, pressures, np.full(pressures.size, t_shown[k]),
                                 stored.feed_composition.values).phase_count
        top = np.flatnonzero(counts == 2).max()
        if top + 1 >= pressures.size:
            continue
        ref, _, _ = saturation_pressure(mixture, [t_shown[k]], stored.feed_composition.values[None],
                                        [pressures[top]], [pressures[top + 1]])
        assert p_shown[k] * 1e6 == pytest.approx(ref[0], rel=1e-6)
    marks = {line.get_label(): line for line in ax.get_lines()}["saturation pressure"]
    np.testing.assert_allclose(marks.get_ydata(), stored.saturation_pressure.values / 1e6,
                               rtol=1e-15)
    on_line = np.interp(marks.get_xdata(), t_shown, p_shown)
    finite = np.isfinite(marks.get_ydata()) & np.isfinite(on_line)
    assert finite.sum() >= 3
    np.testing.assert_allclose(on_line[finite], marks.get_ydata()[finite], rtol=2e-3)
    assert ax.get_ylabel() == "pressure (MPa, absolute)"


def test_contour_labels_do_not_overlap(table):
    """Near the critical point the vapour-fraction contours converge; their labels must not be
    drawn on top of each other."""
    fig = phase_map(table, at={"mixing_ratio": 0.5})
    fig.canvas.draw()
    ax = fig.axes[0]
    boxes = [t.get_window_extent() for t in ax.texts if t.get_text()]
    assert len(boxes) >= 3
    for a in range(len(boxes)):
        for b in range(a + 1, len(boxes)):
            assert not boxes[a].overlaps(boxes[b]), (ax.texts[a].get_text(),
                                                     ax.texts[b].get_text())


def _inset(values: np.ndarray, k: int) -> float:
    if k == 0:
        return values[0] + 0.25 * (values[1] - values[0])
    if k == values.size - 1:
        return values[-1] - 0.25 * (values[-1] - values[-2])
    return values[k]


def test_phase_map_png_pixels_show_the_phase_regions(table, tmp_path):
    """Sample the saved PNG at nodes deep inside each region: the pixel colour is the region's
    colour from PHASE_COLOURS (the store says which region each node is in)."""
    fig = phase_map(table, at={"mixing_ratio": 0.5}, contours=False)
    path = tmp_path / "phase.png"
    fig.savefig(path, dpi=100)
    assert path.read_bytes()[:8] == PNG_MAGIC
    image = imread(path)
    ax = fig.axes[0]
    label = table.phase_label.sel(mixing_ratio=0.5).transpose("pressure", "temperature").values
    t_c = table.temperature.values - 273.15
    p_bar = table.pressure.values / 1e5
    checked = 0
    for value in (0, 1, 2):
        nodes = _interior_nodes(label, value)
        assert nodes, f"no interior node with label {value}"
        for i, j in nodes[:: max(1, len(nodes) // 4)]:
            # a quarter of a cell inside the axes for nodes on their edge (the axes end there)
            colour = _pixel_colour(image, ax, _inset(t_c, j), _inset(p_bar, i))
            np.testing.assert_allclose(colour, to_rgb(PHASE_COLOURS[value]), atol=0.02,
                                       err_msg=f"node {(i, j)} label {value}")
            checked += 1
    assert checked >= 6


def test_vapour_fraction_contours_lie_in_the_two_phase_region(table):
    fig = phase_map(table, at={"mixing_ratio": 0.5})
    ax = fig.axes[0]
    contour = [c for c in ax.collections[1:] if hasattr(c, "levels") and len(c.levels) > 1][0]
    assert list(contour.levels) == pytest.approx([0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7, 0.8, 0.9])
    # every contour vertex is a two-phase state (reference: an exact flash there)
    vertices = np.concatenate([p.vertices for p in contour.get_paths() if len(p.vertices)])
    z = table.feed_composition.sel(mixing_ratio=0.5).values
    exact = gridflash.flash(gridflash.mixture_from_store(table), vertices[::7, 1] * 1e5,
                            vertices[::7, 0] + 273.15, z)
    assert np.mean(exact.phase_count == 2) >= 0.99


def test_property_maps_show_densities_and_viscosities(table):
    fig = property_map(table, "density", x="mixing_ratio", y="pressure",
                       at={"temperature": 270.0})
    liquid_ax, vapour_ax = fig.axes[:2]
    stored = table.liquid_density.sel(temperature=270.0).transpose("pressure",
                                                                     "mixing_ratio").values
    shown = _mesh(liquid_ax)
    rows = np.searchsorted(_display(table.pressure.values), table.pressure.values)
    cols = np.searchsorted(_display(table.mixing_ratio.values), table.mixing_ratio.values)
    at_nodes = shown[np.ix_(rows, cols)]
    assert np.array_equal(np.isnan(at_nodes), np.isnan(stored))  # blank where no liquid
    np.testing.assert_allclose(at_nodes, stored, equal_nan=True)
    assert liquid_ax.get_xlabel().startswith("mixing ratio (mole fraction of methane")
    fig = property_map(table, "viscosity", at={"mixing_ratio": 0.8})
    stored = table.vapour_viscosity.sel(mixing_ratio=0.8).transpose("pressure",
                                                                      "temperature").values
    shown = _mesh(fig.axes[1])
    rows = np.searchsorted(_display(table.pressure.values), table.pressure.values)
    cols = np.searchsorted(_display(table.temperature.values), table.temperature.values)
    np.testing.assert_allclose(shown[np.ix_(rows, cols)], stored * 1e3, equal_nan=True)
    colourbar_labels = [a.get_ylabel() for a in fig.axes[2:]]
    assert "vapour viscosity (mPa·s)" in colourbar_labels


@pytest.mark.slow
def test_plot_table_writes_the_files(table, tmp_path):
    files = plot_table(table, x="temperature", y="pressure", at={"mixing_ratio": 0.8},
                       out=tmp_path / "figs")
    assert [f.name for f in files] == [
        "phase_pressure_vs_temperature_mixing_ratio-0.8.png",
        "density_pressure_vs_temperature_mixing_ratio-0.8.png",
        "viscosity_pressure_vs_temperature_mixing_ratio-0.8.png",
    ]
    for f in files:
        assert f.read_bytes()[:8] == PNG_MAGIC
        image = imread(f)
        assert image.shape[0] > 400 and image.shape[1] > 600
        assert np.unique(image.reshape(-1, image.shape[2]), axis=0).shape[0] > 20


def test_cli_plot(store, tmp_path):
    result = CliRunner().invoke(cli, [
        "plot", str(store), "--x", "composition", "--y", "temperature",
        "--at", "pressure=40.5bar", "--kind", "phase", "--out", str(tmp_path)])
    assert result.exit_code == 0, result.output
    written = tmp_path / "phase_temperature_vs_mixing_ratio_pressure-40.5bar.png"
    assert f"wrote {written}" in result.output
    assert written.read_bytes()[:8] == PNG_MAGIC
    bad = CliRunner().invoke(cli, ["plot", str(store), "--at", "temperature=80"])
    assert bad.exit_code == 1
    assert bad.output.strip() == ("Error: --at 'temperature=80': give the temperature's unit, "
                                  "e.g. temperature=80degC")
    bad = CliRunner().invoke(cli, ["plot", str(store), "--x", "pressure"])
    assert bad.exit_code == 1 and "both 'pressure'" in bad.output


@pytest.mark.parametrize(("at", "phrase"), [
    ("mixing_ratio=2", "outside the table (mixing_ratio 0 .. 1)"),
    ("pressure=500bar", "outside the table (pressure 100000 .. 1.21e+07 Pa)"),
    ("temperature=-100degC", "outside the table (temperature 230 .. 350 K)"),
])
def test_cli_plot_outside_the_table_is_one_line(store, tmp_path, at, phrase):
    """A value outside the table is an error (it used to plot the nearest node, exit 0)."""
    result = CliRunner().invoke(cli, ["plot", str(store), "--at", at, "--out", str(tmp_path)])
    assert result.exit_code == 1
    assert result.output.count("\n") == 1 and phrase in result.output
    assert not list(tmp_path.glob("*.png"))


def test_parse_at_units(table):
    at = parse_at(table, ["temperature=-10degC", "pressure=580psia", "composition=0.5"])
    assert at["temperature"] == pytest.approx(263.15)
    # 1 psi = 6894.757293168 Pa (NIST SP 811, 2008, App. B.8)
    assert at["pressure"] == pytest.approx(580 * 6894.757293168, rel=1e-12)
    assert at["mixing_ratio"] == 0.5
    with pytest.raises(gridflash.InputError, match="not an axis"):
        parse_at(table, ["salinity=3"])


def test_missing_matplotlib_is_one_line(store, monkeypatch):
    monkeypatch.setitem(sys.modules, "matplotlib", None)
    monkeypatch.setitem(sys.modules, "matplotlib.figure", None)
    result = CliRunner().invoke(cli, ["plot", str(store)])
    assert result.exit_code == 1
    assert result.output.count("\n") == 1
    assert "pip install 'gridflash[plot]'" in result.output


SIMPLEX_CONFIG = """\
# Invented test grid: a simplex of three invented streams.
[fluid]
eos = "PR78"
components = ["CO2", "C1", "nC4", "nC10"]
kij = { "CO2-C1" = 0.10, "CO2-nC4" = 0.13, "CO2-nC10" = 0.11 }

[streams.oil]
mole_fractions = { C1 = 0.30, nC4 = 0.25, nC10 = 0.45 }

[streams.lean_gas]
mole_fractions = { C1 = 0.95, nC4 = 0.05 }

[streams.co2]
mole_fractions = { CO2 = 1.0 }

[pressure]
unit = "bar"
values = [40.0, 80.0, 120.0, 160.0]

[temperature]
unit = "degC"
values = [60.0, 100.0]

[composition]
kind = "simplex"
streams = ["oil", "lean_gas", "co2"]
divisions = 4

[run]
output = "simplex.zarr"
workers = 2
scheduler = "threads"
"""


@pytest.fixture(scope="module")
def simplex(tmp_path_factory) -> xr.Dataset:
    return gridflash.open_table(build_store(tmp_path_factory, "simplex", SIMPLEX_CONFIG)).load()


def test_ternary_view_of_a_three_stream_simplex(simplex):
    """Corners are the streams, faces are exact flashes (reference: gridflash.flash at a face's
    centroid feed, computed here from the stream compositions), stored mixtures are marked at
    their stream fractions."""
    from gridflash.analysis import ternary_map

    fig = ternary_map(simplex, at={"pressure": 120e5, "temperature": 333.15})
    ax = fig.axes[0]
    faces = ax.collections[0]
    triangles = faces.get_paths()
    colours = np.asarray(faces.get_array())
    streams = simplex.stream_composition.transpose("stream", "component").values
    mixture = gridflash.mixture_from_store(simplex)
    checked = 0
    for k in range(0, len(triangles), max(1, len(triangles) // 40)):
        cx, cy = triangles[k].vertices[:3].mean(axis=0)
        f3 = cy / (np.sqrt(3.0) / 2.0)  # invert the barycentric placement
        f2 = cx - 0.5 * f3
        fractions = np.array([1.0 - f2 - f3, f2, f3])
        z = fractions @ streams
        exact = gridflash.flash(mixture, 120e5, 333.15, z / z.sum())
        assert colours[k] == exact.phase_label[0]
        checked += 1
    assert checked >= 30 and len(set(colours.tolist())) >= 2
    marked = [c for c in ax.collections[1:] if c.get_offsets().shape[0] == 15]
    assert marked, "the 15 stored mixtures are marked"
    fractions = simplex.stream_fraction.transpose("mixture", "stream").values
    expected = np.column_stack([fractions[:, 1] + 0.5 * fractions[:, 2],
                                np.sqrt(3.0) / 2.0 * fractions[:, 2]])
    np.testing.assert_allclose(marked[0].get_offsets(), expected, atol=1e-12)
    assert {t.get_text() for t in ax.texts} >= {"oil", "lean gas", "co2"}
    assert "120 bar" in ax.get_title() and "60 °C" in ax.get_title()


def test_mixture_axis_is_shown_by_stream_fractions(simplex):
    fig = phase_map(simplex, x="mixture", y="pressure", at={"temperature": 333.15})
    ax = fig.axes[0]
    fig.canvas.draw()
    ticks = [t.get_text() for t in ax.get_xticklabels() if t.get_text()]
    assert ticks and all(len(t.split("/")) == 3 for t in ticks)
    assert ticks[0] == "1/0/0"  # mixture 0: all of the first stream
    assert ax.get_xlabel() == "feed: mole fractions of oil / lean gas / co2"
    fig = phase_map(simplex, at={"mixture": 6})
    title = fig.axes[0].get_title()
    fractions = simplex.stream_fraction.isel(mixture=6).values
    assert "mixture 6" not in title and "feed " in title
    for f, name in zip(fractions, ("oil", "lean gas", "co2"), strict=True):
        assert (f"{f:.3g} {name}" in title) == (f > 0)


def test_cli_ternary(simplex, store, tmp_path, tmp_path_factory):
    path = build_store(tmp_path_factory, "simplex", SIMPLEX_CONFIG)
    result = CliRunner().invoke(cli, ["plot", str(path), "--kind", "ternary", "--at",
                                      "pressure=100bar", "--at", "temperature=80degC",
                                      "--out", str(tmp_path)])
    assert result.exit_code == 0, result.output
    written = tmp_path / "ternary_pressure-100bar_temperature-80degC.png"
    assert written.read_bytes()[:8] == PNG_MAGIC
    bad = CliRunner().invoke(cli, ["plot", str(store), "--kind", "ternary"])
    assert bad.exit_code == 1 and bad.output.count("\n") == 1
    assert "three streams" in bad.output
