"""Default binary interaction parameters: the table, how it is applied and overridden, and tie
lines at the default values against CoolProp's GERG-2008 mixture model.

Reference for the tie lines: CoolProp (HEOS backend: multiparameter pure-fluid equations with
the GERG-2008 mixing rules and departure functions of Kunz & Wagner, J. Chem. Eng. Data 57
(2012) 3032). For each point CoolProp gives the bubble pressure ``P`` of a liquid ``x`` at ``T``
and the vapour ``y`` in equilibrium with it; a feed ``z = x + beta (y - x)`` on that tie line
must flash at ``(T, P)`` into two phases with a vapour fraction within 0.06 of ``beta``, and
feeds a little beyond either end of the tie line into one phase.
"""

from __future__ import annotations

import json
import re

import numpy as np
import pytest
from click.testing import CliRunner

import gridflash
from gridflash import ConfigError, InputError, Mixture
from gridflash.cli import cli
from gridflash.config._parser import load_config, parse_config
from gridflash.store import mixture_from_store
from gridflash.thermo import builtin_names
from gridflash.thermo._interaction_data import NON_HYDROCARBONS, REFERENCES

CP = pytest.importorskip("CoolProp.CoolProp")

_COOLPROP_NAMES = {
    "CO2": "CarbonDioxide", "N2": "Nitrogen", "H2S": "HydrogenSulfide", "C1": "Methane",
    "C2": "Ethane", "C3": "Propane", "nC4": "n-Butane", "nC10": "n-Decane",
}
_HYDROCARBONS = [n for n in builtin_names() if n not in NON_HYDROCARBONS]


# -- the table ------------------------------------------------------------------------------------

@pytest.mark.parametrize("eos", ["PR76", "PR78", "SRK"])
def test_every_non_hydrocarbon_pair_has_a_sourced_default(eos):
    """Every CO2/N2/H2S/H2O pair with a built-in hydrocarbon or with each other has a value
    from a named source; hydrocarbon pairs have none (they stay zero)."""
    mix = Mixture(list(builtin_names()), eos=eos)
    for i, a in enumerate(mix.names):
        for j in range(i + 1, mix.n_components):
            b = mix.names[j]
            source = mix.kij_sources[f"{a}-{b}"]
            if a in NON_HYDROCARBONS or b in NON_HYDROCARBONS:
                assert source in REFERENCES, (a, b, source)
                assert -0.5 <= mix.kij[i, j] < 1.0 and mix.kij[i, j] != 0.0
            else:
                assert source == "zero: hydrocarbon pair, no default"
                assert mix.kij[i, j] == 0.0


@pytest.mark.parametrize(
    ("pair", "value"),
    [
        # Soreide & Whitson (1992), Fluid Phase Equilib. 77, 217: non-aqueous-phase kij of
        # water with hydrocarbons 0.4850, with CO2 0.1896, N2 0.4778, H2S 0.19031 (from memory).
        (("H2O", "C1"), 0.4850),
        (("H2O", "nC10"), 0.4850),
        (("H2O", "CO2"), 0.1896),
        (("H2O", "N2"), 0.4778),
        (("H2O", "H2S"), 0.19031),
    ],
)
def test_water_pairs_follow_soreide_whitson(pair, value):
    mix = Mixture(list(pair))
    assert mix.kij[0, 1] == value and mix.kij_sources["-".join(pair)] == "soreide1992"


def test_overrides_pair_by_pair_zero_and_full_matrix():
    names = ["N2", "CO2", "C1", "nC10"]
    default = Mixture(names)
    given = Mixture(names, kij={"CO2-C1": 0.12})
    changed = np.zeros((4, 4), dtype=bool)
    changed[1, 2] = changed[2, 1] = True
    assert given.kij[1, 2] == 0.12 and given.kij_sources["CO2-C1"] == "given"
    np.testing.assert_array_equal(given.kij[~changed], default.kij[~changed])
    assert not Mixture(names, kij="zero").kij.any()
    assert Mixture(names, kij=" Zero ").kij_sources["N2-CO2"] == "zero: all-zero requested"
    matrix = np.zeros((4, 4))
    assert not Mixture(names, kij=matrix).kij.any()  # a full matrix is used as it is


def test_pseudo_components_get_water_rule_and_zero_otherwise():
    heavy = gridflash.Component("C12+", tc=680.0, pc=2.0e6, omega=0.55, mw=170.0)
    mix = Mixture(["N2", "CO2", "H2S", "H2O", heavy])
    assert mix.kij_sources["H2O-C12+"] == "soreide1992" and mix.kij[3, 4] == 0.4850
    for name in ("N2", "CO2", "H2S"):
        assert mix.kij_sources[f"{name}-C12+"] == "zero: no default for this pair"
        assert mix.kij[mix.index(name), 4] == 0.0


