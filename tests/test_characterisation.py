"""Plus-fraction characterisation: correlations, gamma split, constant-Kw SG, lumping, kij, TOML.

External references used here, each named beside its check:

* ``chemicals`` (Caleb Bell et al.) critical-property and acentric-factor databases for
  n-alkanes, its ``LK_omega`` (Lee & Kesler 1975) and ``Watson_K`` functions;
* CoolProp reference equations of state for the normal boiling points and the specific gravities
  (liquid density at 60 degF and 1 atm over water's) of n-alkanes, toluene and cyclohexane;
* a published worked example (isopropylbenzene, Reid, Prausnitz & Poling 1987, as quoted in the
  ``chemicals.acentric.LK_omega`` documentation);
* closed forms and numerical quadrature written here, independently of the library code.

The fluids are invented (labelled as such), not field data.
"""

from __future__ import annotations

import math

import chemicals
import numpy as np
import pytest
from CoolProp.CoolProp import PropsSI
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.integrate import quad
from scipy.optimize import brentq
from scipy.special import gamma as gamma_function

from gridflash import InputError, Mixture, flash
from gridflash.thermo._characterisation import (
    DEFAULT_KIJ_CONSTANTS,
    FluidAnalysis,
    PlusFraction,
    ScnFraction,
    characterise,
    equal_mass_groups,
)
from gridflash.thermo._characterisation_report import fluid_table_text, fluid_table_toml
from gridflash.thermo._correlations import (
    _KATZ_FIROOZABADI,
    chueh_prausnitz_kij,
    edmister_acentric,
    generalized_scn_properties,
    kesler_lee_critical,
    lee_kesler_acentric,
    riazi_daubert_1987_boiling_point,
    riazi_daubert_critical,
    riazi_daubert_critical_volume,
    riazi_daubert_molar_mass,
    soreide_boiling_point,
    watson_k,
    whitson_specific_gravity,
    whitson_watson_k,
)
from gridflash.thermo._plus_fraction import (
    constant_watson_sg,
    gamma_fractions,
    interval_moments,
    scn_lower_boundary,
)

# ------------------------------------------------------------------------------------------------
# Reference data for pure hydrocarbons (CoolProp + chemicals)
# ------------------------------------------------------------------------------------------------

_T60F = (60.0 - 32.0) / 1.8 + 273.15  # 60 degF in K
_ATM = 101325.0

# (CoolProp name, chemicals name)
_NALKANES = [
    ("n-Heptane", "heptane"),
    ("n-Octane", "octane"),
    ("n-Nonane", "nonane"),
    ("n-Decane", "decane"),
    ("n-Undecane", "undecane"),
    ("n-Dodecane", "dodecane"),
]


def _reference(coolprop_name: str, chemicals_name: str) -> dict[str, float]:
    """Tb and SG from CoolProp; Tc, Pc, omega, Vc, M from chemicals' databases."""
    cas = chemicals.CAS_from_any(chemicals_name)
    rho_water = PropsSI("D", "T", _T60F, "P", _ATM, "Water")
    return {
        "tb": PropsSI("T", "P", _ATM, "Q", 0, coolprop_name),
        "sg": PropsSI("D", "T", _T60F, "P", _ATM, coolprop_name) / rho_water,
        "mw": PropsSI("M", coolprop_name) * 1e3,
        "tc": chemicals.Tc(cas),
        "pc": chemicals.Pc(cas),
        "omega": chemicals.omega(cas),
        "vc": chemicals.Vc(cas),
    }


@pytest.fixture(scope="module", params=_NALKANES, ids=[n for n, _ in _NALKANES])
def alkane(request) -> dict[str, float]:
    return _reference(*request.param)


# ------------------------------------------------------------------------------------------------
# Invented fluids
# ------------------------------------------------------------------------------------------------

# Invented volatile oil (invented data): light components plus a C7+ fraction.
INVENTED_LIGHT = {
    "N2": 0.005,
    "CO2": 0.02,
    "C1": 0.40,
    "C2": 0.07,
    "C3": 0.05,
    "nC4": 0.04,
    "nC5": 0.03,
    "nC6": 0.025,
}
INVENTED_PLUS = PlusFraction(7, 0.36, mw=215.0, sg=0.845)


@pytest.fixture(scope="module")
def invented_oil() -> FluidAnalysis:
    return FluidAnalysis(light=INVENTED_LIGHT, plus=INVENTED_PLUS)


