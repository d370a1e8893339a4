"""Value checkers shared by every part of the config parser (one set of them).

Each returns the checked value or raises :class:`~gridflash.ConfigError` with a one-line message
that names the dotted key, quotes the bad value and says what is allowed.
"""

from __future__ import annotations

import difflib
import json
import math
import re
from collections.abc import Mapping
from typing import Any, NoReturn

from .._errors import ConfigError

__all__ = [
    "as_bool",
    "as_float",
    "as_int",
    "as_list",
    "as_str",
    "as_table",
    "bad",
    "check_keys",
    "choice",
    "is_number",
    "join_key",
    "missing",
    "one_line",
    "show",
]

_BARE_KEY = re.compile(r"^[A-Za-z0-9_-]+$")


def join_key(path: str, key: str) -> str:
    """Dotted TOML key of ``key`` inside ``path``, quoting keys that are not bare TOML keys."""
    part = key if _BARE_KEY.match(key) else json.dumps(key)
    return f"{path}.{part}" if path else part


def show(value: object) -> str:
    text = repr(value)
    return text if len(text) <= 80 else text[:77] + "..."


def one_line(message: str) -> str:
    return " ".join(part.strip() for part in message.splitlines() if part.strip())


def bad(key: str, value: object, why: str) -> NoReturn:
    raise ConfigError(f"{key} = {show(value)} {why}")


def missing(key: str, what: str) -> NoReturn:
    raise ConfigError(f"missing required key {key}: {what}")


def check_keys(table: Mapping[str, Any], path: str, allowed: tuple[str, ...]) -> None:
    for key in table:
        if key not in allowed:
            close = difflib.get_close_matches(str(key), allowed, n=1, cutoff=0.6)
            hint = f" (did you mean {join_key(path, close[0])}?)" if close else ""
            where = f"[{path}]" if path else "the top level"
            raise ConfigError(
                f"unknown key {join_key(path, str(key))}{hint}; allowed keys in {where}: "
                f"{', '.join(allowed)}"
            )


def is_number(value: object) -> bool:
    return isinstance(value, (int, float)) and not isinstance(value, bool)


def as_float(value: object, key: str, what: str = "a number") -> float:
    if not is_number(value):
        bad(key, value, f"is not a number; expected {what}")
    try:
        out = float(value)  # type: ignore[arg-type]
    except OverflowError:
        out = math.inf
    if not math.isfinite(out):
        bad(key, value, f"is not finite; expected {what}")
    return out


def as_int(value: object, key: str, low: int, high: int | None, what: str) -> int:
    span = f"{low} to {high}" if high is not None else f"at least {low}"
    if isinstance(value, bool) or not isinstance(value, int):
        bad(key, value, f"is not an integer; expected {what} ({span})")
    if value < low or (high is not None and value > high):
        bad(key, value, f"is out of range; expected {what} ({span})")
    return int(value)


def as_str(value: object, key: str, what: str) -> str:
    if not isinstance(value, str) or not value.strip():
        bad(key, value, f"is not a non-empty string; expected {what}")
    return value


def choice(value: object, key: str, choices: tuple[str, ...], *, fold_case: bool = False) -> str:
    if isinstance(value, str):
        if value in choices:
            return value
        if fold_case:
            for choice in choices:
                if choice.lower() == value.strip().lower():
                    return choice
    close = (
        difflib.get_close_matches(value, choices, n=1, cutoff=0.5) if isinstance(value, str) else []
    )
    hint = f" (did you mean {close[0]!r}?)" if close else ""
    bad(key, value, f"is not allowed{hint}; choose one of {', '.join(map(repr, choices))}")


def as_bool(value: object, key: str) -> bool:
    if not isinstance(value, bool):
        bad(key, value, "is not a boolean; write true or false (no quotes)")
    return value


def as_table(value: object, key: str, what: str) -> dict[str, Any]:
    if not isinstance(value, dict):
        bad(key, value, f"is not a table; expected {what}")
    return value


def as_list(value: object, key: str, what: str) -> list[Any]:
    if not isinstance(value, list):
        bad(key, value, f"is not a list; expected {what}")
    if not value:
        bad(key, value, f"is empty; expected {what}")
    return value
