"""Critical point of a mixture from the Heidemann-Khalil conditions (Michelsen 1984 form)."""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

from .._errors import InputError
from ._cubic import R, cubic_roots, eos_constants
from ._mixture import Mixture
from .kernels import envelope as _ke

__all__ = ["CriticalPoint", "critical_point", "eos_tuple"]


@dataclass(frozen=True)
class CriticalPoint:
    """A mixture critical point, per mole of feed.

    Attributes
    ----------
    temperature : float
        K (NaN where not converged).
    pressure : float
        Pa.
    volume : float
        Molar volume, m3/mol (EOS, not volume-shifted).
    converged : bool
    smallest_eigenvalue : float
        The smallest eigenvalue of ``sqrt(z_i z_j) d ln f_i / d n_j`` (constant T, V) at the
        answer: zero at a limit of stability (first Heidemann-Khalil condition).
    cubic_form : float
        ``sum_ijk d^3 (A / RT) / dn_i dn_j dn_k Dn_i Dn_j Dn_k`` along the critical mode ``Dn``:
        zero at a critical point (second condition).
    mode : ndarray, shape (nc,)
        The critical mode ``Dn`` (zero for components absent from the feed).
    """

    temperature: float
    pressure: float
    volume: float
    converged: bool
    smallest_eigenvalue: float
    cubic_form: float
    mode: NDArray[np.float64]


def eos_tuple(mixture: Mixture, present: NDArray[np.intp] | None = None) -> tuple:
    """The EOS data the envelope and critical-point kernels take, for components ``present``
    (all by default): ``(ac, m, b, tc, 1 - kij, delta1, delta2)``."""
    m = mixture.model
    idx = np.arange(mixture.n_components) if present is None else np.asarray(present)

    def sub(a):
        return np.ascontiguousarray(a[idx])

    return (sub(m.ac), sub(m.m), sub(m.b), sub(m.tc),
            np.ascontiguousarray(m.one_minus_k[np.ix_(idx, idx)]), m.delta1, m.delta2)


def critical_point(
    mixture: Mixture,
    z: ArrayLike,
    *,
    temperature: float | None = None,
    volume: float | None = None,
) -> CriticalPoint:
    """Critical point of a feed from the Heidemann-Khalil conditions.

    Parameters
    ----------
    mixture : Mixture
    z : array_like, shape (nc,)
        Feed mole fractions; components may be zero (they are left out).
    temperature, volume : float, optional
        Start (K, m3/mol). Default, after Heidemann & Khalil: ``1.5 sum z_i Tc_i`` and four
        times the mixture co-volume.

    Returns
    -------
    CriticalPoint

    Notes
    -----
    Heidemann & Khalil (AIChE J. 26 (1980) 769) write the critical point as the limit of
    stability (``det Q = 0`` with ``Q_ij = d^2 A / dn_i dn_j`` at constant T, V) at which the
    cubic form of the third derivatives along the null vector of ``Q`` also vanishes. Following
    Michelsen (Fluid Phase Equilib. 16 (1984) 57) the first condition is the smallest eigenvalue
    of the scaled matrix ``B_ij = sqrt(z_i z_j) Q_ij / RT`` being zero, solved for ``T`` by
    Newton's method at fixed volume, and the cubic form is evaluated by central differences of
    ``sum_i Dn_i ln f_i(z + eps Dn)`` (eps = 1e-4) along ``Dn_i = u_i sqrt(z_i)``; the secant
    method in ``V`` drives it to zero (``|c| < 1e-8``, or a relative change of ``V`` below 1e-8:
    the noise level of the finite-difference cubic form). The derivatives of the cubic EOS's
    Helmholtz energy are analytic (Michelsen & Mollerup 2007, ch. 3). A mixture can have
    several critical points (or none); the one reached from the start is returned (if the
    secant fails from it, from 0.9 and 1.1 times its volume, then from the default start), which
    is why :func:`phase_envelope` starts it at the crossing of its traced curve. A
    single-component feed returns its ``(Tc, Pc)``.

    Examples
    --------
    >>> import gridflash
    >>> cp = gridflash.thermo.critical_point(gridflash.Mixture(["C1", "C3"]), [0.5, 0.5])
    >>> bool(cp.converged), round(cp.temperature)
    (True, 322)
    """
    if not isinstance(mixture, Mixture):
        raise InputError(f"mixture must be a gridflash.Mixture, got {type(mixture).__name__}")
    zz = np.asarray(z, dtype=float)
    nc = mixture.n_components
    if zz.shape != (nc,) or not np.all(np.isfinite(zz)) or np.any(zz < 0) \
            or abs(zz.sum() - 1.0) > 1e-6:
        raise InputError(
            f"z = {zz.tolist()!r} must be {nc} finite, non-negative mole fractions summing to 1")
    zz = zz / zz.sum()
    present = np.flatnonzero(zz > 0.0)
    mode = np.zeros(nc)
    if present.size == 1:
        # The EOS's own critical point: A = Omega_a, B = Omega_b, Z_c the triple root.
        i = int(present[0])
        tc, pc = float(mixture.tc[i]), float(mixture.pc[i])
        omega_a, omega_b, d1, d2 = eos_constants(mixture.eos)  # type: ignore[arg-type]
        z_c, _, _ = cubic_roots(np.array([omega_a]), np.array([omega_b]), d1, d2)
        mode[i] = 1.0
        return CriticalPoint(tc, pc, float(z_c[0]) * R * tc / pc, True, 0.0, 0.0, mode)
    sub = np.ascontiguousarray(zz[present])
    eos = eos_tuple(mixture, present)
    t0 = 1.5 * float(sub @ mixture.tc[present]) if temperature is None else float(temperature)
    v0 = 4.0 * float(sub @ mixture.model.b[present]) if volume is None else float(volume)
    if not (math.isfinite(t0) and t0 > 0 and math.isfinite(v0) and v0 > 0):
        raise InputError(f"temperature={temperature!r} and volume={volume!r} must be positive")
    dn = np.empty(sub.size)
    # The secant in V can overshoot from one start: a few others before giving up (the
    # Heidemann-Khalil default last).
    t_hk = 1.5 * float(sub @ mixture.tc[present])
    v_hk = 4.0 * float(sub @ mixture.model.b[present])
    for t_s, v_s in ((t0, v0), (t0, 0.9 * v0), (t0, 1.1 * v0), (t_hk, v_hk)):
        t, v, p, lam, c, ok = _ke.critical_cell(eos, sub, t_s, v_s, dn)
        if ok and p > 0:
            break
    mode[present] = dn
    return CriticalPoint(float(t), float(p), float(v), bool(ok) and p > 0, float(lam), float(c),
                         mode)

