"""All benchmarks in one go: ``python benchmarks/run_all.py [--quick]``.

1. ``bench_kernel.py``: batch flash throughput per core (single-phase and two-phase cells), the
   per-cell loop through the public API and the ratio, iterations warm vs cold, a profile;
2. ``bench_runner.py``: whole ``gridflash run`` invocations on 1e6 cells (1.25e5 with
   ``--quick``): wall time, cells/s, 1 vs all workers, threads vs processes, peak memory of the
   process tree against a grid 8x smaller with the same chunks, and iterations warm vs cold on
   the bundled example;
3. ``bench_certified.py``: certified vs uncertified flash throughput in the same run, cost by
   stage, and the connate-water example's extra-trial and three-phase shares.

Each figure is printed as a ratio or a median within one process, with the core count beside it.
Not part of the test suite.
"""

from __future__ import annotations

import sys

import bench_certified
import bench_kernel
import bench_runner

if __name__ == "__main__":
    print("=" * 30, "kernel", "=" * 30)
    bench_kernel.main()
    print("\n" + "=" * 30, "runner", "=" * 30)
    bench_runner.main()
    print("\n" + "=" * 30, "certified", "=" * 30)
    bench_certified.main()
    sys.exit(0)
