"""The config fingerprint: canonical document, hash and changed keys."""

from __future__ import annotations

import hashlib
import json

from gridflash.config._parser import (
    canonical_config,
    canonical_json,
    changed_keys,
    parse_config,
)

from ._config_helpers import CONFIGS


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
        text.replace('output = "../out/small_test.zarr"', 'output = "elsewhere.zarr"'),
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


