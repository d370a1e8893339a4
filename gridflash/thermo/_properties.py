"""Phase properties: volume-shifted density, molar mass, viscosity, single-phase label."""

from __future__ import annotations

import numpy as np
from numpy.typing import NDArray

from . import kernels as _k
from ._result import PhaseProperties
from .kernels import properties as _pk

__all__ = [
    "lbc_viscosity",
    "phase_properties",
    "single_phase_label",
    "stiel_thodos_viscosity",
    "wilson_ln_k",
]


def wilson_ln_k(tc, pc, omega, pressure, temperature):
    """Wilson's K-value estimate ``ln K_i = ln(Pc_i / P) + 5.373 (1 + w_i)(1 - Tc_i / T)``.

    Wilson, G. M. (1968), A modified Redlich-Kwong equation of state, AIChE 64th National Meeting.
    Returns shape (n, nc) for ``pressure``, ``temperature`` of shape (n,); the compiled flash
    uses the same function (``kernels.eos.wilson_ln_k_cell``).
    """
    p = np.ascontiguousarray(pressure, dtype=float)
    t = np.ascontiguousarray(temperature, dtype=float)
    tc, pc, omega = (np.ascontiguousarray(a, dtype=float) for a in (tc, pc, omega))
    out = np.empty((p.shape[0], tc.shape[0]))
    _k.wilson_batch(pc, tc, omega, p, t, out)
    return out


#: Packing fraction ``b / V`` below which a phase is a dilute gas, always vapour-like.
DILUTE_PACKING = 0.1


def single_phase_label(mixture, pressure, temperature, z, z_factor) -> NDArray[np.int8]:
    """Label single phases vapour-like or liquid-like by the phase-identification parameter.

    Parameters
    ----------
    mixture : Mixture
    pressure, temperature : ndarray, shape (n,)
        Pa, K.
    z : ndarray, shape (n, nc)
        Composition of each phase.
    z_factor : ndarray, shape (n,)
        Its EOS (unshifted) compressibility factor.

    Returns
    -------
    ndarray of int8, shape (n,)
        ``PhaseLabel.LIQUID_LIKE`` where ``PI > 1`` and ``b / V >= 0.1``, else
        ``PhaseLabel.VAPOUR_LIKE``.

    Notes
    -----
    Venkatarathnam & Oellrich's phase-identification parameter (Fluid Phase Equilib. 301 (2011)
    225-233)

    ``PI = V [(d2P/dTdV) / (dP/dT)_V - (d2P/dV2)_T / (dP/dV)_T]``

    is computed from the cubic EOS at the phase's own volume ``V = Z R T / P``: ``PI > 1`` is a
    liquid-like phase, ``PI < 1`` a vapour-like one. It needs only the state of the phase
    itself (no saturation or critical-point calculation). For a pure fluid the ``PI = 1`` line
    meets the saturation curve at the critical point, so saturated liquids are liquid-like and
    saturated vapours vapour-like; at supercritical temperature it divides the states at about
    the line of maximum isothermal compressibility. For mixtures the authors found it to agree
    with the kind of the adjacent saturation point (bubble point: liquid-like bulk phase, dew
    point: vapour-like) except close to the mixture critical point.

    Limits. Near a critical point (pure or mixture) the label is only as good as the EOS there,
    and on either side of the ``PI = 1`` line in the supercritical region it is a convention
    rather than a phase boundary: a gas compressed to about its critical density or more has
    ``PI > 1`` and is liquid-like (methane at 300 K and 20 MPa; a lean gas of 95% methane at
    450 K and 30 MPa). Next to an upper (retrograde) dew point of a gas condensate or a
    CO2-rich gas at high pressure, where the bulk phase is dense but lighter than the liquid
    that appears, the label is therefore often liquid-like. It agrees with every bubble point
    and lower dew point of the bundled example fluids (``tests/test_properties.py``).

    In the dilute-gas limit ``PI -> 1 + (B - T dB/dT) / V`` (second virial coefficient ``B``),
    which exceeds 1 above the zero-pressure Joule-Thomson
    inversion temperature (about five times the critical temperature); so that a dilute gas is
    never called a liquid, a phase with packing fraction ``b / V < 0.1`` (below roughly 0.4 of
    the EOS critical density) is labelled vapour-like whatever its ``PI`` (a rule of this
    package, not of the paper).
    """
    x = np.ascontiguousarray(z, dtype=float)
    n = x.shape[0]
    p, t, zf = (
        np.ascontiguousarray(np.broadcast_to(a, (n,)), dtype=float)
        for a in (pressure, temperature, z_factor)
    )
    model = mixture.model
    out = np.empty(n, dtype=np.int8)
    _pk.phase_label_batch(
        model.ac, model.m, model.b, model.tc, model.one_minus_k, model.delta1, model.delta2,
        p, t, x, zf, DILUTE_PACKING, out,
    )
    return out


