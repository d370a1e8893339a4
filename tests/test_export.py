"""``gridflash export``: the flat training table, its column description and the split.

External references used here:
- FIPS PUB 180-4 (SHA-256) through Python's hashlib, and the split recipe documented in
  docs/training.md, re-implemented independently below with ``struct``.
- Binomial standard deviation sqrt(f (1 - f) / n) for the share of rows in a split (common
  practice: a share more than 4 standard deviations off would be a bug, not chance).
- pyarrow and xarray read the files back (reference readers of Parquet and NetCDF).
"""

from __future__ import annotations

import hashlib
import json
import shutil
import struct
import subprocess
import sys

import numpy as np
import pyarrow.parquet as pq
import pytest
import xarray as xr
import zarr
from click.testing import CliRunner

import gridflash
from gridflash import InputError, StoreError
from gridflash.analysis._export import _boxes, export_table, parse_split, split_of, split_unit
from gridflash.cli import cli
from gridflash.config._parser import load_config
from gridflash.runner import run

from ._run_helpers import write_config
from ._sample_helpers import SIMPLEX, write_sample_config

SPLITS = ("train", "validation", "test")


@pytest.fixture(scope="module")
def grid_store(tmp_path_factory):
    """The small 6 x 4 x 5 test grid (120 cells) in 4 chunks."""
    folder = tmp_path_factory.mktemp("grid")
    spec = load_config(write_config(folder))
    return run(spec).output


@pytest.fixture(scope="module")
def sample_store(tmp_path_factory):
    """512 samples of the invented simplex of three streams, in chunks of 128."""
    folder = tmp_path_factory.mktemp("samples")
    spec = load_config(write_sample_config(folder, points=512, chunk=128, composition=SIMPLEX))
    return run(spec).output


def _read(path) -> tuple[dict, dict]:
    table = pq.read_table(path)
    columns = {name: table.column(name).to_numpy(zero_copy_only=False)
               for name in table.column_names}
    doc = json.loads((path.parent / (path.name + ".columns.json")).read_text())
    return columns, doc


def test_grid_export_round_trip(grid_store, tmp_path):
    out = tmp_path / "grid.parquet"
    summary = export_table(grid_store, out)
    columns, doc = _read(out)
    ds = gridflash.open_table(grid_store)
    dims = ds.phase_count.dims
    shape = ds.phase_count.shape
    # one row per cell, in cell order
    assert summary.rows == doc["rows"] == len(columns["cell"]) == 120 == summary.cells
    assert np.array_equal(columns["cell"], np.arange(120))
    index = np.unravel_index(columns["cell"], shape)
    p = ds.pressure.values[index[0]]
    t = ds.temperature.values[index[1]]
    assert np.array_equal(columns["pressure"], p)
    assert np.array_equal(columns["temperature"], t)
    assert np.array_equal(columns["mixing_ratio"], ds.mixing_ratio.values[index[2]])
    feed = ds.feed_composition.values[index[2]]
    for j, c in enumerate(ds.component.values):
        assert np.array_equal(columns[f"feed_{c}"], feed[:, j])
        assert np.array_equal(columns[f"liquid_{c}"], ds.liquid_composition.values[index][:, j],
                              equal_nan=True)
        assert np.array_equal(columns[f"k_value_{c}"], ds.k_value.values[index][:, j],
                              equal_nan=True)
    for name in ("phase_count", "vapour_fraction", "converged", "status", "liquid_density",
                 "vapour_viscosity", "phase_label"):
        assert np.array_equal(columns[name], ds[name].values[index],
                              equal_nan=columns[name].dtype.kind == "f"), name
    assert columns["phase_count"].dtype == np.int8 and columns["converged"].dtype == bool
    assert dims == ("pressure", "temperature", "mixing_ratio")
    # stream fractions of the two mixed streams
    assert np.allclose(columns["stream_fraction_invented_gas"], columns["mixing_ratio"])


def test_every_column_is_described(grid_store, tmp_path):
    out = tmp_path / "grid.parquet"
    export_table(grid_store, out)
    table = pq.read_table(out)
    _, doc = _read(out)
    described = {c["name"]: c for c in doc["columns"]}
    assert list(described) == table.column_names
    for name in table.column_names:
        record = described[name]
        assert record["role"] in ("id", "feature", "label", "split")
        assert record["description"] and "units" in record and record["dtype"]
        meta = table.schema.field(name).metadata
        assert meta[b"units"].decode() == record["units"]
        assert meta[b"description"].decode() == record["description"]
    assert described["pressure"]["units"] == "Pa" and described["temperature"]["units"] == "K"
    assert described["liquid_density"]["units"] == "kg m-3"
    assert described["vapour_viscosity"]["units"] == "Pa s"
    assert described["phase_count"]["role"] == "label"
    assert described["feed_CO2"]["role"] == "feature"
    embedded = json.loads(table.schema.metadata[b"gridflash"])
    assert [c["name"] for c in embedded["columns"]] == table.column_names
    assert doc["config_hash"] == gridflash.open_table(grid_store).attrs["config_hash"]


