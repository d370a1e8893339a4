"""Helpers shared by the runner, store, CLI and cluster tests (configs, store comparison).

The fluid is an invented 4-component test fluid (no real field data): an invented oil and an
invented CO2-rich gas mixed along a mixing-ratio axis.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import xarray as xr

import gridflash

# The CO2-hydrocarbon interaction parameters are common-practice magnitudes for Peng-Robinson
# (0.10-0.15), from memory; they only make the invented fluid realistic. Braces are doubled:
# the configs built from this are str.format templates.
INVENTED_FLUID = """\
[fluid]
eos = "PR78"
components = ["CO2", "C1", "nC4", "nC10"]
kij = {{ "CO2-C1" = 0.10, "CO2-nC4" = 0.13, "CO2-nC10" = 0.11 }}

[streams.invented_oil]
mole_fractions = {{ CO2 = 0.02, C1 = 0.43, nC4 = 0.20, nC10 = 0.35 }}

[streams.invented_gas]
mole_fractions = {{ CO2 = 0.75, C1 = 0.22, nC4 = 0.03 }}
"""

_CONFIG = (
    "# Invented test fluid and grid for the runner tests (no real field data).\n"
    + INVENTED_FLUID
    + """
[pressure]
unit = "bar"
start = {p_start}
stop = {p_stop}
count = {p_count}

[temperature]
unit = "degC"
start = 40.0
stop = 160.0
count = {t_count}

[composition]
kind = "mixing"
streams = ["invented_oil", "invented_gas"]
start = 0.0
stop = 1.0
count = {c_count}

[run]
output = "{output}"
chunks = {{ {chunks} }}
workers = {workers}
scheduler = "{scheduler}"
sweep = "{sweep}"
warm_start = {warm}
"""
)

#: Small grid: 6 pressures x 4 temperatures x 5 ratios = 120 cells.
SMALL = {"p_start": 20.0, "p_stop": 270.0, "p_count": 6, "t_count": 4, "c_count": 5}


def write_config(
    folder: Path,
    name: str = "test.toml",
    *,
    output: str = "out.zarr",
    chunks: str = "pressure = 3, temperature = 2, composition = 5",
    workers: int = 2,
    scheduler: str = "threads",
    sweep: str = "pressure",
    warm: bool = True,
    grid: dict | None = None,
) -> Path:
    """Write a test config into ``folder`` and return its path."""
    values = dict(SMALL if grid is None else grid)
    text = _CONFIG.format(output=output, chunks=chunks, workers=workers, scheduler=scheduler,
                          sweep=sweep, warm=str(warm).lower(), **values)
    path = Path(folder) / name
    path.write_text(text)
    return path


def direct_flash(ds: xr.Dataset, mixture: gridflash.Mixture) -> gridflash.FlashResult:
    """Flash every cell of a store's grid in one direct call, cells in C order of the grid."""
    comp_dim = ds.phase_count.dims[2]
    n_p, n_t, n_c = (ds.sizes[d] for d in ds.phase_count.dims)
    p = np.repeat(ds.pressure.values, n_t * n_c)
    t = np.tile(np.repeat(ds.temperature.values, n_c), n_p)
    z = np.tile(ds.feed_composition.transpose(comp_dim, "component").values, (n_p * n_t, 1))
    return gridflash.flash(mixture, p, t, z)


#: Root attributes that legitimately differ between two runs of the same config.
SESSION_ATTRS = {
    "created", "finished", "wall_time_seconds", "run_sessions",
    "blocks_computed_last_session", "blocks_reused_last_session",
}


def assert_stores_identical(a: Path, b: Path, *, ignore_attrs: tuple[str, ...] = ()) -> None:
    """Every variable (values, dtype, attrs) and every non-session root attribute equal."""
    skip = SESSION_ATTRS | set(ignore_attrs)
    with xr.open_zarr(a) as da_, xr.open_zarr(b) as db:
        assert set(da_.variables) == set(db.variables)
        for name in da_.variables:
            va, vb = da_[name], db[name]
            assert va.dtype == vb.dtype, name
            assert va.dims == vb.dims, name
            assert va.attrs == vb.attrs, name
            if va.dtype.kind == "f":
                assert np.array_equal(va.values, vb.values, equal_nan=True), name
            else:
                assert np.array_equal(va.values, vb.values), name
    attrs_a = gridflash.store.read_root_attrs(a)
    attrs_b = gridflash.store.read_root_attrs(b)
    assert {k: v for k, v in attrs_a.items() if k not in skip} == {
        k: v for k, v in attrs_b.items() if k not in skip
    }


def assert_same_phase_split(a: xr.Dataset, b: xr.Dataset, *, tol: float = 1e-8) -> None:
    """DESIGN.md invariance: identical phase counts, vapour fractions within ``tol``."""
    pa, pb = a.phase_count.values, b.phase_count.values
    mismatch = np.argwhere(pa != pb)
    assert mismatch.size == 0, f"phase counts differ at cells {mismatch[:5].tolist()}"
    va, vb = a.vapour_fraction.values, b.vapour_fraction.values
    assert np.all(np.isfinite(va)) and np.all(np.isfinite(vb))
    worst = float(np.max(np.abs(va - vb)))
    assert worst <= tol, f"vapour fractions differ by up to {worst:.3g}"
