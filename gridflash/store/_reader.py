"""Open a gridflash store as an :class:`xarray.Dataset`."""

from __future__ import annotations

import os
import warnings
from pathlib import Path

import xarray as xr

from .._errors import StoreError
from ._store import BLOCK_COMPLETE, is_gridflash_store, read_root_attrs

__all__ = ["open_table"]


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
