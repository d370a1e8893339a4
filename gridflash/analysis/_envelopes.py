"""Phase envelopes of every composition of a table, as store variables.

Each composition on the table's composition axis gets its traced envelope
(:func:`gridflash.thermo.phase_envelope`): a ragged set of points stored along the dimension
``envelope_point`` (NaN-padded to the longest envelope of the table), with the critical point,
cricondenbar, cricondentherm and a status code per composition. The envelope does not depend on
the grid's pressures and temperatures, only on the feed.
"""

from __future__ import annotations

import os
from pathlib import Path

import numpy as np
import xarray as xr
from numpy.typing import NDArray

from .._errors import StoreError
from ..store import (
    consolidate,
    mixture_from_store,
    open_table,
    open_unconsolidated,
    write_line_variables,
)
from ..thermo import EnvelopeBranch, EnvelopeStatus, Mixture, phase_envelope

__all__ = [
    "ENVELOPE_POINT_DIM",
    "ENVELOPE_VARIABLES",
    "add_envelopes",
    "composition_envelopes",
    "envelopes_part",
]

#: The dimension of the points of a stored envelope.
ENVELOPE_POINT_DIM = "envelope_point"

#: Variables this module adds to a store.
ENVELOPE_VARIABLES: tuple[str, ...] = (
    "envelope_temperature",
    "envelope_pressure",
    "envelope_branch",
    "envelope_point_confirmed",
    "envelope_status",
    "critical_temperature",
    "critical_pressure",
    "envelope_cricondenbar_temperature",
    "envelope_cricondenbar_pressure",
    "cricondentherm_temperature",
    "cricondentherm_pressure",
)


def _flags(enum_type) -> dict:
    members = list(enum_type)
    return {"flag_values": [int(m) for m in members],
            "flag_meanings": " ".join(m.name.lower() for m in members)}


def composition_envelopes(
    mixture: Mixture, feeds: NDArray[np.float64], comp_dim: str, coords=None
) -> xr.Dataset:
    """Envelopes of feeds ``(n, nc)`` as a Dataset over ``comp_dim`` (and ``envelope_point``).

    Parameters
    ----------
    mixture : Mixture
    feeds : ndarray, shape (n, nc)
    comp_dim : str
        Name of the composition dimension (``"mixing_ratio"`` or ``"mixture"``).
    coords : array_like, optional
        Coordinate values along ``comp_dim``.

    Returns
    -------
    xarray.Dataset
        The variables of :data:`ENVELOPE_VARIABLES` (units and ``long_name`` attributes;
        flags with ``flag_values``/``flag_meanings``). Points beyond an envelope's length are
        NaN (``envelope_branch`` 0, ``envelope_point_confirmed`` -1).
    """
    feeds = np.asarray(feeds, dtype=float)
    envs = [phase_envelope(mixture, z / z.sum()) for z in feeds]
    n = feeds.shape[0]
    width = max([len(e) for e in envs] + [1])
    t = np.full((n, width), np.nan)
    p = np.full((n, width), np.nan)
    branch = np.zeros((n, width), dtype=np.int8)
    confirmed = np.full((n, width), -1, dtype=np.int8)
    for k, e in enumerate(envs):
        m = len(e)
        t[k, :m], p[k, :m] = e.temperature, e.pressure
        branch[k, :m] = e.branch
        confirmed[k, :m] = e.confirmed
    per = {name: np.array([getattr(e, name) for e in envs], dtype=float) for name in (
        "critical_temperature", "critical_pressure", "cricondenbar_temperature",
        "cricondenbar_pressure", "cricondentherm_temperature", "cricondentherm_pressure")}
    status = np.array([int(e.status) for e in envs], dtype=np.int8)
    pd = (comp_dim, ENVELOPE_POINT_DIM)
    cd = (comp_dim,)
    data = {
        "envelope_temperature": (pd, t, {
            "units": "K", "long_name": "temperature of the traced phase-envelope points "
            "(dew branch upwards, critical point, bubble branch downwards)",
            "comment": "NaN beyond the envelope's points"}),
        "envelope_pressure": (pd, p, {
            "units": "Pa", "long_name": "pressure of the traced phase-envelope points"}),
        "envelope_branch": (pd, branch, {
            "units": "1", "long_name": "kind of each phase-envelope point",
            **_flags(EnvelopeBranch)}),
        "envelope_point_confirmed": (pd, confirmed, {
            "units": "1", "long_name": "the flash changes its phase count at the point (one "
            "phase on one side, two with a vanishing amount of one on the other)",
            "flag_values": [-1, 0, 1], "flag_meanings": "no_point not_confirmed confirmed"}),
        "envelope_status": (cd, status, {
            "units": "1", "long_name": "outcome of the envelope tracing (partial envelopes "
            "say why)", **_flags(EnvelopeStatus)}),
        "critical_temperature": (cd, per["critical_temperature"], {
            "units": "K", "long_name": "critical temperature of the feed (Heidemann-Khalil "
            "conditions at the envelope's crossing)"}),
        "critical_pressure": (cd, per["critical_pressure"], {
            "units": "Pa", "long_name": "critical pressure of the feed"}),
        "envelope_cricondenbar_temperature": (cd, per["cricondenbar_temperature"], {
            "units": "K", "long_name": "temperature of the cricondenbar of the traced envelope"}),
        "envelope_cricondenbar_pressure": (cd, per["cricondenbar_pressure"], {
            "units": "Pa", "long_name": "cricondenbar of the traced envelope (largest "
            "saturation pressure, not limited to the table's temperatures)"}),
        "cricondentherm_temperature": (cd, per["cricondentherm_temperature"], {
            "units": "K", "long_name": "cricondentherm of the traced envelope (largest "
            "temperature of the two-phase region)"}),
        "cricondentherm_pressure": (cd, per["cricondentherm_pressure"], {
            "units": "Pa", "long_name": "pressure of the cricondentherm"}),
    }
    out = xr.Dataset(data)
    if coords is not None:
        out = out.assign_coords({comp_dim: np.asarray(coords)})
    return out


