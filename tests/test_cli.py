"""The command line, end to end: ``gridflash run`` and ``gridflash inspect``."""

from __future__ import annotations

import io
import re
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pytest
import xarray as xr
import zarr
from click.testing import CliRunner

import gridflash
from gridflash.cli import _announce_if_slow, _load_kernels, _ProgressLine, cli
from gridflash.config._parser import load_config
from gridflash.runner import Progress

from ._run_helpers import direct_flash, write_config


def invoke(*args: str):
    return CliRunner().invoke(cli, [str(a) for a in args], catch_exceptions=False)


@pytest.fixture(scope="module")
def cold_store(tmp_path_factory):
    """The small grid run through the CLI without warm starts: (config path, store path)."""
    folder = tmp_path_factory.mktemp("cli")
    config = write_config(folder)
    result = invoke("run", config, "--no-warm-start", "--output", folder / "cold.zarr")
    assert result.exit_code == 0, result.output
    return config, folder / "cold.zarr", result


def test_run_end_to_end(cold_store):
    """The store opens with plain xarray.open_zarr; every cell equals a direct flash call.

    Reference: gridflash.flash on each cell (all cells in one call, which is elementwise).
    """
    config, path, result = cold_store
    assert result.stderr == ""  # no progress line when stderr is not a terminal
    assert "4 computed, 0 reused" in result.stdout
    ds = xr.open_zarr(path)
    assert ds.phase_count.shape == (6, 4, 5)
    assert ds.liquid_composition.dims == ("pressure", "temperature", "mixing_ratio", "component")
    assert ds.pressure.attrs["units"] == "Pa" and ds.temperature.attrs["units"] == "K"
    # 20 bar .. 270 bar and 40 degC .. 160 degC (exact SI conversions)
    assert ds.pressure.values[[0, -1]].tolist() == [2.0e6, 2.7e7]
    assert ds.temperature.values[[0, -1]] == pytest.approx([313.15, 433.15], abs=1e-12)
    assert ds.vapour_density.attrs["units"] == "kg m-3"
    assert ds.attrs["run_state"] == "complete" and ds.attrs["warm_start"] == 0
    spec = load_config(config)
    ref = direct_flash(ds, spec.fluid.mixture())
    n = ref.phase_count.size
    checks = {
        "phase_count": ref.phase_count, "vapour_fraction": ref.vapour_fraction,
        "liquid_composition": ref.x, "vapour_composition": ref.y, "k_value": ref.K,
        "converged": ref.converged, "iterations": ref.iterations, "status": ref.status,
        "residual": ref.residual, "tpd": ref.tpd, "liquid_density": ref.liquid.mass_density,
        "vapour_viscosity": ref.vapour.viscosity, "liquid_z_factor": ref.liquid.z_factor,
    }
    for name, expected in checks.items():
        got = ds[name].values.reshape(n, -1).squeeze()
        assert np.array_equal(got, expected, equal_nan=got.dtype.kind == "f"), name
    counts = re.search(r"cells: (\d+) three-phase, (\d+) two-phase, (\d+) single-phase, "
                       r"(\d+) unconverged", result.stdout)
    assert counts and int(counts[2]) == int((ref.phase_count == 2).sum())
    assert int(counts[1]) == int((ref.phase_count == 3).sum())
    assert int(counts[4]) == int((~ref.converged).sum())


def test_existing_store_refused_in_one_line(cold_store):
    config, path, _ = cold_store
    result = invoke("run", config, "--output", path, "--no-warm-start")
    assert result.exit_code == 1
    assert result.stdout == ""
    assert result.stderr.count("\n") == 1 and "Traceback" not in result.stderr
    assert "already exists; use --resume" in result.stderr


def test_resume_of_complete_store_reuses_everything(cold_store):
    config, path, _ = cold_store
    result = invoke("run", config, "--output", path, "--no-warm-start", "--resume")
    assert result.exit_code == 0, result.stderr
    assert "0 computed, 4 reused" in result.stdout


