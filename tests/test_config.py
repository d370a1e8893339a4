"""Tests of the run-description layer: units, config parsing, composition axes, block inputs.

External references used here:
- NIST Special Publication 811 (2008), "Guide for the Use of the International System of Units":
  1 bar = 1e5 Pa, 1 atm = 101 325 Pa (exact), 1 psi = 6.894 757 E+03 Pa; T/K = t/degC + 273.15,
  T/K = (t/degF + 459.67)/1.8.
- The exact definitions behind the psi: international pound 0.453 592 37 kg and inch 0.0254 m
  (international yard and pound agreement, 1959), standard gravity 9.806 65 m/s2 (3rd CGPM, 1901).
- The number of points of a simplex lattice, C(d + n - 1, n - 1) ("stars and bars": Feller, An
  Introduction to Probability Theory and Its Applications, vol. 1, 3rd ed., Sec. II.5).
"""

from __future__ import annotations

import copy
import hashlib
import json
import math
import re
from collections.abc import Callable
from pathlib import Path
from typing import Any

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from gridflash import ConfigError
from gridflash.config._composition import (
    mixing_line,
    simplex_lattice,
    simplex_size,
)
from gridflash.config._parser import (
    canonical_config,
    canonical_json,
    changed_keys,
    load_config,
    parse_config,
)
from gridflash.config._units import (
    PRESSURE_UNITS,
    TEMPERATURE_UNITS,
    molar_volume_to_si,
    pressure_to_pa,
    temperature_to_kelvin,
)
from gridflash.plan._grid import block_inputs

ROOT = Path(__file__).resolve().parents[1]
CONFIGS = ROOT / "configs"

# --------------------------------------------------------------------------------------------
# A valid config as a dict, and a small TOML writer (tomllib only reads)
# --------------------------------------------------------------------------------------------

BASE: dict[str, Any] = {
    "fluid": {
        "eos": "PR78",
        "components": ["C1", "C3", "nC10"],
        "kij": {"C1-nC10": 0.04},
    },
    "streams": {
        "oil": {"mole_fractions": {"C1": 0.4, "C3": 0.2, "nC10": 0.4}},
        "gas": {"mole_fractions": {"C1": 0.9, "C3": 0.1}, "normalise": False},
    },
    "pressure": {"unit": "bar", "start": 20.0, "stop": 180.0, "count": 5},
    "temperature": {"unit": "degC", "values": [40.0, 80.0, 120.0]},
    "composition": {
        "kind": "mixing",
        "streams": ["oil", "gas"],
        "start": 0.0,
        "stop": 1.0,
        "count": 6,
    },
    "run": {
        "output": "out.zarr",
        "chunks": {"pressure": 5, "temperature": 2, "composition": 3},
        "workers": 2,
        "scheduler": "threads",
        "sweep": "pressure",
        "warm_start": True,
    },
}

PSEUDO = {
    "name": "C7+",
    "tc": 580.0,
    "tc_unit": "K",
    "pc": 26.0,
    "pc_unit": "bar",
    "omega": 0.40,
    "mw": 120.0,
}


def _toml_value(value: Any) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int):
        return str(value)
    if isinstance(value, float):
        if math.isnan(value):
            return "nan"
        if math.isinf(value):
            return "inf" if value > 0 else "-inf"
        return repr(value)
    if isinstance(value, str):
        return json.dumps(value, ensure_ascii=False)
    if isinstance(value, list):
        return "[" + ", ".join(_toml_value(v) for v in value) + "]"
    if isinstance(value, dict):
        items = ", ".join(f"{_toml_key(k)} = {_toml_value(v)}" for k, v in value.items())
        return "{ " + items + " }" if items else "{}"
    raise TypeError(type(value))


def _toml_key(key: str) -> str:
    return json.dumps(key, ensure_ascii=False)


def to_toml(doc: dict[str, Any]) -> str:
    """Write a document as TOML: top-level tables as [headers], everything below inline."""
    lines = [
        f"{_toml_key(k)} = {_toml_value(v)}" for k, v in doc.items() if not isinstance(v, dict)
    ]
    for key, table in doc.items():
        if isinstance(table, dict):
            lines.append(f"\n[{_toml_key(key)}]")
            lines += [f"{_toml_key(k)} = {_toml_value(v)}" for k, v in table.items()]
    return "\n".join(lines) + "\n"


def base() -> dict[str, Any]:
    return copy.deepcopy(BASE)


def _parts(path: str) -> list[str | int]:
    out: list[str | int] = []
    for part in path.split("."):
        m = re.fullmatch(r"(.*?)((?:\[\d+\])*)", part)
        assert m is not None
        if m.group(1):
            out.append(m.group(1))
        out += [int(i) for i in re.findall(r"\[(\d+)\]", m.group(2))]
    return out


def set_key(path: str, value: Any) -> Callable[[dict[str, Any]], None]:
    def apply(doc: dict[str, Any]) -> None:
        *head, last = _parts(path)
        node: Any = doc
        for p in head:
            node = node[p]
        node[last] = value

    return apply


