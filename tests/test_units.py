"""Unit conversions of the config layer against exact definitions.

External references used here:
- NIST Special Publication 811 (2008), "Guide for the Use of the International System of Units":
  1 bar = 1e5 Pa, 1 atm = 101 325 Pa (exact), 1 psi = 6.894 757 E+03 Pa; T/K = t/degC + 273.15,
  T/K = (t/degF + 459.67)/1.8.
- The exact definitions behind the psi: international pound 0.453 592 37 kg and inch 0.0254 m
  (international yard and pound agreement, 1959), standard gravity 9.806 65 m/s2 (3rd CGPM, 1901).
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

import pytest

from gridflash import ConfigError
from gridflash.config._units import (
    PRESSURE_UNITS,
    TEMPERATURE_UNITS,
    molar_volume_to_si,
    pressure_to_pa,
    temperature_to_kelvin,
)

from ._config_helpers import PSI_EXACT


@pytest.mark.parametrize(
    ("value", "unit", "pascal"),
    [
        pytest.param(1.0, "Pa", 1.0, id="Pa"),
        pytest.param(1.0, "kPa", 1e3, id="kPa-SI-prefix"),
        pytest.param(1.0, "MPa", 1e6, id="MPa-SI-prefix"),
        pytest.param(1.0, "bar", 1e5, id="bar-NIST-SP811"),
        pytest.param(1.0, "bara", 1e5, id="bara-alias"),
        pytest.param(1.0, "atm", 101325.0, id="atm-NIST-SP811-exact"),
        pytest.param(1.0, "psia", PSI_EXACT, id="psi-exact-from-pound-inch-gn"),
        pytest.param(14.6959487755, "psia", 101325.0, id="atm-in-psi"),
    ],
)
def test_pressure_conversion_exact_definitions(value: float, unit: str, pascal: float) -> None:
    assert pressure_to_pa(value, unit) == pytest.approx(pascal, rel=1e-11)


def test_psi_agrees_with_nist_sp811_table() -> None:
    # NIST SP 811, App. B.8: pound-force per square inch (psi) = 6.894 757 E+03 Pa (7 digits).
    assert abs(pressure_to_pa(1.0, "psia") - 6.894757e3) < 5e-4
    assert pressure_to_pa(1.0, "psia") == pytest.approx(6894.757293168361, rel=1e-15)


@pytest.mark.parametrize(
    ("value", "unit", "kelvin"),
    [
        pytest.param(273.15, "K", 273.15, id="K"),
        pytest.param(0.0, "degC", 273.15, id="0C-NIST"),
        pytest.param(100.0, "°C", 373.15, id="100C-degree-sign"),
        pytest.param(-273.0, "C", 0.15, id="C-plain-letter"),
        pytest.param(32.0, "degF", 273.15, id="32F-ice-point"),
        pytest.param(212.0, "°F", 373.15, id="212F-steam-point"),
        pytest.param(-40.0, "F", 233.15, id="minus40F-equals-minus40C"),
        pytest.param(0.0, "degF", 459.67 / 1.8, id="0F-NIST-(t+459.67)/1.8"),
    ],
)
def test_temperature_conversion_exact_definitions(value: float, unit: str, kelvin: float) -> None:
    assert temperature_to_kelvin(value, unit) == pytest.approx(kelvin, rel=1e-14, abs=1e-12)


def test_unit_lists_are_canonical() -> None:
    assert PRESSURE_UNITS == ("Pa", "kPa", "MPa", "bar", "psia", "atm")
    assert TEMPERATURE_UNITS == ("K", "degC", "degF")
    assert molar_volume_to_si(98.6, "cm3/mol") == pytest.approx(9.86e-5, rel=1e-14)


@pytest.mark.parametrize(
    ("call", "key", "value"),
    [
        (lambda: pressure_to_pa(1.0, "psi", key="p"), "p.unit", "'psi'"),
        (lambda: pressure_to_pa(1.0, "psig", key="p"), "p.unit", "'psig'"),
        (lambda: pressure_to_pa([1.0, 0.0], "bar", key="p"), "p[1]", "0.0"),
        (lambda: temperature_to_kelvin(-500.0, "degF", key="t"), "t", "-500.0"),
        (lambda: temperature_to_kelvin(0.0, "K", key="t"), "t", "0.0"),
        (lambda: temperature_to_kelvin(20.0, "celsius", key="t"), "t.unit", "'celsius'"),
    ],
)
def test_unit_errors_name_key_and_value(call: Callable[[], Any], key: str, value: str) -> None:
    with pytest.raises(ConfigError) as info:
        call()
    message = str(info.value)
    assert key in message and value in message and "\n" not in message