def test_resume_with_other_warm_start_refused(cold_store):
    config, path, _ = cold_store
    result = invoke("run", config, "--output", path, "--resume")
    assert result.exit_code == 1
    assert "warm starts off" in result.stderr and result.stderr.count("\n") == 1


@pytest.mark.parametrize(
    ("args", "code", "message"),
    [
        (["run", "{config}", "--resume", "--overwrite"], 2, "exclude each other"),
        (["run", "{config}", "--workers", "0"], 2, "Invalid value for '--workers'"),
        (["run", "{folder}/missing.toml"], 1, "cannot read config file"),
        (["run", "{folder}/bad.toml"], 1, "pressure.count"),
        (["inspect", "{folder}/missing.zarr"], 1, "does not exist"),
        (["frobnicate"], 2, "No such command"),
    ],
)
def test_errors(tmp_path, args, code, message):
    config = write_config(tmp_path)
    bad = config.read_text().replace("count = 6", "count = -6")
    (tmp_path / "bad.toml").write_text(bad)
    result = invoke(*(a.format(config=config, folder=tmp_path) for a in args))
    assert result.exit_code == code
    assert message in result.stderr
    assert "Traceback" not in result.stderr
    if code == 1:
        assert result.stderr.count("\n") == 1
    assert not (tmp_path / "out.zarr").exists()


def test_quiet_prints_nothing(tmp_path):
    config = write_config(tmp_path)
    result = invoke("run", config, "--quiet")
    assert result.exit_code == 0 and result.stdout == "" and result.stderr == ""
    assert (tmp_path / "out.zarr" / "zarr.json").exists()


def test_help_has_examples():
    for args in (["--help"], ["run", "--help"], ["inspect", "--help"]):
        result = invoke(*args)
        assert result.exit_code == 0
        assert "Examples:" in result.stdout
    assert "--scheduler ADDRESS" in invoke("run", "--help").stdout


def test_inspect(cold_store, tmp_path):
    config, path, _ = cold_store
    ds = xr.open_zarr(path)
    two = int((ds.phase_count == 2).sum())
    result = invoke("inspect", path)
    assert result.exit_code == 0, result.stderr
    out = result.stdout
    assert "run state: complete" in out and "4 of 4 chunks complete" in out
    # in the config's own units (bar, degC), without e-notation
    assert re.search(r"pressure\s+6 points\s+20 \.\. 270 bar\s", out)
    assert re.search(r"temperature\s+4 points\s+40 \.\. 160 degC\s", out)
    assert "e+0" not in out
    assert re.search(rf"two-phase\s+{two}\b", out)
    assert "convergence: 0 unconverged cell(s)" in out
    # an unconverged cell is listed with its coordinates and status name
    copy = tmp_path / "flagged.zarr"
    import shutil

    shutil.copytree(path, copy)
    group = zarr.open_group(str(copy), mode="r+")
    group["converged"][2, 1, 3] = False
    group["status"][2, 1, 3] = 1
    out = invoke("inspect", copy).stdout
    assert "convergence: 1 unconverged cell(s)" in out
    p, t, r = (float(ds.pressure[2]), float(ds.temperature[1]), float(ds.mixing_ratio[3]))
    assert (f"at pressure={p / 1e5:g} bar, temperature={t - 273.15:g} degC, mixing_ratio={r:g}: "
            "max_iterations") in out


