"""Saturation (bubble / dew) pressure solver."""

from __future__ import annotations

import numpy as np
import pytest

from gridflash import Mixture, flash
from gridflash.thermo import pure_vapour_pressure, saturation_pressure


def test_bracket_and_kind_for_a_binary():
    mix = Mixture(["C1", "C3"])
    t = np.array([250.0, 250.0])
    z = np.array([[0.2, 0.8]] * 2)
    p, kind, inc = saturation_pressure(mix, t, z, np.array([2e6, 3e5]), np.array([3e6, 2e5]))
    assert kind.tolist() == [1, 2]
    # Just above the bubble point and just below the dew point the flash sees one phase,
    # just inside two: the solver's answer is the flash's own boundary.
    r_out = flash(mix, p * np.array([1 + 1e-8, 1 - 1e-8]), t, z)
    r_in = flash(mix, p * np.array([1 - 1e-8, 1 + 1e-8]), t, z)
    assert r_out.phase_count.tolist() == [1, 1]
    assert r_in.phase_count.tolist() == [2, 2]
    # The incipient vapour at the bubble point is methane-rich; the incipient liquid at the dew
    # point propane-rich.
    assert inc[0, 0] > 0.8 and inc[1, 1] > 0.9
    np.testing.assert_allclose(inc.sum(axis=1), 1.0, atol=1e-12)


def test_pure_component_limit_is_the_vapour_pressure():
    mix = Mixture(["C1", "C3"])
    t = np.array([300.0])
    psat = pure_vapour_pressure(mix.model, np.array([1]), t)[0][0]
    # An exactly single-component feed returns the EOS vapour pressure itself...
    p, kind, _ = saturation_pressure(
        mix, t, np.array([[0.0, 1.0]]), np.array([psat]), np.array([psat])
    )
    assert kind[0] == 3 and p[0] == pytest.approx(psat, rel=1e-12)
    # ...and an almost pure one converges to it: bubble point of propane with 1e-6 methane lies
    # within ~1e-4 of the propane vapour pressure (Henry's-law limit: dP/dx1 ~ H1 - Psat).
    z = np.array([[1e-6, 1 - 1e-6]])
    p2, kind2, _ = saturation_pressure(
        mix, t, z, np.array([psat * (1 + 1e-5)]), np.array([psat * 1.01])
    )
    assert kind2[0] == 1
    assert p2[0] == pytest.approx(psat, rel=1e-4)
    assert p2[0] > psat


def test_invalid_brackets_give_nan():
    mix = Mixture(["C1", "C3"])
    p, kind, _ = saturation_pressure(
        mix, np.array([250.0]), np.array([[0.2, 0.8]]), np.array([1e7]), np.array([2e7])
    )  # both one-phase
    assert np.isnan(p[0]) and kind[0] == 0


@pytest.mark.parametrize(
    ("t", "z", "p_two", "p_one"),
    [
        (250.0, [0.2, 0.8], 2e6, 3e6),  # bubble point, C1-C3 (the binary above)
        (250.0, [0.2, 0.8], 3e5, 2e5),  # dew point
        (300.0, [0.5, 0.5], 3e6, 1e6),  # a wide bracket: bisection before Newton
    ],
)
def test_known_brackets_give_the_same_answer_without_the_check_flash(
    t, z, p_two, p_one, monkeypatch
):
    # The caller's knowledge (e.g. a table's flash at neighbouring grid pressures) replaces the
    # two check flashes; the answer is bit for bit the one of the checked call.
    import gridflash.thermo._flash as flash_module

    flashed = []

    def counting(*args, **kwargs):
        result = flash(*args, **kwargs)
        flashed[-1] += result.phase_count.size
        return result

    monkeypatch.setattr(flash_module, "flash", counting)
    mix = Mixture(["C1", "C3"])
    args = (mix, np.array([t]), np.array([z]), np.array([p_two]), np.array([p_one]))
    flashed.append(0)
    checked = saturation_pressure(*args)
    flashed.append(0)
    known = saturation_pressure(*args, brackets_known=np.array([True]))
    assert flashed[1] == flashed[0] - 2
    assert checked[1][0] in (1, 2)
    for a, b in zip(checked, known, strict=True):
        np.testing.assert_array_equal(a, b)


def test_brackets_known_must_match_the_cells():
    mix = Mixture(["C1", "C3"])
    with pytest.raises(ValueError, match="brackets_known"):
        saturation_pressure(mix, np.array([250.0]), np.array([[0.2, 0.8]]), np.array([2e6]),
                            np.array([3e6]), brackets_known=np.array([True, False]))
