"""Saturation lines stored in a table: brackets, pure-component limit, reference values.

External references: CoolProp 6.6+/8.x (Bell et al., Ind. Eng. Chem. Res. 53 (2014) 2498): the
pure-fluid reference equations of state for propane (Lemmon, McLinden & Wagner, J. Chem. Eng.
Data 54 (2009) 3141) and, for methane + propane, its HEOS mixture model, which uses the GERG-2008
departure function and parameters for this pair (Kunz & Wagner, J. Chem. Eng. Data 57 (2012)
3032; that CoolProp takes this pair from GERG-2008 is from memory).
"""

from __future__ import annotations

import shutil

import CoolProp.CoolProp as CP
import numpy as np
import pytest
import xarray as xr
import zarr
from click.testing import CliRunner

import gridflash
from gridflash.cli import cli
from gridflash.runner import saturation_lines_part, saturation_step
from gridflash.thermo import pure_vapour_pressure, saturation_pressure

from ._table_helpers import BINARY_CONFIG, LIST_CONFIG, build_store

#: Model tolerance for an untuned Peng-Robinson EOS against a reference multiparameter EOS on
#: light-hydrocarbon saturation pressures (common practice: a few percent, 8% stated here).
PR_TOLERANCE = 0.08


@pytest.fixture(scope="module")
def binary_path(tmp_path_factory):
    return build_store(tmp_path_factory, "binary", BINARY_CONFIG)


@pytest.fixture(scope="module")
def binary(binary_path) -> xr.Dataset:
    return gridflash.open_table(binary_path).load()


def _coolprop_mixture(z_methane: float):
    state = CP.AbstractState("HEOS", "Methane&Propane")
    state.set_mole_fractions([z_methane, 1.0 - z_methane])
    return state


def test_variables_have_units_and_names(binary):
    for name, units in (("saturation_pressure", "Pa"), ("lower_saturation_pressure", "Pa"),
                        ("cricondenbar_pressure", "Pa"), ("cricondenbar_temperature", "K")):
        assert binary[name].attrs["units"] == units and binary[name].attrs["long_name"]
    assert binary.saturation_pressure.dims == ("temperature", "mixing_ratio")
    assert binary.cricondenbar_pressure.dims == ("mixing_ratio",)
    kind = binary.saturation_kind
    assert kind.dtype == np.int8
    # CF conventions 1.10, sec. 3.5: one flag meaning per flag value
    assert len(kind.attrs["flag_meanings"].split()) == len(kind.attrs["flag_values"]) == 4


def test_saturation_pressure_lies_where_the_stored_phase_count_changes(binary):
    """Upper point between the highest two-phase grid pressure and the one-phase one above it;
    lower point between the lowest two-phase grid pressure and the one-phase one below it."""
    p = binary.pressure.values
    count = binary.phase_count.values
    feeds = binary.feed_composition.values
    checked_upper = checked_lower = 0
    for it in range(binary.sizes["temperature"]):
        for ic in range(binary.sizes["mixing_ratio"]):
            if np.sum(feeds[ic] > 0) == 1:
                continue  # single-component feeds: see the pure-component test
            line = count[:, it, ic]
            upper = float(binary.saturation_pressure.values[it, ic])
            lower = float(binary.lower_saturation_pressure.values[it, ic])
            two = np.flatnonzero(line == 2)
            if two.size and two[-1] < p.size - 1:
                k = two[-1]
                assert line[k + 1] == 1
                assert p[k] < upper < p[k + 1], (it, ic)
                assert binary.saturation_kind.values[it, ic] in (1, 2)
                checked_upper += 1
            else:
                assert np.isnan(upper) and binary.saturation_kind.values[it, ic] == 0
            if two.size and two[0] > 0:
                k = two[0]
                assert p[k - 1] < lower < p[k], (it, ic)
                checked_lower += 1
            else:
                assert np.isnan(lower)
    assert checked_upper >= 12 and checked_lower >= 10


