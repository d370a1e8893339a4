"""Layer 5, the zarr store: one schema (variable and dimension names, units, long names,
provenance), a writer (chunk-aligned region writes, completion marks, resume) and a reader.
"""

from __future__ import annotations

from ._lock import lock_path, writer_lock
from ._reader import (
    completed_blocks,
    is_gridflash_store,
    mixture_from_store,
    open_table,
    open_unconsolidated,
    read_root_attrs,
    stored_chunks,
)
from ._schema import BLOCK_COMPLETE, STORE_FORMAT, VARIABLES, Variable
from ._writer import (
    BlockStats,
    block_stats,
    consolidate,
    create_store,
    finish_store,
    mark_block_complete,
    remove_store,
    set_run_state,
    stored_block_stats,
    write_block,
    write_line_variables,
)

__all__ = [
    "BLOCK_COMPLETE",
    "STORE_FORMAT",
    "VARIABLES",
    "BlockStats",
    "Variable",
    "block_stats",
    "consolidate",
    "completed_blocks",
    "create_store",
    "finish_store",
    "is_gridflash_store",
    "lock_path",
    "mark_block_complete",
    "mixture_from_store",
    "open_table",
    "open_unconsolidated",
    "read_root_attrs",
    "remove_store",
    "set_run_state",
    "stored_block_stats",
    "stored_chunks",
    "write_block",
    "write_line_variables",
    "writer_lock",
]
