"""Configs for sampling-mode tests (invented test fluid and streams, no real field data).

The fluid is the invented 4-component oil/CO2-gas pair of ``_run_helpers`` plus an invented
lean gas as a third stream for simplex designs.
"""

from __future__ import annotations

from pathlib import Path

# The CO2-hydrocarbon interaction parameters are common-practice magnitudes for Peng-Robinson
# (0.10-0.15), from memory; they only make the invented fluid realistic.
SAMPLE_CONFIG = """\
# Invented test fluid, sampled (no real field data).
[fluid]
eos = "PR78"
components = ["CO2", "C1", "nC4", "nC10"]
kij = {{ "CO2-C1" = 0.10, "CO2-nC4" = 0.13, "CO2-nC10" = 0.11 }}

[streams.invented_oil]
mole_fractions = {{ CO2 = 0.02, C1 = 0.43, nC4 = 0.20, nC10 = 0.35 }}

[streams.invented_gas]
mole_fractions = {{ CO2 = 0.75, C1 = 0.22, nC4 = 0.03 }}

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