@pytest.mark.parametrize(
    ("options", "pressure", "temperature"),
    [
        # 20 bar = 2e6 Pa = 290.075 psia (1 psi = 6894.757293168 Pa, NIST SP 811 App. B.8);
        # 40 degC = 104 degF = 313.15 K (NIST SP 811 Sec. 4.2.1.1)
        (["--pressure-unit", "psia", "--temperature-unit", "degF"], "290.075 .. 3916.02 psia",
         "104 .. 320 degF"),
        (["--pressure-unit", "Pa", "--temperature-unit", "K"], "2000000 .. 27000000 Pa",
         "313.15 .. 433.15 K"),
        (["--pressure-unit", "MPa"], "2 .. 27 MPa", "40 .. 160 degC"),
    ],
)
def test_inspect_units_option(cold_store, options, pressure, temperature):
    _, path, _ = cold_store
    result = invoke("inspect", path, *options)
    assert result.exit_code == 0, result.stderr
    assert re.search(rf"pressure\s+6 points\s+{re.escape(pressure)}\s", result.stdout)
    assert re.search(rf"temperature\s+4 points\s+{re.escape(temperature)}\s", result.stdout)


def test_inspect_bad_unit_is_one_line(cold_store):
    _, path, _ = cold_store
    result = invoke("inspect", path, "--pressure-unit", "psig")
    assert result.exit_code == 1
    assert result.stderr.count("\n") == 1 and "psig" in result.stderr


def test_inspect_unfinished_store(tmp_path):
    config = write_config(tmp_path)
    assert invoke("run", config, "--quiet").exit_code == 0
    group = zarr.open_group(str(tmp_path / "out.zarr"), mode="r+")
    group["block_complete"][0, 0, 0] = 0
    group["phase_count"][:3, :2, :] = 0
    group.attrs["run_state"] = "running"
    out = invoke("inspect", tmp_path / "out.zarr").stdout
    assert "run state: running" in out and "3 of 4 chunks complete" in out
    assert re.search(r"not computed yet\s+30\b", out)


def test_progress_line():
    stream = io.StringIO()
    line = _ProgressLine(stream, interval=0.0)
    line(Progress(500, 1000, 1, 2, 1.0, 500.0, 1.0))
    line(Progress(1000, 1000, 2, 2, 2.0, 500.0, 0.0))
    line.close()
    text = stream.getvalue()
    assert text.startswith("\r500 / 1,000 cells (50.0%), 500 cells/s, about 1 s left")
    assert "\r1,000 / 1,000 cells (100.0%)" in text and text.endswith("\n")


def test_slow_kernel_loading_is_announced():
    """Work still running after the hint delay (a compilation) is announced and timed; work done
    before it (kernels loaded from the disk cache) prints nothing."""
    out = io.StringIO()
    seconds = _announce_if_slow(lambda: time.sleep(0.3), out, "compiling", "ready {seconds:.1f}",
                                hint_after=0.05)
    assert seconds >= 0.3
    assert out.getvalue().splitlines() == ["compiling", f"ready {seconds:.1f}"]
    out = io.StringIO()
    _announce_if_slow(lambda: None, out, "compiling", "ready", hint_after=30.0)
    assert out.getvalue() == ""
    # the real thing, with the kernels already compiled in this process: silent, well under 1 s
    assert _load_kernels(gridflash.Mixture(["C1", "nC4"]), out) < 1.0
    assert out.getvalue() == ""


@pytest.mark.slow
def test_installed_entry_point(tmp_path):
    """``python -m gridflash.cli`` (what the console script calls) runs and exits 0/1."""
    config = write_config(tmp_path)
    ok = subprocess.run([sys.executable, "-m", "gridflash.cli", "run", str(config), "-q"],
                        capture_output=True, text=True, timeout=120)
    assert ok.returncode == 0, ok.stderr
    again = subprocess.run([sys.executable, "-m", "gridflash.cli", "run", str(config)],
                           capture_output=True, text=True, timeout=120)
    assert again.returncode == 1
    assert again.stderr.startswith("Error: output ") and again.stderr.count("\n") == 1


