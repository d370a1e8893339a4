"""Sampling mode: cells drawn by a scrambled low-discrepancy sequence instead of a full grid.

Pure numpy/scipy; no dask, no files. The config's ``[sampling]`` table (``points``,
``sequence``, ``seed``) and the ranges of ``[pressure]``, ``[temperature]`` and
``[composition]`` become a :class:`~gridflash.config.SampleDesign`; this module turns any
contiguous run of sample indices into the cells' inputs.

The design
----------
Sample ``i`` is point ``i`` of a scrambled Sobol' sequence (Owen-type linear matrix scrambling
with digital shift, :class:`scipy.stats.qmc.Sobol`) or a scrambled Halton sequence
(:class:`scipy.stats.qmc.Halton`), both seeded with ``sampling.seed``, in the unit cube of
dimension ``2 + c``:

- coordinate 0 maps linearly onto ``[pressure.start, pressure.stop]``;
- coordinate 1 maps linearly onto ``[temperature.start, temperature.stop]``;
- for ``composition.kind = "mixing"`` (``c = 1``), coordinate 2 maps linearly onto
  ``[composition.start, composition.stop]`` (mole fraction of the second stream);
- for ``composition.kind = "simplex"`` over ``n`` streams (``c = n - 1``), coordinates
  ``2 .. n`` are sorted, ``s_1 <= ... <= s_(n-1)``, and the stream fractions are the spacings
  ``(s_1 - 0, s_2 - s_1, ..., 1 - s_(n-1))``. The spacings of sorted independent uniforms are
  uniformly distributed on the simplex (Devroye, *Non-Uniform Random Variate Generation*,
  Springer 1986, ch. V, Theorem 2.2 and ch. XI.2), so the map carries an evenly spread set in
  the cube to an evenly spread set on the simplex, covering every corner, edge and face.

A zero-width range (``start == stop``) fixes that input; its coordinate is still drawn, so the
other inputs are the same points as with a range. Points are a function of ``(sequence, seed,
dimension, index)`` only: the first ``m`` samples of an ``n``-point design are the ``m``-point
design, and any index range is computed on its own (:func:`unit_points` fast-forwards the
sequence), so each task computes just its own block.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from .._errors import InputError
from ..config import SEQUENCES, SampleDesign

__all__ = [
    "SAMPLE_DIM",
    "SampleInputs",
    "sample_inputs",
    "simplex_from_cube",
    "unit_points",
]

#: Name of the single dimension of a sample store.
SAMPLE_DIM = "sample"
#: Low-discrepancy sequences offered by ``sampling.sequence``.


@dataclass(frozen=True, eq=False)
class SampleInputs:
    """The inputs of a run of consecutive samples.

    Attributes
    ----------
    index : ndarray of int64, shape (n,)
        Sample indices (position in the sequence).
    unit : ndarray, shape (n, 2 + c)
        The sequence's points in the unit cube.
    pressure, temperature : ndarray, shape (n,)
        Pa and K.
    mixing_ratio : ndarray, shape (n,), or None
        Mole fraction of the second stream (``"mixing"`` designs only).
    stream_fractions : ndarray, shape (n, n_streams)
        Mole fraction of each stream in the feed.
    z : ndarray, shape (n, n_components)
        Feed mole fractions.
    position : ndarray, shape (n, 2 + n_c)
        Scaled coordinates used to find near neighbours for warm starts: pressure and
        temperature (and the mixing ratio) as their unit-cube coordinates, i.e. the share of
        their range; the stream fractions themselves for a simplex.
    """

    index: NDArray[np.int64]
    unit: NDArray[np.float64]
    pressure: NDArray[np.float64]
    temperature: NDArray[np.float64]
    mixing_ratio: NDArray[np.float64] | None
    stream_fractions: NDArray[np.float64]
    z: NDArray[np.float64]
    position: NDArray[np.float64]


def unit_points(
    sequence: str, dimension: int, seed: int, start: int, stop: int
) -> NDArray[np.float64]:
    """Points ``start .. stop - 1`` of a scrambled, seeded low-discrepancy sequence.

    Parameters
    ----------
    sequence : {"sobol", "halton"}
    dimension : int
        Dimension of the unit cube.
    seed : int
        Seed of the scrambling (non-negative).
    start, stop : int
        Index range, ``0 <= start <= stop``.

    Returns
    -------
    ndarray, shape (stop - start, dimension)
        In ``[0, 1)``; identical to rows ``start:stop`` of the first ``stop`` points.

    Notes
    -----
    Sobol' sequences are best balanced in blocks whose length and start are multiples of a power
    of two; other lengths are still low-discrepancy, and scipy's notice about it is silenced.
    """
    if sequence not in SEQUENCES:
        raise InputError(f"sequence={sequence!r} is not one of {SEQUENCES!r}")
    if not 0 <= start <= stop:
        raise InputError(f"index range {start!r}..{stop!r} must satisfy 0 <= start <= stop")
    from scipy.stats import qmc  # imported here: scipy.stats takes ~1 s to import

    engine_type = qmc.Sobol if sequence == "sobol" else qmc.Halton
    engine = engine_type(int(dimension), scramble=True, rng=int(seed))
    if start:
        engine.fast_forward(int(start))
    with warnings.catch_warnings():
        warnings.filterwarnings("ignore", message=".*balance properties of Sobol.*")
        return np.asarray(engine.random(int(stop - start)), dtype=float)


def simplex_from_cube(unit: NDArray[np.float64]) -> NDArray[np.float64]:
    """Map points of the unit cube ``[0, 1)^(n-1)`` onto the simplex of ``n`` fractions.

    Parameters
    ----------
    unit : ndarray, shape (m, n - 1)

    Returns
    -------
    ndarray, shape (m, n)
        The spacings of the sorted coordinates, ``(s_1, s_2 - s_1, ..., 1 - s_(n-1))``: each
        row is non-negative and sums to 1. Uniform points give uniform points on the simplex
        (Devroye 1986, ch. V, Theorem 2.2).

    Examples
    --------
    >>> simplex_from_cube(np.array([[0.7, 0.2]])).round(12).tolist()
    [[0.2, 0.5, 0.3]]
    """
    u = np.sort(np.asarray(unit, dtype=float), axis=1)
    m = u.shape[0]
    edges = np.concatenate([np.zeros((m, 1)), u, np.ones((m, 1))], axis=1)
    return np.diff(edges, axis=1)


def sample_inputs(design: SampleDesign, start: int, stop: int) -> SampleInputs:
    """The inputs of samples ``start .. stop - 1`` of a design.

    Parameters
    ----------
    design : SampleDesign
    start, stop : int
        Index range within ``0 .. design.points``.

    Returns
    -------
    SampleInputs

    Raises
    ------
    InputError
        If the range is outside the design.
    """
    if not 0 <= start <= stop <= design.points:
        raise InputError(
            f"samples {start!r}..{stop!r} are outside the design's 0..{design.points} samples"
        )
    unit = unit_points(design.sequence, design.dimension, design.seed, start, stop)
    p_lo, p_hi = design.pressure
    t_lo, t_hi = design.temperature
    pressure = p_lo + unit[:, 0] * (p_hi - p_lo)
    temperature = t_lo + unit[:, 1] * (t_hi - t_lo)
    ratio: NDArray[np.float64] | None = None
    if design.composition == "mixing":
        r_lo, r_hi = design.mixing_ratio
        ratio = r_lo + unit[:, 2] * (r_hi - r_lo)
        fractions = np.stack([1.0 - ratio, ratio], axis=1)
        position = unit
    else:
        fractions = simplex_from_cube(unit[:, 2:])
        position = np.concatenate([unit[:, :2], fractions], axis=1)
    z = fractions @ np.asarray(design.stream_compositions, dtype=float)
    return SampleInputs(
        index=np.arange(start, stop, dtype=np.int64),
        unit=unit,
        pressure=pressure,
        temperature=temperature,
        mixing_ratio=ratio,
        stream_fractions=fractions,
        z=z,
        position=position,
    )
