"""Run a grid: one dask task per block, writing the zarr store from the workers.

Each task is a pure function of its block id (:func:`compute_block`): it builds the block's
inputs, flashes them slab by slab with warm starts, writes its region of the store, marks the
block complete and returns a small summary. The driver (:func:`run`) only creates the store,
submits the blocks in bounded batches, drains them with ``as_completed`` (progress), and records
the final statistics. The same code runs on a local ``LocalCluster`` (processes or threads) and
on an existing ``dask.distributed`` cluster (``scheduler_address``); in the latter case the
workers write the store themselves, so its path must be on a filesystem every worker sees.
"""

from __future__ import annotations

import contextlib
import functools
import itertools
import json
import logging
import os
import time
import uuid
from collections.abc import Callable, Iterator
from dataclasses import dataclass, replace
from pathlib import Path

import numpy as np

from ._errors import GridflashError, InputError, StoreError
from .analysis import envelopes_part, join_parts, saturation_lines, write_envelopes
from .compute import sample_block, sweep_block
from .config import RunSpec, changed_keys
from .plan import BlockId, ChunkPlan, block_inputs, check_chunks_aligned, chunk_plan
from .store import (
    VARIABLES,
    BlockStats,
    block_stats,
    completed_blocks,
    create_store,
    finish_store,
    is_gridflash_store,
    mark_block_complete,
    open_unconsolidated,
    read_root_attrs,
    remove_store,
    set_run_state,
    stored_block_stats,
    stored_chunks,
    write_block,
    write_line_variables,
    writer_lock,
)
from .thermo import flash

__all__ = [
    "DEFAULT_MAX_CELLS",
    "BlockSummary",
    "BlockTask",
    "Progress",
    "RunSummary",
    "check_grid_size",
    "compute_block",
    "run",
    "saturation_lines_part",
    "saturation_step",
    "envelope_step",
]

#: Times dask re-runs a task that raised (a worker death is retried by the scheduler anyway,
#: up to ``distributed.scheduler.allowed-failures``).
_RETRIES = 2
#: Seconds to wait when connecting to an existing scheduler, and for its first worker.
_CONNECT_TIMEOUT = 10.0
_WORKER_TIMEOUT = 30.0
#: Tasks in flight per worker thread (bounds the graph and the memory of finished results).
_IN_FLIGHT_PER_THREAD = 2
#: Largest grid run without an explicit ``max_cells`` (``--max-cells``): about 250 GB of store
#: before compression for a 4-component fluid, and days on one machine; a bigger grid is far
#: more often a mistyped count than a plan.
DEFAULT_MAX_CELLS = 1_000_000_000


@dataclass(frozen=True)
class BlockTask:
    """Everything a worker needs to compute one block."""

    spec: RunSpec
    store: str
    block: BlockId


@dataclass(frozen=True)
class BlockSummary:
    """What a task returns: its block, its counts and its compute time."""

    block: BlockId
    stats: BlockStats
    seconds: float


@dataclass(frozen=True)
class Progress:
    """Progress of a run, passed to the ``progress`` callback after every finished block.

    Attributes
    ----------
    cells_done, cells_to_do : int
        Cells computed so far in this session, and the cells this session computes.
    blocks_done, blocks_to_do : int
        The same in blocks.
    elapsed : float
        Seconds since the first block was submitted.
    cells_per_second : float
        ``cells_done / elapsed`` (0 before the first block is done).
    seconds_left : float or None
        Estimated seconds to finish at the current rate (None before the first block is done).
    """

    cells_done: int
    cells_to_do: int
    blocks_done: int
    blocks_to_do: int
    elapsed: float
    cells_per_second: float
    seconds_left: float | None


