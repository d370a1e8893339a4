"""Sampling mode: config keys, the low-discrepancy design, the sample store, warm starts, resume.

External references used here:
- Sobol', "On the distribution of points in a cube and the approximate evaluation of
  integrals", USSR Comput. Math. Math. Phys. 7 (1967) 86-112: the Sobol' sequence is a
  (t, s)-sequence in base 2, so each one-dimensional projection of an aligned block of 2^m
  points puts exactly one point in each interval [k/2^m, (k+1)/2^m); Owen, "Randomly permuted
  (t,m,s)-nets and (t,s)-sequences" (1995) and Matousek, "On the L2-discrepancy for anchored
  boxes" (J. Complexity 14, 1998): the scrambling keeps this property.
- Halton (1960) / van der Corput: coordinate j of the Halton sequence is the radical inverse in
  the j-th prime base b, so the first b^m points put one point in each interval of length b^-m;
  digit-permutation scrambling keeps it.
- Devroye, *Non-Uniform Random Variate Generation* (Springer 1986), ch. V, Theorem 2.2: the
  spacings of sorted uniforms are uniform on the simplex, i.e. Dirichlet(1, ..., 1), with
  mean 1/n per fraction and P(fraction > t) = (1 - t)^(n-1).
- NIST SP 811: 1 bar = 1e5 Pa, T/K = t/degC + 273.15.
- Warm starts equal to cold starts: the project's own acceptance rule (DESIGN.md), checked
  against cold gridflash.flash calls.
"""

from __future__ import annotations

import shutil
from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest
import xarray as xr
import zarr
from scipy.stats import qmc

import gridflash
from gridflash import ConfigError, StoreError
from gridflash.analysis._inspect import inspect_store
from gridflash.compute._sample_sweep import wave_bounds
from gridflash.config._parser import canonical_config, changed_keys, load_config, parse_config
from gridflash.plan._sampling import sample_inputs, simplex_from_cube, unit_points
from gridflash.runner import run
from gridflash.store import read_root_attrs

from ._run_helpers import assert_same_phase_split, assert_stores_identical
from ._sample_helpers import SIMPLEX, sample_config_text, write_sample_config

# --------------------------------------------------------------------------------------------
# Config
# --------------------------------------------------------------------------------------------


def test_sampling_config_in_si_units():
    spec = parse_config(sample_config_text(), base_dir="/tmp")
    design = spec.sampling
    assert design is not None
    assert spec.dims == ("sample",) and spec.shape == (256,)
    assert (design.points, design.sequence, design.seed) == (256, "sobol", 20240611)
    # NIST SP 811: 1 bar = 1e5 Pa exactly; T/K = t/degC + 273.15
    assert design.pressure == (2.0e6, 3.0e7)
    assert design.temperature == pytest.approx((313.15, 433.15), abs=1e-12)
    assert design.composition == "mixing" and design.mixing_ratio == (0.0, 1.0)
    assert design.streams == ("invented_oil", "invented_gas")
    assert design.dimension == 3
    assert spec.run.sweep == "sample" and spec.run.chunks == (("sample", 64),)
    simplex = parse_config(sample_config_text(composition=SIMPLEX)).sampling
    assert simplex.composition == "simplex" and simplex.dimension == 4


def _mutate(old: str, new: str, **kwargs) -> str:
    text = sample_config_text(**kwargs)
    assert old in text, old
    return text.replace(old, new, 1)


