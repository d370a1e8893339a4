"""The store's schema: variable and dimension names, units, long names, root attributes.

One module owns every name a store holds: the per-cell data variables (:data:`VARIABLES`, with
``units``, ``long_name`` and CF flag attributes), the coordinates and inputs of the template
Dataset a store is created from, the root attributes (provenance: version, config, EOS, component
constants, interaction matrix), and the way a :class:`~gridflash.thermo.Mixture` is written to and
rebuilt from those attributes.

Fill values are explicit: -1 for ``status``, ``phase_label`` and the iteration counts, 0 for
``phase_count`` (no cell has 0 phases), False for the booleans and NaN for floats, so a cell that
was never written is recognisable. They are zarr ``fill_value`` metadata, not CF ``_FillValue``
attributes, so xarray keeps integer and boolean variables as integers and booleans.
"""

from __future__ import annotations

import datetime as _dt
import json
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

import dask.array as da
import numpy as np
import xarray as xr
from zarr.codecs import BloscCodec

from .._version import __version__
from ..config import RunSpec
from ..plan import ChunkPlan
from ..thermo import FlashStatus, PhaseKind, PhaseLabel
from ..thermo._interaction_data import REFERENCES as KIJ_REFERENCES

__all__ = [
    "BLOCK_COMPLETE",
    "COMPRESSORS",
    "STORE_FORMAT",
    "VARIABLES",
    "Variable",
    "as_strings",
    "now_utc",
    "root_attrs",
    "template",
]


#: Identifies a gridflash store; bump when the layout changes incompatibly.
STORE_FORMAT = "gridflash-store-1"

#: Name of the per-block completion array.
BLOCK_COMPLETE = "block_complete"

# LZ4 with byte shuffle: on flash tables it compresses within 2% of zstd level 3 (4.0x vs 4.1x
# on the benchmark grid) at a quarter of the compression time, which otherwise takes a worker's
# core away from flashing; it also decompresses faster for readers.
COMPRESSORS = (BloscCodec(cname="lz4", clevel=5, shuffle="shuffle"),)

@dataclass(frozen=True)
class Variable:
    """One per-cell data variable of the store.

    Attributes
    ----------
    name : str
        Variable name in the store.
    source : str
        Key in :class:`gridflash.compute.BlockResult` it is copied from.
    dtype : str
    fill_value : object
        Zarr fill value (what an unwritten cell reads as).
    per_component : bool
        True for variables with the extra ``component`` dimension.
    attrs : dict
        ``units``, ``long_name`` and, for flags, ``flag_values``/``flag_meanings``.
    """

    name: str
    source: str
    dtype: str
    fill_value: Any
    per_component: bool
    attrs: Mapping[str, Any]

def _flags(enum_type: type) -> dict[str, Any]:
    members = list(enum_type)
    return {
        "flag_values": [int(m) for m in members],
        "flag_meanings": " ".join(m.name.lower() for m in members),
    }

def _float(name: str, source: str, units: str, long_name: str, **extra: Any) -> Variable:
    return Variable(name, source, "float64", np.nan, False,
                    {"units": units, "long_name": long_name, **extra})

def _phase_variables(phase: str) -> list[Variable]:
    return [
        _float(f"{phase}_z_factor", f"{phase}.z_factor", "1",
               f"compressibility factor Z = P v / (R T) of the {phase} phase (EOS, not "
               "volume-shifted)"),
        _float(f"{phase}_molar_volume", f"{phase}.molar_volume", "m3 mol-1",
               f"molar volume of the {phase} phase (Peneloux volume-shifted)"),
        _float(f"{phase}_molar_density", f"{phase}.molar_density", "mol m-3",
               f"molar density of the {phase} phase (Peneloux volume-shifted)"),
        _float(f"{phase}_density", f"{phase}.mass_density", "kg m-3",
               f"mass density of the {phase} phase (Peneloux volume-shifted)"),
        _float(f"{phase}_molar_mass", f"{phase}.molar_mass", "g mol-1",
               f"mean molar mass of the {phase} phase"),
        _float(f"{phase}_viscosity", f"{phase}.viscosity", "Pa s",
               f"dynamic viscosity of the {phase} phase (Lohrenz-Bray-Clark)"),
    ]