def stiel_thodos_viscosity(tc, pc, mw, temperature):
    """Low-pressure gas viscosity of each component, Pa s, shape (n, nc).

    Stiel, L. I. and Thodos, G. (1961), The viscosity of nonpolar gases at normal pressures,
    AIChE J. 7, 611-615: ``mu xi = 34e-5 Tr^0.94`` (Tr <= 1.5) and
    ``mu xi = 17.78e-5 (4.58 Tr - 1.67)^(5/8)`` (Tr > 1.5), mu in cP, with
    ``xi = Tc^(1/6) / (M^(1/2) Pc^(2/3))`` (Tc in K, Pc in atm).
    """
    t = np.ascontiguousarray(temperature, dtype=float).reshape(-1)
    tc, pc, mw = (np.ascontiguousarray(a, dtype=float) for a in (tc, pc, mw))
    out = np.empty((t.shape[0], tc.shape[0]))
    _pk.stiel_thodos_batch(tc, pc, mw, t, out)
    return out


def lbc_viscosity(tc, pc, mw, vc, temperature, x, molar_density):
    """Lohrenz-Bray-Clark viscosity of phases of composition ``x``, Pa s, shape (n,).

    Parameters
    ----------
    tc, pc, mw, vc : ndarray, shape (nc,)
        K, Pa, g/mol, m3/mol.
    temperature : ndarray, shape (n,)
    x : ndarray, shape (n, nc)
    molar_density : ndarray, shape (n,)
        mol/m3.

    Notes
    -----
    ``[(mu - mu*) xi + 1e-4]^(1/4) = 0.1023 + 0.023364 rho_r + 0.058533 rho_r^2
    - 0.040758 rho_r^3 + 0.0093324 rho_r^4`` with mu in cP, ``rho_r = rho sum x_i Vc_i`` and
    ``xi = Tpc^(1/6) / (M^(1/2) Ppc^(2/3))`` from molar averages (Tpc in K, Ppc in atm)
    (Lohrenz, Bray & Clark, J. Pet. Technol. 16 (1964) 1171). The dilute-gas mixture viscosity
    ``mu*`` follows Herning & Zipperer (1936): ``sum x_i mu_i sqrt(M_i) / sum x_i sqrt(M_i)``
    with ``mu_i`` from :func:`stiel_thodos_viscosity`.
    """
    x = np.ascontiguousarray(x, dtype=float)
    t = np.ascontiguousarray(np.broadcast_to(temperature, x.shape[:1]), dtype=float)
    rho = np.ascontiguousarray(np.broadcast_to(molar_density, x.shape[:1]), dtype=float)
    tc, pc, mw, vc = (np.ascontiguousarray(a, dtype=float) for a in (tc, pc, mw, vc))
    out = np.empty(x.shape[0])
    _pk.lbc_batch(tc, pc, mw, vc, t, x, rho, out)
    return out


def phase_properties(mixture, pressure, temperature, x, z_factor) -> PhaseProperties:
    """Properties of phases with composition ``x`` (rows of NaN give NaN properties).

    The molar volume is the EOS volume with Peneloux's shift ``v = Z R T / P - sum x_i c_i``
    (Peneloux, Rauzy & Freze, Fluid Phase Equilib. 8 (1982) 7); the shift does not enter phase
    equilibrium.
    """
    x = np.ascontiguousarray(x, dtype=float)
    n = x.shape[0]
    p, t, z_factor = (
        np.ascontiguousarray(np.broadcast_to(a, (n,)), dtype=float)
        for a in (pressure, temperature, z_factor)
    )
    v, molar_density, mass_density, mw, mu = (np.empty(n) for _ in range(5))
    _pk.properties_batch(
        mixture.tc,
        mixture.pc,
        mixture.mw,
        mixture.vc,
        mixture.volume_shift,
        p,
        t,
        x,
        z_factor,
        v,
        molar_density,
        mass_density,
        mw,
        mu,
    )
    return PhaseProperties(
        z_factor=z_factor,
        molar_volume=v,
        molar_density=molar_density,
        mass_density=mass_density,
        molar_mass=mw,
        viscosity=mu,
    )