# (case id, config text, dotted key the one-line message must name, a phrase it must contain)
MISTAKES = [
    ("points missing", _mutate("points = 256\n", ""), "sampling.points", "missing"),
    ("points zero", _mutate("points = 256", "points = 0"), "sampling.points", "out of range"),
    ("points float", _mutate("points = 256", "points = 2.5e2"), "sampling.points",
     "not an integer"),
    ("points string", _mutate("points = 256", 'points = "256"'), "sampling.points",
     "not an integer"),
    ("points too many", _mutate("points = 256", "points = 1000001"), "sampling.points",
     "out of range"),
    ("sequence typo", _mutate('sequence = "sobol"', 'sequence = "sobel"'), "sampling.sequence",
     "did you mean 'sobol'"),
    ("sequence random", _mutate('sequence = "sobol"', 'sequence = "random"'),
     "sampling.sequence", "choose one of"),
    ("seed missing", _mutate("seed = 20240611\n", ""), "sampling.seed", "missing"),
    ("seed negative", _mutate("seed = 20240611", "seed = -1"), "sampling.seed", "out of range"),
    ("seed float", _mutate("seed = 20240611", "seed = 1.5"), "sampling.seed", "not an integer"),
    ("unknown key", _mutate("seed = 20240611", "seed = 1\nscramble = false"),
     "sampling.scramble", "unknown key"),
    ("not a table", _mutate("[sampling]\npoints = 256\nsequence = \"sobol\"\nseed = 20240611\n",
                            "").replace("[fluid]", "sampling = 5\n[fluid]"),
     "sampling", "not a table"),
    ("pressure count", _mutate("stop = 300.0", "stop = 300.0\ncount = 10"), "pressure.count",
     "not used with [sampling]"),
    ("pressure values", _mutate("start = 20.0\nstop = 300.0", "values = [20.0, 300.0]"),
     "pressure.values", "not used with [sampling]"),
    ("pressure stop below start", _mutate("stop = 300.0", "stop = 10.0"), "pressure.stop",
     "is less than pressure.start"),
    ("pressure start missing", _mutate("start = 20.0\n", ""), "pressure.start", "missing"),
    ("pressure negative", _mutate("start = 20.0", "start = -5.0"), "pressure.start", "-5.0"),
    ("temperature below 0 K", _mutate("start = 40.0", "start = -300.0"), "temperature.start",
     "-300.0"),
    ("ratio above 1", _mutate("stop = 1.0", "stop = 1.5"), "composition.stop", "between 0 and 1"),
    ("list kind", _mutate('kind = "mixing"\nstreams = ["invented_oil", "invented_gas"]\n'
                          "start = 0.0\nstop = 1.0", 'kind = "list"\nstreams = ["invented_oil"]'),
     "composition.kind", "cannot be sampled"),
    ("simplex divisions", sample_config_text(composition=SIMPLEX + "\ndivisions = 4"),
     "composition.divisions", "not used with [sampling]"),
    ("simplex two streams", sample_config_text(
        composition='kind = "simplex"\nstreams = ["invented_oil", "invented_gas"]'),
     "composition.streams", "at least three"),
    ("run sweep", _mutate("warm_start = true", 'warm_start = true\nsweep = "pressure"'),
     "run.sweep", "not used with [sampling]"),
    ("run chunks pressure", _mutate("chunks = { sample = 64 }", "chunks = { pressure = 4 }"),
     "run.chunks.pressure", "not a dimension of a sampling run"),
    ("run chunks zero", _mutate("chunks = { sample = 64 }", "chunks = { sample = 0 }"),
     "run.chunks.sample", "out of range"),
]


@pytest.mark.parametrize(("text", "key", "phrase"), [m[1:] for m in MISTAKES],
                         ids=[m[0] for m in MISTAKES])
def test_sampling_mistakes_give_one_line_errors_naming_the_key(text, key, phrase):
    with pytest.raises(ConfigError) as info:
        parse_config(text, source="samples.toml")
    message = str(info.value)
    assert "\n" not in message
    assert message.startswith("samples.toml: ")
    assert key in message, message
    assert phrase in message, message


def test_hash_changes_with_points_seed_sequence_and_ranges():
    base = parse_config(sample_config_text()).config_hash
    variants = {
        "sampling.points": sample_config_text(points=257),
        "sampling.seed": sample_config_text(seed=7),
        "sampling.sequence": sample_config_text(sequence="halton"),
        "pressure.stop": _mutate("stop = 300.0", "stop = 310.0"),
        "temperature.start": _mutate("start = 40.0", "start = 45.0"),
        "composition.stop": _mutate("stop = 1.0", "stop = 0.5"),
    }
    old = canonical_config(sample_config_text())
    for key, text in variants.items():
        assert parse_config(text).config_hash != base, key
        assert changed_keys(old, canonical_config(text)) == [key]
    # formatting, comments and 300 vs 300.0 leave it alone; so do execution-only keys
    same = _mutate("stop = 300.0", "stop = 300  # bar").replace("workers = 2", "workers = 1")
    assert parse_config(same).config_hash == base
    # a sampled config never hashes like the grid it came from
    assert "sampling" in old and old["run"]["sweep"] == "sample"


