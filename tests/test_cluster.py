"""Fault tolerance with real processes on loopback: an existing dask cluster, a worker killed
mid-run, and a ``gridflash run`` killed with SIGKILL and resumed.
"""

from __future__ import annotations

import os
import random
import signal
import socket
import subprocess
import sys
import time
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path

import numpy as np
import pytest
import zarr
from click.testing import CliRunner

from gridflash.cli import cli
from gridflash.store import VARIABLES, read_root_attrs

from ._run_helpers import assert_stores_identical, write_config

#: A grid that takes a few seconds on two workers: 24 x 8 x 10 = 1920 cells in 12 blocks.
_MEDIUM = {"p_start": 10.0, "p_stop": 300.0, "p_count": 24, "t_count": 8, "c_count": 10}
_MEDIUM_CHUNKS = "pressure = 8, temperature = 4, composition = 5"
_ENV = {**os.environ, "OMP_NUM_THREADS": "1", "OPENBLAS_NUM_THREADS": "1", "MKL_NUM_THREADS": "1"}


def _free_port() -> int:
    with socket.socket() as sock:
        sock.bind(("127.0.0.1", 0))
        return sock.getsockname()[1]


@contextmanager
def dask_cluster(tmp_path: Path, n_workers: int = 2) -> Iterator[tuple[str, list]]:
    """A scheduler and ``n_workers`` single-thread workers started with dask's own CLI."""
    from distributed import Client

    port = _free_port()
    address = f"tcp://127.0.0.1:{port}"
    log = open(tmp_path / "dask.log", "w")  # noqa: SIM115 - closed below
    procs = [subprocess.Popen(
        [sys.executable, "-m", "dask", "scheduler", "--no-dashboard", "--host", "127.0.0.1",
         "--port", str(port)], stdout=log, stderr=log, env=_ENV)]
    workers = [subprocess.Popen(
        [sys.executable, "-m", "dask", "worker", address, "--host", "127.0.0.1", "--nthreads",
         "1", "--no-dashboard", "--no-nanny", "--death-timeout", "60"],
        stdout=log, stderr=log, env=_ENV) for _ in range(n_workers)]
    procs += workers
    try:
        with Client(address, timeout=30) as client:
            client.wait_for_workers(n_workers, timeout=60)
        yield address, workers
    finally:
        for proc in reversed(procs):
            if proc.poll() is None:
                proc.terminate()
        for proc in procs:
            try:
                proc.wait(timeout=10)
            except subprocess.TimeoutExpired:
                proc.kill()
                proc.wait()
        log.close()


def _cli(*args) -> str:
    result = CliRunner().invoke(cli, [str(a) for a in args], catch_exceptions=False)
    assert result.exit_code == 0, result.stderr
    return result.stdout


def _marks(store: Path) -> int:
    folder = store / "block_complete" / "c"
    return sum(1 for p in folder.rglob("*") if p.is_file()) if folder.exists() else 0


def _started_unmarked(store: Path, blocks_shape) -> list[tuple[int, int, int]]:
    """Blocks with some data written (any chunk file of any variable) but no completion mark."""
    marks = zarr.open_group(str(store), mode="r")["block_complete"][...]
    out = []
    for block in np.ndindex(*blocks_shape):
        if marks[block]:
            continue
        key = Path("c", *map(str, block))
        if any((store / v.name / key).exists() for v in VARIABLES):
            out.append(block)
    return out


@pytest.fixture(scope="module")
def medium(tmp_path_factory):
    """Config of the medium grid and its uninterrupted local (threads) store."""
    folder = tmp_path_factory.mktemp("medium")
    config = write_config(folder, grid=_MEDIUM, chunks=_MEDIUM_CHUNKS)
    _cli("run", config, "--threads", "--quiet", "--output", folder / "reference.zarr")
    return config, folder / "reference.zarr"


@pytest.mark.slow
def test_existing_cluster_equals_local_run(medium, tmp_path):
    config, reference = medium
    with dask_cluster(tmp_path) as (address, _):
        out = _cli("run", config, "--scheduler", address, "--output", tmp_path / "remote.zarr")
    assert f"scheduler {address}" in out and "12 computed, 0 reused" in out
    assert_stores_identical(reference, tmp_path / "remote.zarr")


@pytest.mark.slow
def test_worker_killed_mid_run(medium, tmp_path):
    """SIGKILL one of two workers while blocks run: dask reschedules, the store is identical."""
    config, reference = medium
    store = tmp_path / "survivor.zarr"
    with dask_cluster(tmp_path) as (address, workers):
        run = subprocess.Popen(
            [sys.executable, "-m", "gridflash.cli", "run", str(config), "--scheduler", address,
             "--output", str(store)], stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True,
            env=_ENV)
        deadline = time.monotonic() + 60
        while _marks(store) < 2 and run.poll() is None and time.monotonic() < deadline:
            time.sleep(0.01)
        assert run.poll() is None, "the run ended before a worker could be killed"
        os.kill(workers[0].pid, signal.SIGKILL)
        workers[0].wait(timeout=10)
        killed_at = _marks(store)
        out, err = run.communicate(timeout=120)
    assert run.returncode == 0, err
    assert killed_at < 12
    assert workers[0].returncode == -signal.SIGKILL
    assert "12 computed, 0 reused" in out
    assert_stores_identical(reference, store)