def del_key(path: str) -> Callable[[dict[str, Any]], None]:
    def apply(doc: dict[str, Any]) -> None:
        *head, last = _parts(path)
        node: Any = doc
        for p in head:
            node = node[p]
        del node[last]

    return apply


def both(*fns: Callable[[dict[str, Any]], None]) -> Callable[[dict[str, Any]], None]:
    def apply(doc: dict[str, Any]) -> None:
        for fn in fns:
            fn(doc)

    return apply


def parse_doc(doc: dict[str, Any], **kwargs: Any):
    return parse_config(to_toml(doc), source="case.toml", **kwargs)


# --------------------------------------------------------------------------------------------
# Unit conversions against exact definitions
# --------------------------------------------------------------------------------------------

PSI_EXACT = 0.45359237 * 9.80665 / 0.0254**2  # lbf/in2 from the 1959 pound and inch, 1901 g_n


@pytest.mark.parametrize(
    ("value", "unit", "pascal"),
    [
        pytest.param(1.0, "Pa", 1.0, id="Pa"),
        pytest.param(1.0, "kPa", 1e3, id="kPa-SI-prefix"),
        pytest.param(1.0, "MPa", 1e6, id="MPa-SI-prefix"),
        pytest.param(1.0, "bar", 1e5, id="bar-NIST-SP811"),
        pytest.param(1.0, "bara", 1e5, id="bara-alias"),
        pytest.param(1.0, "atm", 101325.0, id="atm-NIST-SP811-exact"),
        pytest.param(1.0, "psia", PSI_EXACT, id="psi-exact-from-pound-inch-gn"),
        pytest.param(14.6959487755, "psia", 101325.0, id="atm-in-psi"),
    ],
)
def test_pressure_conversion_exact_definitions(value: float, unit: str, pascal: float) -> None:
    assert pressure_to_pa(value, unit) == pytest.approx(pascal, rel=1e-11)


def test_psi_agrees_with_nist_sp811_table() -> None:
    # NIST SP 811, App. B.8: pound-force per square inch (psi) = 6.894 757 E+03 Pa (7 digits).
    assert abs(pressure_to_pa(1.0, "psia") - 6.894757e3) < 5e-4
    assert pressure_to_pa(1.0, "psia") == pytest.approx(6894.757293168361, rel=1e-15)


@pytest.mark.parametrize(
    ("value", "unit", "kelvin"),
    [
        pytest.param(273.15, "K", 273.15, id="K"),
        pytest.param(0.0, "degC", 273.15, id="0C-NIST"),
        pytest.param(100.0, "°C", 373.15, id="100C-degree-sign"),
        pytest.param(-273.0, "C", 0.15, id="C-plain-letter"),
        pytest.param(32.0, "degF", 273.15, id="32F-ice-point"),
        pytest.param(212.0, "°F", 373.15, id="212F-steam-point"),
        pytest.param(-40.0, "F", 233.15, id="minus40F-equals-minus40C"),
        pytest.param(0.0, "degF", 459.67 / 1.8, id="0F-NIST-(t+459.67)/1.8"),
    ],
)
def test_temperature_conversion_exact_definitions(value: float, unit: str, kelvin: float) -> None:
    assert temperature_to_kelvin(value, unit) == pytest.approx(kelvin, rel=1e-14, abs=1e-12)


def test_unit_lists_are_canonical() -> None:
    assert PRESSURE_UNITS == ("Pa", "kPa", "MPa", "bar", "psia", "atm")
    assert TEMPERATURE_UNITS == ("K", "degC", "degF")
    assert molar_volume_to_si(98.6, "cm3/mol") == pytest.approx(9.86e-5, rel=1e-14)


@pytest.mark.parametrize(
    ("call", "key", "value"),
    [
        (lambda: pressure_to_pa(1.0, "psi", key="p"), "p.unit", "'psi'"),
        (lambda: pressure_to_pa(1.0, "psig", key="p"), "p.unit", "'psig'"),
        (lambda: pressure_to_pa([1.0, 0.0], "bar", key="p"), "p[1]", "0.0"),
        (lambda: temperature_to_kelvin(-500.0, "degF", key="t"), "t", "-500.0"),
        (lambda: temperature_to_kelvin(0.0, "K", key="t"), "t", "0.0"),
        (lambda: temperature_to_kelvin(20.0, "celsius", key="t"), "t.unit", "'celsius'"),
    ],
)
def test_unit_errors_name_key_and_value(call: Callable[[], Any], key: str, value: str) -> None:
    with pytest.raises(ConfigError) as info:
        call()
    message = str(info.value)
    assert key in message and value in message and "\n" not in message


