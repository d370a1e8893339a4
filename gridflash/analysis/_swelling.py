"""Swelling study along a two-stream mixing axis: saturation pressure, its kind and the swelling
factor of the oil as injection gas is added, at each temperature.

The swelling factor of a mixture of ``x`` moles of gas per mole of mixture is the volume of the
saturated mixture (at its own saturation pressure) per volume of the original oil at the oil's
saturation pressure, counted per mole of original oil (a mole of oil takes up ``1 / (1 - x)``
moles of mixture)::

    SF(x) = v_sat(x) / ((1 - x) v_sat(0))

with molar volumes from the EOS with the Peneloux volume shift (the table's molar volumes).
Saturation pressures are the upper boundary of the two-phase region (bubble point of an oil,
upper dew point of a gas-like mixture), independent of the table's pressure grid: the flash is
run on a geometric pressure ladder to bracket the boundary, which
:func:`gridflash.thermo.saturation_pressure` then solves to 1e-10
(:func:`gridflash.thermo.upper_saturation_pressure`).
"""

from __future__ import annotations

import numpy as np
import xarray as xr
from numpy.typing import ArrayLike, NDArray

from .._errors import InputError, StoreError
from ..thermo import (
    MiscibilityStatus,
    Mixture,
    first_contact_mmp,
    flash,
    multi_contact_mmp,
    upper_saturation_pressure,
)

__all__ = ["add_studies", "miscibility_study", "mixing_streams", "swelling_study"]

#: Relative step above the saturation pressure at which the saturated phase is evaluated.
_ABOVE = 1e-7

_KIND_ATTRS = {
    "units": "1",
    "flag_values": [0, 1, 2, 3],
    "flag_meanings": "not_found bubble_point dew_point vapour_pressure",
}


def swelling_study(
    mixture: Mixture,
    oil: ArrayLike,
    gas: ArrayLike,
    temperatures: ArrayLike,
    gas_fractions: ArrayLike,
    *,
    comp_dim: str = "mixing_ratio",
) -> xr.Dataset:
    """Saturation pressure, kind and swelling factor against the gas fraction at each temperature.

    Parameters
    ----------
    mixture : Mixture
    oil, gas : array_like, shape (nc,)
        The two streams (mole fractions).
    temperatures : array_like, shape (n_t,)
        K.
    gas_fractions : array_like, shape (n_x,)
        Moles of gas per mole of mixture, in [0, 1].
    comp_dim : str
        Name of the gas-fraction dimension.

    Returns
    -------
    xarray.Dataset
        Over ``temperature`` x ``comp_dim``: ``swelling_saturation_pressure`` (Pa),
        ``swelling_saturation_kind``, ``swelling_molar_volume`` (m3/mol, of the saturated
        mixture), ``swelling_factor`` (NaN where the oil or the mixture has no saturation
        point, and at x = 1) and ``swelling_three_phase`` (a third phase appears below the
        saturation pressure: the boundary may be that of a second liquid).
    """
    oil = np.asarray(oil, dtype=float)
    gas = np.asarray(gas, dtype=float)
    t = np.asarray(temperatures, dtype=float).ravel()
    x = np.asarray(gas_fractions, dtype=float).ravel()
    if np.any((x < 0) | (x > 1)):
        raise InputError(f"gas_fractions = {x.tolist()!r} must lie in [0, 1]")
    # The oil itself is always evaluated (x = 0), then dropped if not asked for.
    xs = np.concatenate([[0.0], x])
    feeds = (1 - xs)[:, None] * oil + xs[:, None] * gas
    n_t, n_x = t.size, xs.size
    tt = np.repeat(t, n_x)
    zz = np.tile(feeds, (n_t, 1))
    p, kind, three = upper_saturation_pressure(mixture, tt, zz)
    v = np.full(tt.shape, np.nan)
    ok = np.isfinite(p)
    if ok.any():
        r = flash(mixture, p[ok] * (1 + _ABOVE), tt[ok], zz[ok])
        single = r.phase_count == 1
        vol = np.where(np.isfinite(r.liquid.molar_volume), r.liquid.molar_volume,
                       r.vapour.molar_volume)
        v[np.flatnonzero(ok)[single]] = vol[single]
    p, kind, three, v = (a.reshape(n_t, n_x) for a in (p, kind, three, v))
    with np.errstate(divide="ignore", invalid="ignore"):
        factor = v / ((1 - xs)[None, :] * v[:, :1])
    factor[:, xs >= 1.0] = np.nan
    sl = slice(1, None)
    dims = ("temperature", comp_dim)
    return xr.Dataset(
        {
            "swelling_saturation_pressure": (dims, p[:, sl], {
                "units": "Pa", "long_name": "saturation pressure of the oil + injection gas "
                "mixture (upper boundary of the two-phase region), swelling study"}),
            "swelling_saturation_kind": (dims, kind[:, sl], {
                **_KIND_ATTRS, "long_name": "kind of swelling_saturation_pressure"}),
            "swelling_molar_volume": (dims, v[:, sl], {
                "units": "m3 mol-1", "long_name": "molar volume of the saturated mixture at "
                "its saturation pressure (Peneloux volume-shifted)"}),
            "swelling_factor": (dims, factor[:, sl], {
                "units": "1", "long_name": "swelling factor: volume of the saturated mixture "
                "per volume of the original oil at its saturation pressure, per mole of "
                "original oil"}),
            "swelling_three_phase": (dims, three[:, sl].astype(np.int8), {
                "units": "1", "long_name": "three phases appear below the saturation pressure "
                "(the boundary may be that of a second liquid)",
                "flag_values": [0, 1], "flag_meanings": "two_phase_at_most three_phase_seen"}),
        },
        coords={"temperature": t, comp_dim: x},
    )