@pytest.fixture(scope="module")
def invented_oil_with_scn() -> FluidAnalysis:
    # Invented data: C7-C9 measured, C10+ as the plus-fraction; H2S present.
    light = dict(INVENTED_LIGHT, C1=0.395, H2S=0.005)
    return FluidAnalysis(
        light=light,
        scn=(
            ScnFraction(7, 0.045),
            ScnFraction(8, 0.04, mw=108.5),
            ScnFraction(9, 0.03, mw=120.0, sg=0.771),
        ),
        plus=PlusFraction(10, 0.245, mw=262.0, sg=0.872),
    )


# ================================================================================================
# Correlations
# ================================================================================================


class TestCorrelationsAgainstAlkanes:
    """Each correlation against n-alkane data (CoolProp Tb and SG in, chemicals constants out).

    The correlations were fitted to petroleum fractions and pure hydrocarbons; for n-alkanes
    published accuracies are about 1% in Tc and a few % in Pc (Riazi & Daubert 1980; Kesler & Lee
    1976). Tolerances are set just above what the published correlations achieve here, so a wrong
    coefficient or a unit slip fails them.
    """

    def test_kesler_lee_tc_pc(self, alkane):
        tc, pc = kesler_lee_critical(alkane["tb"], alkane["sg"])
        assert tc == pytest.approx(alkane["tc"], rel=0.01)
        assert pc == pytest.approx(alkane["pc"], rel=0.06)

    def test_riazi_daubert_tc_pc(self, alkane):
        tc, pc = riazi_daubert_critical(alkane["tb"], alkane["sg"])
        assert tc == pytest.approx(alkane["tc"], rel=0.01)
        assert pc == pytest.approx(alkane["pc"], rel=0.07)

    def test_lee_kesler_omega_chain(self, alkane):
        # Kesler-Lee Tc, Pc then Lee-Kesler omega, as characterise() does.
        tc, pc = kesler_lee_critical(alkane["tb"], alkane["sg"])
        omega = lee_kesler_acentric(alkane["tb"], tc, pc, alkane["sg"])
        assert omega == pytest.approx(alkane["omega"], abs=0.02)

    def test_edmister_omega_with_true_constants(self, alkane):
        omega = edmister_acentric(alkane["tb"], alkane["tc"], alkane["pc"])
        assert omega == pytest.approx(alkane["omega"], abs=0.02)

    def test_riazi_daubert_critical_volume(self, alkane):
        vc = riazi_daubert_critical_volume(alkane["tb"], alkane["sg"])
        assert vc == pytest.approx(alkane["vc"], rel=0.05)

    def test_boiling_points(self, alkane):
        assert soreide_boiling_point(alkane["mw"], alkane["sg"]) == pytest.approx(
            alkane["tb"], rel=0.035
        )
        assert riazi_daubert_1987_boiling_point(alkane["mw"], alkane["sg"]) == pytest.approx(
            alkane["tb"], rel=0.02
        )

    def test_riazi_daubert_molar_mass(self, alkane):
        assert riazi_daubert_molar_mass(alkane["tb"], alkane["sg"]) == pytest.approx(
            alkane["mw"], rel=0.07
        )

    def test_watson_k_definition_and_whitson_approximation(self, alkane):
        kw = watson_k(alkane["tb"], alkane["sg"])
        # chemicals.Watson_K implements Kw = Tb[degR]^(1/3) / SG (API Technical Data Book).
        assert kw == pytest.approx(chemicals.Watson_K(alkane["tb"], alkane["sg"]), rel=1e-12)
        # n-paraffins have Kw of about 12.7 (common knowledge in petroleum refining).
        assert 12.5 < kw < 13.0
        # Whitson (1983)'s M, SG approximation of Kw is within about 1% of the definition.
        assert whitson_watson_k(alkane["mw"], alkane["sg"]) == pytest.approx(kw, rel=0.015)


@pytest.mark.parametrize(
    ("coolprop_name", "chemicals_name"), [("Toluene", "toluene"), ("Cyclohexane", "cyclohexane")]
)
def test_kesler_lee_aromatic_and_naphthene(coolprop_name, chemicals_name):
    # Kesler-Lee was fitted to all hydrocarbon families; check one aromatic, one naphthene.
    ref = _reference(coolprop_name, chemicals_name)
    tc, pc = kesler_lee_critical(ref["tb"], ref["sg"])
    assert tc == pytest.approx(ref["tc"], rel=0.02)
    assert pc == pytest.approx(ref["pc"], rel=0.04)