@pytest.mark.slow
@pytest.mark.parametrize(("seed", "kind"), [(0, "--threads"), (1, "--threads"), (2, "--processes")])
def test_killed_run_resumes(medium, tmp_path, seed, kind):
    """SIGKILL ``gridflash run`` at a random point, then ``--resume``: identical store, and no
    block is recomputed that was complete; at most the blocks in flight (two worker threads)
    had been started without finishing.
    """
    config, reference = medium
    rng = random.Random(seed)
    store = tmp_path / "killed.zarr"
    target = rng.randint(1, 9)
    run = subprocess.Popen(
        [sys.executable, "-m", "gridflash.cli", "run", str(config), kind, "--workers", "2",
         "--output", str(store), "--quiet"], env=_ENV)
    deadline = time.monotonic() + 60
    while _marks(store) < target and run.poll() is None and time.monotonic() < deadline:
        time.sleep(0.005)
    # A random moment after the target, but before the last block is marked (on a fast machine
    # the remaining blocks can finish within the longest wait; two are in flight at a time).
    stop = time.monotonic() + rng.uniform(0.0, 0.2)
    while time.monotonic() < stop and _marks(store) < 9:
        time.sleep(0.002)
    assert run.poll() is None, "the run ended before it could be killed; use a bigger grid"
    os.kill(run.pid, signal.SIGKILL)
    run.wait(timeout=10)
    assert read_root_attrs(store)["run_state"] == "running"
    complete = _marks(store)
    assert 1 <= complete < 12
    started = _started_unmarked(store, (3, 2, 2))
    print(f"seed {seed}: killed with {complete} blocks complete, {len(started)} started")
    assert len(started) <= 2
    out = _cli("run", config, kind, "--workers", "2", "--output", store, "--resume")
    assert f"{12 - complete} computed, {complete} reused" in out
    assert_stores_identical(reference, store)
    assert read_root_attrs(store)["run_sessions"] == 2


@pytest.fixture
def in_process_scheduler():
    """A threads-only LocalCluster in this process, used through its address."""
    from distributed import LocalCluster

    clusters = []

    def make(n_workers: int) -> str:
        cluster = LocalCluster(n_workers=n_workers, threads_per_worker=1, processes=False,
                               dashboard_address="127.0.0.1:0",
                               scheduler_kwargs={"dashboard": False})
        clusters.append(cluster)
        return cluster.scheduler_address

    yield make
    for cluster in clusters:
        cluster.close()


def test_workers_that_cannot_see_the_store(tmp_path, monkeypatch, in_process_scheduler):
    from gridflash import StoreError
    from gridflash.config._parser import load_config
    from gridflash.runner import run

    address = in_process_scheduler(1)
    monkeypatch.setattr("gridflash.runner._sees_store", lambda path: False)
    spec = load_config(write_config(tmp_path))
    with pytest.raises(StoreError, match="cannot see the store .* every worker shares") as info:
        run(spec, scheduler_address=address)
    assert "\n" not in str(info.value)
    assert read_root_attrs(tmp_path / "out.zarr")["run_state"] == "running"


def test_scheduler_without_workers(tmp_path, monkeypatch, in_process_scheduler):
    from gridflash import GridflashError
    from gridflash.config._parser import load_config
    from gridflash.runner import run

    monkeypatch.setattr("gridflash.runner._WORKER_TIMEOUT", 1.0)
    address = in_process_scheduler(0)
    with pytest.raises(GridflashError, match="has no workers after 1 s"):
        run(load_config(write_config(tmp_path)), scheduler_address=address)


def test_failed_write_is_one_line_and_leaves_the_run_unfinished(tmp_path, monkeypatch):
    """A full disk (ENOSPC from a block's write) stops the run; the store says it is running."""
    import errno

    import gridflash
    from gridflash import StoreError
    from gridflash.config._parser import load_config
    from gridflash.runner import run
    from gridflash.store import write_block

    def full_disk(path, plan, block, result):
        if block == (1, 1, 0):
            raise OSError(errno.ENOSPC, "No space left on device")
        write_block(path, plan, block, result)

    monkeypatch.setattr("gridflash.runner.write_block", full_disk)
    spec = load_config(write_config(tmp_path))
    with pytest.raises(StoreError, match=r"block \(1, 1, 0\).*No space left.*--resume") as info:
        run(spec)
    assert "\n" not in str(info.value)
    assert read_root_attrs(tmp_path / "out.zarr")["run_state"] == "running"
    with pytest.raises(StoreError, match="has not finished"):
        gridflash.open_table(tmp_path / "out.zarr")
    monkeypatch.undo()
    summary = run(spec, resume=True)
    assert summary.blocks_computed >= 1 and summary.blocks_reused + summary.blocks_computed == 4
