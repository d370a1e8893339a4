"""Unit conversion to SI for the quantities a run description may give in other units.

Configs state their units explicitly; this module turns those values into SI (Pa, K, m3/mol) so
nothing downstream ever sees a unit string. Each conversion is an exact definition:

- 1 bar = 1e5 Pa; 1 kPa = 1e3 Pa; 1 MPa = 1e6 Pa (SI prefixes);
- 1 atm = 101 325 Pa (standard atmosphere, exact by definition; NIST SP 811, 2008, App. B.8);
- 1 psi = 1 lbf/in2 = 0.45359237 kg x 9.80665 m/s2 / (0.0254 m)2 = 6894.757293168... Pa (exact
  from the international pound, standard gravity and the international inch; NIST SP 811 lists
  6.894 757 E+03);
- T/K = t/degC + 273.15; T/K = (t/degF + 459.67) x 5/9, computed as (t/degF - 32) x 5/9 + 273.15
  so that 32 degF maps to 273.15 K exactly (NIST SP 811, Sec. 4.2.1.1 and App. B.9).

Pressures are absolute: gauge spellings (``psig``, ``barg``) and the ambiguous ``psi`` are refused.
"""

from __future__ import annotations

import difflib
import math
from collections.abc import Mapping

import numpy as np

from .._errors import ConfigError

__all__ = [
    "MOLAR_VOLUME_UNITS",
    "PRESSURE_UNITS",
    "TEMPERATURE_UNITS",
    "molar_volume_unit",
    "molar_volume_to_si",
    "pressure_from_pa",
    "pressure_to_pa",
    "pressure_unit",
    "temperature_from_kelvin",
    "temperature_to_kelvin",
    "temperature_unit",
]

#: Pascals per pound-force per square inch: lbf = 0.45359237 kg x 9.80665 m/s2, in = 0.0254 m.
PSI_IN_PA: float = 0.45359237 * 9.80665 / 0.0254**2
#: Pascals per standard atmosphere (exact by definition).
ATM_IN_PA: float = 101325.0

#: Canonical pressure unit names (absolute pressures), with the factor to Pa.
_PRESSURE_FACTORS: dict[str, float] = {
    "Pa": 1.0,
    "kPa": 1e3,
    "MPa": 1e6,
    "bar": 1e5,
    "psia": PSI_IN_PA,
    "atm": ATM_IN_PA,
}
#: Other accepted spellings of the canonical pressure units.
_PRESSURE_ALIASES: dict[str, str] = {"bara": "bar"}

#: Canonical temperature unit names.
_TEMPERATURE_CANONICAL: tuple[str, ...] = ("K", "degC", "degF")
#: Other accepted spellings of the canonical temperature units.
_TEMPERATURE_ALIASES: dict[str, str] = {
    "°C": "degC",
    "C": "degC",
    "\u2103": "degC",  # the single-character DEGREE CELSIUS sign
    "°F": "degF",
    "F": "degF",
    "\u2109": "degF",  # the single-character DEGREE FAHRENHEIT sign
}

#: Canonical molar-volume unit names, with the factor to m3/mol.
_MOLAR_VOLUME_FACTORS: dict[str, float] = {"m3/mol": 1.0, "cm3/mol": 1e-6, "L/mol": 1e-3}
_MOLAR_VOLUME_ALIASES: dict[str, str] = {"m3/kmol": "L/mol", "dm3/mol": "L/mol"}

#: The canonical unit lists, in the order error messages show them.
PRESSURE_UNITS: tuple[str, ...] = tuple(_PRESSURE_FACTORS)
TEMPERATURE_UNITS: tuple[str, ...] = _TEMPERATURE_CANONICAL
MOLAR_VOLUME_UNITS: tuple[str, ...] = tuple(_MOLAR_VOLUME_FACTORS)

_GAUGE_HINT = (
    " (pressures are absolute: use 'psia' for pounds per square inch absolute, 'bar' for bar "
    "absolute)"
)