def test_saturation_pressure_is_the_flash_boundary(binary):
    """1e-6 (relative) above the upper point the flash finds one phase, 1e-6 below it two.

    (Closer than about 1e-8 the flash's own answer is decided by its stability threshold on a
    tangent-plane distance of order 1e-10 and need not be monotonic in pressure, so the margin
    is 1e-6: still far inside the 5-bar grid spacing.)"""
    mixture = gridflash.store.mixture_from_store(binary)
    kind = binary.saturation_kind.values
    it, ic = np.nonzero((kind == 1) | (kind == 2))
    psat = binary.saturation_pressure.values[it, ic]
    t = binary.temperature.values[it]
    z = binary.feed_composition.values[ic]
    above = gridflash.flash(mixture, psat * (1 + 1e-6), t, z)
    below = gridflash.flash(mixture, psat * (1 - 1e-6), t, z)
    assert np.all(above.phase_count == 1) and np.all(below.phase_count == 2)
    # bubble points have a vanishing vapour just inside, dew points a vanishing liquid
    beta = below.vapour_fraction
    assert np.all(beta[kind[it, ic] == 1] < 1e-3) and np.all(beta[kind[it, ic] == 2] > 1 - 1e-3)


def test_pure_component_end_is_the_vapour_pressure(binary):
    """Ratio 0 is pure propane: the stored line is the EOS vapour pressure (kind 3), which
    matches CoolProp's propane reference equation (Lemmon et al. 2009) within 3%; ratio 1 is
    pure methane, above its critical temperature (190.56 K) at every grid temperature: none."""
    t = binary.temperature.values
    stored = binary.saturation_pressure.isel(mixing_ratio=0).values
    assert np.all(binary.saturation_kind.isel(mixing_ratio=0).values == 3)
    mixture = gridflash.store.mixture_from_store(binary)
    eos = pure_vapour_pressure(mixture.model, np.full(t.size, 1), t)[0]
    np.testing.assert_allclose(stored, eos, rtol=1e-12)
    reference = np.array([CP.PropsSI("P", "T", float(x), "Q", 0, "Propane") for x in t])
    np.testing.assert_allclose(stored, reference, rtol=0.03)
    assert np.all(np.isnan(binary.saturation_pressure.isel(mixing_ratio=-1).values))
    assert np.all(binary.saturation_kind.isel(mixing_ratio=-1).values == 0)
    assert np.isnan(binary.cricondenbar_pressure.isel(mixing_ratio=0).values)


def test_nearly_pure_line_approaches_the_vapour_pressure():
    """Continuity of the pure-component limit: a feed with 1e-6 methane has its bubble point
    within 1e-4 of propane's EOS vapour pressure (as tests/test_saturation.py shows for the
    solver); here through saturation_lines on a hand-made one-line table."""
    mixture = gridflash.Mixture(["C1", "C3"])
    t = 300.0
    psat = pure_vapour_pressure(mixture.model, np.array([1]), np.array([t]))[0][0]
    # vapour below the dew point, two phases just above the vapour pressure (the bubble point
    # lies about 3e-5 above it), liquid above
    p_grid = psat * np.array([0.99, 1.000005, 1.001, 1.02])
    z = np.array([1e-6, 1 - 1e-6])
    result = gridflash.flash(mixture, p_grid, t, z)
    assert result.phase_count.tolist() == [1, 2, 1, 1]
    table = xr.Dataset(
        {"phase_count": (("pressure", "temperature", "mixing_ratio"),
                         result.phase_count.reshape(4, 1, 1)),
         "feed_composition": (("mixing_ratio", "component"), z[None, :])},
        coords={"pressure": p_grid, "temperature": [t], "mixing_ratio": [0.0],
                "component": ["C1", "C3"]},
    )
    lines = gridflash.saturation_lines(table, mixture=mixture)
    assert int(lines.saturation_kind.values[0, 0]) == 1
    assert float(lines.saturation_pressure.values[0, 0]) == pytest.approx(psat, rel=1e-4)


