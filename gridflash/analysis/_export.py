"""Export a store as a flat training table: one row per cell, features, labels and a split.

``gridflash export STORE --out FILE`` (and :func:`export_table`) writes every cell of a grid or
sample store as one row of a flat table -- Parquet, CSV or NetCDF, chosen by FILE's suffix
(``.parquet``/``.pq``, ``.csv``, ``.nc``) or given explicitly, and never a format that contradicts
the suffix -- with a deterministic train / validation / test split and a description of every
column.

Why Parquet by default
----------------------
Training pipelines read Parquet directly (pandas, polars, pyarrow, DuckDB, Spark, the data
loaders built on them); it is columnar and compressed, keeps each column's own type (int8
codes, booleans, strings), carries per-column metadata, and is written here row group by row
group, so exporting a large store needs memory for one group only. NetCDF (through xarray) is
offered for tools that read CF-style files; it is built in memory before writing. CSV is for
spreadsheets and tools without a Parquet reader: a header row of column names, one row per cell,
floats written with 17 significant digits (they read back to the same binary value), an empty
field for NaN, ``True``/``False`` for flags; the units are in the sidecar ``FILE.columns.json``
and in a second file ``FILE.units.csv`` (one row per column: name, units, role, description).

The split
---------
Each row's split depends on its inputs only: the 64-bit little-endian integers
``round(pressure / 1 mPa)``, ``round(temperature / 1 uK)`` and ``round(z_i / 1e-9)`` for every
feed mole fraction in the store's component order are hashed with SHA-256; the first 8 bytes
of the digest, read as a big-endian unsigned integer and divided by 2**64, give ``u`` in
[0, 1); the row is ``train`` if ``u < f_train``, ``validation`` if ``u < f_train +
f_validation`` and ``test`` otherwise. The same cell therefore lands in the same split whatever
the chunking, the row order, the other cells, or whether it came from a grid or a sample store.

Column descriptions
-------------------
Written next to the file as ``FILE.columns.json`` (name, role, units, dtype and meaning of every
column, the source store and the split method and counts), and also inside the file: Parquet
field metadata (``units``, ``role``, ``description``) plus the document in the schema metadata
key ``gridflash``; NetCDF variable attributes (``units``, ``long_name``, ``role``).
"""

from __future__ import annotations

import hashlib
import json
import math
import os
import uuid
from collections.abc import Iterator, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Literal

import numpy as np
import xarray as xr

from .._errors import InputError, StoreError
from ..store import open_table

__all__ = [
    "DEFAULT_SPLIT",
    "SPLIT_NAMES",
    "ExportSummary",
    "export_table",
    "parse_split",
    "split_of",
    "split_unit",
]

ExportFormat = Literal["parquet", "csv", "netcdf"]

#: Names of the three parts, in order.
SPLIT_NAMES: tuple[str, str, str] = ("train", "validation", "test")
#: Default shares of train, validation and test.
DEFAULT_SPLIT: tuple[float, float, float] = (0.8, 0.1, 0.1)
#: Quantisation of the hashed inputs: pressure in mPa, temperature in uK, mole fractions in 1e-9.
HASH_STEPS = {"pressure": 1e-3, "temperature": 1e-6, "mole_fraction": 1e-9}
#: The split fractions must sum to 1 within this.
_SPLIT_TOLERANCE = 1e-9
#: Rows read and written at a time (one Parquet row group).
ROWS_PER_GROUP = 131_072
_FORMATS: tuple[str, ...] = ("parquet", "csv", "netcdf")
_SUFFIXES = {".parquet": "parquet", ".pq": "parquet", ".csv": "csv", ".nc": "netcdf",
             ".netcdf": "netcdf", ".nc4": "netcdf"}


@dataclass(frozen=True)
class Column:
    """One column of the exported table."""

    name: str
    role: str  # "id", "feature", "label" or "split"
    units: str
    description: str
    dtype: str = ""

    def record(self) -> dict[str, str]:
        return {"name": self.name, "role": self.role, "units": self.units, "dtype": self.dtype,
                "description": self.description}


