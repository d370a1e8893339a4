"""Envelopes stored with a table (gridflash run's post-step, gridflash envelope).

Self-consistency: the stored envelopes are those of gridflash.thermo.phase_envelope; the
table's own saturation pressures (bisection on the stored flash + Newton) lie on them; pure
ends are the EOS vapour-pressure curves ending at (Tc, Pc). Outside reference: CoolProp HEOS
(GERG-2008) critical points of methane + propane.
"""

from __future__ import annotations

import CoolProp.CoolProp as CP
import numpy as np
import pytest
import xarray as xr
from click.testing import CliRunner

import gridflash
from gridflash.analysis import ENVELOPE_VARIABLES, add_envelopes
from gridflash.cli import cli
from gridflash.runner import envelope_step
from gridflash.thermo import EnvelopeBranch, EnvelopeStatus, phase_envelope

from ._table_helpers import BINARY_CONFIG, build_store


@pytest.fixture(scope="module")
def binary_path(tmp_path_factory):
    return build_store(tmp_path_factory, "binary", BINARY_CONFIG)


@pytest.fixture(scope="module")
def binary(binary_path) -> xr.Dataset:
    return gridflash.open_table(binary_path).load()


def test_run_stores_envelopes_with_units(binary):
    for name in ENVELOPE_VARIABLES:
        assert name in binary, name
        assert binary[name].attrs.get("long_name"), name
        assert "units" in binary[name].attrs, name
    assert binary.envelope_temperature.dims == ("mixing_ratio", "envelope_point")
    assert binary.envelope_temperature.attrs["units"] == "K"
    assert binary.envelope_pressure.attrs["units"] == "Pa"
    assert "flag_meanings" in binary.envelope_status.attrs


def test_stored_envelopes_are_the_thermo_envelopes(binary):
    mix = gridflash.store.mixture_from_store(binary)
    feeds = binary.feed_composition.transpose("mixing_ratio", "component").values
    for k, z in enumerate(feeds):
        env = phase_envelope(mix, z)
        row = binary.isel(mixing_ratio=k)
        n = len(env)
        np.testing.assert_array_equal(row.envelope_temperature.values[:n], env.temperature)
        np.testing.assert_array_equal(row.envelope_pressure.values[:n], env.pressure)
        assert np.all(np.isnan(row.envelope_pressure.values[n:]))
        assert np.all(row.envelope_branch.values[n:] == 0)
        assert int(row.envelope_status) == env.status
        assert float(row.critical_pressure) == env.critical_pressure


def test_pure_ends_end_at_their_critical_points(binary):
    # mixing ratio 0 is propane, 1 is methane (single components).
    for ratio, comp in ((0.0, 1), (1.0, 0)):
        row = binary.sel(mixing_ratio=ratio)
        c = gridflash.Mixture(["C1", "C3"]).components[comp]
        assert float(row.critical_temperature) == c.tc
        assert float(row.critical_pressure) == c.pc
        branch = row.envelope_branch.values
        assert set(branch[branch > 0]) == {EnvelopeBranch.VAPOUR_PRESSURE,
                                           EnvelopeBranch.CRITICAL_POINT}


@pytest.mark.parametrize("z_methane", [0.2, 0.5, 0.8])
def test_critical_points_against_gerg(binary, z_methane):
    # Source: CoolProp HEOS (GERG-2008) critical point of methane + propane; the tolerances
    # of tests/test_envelope.py (PR vs GERG-2008 model difference: 3 % in T, 7 % in P).
    state = CP.AbstractState("HEOS", "Methane&Propane")
    state.set_mole_fractions([z_methane, 1 - z_methane])
    ref = [c for c in state.all_critical_points() if c.stable and c.p > 0][0]
    row = binary.sel(mixing_ratio=z_methane)
    assert int(row.envelope_status) == EnvelopeStatus.COMPLETE
    assert abs(float(row.critical_temperature) / ref.T - 1) < 0.03
    assert abs(float(row.critical_pressure) / ref.p - 1) < 0.07


def _upper_pressure_on_curve(t_curve, p_curve, t):
    """Largest pressure of the traced curve at temperature t (linear in ln P between the
    neighbouring points that straddle t)."""
    best = np.nan
    for a in range(len(t_curve) - 1):
        t0, t1 = t_curve[a], t_curve[a + 1]
        if np.isfinite(t0) and np.isfinite(t1) and min(t0, t1) <= t <= max(t0, t1) and t0 != t1:
            w = (t - t0) / (t1 - t0)
            p = np.exp((1 - w) * np.log(p_curve[a]) + w * np.log(p_curve[a + 1]))
            best = p if not np.isfinite(best) else max(best, p)
    return best


def test_envelope_passes_through_the_tables_saturation_pressures(binary):
    # The table's saturation pressures (solved on the flash between grid pressures) lie on the
    # traced curves, to the interpolation error between traced points (under 1 %).
    checked = 0
    for ratio in (0.2, 0.5, 0.8):
        row = binary.sel(mixing_ratio=ratio)
        t_c = row.envelope_temperature.values
        p_c = row.envelope_pressure.values
        for t in binary.temperature.values:
            p_table = float(row.saturation_pressure.sel(temperature=t))
            if not np.isfinite(p_table):
                continue
            p_curve = _upper_pressure_on_curve(t_c, p_c, t)
            assert abs(p_curve / p_table - 1) < 0.01, (ratio, t, p_curve, p_table)
            checked += 1
    assert checked >= 8


def test_parts_do_not_change_the_answer(binary_path, binary, tmp_path):
    whole = envelope_step(binary_path, chunk=None)
    parted = envelope_step(binary_path, chunk=2)
    for name in ENVELOPE_VARIABLES:
        np.testing.assert_array_equal(whole[name].values, parted[name].values)
        assert whole[name].dtype == parted[name].dtype


def test_cli_recomputes_for_a_store_and_reads_a_config(binary_path, tmp_path):
    result = CliRunner().invoke(cli, ["envelope", str(binary_path)])
    assert result.exit_code == 0, result.output
    assert "5 envelope(s), stored in" in result.output
    config = tmp_path / "binary.toml"
    config.write_text(BINARY_CONFIG)
    png = tmp_path / "env.png"
    result = CliRunner().invoke(cli, ["envelope", str(config), "--plot", str(png),
                                      "--temperature-unit", "K"])
    assert result.exit_code == 0, result.output
    assert "not stored" in result.output
    assert png.stat().st_size > 10_000
    # The printed critical temperature of z_methane = 0.5 is the stored one.
    line = [s for s in result.output.splitlines() if s.strip().startswith("0.5 ")][0]
    t_crit = float(line.split()[1])
    with gridflash.open_table(binary_path) as ds:
        assert t_crit == pytest.approx(float(ds.critical_temperature.sel(mixing_ratio=0.5)),
                                       abs=0.01)


def test_add_envelopes_refuses_a_missing_store(tmp_path):
    with pytest.raises(gridflash.StoreError):
        add_envelopes(tmp_path / "nothing.zarr")
