"""Tests of the config parser: the example configs, one-line errors, values and defaults,
fuzzing."""

from __future__ import annotations

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
from gridflash.config._parser import (
    canonical_config,
    load_config,
    parse_config,
)

from ._config_helpers import (
    CONFIGS,
    PSEUDO,
    PSI_EXACT,
    base,
    both,
    del_key,
    parse_doc,
    set_key,
    to_toml,
)

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
    assert spec.run.output == CONFIGS.parent / "out" / "volatile_oil_co2.zarr"
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


@pytest.mark.parametrize("path", sorted(CONFIGS.glob("*.toml")), ids=lambda p: p.stem)
def test_bundled_configs_use_threads_and_write_beside_configs(path):
    """The bundled examples run in worker threads (the kernels release the GIL; processes cost
    seconds of start-up on small grids) and write to out/ beside configs/, never into it."""
    spec = load_config(path)
    assert spec.run.scheduler == "threads"
    assert spec.run.output.parent == CONFIGS.parent / "out"
    assert spec.run.output.name == f"{path.stem}.zarr"