@dataclass(frozen=True)
class ExportSummary:
    """Outcome of :func:`export_table`.

    Attributes
    ----------
    path, columns_path : Path
        The table and its column description (``FILE.columns.json``).
    format : str
        ``"parquet"``, ``"csv"`` or ``"netcdf"``.
    rows : int
        Rows written.
    cells : int
        Cells in the store.
    dropped_unconverged : int
        Unconverged cells left out (``converged_only``); 0 otherwise.
    split_counts : dict of str to int
        Rows per split.
    columns : tuple of Column
    """

    path: Path
    columns_path: Path
    format: str
    rows: int
    cells: int
    dropped_unconverged: int
    split_counts: dict[str, int]
    columns: tuple[Column, ...] = field(repr=False)


# --------------------------------------------------------------------------------------------
# The split
# --------------------------------------------------------------------------------------------


def parse_split(text: str | Sequence[float]) -> tuple[float, float, float]:
    """Read train, validation and test shares (``"0.8,0.1,0.1"`` or a sequence of 3 numbers).

    Raises
    ------
    InputError
        Unless there are three finite shares >= 0 that sum to 1 (within 1e-9).
    """
    if isinstance(text, str):
        parts = [p.strip() for p in text.split(",")]
        try:
            values = [float(p) for p in parts]
        except ValueError:
            raise InputError(
                f"split {text!r} is not three numbers separated by commas; give the train, "
                "validation and test shares, e.g. 0.8,0.1,0.1"
            ) from None
    else:
        values = [float(v) for v in text]
    if len(values) != 3:
        raise InputError(
            f"split {text!r} has {len(values)} share(s); give three (train, validation, test), "
            "e.g. 0.8,0.1,0.1"
        )
    if not all(math.isfinite(v) and v >= 0.0 for v in values):
        raise InputError(f"split {text!r} has a share below 0 or not finite; shares are >= 0")
    if abs(sum(values) - 1.0) > _SPLIT_TOLERANCE:
        raise InputError(
            f"split {text!r} sums to {sum(values):.12g}, not 1; give shares that add up to 1"
        )
    return values[0], values[1], values[2]


def split_unit(
    pressure: np.ndarray, temperature: np.ndarray, z: np.ndarray
) -> np.ndarray:
    """The number ``u`` in [0, 1) each cell's split is decided by (see the module notes).

    Parameters
    ----------
    pressure, temperature : ndarray, shape (n,)
        Pa and K.
    z : ndarray, shape (n, n_components)
        Feed mole fractions.

    Returns
    -------
    ndarray, shape (n,)
    """
    p = np.asarray(pressure, dtype=float)
    t = np.asarray(temperature, dtype=float)
    zz = np.asarray(z, dtype=float).reshape(len(p), -1)
    keys = np.empty((len(p), 2 + zz.shape[1]), dtype="<i8")
    keys[:, 0] = np.rint(p / HASH_STEPS["pressure"])
    keys[:, 1] = np.rint(t / HASH_STEPS["temperature"])
    keys[:, 2:] = np.rint(zz / HASH_STEPS["mole_fraction"])
    raw = keys.tobytes()
    width = keys.shape[1] * 8
    out = np.empty(len(p), dtype=float)
    for i in range(len(p)):
        digest = hashlib.sha256(raw[i * width:(i + 1) * width]).digest()
        out[i] = int.from_bytes(digest[:8], "big") / 2.0**64
    return out


def split_of(
    pressure: np.ndarray,
    temperature: np.ndarray,
    z: np.ndarray,
    split: Sequence[float] = DEFAULT_SPLIT,
) -> np.ndarray:
    """The split (``"train"``, ``"validation"`` or ``"test"``) of each cell.

    Parameters
    ----------
    pressure, temperature : array_like, shape (n,)
        Pa and K.
    z : array_like, shape (n, n_components)
        Feed mole fractions.
    split : sequence of 3 float
        Shares of train, validation and test.

    Returns
    -------
    ndarray of str, shape (n,)
    """
    f_train, f_val, _ = parse_split(split)
    u = split_unit(pressure, temperature, z)
    names = np.array(SPLIT_NAMES, dtype=object)
    code = np.where(u < f_train, 0, np.where(u < f_train + f_val, 1, 2))
    return names[code]


