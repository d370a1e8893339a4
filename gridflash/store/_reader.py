"""Reading a store: the table as an :class:`xarray.Dataset`, its root attributes, completion
marks and chunk layout."""

from __future__ import annotations

import json
import os
import warnings
from collections.abc import Mapping
from pathlib import Path
from typing import Any

import numpy as np
import xarray as xr
import zarr

from .._errors import StoreError
from ..plan import ChunkPlan
from ._schema import BLOCK_COMPLETE, STORE_FORMAT, VARIABLES

__all__ = [
    "completed_blocks",
    "is_gridflash_store",
    "mixture_from_store",
    "open_group",
    "open_table",
    "open_unconsolidated",
    "read_root_attrs",
    "stored_chunks",
]


def open_table(path: str | os.PathLike[str], *, allow_incomplete: bool = False) -> xr.Dataset:
    """Open the table a ``gridflash run`` wrote, lazily (dask arrays chunked as stored).

    Parameters
    ----------
    path : str or path-like
        The zarr store.
    allow_incomplete : bool
        Open a store whose run has not finished (``run_state`` is not ``"complete"``); cells
        not computed yet read as their fill values (NaN, ``phase_count == 0``, ``status == -1``).

    Returns
    -------
    xarray.Dataset
        Dimensions ``pressure`` (Pa), ``temperature`` (K), the composition dimension
        (``mixing_ratio`` or ``mixture``), ``component`` and, for stream mixtures, ``stream``;
        the per-cell variables (``phase_count``, ``vapour_fraction``, ``liquid_composition``,
        ``vapour_composition``, ``converged``, ``iterations``, ...), each with ``units`` and
        ``long_name``; run provenance in ``attrs``. The store's per-block completion marks are
        left out.

    Raises
    ------
    StoreError
        If ``path`` is not a gridflash store, or its run is unfinished and ``allow_incomplete``
        is False.

    Examples
    --------
    ::

        >>> import gridflash
        >>> table = gridflash.open_table("volatile_oil_co2.zarr")
        >>> table.vapour_fraction.sel(temperature=353.15, method="nearest")
    """
    store = Path(path).expanduser()
    if not store.exists():
        raise StoreError(f"no store at {str(store)!r}; give the path of a gridflash run's output")
    if not is_gridflash_store(store):
        raise StoreError(
            f"{str(store)!r} is not a gridflash store (no gridflash metadata in its zarr.json)"
        )
    state = read_root_attrs(store).get("run_state")
    if state != "complete" and not allow_incomplete:
        raise StoreError(
            f"the run that writes {str(store)!r} has not finished (run_state={state!r}); finish "
            "it with `gridflash run CONFIG --resume`, or pass allow_incomplete=True"
        )
    with warnings.catch_warnings():
        warnings.filterwarnings("ignore", message=".*[Cc]onsolidated metadata.*")
        try:
            ds = xr.open_zarr(store, consolidated=True)
        except (KeyError, ValueError, OSError):
            ds = xr.open_zarr(store, consolidated=False)
    # The consolidated copy of the root attributes may predate the last state change.
    ds.attrs.update(read_root_attrs(store))
    return ds.drop_vars(BLOCK_COMPLETE, errors="ignore")


def open_group(path: Path, mode: str) -> zarr.Group:
    try:
        return zarr.open_group(str(path), mode=mode, use_consolidated=False)  # type: ignore[arg-type]
    except (FileNotFoundError, zarr.errors.GroupNotFoundError) as exc:
        raise StoreError(f"no zarr store at {str(path)!r} ({exc})") from None

def read_root_attrs(path: Path) -> dict[str, Any]:
    """Root attributes of a store, read from its own metadata (not the consolidated copy)."""
    return dict(open_group(path, "r").attrs)

def is_gridflash_store(path: Path) -> bool:
    """True if ``path`` is a folder holding a zarr group made by gridflash."""
    meta = Path(path) / "zarr.json"
    if not meta.is_file():
        return False
    try:
        doc = json.loads(meta.read_text())
    except (OSError, ValueError):
        return False
    attrs = doc.get("attributes", {}) if isinstance(doc, dict) else {}
    return isinstance(attrs, dict) and attrs.get("gridflash_store_format") == STORE_FORMAT

