"""A summary of a store for humans: axes, phase-state counts, unconverged cells, iterations.

Reads the store block by block (memory bounded by one chunk), so it also works on a store whose
run is unfinished; the counts then cover the computed cells and say how many are missing.
"""

from __future__ import annotations

import os
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from .._errors import GridflashError, StoreError
from ..plan import ChunkPlan
from ..store import (
    BLOCK_COMPLETE,
    BlockStats,
    block_stats,
    is_gridflash_store,
    read_root_attrs,
)
from ..thermo import FlashStatus, PhaseLabel

__all__ = ["AxisReport", "StoreReport", "UnconvergedCell", "config_units", "inspect_store"]


@dataclass(frozen=True)
class AxisReport:
    name: str
    size: int
    first: float
    last: float
    units: str
    long_name: str


@dataclass(frozen=True)
class UnconvergedCell:
    """One unconverged cell: its coordinates (dimension -> value) and its status name."""

    coords: dict[str, float]
    status: str
    residual: float


@dataclass(frozen=True)
class StoreReport:
    """What ``gridflash inspect`` shows."""

    path: Path
    attrs: dict[str, Any]
    axes: tuple[AxisReport, ...]
    components: tuple[str, ...]
    chunks: tuple[int, ...]
    blocks_total: int
    blocks_complete: int
    cells_total: int
    stats: BlockStats
    vapour_like: int
    liquid_like: int
    unconverged: tuple[UnconvergedCell, ...]
    status_counts: dict[str, int]


def inspect_store(path: str | os.PathLike[str], *, max_listed: int = 20) -> StoreReport:
    """Summarise a gridflash store.

    Parameters
    ----------
    path : str or path-like
    max_listed : int
        Most unconverged cells listed individually (all are counted).

    Returns
    -------
    StoreReport

    Raises
    ------
    StoreError
        If ``path`` is not a gridflash store.
    """
    import zarr

    store = Path(path).expanduser()
    if not is_gridflash_store(store):
        what = "does not exist" if not store.exists() else "is not a gridflash store"
        raise StoreError(f"{str(store)!r} {what}; give the path of a gridflash run's output")
    attrs = read_root_attrs(store)
    group = zarr.open_group(str(store), mode="r", use_consolidated=False)
    phase_count = group["phase_count"]
    dims = tuple(phase_count.metadata.dimension_names)
    axes = []
    coords = {}
    for dim in dims:
        arr = group[dim]
        values = np.asarray(arr[...])
        coords[dim] = values
        axes.append(AxisReport(dim, values.size, float(values[0]), float(values[-1]),
                               str(arr.attrs.get("units", "")),
                               str(arr.attrs.get("long_name", dim))))
    if dims == ("sample",):
        # A sampling run: report the sampled inputs' ranges (lowest .. highest value drawn).
        for name in ("pressure", "temperature", "mixing_ratio"):
            if name in group:
                arr = group[name]
                values = np.asarray(arr[...])
                coords[name] = values
                axes.append(AxisReport(
                    name, values.size, float(values.min()), float(values.max()),
                    str(arr.attrs.get("units", "")),
                    f"{arr.attrs.get('long_name', name)}; sampled, lowest .. highest"))
    plan = ChunkPlan(dims=dims, shape=tuple(phase_count.shape),  # type: ignore[arg-type]
                     chunks=tuple(phase_count.chunks), sweep=str(attrs.get("sweep", dims[0])))
    complete = np.asarray(group[BLOCK_COMPLETE][...]) == 1
    stats = BlockStats()
    vapour_like = liquid_like = 0
    listed: list[UnconvergedCell] = []
    status_counts: dict[int, int] = {}
    for block in plan.block_ids():
        region = plan.block_slices(block)
        pc = phase_count[region]
        if not (pc > 0).any():
            continue
        conv = group["converged"][region]
        stats = stats + block_stats(pc, conv, group["iterations"][region],
                                    group["stability_iterations"][region],
                                    group["warm_start"][region], group["status"][region])
        label = group["phase_label"][region]
        single = pc == 1
        vapour_like += int((single & (label == PhaseLabel.VAPOUR_LIKE)).sum())
        liquid_like += int((single & (label == PhaseLabel.LIQUID_LIKE)).sum())
        bad = (pc > 0) & ~conv
        if bad.any():
            status = group["status"][region]
            residual = group["residual"][region]
            codes, counts = np.unique(status[bad], return_counts=True)
            for code, count in zip(codes.tolist(), counts.tolist(), strict=True):
                status_counts[code] = status_counts.get(code, 0) + count
            for idx in np.argwhere(bad)[: max(0, max_listed - len(listed))]:
                where = {
                    dim: float(coords[dim][region[a].start + idx[a]])
                    for a, dim in enumerate(dims)
                }
                if dims == ("sample",):
                    where.update({name: float(coords[name][region[0].start + idx[0]])
                                  for name in ("pressure", "temperature", "mixing_ratio")
                                  if name in coords})
                listed.append(UnconvergedCell(where, _status_name(int(status[tuple(idx)])),
                                              float(residual[tuple(idx)])))
    return StoreReport(
        path=store,
        attrs=attrs,
        axes=tuple(axes),
        components=tuple(str(c) for c in group["component"][...]),
        chunks=plan.chunks,
        blocks_total=plan.n_blocks,
        blocks_complete=int(complete.sum()),
        cells_total=plan.n_cells,
        stats=stats,
        vapour_like=vapour_like,
        liquid_like=liquid_like,
        unconverged=tuple(listed),
        status_counts={_status_name(k): v for k, v in sorted(status_counts.items())},
    )


def config_units(attrs: dict[str, Any]) -> tuple[str, str]:
    """The pressure and temperature units the store's config was written in (``Pa``/``K``
    where the stored config text does not say, e.g. a store made through the Python API)."""
    import tomllib

    from ..config import pressure_unit, temperature_unit

    try:
        doc = tomllib.loads(str(attrs.get("config_text", "")))
    except tomllib.TOMLDecodeError:
        doc = {}
    units = []
    for table, check, default in (("pressure", pressure_unit, "Pa"),
                                  ("temperature", temperature_unit, "K")):
        section = doc.get(table)
        try:
            units.append(check(section.get("unit")) if isinstance(section, dict) else default)
        except GridflashError:
            units.append(default)
    return units[0], units[1]


def _status_name(code: int) -> str:
    try:
        return FlashStatus(code).name.lower()
    except ValueError:
        return f"unknown status {code}"
