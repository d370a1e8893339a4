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
there is no Python loop over cells.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from .._types import EosName, RootChoice

__all__ = [
    "CubicModel",
    "PhaseState",
    "cubic_roots",
    "eos_constants",
    "phase_state",
    "reduced_parameters",
]

R = 8.314462618  # J/(mol K), CODATA 2018

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
    p = np.asarray(pressure, dtype=float)[:, None]
    t = np.asarray(temperature, dtype=float)[:, None]
    sqrt_alpha = np.abs(1.0 + model.m * (1.0 - np.sqrt(t / model.tc)))
    sqrt_a = np.sqrt(model.ac * p) * sqrt_alpha / (R * t)
    b = model.b * p / (R * t)
    return sqrt_a, b


def cubic_roots(
    a: FloatArray, b: FloatArray, delta1: float, delta2: float
) -> tuple[FloatArray, FloatArray, NDArray[np.bool_]]:
    """Largest and smallest real roots of the reduced cubic, for every cell at once.

    The roots come from the trigonometric / Cardano closed forms and are then polished by two
    Newton steps on the cubic.

    Returns
    -------
    z_max, z_min : ndarray, shape (n,)
        Largest and smallest real roots (equal where only one real root exists).
    three_roots : ndarray of bool, shape (n,)
        Where three real roots exist.
    """
    u = delta1 + delta2
    w = delta1 * delta2
    c2 = -(1.0 + b - u * b)
    c1 = a + w * b * b - u * b - u * b * b
    c0 = -(a * b + w * b * b + w * b * b * b)

    p = c1 - c2 * c2 / 3.0
    q = 2.0 * c2**3 / 27.0 - c2 * c1 / 3.0 + c0
    disc = (q / 2.0) ** 2 + (p / 3.0) ** 3
    shift = -c2 / 3.0
    three = disc < 0.0

    with np.errstate(invalid="ignore", divide="ignore"):
        # One real root (Cardano), written to avoid cancellation.
        sq = np.sqrt(np.where(three, 0.0, disc))
        u1 = np.cbrt(-q / 2.0 - np.copysign(sq, q))
        t1 = np.where(u1 != 0.0, u1 - p / (3.0 * u1), 0.0)
        # Three real roots (trigonometric form).
        r = np.sqrt(np.where(three, -p / 3.0, 0.0))
        cos_arg = np.where(three, (-q / 2.0) / np.where(three, r**3, 1.0), 0.0)
        phi = np.arccos(np.clip(cos_arg, -1.0, 1.0))
        t_max = 2.0 * r * np.cos(phi / 3.0)
        t_min = 2.0 * r * np.cos((phi - 4.0 * np.pi) / 3.0)

    z_max = np.where(three, t_max, t1) + shift
    z_min = np.where(three, t_min, t1) + shift
    z_max = _polish(z_max, c2, c1, c0)
    z_min = _polish(z_min, c2, c1, c0)
    return z_max, z_min, three


def _polish(z: FloatArray, c2: FloatArray, c1: FloatArray, c0: FloatArray) -> FloatArray:
    for _ in range(2):
        f = ((z + c2) * z + c1) * z + c0
        df = (3.0 * z + 2.0 * c2) * z + c1
        with np.errstate(invalid="ignore", divide="ignore"):
            step = np.where(df != 0.0, f / df, 0.0)
        z = np.where(np.isfinite(step), z - step, z)
    return z