# --------------------------------------------------------------------------------------------
# Composition axes and block inputs
# --------------------------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("n_streams", "divisions"), [(1, 3), (2, 4), (3, 1), (3, 4), (4, 5), (5, 3)]
)
def test_simplex_lattice_counts_and_sums(n_streams: int, divisions: int) -> None:
    lattice = simplex_lattice(n_streams, divisions)
    # Stars and bars: C(d + n - 1, n - 1) points (Feller, vol. 1, Sec. II.5).
    expected = math.comb(divisions + n_streams - 1, n_streams - 1)
    assert lattice.shape == (expected, n_streams) and simplex_size(n_streams, divisions) == expected
    np.testing.assert_allclose(lattice.sum(axis=1), 1.0, rtol=0, atol=1e-14)
    counts = lattice * divisions
    np.testing.assert_allclose(counts, np.round(counts), atol=1e-12)
    assert (lattice >= 0).all()
    assert len({tuple(r) for r in np.round(counts).astype(int)}) == expected  # all distinct
    # Deterministic order: descending lexicographic order of the integer counts.
    rows = [tuple(r) for r in np.round(counts).astype(int)]
    assert rows == sorted(rows, reverse=True)
    assert rows[0] == (divisions,) + (0,) * (n_streams - 1)
    assert rows[-1] == (0,) * (n_streams - 1) + (divisions,)


def test_simplex_lattice_three_streams_two_divisions_listed() -> None:
    expected = [[1, 0, 0], [0.5, 0.5, 0], [0.5, 0, 0.5], [0, 1, 0], [0, 0.5, 0.5], [0, 0, 1]]
    np.testing.assert_array_equal(simplex_lattice(3, 2), expected)


def test_mixing_line_end_points_equal_streams() -> None:
    spec = load_config(CONFIGS / "volatile_oil_co2.toml")
    streams = dict(spec.streams)
    feeds = spec.composition.feed_array()
    first, second = spec.composition.streams
    assert spec.composition.values[0] == 0.0 and spec.composition.values[-1] == 1.0
    np.testing.assert_array_equal(feeds[0], streams[first])  # exactly, not approximately
    np.testing.assert_array_equal(feeds[-1], streams[second])
    np.testing.assert_allclose(feeds.sum(axis=1), 1.0, rtol=0, atol=1e-14)
    # Linear in the ratio: the midpoint is the mean of the streams.
    mid = mixing_line(streams[first], streams[second], [0.5])[0]
    np.testing.assert_allclose(mid, 0.5 * (np.array(streams[first]) + streams[second]), atol=1e-16)
    assert spec.composition.stream_fractions[3] == pytest.approx((0.7, 0.3), abs=1e-15)


def test_simplex_config_feeds_are_fraction_weighted_streams() -> None:
    doc = base()
    doc["streams"]["mid"] = {"mole_fractions": {"C1": 0.6, "C3": 0.3, "nC10": 0.1}}
    doc["composition"] = {"kind": "simplex", "streams": ["oil", "gas", "mid"], "divisions": 4}
    spec = parse_doc(doc)
    assert spec.dims == ("pressure", "temperature", "mixture")
    assert len(spec.composition) == math.comb(4 + 2, 2) == 15
    assert spec.composition.values == tuple(range(15))
    streams = np.array([dict(spec.streams)[n] for n in ("oil", "gas", "mid")])
    fractions = np.array(spec.composition.stream_fractions)
    np.testing.assert_allclose(spec.composition.feed_array(), fractions @ streams, atol=1e-15)
    np.testing.assert_array_equal(spec.composition.feed_array()[0], streams[0])
    np.testing.assert_array_equal(spec.composition.feed_array()[-1], streams[2])


def test_block_inputs_c_order_matches_full_grid() -> None:
    spec = load_config(CONFIGS / "small_test.toml")
    P, T, R = np.meshgrid(
        spec.pressure.values,
        spec.temperature.values,
        np.arange(len(spec.composition)),
        indexing="ij",
    )
    feeds = spec.composition.feed_array()
    block = (slice(1, 4), slice(0, 2), slice(3, 6))
    p, t, z = block_inputs(spec, block)
    assert p.shape == t.shape == (3 * 2 * 3,) and z.shape == (18, 3)
    np.testing.assert_array_equal(p, P[block].ravel())
    np.testing.assert_array_equal(t, T[block].ravel())
    np.testing.assert_array_equal(z, feeds[R[block].ravel()])
    # Whole grid through the mapping form; a missing dimension means the whole axis.
    p_all, t_all, z_all = block_inputs(spec, {"temperature": slice(None)})
    assert p_all.shape == (math.prod(spec.shape),)
    np.testing.assert_array_equal(p_all.reshape(spec.shape), P)
    np.testing.assert_array_equal(z_all.reshape(*spec.shape, 3)[2, 1], feeds)


# --------------------------------------------------------------------------------------------
# The example configs
# --------------------------------------------------------------------------------------------


def test_example_volatile_oil_config() -> None:
    spec = load_config(CONFIGS / "volatile_oil_co2.toml")
    assert spec.shape == (20, 4, 11) and spec.dims[2] == "mixing_ratio"
    assert spec.fluid.eos == "PR78" and len(spec.fluid.components) == 10
    assert spec.pressure.values[0] == 5e6 and spec.pressure.values[-1] == 4.3e7  # 50, 430 bar
    assert spec.temperature.values == pytest.approx((333.15, 353.15, 373.15, 393.15), abs=1e-12)
    kij = np.array(spec.fluid.kij)
    names = spec.fluid.names
    assert kij[names.index("CO2"), names.index("C1")] == kij[names.index("C1"), names.index("CO2")]
    assert kij[names.index("CO2"), names.index("C1")] == 0.100
    assert kij[names.index("N2"), names.index("CO2")] == -0.020
    assert spec.run.output == CONFIGS / "volatile_oil_co2.zarr"
    assert spec.config_text == (CONFIGS / "volatile_oil_co2.toml").read_text()
    spec.fluid.mixture()  # the thermodynamics layer accepts the fluid


