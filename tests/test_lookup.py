"""gridflash.lookup: interpolation, units, outside points, phase-boundary flags, refinement."""

from __future__ import annotations

import numpy as np
import pytest
import xarray as xr
from scipy.interpolate import RegularGridInterpolator

import gridflash
from gridflash import InputError, StoreError
from gridflash.config._parser import parse_config
from gridflash.store import mixture_from_store

from ._table_helpers import BINARY_CONFIG, LIST_CONFIG, build_store

PSI_IN_PA = 6894.757293168361  # NIST SP 811 (2008), App. B.8: 1 psi = 6.894 757 E+03 Pa


@pytest.fixture(scope="module")
def binary(tmp_path_factory) -> xr.Dataset:
    return gridflash.open_table(build_store(tmp_path_factory, "binary", BINARY_CONFIG)).load()


@pytest.fixture(scope="module")
def listed(tmp_path_factory) -> xr.Dataset:
    return gridflash.open_table(build_store(tmp_path_factory, "list", LIST_CONFIG)).load()


def _random_points(ds: xr.Dataset, n: int, seed: int = 7):
    rng = np.random.default_rng(seed)
    p = rng.uniform(ds.pressure.values[0], ds.pressure.values[-1], n)
    t = rng.uniform(ds.temperature.values[0], ds.temperature.values[-1], n)
    r = rng.uniform(ds.mixing_ratio.values[0], ds.mixing_ratio.values[-1], n)
    return p, t, r


def test_grid_nodes_return_stored_values(binary):
    """At a node the lookup is the stored cell itself (one corner carries all the weight)."""
    ds = binary
    ip, it, ic = np.meshgrid(np.arange(0, 25, 3), np.arange(7), np.arange(5), indexing="ij")
    ip, it, ic = ip.ravel(), it.ravel(), ic.ravel()
    out = gridflash.lookup(ds, ds.pressure.values[ip], ds.temperature.values[it],
                           ds.mixing_ratio.values[ic])
    stored = ds.isel(pressure=xr.DataArray(ip), temperature=xr.DataArray(it),
                     mixing_ratio=xr.DataArray(ic))
    for name in ("vapour_fraction", "liquid_density", "vapour_viscosity", "k_value"):
        assert np.array_equal(out[name].values, stored[name].values, equal_nan=True), name
    assert np.array_equal(out.phase_count.values, stored.phase_count.values)
    assert np.array_equal(out.phase_label.values, stored.phase_label.values)
    assert not out.boundary.any() and not out.label_change.any()
    assert out.inside.all() and not out.refined.any()


def test_interpolation_equals_scipy_regular_grid_interpolator(binary):
    """Reference: scipy.interpolate.RegularGridInterpolator(method="linear") on the same axes
    (everywhere but across a single-phase label change, interpolated by state instead: see
    test_single_phase_point_between_differently_labelled_nodes)."""
    ds = binary
    p, t, r = _random_points(ds, 400)
    out = gridflash.lookup(ds, p, t, r)
    axes = (ds.pressure.values, ds.temperature.values, ds.mixing_ratio.values)
    compared = 0
    plain = ~out.label_change.values
    for name in ("vapour_fraction", "liquid_density", "vapour_density", "liquid_viscosity"):
        ref = RegularGridInterpolator(axes, ds[name].values, method="linear")(
            np.column_stack([p, t, r]))
        finite = np.isfinite(ref) & plain
        compared += int(finite.sum())
        np.testing.assert_allclose(out[name].values[finite], ref[finite], rtol=1e-12, atol=0)
        # NaN (a phase absent at a surrounding node) propagates as it does in scipy
        assert np.all(np.isnan(out[name].values[~finite & plain]))
    assert compared > 800
    # per-component fields: each component's K-value interpolated the same way
    ref_k = RegularGridInterpolator(axes, ds.k_value.values[..., 1], method="linear")(
        np.column_stack([p, t, r]))
    finite = np.isfinite(ref_k)
    np.testing.assert_allclose(out.k_value.values[finite, 1], ref_k[finite], rtol=1e-12)


