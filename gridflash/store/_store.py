"""The zarr store of a run: xarray schema, creation, per-block region writes, completion marks.

Life of a store
---------------
1. :func:`create_store` writes a lazy template (``to_zarr(mode="w-", compute=False,
   zarr_format=3, consolidated=True)``) into a temporary folder beside the target and renames it
   into place, so a store either exists with all its metadata or not at all. Coordinates, feed
   compositions and provenance attributes are written now; ``run_state`` is ``"running"``.
2. Each task writes its block with :func:`write_block` (an xarray region write of whole zarr
   chunks, ``mode="r+"``) and then :func:`mark_block_complete` sets its element of the int8
   ``block_complete`` array (one element per block, one chunk per element). The mark is set only
   after the data write has returned, so a block that was being written when the run died is
   recomputed on resume.
3. :func:`finish_store` records the statistics, sets ``run_state = "complete"`` and
   consolidates the metadata once more.

Fill values are explicit: -1 for ``status``, ``phase_label`` and the iteration counts, 0 for
``phase_count`` (no cell has 0 phases), False for the booleans and NaN for floats, so a cell that
was never written is recognisable. They are zarr ``fill_value`` metadata, not CF ``_FillValue``
attributes, so xarray keeps integer and boolean variables as integers and booleans.
"""

from __future__ import annotations

import asyncio
import contextlib
import datetime as _dt
import json
import os
import shutil
import uuid
import warnings
from collections.abc import Iterator, Mapping, Sequence
from dataclasses import dataclass, fields
from pathlib import Path
from typing import Any

import dask.array as da
import numpy as np
import xarray as xr
import zarr
from zarr.api import asynchronous as zarr_async
from zarr.codecs import BloscCodec

from .._errors import StoreError
from ..compute._sweep import BlockResult
from ..config._spec import RunSpec
from ..plan._chunks import BlockId, ChunkPlan
from ..thermo import FlashStatus, PhaseLabel
from ..thermo._interaction_data import REFERENCES as KIJ_REFERENCES

__all__ = [
    "BLOCK_COMPLETE",
    "STORE_FORMAT",
    "VARIABLES",
    "BlockStats",
    "Variable",
    "block_stats",
    "completed_blocks",
    "create_store",
    "finish_store",
    "is_gridflash_store",
    "mark_block_complete",
    "mixture_from_store",
    "read_root_attrs",
    "remove_store",
    "set_run_state",
    "stored_block_stats",
    "stored_chunks",
    "write_block",
]

#: Identifies a gridflash store; bump when the layout changes incompatibly.
STORE_FORMAT = "gridflash-store-1"
#: Name of the per-block completion array.
BLOCK_COMPLETE = "block_complete"

# LZ4 with byte shuffle: on flash tables it compresses within 2% of zstd level 3 (4.0x vs 4.1x
# on the benchmark grid) at a quarter of the compression time, which otherwise takes a worker's
# core away from flashing; it also decompresses faster for readers.
_COMPRESSORS = (BloscCodec(cname="lz4", clevel=5, shuffle="shuffle"),)
# Zarr's own concurrency, limited because several tasks may write at once in one process.
_ZARR_CONFIG = {"async.concurrency": 4, "threading.max_workers": 4}


