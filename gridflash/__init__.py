"""gridflash: isothermal flash calculations over pressure x temperature x composition grids."""

from __future__ import annotations

from ._errors import ConfigError, GridflashError, InputError, StoreError
from ._export import export_table
from ._lookup import lookup
from ._plot import phase_map, plot_table, property_map
from ._saturation_lines import add_saturation_lines, saturation_lines
from ._store import mixture_from_store
from ._table import open_table
from .thermo import Component, FlashResult, FlashStatus, Mixture, flash

__version__ = "0.1.0"

__all__ = [
    "Component",
    "ConfigError",
    "FlashResult",
    "FlashStatus",
    "GridflashError",
    "InputError",
    "Mixture",
    "StoreError",
    "add_saturation_lines",
    "export_table",
    "flash",
    "lookup",
    "mixture_from_store",
    "open_table",
    "phase_map",
    "plot_table",
    "property_map",
    "saturation_lines",
    "__version__",
]
