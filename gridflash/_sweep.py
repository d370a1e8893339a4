"""Flash every cell of one grid block, slab by slab along the sweep dimension, with warm starts.

Pure numpy on top of :func:`gridflash.flash`; no dask, no files. The runner calls
:func:`sweep_block` once per task block.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from .thermo import FlashResult, Mixture, flash

__all__ = [
    "BLOCK_FIELDS",
    "CELL_FIELDS",
    "COMPONENT_FIELDS",
    "BlockResult",
    "slab_indices",
    "sweep_block",
]

#: Per-cell fields of a block result: FlashResult attribute paths, plus ``warm_start``.
CELL_FIELDS: tuple[str, ...] = (
    "phase_count",
    "vapour_fraction",
    "converged",
    "status",
    "iterations",
    "stability_iterations",
    "residual",
    "material_balance",
    "phase_label",
    "tpd",
    *(f"{phase}.{prop}" for phase in ("liquid", "vapour") for prop in (
        "z_factor", "molar_volume", "molar_density", "mass_density", "molar_mass", "viscosity"
    )),
    "warm_start",
)
#: Per-cell, per-component fields.
COMPONENT_FIELDS: tuple[str, ...] = ("x", "y", "K")
BLOCK_FIELDS: tuple[str, ...] = CELL_FIELDS + COMPONENT_FIELDS


@dataclass(frozen=True, eq=False)
class BlockResult:
    """Flash results of one block, each array shaped like the block.

    Attributes
    ----------
    fields : dict of str to ndarray
        Keyed by :data:`BLOCK_FIELDS`: FlashResult attribute paths (``"phase_count"``,
        ``"liquid.viscosity"``, ``"x"``...) and ``"warm_start"`` (True where the cell was offered
        the previous slab's K-values). Per-cell arrays have the block's shape, per-component
        arrays the block's shape plus ``(n_components,)``.
    shape : tuple of int
        The block's shape.
    """

    fields: dict[str, np.ndarray]
    shape: tuple[int, ...]

    def __getitem__(self, key: str) -> np.ndarray:
        return self.fields[key]


def slab_indices(block_shape: Sequence[int], sweep_axis: int) -> NDArray[np.intp]:
    """Flat (C-order) cell indices of each slab of a block.

    Returns
    -------
    ndarray of intp, shape (n_slabs, slab_cells)
        Row ``k`` holds the cells at index ``k`` along the sweep axis; column ``j`` is the same
        position across the other axes in every row, so row ``k - 1`` column ``j`` is the
        neighbour that warm-starts row ``k`` column ``j``.
    """
    shape = tuple(int(n) for n in block_shape)
    idx = np.arange(int(np.prod(shape)), dtype=np.intp).reshape(shape)
    return np.moveaxis(idx, sweep_axis, 0).reshape(shape[sweep_axis], -1)


def sweep_block(
    mixture: Mixture,
    pressure: NDArray[np.float64],
    temperature: NDArray[np.float64],
    z: NDArray[np.float64],
    block_shape: Sequence[int],
    sweep_axis: int,
    *,
    warm_start: bool = True,
) -> BlockResult:
    """Flash a block of cells slab by slab along the sweep axis.

    Parameters
    ----------
    mixture : Mixture
    pressure, temperature : ndarray, shape (n_cells,)
        Pa and K of every cell, in C order of the block.
    z : ndarray, shape (n_cells, n_components)
        Feed mole fractions of every cell.
    block_shape : sequence of int
        The block's shape; ``prod(block_shape) == n_cells``.
    sweep_axis : int
        The axis swept slab by slab.
    warm_start : bool
        If True, each slab after the first is started from the previous slab's K-values where the
        neighbouring cell converged to two phases (other rows are NaN, i.e. started cold, and
        :func:`gridflash.flash` falls back to a full stability test where a warm split does not
        give a two-phase answer). If False every cell is started cold.

    Returns
    -------
    BlockResult
    """
    shape = tuple(int(n) for n in block_shape)
    n_cells = int(np.prod(shape))
    nc = mixture.n_components
    if pressure.shape != (n_cells,) or z.shape != (n_cells, nc):
        raise ValueError(
            f"block inputs have shapes {pressure.shape} and {z.shape}, expected ({n_cells},) "
            f"and ({n_cells}, {nc}) for a block of shape {shape}"
        )
    flat: dict[str, np.ndarray] = {}
    slabs = slab_indices(shape, sweep_axis)
    previous_k: np.ndarray | None = None
    for cells in slabs:
        k_init = previous_k if warm_start else None
        offered = np.zeros(cells.size, dtype=bool)
        if k_init is not None:
            offered = np.all(np.isfinite(k_init), axis=1)
            if not offered.any():
                k_init = None
        result = flash(mixture, pressure[cells], temperature[cells], z[cells], k_init=k_init)
        _scatter(flat, result, offered, cells, n_cells, nc)
        good = (result.phase_count == 2) & result.converged
        previous_k = np.where(good[:, None], result.K, np.nan)
    fields = {
        key: value.reshape(shape + value.shape[1:]) for key, value in flat.items()
    }
    return BlockResult(fields=fields, shape=shape)


def _field(result: FlashResult, path: str) -> np.ndarray:
    obj: object = result
    for part in path.split("."):
        obj = getattr(obj, part)
    return np.asarray(obj)


def _scatter(
    out: dict[str, np.ndarray],
    result: FlashResult,
    offered: np.ndarray,
    cells: np.ndarray,
    n_cells: int,
    nc: int,
) -> None:
    for key in BLOCK_FIELDS:
        value = offered if key == "warm_start" else _field(result, key)
        if key not in out:
            tail = (nc,) if key in COMPONENT_FIELDS else ()
            out[key] = np.empty((n_cells, *tail), dtype=value.dtype)
        out[key][cells] = value