@dataclass(frozen=True)
class RunSummary:
    """Outcome of :func:`run`.

    Attributes
    ----------
    output : Path
        The store.
    blocks_total, blocks_computed, blocks_reused : int
        Blocks of the grid; blocks computed in this session; blocks found complete in the store
        (``--resume``) and kept.
    cells_total, cells_computed : int
    stats : BlockStats
        Counts over the whole store (two-phase, single-phase, unconverged cells, iterations).
    wall_time : float
        Seconds this session took, cluster start-up included.
    compute_seconds : float
        Seconds from the first block submitted to the last one finished.
    cells_per_second : float
        ``cells_computed / compute_seconds``.
    workers : int
        Worker threads used.
    scheduler : str
        ``"processes"``, ``"threads"`` or the address of the scheduler used.
    """

    output: Path
    blocks_total: int
    blocks_computed: int
    blocks_reused: int
    cells_total: int
    cells_computed: int
    stats: BlockStats
    wall_time: float
    compute_seconds: float
    cells_per_second: float
    workers: int
    scheduler: str


def compute_block(task: BlockTask) -> BlockSummary:
    """Compute, write and mark one block; the function each dask task runs.

    Pure in the sense dask needs: running it again for the same block writes the same bytes to
    the same chunks, so a retried or duplicated task is harmless.
    """
    spec = task.spec
    plan = chunk_plan(spec)
    start = time.perf_counter()
    if spec.sampling is not None:
        # A block of consecutive samples, flashed in waves with nearest-neighbour warm starts.
        result = sample_block(spec, plan.block_slices(task.block)[0])
    else:
        pressure, temperature, z = block_inputs(spec, plan.block_slices(task.block))
        result = sweep_block(
            spec.fluid.mixture(),
            pressure,
            temperature,
            z,
            plan.block_shape(task.block),
            plan.sweep_axis,
            warm_start=spec.run.warm_start,
        )
    path = Path(task.store)
    write_block(path, plan, task.block, result)
    mark_block_complete(path, task.block)
    stats = block_stats(
        result["phase_count"], result["converged"], result["iterations"],
        result["stability_iterations"], result["warm_start"], result["status"],
    )
    return BlockSummary(task.block, stats, time.perf_counter() - start)


def run(
    spec: RunSpec,
    *,
    resume: bool = False,
    overwrite: bool = False,
    workers: int | None = None,
    scheduler_address: str | None = None,
    progress: Callable[[Progress], None] | None = None,
    max_cells: int = DEFAULT_MAX_CELLS,
) -> RunSummary:
    """Compute a whole grid into its zarr store.

    Parameters
    ----------
    spec : RunSpec
        The run; the store goes to ``spec.run.output``. ``spec.run.scheduler`` picks local
        processes or threads; ``spec.run.warm_start`` switches warm starts.
    resume : bool
        Finish an existing store made from the same config: blocks marked complete are kept and
        only the others are computed. Without an existing store this is a fresh run.
    overwrite : bool
        Replace an existing gridflash store.
    workers : int, optional
        Local workers (processes, or threads); default ``spec.run.workers``, else every core.
        Ignored with a scheduler address.
    scheduler_address : str, optional
        Address of a running ``dask.distributed`` scheduler (default
        ``spec.run.scheduler_address``); its workers compute and write the blocks, so the store
        path must be on a filesystem they share.
    progress : callable, optional
        Called with a :class:`Progress` after every finished block.
    max_cells : int
        Refuse a grid of more cells than this before planning it (default
        :data:`DEFAULT_MAX_CELLS`).

    Returns
    -------
    RunSummary

    Raises
    ------
    StoreError
        The output exists and neither ``resume`` nor ``overwrite`` is set; the store cannot be
        resumed (another config, other chunks, not a gridflash store); the output cannot be
        written.
    GridflashError
        The scheduler cannot be reached or has no workers; a block lost its workers too often.
    InputError
        Both ``resume`` and ``overwrite`` are set, ``workers`` or ``max_cells`` is not a
        positive integer, or the grid has more than ``max_cells`` cells.

    Notes
    -----
    The store's ``run_state`` attribute is ``"running"`` until every block is written and the
    statistics are recorded, then ``"complete"``; a killed run leaves ``"running"`` and can be
    finished with ``resume=True``.
    """
    started = time.perf_counter()
    if resume and overwrite:
        raise InputError("resume and overwrite exclude each other; choose one")
    if workers is not None and (isinstance(workers, bool) or not isinstance(workers, int)
                                or workers < 1):
        raise InputError(f"workers={workers!r} must be a positive integer")
    check_grid_size(spec, max_cells)
    path = Path(spec.run.output).expanduser().absolute()
    spec = replace(spec, run=replace(spec.run, output=path))
    # One writer per store: a second run on this output is refused here, before it reads,
    # deletes (overwrite) or writes anything.
    with writer_lock(path):
        return _run_locked(spec, path, started, resume=resume, overwrite=overwrite,
                           workers=workers, scheduler_address=scheduler_address,
                           progress=progress)