def test_compilation_announced_only_when_the_cache_is_empty(tmp_path, monkeypatch):
    """A slow kernel load with compiled kernels in the disk cache is not called a compilation;
    with an empty cache folder it is."""
    import gridflash.thermo
    from gridflash import cli as cli_module

    def slow_flash(*args, **kwargs):
        time.sleep(1.3)  # longer than the 1 s after which a compilation is announced

    monkeypatch.setattr(gridflash.thermo, "flash", slow_flash)
    mixture = gridflash.Mixture(["C1", "nC4"])
    monkeypatch.setenv("NUMBA_CACHE_DIR", str(tmp_path / "empty"))
    assert not cli_module.kernels_cached()
    out = io.StringIO()
    cli_module._load_kernels(mixture, out)
    assert out.getvalue().startswith("compiling the flash kernels")
    folder = tmp_path / "filled" / f"gridflash-kernels-{_source_key()}" / "kernels_x"
    folder.mkdir(parents=True)
    (folder / "flash.flash_batch-105.py311.nbi").write_bytes(b"")  # a numba index file
    monkeypatch.setenv("NUMBA_CACHE_DIR", str(tmp_path / "filled"))
    assert cli_module.kernels_cached()
    out = io.StringIO()
    cli_module._load_kernels(mixture, out)
    assert out.getvalue() == ""


def _source_key() -> str:
    from gridflash.thermo.kernels._policy import source_key

    return source_key()


def test_summary_rates_are_cells_over_times(tmp_path):
    """The summary's cells/s figures are the printed cell count over the printed times."""
    config = write_config(tmp_path)
    result = invoke("run", config)
    assert result.exit_code == 0, result.stderr
    match = re.search(r"time: ([\d.]+) s = ([\d,]+) cells/s overall \(([\d,]+) cells\); "
                      r"computing the chunks ([\d.]+) s = ([\d,]+) cells/s", result.stdout)
    assert match, result.stdout
    wall, overall, cells, compute, rate = (float(g.replace(",", "")) for g in match.groups())
    assert cells == 120
    # the times are printed to 0.1 s, the rates to 1 cell/s
    for seconds, shown in ((wall, overall), (compute, rate)):
        low, high = cells / (seconds + 0.05), cells / max(seconds - 0.05, 1e-9)
        assert low - 0.5 <= shown <= high + 0.5
    assert compute <= wall


# --------------------------------------------------------------------------------------------
# Crash paths: each refused in one line before any work, or run to the end
# --------------------------------------------------------------------------------------------

_PSEUDO = ('{{ name = "HEAVY", tc = {tc}, tc_unit = "K", pc = 15.0, pc_unit = "bar", '
           'omega = 0.6, mw = 250.0 }}')


def _with_pseudo(config, tc: str) -> None:
    text = config.read_text().replace('"nC10"]', '"nC10", ' + _PSEUDO.format(tc=tc) + "]")
    config.write_text(text.replace("nC4 = 0.20, nC10 = 0.35", "nC4 = 0.20, nC10 = 0.30, "
                                   "HEAVY = 0.05"))


@pytest.mark.parametrize("tc", ["1e6", "1e300", "0.5"])
def test_absurd_critical_temperature_refused_by_the_loader(tmp_path, tc):
    """tc = 1e6 K used to pass the loader and fail only when the finished store was read back;
    one validation (gridflash.Component) now refuses it before anything runs."""
    config = write_config(tmp_path)
    _with_pseudo(config, tc)
    result = invoke("run", config)
    assert result.exit_code == 1
    assert result.stderr.count("\n") == 1 and "Traceback" not in result.stderr
    assert "fluid.components[4].tc" in result.stderr and "outside 1..3000 K" in result.stderr
    assert not (tmp_path / "out.zarr").exists()


def test_every_accepted_pseudo_component_reads_back_from_the_store(tmp_path):
    """What the loader accepts, the store reader rebuilds (a 650 K pseudo-component)."""
    config = write_config(tmp_path)
    _with_pseudo(config, "650.0")
    result = invoke("run", config)
    assert result.exit_code == 0, result.stderr
    mixture = gridflash.mixture_from_store(tmp_path / "out.zarr")
    assert mixture.components[4].tc == 650.0 and mixture.components[4].pc == 1.5e6


