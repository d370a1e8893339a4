"""The chunk plan: how the grid is cut into blocks, one dask task and one zarr chunk each.

A block is a box of whole zarr chunks -- here exactly one chunk -- so every task writes a region
no other task touches, and a region start always falls on a zarr chunk boundary (misaligned
region writes are the classic way to lose data in a zarr store written in parallel).

Pure bookkeeping: no dask, no files.
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Iterator, Sequence
from dataclasses import dataclass

from .._errors import ConfigError, StoreError
from ..config import RunSpec

__all__ = [
    "DEFAULT_CHUNK_CELLS",
    "MIN_BLOCKS",
    "MIN_CHUNK_CELLS",
    "DEFAULT_SAMPLE_CHUNK",
    "MAX_SWEEP_DEPTH",
    "BlockId",
    "ChunkPlan",
    "check_chunks_aligned",
    "chunk_plan",
    "default_chunks",
]

#: Default chunks hold at most this many cells (about 0.4 MB per float variable).
DEFAULT_CHUNK_CELLS = 65_536
#: Default chunks cut a grid into at least about this many blocks (where chunks of
#: ``MIN_CHUNK_CELLS`` allow it), so that every worker of a machine or a small cluster gets work
#: on a mid-size grid, the load balances at the end of a run, and progress moves in at least
#: 20 steps.
MIN_BLOCKS = 32
#: Default chunks are not cut below this many cells: a task's fixed cost -- scheduling, opening
#: the store, writing about twenty arrays, about 40 ms on a loaded 2-core machine -- would
#: outweigh its flashes (about 50,000 cells/s per thread).
MIN_CHUNK_CELLS = 1024
#: Default chunks keep the sweep dimension whole up to this many slabs, so that every slab of a
#: chunk but the first is warm-started.
MAX_SWEEP_DEPTH = 1024

#: Default chunk length of a sampling run (samples per task): a power of two, so that blocks of
#: a Sobol' design are balanced, and enough samples for near neighbours to warm-start from.
DEFAULT_SAMPLE_CHUNK = 8192

#: A block's position in the grid of blocks, one index per grid dimension (three for a grid,
#: one for a sampling run).
BlockId = tuple[int, ...]


@dataclass(frozen=True)
class ChunkPlan:
    """Chunk shape of a grid and the blocks it cuts the grid into.

    Attributes
    ----------
    dims : tuple of str
        Grid dimensions in store order (pressure, temperature, composition dimension), or
        ``("sample",)`` for a sampling run.
    shape : tuple of int
        Grid shape.
    chunks : tuple of int
        Chunk length along each dimension (the last block along a dimension may be shorter).
    sweep : str
        The dimension swept slab by slab inside a block.
    """

    dims: tuple[str, ...]
    shape: tuple[int, ...]
    chunks: tuple[int, ...]
    sweep: str

    @property
    def sweep_axis(self) -> int:
        """Position of the sweep dimension in ``dims``."""
        return self.dims.index(self.sweep)

    @property
    def blocks_shape(self) -> tuple[int, int, int]:
        """Number of blocks along each dimension."""
        return tuple(  # type: ignore[return-value]
            -(-n // c) for n, c in zip(self.shape, self.chunks, strict=True)
        )

    @property
    def n_blocks(self) -> int:
        return math.prod(self.blocks_shape)

    @property
    def n_cells(self) -> int:
        return math.prod(self.shape)

    @property
    def chunk_cells(self) -> int:
        """Cells in a full chunk."""
        return math.prod(self.chunks)

    @property
    def slab_cells(self) -> int:
        """Cells in one slab of a full chunk (a chunk's cells at one sweep index)."""
        return self.chunk_cells // self.chunks[self.sweep_axis]

    def block_ids(self) -> Iterator[BlockId]:
        """Every block id, in C order."""
        return itertools.product(*(range(n) for n in self.blocks_shape))  # type: ignore[return-value]

    def block_slices(self, block: Sequence[int]) -> tuple[slice, slice, slice]:
        """Index slices of a block along ``dims``.

        Raises
        ------
        StoreError
            If ``block`` is not a block of this plan.
        """
        if len(block) != len(self.dims) or not all(
            0 <= int(b) < n for b, n in zip(block, self.blocks_shape, strict=True)
        ):
            raise StoreError(
                f"block {tuple(block)!r} is not in this grid's {self.blocks_shape!r} blocks"
            )
        return tuple(  # type: ignore[return-value]
            slice(int(b) * c, min((int(b) + 1) * c, n))
            for b, c, n in zip(block, self.chunks, self.shape, strict=True)
        )

    def block_region(self, block: Sequence[int]) -> dict[str, slice]:
        """Index slices of a block by dimension name, as ``to_zarr(region=...)`` takes them."""
        return dict(zip(self.dims, self.block_slices(block), strict=True))

    def block_shape(self, block: Sequence[int]) -> tuple[int, int, int]:
        return tuple(s.stop - s.start for s in self.block_slices(block))  # type: ignore[return-value]

    def block_cells(self, block: Sequence[int]) -> int:
        return math.prod(self.block_shape(block))

    def dask_chunks(self) -> tuple[tuple[int, ...], tuple[int, ...], tuple[int, ...]]:
        """Dask chunk tuples of a grid-shaped array cut by this plan."""
        out = []
        for n, c in zip(self.shape, self.chunks, strict=True):
            full, rest = divmod(n, c)
            out.append((c,) * full + ((rest,) if rest else ()))
        return tuple(out)  # type: ignore[return-value]


def default_chunks(shape: Sequence[int], sweep_axis: int) -> tuple[int, int, int]:
    """Default chunk lengths: the whole sweep axis, enough blocks for every worker.

    Parameters
    ----------
    shape : sequence of 3 int
        Grid shape.
    sweep_axis : int
        Position of the sweep dimension.

    Returns
    -------
    tuple of 3 int

    Notes
    -----
    A chunk holds at most ``target = min(DEFAULT_CHUNK_CELLS, max(MIN_CHUNK_CELLS,
    ceil(cells / MIN_BLOCKS)))`` cells: a large grid gets chunks of ``DEFAULT_CHUNK_CELLS``, a
    mid-size grid about ``MIN_BLOCKS`` blocks, a small one chunks of ``MIN_CHUNK_CELLS``. Warm
    starts pay from the second slab of a chunk on, and the compiled flash costs the same per cell
    on small and large slabs, so the sweep dimension is kept whole (up to ``MAX_SWEEP_DEPTH``
    slabs) and the other dimensions are cut (the longest first, into near-equal parts) until a
    slab holds at most ``target / depth`` cells; only a sweep axis longer than
    ``MAX_SWEEP_DEPTH``, or one that alone holds more than ``target`` cells, is cut too.

    Examples
    --------
    >>> default_chunks((100, 100, 100), sweep_axis=0)
    (100, 17, 17)
    >>> default_chunks((25, 7, 15), sweep_axis=0)
    (25, 7, 5)
    >>> default_chunks((5, 3, 6), sweep_axis=0)
    (5, 3, 6)
    """
    shape = [int(n) for n in shape]
    cells = math.prod(shape)
    target = min(DEFAULT_CHUNK_CELLS, max(MIN_CHUNK_CELLS, -(-cells // MIN_BLOCKS)))
    depth = min(shape[sweep_axis], MAX_SWEEP_DEPTH)
    slab_cap = max(1, target // depth)
    sizes = list(shape)
    parts = [1, 1, 1]
    others = [a for a in range(3) if a != sweep_axis]
    while math.prod(sizes[a] for a in others) > slab_cap:
        a = max(others, key=lambda axis: sizes[axis])
        if sizes[a] <= 1:
            break
        parts[a] += 1
        sizes[a] = -(-shape[a] // parts[a])
    slab = math.prod(sizes[a] for a in others)
    s = sweep_axis
    while sizes[s] > 1 and sizes[s] * slab > max(target, min(depth, shape[s])):
        parts[s] += 1
        sizes[s] = -(-shape[s] // parts[s])
    return tuple(sizes)  # type: ignore[return-value]


def chunk_plan(spec: RunSpec) -> ChunkPlan:
    """The chunk plan of a run.

    Chunk lengths come from ``spec.run.chunks`` (a length above the axis length means the whole
    axis); dimensions it leaves out get :func:`default_chunks`.

    Raises
    ------
    ConfigError
        If ``run.sweep`` or a ``run.chunks`` entry names an unknown dimension, or a chunk length
        is not a positive integer.
    """
    if spec.sampling is not None:
        return _sample_plan(spec)
    dims = spec.dims
    shape = spec.shape
    if spec.run.sweep not in dims:
        raise ConfigError(
            f"run.sweep = {spec.run.sweep!r} is not a grid dimension; choose one of {dims!r}"
        )
    given: dict[str, int] = {}
    for dim, length in spec.run.chunks:
        if dim not in dims:
            raise ConfigError(
                f"run.chunks names {dim!r}, which is not a grid dimension; the dimensions are "
                f"{dims!r}"
            )
        if isinstance(length, bool) or not isinstance(length, int) or length < 1:
            raise ConfigError(
                f"run.chunks.{dim} = {length!r} is not a positive integer number of grid points"
            )
        given[dim] = min(length, shape[dims.index(dim)])
    sweep_axis = dims.index(spec.run.sweep)
    defaults = default_chunks(shape, sweep_axis)
    chunks = tuple(given.get(d, defaults[i]) for i, d in enumerate(dims))
    return ChunkPlan(dims=dims, shape=shape, chunks=chunks, sweep=spec.run.sweep)  # type: ignore[arg-type]


def _sample_plan(spec: RunSpec) -> ChunkPlan:
    """The one-dimensional plan of a sampling run: blocks of consecutive samples."""
    n = spec.shape[0]
    given = dict(spec.run.chunks)
    unknown = [d for d in given if d != "sample"]
    if unknown:
        raise ConfigError(
            f"run.chunks names {unknown[0]!r}, which is not a dimension of a sampling run; give "
            "run.chunks.sample"
        )
    length = given.get("sample", DEFAULT_SAMPLE_CHUNK)
    if isinstance(length, bool) or not isinstance(length, int) or length < 1:
        raise ConfigError(f"run.chunks.sample = {length!r} is not a positive integer")
    return ChunkPlan(dims=("sample",), shape=(n,), chunks=(min(length, n),), sweep="sample")  # type: ignore[arg-type]


def check_chunks_aligned(
    plan: ChunkPlan,
    name: str,
    dims: Sequence[str],
    shape: Sequence[int],
    chunks: Sequence[int] | Sequence[Sequence[int]],
    *,
    kind: str = "zarr",
) -> None:
    """Fail unless a stored (or dask) array is cut along the grid dimensions exactly as the plan.

    Parameters
    ----------
    plan : ChunkPlan
    name : str
        The variable's name, for the message.
    dims, shape : sequence
        The array's dimensions and shape.
    chunks : sequence of int, or sequence of sequences of int
        Zarr chunk lengths (one per dimension) or dask chunk tuples (one tuple per dimension).
    kind : {"zarr", "dask"}
        Which chunks these are, for the message.

    Raises
    ------
    StoreError
        Naming the variable, the dimension and both chunkings when a block of the plan would not
        start on a chunk boundary of the array (region writes would then share chunks between
        tasks and could lose data), or when the array's length differs from the grid's.
    """
    lengths = dict(zip(plan.dims, plan.shape, strict=True))
    plan_chunks = dict(zip(plan.dims, plan.dask_chunks(), strict=True))
    for axis, dim in enumerate(dims):
        if dim not in lengths:
            continue
        if int(shape[axis]) != lengths[dim]:
            raise StoreError(
                f"variable {name!r} has {shape[axis]} points along {dim!r} but the grid has "
                f"{lengths[dim]}; the store was written for another grid (use --overwrite)"
            )
        found = chunks[axis]
        if isinstance(found, int) or not isinstance(found, Sequence):
            step = int(found)  # type: ignore[arg-type]
            starts = {sum(plan_chunks[dim][:i]) for i in range(len(plan_chunks[dim]))}
            ok = step > 0 and all(s % step == 0 for s in starts)
            shown = step
        else:
            ok = tuple(int(c) for c in found) == plan_chunks[dim]
            shown = tuple(found)
        if not ok:
            raise StoreError(
                f"{kind} chunks of variable {name!r} along {dim!r} are {shown!r}, which do not "
                f"line up with the run's blocks {plan_chunks[dim]!r}; every block must start on "
                f"a chunk boundary (write a new store with --overwrite, or keep the chunks the "
                f"store was made with)"
            )
