"""Two-phase isothermal split on batches of cells.

Successive substitution on ``ln K`` (``ln K_i <- ln phi_i^L - ln phi_i^V``, with the vapour fraction
from Rachford-Rice at every step) accelerated by the Crowe-Nishio dominant-eigenvalue method (GDEM)
and safeguarded by the Gibbs energy, then a Newton finish that minimises the Gibbs energy in the
vapour mole numbers ``v_i`` (Michelsen, Fluid Phase Equilib. 9 (1982) 21, "Part II. Phase-split
calculation"; Michelsen & Mollerup 2007, ch. 10)::

    g_i(v) = ln(y_i phi_i^V) - ln(x_i phi_i^L)          (the gradient of G / RT)
    dg_i/dv_j = [delta_ij / y_i - 1 + Phi^V_ij] / V + [delta_ij / x_i - 1 + Phi^L_ij] / L

where ``Phi_ij = n d(ln phi_i)/dn_j``. The Newton system is scaled symmetrically by
``sqrt(v_i l_i / z_i)``; each step is shortened to keep ``0 < v_i < z_i`` and halved while it
raises the Gibbs energy. In the robust mode the scaled Hessian is shifted to be positive definite,
which turns the Newton iteration into a descent method that reaches a Gibbs-energy minimum from a
stability-test trial phase even where substitution collapses to the trivial solution.

Substitution hands over to Newton below a residual of 1e-3 (at once for a warm start) or after
25 steps, provided both phases hold more than 1e-6 of the feed; GDEM extrapolation every fifth
step is kept only if it lowers the Gibbs energy. A split whose ``max |ln K|`` falls below 1e-5
has collapsed to the trivial solution.

The compiled per-cell implementation is ``_kernels.split_cell`` (substitution) and
``_kernels.newton_cell`` (Newton finish, and the robust Gibbs descent used by the flash where
substitution fails); :func:`gridflash.flash` is the way to run it. This module holds the
convergence tolerances the flash and the tests share.
"""

from __future__ import annotations

from . import _kernels as _k

__all__ = ["TOL_BALANCE", "TOL_RESIDUAL"]

TOL_RESIDUAL = _k.TOL_RESIDUAL  # max |ln f_i^V - ln f_i^L| of a converged cell
TOL_BALANCE = _k.TOL_BALANCE  # material balance of a converged cell