def test_normalised_fractions_whose_sum_overflows(tmp_path):
    """Relative amounts of 1.7e308 each (their sum overflows a double) normalise to the same
    fractions as 1 : 1 : 1 : 1 instead of failing in every chunk."""
    config = write_config(tmp_path)
    text = config.read_text().replace(
        "mole_fractions = { CO2 = 0.75, C1 = 0.22, nC4 = 0.03 }",
        "mole_fractions = { CO2 = 1.7e308, C1 = 1.7e308, nC4 = 1.7e308, nC10 = 1.7e308 }\n"
        "normalise = true")
    config.write_text(text)
    result = invoke("run", config)
    assert result.exit_code == 0, result.stderr
    ds = xr.open_zarr(tmp_path / "out.zarr")
    np.testing.assert_array_equal(ds.stream_composition.values[1], [0.25] * 4)
    assert bool(ds.converged.all())


def test_huge_grid_refused_before_planning(tmp_path):
    """6e9 cells (each axis count within its own limit): refused at once, in one line, with the
    store size it would need and the override; --max-cells also lowers the limit."""
    config = write_config(tmp_path, grid={"p_start": 20.0, "p_stop": 270.0, "p_count": 60_000,
                                          "t_count": 1000, "c_count": 100})
    result = invoke("run", config)
    assert result.exit_code == 1 and result.stderr.count("\n") == 1
    assert "6,000,000,000 cells" in result.stderr and "--max-cells 6000000000" in result.stderr
    assert "TB of store" in result.stderr
    assert not (tmp_path / "out.zarr").exists()
    small = write_config(tmp_path, "small.toml")
    limited = invoke("run", small, "--max-cells", "100")
    assert limited.exit_code == 1 and "more than the limit of 100" in limited.stderr
    assert invoke("run", small, "--max-cells", "120", "-q").exit_code == 0


# --------------------------------------------------------------------------------------------
# One writer per store; creation leftovers
# --------------------------------------------------------------------------------------------


def _hold_lock(store) -> subprocess.Popen:
    """Another process holding the store's owner marker (as a running `gridflash run` does)."""
    code = ("import sys, time\nfrom gridflash.store._lock import writer_lock\n"
            "with writer_lock(sys.argv[1]):\n    print('held', flush=True)\n    time.sleep(60)\n")
    holder = subprocess.Popen([sys.executable, "-c", code, str(store)], stdout=subprocess.PIPE,
                              text=True)
    assert holder.stdout.readline().strip() == "held"
    return holder


@pytest.mark.parametrize("extra", [[], ["--overwrite"], ["--resume"]])
def test_second_writer_refused_in_one_line(tmp_path, extra):
    """While another process writes the store, a second run -- even with --overwrite -- is
    refused in one line and leaves the store as it was."""
    config = write_config(tmp_path)
    assert invoke("run", config, "-q").exit_code == 0
    store = tmp_path / "out.zarr"
    before = sorted(p.relative_to(store) for p in store.rglob("*"))
    holder = _hold_lock(store)
    try:
        result = invoke("run", config, *extra)
    finally:
        holder.kill()
        holder.wait()
    assert result.exit_code == 1, result.stdout
    assert result.stderr.count("\n") == 1 and "Traceback" not in result.stderr
    assert f"another gridflash run (process {holder.pid} on " in result.stderr
    assert "is writing" in result.stderr
    assert sorted(p.relative_to(store) for p in store.rglob("*")) == before
    assert gridflash.open_table(store).attrs["run_state"] == "complete"


def test_second_writer_refused_while_the_store_is_created(tmp_path):
    """Two runs started on one new output: the one without the marker is refused in one line
    (it used to fail with "Directory not empty")."""
    config = write_config(tmp_path)
    holder = _hold_lock(tmp_path / "out.zarr")
    try:
        result = invoke("run", config)
    finally:
        holder.kill()
        holder.wait()
    assert result.exit_code == 1 and result.stderr.count("\n") == 1
    assert "is writing" in result.stderr and not (tmp_path / "out.zarr").exists()


