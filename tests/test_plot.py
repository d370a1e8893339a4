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


def test_phase_map_mesh_holds_the_stored_phase_states(table):
    fig = phase_map(table, at={"mixing_ratio": 0.5})
    ax = fig.axes[0]
    mesh = ax.collections[0]
    stored = table.phase_label.sel(mixing_ratio=0.5).transpose("pressure", "temperature").values
    assert np.array_equal(np.asarray(mesh.get_array()).reshape(stored.shape), stored)
    assert ax.get_xlabel() == "temperature (°C)"
    assert ax.get_ylabel() == "pressure (bar, absolute)"
    assert "mixing ratio 0.5" in ax.get_title()
    legend = [t.get_text() for t in ax.get_legend().get_texts()]
    assert {"two phases", "one phase, vapour-like", "one phase, liquid-like",
            "saturation pressure (bubble / dew point)", "cricondenbar"} <= set(legend)


def test_saturation_line_is_the_stored_one_in_display_units(table):
    fig = phase_map(table, at={"mixing_ratio": 0.2}, pressure_unit="MPa", temperature_unit="K")
    ax = fig.axes[0]
    lines = {line.get_label(): line for line in ax.get_lines()}
    sat = lines["saturation pressure"]
    stored = table.saturation_pressure.sel(mixing_ratio=0.2).values / 1e6
    np.testing.assert_allclose(sat.get_xdata(), table.temperature.values)
    np.testing.assert_allclose(sat.get_ydata(), stored, rtol=1e-15)
    lower = lines["lower dew point"]
    np.testing.assert_allclose(lower.get_ydata(),
                               table.lower_saturation_pressure.sel(mixing_ratio=0.2).values / 1e6)
    assert ax.get_ylabel() == "pressure (MPa, absolute)"


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
            colour = _pixel_colour(image, ax, t_c[j], p_bar[i])
            np.testing.assert_allclose(colour, to_rgb(PHASE_COLOURS[value]), atol=0.02,
                                       err_msg=f"node {(i, j)} label {value}")
            checked += 1
    assert checked >= 6


def test_vapour_fraction_contours_lie_in_the_two_phase_region(table):
    fig = phase_map(table, at={"mixing_ratio": 0.5})
    ax = fig.axes[0]
    contour = [c for c in ax.collections[1:] if hasattr(c, "levels")][0]
    assert list(contour.levels) == pytest.approx([0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7, 0.8, 0.9])
    # every contour vertex lies within the temperature range where two phases are stored
    two = table.phase_count.sel(mixing_ratio=0.5).values == 2
    t_two = table.temperature.values[two.any(axis=0)] - 273.15
    vertices = np.concatenate([p.vertices for p in contour.get_paths() if len(p.vertices)])
    assert vertices[:, 0].min() >= t_two.min() - 1e-9
    assert vertices[:, 0].max() <= t_two.max() + 1e-9


def test_property_maps_show_densities_and_viscosities(table):
    fig = property_map(table, "density", x="mixing_ratio", y="pressure",
                       at={"temperature": 270.0})
    liquid_ax, vapour_ax = fig.axes[:2]
    stored = table.liquid_density.sel(temperature=270.0).transpose("pressure",
                                                                     "mixing_ratio").values
    shown = np.ma.getdata(liquid_ax.collections[0].get_array()).reshape(stored.shape)
    mask = np.ma.getmaskarray(liquid_ax.collections[0].get_array()).reshape(stored.shape)
    assert np.array_equal(mask, np.isnan(stored))  # blank where the liquid is absent
    np.testing.assert_allclose(shown[~mask], stored[~mask])
    assert liquid_ax.get_xlabel().startswith("mixing ratio (mole fraction of methane")
    fig = property_map(table, "viscosity", at={"mixing_ratio": 0.8})
    stored = table.vapour_viscosity.sel(mixing_ratio=0.8).transpose("pressure",
                                                                      "temperature").values
    shown = fig.axes[1].collections[0].get_array().reshape(stored.shape)
    np.testing.assert_allclose(np.ma.filled(shown, np.nan), stored * 1e3, equal_nan=True)
    colourbar_labels = [a.get_ylabel() for a in fig.axes[2:]]
    assert "vapour viscosity (mPa·s)" in colourbar_labels


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
    assert "using the nearest, 4.1e+06 Pa" in result.output
    written = tmp_path / "phase_temperature_vs_mixing_ratio_pressure-41bar.png"
    assert f"wrote {written}" in result.output
    assert written.read_bytes()[:8] == PNG_MAGIC
    bad = CliRunner().invoke(cli, ["plot", str(store), "--at", "temperature=80"])
    assert bad.exit_code == 1
    assert bad.output.strip() == ("Error: --at 'temperature=80': give the temperature's unit, "
                                  "e.g. temperature=80degC")
    bad = CliRunner().invoke(cli, ["plot", str(store), "--x", "pressure"])
    assert bad.exit_code == 1 and "both 'pressure'" in bad.output


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
