"""Plus-fraction characterisation in configs, the `characterise` command, and a full grid run."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest
import xarray as xr
from click.testing import CliRunner

from gridflash import ConfigError
from gridflash.cli import cli
from gridflash.config._parser import load_config, parse_config

CONFIGS = Path(__file__).resolve().parent.parent / "configs"
HEAVY = CONFIGS / "heavy_oil.toml"

# A small invented config with a C7+ plus-fraction (invented numbers).
BASE = """
[fluid]
components = ["N2", "CO2", "C1", "C2", "C3", "nC4", "nC5", "nC6"]
kij = { "CO2-C1" = 0.12 }
[fluid.heavy_end]
stream = "oil"
name = "C7+"
carbon_number = 7
molar_mass = 215.0
specific_gravity = 0.845
[streams.oil]
mole_fractions = { N2 = 0.005, CO2 = 0.02, C1 = 0.40, C2 = 0.07, C3 = 0.05, nC4 = 0.04, \
nC5 = 0.03, nC6 = 0.025, "C7+" = 0.36 }
[streams.gas]
mole_fractions = { CO2 = 0.8, C1 = 0.15, "C7+" = 0.05 }
[pressure]
unit = "bar"
values = [100]
[temperature]
unit = "K"
values = [350]
[composition]
kind = "list"
streams = ["oil", "gas"]
[run]
output = "x.zarr"
"""


def _spec(text=BASE):
    return parse_config(text)


def test_pseudo_components_preserve_moles_and_mass_of_the_heavy_end():
    spec = load_config(HEAVY)
    heavy = spec.heavy_end
    names = spec.fluid.names
    assert names[:10] == ("N2", "CO2", "C1", "C2", "C3", "iC4", "nC4", "iC5", "nC5", "nC6")
    assert len(names) == 14 and names[-1].endswith("+")
    oil = np.array(dict(spec.streams)["gannet_oil"])
    total = 100.0  # the analysis is in mole percent (normalise = true)
    z7, z8, zplus = 4.10 / total, 4.40 / total, 34.00 / total
    pseudo = slice(10, 14)
    mw = np.array([c.mw for c in spec.fluid.components])
    # Moles of the heavy end (measured cuts + plus-fraction) and their mass, to 1e-12 relative.
    assert oil[pseudo].sum() == pytest.approx(z7 + z8 + zplus, rel=1e-12)
    assert np.dot(oil[pseudo], mw[pseudo]) == pytest.approx(
        z7 * 96.0 + z8 * 107.0 + zplus * 232.0, rel=1e-12
    )
    assert oil.sum() == pytest.approx(1.0, abs=1e-15)
    # Pseudo-components get heavier and more acentric in order.
    assert np.all(np.diff(mw[pseudo]) > 0)
    assert heavy.fluid.provenance["correlation"] == "kesler-lee"


def test_other_streams_share_the_heavy_end_in_the_same_proportions():
    spec = _spec()
    streams = dict(spec.streams)
    oil, gas = np.array(streams["oil"]), np.array(streams["gas"])
    n_light = 8
    shares = oil[n_light:] / oil[n_light:].sum()
    np.testing.assert_allclose(gas[n_light:], 0.05 * shares, rtol=1e-14)
    assert gas[n_light:].sum() == pytest.approx(0.05, rel=1e-14)


def test_kij_from_the_characterisation_and_precedence_of_given_pairs():
    spec = _spec()
    mix = spec.fluid.mixture()
    first = spec.fluid.names[8]
    # CO2 with a pseudo-component: 0.10 (common-practice constant of the characterisation).
    assert mix.kij[mix.index("CO2"), mix.index(first)] == pytest.approx(0.10)
    assert mix.kij[mix.index("C1"), mix.index(first)] > 0  # Chueh-Prausnitz, positive
    override = BASE.replace(
        'kij = { "CO2-C1" = 0.12 }', f'kij = {{ "CO2-C1" = 0.12, "CO2-{first}" = 0.05 }}'
    )
    mix2 = _spec(override).fluid.mixture()
    assert mix2.kij[mix2.index("CO2"), mix2.index(first)] == 0.05


def test_fingerprint_follows_the_heavy_end():
    a = _spec().config_hash
    b = _spec(BASE.replace("molar_mass = 215.0", "molar_mass = 220.0")).config_hash
    c = _spec(BASE.replace('name = "C7+"', 'name = "C7+"\npseudo_components = 3')).config_hash
    assert len({a, b, c}) == 3


@pytest.mark.parametrize(
    ("old", "new", "message"),
    [
        ('name = "C7+"\n', "", r"fluid\.heavy_end\.name is missing"),
        ('stream = "oil"', 'stream = "oyl"', r"fluid\.heavy_end\.stream = 'oyl' is not a stream"),
        ("carbon_number = 7", "carbon_number = 3", r"fluid\.heavy_end\.carbon_number = 3"),
        ("molar_mass = 215.0", 'molar_mass = "heavy"', r"fluid\.heavy_end\.molar_mass = 'heavy'"),
        ('name = "C7+"', 'name = "nC6"', r"fluid\.heavy_end\.name = 'nC6' is also a name"),
        (
            "specific_gravity = 0.845",
            'specific_gravity = 0.845\ncorrelation = "magic"',
            r"fluid\.heavy_end\.correlation = 'magic'",
        ),
        (
            "specific_gravity = 0.845",
            "specific_gravity = 0.845\npseudo_component = 3",
            r"fluid\.heavy_end\.pseudo_component.*did you mean",
        ),
        (
            "specific_gravity = 0.845",
            "specific_gravity = 0.845\nmeasured = [{ carbon_number = 9 }]",
            r"fluid\.heavy_end\.measured\[0\]\.carbon_number = 9",
        ),
        ('"C7+" = 0.36 }', '"C7" = 0.36 }', r"has no 'C7\+' entry"),
        ("specific_gravity = 0.845", "specific_gravity = 3.5", r"fluid\.heavy_end"),
    ],
)
def test_heavy_end_mistakes_give_one_line_errors(old, new, message):
    assert old in BASE
    with pytest.raises(ConfigError, match=message) as info:
        _spec(BASE.replace(old, new, 1))
    assert "\n" not in str(info.value)


def test_characterise_command_prints_and_writes_config_toml(tmp_path):
    out = tmp_path / "fluid.toml"
    result = CliRunner().invoke(cli, ["characterise", str(HEAVY), "--toml", str(out)])
    assert result.exit_code == 0, result.output
    spec = load_config(HEAVY)
    for comp in spec.fluid.components[10:]:
        row = next(line for line in result.output.splitlines() if line.startswith(comp.name + " "))
        assert float(row.split()[2]) == pytest.approx(comp.tc, abs=0.005)
    # The written TOML is a config fluid: the same components come back from the parser.
    tail = (
        '[pressure]\nunit = "bar"\nvalues = [100]\n[temperature]\nunit = "K"\nvalues = [350]\n'
        '[composition]\nkind = "list"\nstreams = ["gannet_oil"]\n[run]\noutput = "y.zarr"\n'
    )
    again = parse_config(out.read_text() + tail)
    assert again.fluid.names == spec.fluid.names
    np.testing.assert_allclose(again.streams[0][1], dict(spec.streams)["gannet_oil"], rtol=1e-14)
    np.testing.assert_array_equal(np.array(again.fluid.kij), np.array(spec.fluid.kij))
    # Without a heavy end: one line, exit status 1.
    bad = CliRunner().invoke(cli, ["characterise", str(CONFIGS / "small_test.toml")])
    assert bad.exit_code == 1
    assert "fluid.heavy_end is missing" in bad.output


@pytest.mark.slow
def test_characterised_oil_full_grid_run_has_no_flagged_cell(tmp_path):
    # The invented characterised oil mixed with separator gas over 20-600 bar, 50-125 degC and
    # mixing ratios 0-0.9 (1,200 cells): every cell converged; provenance in the store.
    out = tmp_path / "heavy.zarr"
    result = CliRunner().invoke(
        cli, ["run", str(HEAVY), "--output", str(out), "--threads", "--quiet"]
    )
    assert result.exit_code == 0, result.output
    ds = xr.open_zarr(out)
    assert int(ds["converged"].size) == 1200
    assert bool(ds["converged"].all())
    assert 0.2 < float((ds["phase_count"] == 2).mean()) < 0.9
    prov = json.loads(ds.attrs["fluid_provenance"])
    assert prov["heavy_end.correlation"] == "kesler-lee"
    assert "gamma" in prov["heavy_end.distribution"]