def test_marker_of_a_killed_run_is_taken_over(tmp_path):
    """A marker left by a run killed with -9 (its process is gone) does not block the store."""
    config = write_config(tmp_path)
    dead = subprocess.run([sys.executable, "-c", "import os; print(os.getpid())"],
                          capture_output=True, text=True, check=True)
    import json
    import socket

    marker = tmp_path / ".out.zarr.writer"
    marker.write_text(json.dumps({"host": socket.gethostname(), "pid": int(dead.stdout),
                                  "started": "2026-01-01T00:00:00+00:00"}))
    result = invoke("run", config, "-q")
    assert result.exit_code == 0, result.stderr
    assert not marker.exists()


def test_marker_of_another_host_names_the_file_to_delete(tmp_path):
    import json

    config = write_config(tmp_path)
    marker = tmp_path / ".out.zarr.writer"
    marker.write_text(json.dumps({"host": "elsewhere.invalid", "pid": 1, "started": "x"}))
    result = invoke("run", config)
    assert result.exit_code == 1 and result.stderr.count("\n") == 1
    assert "on elsewhere.invalid" in result.stderr and str(marker) in result.stderr


def test_creation_leftovers_of_a_killed_run_are_removed(tmp_path):
    """`.NAME.creating-*` folders left by a run killed while creating the store are removed by
    the next run on that output (which holds the marker, so nobody else is creating)."""
    config = write_config(tmp_path)
    for suffix in ("1a2b3c4d", "deadbeef"):
        leftover = tmp_path / f".out.zarr.creating-{suffix}"
        leftover.mkdir()
        (leftover / "zarr.json").write_text("{}")
    (tmp_path / ".other.zarr.creating-1a2b3c4d").mkdir()  # another store's: left alone
    assert invoke("run", config, "-q").exit_code == 0
    assert sorted(p.name for p in tmp_path.iterdir() if p.name.startswith(".")) == [
        ".other.zarr.creating-1a2b3c4d"]


_FULL_DISK = """\
import errno
import os

if os.environ.get("GRIDFLASH_TEST_FULL_DISK"):
    import gridflash.runner

    def _full(path, plan, block, result):
        raise OSError(errno.ENOSPC, "No space left on device")

    gridflash.runner.write_block = _full
"""


@pytest.mark.slow
@pytest.mark.parametrize("scheduler", ["threads", "processes"])
def test_full_disk_is_one_line(tmp_path, scheduler):
    """ENOSPC from every block's write (a full disk), in the driver's threads or in worker
    processes (patched through sitecustomize, which every Python process runs): one line on
    stderr -- no worker "Compute Failed" tracebacks before it -- and exit status 1."""
    import os

    site = tmp_path / "site"
    site.mkdir()
    (site / "sitecustomize.py").write_text(_FULL_DISK)
    config = write_config(tmp_path, scheduler=scheduler)
    env = {**os.environ, "GRIDFLASH_TEST_FULL_DISK": "1",
           "PYTHONPATH": os.pathsep.join([str(site), *sys.path])}
    done = subprocess.run([sys.executable, "-m", "gridflash.cli", "run", str(config)],
                          capture_output=True, text=True, timeout=180, env=env)
    assert done.returncode == 1
    assert done.stderr.count("\n") == 1, done.stderr
    assert done.stderr.startswith("Error: writing block (")
    assert "No space left on device" in done.stderr and "--resume" in done.stderr


# --------------------------------------------------------------------------------------------
# Fuzz: mutated bundled configs through `gridflash run`
# --------------------------------------------------------------------------------------------

_CONFIGS = sorted((Path(__file__).resolve().parents[1] / "configs").glob("*.toml"))
_ASSIGNMENT = re.compile(r"^(\s*)([A-Za-z_][\w]*)(\s*=\s*)(.+?)(\s*#.*)?$")
_WILD = ("0", "-1", "1", "1e308", "-1e308", "1.7e308", "1e-320", "nan", "inf", "-inf",
         "9999999999", '""', '"x"', '"psig"', "[]", "{}", "true", "0.5", "-0.0",
         "[1e308, 1e308]", "[0.0, 0.0]", "[1.0, nan]", '{ x = 1 }')


