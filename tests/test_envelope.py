"""Phase envelopes and critical points (gridflash.thermo.phase_envelope, critical_point).

Outside references: CoolProp's HEOS backend (GERG-2008 for these mixtures) phase envelopes
(``build_phase_envelope`` + ``get_phase_envelope_data``) and critical points
(``all_critical_points``). Self-consistency: gridflash.flash either side of every point, the
saturation-pressure solver at the traced temperatures, the Heidemann-Khalil conditions
evaluated here by finite differences of the Helmholtz energy written out independently.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

import gridflash
from gridflash._errors import InputError
from gridflash.thermo import (
    EnvelopeBranch,
    EnvelopeStatus,
    critical_point,
    phase_envelope,
    pure_vapour_pressure,
    saturation_pressure,
)

CP = pytest.importorskip("CoolProp.CoolProp")

# (gridflash names, CoolProp names, feed). Hydrocarbon mixtures GERG-2008 covers.
MIXTURES = {
    "C1-C2-C3-nC4": (("C1", "C2", "C3", "nC4"), ("Methane", "Ethane", "Propane", "n-Butane"),
                     (0.70, 0.15, 0.10, 0.05)),
    "C1-nC4": (("C1", "nC4"), ("Methane", "n-Butane"), (0.80, 0.20)),
    "C1-C2-C3": (("C1", "C2", "C3"), ("Methane", "Ethane", "Propane"), (0.60, 0.25, 0.15)),
    "C1-C2-nC5-nC6": (("C1", "C2", "nC5", "nC6"), ("Methane", "Ethane", "n-Pentane", "n-Hexane"),
                      (0.75, 0.10, 0.10, 0.05)),
    "C1-C2": (("C1", "C2"), ("Methane", "Ethane"), (0.50, 0.50)),
}

# Model difference Peng-Robinson (kij = 0) vs GERG-2008. GERG-2008 reproduces the VLE data of
# these systems to about 1-3 % in pressure (Kunz & Wagner, J. Chem. Eng. Data 57 (2012) 3032);
# Peng-Robinson without fitted kij is commonly several percent off in bubble pressure for
# asymmetric mixtures and further off near the critical point (common practice). Measured here:
# largest differences 2.4 % in critical T, 5.0 % in critical P, 5.5 % in cricondenbar P, 2.4 %
# in cricondentherm T, 5.7 % in bubble pressure, 1.8 % in dew temperature (C1-C2-nC5-nC6 the
# worst). Tolerances: those rounded up with a margin.
TOL_CRIT_T = 0.03
TOL_CRIT_P = 0.07
TOL_CRICONDENBAR_P = 0.07
TOL_CRICONDENTHERM_T = 0.03
TOL_BUBBLE_P = 0.07
TOL_DEW_T = 0.025


def _mixture(names):
    return gridflash.Mixture(names, kij=np.zeros((len(names), len(names))))


def _coolprop(cp_names, z):
    state = CP.AbstractState("HEOS", "&".join(cp_names))
    state.set_mole_fractions(list(z))
    state.build_phase_envelope("")
    data = state.get_phase_envelope_data()
    crit = [c for c in state.all_critical_points() if c.stable and c.p > 0]
    return np.array(data.T), np.array(data.p), np.array(data.Q), crit[0]


@pytest.fixture(scope="module", params=list(MIXTURES))
def case(request):
    names, cp_names, z = MIXTURES[request.param]
    mix = _mixture(names)
    return mix, np.array(z), phase_envelope(mix, z), _coolprop(cp_names, z)


def test_envelope_vs_coolprop_heos(case):
    # Source: CoolProp HEOS (GERG-2008) phase envelope and critical point.
    mix, z, env, (t_ref, p_ref, q_ref, crit_ref) = case
    assert env.status == EnvelopeStatus.COMPLETE
    assert env.critical_confirmed
    assert abs(env.critical_temperature / crit_ref.T - 1) < TOL_CRIT_T
    assert abs(env.critical_pressure / crit_ref.p - 1) < TOL_CRIT_P
    assert abs(env.cricondenbar_pressure / p_ref.max() - 1) < TOL_CRICONDENBAR_P
    assert abs(env.cricondentherm_temperature / t_ref.max() - 1) < TOL_CRICONDENTHERM_T
    # Bubble pressure at the traced bubble temperatures, below 80 % of the critical pressure
    # (where the bubble curve is a function of T on both models).
    bub = (env.branch == EnvelopeBranch.BUBBLE_POINT) & (env.pressure > 5e5)
    bub &= env.pressure < 0.8 * env.critical_pressure
    ref = np.isclose(q_ref, 0.0) & (p_ref < 0.9 * crit_ref.p)
    order = np.argsort(t_ref[ref])
    inside = (env.temperature >= t_ref[ref].min()) & (env.temperature <= t_ref[ref].max())
    t_b = env.temperature[bub & inside]
    p_b = np.exp(np.interp(t_b, t_ref[ref][order], np.log(p_ref[ref][order])))
    assert t_b.size >= 10
    np.testing.assert_array_less(np.abs(env.pressure[bub & inside] / p_b - 1), TOL_BUBBLE_P)
    # Dew temperature at the traced dew pressures below the cricondentherm's pressure (the dew
    # curve is steep in P there, so it is compared in T).
    i_t = int(np.argmax(t_ref))
    dew_ref = np.isclose(q_ref, 1.0) & (t_ref < t_ref[i_t]) & (p_ref < 0.9 * p_ref[i_t])
    dew = (env.branch == EnvelopeBranch.DEW_POINT) & (env.pressure > 5e5)
    dew &= env.pressure < 0.9 * env.cricondentherm_pressure
    t_d = np.interp(np.log(env.pressure[dew]), np.log(p_ref[dew_ref]), t_ref[dew_ref])
    assert t_d.size >= 10
    np.testing.assert_array_less(np.abs(env.temperature[dew] / t_d - 1), TOL_DEW_T)


def test_critical_point_solver_vs_coolprop_and_envelope(case):
    # Source: CoolProp HEOS all_critical_points (GERG-2008); and the envelope's own crossing.
    mix, z, env, (_, _, _, crit_ref) = case
    cp = critical_point(mix, z)  # from the Heidemann-Khalil default start, not the envelope
    assert cp.converged
    assert abs(cp.temperature / crit_ref.T - 1) < TOL_CRIT_T
    assert abs(cp.pressure / crit_ref.p - 1) < TOL_CRIT_P
    # Two starts of the same solver: equal to the noise of the finite-difference cubic form.
    assert cp.temperature == pytest.approx(env.critical_temperature, rel=1e-7)
    assert cp.pressure == pytest.approx(env.critical_pressure, rel=1e-6)


def _helmholtz(mix, n, t, v):
    """A / RT of the mixture at mole numbers n, T, total volume V: ideal gas (up to terms linear
    in n) plus the generic cubic's residual part, written out here from the pressure equation
    P = RT/(V - B) - D/((V + d1 B)(V + d2 B)) (Michelsen & Mollerup 2007, ch. 3)."""
    m = mix.model
    r = gridflash.thermo._cubic.R
    sqrt_a = np.sqrt(m.ac) * np.abs(1 + m.m * (1 - np.sqrt(t / m.tc)))
    d = n @ (np.outer(sqrt_a, sqrt_a) * m.one_minus_k) @ n
    b = n @ m.b
    ideal = np.sum(n * (np.log(n * r * t / v) - 1.0))
    d1, d2 = m.delta1, m.delta2
    res = -n.sum() * np.log(1 - b / v) - d / (r * t * b * (d1 - d2)) * np.log(
        (v + d1 * b) / (v + d2 * b))
    return ideal + res


def _hk_conditions(mix, z, t, v, h=1e-4):
    """(smallest eigenvalue of sqrt(z_i z_j) Q_ij, cubic form along its mode), by central
    differences of A/RT alone."""
    nc = z.size
    q = np.empty((nc, nc))
    e = np.eye(nc) * h
    for i in range(nc):
        for j in range(nc):
            a = [_helmholtz(mix, z + si * e[i] + sj * e[j], t, v)
                 for si, sj in ((1, 1), (1, -1), (-1, 1), (-1, -1))]
            q[i, j] = (a[0] - a[1] - a[2] + a[3]) / (4 * h * h)
    s = np.sqrt(z)
    w, vec = np.linalg.eigh(s[:, None] * q * s[None, :])
    dn = vec[:, 0] * s
    k = 2e-3
    a = [_helmholtz(mix, z + c * k * dn, t, v) for c in (2, 1, -1, -2)]
    cubic = (a[0] - 2 * a[1] + 2 * a[2] - a[3]) / (2 * k**3)
    return w[0], cubic, w[-1]


@pytest.mark.parametrize("name", ["C1-C2-C3-nC4", "C1-nC4"])
def test_critical_point_satisfies_heidemann_khalil(name):
    # Source: Heidemann & Khalil, AIChE J. 26 (1980) 769, the two critical conditions.
    names, _, z = MIXTURES[name]
    mix = _mixture(names)
    z = np.array(z)
    cp = critical_point(mix, z)
    lam, cubic, lam_max = _hk_conditions(mix, z, cp.temperature, cp.volume)
    assert abs(lam) < 1e-5 * lam_max
    # Off the critical point the conditions fail: 1 % hotter is stable (lambda > 0), and on the
    # stability limit at another volume the cubic form is far from zero.
    lam_hot, _, _ = _hk_conditions(mix, z, 1.01 * cp.temperature, cp.volume)
    assert lam_hot > 1e-3 * lam_max
    other = critical_point(mix, z, temperature=cp.temperature, volume=cp.volume)
    assert other.temperature == pytest.approx(cp.temperature, rel=1e-7)
    _, cubic_scale, _ = _hk_conditions(mix, z, cp.temperature, 1.3 * cp.volume)
    assert abs(cubic) < 1e-3 * max(1.0, abs(cubic_scale))
    assert abs(cp.cubic_form) < 1e-5


@pytest.mark.parametrize("name", ["C1-C2-C3-nC4", "C1-C2-nC5-nC6"])
def test_every_point_is_where_the_flash_changes(name):
    # Self-consistency with gridflash.flash: one phase just outside, two phases with a vapour
    # fraction that vanishes linearly just inside (so the boundary is at the point to ~1e-9).
    names, _, z = MIXTURES[name]
    mix = _mixture(names)
    env = phase_envelope(mix, z)
    pts = env.branch != EnvelopeBranch.CRITICAL_POINT
    # Leave out the 2 % around the critical point, where the vapour fraction is not linear
    # over these steps.
    far = (np.abs(env.temperature / env.critical_temperature - 1) > 0.02) | (
        np.abs(env.pressure / env.critical_pressure - 1) > 0.02)
    sel = pts & far
    assert env.confirmed[sel].all()
    t, p, kind = env.temperature[sel], env.pressure[sel], env.branch[sel]
    zz = np.broadcast_to(np.array(z), (t.size, len(z)))
    edge = np.where(kind == EnvelopeBranch.BUBBLE_POINT, 0.0, 1.0)
    for d in (1e-10,):
        for sgn in (1, -1):
            r = gridflash.flash(mix, p * (1 + sgn * d), t, zz)
            # one phase (vapour fraction 0 or 1 by its label) or two with a vanishing amount
            beta = r.vapour_fraction
            assert np.all(np.minimum(beta, 1 - beta) < 1e-8)
            two = r.phase_count == 2
            assert np.all(np.abs(beta[two] - edge[two]) < 1e-8)
    betas = []
    for d in (1e-6, 1e-7):
        up = gridflash.flash(mix, p * (1 + d), t, zz)
        down = gridflash.flash(mix, p * (1 - d), t, zz)
        two = np.where(up.phase_count == 2, np.abs(up.vapour_fraction - edge),
                       np.abs(down.vapour_fraction - edge))
        assert np.all((up.phase_count == 2) ^ (down.phase_count == 2))
        betas.append(two)
    ratio = betas[1] / betas[0]
    np.testing.assert_allclose(ratio, 0.1, atol=0.01)


def test_envelope_passes_through_saturation_pressures():
    # Self-consistency with the table's saturation-pressure solver (gridflash.thermo
    # .saturation_pressure, bisection on the flash + Newton) at the traced temperatures.
    names, _, z = MIXTURES["C1-C2-C3-nC4"]
    mix = _mixture(names)
    env = phase_envelope(mix, z)
    bub = np.flatnonzero((env.branch == EnvelopeBranch.BUBBLE_POINT) & (env.pressure > 2e5)
                         & (env.pressure < 0.9 * env.critical_pressure))[::3]
    t = env.temperature[bub]
    p = env.pressure[bub]
    zz = np.broadcast_to(np.array(z), (t.size, len(z)))
    p_sat, kind, _ = saturation_pressure(mix, t, zz, p * 0.97, p * 1.03)
    assert np.all(kind == 1)
    np.testing.assert_allclose(p_sat, p, rtol=1e-8)


@pytest.mark.parametrize("name", ["C1", "CO2", "nC4"])
def test_pure_component_is_its_vapour_pressure_curve(name):
    # A single component: the EOS vapour-pressure curve ending at its (Tc, Pc).
    mix = gridflash.Mixture([name, "C3"])
    env = phase_envelope(mix, [1.0, 0.0])
    comp = mix.components[0]
    assert env.status == EnvelopeStatus.COMPLETE
    assert env.branch[-1] == EnvelopeBranch.CRITICAL_POINT
    assert (env.temperature[-1], env.pressure[-1]) == (comp.tc, comp.pc)
    assert env.cricondenbar_pressure == comp.pc
    vp = env.branch == EnvelopeBranch.VAPOUR_PRESSURE
    p_ref, _, _, _ = pure_vapour_pressure(mix.model, np.zeros(vp.sum(), int), env.temperature[vp])
    np.testing.assert_allclose(env.pressure[vp], p_ref, rtol=1e-12)
    assert env.pressure[vp].max() < comp.pc and env.temperature[vp].max() < comp.tc
    # Source: CoolProp HEOS critical point of the pure fluid (the EOS uses these constants).
    ref = {"C1": "Methane", "CO2": "CarbonDioxide", "nC4": "n-Butane"}[name]
    assert comp.tc == pytest.approx(CP.PropsSI("Tcrit", ref), rel=2e-3)


def test_nearly_pure_feed_collapses_onto_the_vapour_pressure_curve():
    # 99.9 % methane: a narrow envelope hugging methane's vapour-pressure curve, its critical
    # point next to methane's.
    mix = _mixture(("C1", "C2"))
    env = phase_envelope(mix, [0.999, 0.001])
    tc, pc = mix.tc[0], mix.pc[0]
    assert env.complete
    assert abs(env.critical_temperature / tc - 1) < 5e-3
    assert abs(env.critical_pressure / pc - 1) < 5e-3
    # The bubble curve lies on the vapour-pressure curve within the impurity's effect (0.3 %
    # measured); the dew curve too where the pressure is high enough for the ethane to stay in
    # the vapour (at low pressure the dew point is where the ethane condenses, far below).
    for kind, p_low, tol in ((EnvelopeBranch.BUBBLE_POINT, 0.0, 0.005),
                             (EnvelopeBranch.DEW_POINT, 0.3 * pc, 0.03)):
        sub = (env.branch == kind) & (env.pressure > p_low) & (env.temperature < 0.999 * tc)
        p_vp, _, _, _ = pure_vapour_pressure(mix.model, np.zeros(sub.sum(), int),
                                             env.temperature[sub])
        assert sub.sum() >= 5
        np.testing.assert_array_less(np.abs(env.pressure[sub] / p_vp - 1), tol)


def test_extrema_are_the_largest_pressure_and_temperature():
    names, _, z = MIXTURES["C1-nC4"]
    env = phase_envelope(_mixture(names), z)
    assert env.cricondenbar_pressure >= env.pressure.max() * (1 - 1e-12)
    assert env.cricondentherm_temperature >= env.temperature.max() * (1 - 1e-12)
    # and only just above the traced points (refined between neighbours)
    assert env.cricondenbar_pressure < env.pressure.max() * 1.01
    assert env.cricondentherm_temperature < env.temperature.max() * 1.01
    # Branches: dew points first, then the critical point, then bubble points.
    k = int(np.flatnonzero(env.branch == EnvelopeBranch.CRITICAL_POINT)[0])
    assert np.all(env.branch[:k] == EnvelopeBranch.DEW_POINT)
    assert np.all(env.branch[k + 1:] == EnvelopeBranch.BUBBLE_POINT)
    assert env.pressure[0] == pytest.approx(1e5) and env.pressure[-1] == pytest.approx(1e5)


def test_zero_components_are_left_out(oil_gas_mixture):
    z = np.array([0.0, 0.7, 0.15, 0.1, 0.05, 0.0, 0.0, 0.0])
    env = phase_envelope(oil_gas_mixture, z)
    sub = gridflash.Mixture(["C1", "C2", "C3", "nC4"])
    ref = phase_envelope(sub, z[1:5])
    np.testing.assert_allclose(env.critical_temperature, ref.critical_temperature, rtol=1e-10)
    assert np.all(env.incipient[:, [0, 5, 6, 7]] == 0.0)


@pytest.mark.parametrize("kwargs, match", [
    ({"z": [0.5, 0.6]}, "sum"),
    ({"z": [0.5, 0.5, 0.0]}, "shape"),
    ({"z": [1.5, -0.5]}, "non-negative"),
    ({"z": [0.5, 0.5], "start_pressure": -1.0}, "start_pressure"),
    ({"z": [0.5, 0.5], "max_points": 3}, "max_points"),
])
def test_bad_input(kwargs, match):
    with pytest.raises(InputError, match=match):
        phase_envelope(gridflash.Mixture(["C1", "nC4"]), **kwargs)


def test_partial_envelope_reports_why():
    # A buffer too small for the curve: partial, with the points traced so far.
    env = phase_envelope(_mixture(("C1", "nC4")), [0.8, 0.2], max_points=10)
    assert env.status == EnvelopeStatus.MAX_POINTS and not env.complete
    assert len(env) == 10 and math.isnan(env.critical_temperature)
