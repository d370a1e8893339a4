"""Layer 2, run description: a TOML config into a validated, frozen :class:`RunSpec` in SI units.

Units and heavy-end parsing live here; nothing in this layer computes a flash or touches a store.
"""

from __future__ import annotations

from ._fingerprint import canonical_json, changed_keys
from ._parser import canonical_config, load_config, parse_config
from ._spec import SEQUENCES, Axis, CompositionAxis, FluidSpec, RunOptions, RunSpec, SampleDesign
from ._units import (
    MOLAR_VOLUME_UNITS,
    PRESSURE_UNITS,
    TEMPERATURE_UNITS,
    molar_volume_to_si,
    molar_volume_unit,
    pressure_from_pa,
    pressure_to_pa,
    pressure_unit,
    temperature_from_kelvin,
    temperature_to_kelvin,
    temperature_unit,
)

__all__ = [
    "Axis",
    "CompositionAxis",
    "FluidSpec",
    "MOLAR_VOLUME_UNITS",
    "PRESSURE_UNITS",
    "RunOptions",
    "RunSpec",
    "SEQUENCES",
    "SampleDesign",
    "TEMPERATURE_UNITS",
    "canonical_config",
    "canonical_json",
    "changed_keys",
    "load_config",
    "molar_volume_to_si",
    "molar_volume_unit",
    "parse_config",
    "pressure_from_pa",
    "pressure_to_pa",
    "pressure_unit",
    "temperature_from_kelvin",
    "temperature_to_kelvin",
    "temperature_unit",
]
