"""Result records of the batch flash."""

from __future__ import annotations

import enum
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from . import kernels as _k

__all__ = ["FlashResult", "FlashStatus", "PhaseKind", "PhaseLabel", "PhaseProperties"]


class FlashStatus(enum.IntEnum):
    """Per-cell outcome codes of :func:`gridflash.flash` (stored as ``status``).

    0 CONVERGED            converged to the stated tolerances
    1 MAX_ITERATIONS       the stability test or the split ran out of iterations
    2 TRIVIAL_SOLUTION     the split collapsed to identical phases after the feed tested unstable
    3 ROOT_FAILURE         the cubic had no root above B, or a non-finite value appeared
    4 NO_TWO_PHASE_ROOT    the split's vapour fraction left (0, 1) after the feed tested unstable
    5 GIBBS_INCREASE       the converged split has a higher Gibbs energy than the feed
    6 NOT_CERTIFIED        the answer met the tolerances, but the stability test of its phases
                           found a trial phase with tangent-plane distance below -1e-8 and no
                           split with that phase added converged to a certified answer (or
                           three phases were already reported: a fourth is not computed)
    7 THREE_PHASE_FAILED   the stability test of a converged two-phase answer found a trial
                           phase, and the split with that phase added did not converge; the
                           stored phases are the (uncertified) two-phase answer

    Only status 0 is a certified answer (``converged``): every other code is a flag.
    """

    # The codes the compiled kernels set (one definition, in kernels.codes).
    CONVERGED = _k.CONVERGED
    MAX_ITERATIONS = _k.MAX_ITERATIONS
    TRIVIAL_SOLUTION = _k.TRIVIAL_SOLUTION
    ROOT_FAILURE = _k.ROOT_FAILURE
    NO_TWO_PHASE_ROOT = _k.NO_TWO_PHASE_ROOT
    GIBBS_INCREASE = _k.GIBBS_INCREASE
    NOT_CERTIFIED = _k.NOT_CERTIFIED
    THREE_PHASE_FAILED = _k.THREE_PHASE_FAILED


class PhaseLabel(enum.IntEnum):
    """Per-cell phase label (stored as ``phase_label``).

    Single-phase cells are labelled vapour-like or liquid-like by Venkatarathnam & Oellrich's
    phase-identification parameter (see :func:`gridflash.thermo.single_phase_label`).
    """

    TWO_PHASE = 0
    VAPOUR_LIKE = 1
    LIQUID_LIKE = 2
    THREE_PHASE = 3


class PhaseKind(enum.IntEnum):
    """What the phase in one slot (liquid, vapour, second liquid) of a cell is.

    The vapour slot holds the phase of largest Z: VAPOUR where it is vapour-like by the
    phase-identification parameter (the single-phase rule), else a liquid kind. A liquid is
    AQUEOUS_LIQUID where water is more than half of it, CO2_RICH_LIQUID where carbon dioxide
    is, else HYDROCARBON_LIQUID.
    """

    ABSENT = 0
    VAPOUR = 1
    HYDROCARBON_LIQUID = 2
    AQUEOUS_LIQUID = 3
    CO2_RICH_LIQUID = 4


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
        1, 2 or 3.
    vapour_fraction : ndarray, shape (n,)
        Mole fraction of the phase in the vapour slot (the phase of largest Z); for one phase
        1.0 if vapour-like and 0.0 if liquid-like.
    x, y : ndarray, shape (n, nc)
        Liquid and vapour mole fractions; the absent phase's composition is NaN; a single phase's
        composition is the feed. With three phases, ``x`` is the liquid of larger Z (the
        hydrocarbon liquid where there is one) and ``y`` the phase of largest Z.
    K : ndarray, shape (n, nc)
        K-values ``y / x`` (from fugacity coefficients, so defined for components at zero);
        NaN for single-phase cells.
    second_liquid_fraction : ndarray, shape (n,)
        Mole fraction of the second liquid (the liquid of smallest Z: aqueous or CO2-rich);
        0.0 where fewer than three phases. The liquid fraction is
        ``1 - vapour_fraction - second_liquid_fraction``.
    x2 : ndarray, shape (n, nc)
        Second-liquid mole fractions; NaN where fewer than three phases.
    liquid_kind, vapour_kind, second_liquid_kind : ndarray of int8, shape (n,)
        :class:`PhaseKind` of the phase in each slot (ABSENT where the slot is empty).
    converged : ndarray of bool, shape (n,)
        ``status == CONVERGED``.
    status : ndarray of int8, shape (n,)
        :class:`FlashStatus` codes.
    iterations : ndarray of int32, shape (n,)
        Stability-test plus split iterations spent on the cell.
    stability_iterations : ndarray of int32, shape (n,)
        The feed stability test's share of ``iterations`` (0 where a warm start made it
        unnecessary), including its near-pure trial phases.
    certification_iterations : ndarray of int32, shape (n,)
        The share of ``iterations`` spent certifying the answer (near-pure trial phases of the
        reported phases) and on the splits that certification started.
    residual : ndarray, shape (n,)
        ``max_i |ln f_i^a - ln f_i^b|`` over the phase pairs and components present in the feed;
        0 for one phase.
    material_balance : ndarray, shape (n,)
        ``max(max_k |sum_i x_ki - 1|, max_i |z_i - sum_k beta_k x_ki|)`` (for two phases
        from the split, ``max(|sum(y - x)|, ...)``); 0 for one phase.
    phase_label : ndarray of int8, shape (n,)
        :class:`PhaseLabel` codes.
    tpd : ndarray, shape (n,)
        The lowest modified tangent-plane distance found by the feed's stability test (NaN
        where it was not run).
    liquid, vapour, second_liquid : PhaseProperties
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
    second_liquid_fraction: FloatArray
    x2: FloatArray
    liquid_kind: NDArray[np.int8]
    vapour_kind: NDArray[np.int8]
    second_liquid_kind: NDArray[np.int8]
    certification_iterations: NDArray[np.int32]
    second_liquid: PhaseProperties

    def __len__(self) -> int:
        return int(self.phase_count.shape[0])