def test_example_gas_condensate_config() -> None:
    spec = load_config(CONFIGS / "gas_condensate.toml")
    assert spec.shape == (16, 5, 1) and spec.dims[2] == "mixture"
    assert spec.pressure.values[0] == pytest.approx(500 * PSI_EXACT, rel=1e-15)
    # 100 degF = 310.927... K (NIST SP 811 definition).
    assert spec.temperature.values[0] == pytest.approx((100 + 459.67) / 1.8, rel=1e-15)
    heavy = spec.fluid.components[-1]
    assert heavy.name == "C11+" and heavy.pc == pytest.approx(1.9e6) and heavy.tc == 690.0
    z = spec.composition.feed_array()[0]
    assert z.sum() == pytest.approx(1.0, abs=1e-15)
    assert z[spec.fluid.names.index("C1")] == pytest.approx(0.75, rel=1e-14)  # 75 mol% normalised


# --------------------------------------------------------------------------------------------
# Mistakes: each a one-line error naming the key (and the value)
# --------------------------------------------------------------------------------------------

MISTAKES = [
    # id, mutation, key expected in the message, value repr expected (or None), other text
    (
        "unknown-top-table",
        lambda d: d.update(temperatur=d.pop("temperature")),
        "temperatur",
        None,
        "did you mean temperature",
    ),
    ("missing-table", del_key("run"), "run", None, "missing required key"),
    ("table-not-a-table", set_key("pressure", 5), "pressure", "5", "table"),
    (
        "unknown-pressure-unit",
        set_key("pressure.unit", "barg"),
        "pressure.unit",
        "'barg'",
        "Pa, kPa, MPa, bar, psia, atm",
    ),
    ("missing-unit", del_key("pressure.unit"), "pressure.unit", None, "missing"),
    (
        "unknown-temperature-unit",
        set_key("temperature.unit", "Celsius"),
        "temperature.unit",
        "'Celsius'",
        "K, degC, degF",
    ),
    (
        "unknown-key-typo",
        both(del_key("pressure.stop"), set_key("pressure.stpo", 180.0)),
        "pressure.stpo",
        None,
        "did you mean pressure.stop",
    ),
    (
        "descending-values",
        set_key("temperature.values", [40.0, 120.0, 80.0]),
        "temperature.values[2]",
        "80.0",
        "increasing",
    ),
    (
        "repeated-values",
        set_key("temperature.values", [40.0, 40.0]),
        "temperature.values[1]",
        "40.0",
        "increasing",
    ),
    ("empty-axis", set_key("temperature.values", []), "temperature.values", "[]", "empty"),
    ("count-zero", set_key("pressure.count", 0), "pressure.count", "0", "1 to"),
    ("count-float", set_key("pressure.count", 5.0), "pressure.count", "5.0", "integer"),
    ("bool-for-number", set_key("pressure.start", True), "pressure.start", "True", "number"),
    ("string-for-number", set_key("pressure.start", "20"), "pressure.start", "'20'", "number"),
    ("nan", set_key("pressure.start", float("nan")), "pressure.start", "nan", "finite"),
    (
        "infinite",
        set_key("temperature.values", [1.0, float("inf")]),
        "temperature.values[1]",
        "inf",
        "finite",
    ),
    ("negative-pressure", set_key("pressure.start", -20.0), "pressure.start", "-20.0", "above 0"),
    ("descending-range", set_key("pressure.stop", 10.0), "pressure.stop", "10.0", "increasing"),
    ("values-and-range", set_key("pressure.values", [1.0, 2.0]), "pressure.values", None, "either"),
    ("count-1-start-ne-stop", set_key("pressure.count", 1), "pressure.stop", "180.0", "count = 1"),
    (
        "below-absolute-zero",
        set_key("temperature.values", [-300.0, 20.0]),
        "temperature.values[0]",
        "-300.0",
        "0 K",
    ),
    (
        "fractions-do-not-sum",
        set_key("streams.gas.mole_fractions.C3", 0.05),
        "streams.gas.mole_fractions",
        None,
        "streams.gas.normalise = true",
    ),
    (
        "fraction-above-one",
        set_key("streams.gas.mole_fractions.C1", 1.2),
        "streams.gas.mole_fractions.C1",
        "1.2",
        "between 0 and 1",
    ),
    (
        "negative-fraction",
        set_key("streams.oil.mole_fractions.C3", -0.2),
        "streams.oil.mole_fractions.C3",
        "-0.2",
        "between 0 and 1",
    ),
    (
        "unknown-component-in-stream",
        set_key("streams.gas.mole_fractions.C4", 0.0),
        "streams.gas.mole_fractions.C4",
        "'C4'",
        "did you mean 'C3'",
    ),
    (
        "stream-list-wrong-length",
        set_key("streams.gas.mole_fractions", [0.5, 0.5]),
        "streams.gas.mole_fractions",
        "[0.5, 0.5]",
        "3 components",
    ),
    (
        "stream-without-fractions",
        del_key("streams.gas.mole_fractions"),
        "streams.gas.mole_fractions",
        None,
        "missing",
    ),
    (
        "normalise-not-bool",
        set_key("streams.gas.normalise", "yes"),
        "streams.gas.normalise",
        "'yes'",
        "true or false",
    ),
    (
        "unknown-key-in-stream",
        set_key("streams.gas.normalize", True),
        "streams.gas.normalize",
        None,
        "did you mean streams.gas.normalise",
    ),
    (
        "unknown-builtin-component",
        set_key("fluid.components[2]", "nC11"),
        "fluid.components[2]",
        "'nC11'",
        "did you mean",
    ),
    (
        "duplicate-component",
        set_key("fluid.components", ["C1", "methane", "nC10"]),
        "fluid.components[1]",
        "'methane'",
        "same component",
    ),
    ("components-empty", set_key("fluid.components", []), "fluid.components", "[]", "empty"),
    ("unknown-eos", set_key("fluid.eos", "PR79"), "fluid.eos", "'PR79'", "'PR76', 'PR78', 'SRK'"),
    ("kij-out-of-range", set_key("fluid.kij", {"C1-nC10": 1.5}), "fluid.kij.C1-nC10", "1.5", "< 1"),
    (
        "kij-unknown-component",
        set_key("fluid.kij", [["C1", "nC11", 0.1]]),
        "fluid.kij[0]",
        "'nC11'",
        "C1, C3, nC10",
    ),
    (
        "kij-self-pair",
        set_key("fluid.kij", [["C3", "propane", 0.1]]),
        "fluid.kij[0]",
        "0.1",
        "itself",
    ),
    (
        "kij-pair-twice",
        set_key("fluid.kij", {"C1-nC10": 0.1, "nC10-C1": 0.1}),
        "fluid.kij.nC10-C1",
        "0.1",
        "once",
    ),
    (
        "kij-unreadable-pair",
        set_key("fluid.kij", {"C1+nC10": 0.1}),
        'fluid.kij."C1+nC10"',
        "'C1+nC10'",
        "joined by '-'",
    ),
    (
        "pseudo-missing-unit",
        set_key("fluid.components[2]", {k: v for k, v in PSEUDO.items() if k != "pc_unit"}),
        "fluid.components[2].pc_unit",
        None,
        "missing",
    ),
    (
        "pseudo-bad-omega",
        set_key("fluid.components[2]", {**PSEUDO, "omega": 5.0}),
        "fluid.components[2].omega",
        "5.0",
        "(-1, 3)",
    ),
    (
        "pseudo-tc-below-zero",
        set_key("fluid.components[2]", {**PSEUDO, "tc": -500.0, "tc_unit": "degC"}),
        "fluid.components[2].tc",
        "-500.0",
        "0 K",
    ),
    (
        "pseudo-unknown-key",
        set_key("fluid.components[2]", {**PSEUDO, "acentric": 0.4}),
        "fluid.components[2].acentric",
        None,
        "allowed keys",
    ),
    (
        "unknown-composition-kind",
        set_key("composition.kind", "mix"),
        "composition.kind",
        "'mix'",
        "'mixing', 'simplex', 'list'",
    ),
    (
        "undefined-stream",
        set_key("composition.streams", ["oil", "gass"]),
        "composition.streams[1]",
        "'gass'",
        "did you mean 'gas'",
    ),
    (
        "mixing-three-streams",
        both(
            set_key("streams.mid", {"mole_fractions": {"C1": 1.0}}),
            set_key("composition.streams", ["oil", "gas", "mid"]),
        ),
        "composition.streams",
        "['oil', 'gas', 'mid']",
        "exactly two",
    ),
    (
        "stream-listed-twice",
        set_key("composition.streams", ["oil", "oil"]),
        "composition.streams[1]",
        "'oil'",
        "twice",
    ),
    (
        "mixing-one-stream",
        set_key("composition.streams", ["oil"]),
        "composition.streams",
        "['oil']",
        "exactly two",
    ),
    (
        "ratio-out-of-range",
        set_key("composition.stop", 1.5),
        "composition.stop",
        "1.5",
        "between 0 and 1",
    ),
    (
        "key-of-other-kind",
        set_key("composition.divisions", 3),
        "composition.divisions",
        None,
        "kind = 'mixing'",
    ),
    (
        "simplex-two-streams",
        set_key("composition", {"kind": "simplex", "streams": ["oil", "gas"], "divisions": 3}),
        "composition.streams",
        None,
        "at least three",
    ),
    (
        "list-without-points",
        set_key("composition", {"kind": "list"}),
        "composition.streams",
        None,
        "missing",
    ),
    ("output-missing", del_key("run.output"), "run.output", None, "missing"),
    ("output-empty", set_key("run.output", ""), "run.output", "''", "non-empty"),
    (
        "bad-scheduler",
        set_key("run.scheduler", "thread"),
        "run.scheduler",
        "'thread'",
        "did you mean 'threads'",
    ),
    ("workers-zero", set_key("run.workers", 0), "run.workers", "0", "1 to"),
    (
        "chunk-unknown-dimension",
        set_key("run.chunks", {"pressur": 2}),
        "run.chunks.pressur",
        None,
        "did you mean run.chunks.pressure",
    ),
    (
        "chunk-zero",
        set_key("run.chunks.temperature", 0),
        "run.chunks.temperature",
        "0",
        "at least 1",
    ),
    ("bad-sweep", set_key("run.sweep", "time"), "run.sweep", "'time'", "'pressure'"),
    ("warm-start-not-bool", set_key("run.warm_start", 1), "run.warm_start", "1", "true or false"),
    (
        "address-with-space",
        set_key("run.scheduler_address", "tcp://host 8786"),
        "run.scheduler_address",
        "'tcp://host 8786'",
        "whitespace",
    ),
]