@pytest.mark.parametrize(
    ("kij", "message"),
    [
        ({"CO2-C1": 1.0}, r"kij\['CO2-C1'\] = 1.0 is outside \[-0.5, 1\)"),
        ({("CO2", "C1"): -0.51}, r"is outside \[-0.5, 1\)"),
        ({"CO2-C7": 0.1}, "'C7' is not in the mixture"),
        ({"CO2-C1": 0.1, "C1-CO2": 0.1}, "gives the pair C1-CO2 again"),
        ("zeros please", "not understood"),
    ],
)
def test_bad_kij_api(kij, message):
    with pytest.raises(InputError, match=message):
        Mixture(["CO2", "C1"], kij=kij)


_CONFIG = """
[fluid]
components = [
  "N2", "CO2", "C1", "nC10",
  {{ name = "C12+", tc = 680, tc_unit = "K", pc = 20, pc_unit = "bar", omega = 0.55, mw = 170 }},
]
{kij}
[streams.invented_oil]
mole_fractions = {{ N2 = 0.01, CO2 = 0.09, C1 = 0.40, nC10 = 0.30, "C12+" = 0.20 }}
[pressure]
unit = "bar"
values = [50, 150]
[temperature]
unit = "K"
values = [350]
[composition]
kind = "list"
streams = ["invented_oil"]
[run]
output = "{output}"
"""


@pytest.mark.parametrize(
    ("kij", "key", "bad"),
    [
        ('kij = { "CO2-C1" = -0.6 }', "fluid.kij.CO2-C1", "-0.6"),
        ('kij = [["CO2", "C7", 0.1]]', "fluid.kij[0]", "C7"),
        ('kij = { "CO2-C1" = 0.1, "C1-CO2" = 0.1 }', "fluid.kij.C1-CO2", "again"),
        ('kij = "zeros"', "fluid.kij", "zeros"),
    ],
)
def test_bad_kij_config_is_one_line(kij, key, bad):
    with pytest.raises(ConfigError) as err:
        parse_config(_CONFIG.format(kij=kij, output="x.zarr"))
    text = str(err.value)
    assert "\n" not in text and key in text and bad in text


def test_config_defaults_zero_and_sources():
    spec = parse_config(_CONFIG.format(kij='kij = { "CO2-C1" = 0.12 }', output="x.zarr"))
    sources = dict(spec.fluid.kij_sources)
    assert sources["CO2-C1"] == "fluid.kij" and sources["N2-C1"] == "knapp1982"
    assert spec.fluid.zero_default_pairs == ("N2-C12+", "CO2-C12+")
    mix = spec.fluid.mixture()
    assert mix.kij[mix.index("CO2"), mix.index("C1")] == 0.12
    assert mix.kij[mix.index("N2"), mix.index("C1")] == Mixture(["N2", "C1"]).kij[0, 1]
    zero = parse_config(_CONFIG.format(kij='kij = "zero"', output="x.zarr"))
    assert not np.array(zero.fluid.kij).any()


@pytest.mark.parametrize("path", ["volatile_oil_co2", "training_samples", "small_test"])
def test_bundled_configs_that_set_every_pair_are_unchanged(path):
    """A config giving every non-hydrocarbon pair itself gets exactly its own matrix (zero for
    the hydrocarbon pairs it does not give): the same phase equilibrium as before defaults."""
    spec = load_config(f"configs/{path}.toml")
    names = spec.fluid.names
    own = np.zeros((len(names),) * 2)
    for pair, source in spec.fluid.kij_sources:
        a, b = pair.split("-", 1)
        if source == "fluid.kij":
            i, j = names.index(a), names.index(b)
            own[i, j] = own[j, i] = spec.fluid.kij[i][j]
        else:  # no pair of a non-hydrocarbon was left to the default table
            assert source == "zero: hydrocarbon pair, no default", pair
    np.testing.assert_array_equal(np.array(spec.fluid.kij), own)


def test_run_summary_and_store_record_the_matrix_and_sources(tmp_path):
    config = tmp_path / "fluid.toml"
    store = tmp_path / "out.zarr"
    config.write_text(_CONFIG.format(kij="", output=store.as_posix()))
    result = CliRunner().invoke(cli, ["run", str(config)], catch_exceptions=False)
    assert result.exit_code == 0, result.output
    line = re.search(r"kij left at zero.*: (.*)", result.stdout)
    assert line and line[1] == "N2-C12+, CO2-C12+"
    table = gridflash.open_table(store)
    recorded = json.loads(table.attrs["kij_sources"])
    assert recorded["pairs"]["CO2-C1"] == "knapp1982"
    assert recorded["pairs"]["CO2-C12+"] == "zero: no default for this pair"
    assert set(recorded["references"]) == set(REFERENCES)
    spec = load_config(config)
    rebuilt = mixture_from_store(table)  # what lookup's refinement flashes with
    np.testing.assert_array_equal(rebuilt.kij, spec.fluid.mixture().kij)
    np.testing.assert_array_equal(rebuilt.kij, Mixture(spec.fluid.components).kij)