@dataclass(frozen=True)
class Variable:
    """One per-cell data variable of the store.

    Attributes
    ----------
    name : str
        Variable name in the store.
    source : str
        Key in :class:`gridflash.compute._sweep.BlockResult` it is copied from.
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
        "units": "1", "long_name": "number of phases at equilibrium (1 or 2)",
        "valid_range": [1, 2], "comment": "0 where the cell has not been computed"}),
    _float("vapour_fraction", "vapour_fraction", "1",
           "vapour mole fraction (moles of vapour per mole of feed); 1 for a single vapour-like "
           "phase, 0 for a single liquid-like phase"),
    Variable("liquid_composition", "x", "float64", np.nan, True, {
        "units": "1", "long_name": "mole fraction of each component in the liquid phase"}),
    Variable("vapour_composition", "y", "float64", np.nan, True, {
        "units": "1", "long_name": "mole fraction of each component in the vapour phase"}),
    Variable("k_value", "K", "float64", np.nan, True, {
        "units": "1", "long_name": "equilibrium ratio K = y / x of each component "
        "(NaN for a single phase)"}),
    *_phase_variables("liquid"),
    *_phase_variables("vapour"),
    Variable("phase_label", "phase_label", "int8", -1, False, {
        "units": "1", "long_name": "phase state: two-phase, or the kind of single phase "
        "(Li mixture pseudo-critical temperature rule)", **_flags(PhaseLabel),
        "comment": "-1 where the cell has not been computed"}),
    Variable("converged", "converged", "bool", False, False, {
        "units": "1", "long_name": "cell converged (fugacity residual < 1e-10 and material "
        "balance < 1e-12)", "flag_values": [0, 1], "flag_meanings": "not_converged converged"}),
    Variable("status", "status", "int8", -1, False, {
        "units": "1", "long_name": "flash outcome code", **_flags(FlashStatus),
        "comment": "-1 where the cell has not been computed"}),
    Variable("iterations", "iterations", "int32", -1, False, {
        "units": "1", "long_name": "stability-test plus two-phase-split iterations"}),
    Variable("stability_iterations", "stability_iterations", "int32", -1, False, {
        "units": "1", "long_name": "stability-test iterations (0 where an accepted warm start "
        "made the test unnecessary)"}),
    _float("residual", "residual", "1",
           "largest fugacity residual max_i |ln f_i(vapour) - ln f_i(liquid)| (0 for one phase)"),
    _float("material_balance", "material_balance", "1",
           "material-balance error max(|sum(y - x)|, max_i |z_i - (1 - V) x_i - V y_i|)"),
    _float("tpd", "tpd", "1",
           "lowest modified tangent-plane distance found by the stability test (NaN where the "
           "test was not run)"),
    Variable("warm_start", "warm_start", "bool", False, False, {
        "units": "1", "long_name": "the previous slab's K-values were offered as a warm start",
        "flag_values": [0, 1], "flag_meanings": "cold_start warm_start_offered"}),
)


# --------------------------------------------------------------------------------------------
# Statistics
# --------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class BlockStats:
    """Additive counts over computed cells (of a block or of a whole store)."""

    cells: int = 0
    two_phase: int = 0
    single_phase: int = 0
    unconverged: int = 0
    iterations: int = 0
    stability_iterations: int = 0
    warm_cells: int = 0
    warm_iterations: int = 0

    def __add__(self, other: BlockStats) -> BlockStats:
        return BlockStats(*(getattr(self, f.name) + getattr(other, f.name) for f in fields(self)))

    def as_attrs(self) -> dict[str, Any]:
        """The root attributes these counts give (a mean over no cells is left out)."""
        cold = self.cells - self.warm_cells

        def mean(total: int, count: int) -> float | None:
            return round(total / count, 6) if count else None

        out = {
            "cells_two_phase": self.two_phase,
            "cells_single_phase": self.single_phase,
            "cells_unconverged": self.unconverged,
            "mean_iterations": mean(self.iterations, self.cells),
            "mean_stability_iterations": mean(self.stability_iterations, self.cells),
            "cells_warm_start": self.warm_cells,
            "mean_iterations_warm_start": mean(self.warm_iterations, self.warm_cells),
            "mean_iterations_cold_start": mean(self.iterations - self.warm_iterations, cold),
        }
        return {key: value for key, value in out.items() if value is not None}


def block_stats(
    phase_count: np.ndarray,
    converged: np.ndarray,
    iterations: np.ndarray,
    stability_iterations: np.ndarray,
    warm_start: np.ndarray,
) -> BlockStats:
    """Counts over the computed cells (``phase_count > 0``) of a block's arrays."""
    done = phase_count > 0
    warm = warm_start & done
    it = np.where(done, iterations, 0).astype(np.int64)
    return BlockStats(
        cells=int(done.sum()),
        two_phase=int((phase_count == 2).sum()),
        single_phase=int((phase_count == 1).sum()),
        unconverged=int((done & ~converged).sum()),
        iterations=int(it.sum()),
        stability_iterations=int(np.where(done, stability_iterations, 0).sum(dtype=np.int64)),
        warm_cells=int(warm.sum()),
        warm_iterations=int(it[warm].sum()),
    )


def stored_block_stats(path: Path, plan: ChunkPlan, block: BlockId) -> BlockStats:
    """:func:`block_stats` of a block as stored (used for blocks reused on resume)."""
    group = _open_group(path, "r")
    region = plan.block_slices(block)
    arrays = [group[name][region] for name in (
        "phase_count", "converged", "iterations", "stability_iterations", "warm_start")]
    return block_stats(*arrays)


