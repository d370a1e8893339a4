"""Iterations and time of the flash by stage (helper of bench_ceiling.py)."""

from __future__ import annotations

import gridflash
from gridflash.thermo._flash import _flash_arrays


def stage_table(mix: gridflash.Mixture, p, t, z, slab_cells: int) -> list[str]:
    """Mean iterations per cell by stage -- stability test (Wilson trials), split, certification
    (corner screen, near-pure trials, re-splits) -- cold and warm-started slab by slab, over the
    single-phase and the two-phase cells."""
    lines = []
    for label, chain in (("cold", 0), ("warm", slab_cells)):
        r = _flash_arrays(mix, p, t, z, None, chain)
        split = r.iterations - r.stability_iterations - r.certification_iterations
        for kind, mask in (("1-phase", r.phase_count == 1), ("2-phase", r.phase_count == 2)):
            if not mask.any():
                continue
            lines.append(
                f"    {label} {kind} ({mask.mean():4.0%}): stability "
                f"{r.stability_iterations[mask].mean():6.2f}, split {split[mask].mean():6.2f}, "
                f"certification {r.certification_iterations[mask].mean():6.2f} iterations per cell"
            )
    return lines