def _run_locked(
    spec: RunSpec,
    path: Path,
    started: float,
    *,
    resume: bool,
    overwrite: bool,
    workers: int | None,
    scheduler_address: str | None,
    progress: Callable[[Progress], None] | None,
) -> RunSummary:
    """:func:`run` once it holds the store's owner marker."""
    if resume and is_gridflash_store(path):
        spec = _with_stored_chunks(spec, path)
    plan = chunk_plan(spec)
    address = scheduler_address or spec.run.scheduler_address
    exists = path.exists() or path.is_symlink()

    if exists and not (resume or overwrite):
        raise StoreError(
            f"output {str(path)!r} already exists; use --resume to finish it or --overwrite to "
            "replace it"
        )
    fresh = not (exists and resume)
    done = np.zeros(plan.blocks_shape, dtype=bool)
    if not fresh:
        _check_resumable(path, spec, plan)
        done = completed_blocks(path, plan)
    elif exists and not is_gridflash_store(path):
        remove_store(path)  # refuses anything but an empty folder, before any work starts

    todo = [b for b in plan.block_ids() if not done[b]]
    local_workers = workers or spec.run.workers or os.cpu_count() or 1
    n_workers = min(local_workers, max(len(todo), 1))
    computed: list[BlockSummary] = []
    threads = 0
    compute_seconds = 0.0
    # Connect (or start the local cluster) before touching the output, so an unreachable
    # scheduler leaves an existing store as it was.
    connection = (
        _connect(address, spec.run.scheduler, n_workers) if todo
        else contextlib.nullcontext(None)
    )
    with connection as client:
        loading = _load_on_workers(client, spec) if todo else []
        if fresh:
            remove_store(path)
            create_store(path, spec, plan)
        else:
            sessions = int(read_root_attrs(path).get("run_sessions", 0))
            set_run_state(path, "running", run_sessions=sessions + 1)
        if todo:
            threads = _check_workers(client, path, address)
            _wait_loaded(loading)
            t0 = time.perf_counter()
            computed = _drain(client, spec, path, plan, todo, threads, progress)
            compute_seconds = time.perf_counter() - t0
        # Bubble/dew pressure per line and cricondenbars (grid tables), on the run's workers
        # (here, in as many threads as workers were asked for, when no block was left).
        saturation_step(
            path,
            compute_parts=None if client is None else functools.partial(_lines_on_workers, client),
            threads=local_workers,
        )
        # Phase envelopes of the compositions: one task per composition chunk.
        envelope_step(path, client=client, chunk=dict(spec.run.chunks).get(spec.dims[-1]))

    reused = [b for b in plan.block_ids() if done[b]]
    stats = sum((s.stats for s in computed), BlockStats())
    for block in reused:
        stats = stats + stored_block_stats(path, plan, block)
    attrs = read_root_attrs(path)
    session = time.perf_counter() - started
    final = {
        "wall_time_seconds": round(float(attrs.get("wall_time_seconds", 0.0)) + session, 3),
        "blocks_computed_last_session": len(computed),
        "blocks_reused_last_session": len(reused),
    }
    finish_store(path, stats, **final)
    cells_computed = sum(s.stats.cells for s in computed)
    return RunSummary(
        output=path,
        blocks_total=plan.n_blocks,
        blocks_computed=len(computed),
        blocks_reused=len(reused),
        cells_total=plan.n_cells,
        cells_computed=cells_computed,
        stats=stats,
        wall_time=session,
        compute_seconds=compute_seconds,
        cells_per_second=cells_computed / compute_seconds if compute_seconds > 0 else 0.0,
        workers=threads,
        scheduler=address or spec.run.scheduler,
    )