def test_binary_bubble_and_dew_points_against_gerg(binary):
    """Methane + propane, 250 K, z1 = 0.2: the upper point is a bubble point and the lower one a
    dew point; against CoolProp HEOS (GERG-2008 for this pair) within the stated PR model
    tolerance. The values (PR78: 24.4 and 2.75 bar; CoolProp 8.0: 25.6 and 2.76 bar)."""
    line = binary.sel(temperature=250.0, mixing_ratio=0.2)
    state = _coolprop_mixture(0.2)
    state.update(CP.QT_INPUTS, 0.0, 250.0)
    bubble = state.p()
    state.update(CP.QT_INPUTS, 1.0, 250.0)
    dew = state.p()
    assert int(line.saturation_kind) == 1 and int(line.lower_saturation_kind) == 2
    assert float(line.saturation_pressure) == pytest.approx(bubble, rel=PR_TOLERANCE)
    assert float(line.lower_saturation_pressure) == pytest.approx(dew, rel=PR_TOLERANCE)
    # and the stored values are the solver's own answer at those brackets
    mixture = gridflash.store.mixture_from_store(binary)
    direct, _, _ = saturation_pressure(mixture, np.array([250.0]), np.array([[0.2, 0.8]]),
                                       np.array([20e5]), np.array([30e5]))
    assert float(line.saturation_pressure) == pytest.approx(direct[0], rel=1e-9)


@pytest.mark.parametrize("z_methane", [0.5, 0.8])
def test_cricondenbar_against_gerg_envelope(binary, z_methane):
    """Cricondenbar: the highest pressure of CoolProp's phase envelope (HEOS, GERG-2008 pair)
    within the PR tolerance; its temperature within 10 K (a model tolerance for untuned PR near
    the critical region, common practice, not a published bound)."""
    state = _coolprop_mixture(z_methane)
    state.build_phase_envelope("")
    envelope = state.get_phase_envelope_data()
    k = int(np.argmax(envelope.p))
    ref_p, ref_t = envelope.p[k], envelope.T[k]
    stored_p = float(binary.cricondenbar_pressure.sel(mixing_ratio=z_methane))
    stored_t = float(binary.cricondenbar_temperature.sel(mixing_ratio=z_methane))
    assert stored_p == pytest.approx(ref_p, rel=PR_TOLERANCE)
    assert abs(stored_t - ref_t) < 10.0


def test_cricondenbar_is_the_maximum_of_the_saturation_curve(binary):
    """Against a brute-force scan: the saturation pressure every 0.25 K over the grid interval
    around the maximum never exceeds the stored cricondenbar, which equals the scan's maximum
    to within the curvature over the scan step."""
    mixture = gridflash.store.mixture_from_store(binary)
    cb_t = float(binary.cricondenbar_temperature.sel(mixing_ratio=0.5))
    cb_p = float(binary.cricondenbar_pressure.sel(mixing_ratio=0.5))
    assert 290.0 < cb_t < 330.0
    scan_t = np.arange(cb_t - 8.0, cb_t + 8.0, 0.25)
    z = np.tile([0.5, 0.5], (scan_t.size, 1))
    scan_p, kind, _ = saturation_pressure(mixture, scan_t, z, np.full(scan_t.size, 70e5),
                                          np.full(scan_t.size, 100e5))
    assert np.all(kind > 0)
    assert np.max(scan_p) <= cb_p * (1 + 1e-9)
    assert np.max(scan_p) == pytest.approx(cb_p, rel=1e-5)
    # the maximum is interior to the scan, so it is a true maximum
    assert 0 < int(np.argmax(scan_p)) < scan_t.size - 1


def test_cricondenbar_outside_the_temperature_range_is_not_reported(binary):
    """At z1 = 0.2 the saturation pressure still rises at the highest grid temperature."""
    p = binary.saturation_pressure.sel(mixing_ratio=0.2).values
    assert np.all(np.diff(p) > 0)
    assert np.isnan(binary.cricondenbar_pressure.sel(mixing_ratio=0.2).values)