@pytest.mark.parametrize(
    ("mutate", "key", "value", "hint"),
    [pytest.param(m, k, v, h, id=i) for i, m, k, v, h in MISTAKES],
)
def test_mistake_gives_one_line_error_naming_key(
    mutate: Callable[[dict[str, Any]], None], key: str, value: str | None, hint: str
) -> None:
    doc = base()
    mutate(doc)
    with pytest.raises(ConfigError) as info:
        parse_doc(doc)
    message = str(info.value)
    assert message.startswith("case.toml: ")
    assert len(message.splitlines()) == 1
    assert key in message, message
    if value is not None:
        assert value in message, message
    assert hint in message, message


def test_at_least_fifteen_kinds_of_mistake() -> None:
    assert len(MISTAKES) >= 15


@pytest.mark.parametrize(
    ("text", "line"),
    [
        pytest.param('[fluid]\neos = "PR78"\ncomponents = ["C1" "C3"]\n', 3, id="missing-comma"),
        pytest.param('[fluid]\neos = "PR78\n', 2, id="unterminated-string"),
        pytest.param("[fluid]\n[fluid]\n", 2, id="table-twice"),
        pytest.param("x = 1\ny = [1, 2\n", 2, id="unterminated-array-at-end"),
    ],
)
def test_malformed_toml_gives_line_number(text: str, line: int) -> None:
    with pytest.raises(ConfigError) as info:
        parse_config(text, source="bad.toml")
    message = str(info.value)
    assert message.startswith("bad.toml: malformed TOML at line ")
    assert f"line {line}" in message and len(message.splitlines()) == 1