def check_grid_size(spec: RunSpec, max_cells: int = DEFAULT_MAX_CELLS) -> None:
    """Refuse a grid larger than ``max_cells`` before anything is planned or written.

    Raises
    ------
    InputError
        Naming the cell count, the axes, the store size it would need and the override.
    """
    import math

    if isinstance(max_cells, bool) or not isinstance(max_cells, int) or max_cells < 1:
        raise InputError(f"max_cells={max_cells!r} must be a positive integer")
    cells = math.prod(spec.shape)
    if cells <= max_cells:
        return
    nc = len(spec.fluid.components)
    per_cell = sum(np.dtype(v.dtype).itemsize * (nc if v.per_component else 1)
                   for v in VARIABLES)
    shape = " x ".join(f"{n:,} {d}" for n, d in zip(spec.shape, spec.dims, strict=True))
    raise InputError(
        f"the grid has {cells:,} cells ({shape}), more than the limit of {max_cells:,}; it "
        f"would need about {_bytes(cells * per_cell)} of store before compression; check the "
        f"axis counts, or raise the limit with --max-cells {cells}"
    )


def _bytes(n: float) -> str:
    for unit in ("bytes", "kB", "MB", "GB", "TB"):
        if n < 1000 or unit == "TB":
            return f"{n:,.0f} {unit}" if unit == "bytes" else f"{n:,.1f} {unit}"
        n /= 1000
    return f"{n:,.1f} PB"  # pragma: no cover - the loop returns at TB


# --------------------------------------------------------------------------------------------
# Resume checks
# --------------------------------------------------------------------------------------------


def _check_resumable(path: Path, spec: RunSpec, plan: ChunkPlan) -> None:
    if not is_gridflash_store(path):
        raise StoreError(
            f"cannot resume {str(path)!r}: it is not a gridflash store; choose another output "
            "path, or --overwrite if it may be deleted"
        )
    attrs = read_root_attrs(path)
    old_hash = attrs.get("config_hash")
    if old_hash != spec.config_hash:
        keys = _changed_keys(attrs.get("config_canonical"), spec.config_canonical)
        what = f"changed keys: {', '.join(keys)}" if keys else (
            f"config hash {str(old_hash)[:12]!r} in the store, {spec.config_hash[:12]!r} now")
        raise StoreError(
            f"cannot resume {str(path)!r}: the config differs from the one the store was made "
            f"with ({what}); run the original config, or use --overwrite to start again"
        )
    if int(attrs.get("warm_start", -1)) != int(spec.run.warm_start):
        was = "on" if attrs.get("warm_start") else "off"
        raise StoreError(
            f"cannot resume {str(path)!r}: it was computed with warm starts {was}; resume with "
            f"the same setting ({'drop' if was == 'on' else 'add'} --no-warm-start) or use "
            "--overwrite"
        )
    for name, (dims, shape, chunks) in stored_chunks(path).items():
        check_chunks_aligned(plan, name, dims, shape, chunks)