def _gibbs_departure(z, a, b, delta1, delta2):
    """Residual molar Gibbs energy over RT, up to terms equal for all roots of one cubic."""
    return z - np.log(z - b) - a / (b * (delta1 - delta2)) * np.log(
        (z + delta1 * b) / (z + delta2 * b)
    )


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
        Mole fractions (need not be normalised exactly; they are used as given).
    sqrt_a, b_i : ndarray, shape (n, nc)
        From :func:`reduced_parameters`.
    root : {"min_gibbs", "vapour", "liquid"}
        ``"min_gibbs"`` takes the root of lowest Gibbs energy where three real roots exist
        (the stable one); ``"vapour"`` the largest, ``"liquid"`` the smallest root above ``B``.

    Notes
    -----
    ``ln phi_i = (B_i/B)(Z - 1) - ln(Z - B) - A / (B (d1 - d2)) (2 psi_i / A - B_i / B)
    ln[(Z + d1 B) / (Z + d2 B)]`` (Michelsen & Mollerup 2007, ch. 3; Peng & Robinson 1976,
    eq. 21 for d1,2 = 1 +- sqrt 2).
    """
    d1, d2 = model.delta1, model.delta2
    # einsum rather than matmul: BLAS blocking makes a row's rounding depend on the batch size,
    # and a cell's answer must not depend on which other cells share its batch.
    s = np.einsum("ij,jk->ik", sqrt_a * x, model.one_minus_k)
    psi = sqrt_a * s
    a = np.einsum("ij,ij->i", x, psi)
    b = np.einsum("ij,ij->i", x, b_i)
    z_max, z_min, three = cubic_roots(a, b, d1, d2)
    with np.errstate(invalid="ignore", divide="ignore"):
        min_ok = three & (z_min > b)
        if root == "vapour":
            z = z_max
        elif root == "liquid":
            z = np.where(min_ok, z_min, z_max)
        else:
            g_max = _gibbs_departure(z_max, a, b, d1, d2)
            g_min = _gibbs_departure(z_min, a, b, d1, d2)
            z = np.where(min_ok & (g_min < g_max), z_min, z_max)
        z = np.where(z > b, z, np.nan)
        log_term = np.log((z + d1 * b) / (z + d2 * b))
        b_ratio = b_i / b[:, None]
        ln_phi = (
            b_ratio * (z - 1.0)[:, None]
            - np.log(z - b)[:, None]
            - (a / (b * (d1 - d2)) * log_term)[:, None] * (2.0 * psi / a[:, None] - b_ratio)
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
    d1, d2 = model.delta1, model.delta2
    u = d1 + d2
    w = d1 * d2
    z = state.z[:, None]
    a = state.a[:, None]
    b = state.b[:, None]
    psi = state.psi

    c2 = -(1.0 + b - u * b)
    c1 = a + w * b * b - u * b - u * b * b
    f_z = 3.0 * z * z + 2.0 * c2 * z + c1
    f_a = z - b
    f_b = -(1.0 - u) * z * z + (2.0 * w * b - u - 2.0 * u * b) * z - (a + 2.0 * w * b + 3.0 * w * b * b)

    na = 2.0 * psi - 2.0 * a  # (n, nc): n dA/dn_j
    nb = b_i - b  # (n, nc): n dB/dn_j
    nz = -(f_a * na + f_b * nb) / f_z  # (n, nc)

    b_ratio = b_i / b  # (n, nc)
    log_term = np.log((z + d1 * b) / (z + d2 * b))  # (n, 1)
    q = a / b
    s = 2.0 * psi / a - b_ratio  # (n, nc)
    nq = q * (na / a - nb / b)  # (n, nc) over j
    nl = (nz + d1 * nb) / (z + d1 * b) - (nz + d2 * nb) / (z + d2 * b)  # (n, nc) over j

    a_ij = sqrt_a[:, :, None] * sqrt_a[:, None, :] * model.one_minus_k  # (n, nc, nc)
    ns = (
        2.0 * a_ij / a[:, :, None]
        + (2.0 * psi / a)[:, :, None]
        - 4.0 * psi[:, :, None] * psi[:, None, :] / (a * a)[:, :, None]
        + b_ratio[:, :, None] * b_ratio[:, None, :]
        - b_ratio[:, :, None]
    )

    t1 = b_ratio[:, :, None] * (nz[:, None, :] - ((z - 1.0) / b)[:, :, None] * nb[:, None, :])
    t2 = -((nz - nb) / (z - b))[:, None, :]
    t3 = -(1.0 / (d1 - d2)) * (
        nq[:, None, :] * s[:, :, None] * log_term[:, :, None]
        + q[:, :, None] * ns * log_term[:, :, None]
        + q[:, :, None] * s[:, :, None] * nl[:, None, :]
    )
    return t1 + t2 + t3