# -- tie lines against GERG-2008 ------------------------------------------------------------------

def _reference_tie_line(names, x_liquid, temperature):
    """CoolProp HEOS (GERG-2008) bubble point: pressure, liquid and vapour compositions."""
    state = CP.AbstractState("HEOS", "&".join(_COOLPROP_NAMES[n] for n in names))
    state.set_mole_fractions(list(x_liquid))
    state.update(CP.QT_INPUTS, 0.0, temperature)
    return (state.p(), np.array(state.mole_fractions_liquid()),
            np.array(state.mole_fractions_vapor()))


# (components, T [K], bubble-point liquid). Points away from the mixture critical region.
_TIE_LINES = [
    (("CO2", "C1"), 230.0, (0.5, 0.5)),
    (("CO2", "C1"), 230.0, (0.9, 0.1)),
    (("CO2", "C1"), 250.0, (0.9, 0.1)),
    (("CO2", "C3"), 280.0, (0.5, 0.5)),
    (("CO2", "C3"), 310.0, (0.2, 0.8)),
    (("CO2", "C3"), 310.0, (0.4, 0.6)),
    (("CO2", "nC4"), 310.0, (0.5, 0.5)),
    (("CO2", "nC4"), 344.0, (0.2, 0.8)),
    (("CO2", "nC4"), 344.0, (0.4, 0.6)),
    (("CO2", "nC10"), 344.0, (0.4, 0.6)),
    (("CO2", "nC10"), 400.0, (0.2, 0.8)),
    (("CO2", "nC10"), 400.0, (0.5, 0.5)),
    (("N2", "C1"), 150.0, (0.1, 0.9)),
    (("N2", "C1"), 120.0, (0.5, 0.5)),
    (("N2", "C3"), 250.0, (0.05, 0.95)),
    (("N2", "C3"), 300.0, (0.05, 0.95)),
    (("H2S", "C1"), 250.0, (0.9, 0.1)),
    (("H2S", "C1"), 300.0, (0.9, 0.1)),
    # acid-gas mixtures
    (("CO2", "H2S", "C1"), 260.0, (0.4, 0.4, 0.2)),
    (("CO2", "H2S", "C1"), 280.0, (0.4, 0.4, 0.2)),
    (("CO2", "H2S", "C1", "C3"), 260.0, (0.2, 0.2, 0.3, 0.3)),
    (("CO2", "H2S", "C1", "C3"), 300.0, (0.2, 0.2, 0.1, 0.5)),
    (("N2", "CO2", "H2S", "C1", "C2", "C3"), 240.0, (0.02, 0.1, 0.1, 0.2, 0.2, 0.38)),
    (("N2", "CO2", "H2S", "C1", "C2", "C3"), 280.0, (0.02, 0.1, 0.1, 0.2, 0.2, 0.38)),
]


@pytest.mark.parametrize(
    ("names", "temperature", "x_liquid"), _TIE_LINES,
    ids=[f"{'+'.join(n)}-{t:g}K-x{x[0]:g}" for n, t, x in _TIE_LINES],
)
def test_tie_lines_at_default_kij_match_gerg2008(names, temperature, x_liquid):
    pressure, x, y = _reference_tie_line(names, x_liquid, temperature)
    betas = np.array([0.25, 0.5, 0.75])
    z = x + betas[:, None] * (y - x)
    result = gridflash.flash(Mixture(list(names)), pressure, temperature, z)
    assert result.phase_count.tolist() == [2, 2, 2]
    assert np.abs(result.vapour_fraction - betas).max() <= 0.06
    # Beyond either end of the reference tie line by a tenth of its length the reference is one
    # phase at this T and P; so must gridflash be (ends that leave the simplex are skipped).
    beyond = np.array([x - 0.1 * (y - x), y + 0.1 * (y - x)])
    beyond = beyond[(beyond >= 0.0).all(axis=1)]
    outside = gridflash.flash(Mixture(list(names)), pressure, temperature,
                              beyond / beyond.sum(axis=1, keepdims=True))
    assert outside.phase_count.tolist() == [1] * len(beyond)
