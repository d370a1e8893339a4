"""Layer 2, run description: a TOML config into a validated, frozen :class:`RunSpec` in SI units.

Units and heavy-end parsing live here; nothing in this layer computes a flash or touches a store.
"""

from __future__ import annotations

from ._fingerprint import canonical_json, changed_keys
from ._parser import canonical_config, load_config, parse_config
from ._spec import Axis, CompositionAxis, FluidSpec, RunOptions, RunSpec, SampleDesign

__all__ = [
    "Axis",
    "CompositionAxis",
    "FluidSpec",
    "RunOptions",
    "RunSpec",
    "SampleDesign",
    "canonical_config",
    "canonical_json",
    "changed_keys",
    "load_config",
    "parse_config",
]