def test_lee_kesler_omega_published_example():
    # Isopropylbenzene, Tb = 425.6 K, Tc = 631.1 K, Pc = 32.1 bar: omega = 0.3254 (Reid,
    # Prausnitz & Poling 1987 worked example, value as printed in chemicals' LK_omega docs).
    omega = lee_kesler_acentric(425.6, 631.1, 32.1e5, 0.866)
    assert omega == pytest.approx(0.32544249926397856, rel=1e-9)


@settings(max_examples=60, deadline=None)
@given(
    tb=st.floats(300.0, 800.0),
    # Kept off the branch switch at Tb/Tc = 0.8: tb / (tb / 0.8) can round to just above 0.8,
    # where the Kesler-Lee form applies (tested below).
    tbr=st.floats(0.5, 0.799),
    pc=st.floats(5e5, 6e6),
)
def test_lee_kesler_omega_matches_chemicals(tb, tbr, pc):
    # Independent implementation: chemicals.acentric.LK_omega (Lee & Kesler 1975) for Tb/Tc <= 0.8.
    ours = float(lee_kesler_acentric(tb, tb / tbr, pc, 0.8))
    assert ours == pytest.approx(chemicals.LK_omega(tb, tb / tbr, pc), rel=1e-10, abs=1e-12)


def test_lee_kesler_omega_high_tbr_branch():
    # Above Tb/Tc = 0.8 the Kesler-Lee (1976) form in Kw applies. Independent re-implementation
    # here, in degR, of
    # omega = -7.904 + 0.1352 Kw - 0.007465 Kw^2 + 8.359 Tbr + (1.408 - 0.01063 Kw)/Tbr.
    tb, tc, sg = 800.0, 950.0, 0.95
    kw = (tb * 1.8) ** (1.0 / 3.0) / sg
    tbr = tb / tc
    expected = -7.904 + 0.1352 * kw - 0.007465 * kw**2 + 8.359 * tbr + (1.408 - 0.01063 * kw) / tbr
    assert float(lee_kesler_acentric(tb, tc, 1.0e6, sg)) == pytest.approx(expected, rel=1e-12)
    # Physically necessary: a C40-like fraction has omega well above 1 but below 2.
    assert 1.0 < expected < 2.0


def test_chueh_prausnitz_exact_value():
    # Volume ratio 8: cube-root ratio r = 2, bracket 2 sqrt(r)/(1+r) = 2 sqrt(2)/3, whose 6th power
    # is 512/729 exactly. kij = 0.18 (1 - 512/729) = 0.18 * 217/729.
    assert float(chueh_prausnitz_kij(1.0e-4, 8.0e-4)) == pytest.approx(0.18 * 217 / 729, rel=1e-13)
    assert float(chueh_prausnitz_kij(8.0e-4, 1.0e-4)) == pytest.approx(0.18 * 217 / 729, rel=1e-13)
    assert float(chueh_prausnitz_kij(3.0e-4, 3.0e-4)) == 0.0


def test_katz_firoozabadi_table_is_smooth_and_near_constant_kw():
    # The generalised SCN table is (from memory) built at an almost constant Watson factor of about
    # 12 (Whitson 1983); check the typed-in table: M and SG rise, and Kw stays in 11.7..12.6.
    table = np.array(_KATZ_FIROOZABADI)
    n, mw, sg = table.T
    assert np.array_equal(n, np.arange(6, 46))
    assert np.all(np.diff(mw) > 0) and np.all(np.diff(mw) < 17)
    assert np.all(np.diff(sg) > 0)
    kw = whitson_watson_k(mw, sg)
    assert kw.min() > 11.7 and kw.max() < 12.6
    assert generalized_scn_properties(7) == (96.0, 0.727)


# ================================================================================================
# Gamma split
# ================================================================================================


def _gamma_pdf(m, alpha, eta, beta):
    y = (m - eta) / beta
    return y ** (alpha - 1.0) * np.exp(-y) / (beta * gamma_function(alpha))


@pytest.mark.parametrize("alpha", [0.6, 1.0, 2.5])
def test_interval_moments_match_quadrature(alpha):
    # Independent check of the incomplete-gamma formulas by numerical integration of the density.
    eta, m_plus = 92.0, 210.0
    beta = (m_plus - eta) / alpha
    lower = np.array([92.0, 106.0, 190.0, 400.0])
    upper = np.array([106.0, 120.0, 204.0, np.inf])
    prob, mean = interval_moments(lower, upper, alpha, eta, beta)
    for a, b, p, m in zip(lower, upper, prob, mean, strict=True):
        p_ref = quad(_gamma_pdf, a, b, args=(alpha, eta, beta), epsabs=0, epsrel=1e-12)[0]
        m1 = quad(lambda x: x * _gamma_pdf(x, alpha, eta, beta), a, b, epsabs=0, epsrel=1e-12)
        assert p == pytest.approx(p_ref, rel=1e-9)
        assert m == pytest.approx(m1[0] / p_ref, rel=1e-9)


