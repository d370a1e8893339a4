"""gridflash: isothermal flash calculations over pressure x temperature x composition grids.

The public names are imported on first use (PEP 562 module ``__getattr__``), so that
``import gridflash`` -- and with it ``gridflash --help`` and ``gridflash --version`` -- does not
pay for numba, xarray, dask and zarr until a name that needs them is touched.
"""

from __future__ import annotations

import importlib
from typing import TYPE_CHECKING, Any

from ._errors import ConfigError, GridflashError, InputError, StoreError
from ._version import __version__

if TYPE_CHECKING:  # pragma: no cover - for type checkers and IDEs only
    from .analysis import (
        add_saturation_lines,
        export_table,
        lookup,
        phase_map,
        plot_table,
        property_map,
        saturation_lines,
    )
    from .config import RunSpec, load_config, parse_config
    from .runner import RunSummary, run
    from .store import mixture_from_store, open_table
    from .thermo import Component, FlashResult, FlashStatus, Mixture, flash

#: Public name -> module that defines it (imported on first access).
_LAZY = {
    **dict.fromkeys(("add_saturation_lines", "export_table", "lookup", "phase_map", "plot_table",
                     "property_map", "saturation_lines"), ".analysis"),
    **dict.fromkeys(("RunSpec", "load_config", "parse_config"), ".config"),
    **dict.fromkeys(("RunSummary", "run"), ".runner"),
    **dict.fromkeys(("mixture_from_store", "open_table"), ".store"),
    **dict.fromkeys(("Component", "FlashResult", "FlashStatus", "Mixture", "flash"), ".thermo"),
}

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


def __getattr__(name: str) -> Any:
    if name in _LAZY:
        value = getattr(importlib.import_module(_LAZY[name], __name__), name)
        globals()[name] = value
        return value
    try:  # a subpackage (gridflash.thermo, gridflash.store, ...) reached as an attribute
        return importlib.import_module(f".{name}", __name__)
    except ModuleNotFoundError as exc:
        if exc.name != f"{__name__}.{name}":
            raise
        raise AttributeError(f"module {__name__!r} has no attribute {name!r}") from None


def __dir__() -> list[str]:
    return sorted({*globals(), *__all__})