# --------------------------------------------------------------------------------------------
# Creation
# --------------------------------------------------------------------------------------------


def _now() -> str:
    return _dt.datetime.now(_dt.UTC).isoformat(timespec="seconds")


def _strings(values: Sequence[str]) -> np.ndarray:
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


def _root_attrs(spec: RunSpec, plan: ChunkPlan) -> dict[str, Any]:
    from .._version import __version__

    return {
        "title": "isothermal flash table computed by gridflash",
        "Conventions": "CF-1.10",
        "gridflash_store_format": STORE_FORMAT,
        "gridflash_version": __version__,
        "config_text": spec.config_text,
        "config_hash": spec.config_hash,
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
        "created": _now(),
        "run_sessions": 1,
        "wall_time_seconds": 0.0,
    }


def _template(spec: RunSpec, plan: ChunkPlan) -> tuple[xr.Dataset, dict[str, dict[str, Any]]]:
    if spec.sampling is not None:
        from ._sample_schema import sample_coordinates

        coords, data, encoding, attrs = sample_coordinates(spec, plan, _COMPRESSORS)
        return _with_cell_variables(spec, plan, coords, data, encoding, attrs)
    comp_dim = plan.dims[2]
    coords: dict[str, Any] = {
        "pressure": ("pressure", np.asarray(spec.pressure.values, dtype=float),
                     {"units": "Pa", "long_name": "pressure (absolute)"}),
        "temperature": ("temperature", np.asarray(spec.temperature.values, dtype=float),
                        {"units": "K", "long_name": "temperature"}),
        comp_dim: (comp_dim, np.asarray(spec.composition.values),
                   {"units": spec.composition.units, "long_name": spec.composition.long_name}),
        "component": ("component", _strings(spec.fluid.names),
                      {"long_name": "component name"}),
    }
    data: dict[str, Any] = {
        "feed_composition": ((comp_dim, "component"), spec.composition.feed_array(),
                             {"units": "1", "long_name": "mole fraction of each component in "
                              "the feed"}),
    }
    mixed = spec.composition.streams
    if mixed:
        coords["stream"] = ("stream", _strings(mixed), {"long_name": "stream name"})
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
    grid_chunks = plan.dask_chunks()
    for var in VARIABLES:
        var_dims = dims + (("component",) if var.per_component else ())
        shape = plan.shape + ((nc,) if var.per_component else ())
        chunks = grid_chunks + (((nc,),) if var.per_component else ())
        data[var.name] = (var_dims, da.empty(shape, chunks=chunks, dtype=var.dtype),
                          dict(var.attrs))
        encoding[var.name] = {
            "chunks": plan.chunks + ((nc,) if var.per_component else ()),
            "fill_value": var.fill_value,
            "compressors": _COMPRESSORS,
        }
    block_dims = tuple(f"{d}_block" for d in dims)
    data[BLOCK_COMPLETE] = (block_dims, da.zeros(plan.blocks_shape, chunks=1, dtype="int8"), {
        "units": "1", "long_name": "1 once the block's data are completely written",
        "flag_values": [0, 1], "flag_meanings": "incomplete complete",
        "comment": f"one element per block of {list(plan.chunks)} grid points along "
        f"{list(dims)}"})
    encoding[BLOCK_COMPLETE] = {"chunks": (1,) * len(dims), "fill_value": 0}
    ds = xr.Dataset(data, coords=coords, attrs={**_root_attrs(spec, plan), **attrs})
    return ds, encoding


@contextlib.contextmanager
def _quiet_zarr() -> Iterator[None]:
    """Silence zarr's notice that consolidated metadata is not yet part of the v3 spec."""
    with warnings.catch_warnings():
        warnings.filterwarnings("ignore", message=".*[Cc]onsolidated metadata.*")
        yield


def _os_message(exc: OSError) -> str:
    return exc.strerror or str(exc)