def test_sample_export_round_trip_and_split_shares(sample_store, tmp_path):
    out = tmp_path / "samples.parquet"
    summary = export_table(sample_store, out, split="0.7,0.2,0.1")
    columns, doc = _read(out)
    ds = gridflash.open_table(sample_store)
    assert summary.rows == 512 and np.array_equal(columns["cell"], ds.sample.values)
    assert np.array_equal(columns["pressure"], ds.pressure.values)
    for k, s in enumerate(ds.stream.values):
        assert np.array_equal(columns[f"stream_fraction_{s}"], ds.stream_fraction.values[:, k])
    assert np.array_equal(columns["vapour_fraction"], ds.vapour_fraction.values, equal_nan=True)
    assert "mixing_ratio" not in columns
    counts = {s: int((columns["split"] == s).sum()) for s in SPLITS}
    assert counts == summary.split_counts == doc["split"]["counts"]
    for s, share in zip(SPLITS, (0.7, 0.2, 0.1), strict=True):
        sigma = np.sqrt(share * (1 - share) / 512)
        assert abs(counts[s] / 512 - share) < 4 * sigma, (s, counts)


def test_split_shares_on_many_cells():
    rng = np.random.default_rng(1)
    n = 50_000
    z = rng.dirichlet(np.ones(5), n)
    labels = split_of(rng.uniform(1e5, 5e7, n), rng.uniform(250, 500, n), z, (0.8, 0.1, 0.1))
    for s, share in zip(SPLITS, (0.8, 0.1, 0.1), strict=True):
        sigma = np.sqrt(share * (1 - share) / n)
        assert abs((labels == s).mean() - share) < 4 * sigma


def test_split_follows_the_documented_recipe():
    """docs/training.md: SHA-256 of little-endian int64 (mPa, uK, 1e-9 mole fractions);
    first 8 bytes big-endian / 2**64; train below 0.8, validation below 0.9."""
    p, t, z = 2.5e7, 350.15, [0.25, 0.5, 0.125, 0.125]
    ints = [round(p / 1e-3), round(t / 1e-6), *(round(x / 1e-9) for x in z)]
    digest = hashlib.sha256(struct.pack("<6q", *ints)).digest()
    u = int.from_bytes(digest[:8], "big") / 2**64
    got = split_unit(np.array([p]), np.array([t]), np.array([z]))
    assert got[0] == u
    expected = "train" if u < 0.8 else "validation" if u < 0.9 else "test"
    assert split_of([p], [t], [z])[0] == expected


def test_split_depends_only_on_the_cell():
    rng = np.random.default_rng(2)
    p, t, z = rng.uniform(1e6, 4e7, 300), rng.uniform(300, 450, 300), rng.dirichlet(np.ones(4),
                                                                                      300)
    labels = split_of(p, t, z)
    order = rng.permutation(300)
    assert np.array_equal(split_of(p[order], t[order], z[order]), labels[order])
    assert np.array_equal(split_of(p[:7], t[:7], z[:7]), labels[:7])
    # rounding noise below the quantisation step leaves the split alone
    assert np.array_equal(split_of(p * (1 + 1e-15), t, z), labels)


@pytest.mark.slow
def test_same_cell_same_split_after_rechunking(grid_store, tmp_path):
    other = load_config(write_config(tmp_path, chunks="pressure = 2, temperature = 3, "
                                                      "composition = 2", output="other.zarr"))
    run(other)
    a, _ = _read(_export(grid_store, tmp_path / "a.parquet"))
    b, _ = _read(_export(other.run.output, tmp_path / "b.parquet", rows_per_group=7))
    assert np.array_equal(a["cell"], b["cell"])
    assert np.array_equal(a["split"], b["split"])
    assert np.array_equal(a["phase_count"], b["phase_count"])


def _export(store, out, **kwargs):
    export_table(store, out, **kwargs)
    return out