#: Every per-cell data variable, in store order.
VARIABLES: tuple[Variable, ...] = (
    Variable("phase_count", "phase_count", "int8", 0, False, {
        "units": "1", "long_name": "number of phases at equilibrium (1, 2 or 3)",
        "valid_range": [1, 3], "comment": "0 where the cell has not been computed"}),
    _float("vapour_fraction", "vapour_fraction", "1",
           "vapour mole fraction (moles of the phase of largest Z per mole of feed); 1 for a "
           "single vapour-like phase, 0 for a single liquid-like phase"),
    _float("second_liquid_fraction", "second_liquid_fraction", "1",
           "second-liquid mole fraction (moles of the liquid of smallest Z, aqueous or "
           "CO2-rich, per mole of feed); 0 where fewer than three phases"),
    Variable("liquid_composition", "x", "float64", np.nan, True, {
        "units": "1", "long_name": "mole fraction of each component in the liquid phase"}),
    Variable("vapour_composition", "y", "float64", np.nan, True, {
        "units": "1", "long_name": "mole fraction of each component in the vapour phase"}),
    Variable("second_liquid_composition", "x2", "float64", np.nan, True, {
        "units": "1", "long_name": "mole fraction of each component in the second liquid "
        "phase (NaN where fewer than three phases)"}),
    Variable("k_value", "K", "float64", np.nan, True, {
        "units": "1", "long_name": "equilibrium ratio K = y / x of each component "
        "(NaN for a single phase)"}),
    *_phase_variables("liquid"),
    *_phase_variables("vapour"),
    *_phase_variables("second_liquid"),
    *(
        Variable(f"{slot}_kind", f"{slot}_kind", "int8", -1, False, {
            "units": "1", "long_name": f"what the phase in the {slot.replace('_', ' ')} slot "
            "is (vapour, hydrocarbon liquid, aqueous liquid, CO2-rich liquid; absent)",
            **_flags(PhaseKind), "comment": "-1 where the cell has not been computed"})
        for slot in ("liquid", "vapour", "second_liquid")
    ),
    Variable("phase_label", "phase_label", "int8", -1, False, {
        "units": "1", "long_name": "phase state: two-phase, three-phase, or the kind of single "
        "phase (phase-identification parameter of Venkatarathnam & Oellrich 2011)",
        **_flags(PhaseLabel),
        "comment": "-1 where the cell has not been computed"}),
    Variable("converged", "converged", "bool", False, False, {
        "units": "1", "long_name": "cell converged and certified (fugacity residual < 1e-10, "
        "material balance < 1e-12, and no trial phase with tangent-plane distance < -1e-8 "
        "against the reported phases)", "flag_values": [0, 1],
        "flag_meanings": "not_converged converged"}),
    Variable("status", "status", "int8", -1, False, {
        "units": "1", "long_name": "flash outcome code", **_flags(FlashStatus),
        "comment": "-1 where the cell has not been computed"}),
    Variable("iterations", "iterations", "int32", -1, False, {
        "units": "1", "long_name": "stability-test, split and certification iterations"}),
    Variable("stability_iterations", "stability_iterations", "int32", -1, False, {
        "units": "1", "long_name": "stability-test iterations (0 where an accepted warm start "
        "made the test unnecessary)"}),
    Variable("certification_iterations", "certification_iterations", "int32", -1, False, {
        "units": "1", "long_name": "iterations spent certifying the answer (trial phases "
        "against the reported phases) and on the splits certification started"}),
    _float("residual", "residual", "1",
           "largest fugacity residual max_i |ln f_i(a) - ln f_i(b)| over phase pairs (0 for "
           "one phase)"),
    _float("material_balance", "material_balance", "1",
           "material-balance error max(max_k |sum_i x_ki - 1|, max_i |z_i - sum_k beta_k x_ki|)"),
    _float("tpd", "tpd", "1",
           "lowest modified tangent-plane distance found by the stability test (NaN where the "
           "test was not run)"),
    Variable("warm_start", "warm_start", "bool", False, False, {
        "units": "1", "long_name": "the previous slab's K-values were offered as a warm start",
        "flag_values": [0, 1], "flag_meanings": "cold_start warm_start_offered"}),
)

def now_utc() -> str:
    return _dt.datetime.now(_dt.UTC).isoformat(timespec="seconds")

def as_strings(values: Sequence[str]) -> np.ndarray:
    # Object dtype is written as zarr 3's variable-length string type.
    return np.array(list(values), dtype=object)

def _component_records(spec: RunSpec) -> list[dict[str, Any]]:
    mixture = spec.fluid.mixture()
    shift = np.asarray(mixture.volume_shift)
    out = []
    for i, c in enumerate(mixture.components):
        out.append({
            "name": c.name,
            "critical_temperature_K": c.tc,
            "critical_pressure_Pa": c.pc,
            "acentric_factor": c.omega,
            "molar_mass_g_per_mol": c.mw,
            "critical_volume_m3_per_mol": c.critical_volume,
            "rackett_z": c.rackett_z,
            "volume_shift_m3_per_mol": float(shift[i]),
            "source": c.source,
        })
    return out