@pytest.mark.parametrize("alpha", [0.6, 1.0, 2.5])
def test_gamma_density_moments(alpha):
    # The continuous distribution itself has mean M_plus and variance alpha beta^2 (Whitson 1983).
    eta, m_plus = 92.0, 210.0
    beta = (m_plus - eta) / alpha
    mean = quad(lambda x: x * _gamma_pdf(x, alpha, eta, beta), eta, np.inf, epsrel=1e-12)[0]
    var = quad(lambda x: (x - m_plus) ** 2 * _gamma_pdf(x, alpha, eta, beta), eta, np.inf)[0]
    assert mean == pytest.approx(m_plus, rel=1e-9)
    assert var == pytest.approx(alpha * beta**2, rel=1e-7)


def test_exponential_case_closed_form():
    # alpha = 1: exponential density. Independent closed forms for the moles and mean of [a, b):
    # P = e^-ya - e^-yb, mean = eta + beta + ((ya e^-ya - yb e^-yb) / P) beta.
    z_plus, m_plus = 0.3, 180.0
    fractions = gamma_fractions(7, z_plus, m_plus, max_carbon=20)
    eta, beta = 92.0, m_plus - 92.0
    edges = fractions.boundaries
    for i in range(len(fractions.carbon_number) - 1):
        ya, yb = (edges[i] - eta) / beta, (edges[i + 1] - eta) / beta
        p = math.exp(-ya) - math.exp(-yb)
        mean = eta + beta + beta * (ya * math.exp(-ya) - yb * math.exp(-yb)) / p
        assert fractions.mole_fraction[i] == pytest.approx(z_plus * p, rel=1e-12)
        assert fractions.mw[i] == pytest.approx(mean, rel=1e-12)
    # Memoryless tail: mean of [a, inf) is a + beta.
    assert fractions.analytic_tail_mw == pytest.approx(edges[-2] + beta, rel=1e-12)


def test_split_boundaries_and_means():
    fractions = gamma_fractions(7, 0.36, 215.0)
    n = fractions.carbon_number
    assert n[0] == 7 and n[-1] == 45
    assert np.array_equal(n, np.arange(7, 46))
    # Whitson & Brule eta = 14 n - 6 (from memory): 92 g/mol for C7+.
    assert fractions.eta == 92.0
    assert np.array_equal(fractions.boundaries[1:-1], 14.0 * np.arange(8, 46) - 6.0)
    # Every fraction's molar mass lies inside its interval.
    assert np.all(fractions.mw > fractions.boundaries[:-1])
    assert np.all(fractions.mw < fractions.boundaries[1:])
    # Exponential distribution: mole fractions fall with carbon number (except the tail).
    assert np.all(np.diff(fractions.mole_fraction[:-1]) < 0)


def test_split_closure_agrees_with_distribution_tail():
    # The tail fraction's molar mass from the mass balance equals the distribution's own tail mean.
    for m_plus in (130.0, 215.0, 400.0):
        fractions = gamma_fractions(7, 0.2, m_plus, alpha=1.3)
        assert fractions.mw[-1] == pytest.approx(fractions.analytic_tail_mw, rel=1e-7)


def test_split_moments_match_plus_fraction_before_closure():
    # Moments of the discretised distribution (no closure) reproduce the moles and M_plus.
    m_plus, alpha = 240.0, 1.7
    eta = 14 * 10 - 6.0
    beta = (m_plus - eta) / alpha
    lower = np.concatenate(([eta], scn_lower_boundary(np.arange(11, 46))))
    upper = np.concatenate((lower[1:], [np.inf]))
    prob, mean = interval_moments(lower, upper, alpha, eta, beta)
    assert prob.sum() == pytest.approx(1.0, rel=1e-13)
    assert (prob * mean).sum() == pytest.approx(m_plus, rel=1e-12)


def test_split_stops_when_tail_is_negligible():
    # A light C7+ (M = 105 g/mol, beta = 13): the exponential tail beyond C45 is e^-30 of the moles.
    fractions = gamma_fractions(7, 0.1, 105.0, max_carbon=45)
    last = int(fractions.carbon_number[-1])
    assert last < 45
    beta = 105.0 - 92.0
    tail_share = math.exp(-(14 * last - 6 - 92) / beta)
    next_share = math.exp(-(14 * (last + 1) - 6 - 92) / beta)
    assert tail_share >= 1e-6 > next_share
    assert fractions.mole_fraction.sum() == pytest.approx(0.1, rel=1e-15)