def _with_stored_chunks(spec: RunSpec, path: Path) -> RunSpec:
    """The run with the store's chunk lengths for every dimension the config leaves to the
    defaults, so a store resumes although the default chunking changed since it was made."""
    stored = read_root_attrs(path).get("chunks")
    dims = chunk_plan(spec).dims
    if not isinstance(stored, list) or len(stored) != len(dims):
        return spec  # the resume checks say what is wrong with the store
    given = dict(spec.run.chunks)
    chunks = tuple((d, given.get(d, int(n))) for d, n in zip(dims, stored, strict=True))
    return replace(spec, run=replace(spec.run, chunks=chunks))


def _changed_keys(stored: object, current: str) -> list[str]:
    """Keys that differ between the canonical document stored at creation and the current one."""
    if not isinstance(stored, str) or not stored or not current:
        return []  # a store written before the canonical document was recorded
    return changed_keys(json.loads(stored), json.loads(current))


# --------------------------------------------------------------------------------------------
# Cluster and task submission
# --------------------------------------------------------------------------------------------


@contextlib.contextmanager
def _connect(address: str | None, kind: str, n_workers: int) -> Iterator[object]:
    """A ``distributed.Client`` on an existing scheduler or on a new local cluster."""
    from distributed import Client, LocalCluster

    if address:
        try:
            client = Client(address, timeout=_CONNECT_TIMEOUT, set_as_default=False)
        except (OSError, TimeoutError, ValueError) as exc:
            raise GridflashError(
                f"cannot reach the dask scheduler at {address!r} ({_one_line(exc)}); start it "
                "with `dask scheduler` or check the address"
            ) from None
        try:
            yield client
        finally:
            client.close()
        return
    processes = kind == "processes"
    cluster = LocalCluster(
        n_workers=n_workers if processes else 1,
        threads_per_worker=1 if processes else n_workers,
        processes=processes,
        # No dashboard; the scheduler's small HTTP server (health, metrics) on a free loopback
        # port instead of 8787, which another cluster may hold.
        dashboard_address="127.0.0.1:0",
        scheduler_kwargs={"dashboard": False},
        # Task failures come back to the driver, which reports each in one line; the workers'
        # own "Compute Failed" logs would print every attempt's traceback on stderr first.
        silence_logs=logging.CRITICAL,
    )
    try:
        client = Client(cluster, set_as_default=False)
        try:
            yield client
        finally:
            client.close()
    finally:
        cluster.close()


def _check_workers(client, path: Path, address: str | None) -> int:
    """Wait for a worker, check every worker sees the store; return the worker thread count."""
    try:
        client.wait_for_workers(1, timeout=_WORKER_TIMEOUT)
    except TimeoutError:
        raise GridflashError(
            f"the dask scheduler at {address!r} has no workers after {_WORKER_TIMEOUT:g} s; "
            "start some with `dask worker ADDRESS`"
        ) from None
    if address:
        try:
            seen = client.run(_sees_store, str(path))
        except Exception as exc:  # noqa: BLE001 - any worker-side failure ends the run the same way
            raise GridflashError(
                f"the dask workers cannot run gridflash ({_one_line(exc)}); install gridflash in "
                "the workers' environment"
            ) from None
        blind = sorted(worker for worker, ok in seen.items() if not ok)
        if blind:
            raise StoreError(
                f"worker(s) {', '.join(blind)} cannot see the store {str(path)!r}; the workers "
                "write the store themselves, so it must be on a filesystem every worker "
                "shares (see docs/running.md)"
            )
    info = client.scheduler_info(n_workers=-1)
    return max(1, sum(w.get("nthreads", 1) for w in info.get("workers", {}).values()))


def _load_kernels(spec: RunSpec) -> None:
    """Flash one cell of the run's fluid: imports the block code and loads the compiled
    kernels from the disk cache in the calling process (a worker), as its first block would."""
    nc = len(spec.fluid.components)
    flash(spec.fluid.mixture(), 1e6, 300.0, np.full(nc, 1.0 / nc))