def create_store(path: Path, spec: RunSpec, plan: ChunkPlan) -> None:
    """Create an empty store (metadata, coordinates, feeds, provenance) at ``path``.

    The store is written to a temporary folder next to ``path`` and renamed into place.

    Raises
    ------
    StoreError
        If ``path`` exists or cannot be written.
    """
    path = Path(path)
    if path.exists():
        raise StoreError(f"output {str(path)!r} already exists; use --overwrite or --resume")
    try:
        path.parent.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise StoreError(
            f"cannot create the folder {str(path.parent)!r} for the output: "
            f"{_os_message(exc)}; choose a writable output path"
        ) from None
    tmp = path.parent / f".{path.name}.creating-{uuid.uuid4().hex[:8]}"
    ds, encoding = _template(spec, plan)
    try:
        with _quiet_zarr():
            ds.to_zarr(tmp, mode="w-", compute=False, zarr_format=3, consolidated=True,
                       encoding=encoding)
        os.rename(tmp, path)
    except OSError as exc:
        shutil.rmtree(tmp, ignore_errors=True)
        raise StoreError(
            f"cannot write the store at {str(path)!r}: {_os_message(exc)}; choose a writable "
            "output path (and check the free disk space)"
        ) from None
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        raise


def is_gridflash_store(path: Path) -> bool:
    """True if ``path`` is a folder holding a zarr group made by gridflash."""
    meta = Path(path) / "zarr.json"
    if not meta.is_file():
        return False
    try:
        doc = json.loads(meta.read_text())
    except (OSError, ValueError):
        return False
    attrs = doc.get("attributes", {}) if isinstance(doc, dict) else {}
    return isinstance(attrs, dict) and attrs.get("gridflash_store_format") == STORE_FORMAT


def remove_store(path: Path) -> None:
    """Delete a gridflash store (refusing anything else).

    Raises
    ------
    StoreError
        If ``path`` is not a gridflash store (and is not an empty folder) or cannot be deleted.
    """
    path = Path(path)
    if not path.exists():
        return
    if path.is_dir() and not any(path.iterdir()):
        path.rmdir()
        return
    if not is_gridflash_store(path):
        raise StoreError(
            f"refusing to overwrite {str(path)!r}: it exists and is not a gridflash store; "
            "choose another output path or remove it yourself"
        )
    try:
        shutil.rmtree(path)
    except OSError as exc:
        raise StoreError(f"cannot delete the old store {str(path)!r}: {_os_message(exc)}") from None


# --------------------------------------------------------------------------------------------
# Reading state, writing blocks
# --------------------------------------------------------------------------------------------


def _open_group(path: Path, mode: str) -> zarr.Group:
    try:
        return zarr.open_group(str(path), mode=mode, use_consolidated=False)  # type: ignore[arg-type]
    except (FileNotFoundError, zarr.errors.GroupNotFoundError) as exc:
        raise StoreError(f"no zarr store at {str(path)!r} ({exc})") from None


def read_root_attrs(path: Path) -> dict[str, Any]:
    """Root attributes of a store, read from its own metadata (not the consolidated copy)."""
    return dict(_open_group(path, "r").attrs)


def mixture_from_store(source: xr.Dataset | Mapping[str, Any] | str | os.PathLike[str]):
    """The :class:`~gridflash.Mixture` a store was computed with, rebuilt from its attributes.

    Reads the root attributes ``eos``, ``components`` (the records :func:`create_store` wrote:
    critical constants, acentric factor, molar mass, critical volume, Rackett Z and the Peneloux
    shift actually used) and ``kij``. A component whose shift is not reproduced by its Rackett Z
    (one given explicitly as ``volume_shift``) gets the stored shift as ``c / b``.

    Parameters
    ----------
    source : xarray.Dataset, mapping or path
        A table from :func:`gridflash.open_table`, its ``attrs``, or the store's path.

    Returns
    -------
    Mixture

    Raises
    ------
    StoreError
        If the attributes are missing or malformed.
    """
    from dataclasses import replace

    from ..thermo import Component, Mixture

    if isinstance(source, xr.Dataset):
        attrs: Mapping[str, Any] = source.attrs
    elif isinstance(source, Mapping):
        attrs = source
    else:
        attrs = read_root_attrs(Path(source))
    try:
        records = json.loads(attrs["components"])
        kij = np.array(json.loads(attrs["kij"]), dtype=float)
        eos = str(attrs["eos"])
        components = [
            Component(r["name"], tc=float(r["critical_temperature_K"]),
                      pc=float(r["critical_pressure_Pa"]), omega=float(r["acentric_factor"]),
                      mw=float(r["molar_mass_g_per_mol"]),
                      vc=float(r["critical_volume_m3_per_mol"]), zra=float(r["rackett_z"]),
                      source=str(r.get("source") or "user-defined"))
            for r in records
        ]
        shift = np.array([float(r["volume_shift_m3_per_mol"]) for r in records])
    except (KeyError, TypeError, ValueError) as exc:
        raise StoreError(
            f"the store's fluid attributes (eos, components, kij) are missing or malformed "
            f"({exc!r}); it was not written by this version of gridflash"
        ) from None
    mixture = Mixture(components, eos=eos, kij=kij)  # type: ignore[arg-type]
    differs = ~np.isclose(mixture.volume_shift, shift, rtol=1e-12, atol=0.0)
    if differs.any():
        b = mixture.model.b
        components = [replace(c, volume_shift=float(shift[i] / b[i])) if differs[i] else c
                      for i, c in enumerate(components)]
        mixture = Mixture(components, eos=eos, kij=kij)  # type: ignore[arg-type]
    return mixture