def _resolve(
    unit: object,
    key: str,
    quantity: str,
    canonical: tuple[str, ...],
    aliases: Mapping[str, str],
) -> str:
    if isinstance(unit, str):
        if unit in canonical:
            return unit
        if unit in aliases:
            return aliases[unit]
    spellings = [*canonical, *aliases]
    hint = ""
    if isinstance(unit, str):
        lowered = {s.lower(): s for s in spellings}
        if unit.strip().lower() in lowered:
            hint = f" (did you mean {lowered[unit.strip().lower()]!r}?)"
        else:
            close = difflib.get_close_matches(unit, spellings, n=1, cutoff=0.6)
            if close:
                hint = f" (did you mean {close[0]!r}?)"
    extra = _GAUGE_HINT if quantity == "pressure" else ""
    also = f" (also accepted: {', '.join(aliases)})" if aliases else ""
    raise ConfigError(
        f"{key} = {unit!r} is not a known {quantity} unit{hint}; allowed: "
        f"{', '.join(canonical)}{also}{extra}"
    )


def pressure_unit(unit: object, *, key: str = "unit") -> str:
    """Canonical name of a pressure unit spelling.

    Parameters
    ----------
    unit : object
        The unit as written in a config, e.g. ``"bar"``, ``"bara"``, ``"MPa"``, ``"psia"``.
    key : str
        Dotted config key the unit came from, quoted in error messages.

    Returns
    -------
    str
        One of :data:`PRESSURE_UNITS`.

    Raises
    ------
    ConfigError
        If the spelling is not known (the message names ``key``, the value and the allowed list).
    """
    return _resolve(unit, key, "pressure", PRESSURE_UNITS, _PRESSURE_ALIASES)


def temperature_unit(unit: object, *, key: str = "unit") -> str:
    """Canonical name (``"K"``, ``"degC"`` or ``"degF"``) of a temperature unit spelling.

    ``"degC"``, ``"°C"`` and ``"C"`` all mean degrees Celsius; ``"degF"``, ``"°F"`` and ``"F"``
    degrees Fahrenheit. See :func:`pressure_unit` for parameters and errors.
    """
    return _resolve(unit, key, "temperature", TEMPERATURE_UNITS, _TEMPERATURE_ALIASES)


def molar_volume_unit(unit: object, *, key: str = "unit") -> str:
    """Canonical name (``"m3/mol"``, ``"cm3/mol"`` or ``"L/mol"``) of a molar-volume unit."""
    return _resolve(unit, key, "molar volume", MOLAR_VOLUME_UNITS, _MOLAR_VOLUME_ALIASES)


def _as_float_array(values: object, key: str) -> tuple[np.ndarray, bool]:
    scalar = np.ndim(values) == 0  # type: ignore[arg-type]
    arr = np.atleast_1d(np.asarray(values, dtype=float))
    return arr, scalar


def _element_key(key: str, index: int, scalar: bool) -> str:
    return key if scalar else f"{key}[{index}]"


def pressure_to_pa(
    values: float | np.ndarray | list[float], unit: str, *, key: str = "pressure"
) -> float | np.ndarray:
    """Convert absolute pressures to pascals.

    Parameters
    ----------
    values : float or array_like
        Pressures in ``unit``.
    unit : str
        Any spelling accepted by :func:`pressure_unit`.
    key : str
        Dotted config key of the values, quoted in error messages (with ``[i]`` for arrays).

    Returns
    -------
    float or ndarray
        Pressures in Pa, a float for scalar input.

    Raises
    ------
    ConfigError
        If the unit is unknown or a pressure is not finite and positive (absolute pressures).

    Examples
    --------
    >>> pressure_to_pa(1.0, "atm")
    101325.0
    """
    canonical = pressure_unit(unit, key=_unit_key(key))
    arr, scalar = _as_float_array(values, key)
    bad = ~np.isfinite(arr) | (arr <= 0.0)
    if bad.any():
        i = int(np.argmax(bad))
        raise ConfigError(
            f"{_element_key(key, i, scalar)} = {_py(arr[i])!r} {canonical} is not a valid absolute "
            "pressure; it must be a finite number above 0"
        )
    out = arr * _PRESSURE_FACTORS[canonical]
    return float(out[0]) if scalar else out


