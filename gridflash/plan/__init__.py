"""Layer 3, grid and chunks: every axis value of a run (pressure, temperature, composition
axes from named streams, sampling designs) and the chunk plan that aligns dask and zarr chunks.
"""

from __future__ import annotations

from ._chunks import (
    DEFAULT_CHUNK_CELLS,
    DEFAULT_SAMPLE_CHUNK,
    MAX_SWEEP_DEPTH,
    BlockId,
    ChunkPlan,
    check_chunks_aligned,
    chunk_plan,
    default_chunks,
)
from ._grid import (
    block_inputs,
)
from ._sampling import (
    SAMPLE_DIM,
    SampleInputs,
    sample_inputs,
    simplex_from_cube,
    unit_points,
)

__all__ = [
    "BlockId",
    "ChunkPlan",
    "DEFAULT_CHUNK_CELLS",
    "DEFAULT_SAMPLE_CHUNK",
    "MAX_SWEEP_DEPTH",
    "SAMPLE_DIM",
    "SampleInputs",
    "block_inputs",
    "check_chunks_aligned",
    "chunk_plan",
    "default_chunks",
    "sample_inputs",
    "simplex_from_cube",
    "unit_points",
]
