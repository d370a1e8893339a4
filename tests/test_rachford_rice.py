"""Rachford-Rice solver against scipy.optimize.brentq (an independent bracketing root finder)."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.optimize import brentq

from gridflash.thermo import RachfordRiceStatus, rachford_rice


def _brentq_root(k, z):
    km1 = k - 1.0
    present = z > 0
    lo = 1.0 / (1.0 - k[present].max())
    hi = 1.0 / (1.0 - k[present].min())

    def g(b):
        return np.sum(z * km1 / (1.0 + b * km1))

    return brentq(
        g, np.nextafter(lo, hi), np.nextafter(hi, lo), xtol=1e-300, rtol=1e-15, maxiter=1000
    )


def _random_sets(seed, n, nc, lo, hi):
    rng = np.random.default_rng(seed)
    k = np.exp(rng.uniform(np.log(lo), np.log(hi), (n, nc)))
    z = rng.random((n, nc))
    z /= z.sum(axis=1, keepdims=True)
    return k, z


@pytest.mark.parametrize(
    ("lo", "hi", "nc"),
    [(1e-6, 1e4, 6), (1e-3, 1e3, 10), (0.5, 2.0, 3), (1 - 1e-6, 1 + 1e-6, 5), (1e-6, 1e-6 * 3, 4)],
    ids=["wide", "medium", "narrow", "within-1e-6-of-one", "all-below-one"],
)
def test_matches_brentq(lo, hi, nc):
    k, z = _random_sets(11, 3000, nc, lo, hi)
    r = rachford_rice(k, z)
    solvable = (k.max(axis=1) > 1.0) & (k.min(axis=1) < 1.0)
    assert np.all(r.status[~solvable] != RachfordRiceStatus.CONVERGED)
    assert np.all(np.isnan(r.beta[~solvable]))
    conv = r.status == RachfordRiceStatus.CONVERGED
    assert np.array_equal(conv, solvable)
    # |g| relative to the sum of |terms|: 1e-14, or the root is pinned to the last bit (a few
    # cells whose g cannot be evaluated more finely in double precision).
    if conv.any():
        assert np.mean(r.residual[conv] < 1e-14) > 0.99
        assert np.all(r.residual[conv] < 1e-12)
    for i in np.flatnonzero(conv)[::5]:
        ref = _brentq_root(k[i], z[i])
        assert r.beta[i] == pytest.approx(ref, rel=1e-11, abs=1e-300)


def test_zero_components_are_ignored():
    k = np.array([[3.0, 0.2, 1e5, 1e-8]])
    z = np.array([[0.5, 0.5, 0.0, 0.0]])
    r = rachford_rice(k, z)
    ref = _brentq_root(k[0, :2], z[0, :2])
    assert r.beta[0] == pytest.approx(ref, rel=1e-13)


def test_negative_flash_limits():
    # All-liquid-ish feed: the root lies below 0; with limits (0, 1) it is clipped and flagged.
    k = np.array([[1.2, 0.1], [5.0, 0.9], [2.0, 0.5]])
    z = np.array([[0.1, 0.9], [0.9, 0.1], [0.5, 0.5]])
    free = rachford_rice(k, z)
    assert free.beta[0] < 0 and free.beta[1] > 1 and 0 < free.beta[2] < 1
    lim = rachford_rice(k, z, limits=(0.0, 1.0))
    assert lim.beta[0] == 0.0 and lim.status[0] == RachfordRiceStatus.AT_LOWER_LIMIT
    assert lim.beta[1] == 1.0 and lim.status[1] == RachfordRiceStatus.AT_UPPER_LIMIT
    assert lim.beta[2] == pytest.approx(free.beta[2], rel=1e-14)


def test_analytic_two_component_root():
    # Two components: g(beta) = 0 is linear after clearing denominators;
    # beta = -(z1 (K1 - 1) + z2 (K2 - 1)) / ((K1 - 1)(K2 - 1)) (closed form).
    rng = np.random.default_rng(5)
    k1 = rng.uniform(1.01, 50, 2000)
    k2 = rng.uniform(0.01, 0.99, 2000)
    z1 = rng.uniform(0.01, 0.99, 2000)
    k = np.stack([k1, k2], axis=1)
    z = np.stack([z1, 1 - z1], axis=1)
    expected = -(z1 * (k1 - 1) + (1 - z1) * (k2 - 1)) / ((k1 - 1) * (k2 - 1))
    r = rachford_rice(k, z)
    np.testing.assert_allclose(r.beta, expected, rtol=1e-12, atol=1e-14)


@settings(max_examples=200, deadline=None)
@given(
    st.lists(st.floats(-13.8, 9.2), min_size=2, max_size=12),
    st.lists(st.floats(1e-12, 1.0), min_size=2, max_size=12),
)
def test_root_is_inside_window_and_zeroes_g(lnk, zs):
    nc = min(len(lnk), len(zs))
    k = np.exp(np.array(lnk[:nc]))[None, :]
    z = np.array(zs[:nc])[None, :]
    z /= z.sum()
    r = rachford_rice(k, z)
    if k.max() > 1 and k.min() < 1:
        assert r.status[0] == RachfordRiceStatus.CONVERGED
        lo, hi = 1 / (1 - k.max()), 1 / (1 - k.min())
        assert lo < r.beta[0] < hi
        assert r.residual[0] < 1e-12
    else:
        assert np.isnan(r.beta[0])