def _load_on_workers(client, spec: RunSpec) -> list:
    """Start :func:`_load_kernels` on every worker process known now (futures), so that it
    overlaps the store's creation instead of delaying the first blocks of each process (a new
    worker process spends about a second importing and loading, several on a busy machine)."""
    workers = client.scheduler_info(n_workers=-1).get("workers", {})
    session = uuid.uuid4().hex[:8]
    return [
        client.submit(_load_kernels, spec, workers=[address], allow_other_workers=False,
                      pure=False, key=f"gridflash-load-{session}-{k}")
        for k, address in enumerate(workers)
    ]


def _wait_loaded(loading: list) -> None:
    """Wait for :func:`_load_on_workers` (a failure is left to the blocks to report)."""
    deadline = time.monotonic() + _WORKER_TIMEOUT
    for future in loading:
        with contextlib.suppress(Exception):  # the future's own error, or the deadline
            future.exception(timeout=max(0.0, deadline - time.monotonic()))


def _sees_store(path: str) -> bool:
    import gridflash.runner  # noqa: F401 - fails here if the worker cannot import gridflash

    return os.path.isfile(os.path.join(path, "zarr.json"))


def _drain(
    client,
    spec: RunSpec,
    path: Path,
    plan: ChunkPlan,
    todo: list[BlockId],
    threads: int,
    progress: Callable[[Progress], None] | None,
) -> list[BlockSummary]:
    from distributed import as_completed
    from distributed.scheduler import KilledWorker

    session = uuid.uuid4().hex[:8]
    cells_to_do = sum(plan.block_cells(b) for b in todo)
    pending = iter(todo)
    in_flight = max(2, _IN_FLIGHT_PER_THREAD * threads)
    block_of = {}

    def submit(block: BlockId):
        key = f"gridflash-block-{session}-{'-'.join(map(str, block))}"
        future = client.submit(
            compute_block, BlockTask(spec, str(path), block), key=key, retries=_RETRIES,
            pure=False,
        )
        block_of[future.key] = block
        return future

    def submit_next() -> None:
        block = next(pending, None)
        if block is not None:
            futures.add(submit(block))

    start = time.perf_counter()
    futures = as_completed(
        [submit(b) for b in itertools.islice(pending, in_flight)], loop=client.loop
    )
    out: list[BlockSummary] = []
    cells_done = 0
    try:
        for future in futures:
            block = block_of.pop(future.key)
            try:
                summary = future.result()
            except GridflashError:
                raise
            except KilledWorker:
                raise GridflashError(
                    f"block {block!r} was lost with its worker too many times "
                    "(distributed.scheduler.allowed-failures); check the workers' memory and "
                    "logs, then finish the run with --resume"
                ) from None
            except OSError as exc:
                raise StoreError(
                    f"writing block {block!r} to {str(path)!r} failed: {_one_line(exc)}; check "
                    "the disk space and permissions, then finish the run with --resume"
                ) from None
            out.append(summary)
            cells_done += summary.stats.cells
            submit_next()
            if progress is not None:
                elapsed = time.perf_counter() - start
                rate = cells_done / elapsed if elapsed > 0 else 0.0
                left = (cells_to_do - cells_done) / rate if rate > 0 else None
                progress(Progress(cells_done, cells_to_do, len(out), len(todo), elapsed, rate,
                                  left))
    except BaseException:
        futures.clear()
        raise
    return out


