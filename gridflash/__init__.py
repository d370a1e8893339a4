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
    from .analysis._export import export_table
    from .analysis._lookup import lookup
    from .analysis._plot import phase_map, plot_table, property_map
    from .analysis._saturation_lines import add_saturation_lines, saturation_lines
    from .store._reader import open_table
    from .store._store import mixture_from_store
    from .thermo import Component, FlashResult, FlashStatus, Mixture, flash

#: Public name -> module that defines it (imported on first access).
_LAZY = {
    "export_table": ".analysis._export",
    "lookup": ".analysis._lookup",
    "phase_map": ".analysis._plot",
    "plot_table": ".analysis._plot",
    "property_map": ".analysis._plot",
    "add_saturation_lines": ".analysis._saturation_lines",
    "saturation_lines": ".analysis._saturation_lines",
    "open_table": ".store._reader",
    "mixture_from_store": ".store._store",
    "Component": ".thermo",
    "FlashResult": ".thermo",
    "FlashStatus": ".thermo",
    "Mixture": ".thermo",
    "flash": ".thermo",
}

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