def test_small_row_groups_give_the_same_table(grid_store, tmp_path):
    a, _ = _read(_export(grid_store, tmp_path / "a.parquet"))
    b, _ = _read(_export(grid_store, tmp_path / "b.parquet", rows_per_group=7))
    assert a.keys() == b.keys()
    for name in a:
        assert np.array_equal(a[name], b[name], equal_nan=a[name].dtype.kind == "f"), name
    assert pq.ParquetFile(tmp_path / "b.parquet").num_row_groups > 1


@pytest.mark.parametrize(("shape", "rows"), [((6, 4, 5), 7), ((6, 4, 5), 20), ((6, 4, 5), 1000),
                                              ((3, 50, 7), 40), ((1000,), 64), ((2, 1, 3), 1)])
def test_boxes_partition_the_grid_in_c_order(shape, rows):
    seen = []
    for box in _boxes(shape, rows):
        cells = np.arange(np.prod(shape)).reshape(shape)[box].ravel()
        assert 0 < cells.size <= rows
        seen.extend(cells.tolist())
    assert seen == list(range(int(np.prod(shape))))


def test_netcdf_export_matches_parquet(grid_store, tmp_path):
    a, _ = _read(_export(grid_store, tmp_path / "a.parquet"))
    summary = export_table(grid_store, tmp_path / "a.nc")
    assert summary.format == "netcdf"
    with xr.open_dataset(tmp_path / "a.nc") as nc:
        assert nc.sizes["row"] == 120
        for name in a:
            values = nc[name].values
            if name == "split":
                values = values.astype(str)
            assert np.array_equal(values, a[name], equal_nan=a[name].dtype.kind == "f"), name
        assert nc.pressure.attrs["units"] == "Pa" and nc.pressure.attrs["role"] == "feature"
    doc = json.loads((tmp_path / "a.nc.columns.json").read_text())
    assert doc["format"] == "netcdf" and len(doc["columns"]) == len(a)


def test_unconverged_cells_kept_flagged_or_dropped(grid_store, tmp_path):
    copy = tmp_path / "copy.zarr"
    shutil.copytree(grid_store, copy)
    group = zarr.open_group(str(copy), mode="r+")
    group["converged"][0, 0, :3] = False  # pretend three cells failed
    group["status"][0, 0, :3] = 1
    kept, _ = _read(_export(copy, tmp_path / "kept.parquet"))
    assert len(kept["cell"]) == 120 and (~kept["converged"]).sum() == 3
    assert kept["status"][:3].tolist() == [1, 1, 1]
    summary = export_table(copy, tmp_path / "dropped.parquet", converged_only=True)
    dropped, doc = _read(tmp_path / "dropped.parquet")
    assert summary.rows == 117 and summary.dropped_unconverged == 3
    assert doc["dropped_unconverged"] == 3 and doc["converged_only"] is True
    assert dropped["cell"].tolist() == list(range(3, 120)) and dropped["converged"].all()


@pytest.mark.parametrize(("split", "phrase"), [
    ("0.8,0.1", "has 2 share(s)"), ("0.8,0.1,0.2", "sums to 1.1"), ("0.9,-0.1,0.2", "below 0"),
    ("a,b,c", "not three numbers"), ((0.5, 0.5, float("nan")), "not finite"),
])
def test_bad_split_refused(split, phrase):
    with pytest.raises(InputError, match=phrase.replace("(", r"\(").replace(")", r"\)")):
        parse_split(split)


def test_refuses_existing_file_and_unfinished_store(grid_store, tmp_path):
    out = tmp_path / "t.parquet"
    export_table(grid_store, out)
    with pytest.raises(StoreError, match="already exists; use --overwrite"):
        export_table(grid_store, out)
    export_table(grid_store, out, overwrite=True)
    copy = tmp_path / "copy.zarr"
    shutil.copytree(grid_store, copy)
    zarr.open_group(str(copy), mode="r+").attrs["run_state"] = "running"
    with pytest.raises(StoreError, match="has not finished"):
        export_table(copy, tmp_path / "u.parquet")
    assert not (tmp_path / "u.parquet").exists()


# --------------------------------------------------------------------------------------------
# Command line
# --------------------------------------------------------------------------------------------


def _invoke(*args):
    return CliRunner().invoke(cli, [str(a) for a in args], catch_exceptions=False)


def test_cli_export(sample_store, tmp_path):
    out = tmp_path / "cli.parquet"
    result = _invoke("export", sample_store, "--out", out, "--split", "0.6,0.2,0.2")
    assert result.exit_code == 0, result.stderr
    assert "512 rows of 512 cells" in result.stdout
    columns, doc = _read(out)
    assert doc["split"]["fractions"] == {"train": 0.6, "validation": 0.2, "test": 0.2}
    assert len(columns["cell"]) == 512


