"""Wall time and peak memory of whole ``gridflash run`` invocations (8 components, 1e6 cells).

Run: ``python benchmarks/bench_runner.py [--quick] [--repeat N] [--memory]``. For each case it
starts ``gridflash run`` as a subprocess with local worker threads (the default; or processes,
or one worker), samples the resident memory (RSS) of the whole process tree (driver, workers,
everything they start) every 50 ms, and prints wall time, cells/s and peak RSS; the all-workers
and 1-worker cases, whose ratio is the scaling figure, are run ``--repeat`` times (default 3)
and their medians printed. Baselines measured in this same process:

- kernel: one direct ``gridflash.flash`` call on 20 000 cells of the same grid (one core), so the
  run's cells/s is printed as a ratio to ``cores x`` the kernel's rate;
- memory: the same chunks on a grid 8x smaller, so the peak-RSS ratio shows whether memory
  follows the chunk size (ratio near 1) or the grid size (ratio near 8).

``--memory`` runs only the memory-scaling check: 1e7 cells (100 x 100 x 1000) and 1e6 cells
(100 x 100 x 100) with the same chunks (the 1e7 grid's default, 100 x 25 x 26), and prints
both peak RSS figures and their ratio (near 1 when memory follows the chunk size, near 10 if
it followed the grid size).

The fluid is an invented 8-component volatile oil / CO2-rich gas (not field data). Also
printed: mean iterations per cell warm vs cold on the bundled example
``configs/volatile_oil_co2.toml``.
"""

from __future__ import annotations

import argparse
import os
import re
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
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


def run_case(folder: Path, shape, chunks: str, extra=()) -> dict:
    config = write_config(folder, shape, chunks)
    shutil.rmtree(folder / "out.zarr", ignore_errors=True)
    cmd = [sys.executable, "-m", "gridflash.cli", "run", str(config), *extra]
    start = time.perf_counter()
    proc = subprocess.Popen(cmd, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    ps = psutil.Process(proc.pid)
    peak = 0
    while proc.poll() is None:
        peak = max(peak, tree_rss(ps))
        time.sleep(0.05)
    wall = time.perf_counter() - start
    out, err = proc.communicate()
    if proc.returncode:
        raise SystemExit(f"gridflash run failed: {err}")
    attrs = gridflash.store.read_root_attrs(folder / "out.zarr")
    rate = re.search(r"computing the chunks [\d.]+ s = ([\d,]+) cells/s", out)
    return {
        "wall": wall,
        "peak": peak,
        "cells": int(np.prod(shape)),
        "run_rate": float(rate[1].replace(",", "")) if rate else float("nan"),
        "chunks": attrs["chunks"],
        "blocks": attrs["blocks_total"],
        "mean_iterations": attrs["mean_iterations"],
        "unconverged": attrs["cells_unconverged"],
        "store_mb": sum(f.stat().st_size for f in (folder / "out.zarr").rglob("*") if f.is_file())
        / 1e6,
    }


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
    parser.add_argument("--quick", action="store_true", help="1.25e5 cells instead of 1e6")
    parser.add_argument(
        "--repeat",
        type=int,
        default=3,
        metavar="N",
        help="runs of the all-workers and 1-worker cases (medians; default 3)",
    )
    parser.add_argument("--memory", action="store_true",
                        help="only the 1e6 vs 1e7-cell peak-RSS ratio")
    args = parser.parse_args()
    if args.memory:
        memory_scaling()
        return
    cores = os.cpu_count() or 1
    big = (50, 50, 50) if args.quick else (100, 100, 100)
    small = (big[0], big[1] // 2, big[2] // 4)  # 8x fewer cells, same chunks
    print(
        f"cores: {cores}  gridflash {gridflash.__version__}  grid {big} = "
        f"{int(np.prod(big)):,} cells, 8 components, one local worker per core"
    )
    base = kernel_rate()
    print(f"baseline: direct flash on 20,000 cells, one core: {base:,.0f} cells/s")
    cases = [
        ("config default chunks", big, ""),
        ("config default chunks, --processes", big, "", ["--processes"]),
        ("config default chunks, 1 worker", big, "", ["--workers", "1"]),
        (
            "chunks 13 x 50 x 100 (pressure, the sweep axis, cut in 8)",
            big,
            "chunks = { pressure = 13, temperature = 50, composition = 100 }",
        ),
        (
            "chunks 13 x 50 x 100, cold",
            big,
            "chunks = { pressure = 13, temperature = 50, composition = 100 }\nwarm_start = false",
        ),
    ]
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        results = {}
        scaling = ("config default chunks", "config default chunks, 1 worker")
        for label, shape, chunks, *extra in cases:
            runs = [
                run_case(folder, shape, chunks, *extra)
                for _ in range(args.repeat if label in scaling else 1)
            ]
            r = {
                **runs[0],
                **{
                    key: statistics.median(x[key] for x in runs)
                    for key in ("wall", "peak", "run_rate")
                },
            }
            results[label] = r
            print(
                f"\n{label}: chunks {r['chunks']} ({r['blocks']} blocks); load average "
                f"{os.getloadavg()[0]:.2f} after the run"
            )
            print(
                f"  wall time {r['wall']:.1f} s (process start to exit), "
                f"{r['cells'] / r['wall']:,.0f} cells/s overall, {r['run_rate']:,.0f} cells/s "
                f"while computing = {r['run_rate'] / (cores * base):.2f} x ({cores} x kernel)"
            )
            print(
                f"  peak RSS of the process tree {r['peak'] / 2**20:,.0f} MiB; store "
                f"{r['store_mb']:.0f} MB on disk; mean iterations {r['mean_iterations']:.2f}; "
                f"unconverged {r['unconverged']}"
            )
            if len(runs) > 1:
                walls = ", ".join(f"{x['wall']:.1f}" for x in runs)
                print(f"  (medians of {len(runs)} runs; wall times {walls} s)")
        one, two = results["config default chunks, 1 worker"], results["config default chunks"]
        print(
            f"\nscaling: {cores} workers / 1 worker, wall time ratio "
            f"{one['wall'] / two['wall']:.2f}, compute-rate ratio "
            f"{two['run_rate'] / one['run_rate']:.2f}"
        )
        ref = results["config default chunks"]
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
