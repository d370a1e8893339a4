"""The runner: values, invariance (warm/cold, chunking, threads/processes), resume and refusals."""

from __future__ import annotations

import json
import shutil
from dataclasses import replace

import numpy as np
import pytest
import xarray as xr
import zarr

import gridflash
from gridflash import GridflashError, InputError, StoreError
from gridflash.config._parser import load_config
from gridflash.runner import Progress, run
from gridflash.store import open_table, read_root_attrs

from ._run_helpers import (
    assert_same_phase_split,
    assert_stores_identical,
    direct_flash,
    write_config,
)


@pytest.fixture(scope="module")
def reference(tmp_path_factory):
    """The small test grid run once with threads and warm starts: (spec, store path)."""
    folder = tmp_path_factory.mktemp("reference")
    spec = load_config(write_config(folder))
    summary = run(spec)
    assert summary.blocks_computed == 4 and summary.blocks_reused == 0
    return spec, summary.output


def _run_variant(tmp_path, **config) -> xr.Dataset:
    tmp_path.mkdir(parents=True, exist_ok=True)
    spec = load_config(write_config(tmp_path, **config))
    run(spec)
    return gridflash.open_table(spec.run.output)


def test_values_equal_direct_flash(reference):
    """Every stored field equals a direct gridflash.flash call of the same cell.

    Reference: gridflash.flash on all cells at once (cold). The store was computed with warm
    starts, so floats agree to the DESIGN.md tolerance rather than bit for bit.
    """
    spec, path = reference
    ds = gridflash.open_table(path)
    ref = direct_flash(ds, spec.fluid.mixture())
    n = ref.phase_count.size
    assert np.array_equal(ds.phase_count.values.ravel(), ref.phase_count)
    assert np.array_equal(ds.phase_label.values.ravel(), ref.phase_label)
    assert np.array_equal(ds.converged.values.ravel(), ref.converged)
    assert np.array_equal(ds.status.values.ravel(), ref.status)
    assert np.max(np.abs(ds.vapour_fraction.values.ravel() - ref.vapour_fraction)) <= 1e-8
    pairs = {
        "liquid_composition": ref.x, "vapour_composition": ref.y, "k_value": ref.K,
        "liquid_density": ref.liquid.mass_density, "vapour_density": ref.vapour.mass_density,
        "liquid_viscosity": ref.liquid.viscosity, "vapour_z_factor": ref.vapour.z_factor,
        "liquid_molar_mass": ref.liquid.molar_mass, "vapour_molar_density":
        ref.vapour.molar_density,
    }
    for name, expected in pairs.items():
        got = ds[name].values.reshape(n, -1).squeeze()
        assert np.array_equal(np.isnan(got), np.isnan(expected)), name
        assert np.allclose(got, expected, rtol=1e-7, atol=1e-10, equal_nan=True), name
    assert (ds.residual.values < 1e-10).all() and (ds.material_balance.values < 1e-12).all()


def test_cold_run_is_bit_identical_to_direct_flash(tmp_path):
    ds = _run_variant(tmp_path, warm=False)
    ref = direct_flash(ds, load_config(tmp_path / "test.toml").fluid.mixture())
    n = ref.phase_count.size
    assert np.array_equal(ds.vapour_fraction.values.ravel(), ref.vapour_fraction)
    assert np.array_equal(ds.vapour_composition.values.reshape(n, -1), ref.y, equal_nan=True)
    assert np.array_equal(ds.iterations.values.ravel(), ref.iterations)
    assert not ds.warm_start.values.any()
    assert ds.attrs["warm_start"] == 0


