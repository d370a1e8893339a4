"""The :class:`Mixture`: components, EOS choice and binary interaction parameters."""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from functools import cached_property
from typing import get_args

import numpy as np

from .._errors import InputError
from .._types import EosName
from ._components import Component, builtin_component
from ._cubic import CubicModel, R, eos_constants, kappa

__all__ = ["EOS_NAMES", "Mixture"]

#: The equations of state by name (one list: the ``EosName`` option type).
EOS_NAMES: tuple[str, ...] = get_args(EosName)


class Mixture:
    """A set of components described by one cubic equation of state.

    Parameters
    ----------
    components : sequence of str or Component
        Built-in names (shorthand such as ``"C1"``, ``"nC4"``, ``"CO2"`` or chemical names such as
        ``"methane"``, case-insensitive) and/or :class:`Component` objects.
    eos : {"PR78", "PR76", "SRK"}
        Peng-Robinson with the 1978 acentric-factor correlation (default), the original 1976
        Peng-Robinson, or Soave-Redlich-Kwong.
    kij : array_like of shape (nc, nc) or mapping, optional
        Binary interaction parameters: a full symmetric matrix, or a mapping from name pairs
        ``("CO2", "C1")`` (or ``"CO2-C1"`` strings) to values; pairs not given are zero. The
        default is zero for every pair: no published default set is applied, so users should
        supply tuned values for CO2, N2 and H2S pairs.

    Attributes
    ----------
    components : tuple of Component
    names : tuple of str
    eos : str
    kij : ndarray, shape (nc, nc)
    """

    def __init__(
        self,
        components: Sequence[str | Component],
        eos: EosName = "PR78",
        kij: object = None,
    ) -> None:
        if isinstance(components, (str, Component)):
            components = [components]
        comps = tuple(c if isinstance(c, Component) else builtin_component(c) for c in components)
        if not comps:
            raise InputError("Mixture needs at least one component")
        names = [c.name for c in comps]
        dupes = sorted({n for n in names if names.count(n) > 1})
        if dupes:
            raise InputError(f"Mixture lists component(s) more than once: {', '.join(dupes)}")
        if eos not in EOS_NAMES:
            raise InputError(f"Unknown eos={eos!r}; choose one of {', '.join(EOS_NAMES)}")
        self.components: tuple[Component, ...] = comps
        self.names: tuple[str, ...] = tuple(names)
        self.eos: str = eos
        self.kij = _interaction_matrix(kij, self.names)
        self.kij.setflags(write=False)

    def __repr__(self) -> str:
        return f"Mixture({list(self.names)!r}, eos={self.eos!r})"

    @property
    def n_components(self) -> int:
        return len(self.components)

    def index(self, name: str) -> int:
        """Position of a component given by its name in this mixture (or a built-in alias)."""
        if name in self.names:
            return self.names.index(name)
        try:
            canonical = builtin_component(name).name
        except InputError:
            canonical = None
        if canonical in self.names:
            return self.names.index(canonical)
        raise InputError(
            f"Component {name!r} is not in this mixture; its components are {', '.join(self.names)}"
        )

    def _array(self, attr: str) -> np.ndarray:
        out = np.array([getattr(c, attr) for c in self.components], dtype=float)
        out.setflags(write=False)
        return out

    @cached_property
    def tc(self) -> np.ndarray:
        """Critical temperatures, K, shape (nc,)."""
        return self._array("tc")

    @cached_property
    def pc(self) -> np.ndarray:
        """Critical pressures, Pa, shape (nc,)."""
        return self._array("pc")

    @cached_property
    def omega(self) -> np.ndarray:
        """Acentric factors, shape (nc,)."""
        return self._array("omega")

    @cached_property
    def mw(self) -> np.ndarray:
        """Molar masses, g/mol, shape (nc,)."""
        return self._array("mw")

    @cached_property
    def vc(self) -> np.ndarray:
        """Critical volumes (given or estimated), m3/mol, shape (nc,)."""
        return self._array("critical_volume")

    @cached_property
    def model(self) -> CubicModel:
        """The EOS data the numerical kernels use."""
        omega_a, omega_b, d1, d2 = eos_constants(self.eos)  # type: ignore[arg-type]
        return CubicModel(
            eos=self.eos,
            delta1=d1,
            delta2=d2,
            tc=self.tc,
            pc=self.pc,
            omega=self.omega,
            ac=omega_a * (R * self.tc) ** 2 / self.pc,
            m=kappa(self.eos, self.omega),  # type: ignore[arg-type]
            b=omega_b * R * self.tc / self.pc,
            one_minus_k=1.0 - self.kij,
        )

    @cached_property
    def volume_shift(self) -> np.ndarray:
        """Peneloux volume-shift parameters ``c_i``, m3/mol, shape (nc,).

        A component's own ``volume_shift`` (``c/b``) is used where given; otherwise ``c_i`` is
        derived from its Rackett compressibility for this EOS (see
        :func:`gridflash.thermo.peneloux_shift`).
        """
        from ._volume_shift import peneloux_shift

        out = peneloux_shift(self)
        out.setflags(write=False)
        return out