def _store_feeds(ds: xr.Dataset) -> tuple[str, NDArray[np.float64]]:
    if "feed_composition" not in ds:
        raise StoreError("the store has no 'feed_composition'; is it a gridflash table?")
    comp_dim = next(d for d in ds.feed_composition.dims if d != "component")
    if comp_dim == "sample":
        raise StoreError("envelopes need a composition axis; this table is sampled")
    feeds = np.asarray(ds.feed_composition.transpose(comp_dim, "component").values, float)
    return comp_dim, feeds


def envelopes_part(path: str, start: int, stop: int) -> xr.Dataset:
    """:func:`composition_envelopes` of compositions ``start:stop`` of a store (a task: reads
    the store, returns a small Dataset, writes nothing)."""
    ds = open_unconsolidated(path)
    try:
        comp_dim, feeds = _store_feeds(ds)
        mixture = mixture_from_store(ds)
        coords = ds[comp_dim].values[start:stop]
        return composition_envelopes(mixture, feeds[start:stop], comp_dim, coords)
    finally:
        ds.close()


def join_parts(parts: list[xr.Dataset], comp_dim: str) -> xr.Dataset:
    """Concatenate parts in composition order, padding the point dimension to the longest."""
    width = max(p.sizes[ENVELOPE_POINT_DIM] for p in parts)
    padded = []
    for p in parts:
        extra = width - p.sizes[ENVELOPE_POINT_DIM]
        if extra:
            fill = {"envelope_branch": 0, "envelope_point_confirmed": -1}
            p = xr.Dataset({
                name: (var.pad({ENVELOPE_POINT_DIM: (0, extra)},
                               constant_values=fill.get(name, np.nan))
                       if ENVELOPE_POINT_DIM in var.dims else var)
                for name, var in p.data_vars.items()})
            for name in p.data_vars:
                p[name].attrs = parts[0][name].attrs
        padded.append(p)
    out = xr.concat(padded, dim=comp_dim) if len(padded) > 1 else padded[0]
    for name in out.data_vars:
        out[name] = out[name].astype(parts[0][name].dtype)
        out[name].attrs = parts[0][name].attrs
    return out


def write_envelopes(path: str | os.PathLike[str], envelopes: xr.Dataset) -> None:
    """Write the envelope variables into a store (metadata not consolidated)."""
    write_line_variables(path, envelopes)


def add_envelopes(path: str | os.PathLike[str]) -> xr.Dataset:
    """Compute the envelopes of every composition of an existing store and store them in it.

    Parameters
    ----------
    path : str or path-like
        A complete gridflash store with a composition axis.

    Returns
    -------
    xarray.Dataset
        The variables written (see :func:`composition_envelopes`).

    Raises
    ------
    StoreError
        Not a gridflash store, an unfinished run, or a sampled table.
    """
    store = Path(path).expanduser()
    with open_table(store) as ds:  # the same refusals as open_table
        comp_dim, _ = _store_feeds(ds)
        n = ds.sizes[comp_dim]
    envelopes = envelopes_part(str(store), 0, n)
    write_envelopes(store, envelopes)
    consolidate(store)
    return envelopes
