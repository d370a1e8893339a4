"""Thermodynamics layer: numpy and compiled (numba) kernels on batches of cells. No dask, xarray
or file I/O here."""

from __future__ import annotations

from ._characterisation import (
    CharacterisedFluid,
    FluidAnalysis,
    PlusFraction,
    ScnFraction,
    ScnTable,
    characterise,
)
from ._characterisation_report import fluid_table_text, fluid_table_toml
from ._components import Component, builtin_component, builtin_names
from ._critical import CriticalPoint, critical_point
from ._cubic import CubicModel, cubic_roots, phase_state, reduced_parameters
from ._envelope import EnvelopeBranch, EnvelopeStatus, PhaseEnvelope, phase_envelope
from ._flash import flash
from ._miscibility import (
    MiscibilityResult,
    MiscibilityStatus,
    first_contact_mmp,
    multi_contact_mmp,
    upper_saturation_pressure,
)
from ._mixture import EOS_NAMES, Mixture
from ._properties import (
    lbc_viscosity,
    phase_properties,
    single_phase_label,
    stiel_thodos_viscosity,
    wilson_ln_k,
)
from ._rachford_rice import RachfordRiceResult, RachfordRiceStatus, rachford_rice
from ._result import FlashResult, FlashStatus, PhaseKind, PhaseLabel, PhaseProperties
from ._saturation import pure_vapour_pressure, saturation_pressure
from ._stability import StabilityResult, stability_test
from ._volume_shift import peneloux_shift

__all__ = [
    "EOS_NAMES",
    "CharacterisedFluid",
    "FluidAnalysis",
    "PlusFraction",
    "ScnFraction",
    "ScnTable",
    "characterise",
    "fluid_table_text",
    "fluid_table_toml",
    "Component",
    "CriticalPoint",
    "EnvelopeBranch",
    "EnvelopeStatus",
    "CubicModel",
    "FlashResult",
    "FlashStatus",
    "MiscibilityResult",
    "MiscibilityStatus",
    "Mixture",
    "PhaseKind",
    "PhaseLabel",
    "PhaseEnvelope",
    "PhaseProperties",
    "RachfordRiceResult",
    "RachfordRiceStatus",
    "StabilityResult",
    "builtin_component",
    "builtin_names",
    "critical_point",
    "cubic_roots",
    "first_contact_mmp",
    "flash",
    "lbc_viscosity",
    "multi_contact_mmp",
    "peneloux_shift",
    "phase_envelope",
    "phase_properties",
    "phase_state",
    "pure_vapour_pressure",
    "rachford_rice",
    "saturation_pressure",
    "single_phase_label",
    "reduced_parameters",
    "stability_test",
    "stiel_thodos_viscosity",
    "upper_saturation_pressure",
    "wilson_ln_k",
]
