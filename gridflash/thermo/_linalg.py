"""Batched linear solves that fail per cell, never for the whole batch."""

from __future__ import annotations

import numpy as np
from numpy.typing import NDArray

__all__ = ["solve_cells"]


def solve_cells(a: NDArray[np.float64], b: NDArray[np.float64]) -> NDArray[np.float64]:
    """Solve ``a[k] @ x[k] = b[k]`` for every cell ``k``.

    Parameters
    ----------
    a : ndarray, shape (n, m, m)
    b : ndarray, shape (n, m)

    Returns
    -------
    ndarray, shape (n, m)
        NaN rows where ``a[k]`` is singular or not finite. (``numpy.linalg.solve`` raises for
        the whole batch when one matrix is singular, which would make one cell's trouble
        change its neighbours' answers.)
    """
    out = np.full(b.shape, np.nan)
    finite = np.all(np.isfinite(a), axis=(1, 2)) & np.all(np.isfinite(b), axis=1)
    if not finite.any():
        return out
    af, bf = a[finite], b[finite]
    sign, _ = np.linalg.slogdet(af)
    ok = sign != 0
    eye = np.eye(a.shape[1])
    safe = np.where(ok[:, None, None], af, eye)
    try:
        x = np.linalg.solve(safe, bf[:, :, None])[:, :, 0]
    except np.linalg.LinAlgError:  # pragma: no cover - singular despite a non-zero determinant
        x = np.full(bf.shape, np.nan)
        for k in np.flatnonzero(ok):
            try:
                x[k] = np.linalg.solve(safe[k], bf[k])
            except np.linalg.LinAlgError:
                pass
    x[~ok] = np.nan
    out[finite] = x
    return out
