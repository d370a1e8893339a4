"""gridflash: isothermal flash calculations over pressure x temperature x composition grids."""

from __future__ import annotations

from ._errors import ConfigError, GridflashError, InputError, StoreError
from .thermo import Component, Mixture

__version__ = "0.1.0"

__all__ = [
    "Component",
    "ConfigError",
    "GridflashError",
    "InputError",
    "Mixture",
    "StoreError",
    "__version__",
]