def test_zero_width_range_fixes_the_value():
    text = _mutate("start = 40.0\nstop = 160.0", "start = 80.0\nstop = 80.0")
    inputs = sample_inputs(parse_config(text).sampling, 0, 32)
    assert np.all(inputs.temperature == 353.15)
    # the other inputs are the same points as with a range (the coordinate is still drawn)
    ranged = sample_inputs(parse_config(sample_config_text()).sampling, 0, 32)
    assert np.array_equal(inputs.pressure, ranged.pressure)


# --------------------------------------------------------------------------------------------
# The design
# --------------------------------------------------------------------------------------------


@pytest.mark.parametrize("sequence", ["sobol", "halton"])
def test_any_index_range_equals_the_slice_of_a_longer_draw(sequence):
    whole = unit_points(sequence, 4, 99, 0, 300)
    assert np.array_equal(unit_points(sequence, 4, 99, 128, 200), whole[128:200])
    assert np.all((whole >= 0.0) & (whole < 1.0))
    assert not np.array_equal(unit_points(sequence, 4, 98, 0, 300), whole)  # seeded


def test_sobol_blocks_are_stratified_in_every_coordinate():
    """Sobol' (1967), Owen (1995): every aligned block of 2^m points is a net in each
    coordinate -- exactly one point per interval of length 2^-m (so chunks of 2^k samples are
    balanced on their own)."""
    for start in (0, 256, 768):
        u = unit_points("sobol", 4, 3, start, start + 256)
        for j in range(4):
            cells = np.sort(np.floor(u[:, j] * 256).astype(int))
            assert np.array_equal(cells, np.arange(256)), (start, j)


def test_halton_coordinates_are_stratified_in_their_bases():
    """Van der Corput / Halton: the first b^m points of coordinate j (base b = j-th prime)
    put one point in each interval of length b^-m."""
    u = unit_points("halton", 3, 5, 0, 243)
    for j, base in enumerate((2, 3, 5)):
        m = int(np.floor(np.log(243) / np.log(base) + 1e-9))
        n = base**m
        cells = np.sort(np.floor(u[:n, j] * n).astype(int))
        assert np.array_equal(cells, np.arange(n)), (j, base)


@pytest.mark.parametrize("sequence", ["sobol", "halton"])
def test_design_covers_the_ranges_better_than_random_points(sequence):
    spec = parse_config(sample_config_text(points=1024, sequence=sequence))
    inputs = sample_inputs(spec.sampling, 0, 1024)
    for values, (lo, hi) in ((inputs.pressure, (2e6, 3e7)),
                             (inputs.temperature, (313.15, 433.15)),
                             (inputs.mixing_ratio, (0.0, 1.0))):
        span = hi - lo
        assert lo <= values.min() < lo + 0.002 * span
        assert hi - 0.002 * span < values.max() <= hi
    # Centered L2-discrepancy (scipy.stats.qmc.discrepancy): far below that of independent
    # uniform points (expected about 1/N larger for them).
    random_points = np.random.default_rng(0).random((1024, 3))
    assert qmc.discrepancy(inputs.unit) < 0.2 * qmc.discrepancy(random_points)


def test_simplex_mapping_is_uniform_on_the_simplex():
    """Devroye (1986), ch. V Th. 2.2: spacings of sorted uniforms are Dirichlet(1, 1, 1):
    mean 1/3 per fraction, P(fraction > 1/2) = (1 - 1/2)^2 = 1/4."""
    fractions = simplex_from_cube(unit_points("sobol", 2, 1, 0, 4096))
    assert np.all(fractions >= 0.0)
    assert np.allclose(fractions.sum(axis=1), 1.0, rtol=0, atol=1e-15)
    assert fractions.mean(axis=0) == pytest.approx([1 / 3] * 3, abs=0.005)
    assert (fractions > 0.5).mean(axis=0) == pytest.approx([0.25] * 3, abs=0.01)
    assert np.all(fractions.max(axis=0) > 0.98)  # every corner is approached
    # a worked case: sorted (0.2, 0.7) -> spacings (0.2, 0.5, 0.3)
    assert simplex_from_cube(np.array([[0.7, 0.2]]))[0] == pytest.approx([0.2, 0.5, 0.3])