def test_lines_do_not_depend_on_how_the_compositions_are_parted(binary_path, binary, tmp_path):
    """A run on several worker processes computes the lines in composition parts, one per
    process; every line and composition is solved independently, so the stored values equal
    one whole-table computation, and a recomputation in 3 interleaved parts writes the same."""
    whole = gridflash.saturation_lines(binary)
    copy = tmp_path / "copy.zarr"
    shutil.copytree(binary_path, copy)
    rewritten = saturation_step(
        copy,
        compute_parts=lambda path, n: [saturation_lines_part(path, k, 3, 1) for k in range(3)],
    )
    for name in whole.data_vars:
        assert np.array_equal(binary[name].values, whole[name].values, equal_nan=True), name
        assert np.array_equal(rewritten[name].values, whole[name].values, equal_nan=True), name
    assert np.isfinite(whole.cricondenbar_pressure.values).any()


def test_lines_on_more_workers_than_compositions(tmp_path_factory, tmp_path):
    """On a cluster with more worker processes than compositions (4 single-thread workers, a
    3-feed table) the parts stop at one per composition and the lines are those of one
    whole-table computation."""
    from distributed import Client, LocalCluster

    from gridflash.runner import _lines_on_workers

    path = build_store(tmp_path_factory, "list", LIST_CONFIG)
    whole = gridflash.saturation_lines(gridflash.open_table(path).load())
    copy = tmp_path / "copy.zarr"
    shutil.copytree(path, copy)
    with LocalCluster(n_workers=4, threads_per_worker=1, processes=False,
                      dashboard_address="127.0.0.1:0", scheduler_kwargs={"dashboard": False}
                      ) as cluster, Client(cluster, set_as_default=False) as client:
        parts = _lines_on_workers(client, str(copy), 3)
        assert len(parts) == 3
        lines = saturation_step(copy, compute_parts=lambda p, n: parts)
    for name in whole.data_vars:
        assert np.array_equal(lines[name].values, whole[name].values, equal_nan=True), name


def test_list_table_and_cli_recompute(tmp_path_factory):
    """A list-axis table gets its lines too; `gridflash saturation` rewrites identical values
    and keeps the store's attributes (it is still a complete gridflash store)."""
    path = build_store(tmp_path_factory, "list", LIST_CONFIG)
    before = gridflash.open_table(path).load()
    assert before.saturation_pressure.dims == ("temperature", "mixture")
    root = zarr.open_group(str(path), mode="r+", use_consolidated=False)
    del root["saturation_pressure"]
    del root["cricondenbar_pressure"]
    result = CliRunner().invoke(cli, ["saturation", str(path)], catch_exceptions=False)
    assert result.exit_code == 0, result.output
    assert "bubble points" in result.output
    after = gridflash.open_table(path).load()
    assert after.attrs["run_state"] == "complete"
    xr.testing.assert_identical(after.saturation_pressure, before.saturation_pressure)
    xr.testing.assert_identical(after.cricondenbar_pressure, before.cricondenbar_pressure)


def test_refusals(tmp_path):
    sampled = xr.Dataset({"phase_count": (("sample",), np.ones(3, dtype=np.int8))})
    with pytest.raises(gridflash.StoreError, match="grid"):
        gridflash.saturation_lines(sampled)
    (tmp_path / "x.zarr").mkdir()
    result = CliRunner().invoke(cli, ["saturation", str(tmp_path / "x.zarr")])
    assert result.exit_code == 1 and "not a gridflash store" in result.output


def test_lines_solved_in_bounded_slices_equal_one_call(binary, monkeypatch):
    """Memory of the post-step is bounded by solving the lines in slices (at most
    _MAX_LINES_PER_CALL per call) -- here slices of 7 lines: the answers are the same."""
    import gridflash.analysis._saturation_lines as module

    whole = gridflash.saturation_lines(binary, threads=1)
    monkeypatch.setattr(module, "_MAX_LINES_PER_CALL", 7)
    sliced = gridflash.saturation_lines(binary, threads=1)
    for name in whole.data_vars:
        np.testing.assert_array_equal(sliced[name].values, whole[name].values, err_msg=name)
