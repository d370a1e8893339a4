"""Cubic equations of state on batches of cells.

The generic two-parameter cubic (Michelsen & Mollerup, *Thermodynamic Models: Fundamentals and
Computational Aspects*, 2nd ed., 2007, ch. 3)::

    P = R T / (v - b) - a(T) / ((v + delta1 b) (v + delta2 b))

with Peng-Robinson (1976; delta1,2 = 1 +- sqrt 2) or Soave-Redlich-Kwong (1972; delta1 = 1,
delta2 = 0). In reduced form, with ``A = a P / (R T)^2`` and ``B = b P / (R T)``, the
compressibility factor solves::

    Z^3 - (1 + B - u B) Z^2 + (A + w B^2 - u B - u B^2) Z - (A B + w B^2 + w B^3) = 0

where ``u = delta1 + delta2`` and ``w = delta1 delta2``. The van der Waals one-fluid mixing rules
``a = sum_ij x_i x_j (1 - k_ij) sqrt(a_i a_j)``, ``b = sum_i x_i b_i`` are used throughout.

Every function works on arrays over cells (leading axis ``n``) and components (last axis ``nc``);
the per-cell arithmetic is compiled (``kernels/eos.py``), so there is no Python loop over cells.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from .._types import EosName, RootChoice
from . import kernels as _k

__all__ = [
    "CubicModel",
    "PhaseState",
    "cubic_roots",
    "eos_constants",
    "phase_state",
    "reduced_parameters",
]

R = _k.R  # J/(mol K), CODATA 2018

_SQRT2 = math.sqrt(2.0)

#: (Omega_a, Omega_b, delta1, delta2) of each EOS.
#: Peng & Robinson, Ind. Eng. Chem. Fundam. 15 (1976) 59, eqs. 9-10 and 2;
#: Soave, Chem. Eng. Sci. 27 (1972) 1197, eqs. 5-6.
_EOS_CONSTANTS: dict[str, tuple[float, float, float, float]] = {
    "PR76": (0.45723553, 0.07779607, 1.0 + _SQRT2, 1.0 - _SQRT2),
    "PR78": (0.45723553, 0.07779607, 1.0 + _SQRT2, 1.0 - _SQRT2),
    "SRK": (0.42748023, 0.08664035, 1.0, 0.0),
}

FloatArray = NDArray[np.float64]


def eos_constants(eos: EosName) -> tuple[float, float, float, float]:
    """Return ``(Omega_a, Omega_b, delta1, delta2)`` for an EOS name."""
    return _EOS_CONSTANTS[eos]


def kappa(eos: EosName, omega: FloatArray) -> FloatArray:
    """The alpha-function slope ``m(omega)`` of the EOS.

    Notes
    -----
    ``alpha(T) = [1 + m (1 - sqrt(T / Tc))]^2`` with

    - PR76: ``m = 0.37464 + 1.54226 w - 0.26992 w^2`` (Peng & Robinson 1976, eq. 18);
    - PR78: the same for ``w <= 0.49``, else ``m = 0.379642 + 1.48503 w - 0.164423 w^2 +
      0.016666 w^3`` (Robinson & Peng 1978, GPA Research Report RR-28);
    - SRK: ``m = 0.480 + 1.574 w - 0.176 w^2`` (Soave 1972, eq. 14).
    """
    w = np.asarray(omega, dtype=float)
    if eos == "SRK":
        return 0.480 + 1.574 * w - 0.176 * w**2
    m76 = 0.37464 + 1.54226 * w - 0.26992 * w**2
    if eos == "PR76":
        return m76
    m78 = 0.379642 + 1.48503 * w - 0.164423 * w**2 + 0.016666 * w**3
    return np.where(w > 0.49, m78, m76)


@dataclass(frozen=True, eq=False)
class CubicModel:
    """Temperature-independent EOS data of a mixture, as arrays over components.

    Built by :class:`gridflash.Mixture`; the kernels below only ever see this record.

    Attributes
    ----------
    eos : str
        EOS name.
    delta1, delta2 : float
        The EOS's volume-function constants.
    tc : ndarray, shape (nc,)
        Critical temperatures, K.
    pc : ndarray, shape (nc,)
        Critical pressures, Pa.
    omega : ndarray, shape (nc,)
        Acentric factors.
    ac : ndarray, shape (nc,)
        ``Omega_a R^2 Tc^2 / Pc``, Pa m6/mol2.
    m : ndarray, shape (nc,)
        Alpha-function slopes (see :func:`kappa`).
    b : ndarray, shape (nc,)
        Co-volumes ``Omega_b R Tc / Pc``, m3/mol.
    one_minus_k : ndarray, shape (nc, nc)
        ``1 - k_ij``.
    """

    eos: str
    delta1: float
    delta2: float
    tc: FloatArray
    pc: FloatArray
    omega: FloatArray
    ac: FloatArray
    m: FloatArray
    b: FloatArray
    one_minus_k: FloatArray

    @property
    def n_components(self) -> int:
        return int(self.tc.shape[0])


def reduced_parameters(
    model: CubicModel, pressure: FloatArray, temperature: FloatArray
) -> tuple[FloatArray, FloatArray]:
    """Per-component reduced EOS parameters for each cell.

    Parameters
    ----------
    pressure, temperature : ndarray, shape (n,)
        Pa and K.

    Returns
    -------
    sqrt_a : ndarray, shape (n, nc)
        ``sqrt(A_i) = sqrt(a_i(T) P) / (R T)``.
    b : ndarray, shape (n, nc)
        ``B_i = b_i P / (R T)``.
    """
    p = np.ascontiguousarray(pressure, dtype=float)
    t = np.ascontiguousarray(temperature, dtype=float)
    nc = model.n_components
    sqrt_a = np.empty((p.shape[0], nc))
    b = np.empty((p.shape[0], nc))
    _k.reduced_batch(model.ac, model.m, model.b, model.tc, p, t, sqrt_a, b)
    return sqrt_a, b


def cubic_roots(
    a: FloatArray, b: FloatArray, delta1: float, delta2: float
) -> tuple[FloatArray, FloatArray, NDArray[np.bool_]]:
    """Largest and smallest real roots of the reduced cubic, for every cell.

    The roots come from the trigonometric (three real roots) or Cardano (one real root, written
    to avoid cancellation) closed forms, then two Newton steps on the cubic polish them.

    Returns
    -------
    z_max, z_min : ndarray, shape (n,)
        Largest and smallest real roots (equal where only one real root exists).
    three_roots : ndarray of bool, shape (n,)
        Where three real roots exist.
    """
    a = np.ascontiguousarray(a, dtype=float)
    b = np.ascontiguousarray(b, dtype=float)
    z_max = np.empty(a.shape[0])
    z_min = np.empty(a.shape[0])
    three = np.empty(a.shape[0], dtype=np.bool_)
    _k.cubic_roots_batch(a, b, float(delta1), float(delta2), z_max, z_min, three)
    return z_max, z_min, three


@dataclass(frozen=True, eq=False)
class PhaseState:
    """EOS state of one phase in each cell.

    Attributes
    ----------
    z : ndarray, shape (n,)
        Compressibility factor (NaN where the cubic has no root above ``B``).
    ln_phi : ndarray, shape (n, nc)
        Natural logarithm of the fugacity coefficients.
    a, b : ndarray, shape (n,)
        Mixture reduced parameters ``A`` and ``B``.
    psi : ndarray, shape (n, nc)
        ``sum_j x_j A_ij``.
    """

    z: FloatArray
    ln_phi: FloatArray
    a: FloatArray
    b: FloatArray
    psi: FloatArray


_ROOTS = {"min_gibbs": _k.ROOT_MIN_GIBBS, "vapour": _k.ROOT_VAPOUR, "liquid": _k.ROOT_LIQUID}


def phase_state(
    model: CubicModel,
    x: FloatArray,
    sqrt_a: FloatArray,
    b_i: FloatArray,
    root: RootChoice = "min_gibbs",
) -> PhaseState:
    """Compressibility factor and ln fugacity coefficients of phases of composition ``x``.

    Parameters
    ----------
    x : ndarray, shape (n, nc)
        Mole fractions (used as given).
    sqrt_a, b_i : ndarray, shape (n, nc)
        From :func:`reduced_parameters`.
    root : {"min_gibbs", "vapour", "liquid"}
        ``"min_gibbs"`` takes the root of lowest Gibbs energy where three real roots exist
        (the stable one); ``"vapour"`` the largest, ``"liquid"`` the smallest root above ``B``.

    Notes
    -----
    ``ln phi_i = (B_i/B)(Z - 1) - ln(Z - B) - A / (B (d1 - d2)) (2 psi_i / A - B_i / B)
    ln[(Z + d1 B) / (Z + d2 B)]`` (Michelsen & Mollerup 2007, ch. 3; Peng & Robinson 1976,
    eq. 21 for d1,2 = 1 +- sqrt 2). Where three roots exist, the Gibbs energies of the largest
    and smallest are compared through ``Z - ln(Z - B) - A / (B (d1 - d2)) ln[(Z + d1 B) /
    (Z + d2 B)]``.
    """
    x = np.ascontiguousarray(x, dtype=float)
    n, nc = x.shape
    z = np.empty(n)
    a = np.empty(n)
    b = np.empty(n)
    ln_phi = np.empty((n, nc))
    psi = np.empty((n, nc))
    _k.phase_batch(
        x,
        np.ascontiguousarray(sqrt_a),
        np.ascontiguousarray(b_i),
        model.one_minus_k,
        model.delta1,
        model.delta2,
        _ROOTS[root],
        z,
        a,
        b,
        ln_phi,
        psi,
    )
    return PhaseState(z=z, ln_phi=ln_phi, a=a, b=b, psi=psi)


def ln_phi_derivatives(
    model: CubicModel, state: PhaseState, sqrt_a: FloatArray, b_i: FloatArray
) -> FloatArray:
    """Composition derivatives ``n d(ln phi_i)/d n_j`` at constant T and P.

    Returns
    -------
    ndarray, shape (n, nc, nc)
        Symmetric in ``i, j``; a function of mole fractions only.

    Notes
    -----
    Obtained by differentiating the ln phi expression of :func:`phase_state` with ``Z`` implicit
    in the cubic (``n dZ/dn_j = -(dF/dA n dA/dn_j + dF/dB n dB/dn_j) / dF/dZ``), using
    ``n dA/dn_j = 2 psi_j - 2 A``, ``n dB/dn_j = B_j - B`` and ``n dpsi_i/dn_j = A_ij - psi_i``.
    Checked against finite differences in the tests.
    """
    n, nc = state.psi.shape
    out = np.empty((n, nc, nc))
    _k.dlnphi_batch(
        state.z,
        state.a,
        state.b,
        np.ascontiguousarray(state.psi),
        np.ascontiguousarray(sqrt_a),
        np.ascontiguousarray(b_i),
        model.one_minus_k,
        model.delta1,
        model.delta2,
        out,
    )
    return out