@settings(max_examples=60, deadline=None)
@given(
    n_plus=st.integers(7, 20),
    z_plus=st.floats(1e-3, 0.9),
    excess=st.floats(5.0, 500.0),
    alpha=st.floats(0.5, 3.0),
    max_extra=st.integers(3, 60),
)
def test_split_preserves_moles_and_mass(n_plus, z_plus, excess, alpha, max_extra):
    m_plus = 14.0 * n_plus - 6.0 + excess
    fractions = gamma_fractions(n_plus, z_plus, m_plus, max_carbon=n_plus + max_extra, alpha=alpha)
    z, m = fractions.mole_fraction, fractions.mw
    assert abs(z.sum() - z_plus) <= 1e-12 * z_plus
    assert abs((z * m).sum() - z_plus * m_plus) <= 1e-12 * z_plus * m_plus
    assert np.all(z > 0) and np.all(np.diff(m) > 0)


def test_split_rejects_bad_input():
    with pytest.raises(InputError, match=r"88\.0.*eta=92\.0"):
        gamma_fractions(7, 0.3, 88.0)
    with pytest.raises(InputError, match="max_carbon=7"):
        gamma_fractions(7, 0.3, 200.0, max_carbon=7)
    with pytest.raises(InputError, match="alpha=-1"):
        gamma_fractions(7, 0.3, 200.0, alpha=-1.0)
    with pytest.raises(InputError, match="eta=120"):
        gamma_fractions(7, 0.3, 200.0, eta=120.0)


# ================================================================================================
# Specific gravity at constant Watson factor
# ================================================================================================


def test_constant_kw_reproduces_plus_sg_and_matches_root_finder():
    fractions = gamma_fractions(7, 0.36, 215.0)
    z, m = fractions.mole_fraction, fractions.mw
    sg, kw = constant_watson_sg(z, m, 0.845)
    # Volume-additive mixture of the fractions gives the plus-fraction's SG.
    assert (z * m).sum() / (z * m / sg).sum() == pytest.approx(0.845, rel=1e-12)
    # Every fraction has the same Whitson Kw.
    np.testing.assert_allclose(whitson_watson_k(m, sg), kw, rtol=1e-12)

    # Independent solution: root-find Kw with the forward relation (Whitson 1983), no closed form.
    def mixture_sg_minus_target(k):
        sg_k = (4.5579 * m**0.15178 / k) ** (1 / 0.84573)
        return (z * m).sum() / (z * m / sg_k).sum() - 0.845

    kw_ref = brentq(mixture_sg_minus_target, 8.0, 16.0, xtol=1e-14)
    assert kw == pytest.approx(kw_ref, rel=1e-11)
    # SG rises with molar mass at constant Kw.
    assert np.all(np.diff(sg) > 0)


def test_whitson_sg_inverse():
    m = np.array([100.0, 250.0, 600.0])
    assert whitson_watson_k(m, whitson_specific_gravity(m, 11.9)) == pytest.approx(11.9, rel=1e-13)


# ================================================================================================
# Lumping
# ================================================================================================


@settings(max_examples=60, deadline=None)
@given(
    masses=st.lists(st.floats(1e-6, 10.0), min_size=1, max_size=40),
    n_groups=st.integers(1, 8),
)
def test_equal_mass_groups_properties(masses, n_groups):
    n_groups = min(n_groups, len(masses))
    group = equal_mass_groups(masses, n_groups)
    assert group[0] == 0 and group[-1] == n_groups - 1
    assert np.all(np.diff(group) >= 0) and np.all(np.diff(group) <= 1)  # contiguous, none empty
    cumulative = np.cumsum(masses)
    total = cumulative[-1]
    counts = np.bincount(group).cumsum()
    # Each cut is the allowed one closest to its target j / n_groups of the total mass.
    for j, k in enumerate(counts[:-1], start=1):
        target = j * total / n_groups
        lo = (counts[j - 2] if j >= 2 else 0) + 1
        hi = len(masses) - (n_groups - j)
        best = min(abs(cumulative[i - 1] - target) for i in range(lo, hi + 1))
        assert abs(cumulative[k - 1] - target) == best


def test_equal_mass_groups_on_exact_partition():
    # Six fractions of mass 1: three groups of two.
    assert equal_mass_groups([1.0] * 6, 3).tolist() == [0, 0, 1, 1, 2, 2]