def completed_blocks(path: Path, plan: ChunkPlan) -> np.ndarray:
    """Boolean array of shape ``plan.blocks_shape``: True where a block is marked complete.

    Raises
    ------
    StoreError
        If the completion array does not match the plan.
    """
    group = _open_group(path, "r")
    try:
        marks = group[BLOCK_COMPLETE][...]
    except KeyError:
        raise StoreError(
            f"{str(path)!r} has no {BLOCK_COMPLETE!r} array; it was not written by this version "
            "of gridflash (use --overwrite)"
        ) from None
    if marks.shape != plan.blocks_shape:
        raise StoreError(
            f"{str(path)!r} has {marks.shape!r} blocks but this run has {plan.blocks_shape!r}; "
            "the store was written with other chunks (use --overwrite)"
        )
    return np.asarray(marks) == 1


def stored_chunks(path: Path) -> dict[str, tuple[tuple[str, ...], ...]]:
    """Dimensions, shape and zarr chunk shape of every per-cell variable of a store."""
    group = _open_group(path, "r")
    out = {}
    for var in VARIABLES:
        try:
            arr = group[var.name]
        except KeyError:
            raise StoreError(
                f"{str(path)!r} lacks variable {var.name!r}; it was not written by this version "
                "of gridflash (use --overwrite)"
            ) from None
        dims = tuple(arr.metadata.dimension_names or ())
        out[var.name] = (dims, tuple(arr.shape), tuple(arr.chunks))
    return out


def write_block(path: Path, plan: ChunkPlan, block: BlockId, result: BlockResult) -> None:
    """Write one block's results into its region of the store (whole zarr chunks only).

    Writes each variable's region straight through zarr: the store was created with the final
    dtypes and no value transformations (see :func:`_with_cell_variables`), so the bytes are the
    ones ``Dataset.to_zarr(region=...)`` would write, without xarray re-reading every
    variable's metadata and encoding at each call. The variables are written concurrently with
    zarr's asynchronous API, in an event loop of the calling (worker) thread: about half the
    time of one synchronous write after another, most of which holds the GIL.
    """
    index = plan.block_slices(block)
    values = {var.name: np.asarray(result[var.source], dtype=var.dtype) for var in VARIABLES}
    with zarr.config.set(_ZARR_CONFIG):
        asyncio.run(_write_arrays(str(path), index, values))


async def _write_arrays(path: str, index: tuple[slice, ...], values: dict[str, np.ndarray]):
    try:
        group = await zarr_async.open_group(path, mode="r+", use_consolidated=False)
    except (FileNotFoundError, zarr.errors.GroupNotFoundError) as exc:
        raise StoreError(f"no zarr store at {path!r} ({exc})") from None

    async def write(name: str, data: np.ndarray) -> None:
        array = await group.getitem(name)
        await array.setitem(index, data)

    await asyncio.gather(*(write(name, data) for name, data in values.items()))


def mark_block_complete(path: Path, block: BlockId) -> None:
    """Set a block's completion mark (call only after :func:`write_block` returned)."""
    group = _open_group(path, "r+")
    group[BLOCK_COMPLETE][tuple(int(b) for b in block)] = 1


def set_run_state(path: Path, state: str, **attrs: Any) -> None:
    """Update ``run_state`` (and other root attributes) and re-consolidate the metadata."""
    group = _open_group(path, "r+")
    group.attrs.update({"run_state": state, **attrs})
    with _quiet_zarr():
        zarr.consolidate_metadata(str(path))


def finish_store(path: Path, stats: BlockStats, **attrs: Any) -> None:
    """Record the run's statistics, mark it complete and consolidate the metadata."""
    set_run_state(path, "complete", finished=_now(), **stats.as_attrs(), **attrs)
