"""The compiled (numba) kernels of the thermodynamics layer, one module per algorithm family.

Each ``*_cell`` function works on one cell (1-D arrays over components); the ``*_batch``
functions loop over cells in compiled code and release the GIL. They are wrapped by the public
numpy-facing functions of :mod:`gridflash.thermo`, where the methods, equations and references
are documented. A cell's arithmetic never depends on the other cells of its batch.

- :mod:`._policy` -- the jit decorator, the gas constant and the on-disk cache;
- :mod:`.codes` -- status and outcome codes the kernels set;
- :mod:`.eos` -- cubic EOS: roots, fugacity coefficients and derivatives (``_cubic.py``);
- :mod:`.rachford_rice` -- Rachford-Rice inside its asymptote window, and the multiphase
  Rachford-Rice minimisation (``_rachford_rice.py``);
- :mod:`.stability` -- tangent-plane-distance stability test (``_stability.py``);
- :mod:`.split` -- two-phase split: substitution and Newton finish (documented here);
- :mod:`.multiphase` -- split into up to three phases (documented here);
- :mod:`.flash` -- the whole flash of a batch (``_flash.py``);
- :mod:`.saturation` -- bubble/dew point by Newton's method (``_saturation.py``);
- :mod:`.envelope` -- phase-envelope continuation and critical points (documented here);
- :mod:`.properties` -- phase properties (``_properties.py``).
"""

from __future__ import annotations

from ._policy import R
from .codes import (
    CONVERGED,
    GIBBS_INCREASE,
    MAX_ITERATIONS,
    NO_TWO_PHASE_ROOT,
    NOT_CERTIFIED,
    ROOT_FAILURE,
    ROOT_LIQUID,
    ROOT_MIN_GIBBS,
    ROOT_VAPOUR,
    RR_ALL_K_ABOVE_ONE,
    RR_ALL_K_BELOW_ONE,
    RR_AT_LOWER_LIMIT,
    RR_AT_UPPER_LIMIT,
    RR_CONVERGED,
    RR_MAX_ITERATIONS,
    THREE_PHASE_FAILED,
    TRIVIAL_SOLUTION,
)
from .eos import cubic_roots_batch, dlnphi_batch, phase_batch, reduced_batch, wilson_batch
from .flash import flash_batch
from .rachford_rice import RR_MAXITER, RR_TOL, rachford_rice_batch
from .saturation import saturation_newton_batch
from .split import TOL_BALANCE, TOL_RESIDUAL
from .stability import (
    CORNER_GATE,
    STAB_MAXITER,
    STAB_TOL,
    TM_CERTIFY,
    WATER_GATE,
    stability_batch,
)

__all__ = [
    "CONVERGED",
    "CORNER_GATE",
    "GIBBS_INCREASE",
    "MAX_ITERATIONS",
    "NO_TWO_PHASE_ROOT",
    "NOT_CERTIFIED",
    "R",
    "ROOT_FAILURE",
    "ROOT_LIQUID",
    "ROOT_MIN_GIBBS",
    "ROOT_VAPOUR",
    "RR_ALL_K_ABOVE_ONE",
    "RR_ALL_K_BELOW_ONE",
    "RR_AT_LOWER_LIMIT",
    "RR_AT_UPPER_LIMIT",
    "RR_CONVERGED",
    "RR_MAXITER",
    "RR_MAX_ITERATIONS",
    "RR_TOL",
    "STAB_MAXITER",
    "STAB_TOL",
    "TOL_BALANCE",
    "THREE_PHASE_FAILED",
    "TM_CERTIFY",
    "TOL_RESIDUAL",
    "TRIVIAL_SOLUTION",
    "WATER_GATE",
    "cubic_roots_batch",
    "dlnphi_batch",
    "flash_batch",
    "phase_batch",
    "rachford_rice_batch",
    "reduced_batch",
    "saturation_newton_batch",
    "stability_batch",
    "wilson_batch",
]
