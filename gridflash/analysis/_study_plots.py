"""Pictures of the injection-gas studies: phase envelopes, and the P-x / swelling diagram.

Like :mod:`gridflash.analysis._plot`, matplotlib is imported only when a picture is drawn and
figures are plain :class:`matplotlib.figure.Figure` objects (no pyplot state).
"""

from __future__ import annotations

import os
from pathlib import Path

import numpy as np
import xarray as xr

from .._errors import InputError
from ..config import pressure_from_pa, temperature_from_kelvin
from ..thermo import EnvelopeBranch
from ._plot import _matplotlib

__all__ = ["envelope_figure", "swelling_figure"]

_BUBBLE = "-"
_DEW = "--"
_MAX_CURVES = 12


def _save(fig, path: str | os.PathLike[str], dpi: int) -> Path:
    out = Path(path)
    out.parent.mkdir(parents=True, exist_ok=True)
    fig.savefig(out, dpi=dpi)
    return out


def envelope_figure(
    envelopes: xr.Dataset,
    path: str | os.PathLike[str],
    *,
    pressure_unit: str = "bar",
    temperature_unit: str = "degC",
    select: list[int] | None = None,
    dpi: int = 120,
) -> Path:
    """Draw the phase envelopes of several compositions on one P-T figure (PNG).

    Parameters
    ----------
    envelopes : xarray.Dataset
        Envelope variables (:func:`gridflash.analysis.composition_envelopes`, or a store).
    path : path-like
        PNG file to write.
    pressure_unit, temperature_unit : str
    select : list of int, optional
        Positions along the composition dimension to draw (default: up to 12, evenly spread).
    dpi : int

    Returns
    -------
    Path
        The file written.

    Notes
    -----
    Bubble branches are solid, dew branches dashed, vapour-pressure curves dotted; each
    composition's critical point is a filled circle, its cricondenbar a triangle and its
    cricondentherm a diamond. Points the flash did not confirm (another phase appears first)
    are marked with crosses.
    """
    figure = _matplotlib()
    comp_dim = envelopes.envelope_status.dims[0]
    n = envelopes.sizes[comp_dim]
    if select is None:
        select = sorted(set(np.linspace(0, n - 1, min(n, _MAX_CURVES)).round().astype(int)))
    bad = [k for k in select if not 0 <= k < n]
    if bad:
        raise InputError(f"select={bad!r}: positions must be within 0..{n - 1}")
    fig = figure(figsize=(8, 6), layout="constrained")
    ax = fig.add_subplot()
    colours = _colours(len(select))

    def tt(v):
        return temperature_from_kelvin(np.asarray(v, dtype=float), temperature_unit)

    def pp(v):
        return pressure_from_pa(np.asarray(v, dtype=float), pressure_unit)

    for colour, k in zip(colours, select, strict=True):
        e = envelopes.isel({comp_dim: k})
        t = e.envelope_temperature.values
        p = e.envelope_pressure.values
        branch = e.envelope_branch.values
        label = f"{comp_dim} = {float(e[comp_dim]):.3g}" if comp_dim in e.coords else f"#{k}"
        crit = branch == EnvelopeBranch.CRITICAL_POINT
        for kind, style in ((EnvelopeBranch.DEW_POINT, _DEW), (EnvelopeBranch.BUBBLE_POINT,
                                                               _BUBBLE),
                            (EnvelopeBranch.VAPOUR_PRESSURE, ":")):
            m = (branch == kind) | crit  # each branch ends at the critical point
            if (branch == kind).any():
                ax.plot(tt(t[m]), pp(p[m]), style, color=colour, lw=1.4,
                        label=label if kind != EnvelopeBranch.BUBBLE_POINT
                        or not (branch == EnvelopeBranch.DEW_POINT).any() else None)
        ax.plot(tt(e.critical_temperature), pp(e.critical_pressure), "o", color=colour, ms=6)
        ax.plot(tt(e.envelope_cricondenbar_temperature), pp(e.envelope_cricondenbar_pressure),
                "^", color=colour, ms=6)
        ax.plot(tt(e.cricondentherm_temperature), pp(e.cricondentherm_pressure), "D",
                color=colour, ms=5)
        off = (e.envelope_point_confirmed.values == 0) & ~crit
        if off.any():
            ax.plot(tt(t[off]), pp(p[off]), "x", color=colour, ms=5)
    # Legend entries for the marks.
    for style, text in (("k-", "bubble points"), ("k--", "dew points"), ("ko", "critical point"),
                        ("k^", "cricondenbar"), ("kD", "cricondentherm")):
        ax.plot([], [], style, label=text)
    ax.set_xlabel(f"temperature [{temperature_unit}]")
    ax.set_ylabel(f"pressure [{pressure_unit}]")
    ax.set_title("Phase envelopes (traced, Michelsen continuation)")
    ax.grid(alpha=0.3)
    ax.legend(fontsize=7, ncol=2, loc="upper left")
    return _save(fig, path, dpi)


