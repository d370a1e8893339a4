"""Composition axes built from named streams: mixing lines, simplex lattices, explicit lists.

Part of building the validated run description (the parser calls these once); pure numpy.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from itertools import combinations

import numpy as np
from numpy.typing import ArrayLike, NDArray

from .._errors import InputError
from ._spec import CompositionAxis

__all__ = [
    "list_axis",
    "mixing_axis",
    "mixing_line",
    "simplex_axis",
    "simplex_lattice",
    "simplex_size",
]


def mixing_line(z_first: ArrayLike, z_second: ArrayLike, ratios: ArrayLike) -> NDArray[np.float64]:
    """Feed compositions along the mixing line between two streams.

    Parameters
    ----------
    z_first, z_second : array_like, shape (n_components,)
        Mole fractions of the first and second stream.
    ratios : array_like, shape (n_points,)
        Mole fraction of the second stream in each mixture (0 = all first stream, 1 = all second).

    Returns
    -------
    ndarray, shape (n_points, n_components)
        ``z = (1 - r) z_first + r z_second``; the end points ``r = 0`` and ``r = 1`` give the
        streams' compositions exactly.
    """
    za = np.asarray(z_first, dtype=float)
    zb = np.asarray(z_second, dtype=float)
    r = np.asarray(ratios, dtype=float)[:, None]
    return (1.0 - r) * za[None, :] + r * zb[None, :]


def simplex_size(n_streams: int, divisions: int) -> int:
    """Number of points of the simplex lattice: ``C(divisions + n_streams - 1, n_streams - 1)``."""
    return math.comb(divisions + n_streams - 1, n_streams - 1)


def simplex_lattice(n_streams: int, divisions: int) -> NDArray[np.float64]:
    """Every stream-fraction combination with fractions that are multiples of ``1/divisions``.

    Parameters
    ----------
    n_streams : int
        Number of streams (corners of the simplex), at least 1.
    divisions : int
        Number of equal divisions of each edge, at least 1.

    Returns
    -------
    ndarray, shape (simplex_size(n_streams, divisions), n_streams)
        Stream fractions; each row sums to 1 (to rounding). Rows are in descending
        lexicographic order of the integer counts ``divisions * fraction``: the first row is all
        first stream ``(1, 0, ..., 0)``, then ``(1 - 1/d, 1/d, 0, ...)``, ..., and the last row is
        all last stream ``(0, ..., 0, 1)``.

    Notes
    -----
    Built by "stars and bars": each choice of ``n_streams - 1`` bar positions among
    ``divisions + n_streams - 1`` slots gives one composition (Feller, *An Introduction to
    Probability Theory and Its Applications*, vol. 1, 3rd ed., 1968, Sec. II.5).
    """
    if n_streams < 1 or divisions < 1:
        raise InputError(
            f"simplex_lattice needs n_streams >= 1 and divisions >= 1, got {n_streams!r}, "
            f"{divisions!r}"
        )
    if n_streams == 1:
        return np.ones((1, 1))
    slots = divisions + n_streams - 1
    bars = np.array(list(combinations(range(slots), n_streams - 1)), dtype=np.int64)[::-1]
    edges = np.concatenate(
        [np.full((len(bars), 1), -1), bars, np.full((len(bars), 1), slots)], axis=1
    )
    counts = np.diff(edges, axis=1) - 1
    return counts / float(divisions)


def mixing_axis(
    first: str,
    second: str,
    z_first: ArrayLike,
    z_second: ArrayLike,
    ratios: Sequence[float],
) -> CompositionAxis:
    """The ``mixing_ratio`` axis between two named streams.

    Parameters
    ----------
    first, second : str
        Stream names; ratio 0 is all ``first``, ratio 1 all ``second``.
    z_first, z_second : array_like, shape (n_components,)
        The streams' mole fractions.
    ratios : sequence of float
        Mole fractions of ``second`` in the mixture, increasing, within [0, 1].

    Returns
    -------
    CompositionAxis
    """
    r = np.asarray(ratios, dtype=float)
    feeds = mixing_line(z_first, z_second, r)
    return CompositionAxis(
        name="mixing_ratio",
        values=tuple(float(v) for v in r),
        units="1",
        long_name=f"mole fraction of stream {second!r} in its mixture with stream {first!r}",
        streams=(first, second),
        stream_fractions=tuple((float(1.0 - v), float(v)) for v in r),
        feeds=_rows(feeds),
    )


def simplex_axis(
    streams: Sequence[str], compositions: ArrayLike, divisions: int
) -> CompositionAxis:
    """The ``mixture`` axis over the simplex lattice of three or more streams.

    Parameters
    ----------
    streams : sequence of str
        Stream names (simplex corners).
    compositions : array_like, shape (n_streams, n_components)
        The streams' mole fractions, one row per stream.
    divisions : int
        Lattice divisions (see :func:`simplex_lattice`).

    Returns
    -------
    CompositionAxis
        ``values`` are the point indices 0, 1, 2, ...; ``stream_fractions`` the lattice rows.
    """
    fractions = simplex_lattice(len(streams), divisions)
    feeds = fractions @ np.asarray(compositions, dtype=float)
    return CompositionAxis(
        name="mixture",
        values=tuple(range(len(fractions))),
        units="1",
        long_name=f"index of a mixture of streams {', '.join(map(repr, streams))} "
        f"(simplex lattice with {divisions} divisions; see stream_fractions)",
        streams=tuple(streams),
        stream_fractions=_rows(fractions),
        feeds=_rows(feeds),
    )


def list_axis(feeds: ArrayLike, streams: Sequence[str] = ()) -> CompositionAxis:
    """The ``mixture`` axis for an explicit list of compositions.

    Parameters
    ----------
    feeds : array_like, shape (n_points, n_components)
        Mole fractions of each point.
    streams : sequence of str, optional
        When each point is a named stream, their names (point ``i`` is stream ``i``;
        ``stream_fractions`` is then the identity). Empty for compositions given inline.

    Returns
    -------
    CompositionAxis
    """
    arr = np.asarray(feeds, dtype=float)
    n = len(arr)
    if streams:
        fractions: tuple[tuple[float, ...], ...] = _rows(np.eye(n))
        long_name = f"index of a stream in the list {', '.join(map(repr, streams))}"
    else:
        fractions = tuple(() for _ in range(n))
        long_name = "index of a composition in the configured list"
    return CompositionAxis(
        name="mixture",
        values=tuple(range(n)),
        units="1",
        long_name=long_name,
        streams=tuple(streams),
        stream_fractions=fractions,
        feeds=_rows(arr),
    )


def _rows(arr: np.ndarray) -> tuple[tuple[float, ...], ...]:
    return tuple(map(tuple, np.asarray(arr, dtype=float).tolist()))
