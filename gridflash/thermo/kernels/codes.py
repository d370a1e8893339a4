"""Status and outcome codes set by the compiled kernels.

The public enums (``FlashStatus``, ``RachfordRiceStatus``) take their values from here, so
the codes the kernels write and the names users read cannot drift apart.
"""

from __future__ import annotations

# Root choice codes
ROOT_MIN_GIBBS = 0
ROOT_VAPOUR = 1
ROOT_LIQUID = 2

# Flash status codes (public as _result.FlashStatus)
CONVERGED = 0
MAX_ITERATIONS = 1
TRIVIAL_SOLUTION = 2
ROOT_FAILURE = 3
NO_TWO_PHASE_ROOT = 4
GIBBS_INCREASE = 5
NOT_CERTIFIED = 6
THREE_PHASE_FAILED = 7

# Rachford-Rice status codes (public as _rachford_rice.RachfordRiceStatus)
RR_CONVERGED = 0
RR_ALL_K_BELOW_ONE = 1
RR_ALL_K_ABOVE_ONE = 2
RR_MAX_ITERATIONS = 3
RR_AT_LOWER_LIMIT = 4
RR_AT_UPPER_LIMIT = 5

# Stability outcomes
STABLE = 0
UNSTABLE = 1
INCONCLUSIVE = 2
FAILED = 3
