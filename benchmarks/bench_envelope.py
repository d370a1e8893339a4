"""Phase envelopes and MMP: throughput against the flash, measured in one process.

Run: ``python benchmarks/bench_envelope.py [--repeat N]``. Prints

- envelope points per second for the invented 8-component oil (and a 50/50 oil/gas mixture),
  every point checked by the flash either side (as ``phase_envelope`` does by default), and the
  ratio to the flash's cells per second on 20 000 cells of the invented mixing-line grid (one
  core, same process);
- the envelopes' added share of the run time of the bundled example grid
  (``configs/volatile_oil_co2.toml``, 20 x 4 x 11) scaled to 1e6 cells with its proportions
  (208 x 42 x 114): 114 envelopes against 1e6 flashes, from the measured seconds per envelope of
  the example's compositions and the measured flash rate on cells of the scaled grid (both run
  on the same workers, so the share does not depend on the core count);
- seconds for the first- and the multi-contact MMP (40 contacts) at one temperature (80 degC) of
  the bundled oil and gas, on one core.

The fluids are invented (not field data).
"""

from __future__ import annotations

import argparse
import statistics
import time
from pathlib import Path

import numpy as np
from _fluids import GAS_8, OIL_8, grid, mixture  # invented fluid (not field data)

import gridflash
from gridflash.config import load_config
from gridflash.thermo import first_contact_mmp, multi_contact_mmp, phase_envelope

ROOT = Path(__file__).resolve().parents[1]


def timed(fn, repeat):
    times = []
    out = None
    for _ in range(repeat):
        t0 = time.perf_counter()
        out = fn()
        times.append(time.perf_counter() - t0)
    return statistics.median(times), out


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeat", type=int, default=3)
    args = parser.parse_args()
    mix = mixture(8)
    # Warm-up (compilation or cache load).
    phase_envelope(mix, OIL_8)
    p, t, z = grid(8, 40, 25, 20)
    gridflash.flash(mix, p[:100], t[:100], z[:100])

    sec_flash, _ = timed(lambda: gridflash.flash(mix, p, t, z), args.repeat)
    cells_rate = p.size / sec_flash
    print(f"flash: {p.size} cells of the 8-component grid in {sec_flash:.3f} s = "
          f"{cells_rate:,.0f} cells/s (one core)")
    for name, feed in (("oil", OIL_8), ("50/50 oil/gas", 0.5 * OIL_8 + 0.5 * GAS_8)):
        sec, env = timed(lambda feed=feed: phase_envelope(mix, feed), args.repeat)
        sec_nc, _ = timed(lambda feed=feed: phase_envelope(mix, feed, check=False), args.repeat)
        rate = len(env) / sec
        print(f"envelope of the 8-component {name}: {len(env)} points in {sec * 1e3:.1f} ms "
              f"= {rate:,.0f} points/s = {rate / cells_rate:.2f} x the flash's cells/s "
              f"(without the flash check: {len(env) / sec_nc:,.0f} points/s, "
              f"{len(env) / sec_nc / cells_rate:.2f} x); status {env.status.name}")

    spec = load_config(ROOT / "configs" / "volatile_oil_co2.toml")
    ex_mix = spec.fluid.mixture()
    feeds = spec.composition.feed_array()
    sec_env, _ = timed(lambda: [phase_envelope(ex_mix, f) for f in feeds], args.repeat)
    per_env = sec_env / len(feeds)
    shape = (208, 42, 114)
    n_cells = int(np.prod(shape))
    pp = np.linspace(spec.pressure.values[0], spec.pressure.values[-1], shape[0])
    tt = np.linspace(spec.temperature.values[0], spec.temperature.values[-1], shape[1])
    rr = np.linspace(0.0, 1.0, shape[2])
    oil, gas = (np.array(dict(spec.streams)[s]) for s in spec.composition.streams)
    rng = np.random.default_rng(0)
    pick = rng.choice(n_cells, 20_000, replace=False)
    ip, it, ir = np.unravel_index(pick, shape)
    zc = (1 - rr[ir])[:, None] * oil + rr[ir][:, None] * gas
    sec_ex, _ = timed(lambda: gridflash.flash(ex_mix, pp[ip], tt[it], zc), args.repeat)
    ex_rate = pick.size / sec_ex
    run_seconds = n_cells / ex_rate
    env_seconds = shape[2] * per_env
    print(f"example grid scaled to {n_cells:,} cells {shape}: flash {ex_rate:,.0f} cells/s -> "
          f"{run_seconds:.1f} core-seconds; {shape[2]} envelopes x {per_env * 1e3:.1f} ms = "
          f"{env_seconds:.2f} core-seconds: added share {env_seconds / run_seconds:.1%} "
          "(target <= 25%)")

    t80 = 353.15
    sec_fc, fc = timed(lambda: first_contact_mmp(ex_mix, oil, gas, t80), 1)
    sec_mc, mc = timed(lambda: multi_contact_mmp(ex_mix, oil, gas, t80), 1)
    print(f"MMP of the bundled oil/gas at 80 degC, one core: first contact "
          f"{fc[0] / 1e5:.2f} bar in {sec_fc:.2f} s; multi-contact (40 contacts) "
          f"{mc.pressure / 1e5:.2f} bar in {sec_mc:.2f} s "
          f"({len(mc.pressures)} pressures)")


if __name__ == "__main__":
    main()
