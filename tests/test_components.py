"""Built-in component table and Component / Mixture validation."""

from __future__ import annotations

import chemicals  # reference: critical-property databases (test extra)
import numpy as np
import pytest

import gridflash
from gridflash import Component, InputError, Mixture
from gridflash.thermo import builtin_component, builtin_names

# CAS numbers used to query the `chemicals` package (Caleb Bell, chemicals.critical: IUPAC /
# Poling et al. / Yaws critical-property databases; chemicals.acentric: Poling et al.).
CAS = {
    "N2": "7727-37-9",
    "CO2": "124-38-9",
    "H2S": "7783-06-4",
    "H2O": "7732-18-5",
    "C1": "74-82-8",
    "C2": "74-84-0",
    "C3": "74-98-6",
    "iC4": "75-28-5",
    "nC4": "106-97-8",
    "iC5": "78-78-4",
    "nC5": "109-66-0",
    "nC6": "110-54-3",
    "nC7": "142-82-5",
    "nC8": "111-65-9",
    "nC9": "111-84-2",
    "nC10": "124-18-5",
}
REQUIRED = (
    "N2",
    "CO2",
    "H2S",
    "H2O",
    "C1",
    "C2",
    "C3",
    "iC4",
    "nC4",
    "iC5",
    "nC5",
    "nC6",
    "nC7",
    "nC8",
    "nC9",
    "nC10",
)


def test_required_components_present():
    assert set(REQUIRED) <= set(builtin_names())


@pytest.mark.parametrize("name", REQUIRED)
def test_critical_constants_against_chemicals(name):
    # External reference: the `chemicals` package's critical-property and acentric-factor
    # databases. Tolerances: the sources differ by a few tenths of a percent between editions.
    comp = builtin_component(name)
    cas = CAS[name]
    assert comp.tc == pytest.approx(chemicals.Tc(cas), rel=3e-3)
    assert comp.pc == pytest.approx(chemicals.Pc(cas), rel=1e-2)
    assert comp.omega == pytest.approx(chemicals.omega(cas), abs=0.012)
    assert comp.vc == pytest.approx(chemicals.Vc(cas), rel=0.04)
    assert comp.mw == pytest.approx(chemicals.MW(cas), rel=1e-3)


@pytest.mark.parametrize(
    ("alias", "short"),
    [
        ("methane", "C1"),
        ("METHANE", "C1"),
        ("c1", "C1"),
        ("n-butane", "nC4"),
        ("NC4", "nC4"),
        ("isobutane", "iC4"),
        ("i-butane", "iC4"),
        ("carbon dioxide", "CO2"),
        ("co2", "CO2"),
        ("hydrogen sulphide", "H2S"),
        ("n-decane", "nC10"),
        ("water", "H2O"),
    ],
)
def test_lookup_by_shorthand_and_chemical_name(alias, short):
    assert builtin_component(alias).name == short


def test_unknown_component_names_close_matches():
    with pytest.raises(InputError, match=r"'methan'.*did you mean 'C1'"):
        builtin_component("methan")
    with pytest.raises(InputError, match="Unknown component 'unobtainium'"):
        Mixture(["C1", "unobtainium"])


def test_user_component_first_class():
    c7 = Component("C7+", tc=580.0, pc=2.6e6, omega=0.40, mw=120.0)
    mix = Mixture(["C1", c7])
    assert mix.components[1] is c7
    assert mix.names == ("C1", "C7+")
    # Estimated critical volume (Zc = 0.291 - 0.080 w) is positive and plausible.
    assert 3e-4 < c7.critical_volume < 6e-4


@pytest.mark.parametrize(
    ("kwargs", "message"),
    [
        ({"tc": -1.0}, "tc=-1.0"),
        ({"pc": float("nan")}, "pc=nan"),
        ({"pc": 45.99}, "outside 1e4..1e9 Pa"),
        ({"omega": 5.0}, "omega=5.0"),
        ({"mw": 0.0}, "mw=0.0"),
        ({"vc": 98.6}, "implausibly large"),
    ],
)
def test_component_validation(kwargs, message):
    base = dict(name="X", tc=300.0, pc=4e6, omega=0.1, mw=30.0)
    base.update(kwargs)
    with pytest.raises(InputError, match=message):
        Component(**base)


def test_kij_mapping_and_matrix_agree():
    m1 = Mixture(["CO2", "C1", "nC4"], kij={("CO2", "C1"): 0.1, "co2-n-butane": 0.13})
    mat = np.array([[0, 0.1, 0.13], [0.1, 0, 0], [0.13, 0, 0]])
    m2 = Mixture(["CO2", "C1", "nC4"], kij=mat)
    np.testing.assert_array_equal(m1.kij, m2.kij)


@pytest.mark.parametrize(
    ("kij", "message"),
    [
        (np.array([[0, 0.1], [0.2, 0]]), "symmetric"),
        (np.array([[0, np.nan], [np.nan, 0]]), "not finite"),
        (np.zeros((3, 3)), "shape"),
        ({("C1", "nC7"): 0.1}, "'nC7' is not in the mixture"),
        ({("C1", "C2"): "x"}, "not a number"),
    ],
)
def test_kij_validation(kij, message):
    with pytest.raises(InputError, match=message):
        Mixture(["C1", "C2"], kij=kij)


def test_unknown_eos_and_duplicates():
    with pytest.raises(InputError, match="Unknown eos='VDW'"):
        Mixture(["C1"], eos="VDW")
    with pytest.raises(InputError, match="more than once"):
        Mixture(["C1", "methane"])


def test_public_names():
    assert gridflash.Mixture is Mixture
    assert Mixture(["C1", "C2"]).eos == "PR78"