# --------------------------------------------------------------------------------------------
# Columns
# --------------------------------------------------------------------------------------------

_PHASE_PROPERTIES = (
    ("density", "kg m-3", "mass density of the {phase} phase (Peneloux volume-shifted)"),
    ("molar_density", "mol m-3", "molar density of the {phase} phase (Peneloux volume-shifted)"),
    ("viscosity", "Pa s", "dynamic viscosity of the {phase} phase (Lohrenz-Bray-Clark)"),
    ("molar_mass", "g mol-1", "mean molar mass of the {phase} phase"),
    ("z_factor", "1", "compressibility factor Z = P v / (R T) of the {phase} phase"),
)
_ABSENT = " (NaN where the cell has no {phase} phase)"


def _columns(ds: xr.Dataset, dims: tuple[str, ...]) -> list[tuple[Column, str, str | None]]:
    """(column, store variable, entry along its extra dimension) for every column."""
    components = [str(c) for c in ds.component.values]
    streams = [str(s) for s in ds.stream.values] if "stream" in ds.coords else []
    out: list[tuple[Column, str, str | None]] = []

    def add(name: str, role: str, units: str, text: str, var: str, entry: str | None = None):
        out.append((Column(name, role, units, text), var, entry))

    add("cell", "id", "1",
        "flat index of the cell in the store: the sample index in a sample store, the C-order "
        f"index over {', '.join(dims)} in a grid store", "cell")
    if "mixture" in dims:
        add("mixture", "id", "1", str(ds.mixture.attrs.get("long_name", "mixture index")),
            "mixture")
    add("pressure", "feature", "Pa", "pressure (absolute)", "pressure")
    add("temperature", "feature", "K", "temperature", "temperature")
    if "mixing_ratio" in ds.coords:
        add("mixing_ratio", "feature", "1", str(ds.mixing_ratio.attrs.get("long_name")),
            "mixing_ratio")
    if "stream_fraction" in ds:
        for s in streams:
            add(f"stream_fraction_{s}", "feature", "1",
                f"mole fraction of stream {s!r} in the feed", "stream_fraction", s)
    for c in components:
        add(f"feed_{c}", "feature", "1", f"mole fraction of {c} in the feed", "feed_composition",
            c)
    add("phase_count", "label", "1", "number of phases at equilibrium (1, 2 or 3)",
        "phase_count")
    three = "second_liquid_fraction" in ds  # stores written before three-phase flashes lack it
    labels = ds.phase_label.attrs
    add("phase_label", "label", "1",
        f"phase state code: {_codes(labels)} (single phases labelled by the "
        "phase-identification parameter)", "phase_label")
    add("vapour_fraction", "label", "1",
        "vapour mole fraction (moles of vapour per mole of feed); 1 for a single vapour-like "
        "phase, 0 for a single liquid-like phase", "vapour_fraction")
    if three:
        add("second_liquid_fraction", "label", "1",
            "second-liquid mole fraction (the liquid of smallest Z, aqueous or CO2-rich); 0 "
            "where fewer than three phases", "second_liquid_fraction")
    for phase, var in (("liquid", "liquid_composition"), ("vapour", "vapour_composition")):
        for c in components:
            add(f"{phase}_{c}", "label", "1",
                f"mole fraction of {c} in the {phase} phase (the feed for a single {phase}-like "
                "phase; NaN where there is no such phase)", var, c)
    for c in components if three else ():
        add(f"second_liquid_{c}", "label", "1",
            f"mole fraction of {c} in the second liquid phase (NaN where fewer than three "
            "phases)", "second_liquid_composition", c)
    for c in components:
        add(f"k_value_{c}", "label", "1",
            f"equilibrium ratio K = y / x of {c} (NaN for a single phase)", "k_value", c)
    for phase in ("liquid", "vapour", "second_liquid") if three else ("liquid", "vapour"):
        for prop, units, text in _PHASE_PROPERTIES:
            add(f"{phase}_{prop}", "label", units,
                (text + _ABSENT).format(phase=phase.replace("_", " ")), f"{phase}_{prop}")
    for slot in ("liquid", "vapour", "second_liquid") if three else ():
        add(f"{slot}_kind", "label", "1",
            f"what the {slot.replace('_', ' ')} slot holds: {_codes(ds[f'{slot}_kind'].attrs)}",
            f"{slot}_kind")
    add("converged", "label", "1",
        "True where the cell converged (fugacity residual < 1e-10, material balance < "
        "1e-12, and its phases passed the stability test); a False row's labels are not "
        "reliable", "converged")
    add("status", "label", "1", f"flash outcome code: {_codes(ds.status.attrs)}", "status")
    add("split", "split", "",
        "train, validation or test, from a SHA-256 hash of the cell's inputs (pressure in "
        "mPa, temperature in uK, feed mole fractions in 1e-9, rounded)", "split")
    return out


