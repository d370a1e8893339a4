"""Wall time and peak memory of whole ``gridflash run`` invocations (8 components, 1e6 / 1e7 cells).

Run: ``python benchmarks/bench_runner.py [--quick] [--repeat N] [--no-large]``. For each case it
starts ``gridflash run`` as a subprocess -- with local worker threads (the default), local worker
processes, an existing local ``dask.distributed`` cluster (a scheduler and one single-thread
worker per core, started with dask's own CLI before the run, so its start-up is not in the run's
time), or one worker -- samples the resident memory (RSS) of the whole process tree (driver,
workers, the cluster's processes, everything they start) every 50 ms, and prints wall time,
cells/s and peak RSS. Every run includes the zarr writes and the saturation-line post-step.
The threads, processes, cluster and 1-worker cases are run ``--repeat`` times (default 3) and
their medians printed. Ratios printed, each against a baseline measured in this same process:

- kernel: one direct ``gridflash.flash`` call on 20 000 cells of the same grid (one core), so the
  run's cells/s is printed as a ratio to ``cores x`` the kernel's rate;
- processes / threads and cluster / threads: cells/s while computing and over the whole wall
  time (target >= 0.9);
- scaling with the grid: the 1e7-cell grid (each axis ~2.15x longer, default chunks) against the
  1e6-cell one, as the ratio of wall time per cell (1.0: a run costs the same per cell at both
  sizes) and of peak RSS (target: 1e7 cells in <= 60 s on 2 cores, peak RSS < 2 GiB);
- memory: the same chunks on a grid 8x smaller, so the peak-RSS ratio shows whether memory
  follows the chunk size (ratio near 1) or the grid size (ratio near 8).

``--memory`` runs only the memory-scaling check: 1e7 cells (100 x 100 x 1000) and 1e6 cells
(100 x 100 x 100) with the same chunks (the 1e7 grid's default, 100 x 25 x 26), and prints
both peak RSS figures and their ratio (near 1 when memory follows the chunk size, near 10 if
it followed the grid size).

The machine is shared: absolute times are noisy (the load average is printed after each run),
ratios within one run of this script much less so. Each run's CPU time (user + system, of the
run and every process it starts; for the cluster case, of the cluster's processes too, start-up
and idle time included) is printed as well: divided by the cores it is the wall time the run
would take on otherwise idle cores that it kept busy, the figure to hold against the
1e7-cells-in-60-s target when the load average is far above the core count. The fluid is an
invented 8-component volatile oil / CO2-rich gas (not field data). Also printed: mean
iterations per cell warm vs cold on the bundled example ``configs/volatile_oil_co2.toml``.
"""

from __future__ import annotations

import argparse
import os
import re
import resource
import shutil
import socket
import statistics
import subprocess
import sys
import tempfile
import time
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path

import numpy as np
import psutil
from _fluids import GAS_8, KIJ_8, NAMES_8, OIL_8, config_text  # invented fluid (not field data)

import gridflash

ROOT = Path(__file__).resolve().parents[1]


def write_config(folder: Path, shape: tuple[int, int, int], chunks: str) -> Path:
    path = folder / "bench.toml"
    path.write_text(config_text(shape, run_extra=chunks))
    return path


def tree_rss(proc: psutil.Process) -> int:
    total = 0
    for p in [proc, *proc.children(recursive=True)]:
        try:
            total += p.memory_info().rss
        except psutil.Error:
            pass
    return total