@pytest.mark.parametrize("mixing", ["mass", "mole"])
def test_lumped_properties_follow_the_mixing_rule(invented_oil, mixing):
    fluid = characterise(invented_oil, n_pseudo=4, mixing=mixing)
    scn = fluid.scn
    pseudo = fluid.components[-4:]
    for g, comp in enumerate(pseudo):
        idx = scn.group == g
        z, m = scn.mole_fraction[idx], scn.mw[idx]
        w = z * m if mixing == "mass" else z
        w = w / w.sum()
        assert comp.tc == pytest.approx(np.dot(w, scn.tc[idx]), rel=1e-13)
        assert comp.pc == pytest.approx(np.dot(w, scn.pc[idx]), rel=1e-13)
        assert comp.omega == pytest.approx(np.dot(w, scn.omega[idx]), rel=1e-13)
        assert comp.vc == pytest.approx(np.dot(w, scn.vc[idx]), rel=1e-13)
        assert comp.mw == pytest.approx((z * m).sum() / z.sum(), rel=1e-13)
    # Pseudo-components get heavier: Tc, omega, M rise and Pc falls.
    for light, heavy in zip(pseudo[:-1], pseudo[1:], strict=True):
        assert light.tc < heavy.tc and light.pc > heavy.pc and light.omega < heavy.omega


# ================================================================================================
# characterise(): the whole chain
# ================================================================================================


@pytest.mark.parametrize("correlation", ["kesler-lee", "riazi-daubert"])
@pytest.mark.parametrize("n_pseudo", [1, 3, 4, 6])
def test_plus_fraction_moles_and_mass_preserved(invented_oil, correlation, n_pseudo):
    fluid = characterise(invented_oil, n_pseudo=n_pseudo, correlation=correlation)
    z_plus, m_plus = INVENTED_PLUS.mole_fraction, INVENTED_PLUS.mw
    # Split.
    scn = fluid.scn
    assert abs(scn.mole_fraction.sum() - z_plus) <= 1e-12 * z_plus
    assert abs((scn.mole_fraction * scn.mw).sum() - z_plus * m_plus) <= 1e-12 * z_plus * m_plus
    # Lump.
    z_pseudo = fluid.composition[-n_pseudo:]
    mw_pseudo = np.array([c.mw for c in fluid.components[-n_pseudo:]])
    assert abs(z_pseudo.sum() - z_plus) <= 1e-12 * z_plus
    assert abs((z_pseudo * mw_pseudo).sum() - z_plus * m_plus) <= 1e-12 * z_plus * m_plus
    assert fluid.composition.sum() == pytest.approx(1.0, abs=1e-15)
    # Light components pass through unchanged, in order.
    assert fluid.names[: len(INVENTED_LIGHT)] == tuple(INVENTED_LIGHT)
    np.testing.assert_array_equal(fluid.composition[:8], list(INVENTED_LIGHT.values()))
    # Plus-fraction SG reproduced by the split fractions (additive volumes).
    mass = scn.mole_fraction * scn.mw
    assert mass.sum() / (mass / scn.sg).sum() == pytest.approx(INVENTED_PLUS.sg, rel=1e-12)


def test_measured_scn_fractions(invented_oil_with_scn):
    analysis = invented_oil_with_scn
    fluid = characterise(analysis, n_pseudo=3)
    scn = fluid.scn
    assert scn.name[:4] == ("C7", "C8", "C9", "C10")
    assert scn.measured.tolist()[:4] == [True, True, True, False]
    # C7 takes the generalised Katz-Firoozabadi values; C8 its given M and table SG; C9 as given.
    assert (scn.mw[0], scn.sg[0]) == (96.0, 0.727)
    assert (scn.mw[1], scn.sg[1]) == (108.5, 0.749)
    assert (scn.mw[2], scn.sg[2]) == (120.0, 0.771)
    # The plus-fraction's split alone preserves its moles and mass.
    plus = ~scn.measured
    z_plus, m_plus = analysis.plus.mole_fraction, analysis.plus.mw
    assert abs(scn.mole_fraction[plus].sum() - z_plus) <= 1e-12 * z_plus
    mass_plus = (scn.mole_fraction[plus] * scn.mw[plus]).sum()
    assert abs(mass_plus - z_plus * m_plus) <= 1e-12 * z_plus * m_plus
    # The lump preserves the whole heavy end (measured + plus).
    heavy_z = sum(s.mole_fraction for s in analysis.scn) + z_plus
    heavy_mass = sum(s.mole_fraction * s.resolved()[0] for s in analysis.scn) + z_plus * m_plus
    pseudo_z = fluid.composition[-3:]
    pseudo_mw = np.array([c.mw for c in fluid.components[-3:]])
    assert abs(pseudo_z.sum() - heavy_z) <= 1e-12 * heavy_z
    assert abs((pseudo_z * pseudo_mw).sum() - heavy_mass) <= 1e-12 * heavy_mass
    # Split of C10+ starts at eta = 14 * 10 - 6.
    assert fluid.provenance["gamma_eta"] == 134.0