def test_root_attributes(reference):
    spec, path = reference
    ds = gridflash.open_table(path)
    attrs = ds.attrs
    assert attrs["run_state"] == "complete"
    assert attrs["gridflash_version"] == gridflash.__version__
    assert attrs["config_hash"] == spec.config_hash and attrs["eos"] == "PR78"
    assert [c["name"] for c in json.loads(attrs["components"])] == ["CO2", "C1", "nC4", "nC10"]
    assert np.array_equal(np.array(json.loads(attrs["kij"])), np.array(spec.fluid.kij))
    pc = ds.phase_count.values
    assert attrs["cells_two_phase"] == int((pc == 2).sum())
    assert attrs["cells_single_phase"] == int((pc == 1).sum())
    assert attrs["cells_two_phase"] + attrs["cells_single_phase"] == pc.size
    assert attrs["cells_unconverged"] == int((~ds.converged.values).sum())
    assert attrs["mean_iterations"] == pytest.approx(ds.iterations.values.mean(), abs=1e-6)
    assert attrs["mean_stability_iterations"] == pytest.approx(
        ds.stability_iterations.values.mean(), abs=1e-6)
    warm = ds.warm_start.values
    assert attrs["mean_iterations_warm_start"] == pytest.approx(
        ds.iterations.values[warm].mean(), abs=1e-6)
    assert attrs["wall_time_seconds"] > 0 and attrs["run_sessions"] == 1


def test_warm_cold_and_chunking_invariance(reference, tmp_path):
    """DESIGN.md: results do not depend on warm starts or chunk sizes (1e-8 on V)."""
    _, path = reference
    base = gridflash.open_table(path)
    variants = {
        "cold": {"warm": False},
        "other_chunks": {"chunks": "pressure = 6, temperature = 1, composition = 2"},
        "temperature_sweep": {"sweep": "temperature", "chunks": "temperature = 4"},
    }
    for name, config in variants.items():
        other = _run_variant(tmp_path / name, **config)
        assert_same_phase_split(base, other)


@pytest.mark.slow
def test_threads_vs_processes(reference, tmp_path):
    _, path = reference
    other = _run_variant(tmp_path, scheduler="processes")
    assert_same_phase_split(gridflash.open_table(path), other)
    # Same chunks and sweep: the processes' store is identical, not merely close (only the
    # config text differs, by its run.scheduler line).
    assert_stores_identical(path, tmp_path / "out.zarr", ignore_attrs=("config_text",))


def test_progress_reports_every_block(tmp_path):
    seen: list[Progress] = []
    spec = load_config(write_config(tmp_path))
    run(spec, progress=seen.append)
    assert [p.blocks_done for p in seen] == [1, 2, 3, 4]
    assert [p.cells_done for p in seen] == sorted(p.cells_done for p in seen)
    assert seen[-1].cells_done == seen[-1].cells_to_do == 120
    assert seen[-1].seconds_left == 0


def test_resume_recomputes_exactly_the_unmarked_blocks(reference, tmp_path):
    """A store whose last blocks were half written (garbage data, no mark) is repaired."""
    spec, path = reference
    copy = tmp_path / "copy.zarr"
    shutil.copytree(path, copy)
    group = zarr.open_group(str(copy), mode="r+")
    group["block_complete"][1, :, :] = 0  # blocks (1, 0, 0) and (1, 1, 0) lost their marks
    group["vapour_fraction"][3:, :, :] = 0.123  # ... and hold half-written garbage
    group["phase_count"][3:, :2, :] = 0
    group.attrs["run_state"] = "running"
    spec = replace(spec, run=replace(spec.run, output=copy))
    summary = run(spec, resume=True)
    assert (summary.blocks_reused, summary.blocks_computed) == (2, 2)
    assert summary.cells_computed == 60
    assert_stores_identical(path, copy)
    assert read_root_attrs(copy)["run_sessions"] == 2
    # resuming a complete store computes nothing and keeps it identical
    again = run(spec, resume=True)
    assert (again.blocks_reused, again.blocks_computed) == (4, 0)
    assert_stores_identical(path, copy)


def test_resume_keeps_the_chunks_of_a_store_made_under_other_defaults(tmp_path, monkeypatch):
    """A store chunked by an earlier default policy (here: everything in one chunk) resumes with
    its own chunks where the config gives none, instead of being refused as misaligned."""
    import gridflash.plan._chunks as chunks_module

    spec = load_config(write_config(tmp_path, chunks="", grid={
        "p_start": 20.0, "p_stop": 270.0, "p_count": 40, "t_count": 8, "c_count": 5}))
    reference = run(replace(spec, run=replace(spec.run, output=tmp_path / "ref.zarr")))
    assert reference.blocks_total > 1  # today's defaults cut this 1,600-cell grid
    with monkeypatch.context() as patch:
        patch.setattr(chunks_module, "MIN_CHUNK_CELLS", 65_536)  # the old policy: one chunk
        first = run(spec)
    assert first.blocks_total == 1
    group = zarr.open_group(str(first.output), mode="r+")
    group["block_complete"][0, 0, 0] = 0
    group.attrs["run_state"] = "running"
    again = run(spec, resume=True)
    assert (again.blocks_total, again.blocks_computed) == (1, 1)
    assert_same_phase_split(open_table(reference.output).load(),
                            open_table(again.output).load(), tol=1e-8)


