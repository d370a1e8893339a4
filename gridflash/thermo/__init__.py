"""Thermodynamics layer: pure numpy on batches of cells. No dask, xarray or file I/O here."""

from __future__ import annotations

from ._components import Component, builtin_component, builtin_names
from ._mixture import EOS_NAMES, Mixture

__all__ = ["EOS_NAMES", "Component", "Mixture", "builtin_component", "builtin_names"]