def root_attrs(spec: RunSpec, plan: ChunkPlan) -> dict[str, Any]:
    return {
        "title": "isothermal flash table computed by gridflash",
        "Conventions": "CF-1.10",
        "gridflash_store_format": STORE_FORMAT,
        "gridflash_version": __version__,
        "config_text": spec.config_text,
        "config_hash": spec.config_hash,
        "config_canonical": spec.config_canonical,
        "eos": spec.fluid.eos,
        "components": json.dumps(_component_records(spec)),
        "kij": json.dumps([list(row) for row in spec.fluid.kij]),
        "kij_sources": json.dumps({
            "pairs": dict(spec.fluid.kij_sources),
            "references": dict(KIJ_REFERENCES),
        }),
        "fluid_provenance": json.dumps(dict(spec.fluid.provenance)),
        "sweep": plan.sweep,
        "warm_start": int(spec.run.warm_start),
        "chunks": list(plan.chunks),
        "blocks_total": plan.n_blocks,
        "cells_total": plan.n_cells,
        "run_state": "running",
        "created": now_utc(),
        "run_sessions": 1,
        "wall_time_seconds": 0.0,
    }

def template(spec: RunSpec, plan: ChunkPlan) -> tuple[xr.Dataset, dict[str, dict[str, Any]]]:
    if spec.sampling is not None:
        from ._sample_schema import sample_coordinates

        coords, data, encoding, attrs = sample_coordinates(spec, plan, COMPRESSORS)
        return _with_cell_variables(spec, plan, coords, data, encoding, attrs)
    comp_dim = plan.dims[2]
    coords: dict[str, Any] = {
        "pressure": ("pressure", np.asarray(spec.pressure.values, dtype=float),
                     {"units": "Pa", "long_name": "pressure (absolute)"}),
        "temperature": ("temperature", np.asarray(spec.temperature.values, dtype=float),
                        {"units": "K", "long_name": "temperature"}),
        comp_dim: (comp_dim, np.asarray(spec.composition.values),
                   {"units": spec.composition.units, "long_name": spec.composition.long_name}),
        "component": ("component", as_strings(spec.fluid.names),
                      {"long_name": "component name"}),
    }
    data: dict[str, Any] = {
        "feed_composition": ((comp_dim, "component"), spec.composition.feed_array(),
                             {"units": "1", "long_name": "mole fraction of each component in "
                              "the feed"}),
    }
    mixed = spec.composition.streams
    if mixed:
        coords["stream"] = ("stream", as_strings(mixed), {"long_name": "stream name"})
        fractions = np.asarray(spec.composition.stream_fractions, dtype=float)
        data["stream_fraction"] = ((comp_dim, "stream"), fractions, {
            "units": "1", "long_name": "mole fraction of each stream in the feed"})
        by_name = dict(spec.streams)
        data["stream_composition"] = (
            ("stream", "component"), np.array([by_name[s] for s in mixed], dtype=float),
            {"units": "1", "long_name": "mole fraction of each component in the stream"})
    return _with_cell_variables(spec, plan, coords, data, {}, {})

def _with_cell_variables(
    spec: RunSpec,
    plan: ChunkPlan,
    coords: dict[str, Any],
    data: dict[str, Any],
    encoding: dict[str, dict[str, Any]],
    attrs: dict[str, Any],
) -> tuple[xr.Dataset, dict[str, dict[str, Any]]]:
    """The template: given coordinates and inputs plus the lazy per-cell variables and marks."""
    dims = plan.dims
    nc = len(spec.fluid.components)
    # One dask chunk per lazy variable: only the metadata is written (compute=False), and a
    # graph with a task per zarr chunk would grow with the grid (gigabytes for 1e9 cells).
    for var in VARIABLES:
        var_dims = dims + (("component",) if var.per_component else ())
        shape = plan.shape + ((nc,) if var.per_component else ())
        data[var.name] = (var_dims, da.empty(shape, chunks=shape, dtype=var.dtype),
                          dict(var.attrs))
        encoding[var.name] = {
            "chunks": plan.chunks + ((nc,) if var.per_component else ()),
            "fill_value": var.fill_value,
            "compressors": COMPRESSORS,
        }
    block_dims = tuple(f"{d}_block" for d in dims)
    data[BLOCK_COMPLETE] = (block_dims, da.zeros(plan.blocks_shape, chunks=plan.blocks_shape,
                                                     dtype="int8"), {
        "units": "1", "long_name": "1 once the block's data are completely written",
        "flag_values": [0, 1], "flag_meanings": "incomplete complete",
        "comment": f"one element per block of {list(plan.chunks)} grid points along "
        f"{list(dims)}"})
    encoding[BLOCK_COMPLETE] = {"chunks": (1,) * len(dims), "fill_value": 0}
    ds = xr.Dataset(data, coords=coords, attrs={**root_attrs(spec, plan), **attrs})
    return ds, encoding
