"""Minimum miscibility pressure (gridflash.thermo.multi_contact_mmp, first_contact_mmp) and the
swelling study (gridflash.analysis.swelling_study).

Outside references: for a binary (pure CO2 displacing pure n-butane) the multi-contact MMP is
the pressure of the binary's critical locus at the temperature, checked against our own
critical-point solver and against the critical locus of CoolProp's HEOS (GERG-2008) for
CO2 + n-butane.
"""

from __future__ import annotations

import CoolProp.CoolProp as CP
import numpy as np
import pytest
from scipy.optimize import brentq

import gridflash
from gridflash._errors import InputError
from gridflash.analysis import swelling_study
from gridflash.config import load_config
from gridflash.thermo import (
    MiscibilityStatus,
    critical_point,
    first_contact_mmp,
    multi_contact_mmp,
)

# CO2-nC4 kij 0.13: the common-practice Peng-Robinson magnitude of the bundled configs (from
# memory, not fitted).
BINARY = gridflash.Mixture(["CO2", "nC4"], kij={("CO2", "nC4"): 0.13})
CO2 = np.array([1.0, 0.0])
NC4 = np.array([0.0, 1.0])


def _critical_locus_pressure(temperature):
    """Pressure of the binary critical point whose critical temperature is ``temperature``
    (our own solver, Heidemann-Khalil conditions)."""
    x = brentq(lambda x: critical_point(BINARY, [x, 1 - x]).temperature - temperature,
               0.3, 0.97, xtol=1e-12)
    return critical_point(BINARY, [x, 1 - x]).pressure


def _coolprop_locus_pressure(temperature):
    def crit(x):
        state = CP.AbstractState("HEOS", "CarbonDioxide&n-Butane")
        state.set_mole_fractions([x, 1 - x])
        return [c for c in state.all_critical_points() if c.stable and c.p > 0][0]

    x = brentq(lambda x: crit(x).T - temperature, 0.3, 0.97, xtol=1e-10)
    return crit(x).p


@pytest.mark.parametrize("temperature", [320.0, 344.26, 377.6])
def test_binary_mmp_is_the_critical_locus_pressure(temperature):
    result = multi_contact_mmp(BINARY, NC4, CO2, temperature)
    assert result.status == MiscibilityStatus.CONVERGED and not result.three_phase
    locus = _critical_locus_pressure(temperature)
    # Our own critical-point solver. The first-contact MMP (cricondenbar of the P-x diagram) is
    # the same point for a binary, to the solvers' tolerances. The mixing cells reach it to the
    # error of extrapolating their tie-line lengths to zero (the cells' compositions miss the
    # two-phase window as it closes; measured 0.06 % at 344.26 K, 0.24 % at 320 K, 1.6 % at
    # 377.6 K): 2 %.
    fc, _, _ = first_contact_mmp(BINARY, NC4, CO2, temperature)
    assert fc == pytest.approx(locus, rel=2e-4)
    assert result.pressure == pytest.approx(locus, rel=0.02)
    # CoolProp HEOS (GERG-2008) critical locus of CO2 + n-butane: within the PR-vs-GERG model
    # difference (measured 1.9 % at 344.26 K, 4.2 % at 320 K, 5.3 % at 377.6 K; 7 % allowed,
    # as for the critical pressures of tests/test_envelope.py).
    assert result.pressure == pytest.approx(_coolprop_locus_pressure(temperature), rel=0.07)


@pytest.fixture(scope="module")
def kestrel():
    spec = load_config("configs/volatile_oil_co2.toml")
    streams = dict(spec.streams)
    return (spec.fluid.mixture(), np.array(streams["kestrel_oil"]),
            np.array(streams["co2_injection_gas"]))


@pytest.mark.slow
def test_two_cell_counts_agree_and_multi_contact_is_below_first_contact(kestrel):
    mix, oil, gas = kestrel
    t = 353.15
    coarse = multi_contact_mmp(mix, oil, gas, t, contacts=40)
    fine = multi_contact_mmp(mix, oil, gas, t, contacts=80)
    assert coarse.status == fine.status == MiscibilityStatus.CONVERGED
    # Two routes (40 and 80 contacts): within 2 % (measured 1.7 % at 80 degC, 0.2 % at 60).
    assert fine.pressure == pytest.approx(coarse.pressure, rel=0.02)
    # A multi-contact MMP never exceeds the first-contact one.
    fc, x_fc, _ = first_contact_mmp(mix, oil, gas, t)
    assert fine.pressure <= fc and coarse.pressure <= fc
    # The first-contact MMP is the largest saturation pressure along the mixing line.
    study = swelling_study(mix, oil, gas, [t], np.linspace(0.0, 0.95, 20))
    assert fc >= np.nanmax(study.swelling_saturation_pressure.values) * (1 - 1e-9)


