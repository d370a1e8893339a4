"""TOML text into a document, with the parse error reduced to one line that names the line."""

from __future__ import annotations

import re
import tomllib
from typing import Any

from .._errors import ConfigError

__all__ = ["load_toml"]

_TOML_POSITION = re.compile(r"\s*\(at line (\d+), column (\d+)\)\s*$")
_TOML_END = re.compile(r"\s*\(at end of document\)\s*$")


def load_toml(text: object) -> dict[str, Any]:
    if not isinstance(text, str):
        raise ConfigError(f"config text must be a str, got {type(text).__name__}")
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        message = str(exc)
        match = _TOML_POSITION.search(message)
        if match:
            where = f"line {match.group(1)}, column {match.group(2)}"
            what = message[: match.start()]
        else:
            end = _TOML_END.search(message)
            what = message[: end.start()] if end else message
            where = f"line {max(1, len(text.splitlines()))} (end of document)"
        raise ConfigError(
            f"malformed TOML at {where}: {what}; see https://toml.io for the syntax"
        ) from None
    except RecursionError:
        raise ConfigError("malformed TOML at line 1: arrays or tables nested too deeply") from None
