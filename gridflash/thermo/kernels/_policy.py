"""The jit policy of the compiled kernels: one decorator, the gas constant, the on-disk cache.

Every kernel is compiled in nopython mode with ``nogil=True`` (worker threads run them in
parallel), ``error_model="numpy"`` (division by zero gives inf/NaN, as in numpy, instead of an
exception) and ``cache=True`` (only the first use on a machine pays the compilation).

numba's cache notices a change only in the kernel's own source file, while a kernel inlines the
kernels it calls from other files. So that an edit of any kernel file can never load stale
machine code, the cache lives in a folder named after a hash of the source text of every file of
this package (:func:`source_key`): any change to any kernel file gives a new, empty cache folder.
"""

from __future__ import annotations

import hashlib
import os
from pathlib import Path

import numba
from numba import njit

__all__ = ["R", "cache_dir", "kernel", "source_key"]

R = 8.314462618  # J/(mol K), CODATA 2018

_OPTIONS = {"cache": True, "nogil": True, "error_model": "numpy"}
_HERE = Path(__file__).resolve().parent


def source_key(folder: str | os.PathLike[str] = _HERE) -> str:
    """Hash (16 hex digits) of the names and texts of the ``*.py`` files of ``folder``."""
    digest = hashlib.sha256()
    for path in sorted(Path(folder).glob("*.py")):
        digest.update(path.name.encode())
        digest.update(b"\0")
        digest.update(path.read_bytes())
        digest.update(b"\0")
    return digest.hexdigest()[:16]


def cache_dir() -> Path:
    """The cache folder of this version of the kernels' sources.

    Under ``$NUMBA_CACHE_DIR`` if set, else in the package's ``__pycache__``; where that folder
    cannot be written, numba falls back to its own per-user locations.
    """
    base = os.environ.get("NUMBA_CACHE_DIR")
    root = Path(base) if base else _HERE / "__pycache__"
    return root / f"gridflash-kernels-{source_key()}"


_CACHE_DIR = str(cache_dir())
_jit = njit(**_OPTIONS)


def kernel(func):
    """Compile ``func`` with the package's jit policy, cached under :func:`cache_dir`."""
    saved = numba.config.CACHE_DIR
    numba.config.CACHE_DIR = _CACHE_DIR  # read once, when the dispatcher's cache is set up
    try:
        return _jit(func)
    finally:
        numba.config.CACHE_DIR = saved