def mixing_streams(ds: xr.Dataset) -> tuple[NDArray[np.float64], NDArray[np.float64], str]:
    """The two streams (oil at ratio 0, gas at ratio 1) of a store's two-stream mixing axis,
    recovered from two of its feeds (``feed(r) = (1 - r) oil + r gas``).

    Raises
    ------
    StoreError
        The composition axis is not a two-stream mixing axis.
    """
    comp_dim = next((d for d in ds.feed_composition.dims if d != "component"), "")
    if comp_dim != "mixing_ratio" or ds.sizes[comp_dim] < 2:
        raise StoreError(
            f"the composition axis is {comp_dim!r}, not a two-stream mixing axis "
            "('mixing_ratio' with at least two ratios); swelling and MMP need an oil and a gas")
    r = np.asarray(ds[comp_dim].values, dtype=float)
    f = np.asarray(ds.feed_composition.transpose(comp_dim, "component").values, dtype=float)
    a, b = int(np.argmin(r)), int(np.argmax(r))
    r1, r2 = r[a], r[b]
    oil = (r2 * f[a] - r1 * f[b]) / (r2 - r1)
    gas = ((1 - r1) * f[b] - (1 - r2) * f[a]) / (r2 - r1)
    oil = np.clip(oil, 0.0, None)
    gas = np.clip(gas, 0.0, None)
    return oil / oil.sum(), gas / gas.sum(), comp_dim


def miscibility_study(
    mixture: Mixture,
    oil: NDArray[np.float64],
    gas: NDArray[np.float64],
    temperatures: ArrayLike,
    *,
    contacts: int = 40,
) -> xr.Dataset:
    """First- and multi-contact MMP at each temperature (over ``temperature``).

    Variables: ``first_contact_mmp``, ``first_contact_gas_fraction``, ``multi_contact_mmp``
    (Pa), ``mmp_status`` (:class:`gridflash.thermo.MiscibilityStatus`) and
    ``mmp_three_phase`` (a third phase appeared in the cells or below a saturation point: the
    two-phase picture of miscibility may not hold).
    """
    t = np.asarray(temperatures, dtype=float).ravel()
    fc = np.full(t.size, np.nan)
    fx = np.full(t.size, np.nan)
    mc = np.full(t.size, np.nan)
    status = np.zeros(t.size, dtype=np.int8)
    three = np.zeros(t.size, dtype=np.int8)
    for k, tk in enumerate(t):
        fc[k], fx[k], three_fc = first_contact_mmp(mixture, oil, gas, tk)
        r = multi_contact_mmp(mixture, oil, gas, tk, contacts=contacts)
        mc[k], status[k] = r.pressure, int(r.status)
        three[k] = int(three_fc or r.three_phase)
    flags = {"flag_values": [int(m) for m in MiscibilityStatus],
             "flag_meanings": " ".join(m.name.lower() for m in MiscibilityStatus)}
    return xr.Dataset(
        {
            "first_contact_mmp": (("temperature",), fc, {
                "units": "Pa", "long_name": "first-contact minimum miscibility pressure "
                "(cricondenbar of the P-x diagram of oil and injection gas)"}),
            "first_contact_gas_fraction": (("temperature",), fx, {
                "units": "1", "long_name": "gas fraction of the mixture at the first-contact "
                "MMP"}),
            "multi_contact_mmp": (("temperature",), mc, {
                "units": "Pa", "long_name": "multi-contact minimum miscibility pressure "
                "(mixing cells, Ahmadi & Johns 2011; no dispersion)",
                "comment": f"{contacts} contacts; NaN unless mmp_status is converged"}),
            "mmp_status": (("temperature",), status, {
                "units": "1", "long_name": "outcome of the multi-contact MMP", **flags}),
            "mmp_three_phase": (("temperature",), three, {
                "units": "1", "long_name": "a third phase appeared in the mixing cells or "
                "below a saturation point of the P-x scan",
                "flag_values": [0, 1], "flag_meanings": "no_third_phase third_phase_seen"}),
        },
        coords={"temperature": t},
    )


def add_studies(path, *, contacts: int = 40) -> xr.Dataset:
    """Compute the swelling study and the MMPs of a store with a two-stream mixing axis, at
    the table's temperatures and gas fractions, and store them in it.

    Raises
    ------
    StoreError
        Not a complete gridflash store, or its composition axis is not a two-stream mixing
        axis.
    """
    from pathlib import Path

    from ..store import consolidate, mixture_from_store, open_table, write_line_variables

    store = Path(path).expanduser()
    with open_table(store) as ds:
        oil, gas, comp_dim = mixing_streams(ds)
        mixture = mixture_from_store(ds)
        temperatures = ds.temperature.values
        ratios = ds[comp_dim].values
    study = xr.merge([
        swelling_study(mixture, oil, gas, temperatures, ratios, comp_dim=comp_dim),
        miscibility_study(mixture, oil, gas, temperatures, contacts=contacts),
    ])
    write_line_variables(store, study)
    consolidate(store)
    return study