def test_units_give_the_same_answer_as_si(binary):
    """bar/degC and psia/degF queries equal the SI query (NIST SP 811 conversion factors)."""
    ds = binary
    si = gridflash.lookup(ds, [41.3e5, 77.7e5], [263.15, 300.0], [0.5, 0.2])
    metric = gridflash.lookup(ds, [41.3, 77.7], [-10.0, 26.85], [0.5, 0.2],
                              pressure_unit="bar", temperature_unit="degC")
    field = gridflash.lookup(ds, np.array([41.3e5, 77.7e5]) / PSI_IN_PA,
                             (np.array([263.15, 300.0]) - 273.15) * 9 / 5 + 32, [0.5, 0.2],
                             pressure_unit="psia", temperature_unit="degF")
    for other in (metric, field):
        np.testing.assert_allclose(other.pressure.values, si.pressure.values, rtol=1e-14)
        np.testing.assert_allclose(other.temperature.values, si.temperature.values, rtol=1e-14)
        np.testing.assert_allclose(other.vapour_fraction.values, si.vapour_fraction.values,
                                   rtol=1e-12)
    with pytest.raises(InputError, match="psi"):
        gridflash.lookup(ds, 40.0, 300.0, 0.5, pressure_unit="psi")


def test_scalars_broadcast_and_composition_required(binary):
    out = gridflash.lookup(binary, [20.0, 40.0, 60.0], 0.0, 0.5, pressure_unit="bar",
                           temperature_unit="degC")
    assert out.sizes["point"] == 3
    assert np.all(out.temperature.values == 273.15)
    with pytest.raises(InputError, match="composition is required"):
        gridflash.lookup(binary, 20e5, 300.0)
    with pytest.raises(InputError, match="broadcast"):
        gridflash.lookup(binary, [1e6, 2e6], [250.0, 260.0, 270.0], 0.5)


def test_outside_points_raise_or_give_nan(binary):
    with pytest.raises(InputError, match=r"pressure\[1\] = 150 bar is outside the table "
                                          r"\(pressure 1 \.\. 121 bar\)"):
        gridflash.lookup(binary, [50.0, 150.0], 300.0, 0.5, pressure_unit="bar")
    with pytest.raises(InputError, match=r"temperature\[0\] = -50 degC is outside"):
        gridflash.lookup(binary, 50.0, -50.0, 0.5, pressure_unit="bar", temperature_unit="degC")
    with pytest.raises(InputError, match=r"temperature\[0\] = 400 K is outside the table "
                                          r"\(temperature 230 K \.\. 350 K\)"):
        gridflash.lookup(binary, 50.0, 400.0, 0.5, pressure_unit="bar", temperature_unit="K")
    with pytest.raises(InputError, match="outside='nan'"):
        gridflash.lookup(binary, 50e5, 300.0, 1.2)
    out = gridflash.lookup(binary, [50.0, 150.0, 50.0], [300.0, 300.0, 400.0], [0.5, 0.5, 0.5],
                           pressure_unit="bar", outside="nan")
    assert out.inside.values.tolist() == [True, False, False]
    assert np.isfinite(out.vapour_fraction.values[0])
    assert np.all(np.isnan(out.vapour_fraction.values[1:]))
    assert np.all(np.isnan(out.liquid_composition.values[1:]))
    assert out.phase_count.values[1:].tolist() == [0, 0]
    with pytest.raises(InputError, match="outside="):
        gridflash.lookup(binary, 50e5, 300.0, 0.5, outside="clip")


def test_boundary_flag_matches_the_corner_phase_counts(binary):
    """A point is flagged exactly when the phase counts at its cell's corners differ.

    Independent check: the bracketing nodes found with numpy.searchsorted on each axis and the
    eight corner phase counts read with xarray's own indexing.
    """
    ds = binary
    p, t, r = _random_points(ds, 300, seed=11)
    out = gridflash.lookup(ds, p, t, r)
    count = ds.phase_count.values
    expected = []
    for pi, ti, ri in zip(p, t, r, strict=True):
        idx = [np.searchsorted(ax, v) - 1 for ax, v in (
            (ds.pressure.values, pi), (ds.temperature.values, ti), (ds.mixing_ratio.values, ri))]
        corners = count[idx[0]:idx[0] + 2, idx[1]:idx[1] + 2, idx[2]:idx[2] + 2]
        expected.append(corners.min() != corners.max())
    expected = np.array(expected)
    assert np.array_equal(out.boundary.values, expected)
    assert 20 < expected.sum() < 280  # the sample sees both kinds of points
    agreed = ~expected
    # where the corners agree, the phase count is theirs
    corner_counts = np.array([count[np.searchsorted(ds.pressure.values, pi) - 1,
                                    np.searchsorted(ds.temperature.values, ti) - 1,
                                    np.searchsorted(ds.mixing_ratio.values, ri) - 1]
                              for pi, ti, ri in zip(p, t, r, strict=True)])
    assert np.array_equal(out.phase_count.values[agreed], corner_counts[agreed])
    assert np.all(out.phase_count.values[expected] == 0)