def swelling_figure(
    study: xr.Dataset,
    path: str | os.PathLike[str],
    *,
    temperature_index: int = 0,
    pressure_unit: str = "bar",
    temperature_unit: str = "degC",
    dpi: int = 120,
) -> Path:
    """Draw the P-x diagram of a mixing axis with the swelling factor on a second axis (PNG).

    Parameters
    ----------
    study : xarray.Dataset
        The swelling study (:func:`gridflash.analysis.swelling_study`), optionally with the
        miscibility variables (:func:`gridflash.analysis.miscibility_study`) merged in.
    path : path-like
    temperature_index : int
        Which temperature of the study to draw.

    Notes
    -----
    Bubble points are drawn solid, dew points dashed; the first-contact MMP (cricondenbar of
    the P-x curve) and the multi-contact MMP are horizontal lines where present.
    """
    figure = _matplotlib()
    s = study.isel(temperature=temperature_index)
    comp_dim = s.swelling_factor.dims[0]
    x = s[comp_dim].values
    p = pressure_from_pa(s.swelling_saturation_pressure.values, pressure_unit)
    kind = s.swelling_saturation_kind.values
    fig = figure(figsize=(8, 5.5), layout="constrained")
    ax = fig.add_subplot()
    for k, style, text in ((1, "o-", "bubble point"), (2, "s--", "dew point")):
        m = np.where(kind == k, p, np.nan)
        ax.plot(x, m, style, color="#1f4e79", ms=4, label=text)
    t_text = f"{temperature_from_kelvin(float(s.temperature), temperature_unit):.1f}"
    for name, style, text in (("first_contact_mmp", ":", "first-contact MMP"),
                              ("multi_contact_mmp", "-.", "multi-contact MMP")):
        if name in s and np.isfinite(float(s[name])):
            v = pressure_from_pa(float(s[name]), pressure_unit)
            ax.axhline(v, ls=style, color="#8c1c13", lw=1.2, label=f"{text} {v:.1f}")
    ax.set_xlabel("mole fraction of injection gas in the mixture")
    ax.set_ylabel(f"saturation pressure [{pressure_unit}]")
    ax.grid(alpha=0.3)
    ax2 = ax.twinx()
    ax2.plot(x, s.swelling_factor.values, "^-", color="#7f6000", ms=4, label="swelling factor")
    ax2.set_ylabel("swelling factor (saturated volume per volume of original oil)")
    lines = ax.get_legend_handles_labels()
    lines2 = ax2.get_legend_handles_labels()
    ax.legend(lines[0] + lines2[0], lines[1] + lines2[1], fontsize=8, loc="upper left")
    ax.set_title(f"P-x diagram and swelling at {t_text} {temperature_unit}")
    return _save(fig, path, dpi)


def _colours(n: int) -> list:
    from matplotlib import colormaps

    cmap = colormaps["viridis"]
    return [cmap(v) for v in np.linspace(0.0, 0.9, max(n, 1))][:n]