def test_normalisation_of_rounded_analysis():
    light = {k: v * 1.0004 for k, v in INVENTED_LIGHT.items()}  # total 1.00026: rounded report
    analysis = FluidAnalysis(light=light, plus=INVENTED_PLUS)
    total = analysis.total
    fluid = characterise(analysis)
    assert fluid.composition.sum() == pytest.approx(1.0, abs=1e-15)
    z_plus = INVENTED_PLUS.mole_fraction / total
    assert abs(fluid.composition[len(light) :].sum() - z_plus) <= 1e-12 * z_plus
    assert fluid.provenance["input_total_mole_fraction"] == total


def test_components_and_provenance(invented_oil):
    fluid = characterise(invented_oil, correlation="riazi-daubert", boiling_point="riazi-daubert")
    assert fluid.names[-4:] == ("C7_C11", "C12_C17", "C18_C25", "C26+")
    for comp in fluid.components[-4:]:
        assert "Riazi & Daubert (1980) Tc, Pc" in comp.source
        assert "Edmister (1958)" in comp.source
        assert "Whitson (1983) gamma split" in comp.source
    prov = fluid.provenance
    assert prov["correlation"] == "riazi-daubert"
    assert prov["acentric_method"] == "edmister"
    assert prov["boiling_point_source"].startswith("Riazi & Daubert (1987)")
    assert prov["last_carbon_number"] == 45
    assert all(isinstance(v, (str, int, float)) for v in prov.values())
    # The SCN table's Tb is the chosen correlation's.
    scn = fluid.scn
    np.testing.assert_allclose(scn.tb, riazi_daubert_1987_boiling_point(scn.mw, scn.sg))


def test_kij_pairs(invented_oil_with_scn):
    fluid = characterise(invented_oil_with_scn, n_pseudo=3, kij_constants={"co2": 0.12})
    pseudo = fluid.names[-3:]
    assert set(fluid.kij) == {(a, p) for a in ("N2", "CO2", "H2S", "C1") for p in pseudo}
    for p in pseudo:
        assert fluid.kij[("CO2", p)] == 0.12
        assert fluid.kij[("N2", p)] == DEFAULT_KIJ_CONSTANTS["N2"]
        assert fluid.kij[("H2S", p)] == DEFAULT_KIJ_CONSTANTS["H2S"]
    comps = dict(zip(fluid.names, fluid.components, strict=True))
    c1 = [fluid.kij[("C1", p)] for p in pseudo]
    for p, k in zip(pseudo, c1, strict=True):
        ratio = comps[p].critical_volume / comps["C1"].critical_volume
        r = ratio ** (1 / 3)
        assert k == pytest.approx(0.18 * (1 - (2 * r**0.5 / (1 + r)) ** 6), rel=1e-12)
    assert 0 < c1[0] < c1[1] < c1[2] < 0.18
    # The mapping builds a Mixture with these values in its matrix.
    mix = fluid.mixture("PR78")
    i, j = mix.index("C1"), mix.index(pseudo[-1])
    assert mix.kij[i, j] == mix.kij[j, i] == c1[-1]
    assert mix.kij[mix.index("C2"), j] == 0.0


def test_characterised_oil_flashes(invented_oil):
    # A small P-T grid on the invented oil, away from its critical region: every cell converges,
    # and the oil is two-phase at low pressure and single-phase at high pressure.
    fluid = characterise(invented_oil)
    mix = fluid.mixture("PR78")
    p = np.linspace(1e6, 40e6, 14)
    t = np.linspace(300.0, 440.0, 4)
    pp, tt = np.meshgrid(p, t, indexing="ij")
    result = flash(mix, pp.ravel(), tt.ravel(), np.asarray(fluid.composition))
    assert result.converged.all()
    phases = np.asarray(result.phase_count).reshape(pp.shape)
    assert np.all(phases[0] == 2) and np.all(phases[-1] == 1)


