"""Invented benchmark fluids (not field data): an 8-component volatile oil with a CO2-rich
injection gas, and a 3-component light mixture."""

from __future__ import annotations

import numpy as np

import gridflash

NAMES_8 = ("CO2", "C1", "C2", "C3", "nC4", "nC6", "nC8", "nC10")
OIL_8 = np.array([0.02, 0.40, 0.08, 0.07, 0.06, 0.08, 0.12, 0.17])
GAS_8 = np.array([0.70, 0.25, 0.03, 0.02, 0.0, 0.0, 0.0, 0.0])
KIJ_8 = {("CO2", n): 0.12 for n in NAMES_8[1:]}  # common-practice magnitude, from memory

NAMES_3 = ("C1", "C3", "nC6")
OIL_3 = np.array([0.35, 0.30, 0.35])
GAS_3 = np.array([0.90, 0.08, 0.02])


def mixture(n_components: int) -> gridflash.Mixture:
    if n_components == 8:
        return gridflash.Mixture(NAMES_8, kij=KIJ_8)
    return gridflash.Mixture(NAMES_3)


def grid(n_components: int, n_p: int, n_t: int, n_r: int):
    """Flattened (pressure, temperature, z) of an oil/gas mixing-line grid, C order (P, T, r)."""
    oil, gas = (OIL_8, GAS_8) if n_components == 8 else (OIL_3, GAS_3)
    p = np.linspace(1e6, 50e6, n_p)
    t = np.linspace(290.0, 450.0, n_t)
    r = np.linspace(0.0, 1.0, n_r)
    pp, tt, rr = np.meshgrid(p, t, r, indexing="ij")
    z = (1.0 - rr.ravel()[:, None]) * oil + rr.ravel()[:, None] * gas
    return pp.ravel(), tt.ravel(), z


def config_text(
    shape: tuple[int, int, int],
    *,
    pressure: tuple[float, float, str] = (1e6, 5e7, "Pa"),
    temperature: tuple[float, float] = (290.0, 450.0),
    output: str = "out.zarr",
    run_extra: str = "",
) -> str:
    """A run config (TOML) of the invented 8-component oil/gas mixing-line grid.

    ``shape`` is (pressures, temperatures, mixing ratios); ``run_extra`` is appended to [run].
    """
    names = "[" + ", ".join(f'"{n}"' for n in NAMES_8) + "]"
    kij = ", ".join(f'"{a}-{b}" = {v}' for (a, b), v in KIJ_8.items())
    oil = "[" + ", ".join(map(str, OIL_8)) + "]"
    gas = "[" + ", ".join(map(str, GAS_8)) + "]"
    p_start, p_stop, p_unit = pressure
    return f"""\
# Invented benchmark fluid (not field data).
[fluid]
components = {names}
kij = {{ {kij} }}
[streams.oil]
mole_fractions = {oil}
[streams.gas]
mole_fractions = {gas}
[pressure]
unit = "{p_unit}"
start = {p_start}
stop = {p_stop}
count = {shape[0]}
[temperature]
unit = "K"
start = {temperature[0]}
stop = {temperature[1]}
count = {shape[1]}
[composition]
kind = "mixing"
streams = ["oil", "gas"]
start = 0.0
stop = 1.0
count = {shape[2]}
[run]
output = "{output}"
sweep = "pressure"
{run_extra}
"""
