"""The README's "Using a table" example runs as written against the bundled example store."""

from __future__ import annotations

import contextlib
import io
import re
from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest

import gridflash
from gridflash.config._parser import load_config
from gridflash.runner import run

ROOT = Path(__file__).resolve().parents[1]


def _example_code() -> str:
    text = (ROOT / "README.md").read_text()
    section = text.split("## Using a table", 1)[1].split("\n## ", 1)[0]
    blocks = re.findall(r"```python\n(.*?)```", section, flags=re.S)
    assert len(blocks) == 1, "the section should hold exactly one Python example"
    return blocks[0]


def test_readme_using_a_table_example_runs(tmp_path, monkeypatch):
    """Build the quick start's store (the bundled invented example) where the README expects
    it, then execute the README block and check what it computed."""
    config = load_config(ROOT / "configs" / "volatile_oil_co2.toml")
    target = tmp_path / "out" / "volatile_oil_co2.zarr"
    run(replace(config, run=replace(config.run, output=target)))
    monkeypatch.chdir(tmp_path)
    namespace: dict = {}
    printed = io.StringIO()
    with contextlib.redirect_stdout(printed):
        exec(compile(_example_code(), "README.md (Using a table)", "exec"), namespace)
    points, table = namespace["points"], namespace["table"]
    assert "[False  True False] [False  True False]" in printed.getvalue()
    # the example's second point lies in a grid cell spanning the bubble line: it is flagged
    # and refined, and equals a direct flash of the stored fluid
    assert points.boundary.values.tolist() == [False, True, False]
    assert points.refined.values.tolist() == [False, True, False]
    mixture = gridflash.mixture_from_store(table)
    exact = gridflash.flash(mixture, 175e5, 373.15, points.feed_composition.values[1])
    assert points.phase_count.values[1] == exact.phase_count[0]
    assert abs(points.vapour_fraction.values[1] - exact.vapour_fraction[0]) <= 1e-8
    # the saturation line it reads lies between the stored phase-count change on each line
    bubble = namespace["bubble"].values * 1e5
    count = table.phase_count.sel(mixing_ratio=0.3).values  # (pressure, temperature)
    p = table.pressure.values
    for j, value in enumerate(bubble):
        k = np.flatnonzero(count[:, j] == 2).max()
        assert p[k] < value < p[k + 1]


def _quick_start_commands() -> list[list[str]]:
    """The gridflash commands of the README's quick start (the first shell block)."""
    text = (ROOT / "README.md").read_text()
    section = text.split("## Quick start", 1)[1].split("\n## ", 1)[0]
    block = re.findall(r"```\n(.*?)```", section, flags=re.S)[0]
    commands = [c.strip().split() for c in block.strip().split("&&")]
    return [c for c in commands if c[0] == "gridflash"]


@pytest.mark.slow
def test_quick_start_writes_to_out_not_configs(tmp_path):
    """The README's quick start, run as written (through ``python -m gridflash.cli``) from a
    copy of the repository's folder layout: the store lands in out/, configs/ is left as it
    was, and inspect shows the config's units."""
    import os
    import shutil
    import subprocess
    import sys

    shutil.copytree(ROOT / "configs", tmp_path / "configs")
    before = sorted(p.name for p in (tmp_path / "configs").iterdir())
    commands = _quick_start_commands()
    assert [c[:2] for c in commands] == [["gridflash", "run"], ["gridflash", "inspect"]]
    env = {**os.environ, "PYTHONPATH": os.pathsep.join(sys.path)}
    outputs = []
    for command in commands:
        done = subprocess.run([sys.executable, "-m", "gridflash.cli", *command[1:]],
                              cwd=tmp_path, capture_output=True, text=True, timeout=300, env=env)
        assert done.returncode == 0, done.stderr
        outputs.append(done.stdout)
    assert (tmp_path / "out" / "volatile_oil_co2.zarr" / "zarr.json").is_file()
    assert sorted(p.name for p in (tmp_path / "configs").iterdir()) == before
    assert f"wrote {tmp_path / 'out' / 'volatile_oil_co2.zarr'} (complete)" in outputs[0]
    assert re.search(r"pressure\s+\d+ points\s+50 \.\. 430 bar", outputs[1])
    assert re.search(r"temperature\s+\d+ points\s+60 \.\. 120 degC", outputs[1])
