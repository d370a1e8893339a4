"""Flash every cell of one grid block, slab by slab along the sweep dimension, with warm starts.

Numpy around the thermo layer's :func:`~gridflash.thermo._flash.flash_slabs`; no dask, no
files. The runner calls :func:`sweep_block` once per task block.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from ..thermo import FlashResult, Mixture
from ..thermo._flash import flash_slabs

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
    "second_liquid_fraction",
    "converged",
    "status",
    "iterations",
    "stability_iterations",
    "residual",
    "material_balance",
    "phase_label",
    "liquid_kind",
    "vapour_kind",
    "second_liquid_kind",
    "certification_iterations",
    "tpd",
    *(
        f"{phase}.{prop}"
        for phase in ("liquid", "vapour", "second_liquid")
        for prop in (
            "z_factor",
            "molar_volume",
            "molar_density",
            "mass_density",
            "molar_mass",
            "viscosity",
        )
    ),
    "warm_start",
)
#: Per-cell, per-component fields.
COMPONENT_FIELDS: tuple[str, ...] = ("x", "y", "x2", "K")
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
        neighbouring cell converged to two phases (other cells are started cold, and a cell
        whose warm split does not give a two-phase answer gets the full stability test, see
        :func:`gridflash.thermo._flash.flash_slabs`). If False every cell is started cold.

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
    # Cells in sweep-major order: slab after slab (the identity when the sweep axis is first).
    order = slab_indices(shape, sweep_axis)
    slab_cells = order.shape[1]
    order = order.ravel()
    back = None if np.array_equal(order, np.arange(n_cells)) else np.argsort(order)
    if back is not None:
        pressure, temperature, z = pressure[order], temperature[order], z[order]
    result = flash_slabs(mixture, pressure, temperature, z, slab_cells, warm_start=warm_start)
    offered = np.zeros(n_cells, dtype=bool)
    if warm_start:
        offered[slab_cells:] = ((result.phase_count > 1) & result.converged)[:-slab_cells]
    fields = {}
    for key in BLOCK_FIELDS:
        value = offered if key == "warm_start" else _field(result, key)
        if back is not None:
            value = value[back]
        fields[key] = value.reshape(shape + value.shape[1:])
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
