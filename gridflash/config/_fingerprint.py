"""The fingerprint of a config: canonical document, its JSON, and the keys two documents differ in.

``RunSpec.config_hash`` is the SHA-256 of :func:`canonical_json` of the canonical document the
parser builds (see :mod:`gridflash.config._parser` for what it keeps). The store records the
canonical JSON at creation, so a resume compares documents without parsing the old text again.
"""

from __future__ import annotations

import json
from collections.abc import Mapping
from typing import Any

from ._checks import join_key

__all__ = ["canonical_json", "changed_keys"]


def canonical_json(canonical: Mapping[str, Any]) -> str:
    """Compact JSON with sorted keys of a canonical document; ``config_hash`` is its SHA-256."""
    return json.dumps(
        canonical, sort_keys=True, separators=(",", ":"), ensure_ascii=True, allow_nan=False
    )


def changed_keys(old_canonical: Mapping[str, Any], new_canonical: Mapping[str, Any]) -> list[str]:
    """Dotted keys whose values differ between two canonical documents.

    Parameters
    ----------
    old_canonical, new_canonical : mapping
        Documents from :func:`canonical_config` (or ``json.loads`` of :func:`canonical_json`).

    Returns
    -------
    list of str
        Sorted dotted keys, e.g. ``["pressure.count", "streams.gas.mole_fractions.CO2"]``; a key
        present in only one document is listed; lists of different lengths are listed as a whole,
        lists of equal length element by element (``"pressure.values[3]"``). Empty when the
        documents are equal.
    """
    out: list[str] = []
    _diff(old_canonical, new_canonical, "", out)
    return sorted(out)


def _diff(old: object, new: object, path: str, out: list[str]) -> None:
    if isinstance(old, Mapping) and isinstance(new, Mapping):
        for key in sorted(set(old) | set(new), key=str):
            child = join_key(path, str(key))
            if key not in old or key not in new:
                out.append(child)
            else:
                _diff(old[key], new[key], child, out)
    elif isinstance(old, list) and isinstance(new, list) and len(old) == len(new):
        for i, (a, b) in enumerate(zip(old, new, strict=True)):
            _diff(a, b, f"{path}[{i}]", out)
    elif type(old) is not type(new) or old != new:
        out.append(path or "<document>")