def _interaction_matrix(kij: object, names: Sequence[str]) -> np.ndarray:
    nc = len(names)
    if kij is None:
        return np.zeros((nc, nc))
    if isinstance(kij, Mapping):
        out = np.zeros((nc, nc))
        lookup = {n.lower(): i for i, n in enumerate(names)}

        def resolve(name: str) -> int | None:
            i = lookup.get(str(name).strip().lower())
            if i is None:
                try:
                    i = lookup.get(builtin_component(name).name.lower())
                except InputError:
                    i = None
            return i

        for key, value in kij.items():
            if isinstance(key, str):
                # "CO2-C1"; names may contain dashes themselves ("n-butane"), so try every dash.
                splits = [(key[:k], key[k + 1 :]) for k, ch in enumerate(key) if ch == "-"]
                found = [
                    (a, b) for a, b in splits if resolve(a) is not None and resolve(b) is not None
                ]
                pair = list(found[0]) if found else (list(splits[0]) if len(splits) == 1 else [key])
            else:
                pair = list(key)
            if len(pair) != 2:
                raise InputError(
                    f"kij key {key!r} must name two components, as ('CO2', 'C1') or 'CO2-C1'"
                )
            idx = []
            for name in pair:
                i = resolve(name)
                if i is None:
                    raise InputError(
                        f"kij key {key!r}: component {name!r} is not in the mixture "
                        f"({', '.join(names)})"
                    )
                idx.append(i)
            i, j = idx
            v = _check_kij_value(value, f"kij[{key!r}]")
            if i == j and v != 0.0:
                raise InputError(f"kij[{key!r}] pairs a component with itself; it must be 0")
            out[i, j] = out[j, i] = v
        return out
    try:
        arr = np.array(kij, dtype=float)
    except (TypeError, ValueError) as exc:
        raise InputError(f"kij must be a square matrix or a mapping of pairs: {exc}") from None
    if arr.shape != (nc, nc):
        raise InputError(f"kij has shape {arr.shape}, expected ({nc}, {nc}) for {nc} components")
    bad = ~np.isfinite(arr)
    if bad.any():
        i, j = np.argwhere(bad)[0]
        raise InputError(f"kij[{i}, {j}] = {arr[i, j]!r} is not finite")
    asym = np.abs(arr - arr.T) > 1e-12
    if asym.any():
        i, j = np.argwhere(asym)[0]
        raise InputError(
            f"kij must be symmetric: kij[{i}, {j}] = {arr[i, j]!r} but "
            f"kij[{j}, {i}] = {arr[j, i]!r}"
        )
    if np.any(np.diag(arr) != 0.0):
        raise InputError("kij diagonal must be zero")
    if np.any(np.abs(arr) >= 1.0):
        i, j = np.argwhere(np.abs(arr) >= 1.0)[0]
        raise InputError(f"kij[{i}, {j}] = {arr[i, j]!r}; |kij| must be below 1")
    return arr


def _check_kij_value(value: object, where: str) -> float:
    try:
        v = float(value)  # type: ignore[arg-type]
    except (TypeError, ValueError):
        raise InputError(f"{where} = {value!r} is not a number") from None
    if not np.isfinite(v) or abs(v) >= 1.0:
        raise InputError(f"{where} = {value!r}; it must be finite with |kij| < 1")
    return v
