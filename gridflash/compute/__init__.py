"""Layer 4, execution of one block: one block of cells in, one block result out, no hidden
state (a task can be retried). Numpy around the thermodynamics layer; no dask, no files.
"""

from __future__ import annotations

from ._sample_sweep import (
    WAVE_SHARES,
    sample_block,
    sweep_samples,
    wave_bounds,
)
from ._sweep import (
    BLOCK_FIELDS,
    CELL_FIELDS,
    COMPONENT_FIELDS,
    BlockResult,
    slab_indices,
    sweep_block,
)

__all__ = [
    "BLOCK_FIELDS",
    "BlockResult",
    "CELL_FIELDS",
    "COMPONENT_FIELDS",
    "WAVE_SHARES",
    "sample_block",
    "slab_indices",
    "sweep_block",
    "sweep_samples",
    "wave_bounds",
]
