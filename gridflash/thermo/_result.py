"""Result records of the batch flash."""

from __future__ import annotations

import enum
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from . import kernels as _k

__all__ = ["FlashResult", "FlashStatus", "PhaseLabel", "PhaseProperties"]


class FlashStatus(enum.IntEnum):
    """Per-cell outcome codes of :func:`gridflash.flash` (stored as ``status``).

    0 CONVERGED            converged to the stated tolerances
    1 MAX_ITERATIONS       the stability test or the split ran out of iterations
    2 TRIVIAL_SOLUTION     the split collapsed to identical phases after the feed tested unstable
    3 ROOT_FAILURE         the cubic had no root above B, or a non-finite value appeared
    4 NO_TWO_PHASE_ROOT    the split's vapour fraction left (0, 1) after the feed tested unstable
    5 GIBBS_INCREASE       the converged split has a higher Gibbs energy than the feed
    """

    # The codes the compiled kernels set (one definition, in kernels.codes).
    CONVERGED = _k.CONVERGED
    MAX_ITERATIONS = _k.MAX_ITERATIONS
    TRIVIAL_SOLUTION = _k.TRIVIAL_SOLUTION
    ROOT_FAILURE = _k.ROOT_FAILURE
    NO_TWO_PHASE_ROOT = _k.NO_TWO_PHASE_ROOT
    GIBBS_INCREASE = _k.GIBBS_INCREASE


class PhaseLabel(enum.IntEnum):
    """Per-cell phase label (stored as ``phase_label``).

    Single-phase cells are labelled vapour-like or liquid-like by Venkatarathnam & Oellrich's
    phase-identification parameter (see :func:`gridflash.thermo.single_phase_label`).
    """

    TWO_PHASE = 0
    VAPOUR_LIKE = 1
    LIQUID_LIKE = 2


FloatArray = NDArray[np.float64]


@dataclass(frozen=True, eq=False)
class PhaseProperties:
    """Properties of one phase (liquid or vapour) in every cell, each of shape (n,).

    NaN where the phase is absent.
    """

    z_factor: FloatArray  # compressibility factor from the EOS (not volume-shifted)
    molar_volume: FloatArray  # m3/mol, Peneloux volume-shifted
    molar_density: FloatArray  # mol/m3
    mass_density: FloatArray  # kg/m3
    molar_mass: FloatArray  # g/mol
    viscosity: FloatArray  # Pa s


@dataclass(frozen=True, eq=False)
class FlashResult:
    """Outcome of a batch isothermal flash, with one entry per cell.

    Attributes
    ----------
    phase_count : ndarray of int8, shape (n,)
        1 or 2.
    vapour_fraction : ndarray, shape (n,)
        Vapour mole fraction; for one phase 1.0 if vapour-like and 0.0 if liquid-like.
    x, y : ndarray, shape (n, nc)
        Liquid and vapour mole fractions; the absent phase's composition is NaN; a single phase's
        composition is the feed.
    K : ndarray, shape (n, nc)
        K-values ``y / x`` (from fugacity coefficients, so defined for components at zero);
        NaN for single-phase cells.
    converged : ndarray of bool, shape (n,)
        ``status == CONVERGED``.
    status : ndarray of int8, shape (n,)
        :class:`FlashStatus` codes.
    iterations : ndarray of int32, shape (n,)
        Stability-test plus split iterations spent on the cell.
    stability_iterations : ndarray of int32, shape (n,)
        The stability-test share of ``iterations`` (0 where a warm start made it unnecessary).
    residual : ndarray, shape (n,)
        ``max_i |ln f_i^V - ln f_i^L|`` over components present in the feed; 0 for one phase.
    material_balance : ndarray, shape (n,)
        ``max(|sum(y - x)|, max_i |z_i - (1 - beta) x_i - beta y_i|)``; 0 for one phase.
    phase_label : ndarray of int8, shape (n,)
        :class:`PhaseLabel` codes.
    tpd : ndarray, shape (n,)
        The lowest modified tangent-plane distance found by the stability test (NaN where it
        was not run).
    liquid, vapour : PhaseProperties
    """

    phase_count: NDArray[np.int8]
    vapour_fraction: FloatArray
    x: FloatArray
    y: FloatArray
    K: FloatArray
    converged: NDArray[np.bool_]
    status: NDArray[np.int8]
    iterations: NDArray[np.int32]
    stability_iterations: NDArray[np.int32]
    residual: FloatArray
    material_balance: FloatArray
    phase_label: NDArray[np.int8]
    tpd: FloatArray
    liquid: PhaseProperties
    vapour: PhaseProperties

    def __len__(self) -> int:
        return int(self.phase_count.shape[0])