def test_wave_bounds():
    assert wave_bounds(64) == [0, 8, 16, 32, 64]
    assert wave_bounds(100) == [0, 13, 25, 50, 100]
    assert wave_bounds(1) == [0, 1]
    assert wave_bounds(5) == [0, 1, 2, 3, 5]


# --------------------------------------------------------------------------------------------
# Runs
# --------------------------------------------------------------------------------------------


@pytest.fixture(scope="module")
def sampled(tmp_path_factory):
    """256 samples in 4 chunks of 64, warm starts on: (spec, store path)."""
    folder = tmp_path_factory.mktemp("sampled")
    spec = load_config(write_sample_config(folder))
    summary = run(spec)
    assert (summary.blocks_computed, summary.cells_total) == (4, 256)
    return spec, summary.output


def test_sample_store_opens_with_xarray(sampled):
    spec, path = sampled
    with xr.open_zarr(path) as ds:
        assert ds.phase_count.dims == ("sample",)
        assert ds.liquid_composition.dims == ("sample", "component")
        assert ds.feed_composition.dims == ("sample", "component")
        assert ds.stream_fraction.dims == ("sample", "stream")
        for name in ("pressure", "temperature", "mixing_ratio"):
            assert ds[name].dims == ("sample",) and name in ds.coords
        assert ds.pressure.attrs["units"] == "Pa" and ds.temperature.attrs["units"] == "K"
        assert ds.sample.values.tolist() == list(range(256))
        inputs = sample_inputs(spec.sampling, 0, 256)
        assert np.array_equal(ds.pressure.values, inputs.pressure)
        assert np.array_equal(ds.mixing_ratio.values, inputs.mixing_ratio)
        assert np.array_equal(ds.feed_composition.values, inputs.z)
        assert ds.attrs["sample_sequence"] == "sobol" and ds.attrs["sample_seed"] == 20240611
        assert ds.attrs["config_hash"] == spec.config_hash and ds.attrs["sweep"] == "sample"
    table = gridflash.open_table(path)
    assert "block_complete" not in table and table.attrs["run_state"] == "complete"


def test_sample_values_equal_direct_flash(sampled):
    """Every stored sample equals a cold gridflash.flash call on its stored inputs (phase
    counts identical, vapour fractions within 1e-8, DESIGN.md)."""
    spec, path = sampled
    ds = gridflash.open_table(path)
    ref = gridflash.flash(spec.fluid.mixture(), ds.pressure.values, ds.temperature.values,
                          ds.feed_composition.values)
    assert np.array_equal(ds.phase_count.values, ref.phase_count)
    assert np.array_equal(ds.phase_label.values, ref.phase_label)
    assert np.array_equal(ds.converged.values, ref.converged)
    assert np.max(np.abs(ds.vapour_fraction.values - ref.vapour_fraction)) <= 1e-8
    for name, expected in {"liquid_composition": ref.x, "vapour_composition": ref.y,
                           "k_value": ref.K, "liquid_density": ref.liquid.mass_density,
                           "vapour_viscosity": ref.vapour.viscosity}.items():
        got = ds[name].values
        assert np.array_equal(np.isnan(got), np.isnan(expected)), name
        assert np.allclose(got, expected, rtol=1e-7, atol=1e-10, equal_nan=True), name
    # the table is worth testing: both phase states occur
    assert 0 < int((ref.phase_count == 2).sum()) < 256