def _mutate(text: str, rng: np.random.Generator) -> str:
    """One to three random edits of a config: a value replaced by a wild one, a line dropped,
    or a number scaled by 1e3 or 1e-3."""
    lines = text.splitlines()
    editable = [i for i, line in enumerate(lines) if _ASSIGNMENT.match(line)]
    for _ in range(int(rng.choice([1, 1, 1, 2, 3]))):
        i = int(rng.choice(editable))
        match = _ASSIGNMENT.match(lines[i])
        if match is None:
            continue
        indent, key, eq, value, comment = match.groups()
        action = rng.integers(0, 7)
        if action == 0:
            lines[i] = ""
        elif action <= 3:
            lines[i] = re.sub(r"-?\d+\.?\d*(?:[eE][-+]?\d+)?",
                              lambda m: repr(float(m.group()) * float(rng.choice([1e3, 1e-3]))),
                              lines[i], count=1)
        else:
            lines[i] = f"{indent}{key}{eq}{rng.choice(_WILD)}"
    return "\n".join(lines) + "\n"


@pytest.mark.parametrize("seed", [
    pytest.param(seed, marks=[pytest.mark.slow] if seed >= 10 else []) for seed in range(60)])
def test_fuzzed_bundled_configs_run_or_refuse_in_one_line(tmp_path, capfd, seed):
    """Every mutation of a bundled config either runs to a complete store or is refused with
    exit status 1 and exactly one line on stderr -- no traceback, no worker log noise (checked
    at the file-descriptor level too)."""
    rng = np.random.default_rng(seed)
    source = _CONFIGS[seed % len(_CONFIGS)]
    config = tmp_path / source.name
    config.write_text(_mutate(source.read_text(), rng))
    result = CliRunner().invoke(cli, ["run", str(config), "--output", str(tmp_path / "o.zarr"),
                                      "--max-cells", "5000", "--workers", "2", "--threads"],
                                catch_exceptions=False)
    captured = capfd.readouterr()
    assert "Traceback" not in captured.err + captured.out
    assert captured.err == "", captured.err
    if result.exit_code == 0:
        table = gridflash.open_table(tmp_path / "o.zarr")
        assert table.attrs["run_state"] == "complete"
    else:
        assert result.exit_code == 1, (result.exit_code, result.output)
        assert result.stderr.count("\n") == 1 and result.stderr.startswith("Error: "), \
            result.stderr
        if "is not" in result.stderr or "must be" in result.stderr:  # a config value refused
            assert f"{config}:" in result.stderr, result.stderr  # names the file (and key)
        assert "Traceback" not in result.stderr


@pytest.mark.parametrize("args", [["--version"], ["--help"], ["run", "--help"],
                                  ["plot", "--help"], ["export", "--help"]])
def test_help_and_version_import_no_heavy_package(args):
    """Start-up stays cheap: --help/--version import none of numba, dask, xarray, zarr, numpy
    (their CPU time, about 0.07 s against 1.4 s for a full import, is measured by
    benchmarks/bench_startup.py)."""
    code = ("import sys\nfrom gridflash.cli import cli\n"
            f"try:\n    cli.main(args={args!r}, prog_name='gridflash')\n"
            "except SystemExit as exc:\n    assert exc.code == 0, exc.code\n"
            "heavy = sorted(m for m in ('numba', 'dask', 'distributed', 'xarray', 'zarr', "
            "'numpy', 'scipy') if m in sys.modules)\nprint('HEAVY', heavy)\n")
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                          timeout=60)
    assert done.returncode == 0, done.stderr
    assert done.stdout.strip().splitlines()[-1] == "HEAVY []"