def test_refine_equals_a_cold_flash_and_fixes_boundary_points(binary):
    """Refined points equal gridflash.flash of the original config's fluid, started cold.

    DESIGN.md: warm-started answers equal cold ones (phase count identical, vapour fraction
    within 1e-8).
    """
    ds = binary
    p, t, r = _random_points(ds, 300, seed=5)
    plain = gridflash.lookup(ds, p, t, r)
    out = gridflash.lookup(ds, p, t, r, refine=True)
    flagged = plain.boundary.values | plain.label_change.values
    assert np.array_equal(out.refined.values, flagged) and flagged.sum() > 20
    # the original fluid, from the config (not from the store)
    mixture = load_config_text(BINARY_CONFIG).fluid.mixture()
    z = np.column_stack([r, 1.0 - r])  # streams: propane (ratio 0), methane (ratio 1)
    np.testing.assert_allclose(out.feed_composition.values, z, rtol=0, atol=1e-15)
    cold = gridflash.flash(mixture, p[flagged], t[flagged], z[flagged])
    assert np.array_equal(out.phase_count.values[flagged], cold.phase_count)
    assert np.array_equal(out.phase_label.values[flagged], cold.phase_label)
    assert np.max(np.abs(out.vapour_fraction.values[flagged] - cold.vapour_fraction)) <= 1e-8
    np.testing.assert_allclose(out.liquid_density.values[flagged], cold.liquid.mass_density,
                               rtol=1e-8, equal_nan=True)
    np.testing.assert_allclose(out.vapour_composition.values[flagged], cold.y, atol=1e-8,
                               equal_nan=True)
    assert out.converged.values[flagged].all()
    # interpolating across the boundary is wrong somewhere: the exact answer differs
    assert np.max(np.abs(np.nan_to_num(plain.vapour_fraction.values[flagged], nan=-1.0)
                         - cold.vapour_fraction)) > 0.05
    # unflagged points are untouched
    np.testing.assert_array_equal(out.vapour_fraction.values[~flagged],
                                  plain.vapour_fraction.values[~flagged])


def load_config_text(text: str):
    return parse_config(text)


def test_list_axis_is_looked_up_by_mixture_index(listed):
    """A ``mixture`` axis is not interpolated: index 1 gives that mixture's P-T interpolation."""
    ds = listed
    p, t = np.array([55e5, 130e5, 201e5]), np.array([330.0, 390.0, 400.0])
    out = gridflash.lookup(ds, p, t, 1)
    sub = ds.isel(mixture=1)
    ref = RegularGridInterpolator((sub.pressure.values, sub.temperature.values),
                                  sub.vapour_fraction.values)(np.column_stack([p, t]))
    np.testing.assert_allclose(out.vapour_fraction.values, ref, rtol=1e-12)
    np.testing.assert_allclose(out.feed_composition.values,
                               np.tile(sub.feed_composition.values, (3, 1)), rtol=0)
    with pytest.raises(InputError, match="cannot be interpolated"):
        gridflash.lookup(ds, 55e5, 330.0, 0.5)
    with pytest.raises(InputError, match="outside"):
        gridflash.lookup(ds, 55e5, 330.0, 3)


def test_store_fluid_is_rebuilt_exactly(listed, tmp_path_factory):
    """mixture_from_store gives back the config's fluid: EOS, kij, constants, volume shifts."""
    spec = load_config_text(LIST_CONFIG)
    original = spec.fluid.mixture()
    rebuilt = mixture_from_store(listed)
    assert rebuilt.eos == "SRK" and rebuilt.names == original.names
    assert np.array_equal(rebuilt.kij, original.kij)
    for attr in ("tc", "pc", "omega", "mw", "vc"):
        assert np.array_equal(getattr(rebuilt, attr), getattr(original, attr)), attr
    np.testing.assert_allclose(rebuilt.volume_shift, original.volume_shift, rtol=1e-14)
    r1 = gridflash.flash(original, 80e5, 350.0, [0.4, 0.2, 0.4])
    r2 = gridflash.flash(rebuilt, 80e5, 350.0, [0.4, 0.2, 0.4])
    assert r1.vapour_fraction[0] == r2.vapour_fraction[0]
    assert r1.liquid.mass_density[0] == pytest.approx(r2.liquid.mass_density[0], rel=1e-13)


def test_variables_choice_and_refusals(binary, tmp_path):
    out = gridflash.lookup(binary, 50e5, 300.0, 0.5, variables=["liquid_density"])
    assert "liquid_density" in out and "vapour_fraction" not in out
    assert out.liquid_density.attrs["units"] == "kg m-3"
    with pytest.raises(InputError, match="not a per-cell field"):
        gridflash.lookup(binary, 50e5, 300.0, 0.5, variables=["density"])
    with pytest.raises(InputError, match="not a float field"):
        gridflash.lookup(binary, 50e5, 300.0, 0.5, variables=["status"])
    sampled = xr.Dataset({"phase_count": (("sample",), np.ones(3, dtype=np.int8))})
    with pytest.raises(StoreError, match="sampled table"):
        gridflash.lookup(sampled, 50e5, 300.0, 0.5)