def completed_blocks(path: Path, plan: ChunkPlan) -> np.ndarray:
    """Boolean array of shape ``plan.blocks_shape``: True where a block is marked complete.

    Raises
    ------
    StoreError
        If the completion array does not match the plan.
    """
    group = open_group(path, "r")
    try:
        marks = group[BLOCK_COMPLETE][...]
    except KeyError:
        raise StoreError(
            f"{str(path)!r} has no {BLOCK_COMPLETE!r} array; it was not written by this version "
            "of gridflash (use --overwrite)"
        ) from None
    if marks.shape != plan.blocks_shape:
        raise StoreError(
            f"{str(path)!r} has {marks.shape!r} blocks but this run has {plan.blocks_shape!r}; "
            "the store was written with other chunks (use --overwrite)"
        )
    return np.asarray(marks) == 1

def stored_chunks(path: Path) -> dict[str, tuple[tuple[str, ...], ...]]:
    """Dimensions, shape and zarr chunk shape of every per-cell variable of a store."""
    group = open_group(path, "r")
    out = {}
    for var in VARIABLES:
        try:
            arr = group[var.name]
        except KeyError:
            raise StoreError(
                f"{str(path)!r} lacks variable {var.name!r}; it was not written by this version "
                "of gridflash (use --overwrite)"
            ) from None
        dims = tuple(arr.metadata.dimension_names or ())
        out[var.name] = (dims, tuple(arr.shape), tuple(arr.chunks))
    return out


def mixture_from_store(source: xr.Dataset | Mapping[str, Any] | str | os.PathLike[str]):
    """The :class:`~gridflash.Mixture` a store was computed with, rebuilt from its attributes.

    Reads the root attributes ``eos``, ``components`` (the records :func:`create_store` wrote:
    critical constants, acentric factor, molar mass, critical volume, Rackett Z and the Peneloux
    shift actually used) and ``kij``. A component whose shift is not reproduced by its Rackett Z
    (one given explicitly as ``volume_shift``) gets the stored shift as ``c / b``.

    Parameters
    ----------
    source : xarray.Dataset, mapping or path
        A table from :func:`gridflash.open_table`, its ``attrs``, or the store's path.

    Returns
    -------
    Mixture

    Raises
    ------
    StoreError
        If the attributes are missing or malformed.
    """
    from dataclasses import replace

    from ..thermo import Component, Mixture

    if isinstance(source, xr.Dataset):
        attrs: Mapping[str, Any] = source.attrs
    elif isinstance(source, Mapping):
        attrs = source
    else:
        attrs = read_root_attrs(Path(source))
    try:
        records = json.loads(attrs["components"])
        kij = np.array(json.loads(attrs["kij"]), dtype=float)
        eos = str(attrs["eos"])
        components = [
            Component(r["name"], tc=float(r["critical_temperature_K"]),
                      pc=float(r["critical_pressure_Pa"]), omega=float(r["acentric_factor"]),
                      mw=float(r["molar_mass_g_per_mol"]),
                      vc=float(r["critical_volume_m3_per_mol"]), zra=float(r["rackett_z"]),
                      source=str(r.get("source") or "user-defined"))
            for r in records
        ]
        shift = np.array([float(r["volume_shift_m3_per_mol"]) for r in records])
    except (KeyError, TypeError, ValueError) as exc:
        raise StoreError(
            f"the store's fluid attributes (eos, components, kij) are missing or malformed "
            f"({exc!r}); it was not written by this version of gridflash"
        ) from None
    mixture = Mixture(components, eos=eos, kij=kij)  # type: ignore[arg-type]
    differs = ~np.isclose(mixture.volume_shift, shift, rtol=1e-12, atol=0.0)
    if differs.any():
        b = mixture.model.b
        components = [replace(c, volume_shift=float(shift[i] / b[i])) if differs[i] else c
                      for i, c in enumerate(components)]
        mixture = Mixture(components, eos=eos, kij=kij)  # type: ignore[arg-type]
    return mixture


def open_unconsolidated(path: str | os.PathLike[str]) -> xr.Dataset:
    """The store as a lazy Dataset while a run is writing it (metadata not yet consolidated)."""
    with warnings.catch_warnings():
        warnings.filterwarnings("ignore", message=".*[Cc]onsolidated metadata.*")
        return xr.open_zarr(str(path), consolidated=False)