def run_case(folder: Path, shape, chunks: str, extra=(), others=()) -> dict:
    """One ``gridflash run``; ``others``: more processes (a cluster's) whose RSS counts too."""
    config = write_config(folder, shape, chunks)
    shutil.rmtree(folder / "out.zarr", ignore_errors=True)
    cmd = [sys.executable, "-m", "gridflash.cli", "run", str(config), *extra]
    cpu0 = _children_cpu()
    start = time.perf_counter()
    proc = subprocess.Popen(cmd, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    trees = [psutil.Process(proc.pid), *(psutil.Process(p.pid) for p in others)]
    peak = 0
    while proc.poll() is None:
        peak = max(peak, sum(tree_rss(t) for t in trees))
        time.sleep(0.05)
    wall = time.perf_counter() - start
    out, err = proc.communicate()
    cpu = _children_cpu() - cpu0
    if proc.returncode:
        raise SystemExit(f"gridflash run failed: {err}")
    attrs = gridflash.store.read_root_attrs(folder / "out.zarr")
    rate = re.search(r"computing the chunks ([\d.]+) s = ([\d,]+) cells/s", out)
    return {
        "wall": wall,
        "cpu": cpu,
        "peak": peak,
        "cells": int(np.prod(shape)),
        "compute": float(rate[1]) if rate else float("nan"),
        "run_rate": float(rate[2].replace(",", "")) if rate else float("nan"),
        "chunks": attrs["chunks"],
        "blocks": attrs["blocks_total"],
        "mean_iterations": attrs["mean_iterations"],
        "unconverged": attrs["cells_unconverged"],
        "store_mb": sum(f.stat().st_size for f in (folder / "out.zarr").rglob("*") if f.is_file())
        / 1e6,
    }


def _children_cpu() -> float:
    """CPU seconds (user + system) of this process's waited-for children and theirs."""
    usage = resource.getrusage(resource.RUSAGE_CHILDREN)
    return usage.ru_utime + usage.ru_stime


def _free_port() -> int:
    with socket.socket() as sock:
        sock.bind(("127.0.0.1", 0))
        return sock.getsockname()[1]


@contextmanager
def local_cluster(folder: Path, n_workers: int) -> Iterator[tuple[str, list]]:
    """A dask scheduler and ``n_workers`` single-thread workers on loopback (dask's own CLI)."""
    from distributed import Client

    address = f"tcp://127.0.0.1:{_free_port()}"
    port = address.rsplit(":", 1)[1]
    log = open(folder / "dask.log", "a")  # noqa: SIM115 - closed below
    procs = [subprocess.Popen(
        [sys.executable, "-m", "dask", "scheduler", "--no-dashboard", "--host", "127.0.0.1",
         "--port", port], stdout=log, stderr=log)]
    procs += [subprocess.Popen(
        [sys.executable, "-m", "dask", "worker", address, "--host", "127.0.0.1", "--nthreads",
         "1", "--no-dashboard", "--no-nanny", "--death-timeout", "60"], stdout=log, stderr=log)
        for _ in range(n_workers)]
    try:
        with Client(address, timeout=30) as client:
            client.wait_for_workers(n_workers, timeout=60)
        yield address, procs
    finally:
        for proc in reversed(procs):
            proc.terminate()
        for proc in procs:
            try:
                proc.wait(timeout=10)
            except subprocess.TimeoutExpired:
                proc.kill()
                proc.wait()
        log.close()


def cluster_case(folder: Path, shape, chunks: str, cores: int) -> dict:
    """A run on a fresh local dask.distributed cluster of one single-thread worker per core."""
    cpu0 = _children_cpu()
    with local_cluster(folder, cores) as (address, procs):
        r = run_case(folder, shape, chunks, ["--scheduler", address], others=procs)
    # The workers' CPU counts once they have exited (their start-up and idle time included).
    return {**r, "cpu": _children_cpu() - cpu0}


def print_case(label: str, r: dict, runs: list[dict], cores: int, base: float) -> None:
    print(
        f"\n{label}: chunks {r['chunks']} ({r['blocks']} blocks); load average "
        f"{os.getloadavg()[0]:.2f} after the run"
    )
    print(
        f"  wall time {r['wall']:.1f} s (process start to exit), "
        f"{r['cells'] / r['wall']:,.0f} cells/s overall; computing the chunks {r['compute']:.1f} s"
        f" = {r['run_rate']:,.0f} cells/s = {r['run_rate'] / (cores * base):.2f} x ({cores} x "
        f"kernel); the rest (start-up, store creation, saturation lines, statistics) "
        f"{r['wall'] - r['compute']:.1f} s"
    )
    print(
        f"  CPU time of the process tree {r['cpu']:.1f} s = {r['cpu'] / cores:.1f} s of wall "
        f"time on {cores} otherwise idle cores ({r['cells'] / r['cpu']:,.0f} cells per "
        "CPU-second)"
    )
    print(
        f"  peak RSS of the process tree {r['peak'] / 2**20:,.0f} MiB; store "
        f"{r['store_mb']:.0f} MB on disk; mean iterations {r['mean_iterations']:.2f}; "
        f"unconverged {r['unconverged']}"
    )
    if len(runs) > 1:
        walls = ", ".join(f"{x['wall']:.1f}" for x in runs)
        print(f"  (medians of {len(runs)} runs; wall times {walls} s)")


def kernel_rate() -> float:
    """Cells/s of one direct flash call on 20 000 cells of the benchmark grid (one core)."""
    mix = gridflash.Mixture(NAMES_8, kij=KIJ_8)
    pp, tt, rr = np.meshgrid(
        np.linspace(1e6, 5e7, 100),
        np.linspace(290.0, 450.0, 10),
        np.linspace(0.0, 1.0, 20),
        indexing="ij",
    )
    z = (1.0 - rr.ravel()[:, None]) * OIL_8 + rr.ravel()[:, None] * GAS_8
    p, t = pp.ravel(), tt.ravel()
    gridflash.flash(mix, p[:100], t[:100], z[:100])  # compile / warm up
    start = time.perf_counter()
    gridflash.flash(mix, p, t, z)
    return p.size / (time.perf_counter() - start)


def iterations_warm_vs_cold(folder: Path) -> tuple[float, float]:
    config = ROOT / "configs" / "volatile_oil_co2.toml"
    out = {}
    for label, extra in (("warm", []), ("cold", ["--no-warm-start"])):
        store = folder / f"example_{label}.zarr"
        subprocess.run(
            [
                sys.executable,
                "-m",
                "gridflash.cli",
                "run",
                str(config),
                "-q",
                "--output",
                str(store),
                *extra,
            ],
            check=True,
        )
        out[label] = gridflash.store.read_root_attrs(store)["mean_iterations"]
    return out["warm"], out["cold"]


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="1.25e5 and 1.25e6 cells instead "
                        "of 1e6 and 1e7")
    parser.add_argument(
        "--repeat",
        type=int,
        default=3,
        metavar="N",
        help="runs of the threads, processes, cluster and 1-worker cases (medians; default 3)",
    )
    parser.add_argument("--no-large", action="store_true", help="skip the 1e7-cell run")
    parser.add_argument("--memory", action="store_true",
                        help="only the memory-scaling check (1e6 and 1e7 cells, peak RSS)")
    args = parser.parse_args()
    if args.memory:
        memory_scaling()
        return
    cores = os.cpu_count() or 1
    big = (50, 50, 50) if args.quick else (100, 100, 100)
    large = (108, 108, 107) if args.quick else (215, 215, 216)  # ~10x the cells of big
    small = (big[0], big[1] // 2, big[2] // 4)  # 8x fewer cells, same chunks
    print(
        f"cores: {cores}  gridflash {gridflash.__version__}  grid {big} = "
        f"{int(np.prod(big)):,} cells, 8 components, one local worker per core"
    )
    base = kernel_rate()
    print(f"baseline: direct flash on 20,000 cells, one core: {base:,.0f} cells/s")
    threads, processes, cluster, one = (
        "threads (config default chunks)",
        "processes (--processes)",
        f"local dask.distributed cluster ({cores} single-thread workers, --scheduler)",
        "threads, 1 worker",
    )
    cases = [
        (threads, big, "", []),
        (processes, big, "", ["--processes"]),
        (cluster, big, "", None),
        (one, big, "", ["--workers", "1"]),
        (
            "chunks 13 x 50 x 100 (pressure, the sweep axis, cut in 8)",
            big,
            "chunks = { pressure = 13, temperature = 50, composition = 100 }",
            [],
        ),
        (
            "chunks 13 x 50 x 100, cold",
            big,
            "chunks = { pressure = 13, temperature = 50, composition = 100 }\nwarm_start = false",
            [],
        ),
    ]
    if not args.no_large:
        cases.append((f"threads, {int(np.prod(large)):,} cells", large, "", []))
    repeated = (threads, processes, cluster, one)
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        results = {}
        for label, shape, chunks, extra in cases:
            runs = [
                cluster_case(folder, shape, chunks, cores) if extra is None
                else run_case(folder, shape, chunks, extra)
                for _ in range(args.repeat if label in repeated else 1)
            ]
            r = {
                **runs[0],
                **{
                    key: statistics.median(x[key] for x in runs)
                    for key in ("wall", "cpu", "peak", "run_rate", "compute")
                },
            }
            results[label] = r
            print_case(label, r, runs, cores, base)
        ref = results[threads]
        print()
        for label in (processes, cluster):
            r = results[label]
            print(
                f"{label.split(' (')[0]} / threads: cells/s while computing "
                f"{r['run_rate'] / ref['run_rate']:.2f}, over the wall time "
                f"{ref['wall'] / r['wall']:.2f}, per CPU-second {ref['cpu'] / r['cpu']:.2f} "
                "(target >= 0.9)"
            )
        one_r = results[one]
        print(
            f"scaling: {cores} workers / 1 worker, wall time ratio "
            f"{one_r['wall'] / ref['wall']:.2f}, compute-rate ratio "
            f"{ref['run_rate'] / one_r['run_rate']:.2f}"
        )
        if not args.no_large:
            r = results[f"threads, {int(np.prod(large)):,} cells"]
            per_cell = (r["wall"] / r["cells"]) / (ref["wall"] / ref["cells"])
            cpu_per_cell = (r["cpu"] / r["cells"]) / (ref["cpu"] / ref["cells"])
            print(
                f"grid scaling: {r['cells']:,} vs {ref['cells']:,} cells: wall time "
                f"{r['wall']:.1f} s vs {ref['wall']:.1f} s, per cell ratio {per_cell:.2f}; CPU "
                f"time {r['cpu']:.1f} s vs {ref['cpu']:.1f} s, per cell ratio {cpu_per_cell:.2f} "
                f"(CPU / {cores} cores: {r['cpu'] / cores:.1f} s); "
                f"peak RSS {r['peak'] / 2**30:.2f} GiB vs {ref['peak'] / 2**30:.2f} GiB, ratio "
                f"{r['peak'] / ref['peak']:.2f} (targets: 1e7 cells <= 60 s on 2 cores, "
                "< 2 GiB)"
            )
        same = ", ".join(
            f"{d} = {c}"
            for d, c in zip(("pressure", "temperature", "composition"), ref["chunks"], strict=True)
        )
        small_run = run_case(folder, small, f"chunks = {{ {same} }}")
        print(
            f"\nmemory baseline: same default chunks on {int(np.prod(small)):,} cells: peak "
            f"{small_run['peak'] / 2**20:,.0f} MiB; ratio big/small grid = "
            f"{ref['peak'] / small_run['peak']:.2f} for {np.prod(big) / np.prod(small):.0f}x "
            "the cells"
        )
        warm, cold = iterations_warm_vs_cold(folder)
        print(
            f"\nconfigs/volatile_oil_co2.toml mean iterations per cell: warm {warm:.2f}, cold "
            f"{cold:.2f}, ratio cold/warm {cold / warm:.2f}"
        )


def memory_scaling() -> None:
    """Peak RSS of the whole run (driver, workers, saturation step) at 1e6 and 1e7 cells, with
    the same chunk lengths (the 1e7 grid's defaults), so the ratio shows what grows with the
    grid rather than with the chunk."""
    chunks = "chunks = { pressure = 100, temperature = 25, composition = 26 }"
    shapes = {"1e7": (100, 100, 1000), "1e6": (100, 100, 100)}
    peaks = {}
    with tempfile.TemporaryDirectory() as tmp:
        for label, shape in shapes.items():
            r = run_case(Path(tmp), shape, chunks)
            peaks[label] = r["peak"]
            print(f"{label} cells {shape}: chunks {r['chunks']} ({r['blocks']} blocks), wall "
                  f"{r['wall']:.1f} s, peak RSS of the process tree {r['peak'] / 2**20:,.0f} MiB")
    print(f"peak RSS ratio 1e7 / 1e6 cells, same chunks: {peaks['1e7'] / peaks['1e6']:.2f} "
          "(1 = bounded by the chunks; 10 = proportional to the grid)")


if __name__ == "__main__":
    main()
