"""Cost of certification: certified vs uncertified flash in one process, one core.

Run: ``python benchmarks/bench_certified.py``. Prints, for the kernel benchmark grids of
bench_kernel.py (invented 8- and 3-component oil/gas mixing lines, 100 x 10 x 21 cells):

- cells/s of the certified flash (extended stability test, certification of every answer,
  three-phase split where needed) and of the uncertified flash (the two Wilson trials only, no
  test of the answer, at most two phases: ``_flash_arrays(..., certify=False)``, which exists only
  for this measurement), each the median of interleaved repeats, and their ratio;
- the cost split by stage, as shares of the certified flash's time, from the public batch
  functions of each stage and the certified - uncertified difference;

and for the grid of configs/volatile_oil_water.toml (invented oil with connate water): the share
of cells that needed extra trial phases, the three-phase share, and cells/s certified.
"""

from __future__ import annotations

import os
import statistics
import time
from pathlib import Path

import numpy as np
from _fluids import grid, mixture

import gridflash
from gridflash.config._parser import load_config
from gridflash.plan._grid import block_inputs
from gridflash.thermo import phase_state, reduced_parameters, stability_test, wilson_ln_k
from gridflash.thermo._flash import _flash_arrays

REPEAT = 7
CONFIGS = Path(__file__).resolve().parents[1] / "configs"


def interleaved(fns: dict[str, object], repeat: int = REPEAT) -> dict[str, float]:
    """Median wall time of each function, the functions run in turn ``repeat`` times (so that
    load from other processes hits them alike)."""
    times: dict[str, list[float]] = {k: [] for k in fns}
    for _ in range(repeat):
        for key, fn in fns.items():
            t0 = time.perf_counter()
            fn()
            times[key].append(time.perf_counter() - t0)
    return {k: statistics.median(v) for k, v in times.items()}


def kernel_grids() -> None:
    for nc in (8, 3):
        kernel_grid(nc)


def kernel_grid(nc: int) -> None:
    """Certified vs uncertified on the nc-component kernel benchmark grid."""
    mix = mixture(nc)
    p, t, z = grid(nc, 100, 10, 21)
    n = p.size
    for cert in (True, False):
        _flash_arrays(mix, p[:50], t[:50], z[:50], None, certify=cert)  # compile / warm-up
    cert_r = _flash_arrays(mix, p, t, z, None, certify=True)
    old_r = _flash_arrays(mix, p, t, z, None, certify=False)
    model = mix.model

    def eos():
        sa, b = reduced_parameters(model, p, t)
        return sa, b, phase_state(model, z, sa, b).ln_phi

    sa, b, lnphi = eos()
    lnk = wilson_ln_k(model.tc, model.pc, model.omega, p, t)
    times = interleaved({
        "certified": lambda: _flash_arrays(mix, p, t, z, None, certify=True),
        "uncertified": lambda: _flash_arrays(mix, p, t, z, None, certify=False),
        "eos": eos,
        "wilson": lambda: stability_test(model, sa, b, z, lnphi, lnk),
        "properties": lambda: gridflash.thermo.phase_properties(mix, p, t, z, np.ones(n)),
    })
    tc, tu = times["certified"], times["uncertified"]
    print(f"\n{nc} components, {n} cells: {np.mean(cert_r.phase_count == 2):.0%} two-phase, "
          f"{np.mean(cert_r.phase_count == 3):.1%} three-phase, converged "
          f"{cert_r.converged.mean():.4%} (uncertified path: {old_r.converged.mean():.4%})")
    print(f"  certified   : {n / tc:10.0f} cells/s per core")
    print(f"  uncertified : {n / tu:10.0f} cells/s per core")
    print(f"  ratio certified / uncertified throughput: {tu / tc:.3f}")
    same = np.array_equal(cert_r.phase_count, old_r.phase_count)
    print(f"  same phase counts as uncertified: {same}; cells with certification trials: "
          f"{np.mean(cert_r.certification_iterations > 0):.2%}; mean iterations "
          f"{old_r.iterations.mean():.2f} -> {cert_r.iterations.mean():.2f}")
    print("  cost split by stage (share of the certified flash's time):")
    rest = tc - times["eos"] - times["wilson"] - 3 * times["properties"] - (tc - tu)
    for label, d in (
        ("EOS parameters + feed phase", times["eos"]),
        ("Wilson stability trials", times["wilson"]),
        ("phase properties (3 slots)", 3 * times["properties"]),
        ("extended test + certification", tc - tu),
        ("split and the rest", rest),
    ):
        print(f"    {label:32s}: {d / tc:6.1%}")


def example_grid() -> None:
    spec = load_config(CONFIGS / "volatile_oil_water.toml")
    p, t, z = block_inputs(spec, {})
    mix = spec.fluid.mixture()
    _flash_arrays(mix, p[:5], t[:5], z[:5], None)
    times = interleaved({"certified": lambda: _flash_arrays(mix, p, t, z, None)}, repeat=3)
    r = _flash_arrays(mix, p, t, z, None)
    old = _flash_arrays(mix, p, t, z, None, certify=False)
    extra = (r.phase_count != old.phase_count) | (r.certification_iterations > 0)
    extra |= r.stability_iterations > old.stability_iterations
    print(f"\nconfigs/volatile_oil_water.toml grid, {p.size} cells (cold, one core):")
    print(f"  cells/s certified                 : {p.size / times['certified']:10.0f}")
    print(f"  cells that needed extra trials    : {extra.mean():10.1%}")
    print(f"  three-phase cells                 : {np.mean(r.phase_count == 3):10.1%}")
    print(f"  converged (certified)             : {r.converged.mean():10.1%}")
    print(f"  cells whose phase count the uncertified path got wrong: "
          f"{np.mean(r.phase_count != old.phase_count):.1%}")


def main() -> None:
    print(f"cores: {os.cpu_count()}  numpy {np.__version__}  gridflash {gridflash.__version__}")
    kernel_grids()
    example_grid()


if __name__ == "__main__":
    main()
