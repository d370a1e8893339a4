"""The flash against its compiled ceiling (one process, one core).

Run: ``python benchmarks/bench_ceiling.py [--quick]``. Prints, measured in this run:

- the ceiling: a plain compiled loop evaluating the EOS parameters and ln phi of one phase per
  cell (``kernels.eos.reduced_cell`` + ``phase_cell``), in evaluations/s; a flash needs about ten
  such evaluations, so ceiling / 10 is the flash rate a kernel at the ceiling would reach;
- the batch flash on the mixed benchmark grid (invented 8-component oil + CO2-rich gas, ~26%
  two-phase) and on a mostly two-phase grid of the same fluid (pressures and temperatures inside
  its envelope), in cells/s per core and as a fraction of ceiling / 10;
- mean iterations on two-phase cells, cold vs warm-started slab by slab (``flash_slabs``).

Figures are medians of several runs; ratios are against the ceiling measured in the same run.
Times are the process's CPU time (``time.process_time``; everything here runs in one thread),
so that a machine shared with other work -- its load average far above its core count -- gives
the rate per core the code reaches, not the share of a core it was given; the wall-clock rate of
the cold batch is printed beside it for comparison.
"""

from __future__ import annotations

import statistics
import sys
import time
from functools import partial

import numpy as np
from _fluids import GAS_8, OIL_8, mixture
from _stages import stage_table
from numba import njit

import gridflash
from gridflash.thermo._flash import _flash_arrays, flash_slabs
from gridflash.thermo.kernels.eos import phase_cell, reduced_cell

EVALUATIONS_PER_FLASH = 10  # stability (two trials) + split, typical converged two-phase cell


@njit(cache=False, nogil=True)
def _lnphi_loop(ac, m, b, tc, omk, d1, d2, p, t, z, out):
    nc = z.shape[1]
    sqrt_a = np.empty(nc)
    b_i = np.empty(nc)
    ln_phi = np.empty(nc)
    psi = np.empty(nc)
    acc = 0.0
    for c in range(p.shape[0]):
        reduced_cell(ac, m, b, tc, p[c], t[c], sqrt_a, b_i)
        zf, _, _ = phase_cell(z[c], sqrt_a, b_i, omk, d1, d2, 0, ln_phi, psi)
        acc += zf + ln_phi[0]
    out[0] = acc


def _median_time(fn, repeat, clock=time.process_time):
    times = []
    for _ in range(repeat):
        t0 = clock()
        fn()
        times.append(clock() - t0)
    return statistics.median(times)


def _grid(p_range, t_range, shape):
    p = np.linspace(*p_range, shape[0])
    t = np.linspace(*t_range, shape[1])
    r = np.linspace(0.0, 1.0, shape[2])
    pp, tt, rr = np.meshgrid(p, t, r, indexing="ij")
    z = (1.0 - rr.ravel()[:, None]) * OIL_8 + rr.ravel()[:, None] * GAS_8
    return pp.ravel(), tt.ravel(), z


def main(quick: bool = False) -> None:
    repeat = 3 if quick else 5
    mix = mixture(8)
    model = mix.model
    grids = {
        "mixed (benchmark grid)": ((1e6, 50e6), (290.0, 450.0), (100, 10, 21)),
        "mostly two-phase": ((2e6, 14e6), (330.0, 420.0), (60, 10, 21)),
    }
    if quick:
        grids = {k: (pr, tr, (s[0] // 4, s[1], s[2])) for k, (pr, tr, s) in grids.items()}

    p, t, z = _grid((1e6, 50e6), (290.0, 450.0), (100, 10, 21))
    out = np.empty(1)
    args = (model.ac, model.m, model.b, model.tc, model.one_minus_k, model.delta1, model.delta2)
    _lnphi_loop(*args, p[:10], t[:10], z[:10], out)  # compile
    d = _median_time(lambda: _lnphi_loop(*args, p, t, z, out), repeat)
    ceiling = p.size / d
    flash_ceiling = ceiling / EVALUATIONS_PER_FLASH
    print(f"gridflash {gridflash.__version__}, 8 components, one core")
    print(
        f"ceiling: compiled ln phi loop {ceiling:12.0f} evaluations/s "
        f"-> {flash_ceiling:10.0f} flashes/s at {EVALUATIONS_PER_FLASH} evaluations per flash"
    )

    for label, (p_range, t_range, shape) in grids.items():
        p, t, z = _grid(p_range, t_range, shape)
        gridflash.flash(mix, p[:20], t[:20], z[:20])
        d = _median_time(partial(gridflash.flash, mix, p, t, z), repeat)
        r = gridflash.flash(mix, p, t, z)
        two = r.phase_count == 2
        rate = p.size / d
        print(
            f"\n{label}: {p.size} cells, {two.mean():.0%} two-phase, "
            f"converged {r.converged.mean():.4%}"
        )
        wall = p.size / _median_time(partial(gridflash.flash, mix, p, t, z), repeat,
                                     time.perf_counter)
        print(
            f"  batch flash (cold)          : {rate:10.0f} cells/s per core "
            f"= {rate / flash_ceiling:5.2f} x ceiling/{EVALUATIONS_PER_FLASH} "
            f"(wall clock: {wall:.0f} cells/s)"
        )
        if two.any():
            pt, tt, zt = p[two], t[two], z[two]
            d2 = _median_time(partial(gridflash.flash, mix, pt, tt, zt), max(1, repeat - 2))
            print(f"  two-phase cells only        : {two.sum() / d2:10.0f} cells/s per core")
        # Warm starts slab by slab along pressure, as a run's block sweep does.
        warm = flash_slabs(mix, p, t, z, shape[1] * shape[2])
        same = np.array_equal(warm.phase_count, r.phase_count)
        beta_diff = np.nanmax(np.abs(warm.vapour_fraction - r.vapour_fraction))
        ratio = r.iterations[two].mean() / max(warm.iterations[two].mean(), 1e-300)
        print(
            f"  iterations on two-phase cells cold / warm: {r.iterations[two].mean():.2f} / "
            f"{warm.iterations[two].mean():.2f} = {ratio:.2f}x  (same phase counts: {same}, "
            f"max |d vapour fraction| {beta_diff:.1e})"
        )
        d_warm = _median_time(partial(flash_slabs, mix, p, t, z, shape[1] * shape[2]), repeat)
        d_plain = _median_time(
            partial(_flash_arrays, mix, p, t, z, None, shape[1] * shape[2], certify=False), repeat
        )
        print(
            f"  warm-started slab by slab   : {p.size / d_warm:10.0f} cells/s per core "
            f"= {p.size / d_warm / flash_ceiling:5.2f} x ceiling/{EVALUATIONS_PER_FLASH}; without "
            f"certification {p.size / d_plain:10.0f} cells/s (certification costs "
            f"{1 - d_plain / d_warm:.0%} of the warm time)"
        )
        print("  iterations by stage (stability: Wilson trials and the feed's extended test):")
        print("\n".join(stage_table(mix, p, t, z, shape[1] * shape[2])))


if __name__ == "__main__":
    main(quick="--quick" in sys.argv[1:])
