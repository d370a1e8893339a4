"""gridflash: isothermal flash calculations over pressure x temperature x composition grids."""

from __future__ import annotations

from ._errors import ConfigError, GridflashError, InputError, StoreError
from ._version import __version__
from .analysis._export import export_table
from .analysis._lookup import lookup
from .analysis._plot import phase_map, plot_table, property_map
from .analysis._saturation_lines import add_saturation_lines, saturation_lines
from .config import RunSpec, load_config, parse_config
from .runner import RunSummary, run
from .store import mixture_from_store, open_table
from .thermo import Component, FlashResult, FlashStatus, Mixture, flash

__all__ = [
    "Component",
    "ConfigError",
    "FlashResult",
    "FlashStatus",
    "GridflashError",
    "InputError",
    "Mixture",
    "RunSpec",
    "RunSummary",
    "StoreError",
    "add_saturation_lines",
    "export_table",
    "flash",
    "load_config",
    "lookup",
    "mixture_from_store",
    "open_table",
    "phase_map",
    "plot_table",
    "parse_config",
    "property_map",
    "run",
    "saturation_lines",
    "__version__",
]