def test_too_few_contacts_leave_the_mmp_high(kestrel):
    # Numerical dispersion of few cells: the tie lines have not developed, the MMP is higher.
    mix, oil, gas = kestrel
    few = multi_contact_mmp(mix, oil, gas, 353.15, contacts=8)
    more = multi_contact_mmp(mix, oil, gas, 353.15, contacts=40)
    assert few.pressure >= more.pressure


def test_swelling_factor_definition(kestrel):
    # SF(x) = v_sat(x) / ((1 - x) v_sat(0)), from the flash's volume-shifted molar volumes at
    # the saturation pressures (recomputed here from the stored pieces).
    mix, oil, gas = kestrel
    x = np.array([0.0, 0.1, 0.3])
    s = swelling_study(mix, oil, gas, [333.15], x).isel(temperature=0)
    assert float(s.swelling_factor[0]) == 1.0
    assert np.all(s.swelling_saturation_kind.values == 1)  # bubble points of the oil side
    z = (1 - x)[:, None] * oil + x[:, None] * gas
    p = s.swelling_saturation_pressure.values
    r = gridflash.flash(mix, p * (1 + 1e-7), np.full(3, 333.15), z)
    assert np.all(r.phase_count == 1)
    below = gridflash.flash(mix, p * (1 - 1e-6), np.full(3, 333.15), z)
    assert np.all(below.phase_count == 2)
    v = np.where(np.isfinite(r.liquid.molar_volume), r.liquid.molar_volume,
                 r.vapour.molar_volume)
    np.testing.assert_allclose(s.swelling_factor.values, v / ((1 - x) * v[0]), rtol=1e-9)
    # Adding gas swells the oil (common practice: CO2-rich gas swells oil).
    assert np.all(np.diff(s.swelling_factor.values) > 0)


@pytest.mark.parametrize("kwargs, match", [
    ({"oil": [0.5, 0.6]}, "oil"),
    ({"gas": [1.0]}, "gas"),
    ({"contacts": 1}, "contacts"),
])
def test_bad_input(kwargs, match):
    args = {"oil": NC4, "gas": CO2, **kwargs}
    with pytest.raises(InputError, match=match):
        multi_contact_mmp(BINARY, args.pop("oil"), args.pop("gas"), 344.0, **args)


_BINARY_CONFIG = """\
# Invented test config: pure CO2 injected into pure n-butane.
[fluid]
eos = "PR78"
components = ["CO2", "nC4"]
kij = { "CO2-nC4" = 0.13 }

[streams.butane]
mole_fractions = { nC4 = 1.0 }

[streams.co2]
mole_fractions = { CO2 = 1.0 }

[pressure]
unit = "bar"
start = 20.0
stop = 120.0
count = 6

[temperature]
unit = "K"
values = [344.26]

[composition]
kind = "mixing"
streams = ["butane", "co2"]
start = 0.0
stop = 1.0
count = 6

[run]
output = "binary.zarr"
workers = 1
scheduler = "threads"
"""


def test_cli_mmp_for_a_config_and_a_store(tmp_path):
    from click.testing import CliRunner

    from gridflash.cli import cli

    config = tmp_path / "binary.toml"
    config.write_text(_BINARY_CONFIG)
    result = CliRunner().invoke(cli, ["mmp", str(config), "--plot", str(tmp_path / "figs")])
    assert result.exit_code == 0, result.output
    row = [s for s in result.output.splitlines() if s.strip().startswith("71.11")][0]
    first, multi = (float(v) for v in row.split()[1:3])
    locus = _critical_locus_pressure(344.26) / 1e5
    assert multi == pytest.approx(locus, rel=0.02) and first == pytest.approx(locus, rel=2e-4)
    assert (tmp_path / "figs" / "swelling_0.png").stat().st_size > 10_000
    # A store: computed and stored with the table.
    result = CliRunner().invoke(cli, ["run", str(config), "--quiet"])
    assert result.exit_code == 0, result.output
    store = tmp_path / "binary.zarr"
    result = CliRunner().invoke(cli, ["mmp", str(store)])
    assert result.exit_code == 0, result.output
    with gridflash.open_table(store) as ds:
        assert float(ds.multi_contact_mmp[0]) / 1e5 == pytest.approx(multi, abs=0.01)
        assert ds.swelling_factor.dims == ("temperature", "mixing_ratio")
        assert ds.multi_contact_mmp.attrs["units"] == "Pa"


def test_cli_mmp_refuses_a_list_axis_in_one_line(tmp_path):
    from click.testing import CliRunner

    from gridflash.cli import cli

    config = tmp_path / "list.toml"
    config.write_text(_BINARY_CONFIG.replace(
        'kind = "mixing"\nstreams = ["butane", "co2"]\nstart = 0.0\nstop = 1.0\ncount = 6',
        'kind = "list"\nstreams = ["butane", "co2"]'))
    result = CliRunner().invoke(cli, ["mmp", str(config)])
    assert result.exit_code == 1
    assert "not a two-stream mixing axis" in result.output
    assert result.output.strip().count("\n") == 0