def saturation_step(
    path: str | os.PathLike[str],
    *,
    compute_parts: Callable[[str, int], list] | None = None,
    threads: int | None = None,
):
    """The run's post-step: a grid store's saturation lines, computed and written into it.

    By default the lines are computed here, in ``threads`` threads (default one per core). A run
    passes ``compute_parts(path, n_compositions)``, which computes them on its workers: part
    ``k`` of ``n`` (:func:`saturation_lines_part`, ``n`` at most ``n_compositions``) on each of
    ``n`` worker processes, in that worker's threads. Every line and composition is computed
    independently of the others, so the answer does not depend on the parts or threads. A store
    without a pressure x temperature grid (a sampled table) is left as it is (returns None).
    Returns the lines written (an ``xarray.Dataset``, see :func:`gridflash.saturation_lines`).
    """
    import xarray as xr

    store = str(path)
    grid = _composition_axis(store)
    if grid is None:
        return None
    comp_dim, n_comp = grid
    if compute_parts is None:
        parts = [saturation_lines_part(store, 0, 1, threads)]
    else:
        parts = compute_parts(store, n_comp)
    n_parts = len(parts)
    lines = xr.concat(parts, dim=comp_dim) if n_parts > 1 else parts[0]
    order = np.concatenate([np.arange(k, n_comp, n_parts) for k in range(n_parts)])
    lines = lines.isel({comp_dim: np.argsort(order)})
    write_line_variables(store, lines)
    return lines


def _composition_axis(store: str) -> tuple[str, int] | None:
    """Name and length of a grid store's composition dimension; None for a sampled store."""
    ds = open_unconsolidated(store)
    try:
        dims = tuple(ds.phase_count.dims)
        if dims[:2] != ("pressure", "temperature"):
            return None
        return dims[2], ds.sizes[dims[2]]
    finally:
        ds.close()


def envelope_step(path: str | os.PathLike[str], *, client=None, chunk: int | None = None):
    """The run's post-step for envelopes: the traced phase envelope of every composition of a
    grid store (:func:`gridflash.analysis.composition_envelopes`), written into it.

    One task (:func:`gridflash.analysis._envelopes.envelopes_part`) per ``chunk`` compositions
    (default all in one), on the ``client``'s workers, or here without a client. A sampled
    store is left as it is (returns None). Each envelope depends only on its feed, so the
    answer does not depend on the chunks.
    """
    store = str(path)
    grid = _composition_axis(store)
    if grid is None:
        return None
    comp_dim, n_comp = grid
    step = max(1, chunk or n_comp)
    ranges = [(a, min(a + step, n_comp)) for a in range(0, n_comp, step)]
    if client is None:
        parts = [envelopes_part(store, a, b) for a, b in ranges]
    else:
        parts = client.gather([
            client.submit(envelopes_part, store, a, b, retries=_RETRIES, pure=False)
            for a, b in ranges])
    envelopes = join_parts(parts, comp_dim)
    write_envelopes(store, envelopes)
    return envelopes


def saturation_lines_part(path: str, part: int, n_parts: int, threads: int | None = None):
    """:func:`gridflash.saturation_lines` of part ``part`` of ``n_parts`` of a store's
    compositions: every ``n_parts``-th composition from ``part`` on (neighbouring compositions
    cost about the same, so interleaved parts cost alike), in ``threads`` threads (default one
    per core). A task: reads the store, returns a small Dataset, writes nothing."""
    ds = open_unconsolidated(path)
    try:
        comp_dim = ds.phase_count.dims[2]
        table = ds.isel({comp_dim: slice(part, None, n_parts)})
        return saturation_lines(table, threads=threads).load()
    finally:
        ds.close()


def _lines_on_workers(client, path: str, n_compositions: int) -> list:
    """The saturation-line parts of a store, part k of n on the k-th of n worker processes (n:
    the workers, at most one per composition), in that worker's threads (threads share a
    process's GIL; processes do not). Computed here if no worker is left."""
    workers = sorted(client.scheduler_info(n_workers=-1).get("workers", {}).items())
    workers = workers[:n_compositions]
    if not workers:
        return [saturation_lines_part(path, 0, 1)]
    futures = [
        client.submit(
            saturation_lines_part, path, k, len(workers), max(1, info.get("nthreads", 1)),
            workers=[address], allow_other_workers=True, retries=_RETRIES, pure=False,
        )
        for k, (address, info) in enumerate(workers)
    ]
    return client.gather(futures)


def _one_line(exc: BaseException) -> str:
    text = " ".join(str(exc).split()) or type(exc).__name__
    return text if len(text) <= 200 else text[:197] + "..."