def test_resume_without_store_is_a_fresh_run(tmp_path):
    spec = load_config(write_config(tmp_path))
    summary = run(spec, resume=True)
    assert (summary.blocks_reused, summary.blocks_computed) == (0, 4)


def test_refuses_existing_store(reference):
    spec, path = reference
    before = read_root_attrs(path)
    with pytest.raises(StoreError, match="already exists; use --resume .* or --overwrite") as info:
        run(spec)
    assert "\n" not in str(info.value)
    assert read_root_attrs(path) == before


def test_resume_refuses_changed_config(reference, tmp_path):
    _, path = reference
    config = write_config(tmp_path, output=str(path), grid={
        "p_start": 20.0, "p_stop": 280.0, "p_count": 6, "t_count": 4, "c_count": 5})
    with pytest.raises(StoreError, match=r"changed keys: pressure\.stop\)"):
        run(load_config(config), resume=True)
    # execution-only keys (workers, scheduler, output) may change on resume
    same = write_config(tmp_path, "same.toml", output=str(path), workers=1, scheduler="processes")
    summary = run(load_config(same), resume=True)
    assert summary.blocks_computed == 0


def test_resume_refuses_other_warm_start_setting(reference):
    spec, path = reference
    cold = replace(spec, run=replace(spec.run, warm_start=False))
    with pytest.raises(StoreError, match="warm starts on"):
        run(cold, resume=True)


def test_overwrite(reference, tmp_path):
    spec, path = reference
    copy = tmp_path / "copy.zarr"
    shutil.copytree(path, copy)
    zarr.open_group(str(copy), mode="r+")["vapour_fraction"][0, 0, 0] = 0.5
    summary = run(replace(spec, run=replace(spec.run, output=copy)), overwrite=True)
    assert summary.blocks_computed == 4
    assert_stores_identical(path, copy)


def test_overwrite_refuses_foreign_folder(tmp_path):
    folder = tmp_path / "precious"
    folder.mkdir()
    (folder / "notes.txt").write_text("keep")
    spec = load_config(write_config(tmp_path, output=str(folder)))
    with pytest.raises(StoreError, match="not a gridflash store"):
        run(spec, overwrite=True)
    assert (folder / "notes.txt").read_text() == "keep"


def test_unwritable_output(tmp_path):
    (tmp_path / "file").write_text("x")
    spec = load_config(write_config(tmp_path, output=str(tmp_path / "file" / "out.zarr")))
    with pytest.raises(StoreError, match="choose a writable output path") as info:
        run(spec)
    assert "\n" not in str(info.value)


def test_unreachable_scheduler_leaves_store_alone(reference, tmp_path, monkeypatch):
    monkeypatch.setattr("gridflash.runner._CONNECT_TIMEOUT", 1.0)
    spec, path = reference
    copy = tmp_path / "copy.zarr"
    shutil.copytree(path, copy)
    spec = replace(spec, run=replace(spec.run, output=copy))
    with pytest.raises(GridflashError, match="cannot reach the dask scheduler at"):
        run(spec, overwrite=True, scheduler_address="tcp://127.0.0.1:9")
    assert_stores_identical(path, copy)
    fresh = replace(spec, run=replace(spec.run, output=tmp_path / "new.zarr"))
    with pytest.raises(GridflashError, match="cannot reach"):
        run(fresh, scheduler_address="tcp://127.0.0.1:9")
    assert not (tmp_path / "new.zarr").exists()


@pytest.mark.parametrize("kwargs", [{"resume": True, "overwrite": True}, {"workers": 0}])
def test_bad_arguments(reference, kwargs):
    spec, _ = reference
    with pytest.raises(InputError):
        run(spec, **kwargs)