def test_missing_file_is_a_config_error(tmp_path: Path) -> None:
    with pytest.raises(ConfigError, match="cannot read config file"):
        load_config(tmp_path / "nope.toml")


def test_parsing_writes_nothing(tmp_path: Path) -> None:
    path = tmp_path / "run.toml"
    path.write_text(to_toml(base()))
    spec = load_config(path)
    assert spec.run.output == tmp_path / "out.zarr"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["run.toml"]


# --------------------------------------------------------------------------------------------
# Values, defaults and single-value axes
# --------------------------------------------------------------------------------------------


def test_defaults_and_single_value_axes() -> None:
    doc = base()
    doc["fluid"] = {"components": ["methane", "propane", "n-decane"]}  # chemical names
    doc["pressure"] = {"unit": "MPa", "values": [10]}
    doc["temperature"] = {"unit": "K", "start": 300, "stop": 300, "count": 1}
    doc["composition"] = {"kind": "mixing", "streams": ["oil", "gas"], "values": [0.25]}
    doc["run"] = {"output": "/abs/out.zarr"}
    spec = parse_doc(doc)
    assert spec.shape == (1, 1, 1)
    assert spec.fluid.eos == "PR78" and spec.fluid.names == ("C1", "C3", "nC10")
    assert spec.fluid.kij == ((0.0,) * 3,) * 3
    assert spec.pressure.values == (1e7,) and spec.temperature.values == (300.0,)
    assert spec.run.output == Path("/abs/out.zarr")
    assert spec.run.workers is None and spec.run.scheduler == "threads"
    assert spec.run.scheduler_address is None and spec.run.warm_start is True
    assert spec.run.sweep == "pressure"
    assert spec.run.chunks == ()  # no run.chunks: the chunk plan chooses every length
    np.testing.assert_allclose(spec.composition.feeds[0], [0.525, 0.175, 0.3], atol=1e-15)


def test_chunks_hold_only_the_given_dimensions_in_grid_order() -> None:
    doc = base()
    doc["run"]["chunks"] = {"composition": 4, "pressure": 2}
    spec = parse_doc(doc)
    assert spec.run.chunks == (("pressure", 2), ("mixing_ratio", 4))
    assert canonical_config(to_toml(doc))["run"]["chunks"] == {"pressure": 2, "composition": 4}
    doc["run"]["chunks"] = {"mixing_ratio": 4, "composition": 4}
    with pytest.raises(
        ConfigError, match=r"run\.chunks\.composition and run\.chunks\.mixing_ratio"
    ):
        parse_doc(doc)