def test_lookup_accepts_a_store_path(tmp_path_factory, binary):
    path = build_store(tmp_path_factory, "binary", BINARY_CONFIG)
    lazy = gridflash.lookup(path, [33e5, 90e5], [255.0, 301.0], [0.3, 0.7])
    loaded = gridflash.lookup(binary, [33e5, 90e5], [255.0, 301.0], [0.3, 0.7])
    xr.testing.assert_identical(lazy, loaded)


def test_load_config_is_the_binary_fluid():
    """Guard for the tests above: the binary config's ratio is the methane mole fraction."""
    spec = load_config_text(BINARY_CONFIG)
    assert spec.fluid.names == ("C1", "C3")
    np.testing.assert_allclose(spec.composition.feed_array()[:, 0], [0.0, 0.2, 0.5, 0.8, 1.0])


def _label_change_points(ds: xr.Dataset, n: int = 4):
    """Single-phase points of the binary table between differently labelled nodes."""
    p, t, r = _random_points(ds, 3000, seed=11)
    out = gridflash.lookup(ds, p, t, r)
    pick = out.label_change.values & (out.phase_count.values == 1) & ~out.boundary.values
    idx = np.flatnonzero(pick)[:n]
    return p[idx], t[idx], r[idx]


def test_single_phase_point_between_differently_labelled_nodes(binary):
    """Between a liquid-like and a vapour-like single-phase node the lookup gives the single
    phase: vapour fraction 0 or 1, the phase's density and viscosity close to an exact flash at
    the point (reference: gridflash.flash of the table's fluid; the difference is linear
    interpolation over one cell of the 25 x 7 x 5 grid, across the change of label, up to ~8% in
    density here), the feed as its composition, filed under the label that flash gives -- not a
    vapour fraction of 0.5 and NaN densities."""
    ds = binary
    p, t, r = _label_change_points(ds)
    assert p.size == 4
    mixture = mixture_from_store(ds)
    for point in zip(p, t, r, strict=True):
        out = gridflash.lookup(ds, *point)
        assert out.label_change.item() and not out.boundary.item()
        assert out.phase_count.item() == 1
        feed = out.feed_composition.values[0]
        exact = gridflash.flash(mixture, point[0], point[1], feed)
        assert exact.phase_count[0] == 1
        phase = "vapour" if exact.phase_label[0] == 1 else "liquid"
        other = "liquid" if phase == "vapour" else "vapour"
        assert out.phase_label.item() == exact.phase_label[0]
        assert out.vapour_fraction.item() == exact.vapour_fraction[0] == (phase == "vapour")
        exact_phase = getattr(exact, phase)
        assert out[f"{phase}_density"].item() == pytest.approx(exact_phase.mass_density[0],
                                                               rel=0.1)
        assert out[f"{phase}_viscosity"].item() == pytest.approx(exact_phase.viscosity[0],
                                                                 rel=0.2)
        np.testing.assert_allclose(out[f"{phase}_composition"].values[0], feed, rtol=0,
                                   atol=1e-14)
        for name in ("density", "viscosity", "composition"):
            assert np.isnan(out[f"{other}_{name}"].values).all()
        # refine (the exact flash) agrees on the label and the vapour fraction
        refined = gridflash.lookup(ds, *point, refine=True)
        assert refined.phase_label.item() == out.phase_label.item()
        assert refined.vapour_fraction.item() == out.vapour_fraction.item()


def test_single_phase_fields_are_finite_wherever_the_corners_are_single_phase(binary):
    """Every point whose corners are all single-phase has a finite density and viscosity in the
    slot of its label and NaN in the other, whatever labels the corners carry."""
    p, t, r = _random_points(binary, 600, seed=5)
    out = gridflash.lookup(binary, p, t, r)
    single = (out.phase_count == 1).values
    assert single.sum() > 50 and out.label_change.values[single].sum() >= 1
    vapour = out.phase_label.values == 1
    for name in ("density", "viscosity", "molar_mass"):
        v, liq = out[f"vapour_{name}"].values, out[f"liquid_{name}"].values
        assert np.isfinite(v[single & vapour]).all() and np.isnan(liq[single & vapour]).all()
        assert np.isfinite(liq[single & ~vapour]).all() and np.isnan(v[single & ~vapour]).all()
    assert set(out.vapour_fraction.values[single]) <= {0.0, 1.0}
