"""The :class:`Mixture`: components, EOS choice and binary interaction parameters."""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from functools import cached_property
from types import MappingProxyType
from typing import get_args

import numpy as np

from .._errors import InputError
from .._types import EosName
from ._components import Component, builtin_component
from ._cubic import CubicModel, R, eos_constants, kappa
from ._interaction_data import NON_HYDROCARBONS, default_pair

__all__ = [
    "EOS_NAMES",
    "KIJ_MAX",
    "KIJ_MIN",
    "KIJ_ZERO_NO_DEFAULT",
    "KIJ_ZERO_REQUESTED",
    "KIJ_ZERO_SPELLINGS",
    "Mixture",
    "pair_key",
]

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
    kij : None, mapping, array_like of shape (nc, nc) or "zero", optional
        Binary interaction parameters, each in [-0.5, 1). ``None`` (the default) applies the
        default table of CO2, N2, H2S and H2O pairs (:mod:`gridflash.thermo._interaction_data`,
        every value with its published source; pairs of two hydrocarbons are zero). A mapping
        from name pairs ``("CO2", "C1")`` (or ``"CO2-C1"`` strings) to values overrides the
        default table pair by pair (each pair at most once, in either order). A full symmetric
        matrix is used as it is, and ``"zero"`` makes every parameter zero. The defaults are
        starting points: tune them to laboratory data.

    Attributes
    ----------
    components : tuple of Component
    names : tuple of str
    eos : str
    kij : ndarray, shape (nc, nc)
    kij_sources : mapping of str to str
        Where each pair's value came from, keyed ``"A-B"`` in mixture order (first component
        first): a source key of the default table (``"knapp1982"``, ``"soreide1992"``,
        ``"practice"``; see ``REFERENCES`` there), ``"given"``, or a ``"zero: ..."`` label saying
        why the pair is zero.
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
        self.kij, sources = _interaction_matrix(kij, self.names, eos)
        self.kij.setflags(write=False)
        self.kij_sources: Mapping[str, str] = MappingProxyType(sources)

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


#: Labels of ``Mixture.kij_sources`` for pairs that are not from the default table.
KIJ_GIVEN = "given"
KIJ_ZERO_REQUESTED = "zero: all-zero requested"
KIJ_ZERO_HYDROCARBONS = "zero: hydrocarbon pair, no default"
KIJ_ZERO_NO_DEFAULT = "zero: no default for this pair"
#: Spellings of ``kij`` that ask for every interaction parameter to be zero.
KIJ_ZERO_SPELLINGS = ("zero",)
#: Accepted range of an interaction parameter: ``KIJ_MIN <= kij < KIJ_MAX``.
KIJ_MIN, KIJ_MAX = -0.5, 1.0


def pair_key(name_a: str, name_b: str) -> str:
    """The ``"A-B"`` key of a pair in :attr:`Mixture.kij_sources` (mixture order)."""
    return f"{name_a}-{name_b}"


def _interaction_matrix(
    kij: object, names: Sequence[str], eos: str
) -> tuple[np.ndarray, dict[str, str]]:
    nc = len(names)
    pairs = [(i, j) for i in range(nc) for j in range(i + 1, nc)]
    if isinstance(kij, str):
        if kij.strip().lower() not in KIJ_ZERO_SPELLINGS:
            raise InputError(
                f"kij={kij!r} is not understood; give a matrix, a mapping of pairs, or "
                f"{KIJ_ZERO_SPELLINGS[0]!r} for all-zero interaction parameters"
            )
        return np.zeros((nc, nc)), {pair_key(names[i], names[j]): KIJ_ZERO_REQUESTED
                                     for i, j in pairs}
    if kij is None or isinstance(kij, Mapping):
        out, sources = _default_matrix(names, eos)
        if kij is not None:
            for (i, j), value in _mapping_pairs(kij, names).items():
                out[i, j] = out[j, i] = value
                sources[pair_key(names[min(i, j)], names[max(i, j)])] = KIJ_GIVEN
        return out, sources
    return _full_matrix(kij, nc), {pair_key(names[i], names[j]): KIJ_GIVEN for i, j in pairs}


def _default_matrix(names: Sequence[str], eos: str) -> tuple[np.ndarray, dict[str, str]]:
    """The default table applied to ``names``: matrix and the source of each pair."""
    nc = len(names)
    out = np.zeros((nc, nc))
    sources: dict[str, str] = {}
    for i in range(nc):
        for j in range(i + 1, nc):
            found = default_pair(eos, names[i], names[j])
            if found is not None:
                out[i, j] = out[j, i] = found[0]
                label = found[1]
            elif names[i] in NON_HYDROCARBONS or names[j] in NON_HYDROCARBONS:
                label = KIJ_ZERO_NO_DEFAULT
            else:
                label = KIJ_ZERO_HYDROCARBONS
            sources[pair_key(names[i], names[j])] = label
    return out, sources


def _mapping_pairs(kij: Mapping, names: Sequence[str]) -> dict[tuple[int, int], float]:
    """Pairs ``{(i, j): value}`` of a mapping keyed by name pairs; each pair at most once."""
    lookup = {n.lower(): i for i, n in enumerate(names)}

    def resolve(name: str) -> int | None:
        i = lookup.get(str(name).strip().lower())
        if i is None:
            try:
                i = lookup.get(builtin_component(name).name.lower())
            except InputError:
                i = None
        return i

    out: dict[tuple[int, int], float] = {}
    given_by: dict[tuple[int, int], object] = {}
    for key, value in kij.items():
        if isinstance(key, str):
            # "CO2-C1"; names may contain dashes themselves ("n-butane"), so try every dash.
            splits = [(key[:k], key[k + 1 :]) for k, ch in enumerate(key) if ch == "-"]
            found = [(a, b) for a, b in splits if resolve(a) is not None and resolve(b) is not None]
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
        if i == j:
            if v != 0.0:
                raise InputError(f"kij[{key!r}] pairs a component with itself; it must be 0")
            continue
        pair_id = (min(i, j), max(i, j))
        if pair_id in given_by:
            raise InputError(
                f"kij[{key!r}] gives the pair {names[i]}-{names[j]} again (already given as "
                f"{given_by[pair_id]!r}); give each pair once"
            )
        given_by[pair_id] = key
        out[pair_id] = v
    return out


def _full_matrix(kij: object, nc: int) -> np.ndarray:
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
    out_of_range = (arr < KIJ_MIN) | (arr >= KIJ_MAX)
    if out_of_range.any():
        i, j = np.argwhere(out_of_range)[0]
        raise InputError(
            f"kij[{i}, {j}] = {arr[i, j]!r} is outside [{KIJ_MIN:g}, {KIJ_MAX:g})"
        )
    return arr


def _check_kij_value(value: object, where: str) -> float:
    try:
        v = float(value)  # type: ignore[arg-type]
    except (TypeError, ValueError):
        raise InputError(f"{where} = {value!r} is not a number") from None
    if not np.isfinite(v) or not KIJ_MIN <= v < KIJ_MAX:
        raise InputError(f"{where} = {value!r} is outside [{KIJ_MIN:g}, {KIJ_MAX:g})")
    return v
