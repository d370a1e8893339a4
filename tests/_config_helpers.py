"""A valid config as a dict, and a small TOML writer (tomllib only reads), for the config tests."""

from __future__ import annotations

import copy
import json
import math
import re
from collections.abc import Callable
from pathlib import Path
from typing import Any

from gridflash.config._parser import (
    parse_config,
)

ROOT = Path(__file__).resolve().parents[1]
CONFIGS = ROOT / "configs"
#: Pa per psi from the 1959 pound and inch and the 1901 standard gravity (NIST SP 811).
PSI_EXACT = 0.45359237 * 9.80665 / 0.0254**2



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


