"""Plus-fraction characterisation: from a laboratory fluid analysis to EOS components.

:func:`characterise` takes a :class:`FluidAnalysis` (light components by name, optional measured
single carbon-number fractions, and a plus-fraction with molar mass and specific gravity) and

1. splits the plus-fraction into SCN fractions with Whitson's gamma distribution and gives each a
   specific gravity from one Watson factor (``_plus_fraction.py``);
2. estimates boiling point, critical constants, acentric factor and critical volume of every
   fraction from the named correlations (``_correlations.py``);
3. lumps the fractions into a few pseudo-components of about equal mass, with mass- or
   mole-weighted critical properties;
4. sets interaction parameters between CO2, N2, H2S, methane and the pseudo-components.

The result, a :class:`CharacterisedFluid`, carries :class:`Component` objects ready for
:class:`Mixture`, the composition, the interaction pairs, the SCN table before lumping and a
provenance dictionary naming every method used.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Literal

import numpy as np
from numpy.typing import NDArray

from .._errors import InputError
from ._components import Component, builtin_component
from ._correlations import (
    ACENTRIC_METHODS,
    BOILING_POINT_METHODS,
    CRITICAL_METHODS,
    KATZ_FIROOZABADI_RANGE,
    chueh_prausnitz_kij,
    edmister_acentric,
    generalized_scn_properties,
    kesler_lee_critical,
    lee_kesler_acentric,
    riazi_daubert_1987_boiling_point,
    riazi_daubert_critical,
    riazi_daubert_critical_volume,
    soreide_boiling_point,
)
from ._mixture import Mixture
from ._plus_fraction import (
    MAX_CARBON_LIMIT,
    constant_watson_sg,
    gamma_fractions,
)

__all__ = [
    "CharacterisedFluid",
    "FluidAnalysis",
    "PlusFraction",
    "ScnFraction",
    "ScnTable",
    "characterise",
    "equal_mass_groups",
]

CorrelationName = Literal["kesler-lee", "riazi-daubert"]
AcentricName = Literal["lee-kesler", "edmister"]
BoilingPointName = Literal["soreide", "riazi-daubert"]
MixingName = Literal["mass", "mole"]

#: Acentric-factor method used with each critical-property correlation unless another is asked.
_DEFAULT_ACENTRIC: dict[str, str] = {"kesler-lee": "lee-kesler", "riazi-daubert": "edmister"}

#: Constant kij between these light components and every pseudo-component. Values of this size
#: are common practice with Peng-Robinson and C7+ pseudo-components (from memory, not from one
#: published table); tune them to data when data exist.
DEFAULT_KIJ_CONSTANTS: Mapping[str, float] = MappingProxyType(
    {"N2": 0.10, "CO2": 0.10, "H2S": 0.05}
)
#: Methane / pseudo-component kij: Chueh-Prausnitz form with A = 0.18, B = 6 (common practice).
_C1_KIJ_A = 0.18
_C1_KIJ_B = 6.0

#: Accepted deviation of the analysis' total from 1 before it is normalised (lab reports round).
_TOTAL_TOLERANCE = 1e-3
#: Totals this close to 1 are taken as exactly 1 (no division).
_EXACT_TOTAL = 1e-12

_MIXING_LABELS = {
    "mass": "mass-fraction-weighted Tc, Pc, omega, Vc (Pedersen, Thomassen & Fredenslund 1984)",
    "mole": "mole-fraction-weighted Tc, Pc, omega, Vc (Kay's rule, Kay 1936)",
}
_LUMPING_LABEL = (
    "contiguous groups of about equal mass (Pedersen, Thomassen & Fredenslund 1984, Ind. Eng. "
    "Chem. Process Des. Dev. 23, 163-170)"
)


# ----------------------------------------------------------------------------------------------
# Input records
# ----------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class ScnFraction:
    """A measured single carbon-number fraction of a fluid analysis.

    Parameters
    ----------
    carbon_number : int
        Carbon number (``7`` for the C7 cut).
    mole_fraction : float
        Mole fraction in the whole fluid.
    mw : float, optional
        Molar mass, g/mol; default from the generalised SCN table of Katz & Firoozabadi (1978)
        as extended by Whitson (1983), available for C6 to C45.
    sg : float, optional
        Specific gravity (60 degF / 60 degF); default from the same table.
    """

    carbon_number: int
    mole_fraction: float
    mw: float | None = None
    sg: float | None = None

    def __post_init__(self) -> None:
        _check_carbon(f"SCN fraction carbon_number={self.carbon_number!r}", self.carbon_number)
        _check_fraction(f"C{self.carbon_number}", self.mole_fraction)
        if self.mw is not None:
            _check_molar_mass(f"C{self.carbon_number}", self.mw)
        if self.sg is not None:
            _check_sg(f"C{self.carbon_number}", self.sg)

    def resolved(self) -> tuple[float, float]:
        """Molar mass (g/mol) and SG, given or from the generalised SCN table."""
        if self.mw is not None and self.sg is not None:
            return float(self.mw), float(self.sg)
        try:
            mw, sg = generalized_scn_properties(self.carbon_number)
        except KeyError:
            low, high = KATZ_FIROOZABADI_RANGE
            raise InputError(
                f"SCN fraction C{self.carbon_number}: no generalised molar mass / SG outside "
                f"C{low}..C{high}; give mw and sg for this fraction"
            ) from None
        return (
            float(self.mw) if self.mw is not None else mw,
            float(self.sg) if self.sg is not None else sg,
        )


@dataclass(frozen=True)
class PlusFraction:
    """The plus-fraction of a fluid analysis (e.g. C7+).

    Parameters
    ----------
    carbon_number : int
        Carbon number where it starts (7 for C7+).
    mole_fraction : float
        Mole fraction in the whole fluid.
    mw : float
        Molar mass, g/mol.
    sg : float
        Specific gravity (60 degF / 60 degF).
    """

    carbon_number: int
    mole_fraction: float
    mw: float
    sg: float

    def __post_init__(self) -> None:
        _check_carbon(f"plus-fraction carbon_number={self.carbon_number!r}", self.carbon_number)
        _check_fraction(f"C{self.carbon_number}+", self.mole_fraction)
        _check_molar_mass(f"C{self.carbon_number}+", self.mw)
        _check_sg(f"C{self.carbon_number}+", self.sg)


@dataclass(frozen=True)
class FluidAnalysis:
    """A laboratory fluid analysis: light components, measured SCN fractions, a plus-fraction.

    Parameters
    ----------
    light : mapping or sequence of (name or Component, mole fraction)
        Light components, by built-in name (``"N2"``, ``"CO2"``, ``"C1"``, ``"nC6"``... or chemical
        names) or as :class:`Component` objects. Stored as a tuple of ``(Component, fraction)``.
    plus : PlusFraction
        The plus-fraction.
    scn : sequence of ScnFraction, optional
        Measured SCN fractions, each with a carbon number below the plus-fraction's.

    Notes
    -----
    All mole fractions together must sum to 1 within 1e-3 (rounded laboratory reports);
    :func:`characterise` divides them by their total.

    Examples
    --------
    An invented oil (invented data):

    >>> analysis = FluidAnalysis(
    ...     light={"N2": 0.005, "CO2": 0.02, "C1": 0.40, "C2": 0.07, "C3": 0.05, "nC4": 0.04,
    ...            "nC5": 0.03, "nC6": 0.025},
    ...     plus=PlusFraction(7, 0.36, mw=215.0, sg=0.845),
    ... )
    """

    light: tuple[tuple[Component, float], ...]
    plus: PlusFraction
    scn: tuple[ScnFraction, ...] = field(default=())

    def __post_init__(self) -> None:
        items = self.light.items() if isinstance(self.light, Mapping) else self.light
        light: list[tuple[Component, float]] = []
        for item in items:
            try:
                comp, frac = item
            except (TypeError, ValueError):
                raise InputError(
                    f"light component entry {item!r} must be a (name, mole fraction) pair"
                ) from None
            comp = comp if isinstance(comp, Component) else builtin_component(comp)
            _check_fraction(comp.name, frac)
            light.append((comp, float(frac)))
        names = [c.name for c, _ in light]
        dupes = sorted({n for n in names if names.count(n) > 1})
        if dupes:
            raise InputError(f"light components listed more than once: {', '.join(dupes)}")
        object.__setattr__(self, "light", tuple(light))

        if not isinstance(self.plus, PlusFraction):
            raise InputError(f"plus={self.plus!r} must be a PlusFraction(carbon_number, ...)")
        scn = tuple(self.scn)
        if any(not isinstance(s, ScnFraction) for s in scn):
            raise InputError("scn entries must be ScnFraction(carbon_number, mole_fraction, ...)")
        carbons = [s.carbon_number for s in scn]
        if carbons != sorted(set(carbons)):
            raise InputError(
                f"measured SCN carbon numbers {carbons!r} must be increasing and unique"
            )
        if carbons and carbons[-1] >= self.plus.carbon_number:
            raise InputError(
                f"measured SCN C{carbons[-1]} is not below the plus-fraction "
                f"C{self.plus.carbon_number}+; measured fractions come before the plus-fraction"
            )
        object.__setattr__(self, "scn", scn)

        total = self.total
        if abs(total - 1.0) > _TOTAL_TOLERANCE:
            raise InputError(
                f"mole fractions of the analysis sum to {total!r}; they must sum to 1 "
                f"(within {_TOTAL_TOLERANCE}); give fractions, not percentages"
            )

    @property
    def total(self) -> float:
        """Sum of all mole fractions as given."""
        return (
            sum(f for _, f in self.light)
            + sum(s.mole_fraction for s in self.scn)
            + self.plus.mole_fraction
        )


# ----------------------------------------------------------------------------------------------
# Output records
# ----------------------------------------------------------------------------------------------


@dataclass(frozen=True, eq=False)
class ScnTable:
    """Single carbon-number fractions of the heavy end, before lumping.

    Every array has one entry per fraction (measured SCN fractions first, then the split of the
    plus-fraction). Mole fractions are in the normalised whole-fluid basis.

    Attributes
    ----------
    name : tuple of str
        ``"C7"``, ``"C8"``... and ``"C45+"`` for the tail fraction.
    carbon_number : ndarray of int
    mole_fraction : ndarray
    mw : ndarray
        Molar mass, g/mol.
    sg : ndarray
        Specific gravity.
    tb : ndarray
        Normal boiling point, K.
    tc : ndarray
        Critical temperature, K.
    pc : ndarray
        Critical pressure, Pa.
    omega : ndarray
        Acentric factor.
    vc : ndarray
        Critical volume, m3/mol.
    measured : ndarray of bool
        True for fractions given in the analysis, False for fractions from the split.
    group : ndarray of int
        Index of the pseudo-component each fraction is lumped into (0 = lightest).
    """

    name: tuple[str, ...]
    carbon_number: NDArray[np.int_]
    mole_fraction: NDArray[np.float64]
    mw: NDArray[np.float64]
    sg: NDArray[np.float64]
    tb: NDArray[np.float64]
    tc: NDArray[np.float64]
    pc: NDArray[np.float64]
    omega: NDArray[np.float64]
    vc: NDArray[np.float64]
    measured: NDArray[np.bool_]
    group: NDArray[np.int_]

    def __len__(self) -> int:
        return len(self.name)


@dataclass(frozen=True, eq=False)
class CharacterisedFluid:
    """A characterised fluid: EOS components, composition and interaction parameters.

    Attributes
    ----------
    components : tuple of Component
        Light components in the order of the analysis, then the pseudo-components, lightest
        first.
    composition : ndarray, shape (n_components,)
        Mole fractions, summing to 1.
    kij : mapping
        Interaction parameters ``{(name_i, name_j): kij}`` for CO2, N2, H2S and C1 (when present)
        with each pseudo-component; pairs not listed are zero. Pass it straight to
        :class:`Mixture`.
    scn : ScnTable
        The SCN fractions before lumping, with their properties and pseudo-component index.
    provenance : dict
        Names of the methods used and their parameters (strings and numbers only).
    """

    components: tuple[Component, ...]
    composition: NDArray[np.float64]
    kij: Mapping[tuple[str, str], float]
    scn: ScnTable
    provenance: dict[str, object]

    @property
    def names(self) -> tuple[str, ...]:
        """Component names, in order."""
        return tuple(c.name for c in self.components)

    @property
    def n_pseudo(self) -> int:
        """Number of pseudo-components (the last ``n_pseudo`` components)."""
        return int(self.scn.group.max()) + 1

    def mixture(self, eos: str = "PR78") -> Mixture:
        """A :class:`Mixture` of these components with these interaction parameters."""
        return Mixture(self.components, eos=eos, kij=dict(self.kij))  # type: ignore[arg-type]


# ----------------------------------------------------------------------------------------------
# Entry point
# ----------------------------------------------------------------------------------------------


def characterise(
    analysis: FluidAnalysis,
    *,
    max_carbon: int = 45,
    n_pseudo: int = 4,
    correlation: CorrelationName = "kesler-lee",
    acentric: AcentricName | None = None,
    boiling_point: BoilingPointName = "soreide",
    alpha: float = 1.0,
    eta: float | None = None,
    mixing: MixingName = "mass",
    kij_constants: Mapping[str, float] | None = None,
    c1_kij_a: float = _C1_KIJ_A,
    c1_kij_b: float = _C1_KIJ_B,
) -> CharacterisedFluid:
    """Split, characterise and lump the heavy end of a fluid analysis.

    Parameters
    ----------
    analysis : FluidAnalysis
        The fluid analysis.
    max_carbon : int, default 45
        Carbon number of the last SCN fraction of the split (itself a plus-fraction).
    n_pseudo : int, default 4
        Number of pseudo-components the heavy end (measured SCN fractions and the split) is
        lumped into.
    correlation : {"kesler-lee", "riazi-daubert"}
        Critical temperature and pressure from Tb and SG: Kesler & Lee (1976) or Riazi & Daubert
        (1980).
    acentric : {"lee-kesler", "edmister"}, optional
        Acentric factor method; default Lee-Kesler with ``"kesler-lee"`` and Edmister (1958)
        with ``"riazi-daubert"``.
    boiling_point : {"soreide", "riazi-daubert"}
        Normal boiling point from M and SG: Soreide (1989) or Riazi & Daubert (1987).
    alpha : float, default 1
        Shape parameter of the gamma distribution.
    eta : float, optional
        Smallest molar mass in the plus-fraction, g/mol; default ``14 n - 6``.
    mixing : {"mass", "mole"}
        Weighting of Tc, Pc, omega and Vc within a pseudo-component: mass fractions (Pedersen et
        al. 1984) or mole fractions (Kay's rule).
    kij_constants : mapping, optional
        Constant kij of ``"N2"``, ``"CO2"``, ``"H2S"`` with every pseudo-component; default
        :data:`DEFAULT_KIJ_CONSTANTS` (0.10, 0.10, 0.05; common practice). Keys given replace the
        defaults.
    c1_kij_a, c1_kij_b : float
        ``A`` and ``B`` of the Chueh-Prausnitz form for methane / pseudo-component kij.

    Returns
    -------
    CharacterisedFluid

    Raises
    ------
    InputError
        For an unknown method name, ``n_pseudo`` out of range, or inputs the split rejects.

    Notes
    -----
    Mole fractions are first divided by their total (unless it is within 1e-12 of 1). The
    plus-fraction is split by
    :func:`~gridflash.thermo._plus_fraction.gamma_fractions` (its moles and mass are
    reproduced to rounding) and its fractions get SGs from one Watson factor matching the
    plus-fraction's SG. Boiling point, Tc, Pc, omega and Vc (Riazi & Daubert 1980) follow for
    every heavy fraction. The fractions are then lumped by :func:`equal_mass_groups`; each
    pseudo-component's molar mass is its mass over its moles, so moles and mass of the heavy end
    are preserved to rounding.

    Examples
    --------
    >>> fluid = characterise(analysis, n_pseudo=3)  # doctest: +SKIP
    >>> mixture = fluid.mixture("PR78")  # doctest: +SKIP
    """
    if correlation not in CRITICAL_METHODS:
        raise InputError(
            f"correlation={correlation!r} is not known; choose one of {', '.join(CRITICAL_METHODS)}"
        )
    acentric_name = _DEFAULT_ACENTRIC[correlation] if acentric is None else acentric
    if acentric_name not in ACENTRIC_METHODS:
        raise InputError(
            f"acentric={acentric!r} is not known; choose one of {', '.join(ACENTRIC_METHODS)}"
        )
    if boiling_point not in BOILING_POINT_METHODS:
        raise InputError(
            f"boiling_point={boiling_point!r} is not known; choose one of "
            f"{', '.join(BOILING_POINT_METHODS)}"
        )
    if mixing not in _MIXING_LABELS:
        raise InputError(f"mixing={mixing!r} is not known; choose 'mass' or 'mole'")
    constants = dict(DEFAULT_KIJ_CONSTANTS)
    for key, value in (kij_constants or {}).items():
        canonical = builtin_component(key).name
        if canonical not in constants:
            raise InputError(
                f"kij_constants key {key!r}: constants apply to N2, CO2 and H2S only; methane "
                "uses the Chueh-Prausnitz form (c1_kij_a, c1_kij_b)"
            )
        v = float(value)
        if not (np.isfinite(v) and abs(v) < 1.0):
            raise InputError(f"kij_constants[{key!r}] = {value!r}; it must be finite, |kij| < 1")
        constants[canonical] = v

    # Divide by the total only when it differs from 1 by more than rounding, so that exact input
    # fractions come out unchanged.
    total = analysis.total
    if abs(total - 1.0) <= _EXACT_TOTAL:
        total = 1.0
    plus = analysis.plus
    fractions = gamma_fractions(
        plus.carbon_number,
        plus.mole_fraction / total,
        plus.mw,
        max_carbon=max_carbon,
        alpha=alpha,
        eta=eta,
    )
    sg_split, kw = constant_watson_sg(fractions.mole_fraction, fractions.mw, plus.sg)

    measured = [s.resolved() for s in analysis.scn]
    carbon = np.concatenate(([s.carbon_number for s in analysis.scn], fractions.carbon_number))
    carbon = carbon.astype(int)
    z = np.concatenate(([s.mole_fraction / total for s in analysis.scn], fractions.mole_fraction))
    mw = np.concatenate(([m for m, _ in measured], fractions.mw))
    sg = np.concatenate(([g for _, g in measured], sg_split))
    is_measured = np.arange(carbon.size) < len(analysis.scn)
    names = tuple(f"C{n}" for n in carbon[:-1]) + (f"C{carbon[-1]}+",)

    light_names = {c.name for c, _ in analysis.light}
    clash = sorted(light_names.intersection(names))
    if clash:
        raise InputError(
            f"light component name(s) {', '.join(map(repr, clash))} clash with SCN fraction "
            "names; rename the light component"
        )

    props = _fraction_properties(mw, sg, correlation, acentric_name, boiling_point)

    n_heavy = carbon.size
    if isinstance(n_pseudo, bool) or not isinstance(n_pseudo, (int, np.integer)):
        raise InputError(f"n_pseudo={n_pseudo!r} must be an integer")
    if not 1 <= n_pseudo <= n_heavy:
        raise InputError(
            f"n_pseudo={n_pseudo!r}; it must be between 1 and {n_heavy}, the number of heavy "
            f"fractions (C{carbon[0]} ... {names[-1]}); raise max_carbon or lower n_pseudo"
        )
    group = equal_mass_groups(z * mw, int(n_pseudo))

    for arr in (carbon, z, mw, sg, is_measured, group, *props.values()):
        arr.setflags(write=False)
    table = ScnTable(
        name=names,
        carbon_number=carbon,
        mole_fraction=z,
        mw=mw,
        sg=sg,
        measured=is_measured,
        group=group,
        **props,
    )

    methods = {
        "boiling_point": BOILING_POINT_METHODS[boiling_point],
        "critical": CRITICAL_METHODS[correlation],
        "acentric": ACENTRIC_METHODS[acentric_name],
    }
    source = (
        f"gridflash plus-fraction characterisation: Whitson (1983) gamma split of "
        f"C{plus.carbon_number}+ (alpha={fractions.alpha:g}, eta={fractions.eta:g} g/mol), "
        "SG at constant "
        f"Watson Kw={kw:.4f} (Whitson 1983 Kw relation); Tb: {methods['boiling_point']}; "
        f"Tc, Pc: {methods['critical']}; omega: {methods['acentric']}; Vc: Riazi & Daubert "
        f"(1980); lumped by equal mass, {mixing}-weighted"
    )
    pseudo, pseudo_z = _lump(table, mixing, source)

    components = tuple(c for c, _ in analysis.light) + pseudo
    composition = np.concatenate(([f / total for _, f in analysis.light], pseudo_z))
    composition.setflags(write=False)

    kij = _interaction_pairs(analysis, pseudo, constants, c1_kij_a, c1_kij_b)

    provenance: dict[str, object] = {
        "method": "plus-fraction characterisation",
        "plus_fraction": f"C{plus.carbon_number}+",
        "plus_mole_fraction": float(plus.mole_fraction),
        "plus_mw": float(plus.mw),
        "plus_sg": float(plus.sg),
        "input_total_mole_fraction": float(analysis.total),
        "distribution": "Whitson (1983) three-parameter gamma distribution over molar mass",
        "gamma_alpha": fractions.alpha,
        "gamma_eta": fractions.eta,
        "gamma_beta": fractions.beta,
        "scn_boundaries": (
            "SCN n spans molar masses [14n-6, 14n+8) g/mol (Whitson & Brule 2000 eta = 14n-6 "
            "rule at every carbon number); the first split fraction starts at eta"
        ),
        "max_carbon": int(max_carbon),
        "last_carbon_number": int(fractions.carbon_number[-1]),
        "tail_closure": (
            f"C{int(fractions.carbon_number[-1])}+ takes the remaining moles and mass of the "
            "plus-fraction (mass-balance closure)"
        ),
        "specific_gravity": (
            "constant Watson factor, Whitson (1983) Kw = 4.5579 M^0.15178 SG^-0.84573, matched "
            "to the plus-fraction SG at additive volumes"
        ),
        "watson_k": kw,
        "measured_scn_defaults": (
            "Katz & Firoozabadi (1978) generalised SCN molar mass and SG, extended by Whitson "
            "(1983)"
        ),
        "correlation": correlation,
        "acentric_method": acentric_name,
        "boiling_point_method": boiling_point,
        "boiling_point_source": methods["boiling_point"],
        "critical_source": methods["critical"],
        "acentric_source": methods["acentric"],
        "critical_volume_source": "Riazi & Daubert (1980) Vc from Tb and SG",
        "lumping": _LUMPING_LABEL,
        "n_pseudo": int(n_pseudo),
        "mixing": mixing,
        "mixing_source": _MIXING_LABELS[mixing],
        "kij_c1": (
            f"Chueh & Prausnitz (1967) form, A={c1_kij_a:g}, B={c1_kij_b:g} (common practice)"
        ),
        "kij_constants": ", ".join(f"{k}={v:g}" for k, v in constants.items())
        + " with every pseudo-component (common practice)",
    }
    return CharacterisedFluid(
        components=components,
        composition=composition,
        kij=MappingProxyType(kij),
        scn=table,
        provenance=provenance,
    )


# ----------------------------------------------------------------------------------------------
# Steps
# ----------------------------------------------------------------------------------------------


def _fraction_properties(
    mw: NDArray[np.float64],
    sg: NDArray[np.float64],
    correlation: str,
    acentric: str,
    boiling_point: str,
) -> dict[str, NDArray[np.float64]]:
    if boiling_point == "soreide":
        tb = soreide_boiling_point(mw, sg)
    else:
        tb = riazi_daubert_1987_boiling_point(mw, sg)
    if correlation == "kesler-lee":
        tc, pc = kesler_lee_critical(tb, sg)
    else:
        tc, pc = riazi_daubert_critical(tb, sg)
    if acentric == "lee-kesler":
        omega = lee_kesler_acentric(tb, tc, pc, sg)
    else:
        omega = edmister_acentric(tb, tc, pc)
    vc = riazi_daubert_critical_volume(tb, sg)
    return {"tb": tb, "tc": tc, "pc": pc, "omega": omega, "vc": vc}


def equal_mass_groups(
    mass: Sequence[float] | NDArray[np.float64], n_groups: int
) -> NDArray[np.int_]:
    """Assign consecutive fractions to ``n_groups`` groups of about equal mass.

    Parameters
    ----------
    mass : array_like, shape (n,)
        Mass of each fraction (``z_i M_i``), in order of increasing molar mass.
    n_groups : int
        Number of groups, ``1 <= n_groups <= n``.

    Returns
    -------
    ndarray of int, shape (n,)
        Group index of each fraction, non-decreasing, every group non-empty.

    Notes
    -----
    Pedersen, Thomassen & Fredenslund (1984) lump C7+ fractions into groups holding about the same
    mass. Fractions are discrete, so here the boundary after group ``j`` is put after the fraction
    whose cumulative mass is closest to ``j / n_groups`` of the total, subject to every group
    keeping at least one fraction.
    """
    m = np.asarray(mass, dtype=float)
    n = m.size
    if not 1 <= n_groups <= n:
        raise InputError(f"n_groups={n_groups!r} must be between 1 and {n}")
    cumulative = np.cumsum(m)
    total = cumulative[-1]
    counts = []  # number of fractions in groups 0..j
    previous = 0
    for j in range(1, n_groups):
        lo = previous + 1
        hi = n - (n_groups - j)
        k = np.arange(lo, hi + 1)
        best = int(k[np.argmin(np.abs(cumulative[k - 1] - j * total / n_groups))])
        counts.append(best)
        previous = best
    group = np.searchsorted(np.asarray(counts, dtype=int), np.arange(n), side="right")
    return group.astype(int)


def _lump(
    table: ScnTable, mixing: str, source: str
) -> tuple[tuple[Component, ...], NDArray[np.float64]]:
    """Pseudo-components from the SCN table's groups."""
    components = []
    moles = []
    n_groups = int(table.group.max()) + 1
    last = len(table) - 1
    for g in range(n_groups):
        idx = np.flatnonzero(table.group == g)
        z = table.mole_fraction[idx]
        mass = z * table.mw[idx]
        weight = mass if mixing == "mass" else z
        weight = weight / weight.sum()
        first_c, last_c = table.carbon_number[idx[0]], table.carbon_number[idx[-1]]
        if idx[-1] == last:
            name = f"C{first_c}+"
        elif first_c == last_c:
            name = f"C{first_c}"
        else:
            name = f"C{first_c}_C{last_c}"
        z_group = float(z.sum())
        components.append(
            Component(
                name,
                tc=float(weight @ table.tc[idx]),
                pc=float(weight @ table.pc[idx]),
                omega=float(weight @ table.omega[idx]),
                mw=float(mass.sum() / z_group),
                vc=float(weight @ table.vc[idx]),
                source=source,
            )
        )
        moles.append(z_group)
    return tuple(components), np.array(moles)


def _interaction_pairs(
    analysis: FluidAnalysis,
    pseudo: tuple[Component, ...],
    constants: Mapping[str, float],
    c1_a: float,
    c1_b: float,
) -> dict[tuple[str, str], float]:
    kij: dict[tuple[str, str], float] = {}
    for comp, _ in analysis.light:
        for pc in pseudo:
            if comp.name == "C1":
                kij[(comp.name, pc.name)] = float(
                    chueh_prausnitz_kij(comp.critical_volume, pc.critical_volume, c1_a, c1_b)
                )
            elif comp.name in constants:
                kij[(comp.name, pc.name)] = float(constants[comp.name])
    return kij


# ----------------------------------------------------------------------------------------------
# Validation helpers
# ----------------------------------------------------------------------------------------------


def _check_carbon(what: str, value: object) -> None:
    if isinstance(value, bool) or not isinstance(value, (int, np.integer)):
        raise InputError(f"{what} must be an integer")
    if not 2 <= int(value) < MAX_CARBON_LIMIT:
        raise InputError(f"{what} must be between 2 and {MAX_CARBON_LIMIT - 1}")


def _check_fraction(name: str, value: object) -> None:
    if (
        isinstance(value, bool)
        or not isinstance(value, (int, float, np.floating, np.integer))
        or not np.isfinite(value)
        or not 0.0 < float(value) <= 1.0
    ):
        raise InputError(
            f"{name}: mole fraction {value!r} must be a number in (0, 1] (fractions, not "
            "percentages); leave out components that are absent"
        )


def _check_molar_mass(name: str, value: object) -> None:
    if (
        isinstance(value, bool)
        or not isinstance(value, (int, float, np.floating, np.integer))
        or not np.isfinite(value)
        or not 14.0 < float(value) < 5000.0
    ):
        raise InputError(f"{name}: molar mass {value!r} must be a number of g/mol in (14, 5000)")


def _check_sg(name: str, value: object) -> None:
    if (
        isinstance(value, bool)
        or not isinstance(value, (int, float, np.floating, np.integer))
        or not np.isfinite(value)
        or not 0.5 < float(value) < 1.5
    ):
        raise InputError(
            f"{name}: specific gravity {value!r} must be in (0.5, 1.5) (60 degF / 60 degF, "
            "relative to water)"
        )
