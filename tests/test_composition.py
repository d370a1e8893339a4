"""Composition axes (mixing lines, simplex lattices) and the cell inputs of grid blocks.

External reference: the number of points of a simplex lattice, C(d + n - 1, n - 1) ("stars and
bars": Feller, An Introduction to Probability Theory and Its Applications, vol. 1, 3rd ed.,
Sec. II.5).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from gridflash.config._composition import (
    mixing_line,
    simplex_lattice,
    simplex_size,
)
from gridflash.config._parser import (
    load_config,
)
from gridflash.plan._grid import block_inputs

from ._config_helpers import CONFIGS, base, parse_doc


@pytest.mark.parametrize(
    ("n_streams", "divisions"), [(1, 3), (2, 4), (3, 1), (3, 4), (4, 5), (5, 3)]
)
def test_simplex_lattice_counts_and_sums(n_streams: int, divisions: int) -> None:
    lattice = simplex_lattice(n_streams, divisions)
    # Stars and bars: C(d + n - 1, n - 1) points (Feller, vol. 1, Sec. II.5).
    expected = math.comb(divisions + n_streams - 1, n_streams - 1)
    assert lattice.shape == (expected, n_streams) and simplex_size(n_streams, divisions) == expected
    np.testing.assert_allclose(lattice.sum(axis=1), 1.0, rtol=0, atol=1e-14)
    counts = lattice * divisions
    np.testing.assert_allclose(counts, np.round(counts), atol=1e-12)
    assert (lattice >= 0).all()
    assert len({tuple(r) for r in np.round(counts).astype(int)}) == expected  # all distinct
    # Deterministic order: descending lexicographic order of the integer counts.
    rows = [tuple(r) for r in np.round(counts).astype(int)]
    assert rows == sorted(rows, reverse=True)
    assert rows[0] == (divisions,) + (0,) * (n_streams - 1)
    assert rows[-1] == (0,) * (n_streams - 1) + (divisions,)


def test_simplex_lattice_three_streams_two_divisions_listed() -> None:
    expected = [[1, 0, 0], [0.5, 0.5, 0], [0.5, 0, 0.5], [0, 1, 0], [0, 0.5, 0.5], [0, 0, 1]]
    np.testing.assert_array_equal(simplex_lattice(3, 2), expected)


def test_mixing_line_end_points_equal_streams() -> None:
    spec = load_config(CONFIGS / "volatile_oil_co2.toml")
    streams = dict(spec.streams)
    feeds = spec.composition.feed_array()
    first, second = spec.composition.streams
    assert spec.composition.values[0] == 0.0 and spec.composition.values[-1] == 1.0
    np.testing.assert_array_equal(feeds[0], streams[first])  # exactly, not approximately
    np.testing.assert_array_equal(feeds[-1], streams[second])
    np.testing.assert_allclose(feeds.sum(axis=1), 1.0, rtol=0, atol=1e-14)
    # Linear in the ratio: the midpoint is the mean of the streams.
    mid = mixing_line(streams[first], streams[second], [0.5])[0]
    np.testing.assert_allclose(mid, 0.5 * (np.array(streams[first]) + streams[second]), atol=1e-16)
    assert spec.composition.stream_fractions[3] == pytest.approx((0.7, 0.3), abs=1e-15)


def test_simplex_config_feeds_are_fraction_weighted_streams() -> None:
    doc = base()
    doc["streams"]["mid"] = {"mole_fractions": {"C1": 0.6, "C3": 0.3, "nC10": 0.1}}
    doc["composition"] = {"kind": "simplex", "streams": ["oil", "gas", "mid"], "divisions": 4}
    spec = parse_doc(doc)
    assert spec.dims == ("pressure", "temperature", "mixture")
    assert len(spec.composition) == math.comb(4 + 2, 2) == 15
    assert spec.composition.values == tuple(range(15))
    streams = np.array([dict(spec.streams)[n] for n in ("oil", "gas", "mid")])
    fractions = np.array(spec.composition.stream_fractions)
    np.testing.assert_allclose(spec.composition.feed_array(), fractions @ streams, atol=1e-15)
    np.testing.assert_array_equal(spec.composition.feed_array()[0], streams[0])
    np.testing.assert_array_equal(spec.composition.feed_array()[-1], streams[2])


def test_block_inputs_c_order_matches_full_grid() -> None:
    spec = load_config(CONFIGS / "small_test.toml")
    P, T, R = np.meshgrid(
        spec.pressure.values,
        spec.temperature.values,
        np.arange(len(spec.composition)),
        indexing="ij",
    )
    feeds = spec.composition.feed_array()
    block = (slice(1, 4), slice(0, 2), slice(3, 6))
    p, t, z = block_inputs(spec, block)
    assert p.shape == t.shape == (3 * 2 * 3,) and z.shape == (18, 3)
    np.testing.assert_array_equal(p, P[block].ravel())
    np.testing.assert_array_equal(t, T[block].ravel())
    np.testing.assert_array_equal(z, feeds[R[block].ravel()])
    # Whole grid through the mapping form; a missing dimension means the whole axis.
    p_all, t_all, z_all = block_inputs(spec, {"temperature": slice(None)})
    assert p_all.shape == (math.prod(spec.shape),)
    np.testing.assert_array_equal(p_all.reshape(spec.shape), P)
    np.testing.assert_array_equal(z_all.reshape(*spec.shape, 3)[2, 1], feeds)