def temperature_to_kelvin(
    values: float | np.ndarray | list[float], unit: str, *, key: str = "temperature"
) -> float | np.ndarray:
    """Convert temperatures to kelvin.

    Parameters
    ----------
    values : float or array_like
        Temperatures in ``unit``.
    unit : str
        Any spelling accepted by :func:`temperature_unit`.
    key : str
        Dotted config key of the values, quoted in error messages (with ``[i]`` for arrays).

    Returns
    -------
    float or ndarray
        Absolute temperatures in K, a float for scalar input.

    Raises
    ------
    ConfigError
        If the unit is unknown, a value is not finite, or a temperature is at or below absolute
        zero once converted.

    Examples
    --------
    >>> temperature_to_kelvin(32.0, "degF")
    273.15
    """
    canonical = temperature_unit(unit, key=_unit_key(key))
    arr, scalar = _as_float_array(values, key)
    if canonical == "K":
        kelvin = arr.copy()
    elif canonical == "degC":
        kelvin = arr + 273.15
    else:
        kelvin = (arr - 32.0) * 5.0 / 9.0 + 273.15
    bad = ~np.isfinite(kelvin) | (kelvin <= 0.0)
    if bad.any():
        i = int(np.argmax(bad))
        what = (
            "is not a finite number"
            if not math.isfinite(arr[i])
            else f"is {_py(kelvin[i])!r} K, at or below absolute zero"
        )
        raise ConfigError(
            f"{_element_key(key, i, scalar)} = {_py(arr[i])!r} {canonical} {what}; "
            "temperatures must be above 0 K"
        )
    return float(kelvin[0]) if scalar else kelvin


def pressure_from_pa(values: float | np.ndarray, unit: str) -> float | np.ndarray:
    """Pressures in Pa expressed in ``unit`` (the inverse of :func:`pressure_to_pa`).

    Raises
    ------
    ConfigError
        If the unit is unknown.

    Examples
    --------
    >>> pressure_from_pa(101325.0, "atm")
    1.0
    """
    factor = _PRESSURE_FACTORS[pressure_unit(unit, key="pressure unit")]
    return values / factor if np.ndim(values) else float(values) / factor


def temperature_from_kelvin(values: float | np.ndarray, unit: str) -> float | np.ndarray:
    """Temperatures in K expressed in ``unit`` (the inverse of :func:`temperature_to_kelvin`).

    Raises
    ------
    ConfigError
        If the unit is unknown.

    Examples
    --------
    >>> temperature_from_kelvin(273.15, "degF")
    32.0
    """
    canonical = temperature_unit(unit, key="temperature unit")
    kelvin = np.asarray(values, dtype=float)
    if canonical == "K":
        out = kelvin
    elif canonical == "degC":
        out = kelvin - 273.15
    else:
        out = (kelvin - 273.15) * 9.0 / 5.0 + 32.0
    return out if np.ndim(values) else float(out)


def molar_volume_to_si(value: float, unit: str, *, key: str = "vc") -> float:
    """Convert a positive molar volume to m3/mol (see :func:`pressure_to_pa` for the errors)."""
    canonical = molar_volume_unit(unit, key=_unit_key(key))
    v = float(value)
    if not math.isfinite(v) or v <= 0.0:
        raise ConfigError(f"{key} = {value!r} {canonical} must be a finite number above 0")
    return v * _MOLAR_VOLUME_FACTORS[canonical]


def _unit_key(key: str) -> str:
    """The config key holding the unit of ``key``: ``pressure.start`` -> ``pressure.unit``,
    ``fluid.components[3].tc`` -> ``fluid.components[3].tc_unit``."""
    base = key.split("[")[0] if key.endswith("]") else key
    head, _, last = base.rpartition(".")
    if last in ("tc", "pc", "vc"):
        return f"{base}_unit"
    return f"{head}.unit" if head else f"{base}.unit"


def _py(value: float) -> float:
    """A numpy float as a plain float, so that ``!r`` prints ``-300.0`` not ``np.float64(...)``."""
    return float(value)
