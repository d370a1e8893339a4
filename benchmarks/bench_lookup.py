"""Table lookups per second against exact warm-started flashes per second, in one process.

Run: ``python benchmarks/bench_lookup.py [--quick]``. Builds a table of the invented 8-component
benchmark fluid (not field data; 30 pressures x 12 temperatures x 21 mixing ratios = 7 560
cells, local threads) in a temporary folder, then times, on the same random points inside it:

- ``gridflash.lookup`` on the loaded table (multilinear interpolation of every default field,
  phase-boundary flags), in one batch and point by point;
- the same with ``refine=True`` (exact flashes at the flagged points);
- the baseline: ``gridflash.flash`` of the same points warm-started from the stored K-values of
  the nearest grid node (cold where that node is single-phase), in one batch and point by point,
  and cold for reference.

Printed as points per second and as the ratio lookup / warm-started flash. Timings are the best
of ``--repeat`` runs; one core for the flash kernel (numba, no parallel loop), the lookup is
numpy on one core too.
"""

from __future__ import annotations

import argparse
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

import gridflash
from gridflash.config._parser import load_config
from gridflash.runner import run

sys.path.insert(0, str(Path(__file__).resolve().parent))
from _fluids import GAS_8, OIL_8, config_text  # noqa: E402 - invented fluid


def _best(fn, repeat: int) -> float:
    best = np.inf
    for _ in range(repeat):
        start = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - start)
    return best


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="fewer points")
    parser.add_argument("--repeat", type=int, default=3)
    args = parser.parse_args()
    n_points = 20_000 if args.quick else 100_000
    n_single = 200 if args.quick else 1_000

    with tempfile.TemporaryDirectory() as folder:
        config = Path(folder) / "bench.toml"
        config.write_text(
            config_text(
                (30, 12, 21),
                pressure=(20.0, 450.0, "bar"),
                temperature=(300.0, 440.0),
                output="bench.zarr",
            )
        )
        start = time.perf_counter()
        summary = run(load_config(config))
        print(
            f"table: {summary.cells_total:,} cells built in {time.perf_counter() - start:.1f} s"
            f" ({summary.stats.two_phase:,} two-phase)"
        )
        table = gridflash.open_table(summary.output).load()

        rng = np.random.default_rng(2024)
        p = rng.uniform(table.pressure.values[0], table.pressure.values[-1], n_points)
        t = rng.uniform(table.temperature.values[0], table.temperature.values[-1], n_points)
        r = rng.uniform(0.0, 1.0, n_points)
        mixture = gridflash.store._writer.mixture_from_store(table)
        z = (1.0 - r)[:, None] * OIL_8 + r[:, None] * GAS_8
        # nearest-node K-values: the warm start an exact solver would take from the table
        ip = np.abs(p[:, None] - table.pressure.values).argmin(axis=1)
        it = np.abs(t[:, None] - table.temperature.values).argmin(axis=1)
        ir = np.abs(r[:, None] - table.mixing_ratio.values).argmin(axis=1)
        k_near = table.k_value.values[ip, it, ir]

        gridflash.lookup(table, p[:10], t[:10], r[:10], refine=True)  # warm up
        gridflash.flash(mixture, p[:10], t[:10], z[:10], k_init=k_near[:10])
        out = gridflash.lookup(table, p, t, r)
        flagged = int((out.boundary | out.label_change).sum())

        t_lookup = _best(lambda: gridflash.lookup(table, p, t, r), args.repeat)
        t_refine = _best(lambda: gridflash.lookup(table, p, t, r, refine=True), args.repeat)
        t_warm = _best(lambda: gridflash.flash(mixture, p, t, z, k_init=k_near), args.repeat)
        t_cold = _best(lambda: gridflash.flash(mixture, p, t, z), args.repeat)

        def one_by_one_lookup() -> None:
            for i in range(n_single):
                gridflash.lookup(table, p[i], t[i], r[i])

        def one_by_one_flash() -> None:
            for i in range(n_single):
                gridflash.flash(mixture, p[i], t[i], z[i], k_init=k_near[i])

        t_lookup1 = _best(one_by_one_lookup, args.repeat)
        t_flash1 = _best(one_by_one_flash, args.repeat)

    rate = {
        "lookup": n_points / t_lookup,
        "lookup_refine": n_points / t_refine,
        "warm": n_points / t_warm,
        "cold": n_points / t_cold,
        "lookup1": n_single / t_lookup1,
        "flash1": n_single / t_flash1,
    }
    print(
        f"points: {n_points:,} random points inside the table, {flagged:,} "
        f"({100.0 * flagged / n_points:.1f}%) next to a phase boundary"
    )
    print("batch (one call for all points):")
    print(f"  lookup (interpolation + flags)     {rate['lookup']:>12,.0f} points/s")
    print(f"  lookup, refine=True                {rate['lookup_refine']:>12,.0f} points/s")
    print(f"  exact flash, warm-started          {rate['warm']:>12,.0f} points/s")
    print(f"  exact flash, cold                  {rate['cold']:>12,.0f} points/s")
    print(f"  ratio lookup / warm-started flash  {rate['lookup'] / rate['warm']:>12.1f} x")
    print(f"  ratio lookup(refine) / warm flash  {rate['lookup_refine'] / rate['warm']:>12.1f} x")
    print(f"one point per call ({n_single:,} calls):")
    print(f"  lookup                             {rate['lookup1']:>12,.0f} calls/s")
    print(f"  exact flash, warm-started          {rate['flash1']:>12,.0f} calls/s")
    print(f"  ratio lookup / warm-started flash  {rate['lookup1'] / rate['flash1']:>12.2f} x")


if __name__ == "__main__":
    main()