def test_warm_starts_equal_cold_and_do_not_depend_on_chunks(sampled, tmp_path):
    spec, path = sampled
    warm = gridflash.open_table(path)
    offered = int(warm.warm_start.values.sum())
    assert offered > 0.25 * 256  # warm starts were really used
    assert warm.warm_start.values[:8].sum() == 0  # the first wave of each chunk starts cold
    for name, kwargs in {"cold": {"warm": False}, "one_chunk": {"chunk": None},
                         "chunks_of_48": {"chunk": 48}}.items():
        folder = tmp_path / name
        folder.mkdir()
        other_spec = load_config(write_sample_config(folder, **kwargs))
        run(other_spec)
        other = gridflash.open_table(other_spec.run.output)
        assert np.array_equal(other.pressure.values, warm.pressure.values), name
        assert np.array_equal(other.feed_composition.values, warm.feed_composition.values)
        assert_same_phase_split(warm, other)
        if name == "cold":
            assert not other.warm_start.values.any()
            # warm-started cells took fewer iterations on average than the same cells cold
            mask = warm.warm_start.values
            assert warm.iterations.values[mask].mean() < other.iterations.values[mask].mean()


def test_resume_of_a_sample_run(sampled, tmp_path):
    spec, path = sampled
    copy = tmp_path / "copy.zarr"
    shutil.copytree(path, copy)
    group = zarr.open_group(str(copy), mode="r+")
    group["block_complete"][2:] = 0  # the last two chunks lost their marks ...
    group["vapour_fraction"][150:] = 0.5  # ... and hold half-written garbage
    group["phase_count"][200:] = 0
    group.attrs["run_state"] = "running"
    resumed = replace(spec, run=replace(spec.run, output=copy))
    summary = run(resumed, resume=True)
    assert (summary.blocks_reused, summary.blocks_computed, summary.cells_computed) == (2, 2, 128)
    assert_stores_identical(path, copy)
    assert read_root_attrs(copy)["run_sessions"] == 2
    # a different seed is a different table: refused, naming the key
    other = write_sample_config(tmp_path, seed=1, output=str(copy))
    with pytest.raises(StoreError, match=r"changed keys: sampling\.seed\)"):
        run(load_config(other), resume=True)


def test_inspect_reports_the_sampled_ranges(sampled):
    _, path = sampled
    report = inspect_store(path)
    axes = {ax.name: ax for ax in report.axes}
    assert axes["sample"].size == 256 and report.cells_total == 256
    ds = gridflash.open_table(path)
    assert axes["pressure"].first == ds.pressure.values.min()
    assert axes["pressure"].last == ds.pressure.values.max()
    assert "mixing_ratio" in axes and report.blocks_complete == 4
    assert report.stats.two_phase == int((ds.phase_count.values == 2).sum())


def test_simplex_sample_run(tmp_path):
    spec = load_config(write_sample_config(tmp_path, points=64, chunk=32, composition=SIMPLEX))
    run(spec)
    ds = gridflash.open_table(spec.run.output)
    fractions = ds.stream_fraction.values
    assert fractions.shape == (64, 3) and "mixing_ratio" not in ds.coords
    assert np.all(fractions >= 0) and np.allclose(fractions.sum(axis=1), 1.0, atol=1e-15)
    assert np.allclose(ds.feed_composition.values, fractions @ ds.stream_composition.values,
                       rtol=0, atol=1e-15)
    ref = gridflash.flash(spec.fluid.mixture(), ds.pressure.values, ds.temperature.values,
                          ds.feed_composition.values)
    assert np.array_equal(ds.phase_count.values, ref.phase_count)
    assert np.max(np.abs(ds.vapour_fraction.values - ref.vapour_fraction)) <= 1e-8


def test_example_training_samples_config():
    """configs/training_samples.toml parses to the design its comments describe."""
    path = Path(__file__).resolve().parents[1] / "configs" / "training_samples.toml"
    assert "INVENTED SCENARIO" in path.read_text()
    spec = load_config(path)
    design = spec.sampling
    assert (design.points, design.sequence, design.composition) == (4096, "sobol", "mixing")
    assert design.pressure == (5.0e6, 4.3e7)  # 50 .. 430 bar
    assert design.temperature == pytest.approx((333.15, 393.15), abs=1e-12)  # 60 .. 120 degC
    assert spec.run.chunks == (("sample", 1024),) and len(spec.fluid.components) == 10