def _codes(attrs: dict[str, Any]) -> str:
    values = attrs.get("flag_values", [])
    meanings = str(attrs.get("flag_meanings", "")).split()
    return ", ".join(f"{v} = {m}" for v, m in zip(values, meanings, strict=False))


def _boxes(shape: tuple[int, ...], max_rows: int) -> Iterator[tuple[slice, ...]]:
    """Boxes of the grid that partition it in C order, each at most ``max_rows`` cells."""
    ndim = len(shape)
    axis = 0
    while axis < ndim - 1 and math.prod(shape[axis + 1:]) > max_rows:
        axis += 1
    inner = math.prod(shape[axis + 1:])
    step = max(1, max_rows // max(inner, 1))
    outer = [range(n) for n in shape[:axis]]
    for prefix in np.ndindex(*(len(r) for r in outer)) if outer else [()]:
        for start in range(0, shape[axis], step):
            yield (*(slice(i, i + 1) for i in prefix), slice(start, min(start + step, shape[axis])),
                   *(slice(0, n) for n in shape[axis + 1:]))


def _box_columns(
    ds: xr.Dataset,
    dims: tuple[str, ...],
    shape: tuple[int, ...],
    box: tuple[slice, ...],
    columns: list[tuple[Column, str, str | None]],
    split: tuple[float, float, float],
) -> dict[str, np.ndarray]:
    names = sorted({var for _, var, _ in columns} - {"cell", "split"})
    sub = ds[[n for n in names if n in ds.data_vars]].isel(dict(zip(dims, box, strict=True)))
    sub = sub.compute()
    box_shape = tuple(s.stop - s.start for s in box)
    n = math.prod(box_shape)
    template = sub.phase_count
    flat: dict[str, np.ndarray] = {}

    def values(var: str) -> xr.DataArray:
        item = sub[var] if var in sub.variables else ds[var].isel(
            {d: s for d, s in zip(dims, box, strict=True) if d in ds[var].dims})
        extra = [d for d in item.dims if d not in dims]
        return item.broadcast_like(template).transpose(*dims, *extra)

    index = np.meshgrid(*(np.arange(s.start, s.stop) for s in box), indexing="ij")
    flat["cell"] = np.ravel_multi_index([i.ravel() for i in index], shape).astype(np.int64)
    cache: dict[str, xr.DataArray] = {}
    for column, var, entry in columns:
        if var in ("cell", "split"):
            continue
        if var not in cache:
            cache[var] = values(var)
        item = cache[var]
        if entry is not None:
            extra = item.dims[-1]
            item = item.sel({extra: entry})
        flat[column.name] = np.asarray(item.values).reshape(n)
    feeds = np.stack([flat[c.name] for c, var, _ in columns if var == "feed_composition"], axis=1)
    flat["split"] = split_of(flat["pressure"], flat["temperature"], feeds, split)
    return flat


# --------------------------------------------------------------------------------------------
# Writing
# --------------------------------------------------------------------------------------------


def export_table(
    store: str | os.PathLike[str],
    out: str | os.PathLike[str],
    *,
    format: ExportFormat | None = None,  # noqa: A002 - the option's name
    split: Sequence[float] | str = DEFAULT_SPLIT,
    converged_only: bool = False,
    overwrite: bool = False,
    rows_per_group: int = ROWS_PER_GROUP,
) -> ExportSummary:
    """Write a store's cells as a flat table of features, labels and a train/validation/test split.

    Parameters
    ----------
    store : path-like
        A complete gridflash store (grid or sample).
    out : path-like
        The table file to write; ``out + ".columns.json"`` gets the column description.
    format : {"parquet", "csv", "netcdf"}, optional
        Default: from the suffix of ``out`` (``.parquet``/``.pq``, ``.csv``, ``.nc``/``.nc4``/
        ``.netcdf``). Given explicitly, it must agree with a known suffix; a file with another
        suffix needs it.
    split : sequence of 3 float or str
        Shares of train, validation and test (summing to 1), e.g. ``(0.8, 0.1, 0.1)`` or
        ``"0.8,0.1,0.1"``.
    converged_only : bool
        Leave out unconverged cells (by default they are kept, with ``converged = False`` and
        their ``status``).
    overwrite : bool
        Replace an existing ``out``.
    rows_per_group : int
        Rows read from the store and written at a time (a Parquet row group).

    Returns
    -------
    ExportSummary

    Raises
    ------
    StoreError
        The store is missing, not a gridflash store, or unfinished; ``out`` exists and
        ``overwrite`` is False; the file cannot be written.
    InputError
        A bad ``split``, ``format`` or ``rows_per_group``; a ``format`` that contradicts the
        suffix of ``out``, or no ``format`` and a suffix that names none.

    Notes
    -----
    Columns (see ``FILE.columns.json`` for the full list with units): ``cell`` (and ``mixture``
    for a mixture-index axis) identify the cell; features ``pressure`` (Pa), ``temperature``
    (K), ``mixing_ratio`` or ``stream_fraction_<stream>``, ``feed_<component>``; labels
    ``phase_count``, ``phase_label``, ``vapour_fraction``, ``second_liquid_fraction``,
    ``liquid_<component>``, ``vapour_<component>``, ``second_liquid_<component>``,
    ``k_value_<component>``, per-phase (liquid, vapour, second liquid) ``density``,
    ``molar_density``, ``viscosity``, ``molar_mass`` and ``z_factor``, ``<phase>_kind``,
    ``converged``, ``status``; and ``split``.
    Rows are in the order of ``cell``.
    """
    fractions = parse_split(split)
    out_path = Path(out).expanduser()
    fmt = _format(format, out_path)
    if isinstance(rows_per_group, bool) or not isinstance(rows_per_group, int) \
            or rows_per_group < 1:
        raise InputError(f"rows_per_group={rows_per_group!r} must be a positive integer")
    columns_path = out_path.with_name(out_path.name + ".columns.json")
    sidecars = [columns_path, *([_units_path(out_path)] if fmt == "csv" else [])]
    if any(p.exists() for p in (out_path, *sidecars)) and not overwrite:
        raise StoreError(
            f"{str(out_path)!r} (or its {', '.join(p.name[len(out_path.name):] for p in sidecars)}"
            ") already exists; use --overwrite to replace it or choose another file"
        )
    ds = open_table(store)
    dims = tuple(ds.phase_count.dims)
    shape = tuple(int(ds.sizes[d]) for d in dims)
    columns = _columns(ds, dims)
    doc: dict[str, Any] = {
        "file": out_path.name,
        "format": fmt,
        "source_store": str(Path(store).expanduser().absolute()),
        "config_hash": ds.attrs.get("config_hash"),
        "gridflash_version": ds.attrs.get("gridflash_version"),
        "store_dimensions": dict(zip(dims, shape, strict=True)),
        "converged_only": bool(converged_only),
        "split": {
            "fractions": dict(zip(SPLIT_NAMES, fractions, strict=True)),
            "method": "sha256 of the little-endian int64 values round(pressure/1e-3 Pa), "
            "round(temperature/1e-6 K), round(z_i/1e-9) for every feed mole fraction in "
            "component order; u = first 8 digest bytes (big-endian) / 2**64; train if u < "
            "f_train, validation if u < f_train + f_validation, else test",
        },
    }
    boxes = _boxes(shape, rows_per_group)
    tmp = out_path.with_name(f".{out_path.name}.writing-{uuid.uuid4().hex[:8]}")
    counts = dict.fromkeys(SPLIT_NAMES, 0)
    rows = dropped = 0
    try:
        out_path.parent.mkdir(parents=True, exist_ok=True)
        writer = _WRITERS[fmt](tmp, columns, doc)
        with writer:
            for box in boxes:
                flat = _box_columns(ds, dims, shape, box, columns, fractions)
                if converged_only:
                    keep = flat["converged"]
                    dropped += int((~keep).sum())
                    flat = {k: v[keep] for k, v in flat.items()}
                for name in SPLIT_NAMES:
                    counts[name] += int((flat["split"] == name).sum())
                rows += len(flat["cell"])
                writer.write(flat)
        typed = tuple(Column(c.name, c.role, c.units, c.description, writer.dtypes[c.name])
                      for c, _, _ in columns)
        doc.update(rows=rows, cells=math.prod(shape), dropped_unconverged=dropped,
                   columns=[c.record() for c in typed])
        doc["split"]["counts"] = counts
        os.replace(tmp, out_path)
        columns_path.write_text(json.dumps(doc, indent=1) + "\n")
        if fmt == "csv":
            _write_units_csv(_units_path(out_path), typed)
    except OSError as exc:
        raise StoreError(
            f"cannot write {str(out_path)!r}: {exc.strerror or exc}; choose a writable path "
            "(and check the free disk space)"
        ) from None
    finally:
        ds.close()
        if tmp.exists():
            tmp.unlink()
    return ExportSummary(out_path, columns_path, fmt, rows, math.prod(shape), dropped, counts,
                         typed)


def _format(format: str | None, out: Path) -> str:  # noqa: A002
    """The format asked for, checked against the suffix of ``out``."""
    suffix = out.suffix.lower()
    by_suffix = _SUFFIXES.get(suffix)
    if format is not None and format not in _FORMATS:
        raise InputError(f"format={format!r} is not one of {', '.join(_FORMATS)}")
    if format is None:
        if by_suffix is None:
            raise InputError(
                f"cannot tell the format of {out.name!r} from its suffix {suffix or '(none)'!r}; "
                "name the file .parquet, .csv or .nc, or give --format parquet|csv|netcdf"
            )
        format = by_suffix  # noqa: A001
    elif by_suffix is not None and by_suffix != format:
        raise InputError(
            f"--format {format} does not match {out.name!r}, whose suffix {suffix!r} means "
            f"{by_suffix}; drop --format or name the file to match"
        )
    if format == "parquet":
        try:
            import pyarrow.parquet  # noqa: F401
        except ImportError:
            raise InputError(
                "Parquet export needs pyarrow: pip install 'gridflash[export]', or export "
                "CSV (.csv) or NetCDF (.nc)"
            ) from None
    return format


def _units_path(out: Path) -> Path:
    return out.with_name(out.name + ".units.csv")


def _write_units_csv(path: Path, columns: Sequence[Column]) -> None:
    """One row per column of a CSV export: name, units, role, dtype, description."""
    import csv

    with path.open("w", newline="") as handle:
        writer = csv.writer(handle)
        writer.writerow(["name", "units", "role", "dtype", "description"])
        for c in columns:
            writer.writerow([c.name, c.units, c.role, c.dtype, c.description])


class _CsvWriter:
    """Rows appended group by group (memory for one group only), header row first."""

    def __init__(self, path: Path, columns: list[tuple[Column, str, str | None]],
                 doc: dict[str, Any]) -> None:
        self.path = path
        self.columns = [c for c, _, _ in columns]
        self.dtypes: dict[str, str] = {}
        self.handle = None

    def __enter__(self) -> _CsvWriter:
        self.handle = self.path.open("w", newline="")
        return self

    def write(self, flat: dict[str, np.ndarray]) -> None:
        import pandas as pd

        frame = pd.DataFrame({c.name: flat[c.name] for c in self.columns})
        if not self.dtypes:
            self.dtypes = {c.name: "string" if c.name == "split" else str(frame[c.name].dtype)
                           for c in self.columns}
        frame.to_csv(self.handle, header=self.handle.tell() == 0, index=False,
                     float_format="%.17g", lineterminator="\n")

    def __exit__(self, exc_type: object, *exc: object) -> None:
        if self.handle is not None:
            self.handle.close()
        if exc_type is None and not self.dtypes:
            raise StoreError("the store has no cells to export")


class _ParquetWriter:
    """Row groups into one Parquet file; the schema comes from the first group."""

    def __init__(self, path: Path, columns: list[tuple[Column, str, str | None]],
                 doc: dict[str, Any]) -> None:
        self.path = path
        self.columns = [c for c, _, _ in columns]
        self.doc = doc
        self.writer = None
        self.schema = None
        self.dtypes: dict[str, str] = {}

    def __enter__(self) -> _ParquetWriter:
        return self

    def write(self, flat: dict[str, np.ndarray]) -> None:
        import pyarrow as pa
        import pyarrow.parquet as pq

        arrays = []
        for col in self.columns:
            values = flat[col.name]
            if col.name == "split":
                arrays.append(pa.array(values.astype(str)).dictionary_encode())
            else:
                arrays.append(pa.array(values))
        if self.schema is None:
            fields = []
            for col, arr in zip(self.columns, arrays, strict=True):
                meta = {"units": col.units, "role": col.role, "description": col.description}
                fields.append(pa.field(col.name, arr.type, metadata=meta))
                self.dtypes[col.name] = "string" if col.name == "split" else str(arr.type)
            self.schema = pa.schema(fields, metadata={"gridflash": json.dumps(
                {**self.doc, "columns": [
                    {**c.record(), "dtype": self.dtypes[c.name]} for c in self.columns]})})
            self.writer = pq.ParquetWriter(self.path, self.schema, compression="zstd")
        table = pa.Table.from_arrays(arrays, schema=self.schema)
        self.writer.write_table(table, row_group_size=max(1, table.num_rows))

    def __exit__(self, *exc: object) -> None:
        if self.writer is None and exc[0] is None:
            raise StoreError("the store has no cells to export")
        if self.writer is not None:
            self.writer.close()


class _NetcdfWriter:
    """Collects the rows, then writes one NetCDF file with a ``row`` dimension."""

    def __init__(self, path: Path, columns: list[tuple[Column, str, str | None]],
                 doc: dict[str, Any]) -> None:
        self.path = path
        self.columns = [c for c, _, _ in columns]
        self.doc = doc
        self.parts: list[dict[str, np.ndarray]] = []
        self.dtypes: dict[str, str] = {}

    def __enter__(self) -> _NetcdfWriter:
        return self

    def write(self, flat: dict[str, np.ndarray]) -> None:
        self.parts.append(flat)

    def __exit__(self, exc_type: object, *exc: object) -> None:
        if exc_type is not None:
            return
        data = {}
        for col in self.columns:
            values = np.concatenate([p[col.name] for p in self.parts])
            if col.name == "split":
                values = values.astype(str)
            elif col.name == "cell":
                values = values.astype(np.int32) if values.size == 0 or values.max() < 2**31 \
                    else values
            self.dtypes[col.name] = "string" if col.name == "split" else str(values.dtype)
            data[col.name] = ("row", values, {"units": col.units, "long_name": col.description,
                                              "role": col.role})
        attrs = {k: (json.dumps(v) if isinstance(v, (dict, list, bool)) or v is None else v)
                 for k, v in self.doc.items()}
        xr.Dataset(data, attrs=attrs).to_netcdf(self.path, format=_netcdf_format())


_WRITERS = {"parquet": _ParquetWriter, "csv": _CsvWriter, "netcdf": _NetcdfWriter}


def _netcdf_format() -> str:
    """NETCDF4 when a NetCDF-4 library is installed, else the 64-bit offset format (scipy)."""
    for module in ("netCDF4", "h5netcdf"):
        try:
            __import__(module)
        except ImportError:
            continue
        return "NETCDF4"
    return "NETCDF3_64BIT"
