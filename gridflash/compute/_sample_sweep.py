"""Flash one block of samples in waves, each sample warm-started from its nearest computed sample.

Pure numpy/scipy on top of :func:`gridflash.flash`; no dask, no files. The runner calls
:func:`sample_block` once per task block of a sampling run.

Warm starts without a grid
--------------------------
A block is a run of consecutive samples of the sequence, kept in sequence order in the store.
It is flashed in waves of growing size, in sequence order: the first eighth of the block cold,
then the next eighth, the next quarter and the last half. Because any stretch of a scrambled
Sobol' or Halton sequence is itself spread evenly over the whole range, the first wave already
covers the range coarsely and each later wave fills the gaps between the samples already
computed. Each sample of a later wave is offered the K-values of its nearest computed sample
(Euclidean distance in :attr:`~gridflash.plan.SampleInputs.position`: pressure, temperature
and mixing ratio as shares of their ranges, or the stream fractions) when that sample converged
to two phases, and is started cold otherwise. As on a grid, :func:`gridflash.flash` keeps a
warm start only where it converges to a two-phase answer and solves every other cell exactly as
a cold start, so the stored answers do not depend on warm starts or on the chunking (phase
counts identical, vapour fractions within 1e-8; the tests check it).
"""

from __future__ import annotations

import math

import numpy as np
from numpy.typing import NDArray
from scipy.spatial import cKDTree

from ..config import RunSpec
from ..plan import sample_inputs
from ..thermo import Mixture, flash
from ._sweep import BlockResult, _scatter

__all__ = ["WAVE_SHARES", "sample_block", "sweep_samples", "wave_bounds"]

#: Cumulative shares of a block flashed after each wave: 1/8 cold, then 1/8, 1/4 and 1/2 of the
#: block warm-started from the waves before.
WAVE_SHARES: tuple[float, ...] = (0.125, 0.25, 0.5, 1.0)


def wave_bounds(n_samples: int) -> list[int]:
    """Sample positions where the waves of a block of ``n_samples`` start and end.

    Examples
    --------
    >>> wave_bounds(64)
    [0, 8, 16, 32, 64]
    >>> wave_bounds(3)
    [0, 1, 2, 3]
    """
    bounds = [0]
    for share in WAVE_SHARES:
        end = min(n_samples, max(1, math.ceil(share * n_samples)))
        if end > bounds[-1]:
            bounds.append(end)
    return bounds


def sweep_samples(
    mixture: Mixture,
    pressure: NDArray[np.float64],
    temperature: NDArray[np.float64],
    z: NDArray[np.float64],
    position: NDArray[np.float64],
    *,
    warm_start: bool = True,
) -> BlockResult:
    """Flash a block of samples wave by wave (see the module notes).

    Parameters
    ----------
    mixture : Mixture
    pressure, temperature : ndarray, shape (n,)
        Pa and K.
    z : ndarray, shape (n, n_components)
        Feed mole fractions.
    position : ndarray, shape (n, d)
        Scaled coordinates in which the nearest computed sample is found.
    warm_start : bool
        If False every sample is started cold.

    Returns
    -------
    BlockResult
        Arrays of shape ``(n,)`` (``(n, n_components)`` per component), in the samples' order;
        ``warm_start`` is True where a sample was offered its neighbour's K-values.
    """
    n = int(pressure.shape[0])
    nc = mixture.n_components
    if temperature.shape != (n,) or z.shape != (n, nc) or position.shape[0] != n:
        raise ValueError(
            f"sample inputs have shapes {pressure.shape}, {temperature.shape}, {z.shape} and "
            f"{position.shape}; expected ({n},), ({n},), ({n}, {nc}) and ({n}, d)"
        )
    flat: dict[str, np.ndarray] = {}
    k_values = np.full((n, nc), np.nan)
    good = np.zeros(n, dtype=bool)
    bounds = wave_bounds(n)
    for start, stop in zip(bounds[:-1], bounds[1:], strict=True):
        cells = np.arange(start, stop)
        offered = np.zeros(cells.size, dtype=bool)
        k_init = None
        if warm_start and start > 0:
            _, nearest = cKDTree(position[:start]).query(position[start:stop])
            offered = good[nearest]
            if offered.any():
                k_init = np.where(offered[:, None], k_values[nearest], np.nan)
        result = flash(mixture, pressure[cells], temperature[cells], z[cells], k_init=k_init)
        _scatter(flat, result, offered, cells, n, nc)
        good[cells] = (result.phase_count == 2) & result.converged
        k_values[cells] = result.K
    return BlockResult(fields=flat, shape=(n,))


def sample_block(spec: RunSpec, cells: slice) -> BlockResult:
    """Flash the samples ``cells.start .. cells.stop - 1`` of a sampling run.

    Parameters
    ----------
    spec : RunSpec
        A run with ``spec.sampling`` set.
    cells : slice
        The block's sample indices (step 1).

    Returns
    -------
    BlockResult
    """
    if spec.sampling is None:
        raise ValueError("sample_block needs a sampling run (spec.sampling is None)")
    inputs = sample_inputs(spec.sampling, int(cells.start), int(cells.stop))
    return sweep_samples(
        spec.fluid.mixture(),
        inputs.pressure,
        inputs.temperature,
        inputs.z,
        inputs.position,
        warm_start=spec.run.warm_start,
    )