@pytest.mark.parametrize(("args", "code", "phrase"), [
    (["export", "{folder}/missing.zarr", "--out", "{folder}/x.parquet"], 1, "no store at"),
    (["export", "{store}", "--out", "{folder}/exists.parquet"], 1, "already exists"),
    (["export", "{store}", "--out", "{folder}/x.parquet", "--split", "0.5,0.5"], 2,
     "Invalid value for '--split'"),
    (["export", "{store}", "--out", "{folder}/x.parquet", "--format", "json"], 2,
     "Invalid value for '--format'"),
    # a format that contradicts the suffix, or no way to tell the format: refused
    (["export", "{store}", "--out", "{folder}/x.parquet", "--format", "csv"], 1,
     "does not match 'x.parquet'"),
    (["export", "{store}", "--out", "{folder}/ok.csv", "--format", "parquet"], 1,
     "does not match 'ok.csv'"),
    (["export", "{store}", "--out", "{folder}/x.dat"], 1, "cannot tell the format"),
    (["export", "{store}"], 2, "Missing option '--out'"),
])
def test_cli_export_errors(sample_store, tmp_path, args, code, phrase):
    (tmp_path / "exists.parquet").write_text("keep")
    result = _invoke(*(a.format(folder=tmp_path, store=sample_store) for a in args))
    assert result.exit_code == code
    assert phrase in result.stderr and "Traceback" not in result.stderr
    if code == 1:
        assert result.stderr.count("\n") == 1
    assert not (tmp_path / "x.parquet").exists() and not (tmp_path / "ok.csv").exists()
    assert not (tmp_path / "x.dat").exists()
    assert (tmp_path / "exists.parquet").read_text() == "keep"


@pytest.mark.parametrize(("name", "extra"), [("cli.csv", []), ("cli.txt", ["--format", "csv"])])
def test_cli_csv_export_equals_parquet(grid_store, tmp_path, name, extra):
    """A CSV (chosen by the suffix or --format) holds the Parquet export's values exactly
    (floats in 17 significant digits read back to the same doubles; NaN as an empty field),
    and its units sidecar gives each column's units. Reference reader: Python's csv module."""
    import csv
    import math

    parquet, doc = _read(_export(grid_store, tmp_path / "ref.parquet"))
    out = tmp_path / name
    result = _invoke("export", grid_store, "--out", out, *extra)
    assert result.exit_code == 0, result.stderr
    assert "(csv)" in result.stdout
    with out.open(newline="") as handle:
        rows = list(csv.reader(handle))
    header, body = rows[0], rows[1:]
    assert header == list(parquet) and len(body) == 120
    for j, column in enumerate(header):
        expected = parquet[column]
        for i, row in enumerate(body):
            got, want = row[j], expected[i]
            if isinstance(want, (bool, np.bool_)):
                assert got == str(bool(want)), column
            elif isinstance(want, (float, np.floating)):
                assert (got == "" and math.isnan(want)) or float(got) == want, (column, i)
            else:
                assert got == str(want), column
    units = {r["name"]: r["units"] for r in csv.DictReader((tmp_path / f"{name}.units.csv")
                                                            .open(newline=""))}
    assert units == {c["name"]: c["units"] for c in doc["columns"]}
    assert units["pressure"] == "Pa" and units["liquid_density"] == "kg m-3"
    again = _invoke("export", grid_store, "--out", out, *extra)
    assert again.exit_code == 1 and "already exists" in again.stderr


@pytest.mark.slow
def test_cli_run_and_export_a_sampling_config(tmp_path):
    """End to end in a subprocess: run a sampling config, export it, read it back."""
    config = write_sample_config(tmp_path, points=32, chunk=16)
    out = tmp_path / "t.parquet"
    outputs = []
    for args in (["run", config], ["export", tmp_path / "samples.zarr", "--out", out]):
        done = subprocess.run([sys.executable, "-m", "gridflash.cli", *map(str, args)],
                              capture_output=True, text=True, timeout=120)
        assert done.returncode == 0, done.stderr
        outputs.append(done.stdout)
    assert "samples: scrambled sobol, seed 20240611 = 32 cells in 2 chunks" in outputs[0]
    assert "32 rows of 32 cells" in outputs[1]
    assert pq.read_table(out).num_rows == 32