def test_chunk_larger_than_axis_is_the_whole_axis() -> None:
    doc = base()
    doc["run"]["chunks"] = {"pressure": 1000, "mixing_ratio": 2}
    spec = parse_doc(doc)
    assert dict(spec.run.chunks)["pressure"] == 5 and dict(spec.run.chunks)["mixing_ratio"] == 2


def test_pseudo_component_units_converted() -> None:
    doc = base()
    doc["fluid"]["components"][2] = {
        **PSEUDO,
        "tc": 306.85,
        "tc_unit": "°C",
        "pc": 377.098,
        "pc_unit": "psia",
        "vc": 0.45,
        "vc_unit": "L/mol",
        "source": "invented",
    }
    doc["fluid"]["kij"] = [["C1", "C7+", 0.03]]
    doc["streams"]["oil"]["mole_fractions"] = {"C1": 0.4, "C3": 0.2, "C7+": 0.4}
    spec = parse_doc(doc)
    c7 = spec.fluid.components[2]
    assert c7.tc == pytest.approx(580.0, abs=1e-12)
    assert c7.pc == pytest.approx(377.098 * PSI_EXACT, rel=1e-15)
    assert c7.vc == pytest.approx(4.5e-4, rel=1e-15) and c7.source == "invented"
    assert spec.fluid.kij[0][2] == spec.fluid.kij[2][0] == 0.03


def test_normalise_rescales_and_list_kind_with_inline_rows() -> None:
    doc = base()
    doc["streams"]["gas"] = {"mole_fractions": [90, 10, 0], "normalise": True}
    doc["composition"] = {
        "kind": "list",
        "mole_fractions": [{"C1": 1.0}, [0.5, 0.25, 0.25], {"C3": 2, "nC10": 2}],
        "normalise": True,
    }
    spec = parse_doc(doc)
    assert dict(spec.streams)["gas"] == pytest.approx((0.9, 0.1, 0.0), abs=1e-15)
    np.testing.assert_allclose(
        spec.composition.feed_array(), [[1, 0, 0], [0.5, 0.25, 0.25], [0, 0.5, 0.5]], atol=1e-15
    )
    assert spec.composition.streams == () and spec.dims[2] == "mixture"


def test_list_kind_of_streams() -> None:
    doc = base()
    doc["composition"] = {"kind": "list", "streams": ["gas", "oil"]}
    spec = parse_doc(doc)
    assert spec.composition.streams == ("gas", "oil")
    np.testing.assert_array_equal(
        spec.composition.feeds, [dict(spec.streams)["gas"], dict(spec.streams)["oil"]]
    )


# --------------------------------------------------------------------------------------------
# Canonical form, hash and changed keys
# --------------------------------------------------------------------------------------------


def test_hash_ignores_formatting_and_equivalent_spellings() -> None:
    text = (CONFIGS / "small_test.toml").read_text()
    spec = parse_config(text)
    assert (
        spec.config_hash
        == hashlib.sha256(canonical_json(canonical_config(text)).encode()).hexdigest()
    )
    stripped = "\n".join(line.split("#")[0].rstrip() for line in text.splitlines()) + "\n\n"
    assert parse_config(stripped).config_hash == spec.config_hash
    same = [
        text.replace("start = 20.0", "start = 20"),
        text.replace('unit = "degC"', 'unit = "°C"'),
        text.replace('eos = "PR78"', 'eos = "pr78"'),
        text.replace('"C1-nC10" = 0.04', '"nC10-C1" = 0.04'),
        text.replace("C1 = 0.90, C3 = 0.10 }", "C1 = 0.90, C3 = 0.10, nC10 = 0.0 }"),
        text.replace("workers = 2", "workers = 16"),  # execution-only keys
        text.replace('output = "small_test.zarr"', 'output = "elsewhere.zarr"'),
        text.replace('scheduler = "threads"', 'scheduler_address = "tcp://127.0.0.1:8786"'),
    ]
    for variant in same:
        assert variant != text
        assert parse_config(variant).config_hash == spec.config_hash, variant


def test_changed_keys_names_what_changed() -> None:
    text = (CONFIGS / "small_test.toml").read_text()
    old = canonical_config(text)
    new_text = text.replace("count = 5", "count = 7").replace(
        "C1 = 0.90, C3 = 0.10", "C1 = 0.85, C3 = 0.15"
    )
    new = canonical_config(new_text)
    assert parse_config(new_text).config_hash != parse_config(text).config_hash
    assert changed_keys(old, new) == [
        "pressure.count",
        "streams.gas.mole_fractions.C1",
        "streams.gas.mole_fractions.C3",
    ]
    assert changed_keys(old, old) == []
    # Survives a JSON round trip (as when stored in a store's attributes).
    assert changed_keys(json.loads(canonical_json(old)), new) == changed_keys(old, new)
    warm = canonical_config(text.replace("warm_start = true", "warm_start = false"))
    assert changed_keys(old, warm) == ["run.warm_start"]
    values = canonical_config(
        text.replace("values = [40.0, 80.0, 120.0]", "values = [40, 81, 120]")
    )
    assert changed_keys(old, values) == ["temperature.values[1]"]


