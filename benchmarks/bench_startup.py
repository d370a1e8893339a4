"""CPU time of the command line's start-up: ``gridflash --version`` / ``--help`` / ``run --help``.

Run: ``python benchmarks/bench_startup.py [--repeat N]``. Each command is started N times
(default 5) as ``python -m gridflash.cli ...`` and its CPU time (user + system, from the
children's resource usage) is measured; the medians are printed, with two baselines measured in
this same process: a bare ``python -c pass`` (the interpreter's own start-up) and
``python -c "import gridflash.runner"`` (everything a run imports: numba, dask, xarray, zarr),
so the figures read as ratios to what start-up cannot avoid and to what lazy imports save.
"""

from __future__ import annotations

import argparse
import os
import resource
import statistics
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def cpu_seconds(args: list[str]) -> float:
    """User + system CPU seconds of one child process running ``python *args``."""
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    env = {**os.environ, "PYTHONPATH": str(ROOT)}
    subprocess.run([sys.executable, *args], check=True, capture_output=True, env=env)
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    return (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeat", type=int, default=5, metavar="N")
    args = parser.parse_args()
    cases = {
        "python -c pass (baseline)": ["-c", "pass"],
        "gridflash --version": ["-m", "gridflash.cli", "--version"],
        "gridflash --help": ["-m", "gridflash.cli", "--help"],
        "gridflash run --help": ["-m", "gridflash.cli", "run", "--help"],
        "import gridflash.runner (baseline)": ["-c", "import gridflash.runner"],
    }
    medians = {}
    for label, command in cases.items():
        medians[label] = statistics.median(cpu_seconds(command) for _ in range(args.repeat))
    bare = medians["python -c pass (baseline)"]
    full = medians["import gridflash.runner (baseline)"]
    print(f"CPU seconds (user + system), median of {args.repeat} runs; load average "
          f"{os.getloadavg()[0]:.2f}")
    for label, seconds in medians.items():
        print(f"  {label:<36} {seconds:6.3f} s  = {seconds / bare:5.1f} x bare python, "
              f"{seconds / full:5.2f} x the full import")


if __name__ == "__main__":
    main()
