"""Throughput of the batch flash kernel (one process, one core).

Run: ``python benchmarks/bench_kernel.py``. Prints, for the invented 8- and 3-component grids:
cells/s of the batch flash split into single-phase and two-phase cells, the per-cell loop through
the public API and the ratio, mean iterations warm vs cold, and a short profile. Every figure is
the median of several runs in this process.
"""

from __future__ import annotations

import cProfile
import io
import os
import pstats
import statistics
import time
from functools import partial

import numpy as np
from _fluids import grid, mixture

import gridflash


def timed(fn, repeat=5):
    times = []
    out = None
    for _ in range(repeat):
        t0 = time.perf_counter()
        out = fn()
        times.append(time.perf_counter() - t0)
    return statistics.median(times), out


def _loop(mix, cells):
    return [gridflash.flash(mix, pi, ti, zi) for pi, ti, zi in cells]


def main() -> None:
    print(f"cores: {os.cpu_count()}  numpy {np.__version__}  gridflash {gridflash.__version__}")
    for nc, shape in ((8, (100, 10, 21)), (3, (100, 10, 21))):
        mix = mixture(nc)
        p, t, z = grid(nc, *shape)
        n = p.size
        gridflash.flash(mix, p[:50], t[:50], z[:50])  # warm-up
        flash = gridflash.flash
        dt, r = timed(partial(flash, mix, p, t, z), repeat=5)
        two = r.phase_count == 2
        print(
            f"\n{nc} components, {n} cells ({two.mean():.0%} two-phase), converged "
            f"{r.converged.mean():.4%}"
        )
        print(f"  batch flash, all cells      : {n / dt:10.0f} cells/s")
        for label, sel in (("single-phase cells only", ~two), ("two-phase cells only", two)):
            d, _ = timed(partial(flash, mix, p[sel], t[sel], z[sel]), repeat=3)
            print(f"  batch flash, {label:14s}: {sel.sum() / d:10.0f} cells/s")
        # Per-cell loop through the public API on a sample, same algorithm.
        sample = np.random.default_rng(0).choice(n, 300, replace=False)
        cells = [(p[i], t[i], z[i]) for i in sample]
        d_loop, _ = timed(partial(_loop, mix, cells), repeat=3)
        loop_rate = sample.size / d_loop
        print(f"  per-cell loop (public API)  : {loop_rate:10.0f} cells/s")
        print(f"  batch / per-cell ratio      : {n / dt / loop_rate:10.1f}x")
        # Warm vs cold: each pressure slab warm-started from the previous slab's K-values.
        k = r.K.reshape(*shape, nc)
        k_init = np.full_like(k, np.nan)
        k_init[1:] = k[:-1]
        dw, w = timed(partial(flash, mix, p, t, z, k_init=k_init.reshape(n, nc)), repeat=3)
        same = np.array_equal(w.phase_count, r.phase_count)
        print(
            f"  mean iterations cold / warm : {r.iterations.mean():.2f} / "
            f"{w.iterations.mean():.2f}  ratio {r.iterations.mean() / w.iterations.mean():.2f}x"
            f"  (two-phase cells: {r.iterations[two].mean():.2f} / {w.iterations[two].mean():.2f})"
            f"  same phase counts: {same}"
        )
        print(f"  warm-started batch          : {n / dw:10.0f} cells/s")
        if nc == 8:
            prof = cProfile.Profile()
            prof.enable()
            gridflash.flash(mix, p, t, z)
            prof.disable()
            s = io.StringIO()
            pstats.Stats(prof, stream=s).sort_stats("tottime").print_stats(8)
            print("  profile (top functions by own time):")
            for line in s.getvalue().splitlines()[6:16]:
                print("   ", line[:150])
            _inside_the_kernel(mix, p, t, z, dt)


def _inside_the_kernel(mix, p, t, z, total):
    """Time of the compiled flash split by stage, via the public batch functions of each stage
    (cProfile cannot see inside one compiled call)."""
    from gridflash.thermo import phase_state, reduced_parameters, stability_test, wilson_ln_k

    model = mix.model

    def eos():
        sa, b = reduced_parameters(model, p, t)
        return sa, b, phase_state(model, z, sa, b).ln_phi

    d_eos, (sa, b, lnphi) = timed(eos, repeat=3)
    lnk = wilson_ln_k(model.tc, model.pc, model.omega, p, t)
    d_stab, _ = timed(partial(stability_test, model, sa, b, z, lnphi, lnk), repeat=3)
    d_prop, _ = timed(partial(gridflash.thermo.phase_properties, mix, p, t, z, np.ones(len(p))))
    print("  inside the compiled flash (same cells, stage by stage through the public functions):")
    for label, d in (
        ("EOS parameters + feed phase", d_eos),
        ("stability test (both trials)", d_stab),
        ("properties of one phase", d_prop),
    ):
        print(f"    {label:30s}: {d / total:6.1%} of the batch flash time")
    rest = total - d_eos - d_stab - 2 * d_prop
    print(f"    {'split of two-phase cells, rest':30s}: {rest / total:6.1%}")


if __name__ == "__main__":
    main()