# --------------------------------------------------------------------------------------------
# Property-based fuzzing: parse succeeds or raises a one-line ConfigError naming a key
# --------------------------------------------------------------------------------------------

_TOP = ("fluid", "streams", "pressure", "temperature", "composition", "run")

odd_values = st.one_of(
    st.booleans(),
    st.integers(min_value=-(10**30), max_value=10**30),
    st.floats(allow_nan=True, allow_infinity=True),
    st.text(max_size=8),
    st.lists(st.one_of(st.integers(-5, 5), st.floats(-2, 2), st.text(max_size=3)), max_size=4),
    st.dictionaries(st.text(max_size=6), st.integers(-3, 3), max_size=3),
)


def _paths(node: Any, prefix: tuple = ()) -> list[tuple]:
    out = []
    if isinstance(node, dict):
        for k, v in node.items():
            out.append((*prefix, k))
            out += _paths(v, (*prefix, k))
    elif isinstance(node, list):
        for i, v in enumerate(node):
            out.append((*prefix, i))
            out += _paths(v, (*prefix, i))
    return out


def _containers(node: Any, prefix: tuple = ()) -> list[tuple]:
    out = [prefix] if isinstance(node, dict) else []
    if isinstance(node, dict):
        for k, v in node.items():
            out += _containers(v, (*prefix, k))
    elif isinstance(node, list):
        for i, v in enumerate(node):
            out += _containers(v, (*prefix, i))
    return out


def _get(doc: Any, path: tuple) -> Any:
    for p in path:
        doc = doc[p]
    return doc


def _variants() -> list[dict[str, Any]]:
    simplex = base()
    simplex["streams"]["mid"] = {"mole_fractions": [0.6, 0.3, 0.1]}
    simplex["composition"] = {"kind": "simplex", "streams": ["oil", "gas", "mid"], "divisions": 3}
    listed = base()
    listed["fluid"]["components"][2] = dict(PSEUDO)
    listed["fluid"]["kij"] = [["C1", "C7+", 0.02]]
    listed["streams"]["oil"]["mole_fractions"] = {"C1": 40, "C3": 20, "C7+": 40}
    listed["streams"]["oil"]["normalise"] = True
    listed["composition"] = {"kind": "list", "mole_fractions": [[0.2, 0.3, 0.5], {"C1": 1.0}]}
    return [base(), simplex, listed]


@st.composite
def mutated_configs(draw: st.DrawFn) -> tuple[str, str]:
    doc = draw(st.sampled_from(_variants()))
    for _ in range(draw(st.integers(1, 3))):
        op = draw(st.sampled_from(["drop", "retype", "unknown", "drop", "retype"]))
        if op == "unknown":
            container = draw(st.sampled_from(_containers(doc)))
            _get(doc, container)[draw(st.text(min_size=1, max_size=8))] = draw(odd_values)
            continue
        paths = _paths(doc)
        if not paths:
            break
        path = draw(st.sampled_from(paths))
        parent = _get(doc, path[:-1])
        if op == "drop":
            del parent[path[-1]]
        else:
            parent[path[-1]] = draw(odd_values)
    text = to_toml(doc)
    if draw(st.booleans()):  # garbage TOML: splice random characters into the text
        pos = draw(st.integers(0, len(text)))
        cut = draw(st.integers(0, 5))
        text = (
            text[:pos] + draw(st.text(alphabet='[]{}="#,.\n abc1-', max_size=6)) + text[pos + cut :]
        )
    return text, to_toml(doc)


_NAMES_KEY = re.compile(r"(malformed TOML at line \d+|unknown key |\b(" + "|".join(_TOP) + r")\b)")


@settings(max_examples=400, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(mutated_configs())
def test_fuzzed_configs_parse_or_give_one_line_config_error(case: tuple[str, str]) -> None:
    text, _ = case
    try:
        spec = parse_config(text, source="fuzz.toml", base_dir="/tmp")
    except ConfigError as exc:
        message = str(exc)
        assert len(message.splitlines()) == 1, message
        assert message.startswith("fuzz.toml: ")
        assert _NAMES_KEY.search(message), message
    else:
        # A mutation that still parses gives a consistent spec.
        assert math.prod(spec.shape) >= 1
        feeds = spec.composition.feed_array()
        assert feeds.shape == (len(spec.composition), len(spec.fluid.components))
        np.testing.assert_allclose(feeds.sum(axis=1), 1.0, atol=1e-9)
        assert all(np.diff(spec.pressure.values) > 0) and min(spec.pressure.values) > 0
        assert all(np.diff(spec.temperature.values) > 0) and min(spec.temperature.values) > 0


@settings(max_examples=200, deadline=None)
@given(st.text(max_size=200))
def test_arbitrary_text_gives_config_error(text: str) -> None:
    with pytest.raises(ConfigError) as info:
        parse_config(text)
    assert len(str(info.value).splitlines()) == 1
