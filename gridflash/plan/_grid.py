"""The cell inputs (pressure, temperature, feed) of any block of a grid.

Pure numpy; no dask, no files. The runner calls :func:`block_inputs` once per task block.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence

import numpy as np
from numpy.typing import NDArray

from .._errors import InputError
from ..config import RunSpec

__all__ = ["block_inputs"]


def block_inputs(
    spec: RunSpec, index_slices: Sequence[slice] | Mapping[str, slice]
) -> tuple[NDArray[np.float64], NDArray[np.float64], NDArray[np.float64]]:
    """Flattened pressure, temperature and feed of every cell of one block of the grid.

    Parameters
    ----------
    spec : RunSpec
        The run description.
    index_slices : sequence of 3 slices, or mapping from dimension name to slice
        The block, as index slices along ``spec.dims`` (pressure, temperature, composition);
        in a mapping a missing dimension means the whole axis.

    Returns
    -------
    pressure : ndarray, shape (n_cells,)
        Pa.
    temperature : ndarray, shape (n_cells,)
        K.
    z : ndarray, shape (n_cells, n_components)
        Feed mole fractions.

    Cells are in C order of ``spec.dims``: pressure varies slowest, composition fastest, so
    ``result.reshape(block_shape)`` restores the block.

    Examples
    --------
    ::

        p, t, z = block_inputs(spec, (slice(0, 10), slice(None), slice(2, 4)))
        p.reshape(10, len(spec.temperature), 2)  # back to the block's shape
    """
    slices = _normalise_slices(spec, index_slices)
    pressure = np.asarray(spec.pressure.values, dtype=float)[slices[0]]
    temperature = np.asarray(spec.temperature.values, dtype=float)[slices[1]]
    feeds = spec.composition.feed_array()[slices[2]]
    shape = (len(pressure), len(temperature), len(feeds))
    nc = len(spec.fluid.components)
    p = np.broadcast_to(pressure[:, None, None], shape).reshape(-1)
    t = np.broadcast_to(temperature[None, :, None], shape).reshape(-1)
    z = np.broadcast_to(feeds.reshape(1, 1, shape[2], nc), (*shape, nc)).reshape(-1, nc)
    return np.ascontiguousarray(p), np.ascontiguousarray(t), np.ascontiguousarray(z)


def _normalise_slices(
    spec: RunSpec, index_slices: Sequence[slice] | Mapping[str, slice]
) -> tuple[slice, slice, slice]:
    dims = spec.dims
    if isinstance(index_slices, Mapping):
        unknown = [d for d in index_slices if d not in dims]
        if unknown:
            raise InputError(
                f"index_slices names unknown dimension(s) {unknown!r}; the grid's dimensions "
                f"are {dims!r}"
            )
        seq = [index_slices.get(d, slice(None)) for d in dims]
    else:
        seq = list(index_slices)
    if len(seq) != 3 or not all(isinstance(s, slice) for s in seq):
        raise InputError(
            f"index_slices={index_slices!r} must be three slices, one per dimension {dims!r}"
        )
    return seq[0], seq[1], seq[2]
