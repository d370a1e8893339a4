"""Shared fixtures. The fluids here are invented test fluids, not field data."""

from __future__ import annotations

import numpy as np
import pytest

import gridflash

# Invented volatile oil and invented CO2-rich injection gas (8 components), used across tests.
OIL_GAS_NAMES = ("CO2", "C1", "C2", "C3", "nC4", "nC6", "nC8", "nC10")
INVENTED_OIL = np.array([0.02, 0.40, 0.08, 0.07, 0.06, 0.08, 0.12, 0.17])
INVENTED_GAS = np.array([0.70, 0.25, 0.03, 0.02, 0.0, 0.0, 0.0, 0.0])
# CO2-hydrocarbon interaction parameter 0.12: a common-practice value for PR (order of magnitude
# as in published PR kij tables; from memory, used here only to make the test fluid realistic).
OIL_GAS_KIJ = {("CO2", n): 0.12 for n in OIL_GAS_NAMES[1:]}


@pytest.fixture(scope="session")
def oil_gas_mixture() -> gridflash.Mixture:
    return gridflash.Mixture(OIL_GAS_NAMES, eos="PR78", kij=OIL_GAS_KIJ)


def mixing_line(ratio: np.ndarray) -> np.ndarray:
    """Feed compositions along the invented oil -> invented gas mixing line."""
    r = np.asarray(ratio, dtype=float)[:, None]
    return (1.0 - r) * INVENTED_OIL + r * INVENTED_GAS


def assert_allclose_cells(actual, expected, *, rtol=0.0, atol=0.0, what="value"):
    """Compare per-cell arrays and report the first mismatching cells."""
    actual = np.asarray(actual)
    expected = np.asarray(expected)
    bad = ~np.isclose(actual, expected, rtol=rtol, atol=atol, equal_nan=True)
    if bad.any():
        idx = np.argwhere(bad)[:5]
        raise AssertionError(
            f"{what}: {int(bad.sum())} mismatching entries; first at {idx.tolist()}: "
            f"{actual[tuple(idx.T)]} vs {expected[tuple(idx.T)]}"
        )
