"""Configs for sampling-mode tests (invented test fluid and streams, no real field data).

The fluid is the invented 4-component oil/CO2-gas pair of ``_run_helpers`` plus an invented
lean gas as a third stream for simplex designs.
"""

from __future__ import annotations

from pathlib import Path

from ._run_helpers import INVENTED_FLUID

SAMPLE_CONFIG = (
    "# Invented test fluid, sampled (no real field data).\n"
    + INVENTED_FLUID
    + """
[streams.invented_lean_gas]
mole_fractions = {{ C1 = 0.95, nC4 = 0.05 }}

[sampling]
points = {points}
sequence = "{sequence}"
seed = {seed}

[pressure]
unit = "bar"
start = 20.0
stop = 300.0

[temperature]
unit = "degC"
start = 40.0
stop = 160.0

[composition]
{composition}

[run]
output = "{output}"
{chunks}
workers = 2
scheduler = "threads"
warm_start = {warm}
"""
)

MIXING = 'kind = "mixing"\nstreams = ["invented_oil", "invented_gas"]\nstart = 0.0\nstop = 1.0'
SIMPLEX = ('kind = "simplex"\n'
           'streams = ["invented_oil", "invented_gas", "invented_lean_gas"]')


def sample_config_text(
    *,
    points: int = 256,
    sequence: str = "sobol",
    seed: int = 20240611,
    composition: str = MIXING,
    output: str = "samples.zarr",
    chunk: int | None = 64,
    warm: bool = True,
) -> str:
    chunks = f"chunks = {{ sample = {chunk} }}" if chunk is not None else ""
    return SAMPLE_CONFIG.format(points=points, sequence=sequence, seed=seed,
                                composition=composition, output=output, chunks=chunks,
                                warm=str(warm).lower())


def write_sample_config(folder: Path, name: str = "samples.toml", **kwargs) -> Path:
    """Write a sampling config into ``folder`` and return its path."""
    path = Path(folder) / name
    path.write_text(sample_config_text(**kwargs))
    return path
