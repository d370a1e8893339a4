"""The small exception hierarchy of gridflash.

Library callers get these exceptions; the command-line interface turns them into one line and a
non-zero exit status.
"""

from __future__ import annotations

__all__ = ["ConfigError", "GridflashError", "InputError", "StoreError"]


class GridflashError(Exception):
    """Base class of every error gridflash raises on purpose."""


class ConfigError(GridflashError, ValueError):
    """A run description (TOML config) is malformed or holds an invalid value.

    The message names the key, the bad value and what is allowed.
    """


class InputError(GridflashError, ValueError):
    """An argument passed to the Python API is invalid (bad pressure, fractions, shapes...)."""


class StoreError(GridflashError):
    """A zarr store cannot be created, resumed, read or written as asked."""