def test_characterise_rejects_bad_options(invented_oil):
    with pytest.raises(InputError, match="'peng'"):
        characterise(invented_oil, correlation="peng")
    with pytest.raises(InputError, match="'wilson'"):
        characterise(invented_oil, acentric="wilson")
    with pytest.raises(InputError, match="'katz'"):
        characterise(invented_oil, boiling_point="katz")
    with pytest.raises(InputError, match="n_pseudo=50"):
        characterise(invented_oil, n_pseudo=50)
    with pytest.raises(InputError, match="n_pseudo=0"):
        characterise(invented_oil, n_pseudo=0)
    with pytest.raises(InputError, match="'C2'"):
        characterise(invented_oil, kij_constants={"C2": 0.01})


def test_analysis_validation():
    with pytest.raises(InputError, match="sum to 0.95"):
        FluidAnalysis(light={"C1": 0.55}, plus=PlusFraction(7, 0.4, 200.0, 0.85))
    with pytest.raises(InputError, match="mole fraction 45.0.*not percentages"):
        FluidAnalysis(light={"C1": 55.0}, plus=PlusFraction(7, 45.0, 200.0, 0.85))
    with pytest.raises(InputError, match="C10"):
        FluidAnalysis(
            light={"C1": 0.5},
            scn=(ScnFraction(10, 0.1),),
            plus=PlusFraction(10, 0.4, 250.0, 0.86),
        )
    with pytest.raises(InputError, match=r"\[9, 8\]"):
        FluidAnalysis(
            light={"C1": 0.5},
            scn=(ScnFraction(9, 0.05), ScnFraction(8, 0.05)),
            plus=PlusFraction(10, 0.4, 250.0, 0.86),
        )
    with pytest.raises(InputError, match="specific gravity 8.5"):
        PlusFraction(7, 0.4, 200.0, 8.5)
    with pytest.raises(InputError, match="'methan'"):
        FluidAnalysis(light={"methan": 0.6}, plus=PlusFraction(7, 0.4, 200.0, 0.85))
    with pytest.raises(InputError, match="C50.*give mw and sg"):
        ScnFraction(50, 0.01).resolved()


# ================================================================================================
# Text output
# ================================================================================================


def test_fluid_table_toml_round_trip(invented_oil_with_scn):
    # The written TOML is a valid gridflash config fluid: parse it with the config parser and
    # get the same components, composition and interaction parameters back.
    from gridflash.config._parser import parse_config

    fluid = characterise(invented_oil_with_scn, n_pseudo=3)
    text = fluid_table_toml(fluid, eos="SRK", stream="oil") + (
        '[pressure]\nunit = "bar"\nvalues = [100]\n'
        '[temperature]\nunit = "K"\nvalues = [350]\n'
        '[composition]\nkind = "list"\nstreams = ["oil"]\n'
        '[run]\noutput = "x.zarr"\n'
    )
    spec = parse_config(text)
    assert spec.fluid.eos == "SRK"
    assert spec.fluid.names == fluid.names
    for got, comp in zip(spec.fluid.components, fluid.components, strict=True):
        assert got.tc == comp.tc
        assert got.pc == pytest.approx(comp.pc, rel=1e-15)
        assert got.omega == comp.omega
        assert got.mw == comp.mw
        assert got.critical_volume == pytest.approx(comp.critical_volume, rel=1e-15)
    np.testing.assert_allclose(spec.streams[0][1], fluid.composition, rtol=1e-15, atol=1e-17)
    mix = spec.fluid.mixture()
    for (a, b), value in fluid.kij.items():
        assert mix.kij[mix.index(a), mix.index(b)] == value
    # Every other pair is the default table's (defaults for CO2, N2, H2S, H2O pairs).
    given = np.zeros_like(mix.kij, dtype=bool)
    for a, b in fluid.kij:
        given[mix.index(a), mix.index(b)] = given[mix.index(b), mix.index(a)] = True
    defaults = Mixture(spec.fluid.components, eos="SRK").kij
    np.testing.assert_array_equal(mix.kij[~given], defaults[~given])
    assert text.startswith("# Fluid characterised by gridflash")


def test_fluid_table_text(invented_oil):
    fluid = characterise(invented_oil)
    text = fluid_table_text(fluid)
    lines = text.splitlines()
    assert lines[0].split()[:2] == ["component", "z"]
    row = next(line for line in lines if line.startswith("C26+"))
    comp = fluid.components[-1]
    assert float(row.split()[2]) == pytest.approx(comp.tc, abs=0.005)
    tail = next(line for line in lines if line.startswith("C45+"))
    assert tail.split()[-1] == "C26+"  # the tail fraction is lumped into the last pseudo
    assert float(tail.split()[2]) == pytest.approx(fluid.scn.mw[-1], abs=0.005)
