"""Pure components: the :class:`Component` record and the built-in table look-up."""

from __future__ import annotations

import difflib
import math
from dataclasses import dataclass, field

from .._errors import InputError
from ._component_data import _ROWS, SOURCE

__all__ = ["Component", "builtin_component", "builtin_names"]

_R = 8.314462618  # J/(mol K), CODATA 2018 exact value of the molar gas constant


@dataclass(frozen=True)
class Component:
    """A pure component (or pseudo-component) with the constants a cubic EOS needs.

    Parameters
    ----------
    name : str
        Name used in results and stores.
    tc : float
        Critical temperature, K.
    pc : float
        Critical pressure, Pa.
    omega : float
        Acentric factor, dimensionless.
    mw : float
        Molar mass, g/mol.
    vc : float, optional
        Critical molar volume, m3/mol (used by the Lohrenz-Bray-Clark viscosity correlation).
        Estimated when not given from the Pitzer-type estimate ``Zc = 0.291 - 0.080 omega``
        (Reid, Prausnitz & Sherwood, *The Properties of Gases and Liquids*, 3rd ed., 1977; from
        memory).
    zra : float, optional
        Rackett compressibility factor, used to derive the Peneloux volume shift. Estimated when not
        given by the Yamada-Gunn (1973) correlation ``zra = 0.29056 - 0.08775 omega``.
    volume_shift : float, optional
        Dimensionless Peneloux volume-shift parameter ``s = c / b``. When given it is used as is,
        whatever the EOS; otherwise it is derived from ``zra`` for the EOS in use.
    source : str, optional
        Where the constants come from (recorded in store provenance).

    Examples
    --------
    >>> c7plus = Component("C7+", tc=580.0, pc=2.6e6, omega=0.40, mw=120.0)
    """

    name: str
    tc: float
    pc: float
    omega: float
    mw: float
    vc: float | None = None
    zra: float | None = None
    volume_shift: float | None = None
    source: str = field(default="user-defined")

    def __post_init__(self) -> None:
        if not isinstance(self.name, str) or not self.name.strip():
            raise InputError(f"Component name must be a non-empty string, got {self.name!r}")
        _check_positive(self.name, "tc", self.tc, "K")
        _check_positive(self.name, "pc", self.pc, "Pa")
        _check_positive(self.name, "mw", self.mw, "g/mol")
        if not _finite(self.omega) or not -1.0 < self.omega < 3.0:
            raise InputError(
                f"Component {self.name!r}: omega={self.omega!r} is outside the accepted range "
                "(-1, 3) for an acentric factor"
            )
        if self.volume_shift is not None and (
            not _finite(self.volume_shift) or abs(self.volume_shift) >= 1.0
        ):
            raise InputError(
                f"Component {self.name!r}: volume_shift={self.volume_shift!r} must be a "
                "dimensionless c/b with |c/b| < 1"
            )
        if self.pc < 1e4 or self.pc > 1e9:
            raise InputError(
                f"Component {self.name!r}: pc={self.pc!r} Pa is outside 1e4..1e9 Pa; "
                "critical pressures are given in Pa (e.g. 4.599e6 for methane)"
            )
        if not _TC_RANGE[0] <= self.tc <= _TC_RANGE[1]:
            raise InputError(
                f"Component {self.name!r}: tc={self.tc!r} K is outside {_TC_RANGE[0]:g}.."
                f"{_TC_RANGE[1]:g} K; critical temperatures are given in K (e.g. 190.56 for "
                "methane)"
            )
        # The derived constants are checked like given ones: a store records them and rebuilds
        # the component from them (gridflash.store.mixture_from_store), so whatever is
        # accepted here must be accepted there.
        vc_key = "vc" if self.vc is not None else "estimated critical volume from tc, pc, omega"
        _check_positive(self.name, "vc", self.critical_volume, "m3/mol")
        if self.critical_volume > 0.1:
            raise InputError(
                f"Component {self.name!r}: {vc_key}={self.critical_volume!r} m3/mol is "
                "implausibly large; give the critical volume in m3/mol (e.g. 9.86e-5 for "
                "methane), and tc in K and pc in Pa"
            )
        zra_key = "zra" if self.zra is not None else "Rackett Z estimated from omega"
        if not _finite(self.rackett_z) or not 0.1 < self.rackett_z < 0.5:
            raise InputError(
                f"Component {self.name!r}: {zra_key}={self.rackett_z!r} is outside (0.1, 0.5)"
                + ("" if self.zra is not None else "; give zra, or an omega below 2.1")
            )

    @property
    def critical_volume(self) -> float:
        """Critical molar volume in m3/mol, given or estimated (see ``vc``)."""
        if self.vc is not None:
            return self.vc
        zc = 0.291 - 0.080 * self.omega
        return zc * _R * self.tc / self.pc

    @property
    def rackett_z(self) -> float:
        """Rackett compressibility factor, given or from Yamada & Gunn (1973)."""
        if self.zra is not None:
            return self.zra
        return 0.29056 - 0.08775 * self.omega


#: Accepted critical temperatures (K): helium's 5.2 K to well above the heaviest petroleum
#: pseudo-components (about 1,100 K for C80+ fractions); a value outside is a unit mistake.
_TC_RANGE = (1.0, 3000.0)


def _finite(value: object) -> bool:
    return isinstance(value, (int, float)) and not isinstance(value, bool) and math.isfinite(value)


def _check_positive(name: str, key: str, value: object, units: str) -> None:
    if not _finite(value) or value <= 0:  # type: ignore[operator]
        raise InputError(
            f"Component {name!r}: {key}={value!r} must be a finite positive number in {units}"
        )


def _build_table() -> tuple[dict[str, Component], dict[str, str]]:
    table: dict[str, Component] = {}
    aliases: dict[str, str] = {}
    for name, short, extra, tc, pc_bar, omega, mw, vc_cm3 in _ROWS:
        comp = Component(
            short, tc=tc, pc=pc_bar * 1e5, omega=omega, mw=mw, vc=vc_cm3 * 1e-6, source=SOURCE
        )
        table[short] = comp
        for alias in (short, name, *extra):
            aliases[alias.lower()] = short
    return table, aliases


_TABLE, _ALIASES = _build_table()


def builtin_names() -> tuple[str, ...]:
    """Shorthand names of the built-in components (``"N2"``, ``"C1"``, ``"nC4"``...)."""
    return tuple(_TABLE)


def builtin_component(name: str) -> Component:
    """Look up a built-in component by shorthand or chemical name, case-insensitively.

    Raises
    ------
    InputError
        If the name is unknown; the message lists the closest known names.
    """
    key = str(name).strip().lower()
    if key in _ALIASES:
        return _TABLE[_ALIASES[key]]
    close = difflib.get_close_matches(key, list(_ALIASES), n=4, cutoff=0.5)
    hint = (
        f"; did you mean {', '.join(repr(_TABLE[_ALIASES[c]].name) for c in dict.fromkeys(close))}?"
        if close
        else ""
    )
    raise InputError(
        f"Unknown component {name!r}{hint} Built-in components: {', '.join(_TABLE)}; "
        "other components can be defined with gridflash.Component(name, tc, pc, omega, mw)"
    )
