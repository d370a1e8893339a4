"""Default binary interaction parameters of CO2, N2, H2S and H2O, each with its source.

The table covers every pair of a non-hydrocarbon (CO2, N2, H2S, H2O) with a built-in
hydrocarbon (C1 ... nC10, iC4, iC5) and the non-hydrocarbons with each other. Pairs of two
hydrocarbons have no default: they are zero unless given (that is the usual practice with
Peng-Robinson and SRK for light hydrocarbon pairs, and it keeps the phase equilibrium of a fluid
that sets every non-hydrocarbon pair itself exactly as before the table existed).

Values are constants (no temperature dependence). They are starting points: tune them to
laboratory data of the fluid studied.

Sources (keys of :data:`REFERENCES`; the key is stored beside each value):

``knapp1982``
    H. Knapp, R. Doring, L. Oellrich, U. Plocker and J. M. Prausnitz, *Vapor-liquid equilibria for
    mixtures of low boiling substances*, DECHEMA Chemistry Data Series VI, 1982: Peng-Robinson
    interaction parameters fitted to binary VLE data. The values below are written from memory
    of that compilation (as also carried by the ChemSep Peng-Robinson interaction-parameter
    database, Kooijman & Taylor), not transcribed from the printed table.
``soreide1992``
    I. Soreide and C. H. Whitson, Peng-Robinson predictions for hydrocarbons, CO2, N2, and H2S
    with pure water and NaCl brine, Fluid Phase Equilib. 77 (1992) 217-240: the constant
    interaction parameters of the non-aqueous phase (hydrocarbons 0.4850, CO2 0.1896, N2 0.4778,
    H2S 0.19031; from memory). They apply to every hydrocarbon, built-in or pseudo-component.
``practice``
    Common practice, from memory: CO2 and N2 with the n-alkanes heavier than those of the
    compilation take the value of the nearest tabulated n-alkane (CO2 and N2 interaction
    parameters level off beyond about C7 in published Peng-Robinson tables).

The same values are used for SRK. This is itself common practice (from memory): published
tables of SRK and Peng-Robinson interaction parameters of these pairs, fitted to the same binary
data, differ by about 0.01, less than the scatter between compilations.

User pseudo-components (any component whose name is not a built-in one) are taken to be
hydrocarbons: with H2O they get the Soreide-Whitson hydrocarbon value; with CO2, N2 and H2S
no published rule is applied and the pair is left at zero (reported by :attr:`Mixture.kij_sources`
and the run summary) unless given in the configuration or by a heavy-end characterisation.
"""

from __future__ import annotations

from types import MappingProxyType

__all__ = [
    "NON_HYDROCARBONS",
    "REFERENCES",
    "default_pair",
]

#: Components that get default interaction parameters with every other component.
NON_HYDROCARBONS: tuple[str, ...] = ("CO2", "N2", "H2S", "H2O")

#: Full citation of each source key.
REFERENCES = MappingProxyType({
    "knapp1982": (
        "Knapp, Doring, Oellrich, Plocker & Prausnitz (1982), Vapor-liquid equilibria for "
        "mixtures of low boiling substances, DECHEMA Chemistry Data Series VI, Peng-Robinson "
        "table (values from memory)"
    ),
    "soreide1992": (
        "Soreide & Whitson (1992), Fluid Phase Equilib. 77, 217-240, non-aqueous-phase kij "
        "(values from memory)"
    ),
    "practice": "common practice (from memory): value of the nearest tabulated n-alkane",
})

_KNAPP = "knapp1982"
_SW = "soreide1992"
_PRACTICE = "practice"

# (component, component, kij, source key) for Peng-Robinson (PR76 and PR78).
_PR_ROWS: tuple[tuple[str, str, float, str], ...] = (
    # CO2 - hydrocarbons
    ("CO2", "C1", 0.0919, _KNAPP),
    ("CO2", "C2", 0.1322, _KNAPP),
    ("CO2", "C3", 0.1241, _KNAPP),
    ("CO2", "iC4", 0.1200, _KNAPP),
    ("CO2", "nC4", 0.1333, _KNAPP),
    ("CO2", "iC5", 0.1219, _KNAPP),
    ("CO2", "nC5", 0.1222, _KNAPP),
    ("CO2", "nC6", 0.1100, _KNAPP),
    ("CO2", "nC7", 0.1000, _KNAPP),
    ("CO2", "nC8", 0.1141, _PRACTICE),
    ("CO2", "nC9", 0.1141, _PRACTICE),
    ("CO2", "nC10", 0.1141, _KNAPP),
    # N2 - hydrocarbons
    ("N2", "C1", 0.0311, _KNAPP),
    ("N2", "C2", 0.0515, _KNAPP),
    ("N2", "C3", 0.0852, _KNAPP),
    ("N2", "iC4", 0.1033, _KNAPP),
    ("N2", "nC4", 0.0800, _KNAPP),
    ("N2", "iC5", 0.0922, _KNAPP),
    ("N2", "nC5", 0.1000, _KNAPP),
    ("N2", "nC6", 0.1496, _KNAPP),
    ("N2", "nC7", 0.1441, _KNAPP),
    ("N2", "nC8", 0.1441, _PRACTICE),
    ("N2", "nC9", 0.1441, _PRACTICE),
    ("N2", "nC10", 0.1100, _KNAPP),
    # H2S - hydrocarbons
    ("H2S", "C1", 0.0850, _KNAPP),
    ("H2S", "C2", 0.0840, _KNAPP),
    ("H2S", "C3", 0.0750, _KNAPP),
    ("H2S", "iC4", 0.0500, _KNAPP),
    ("H2S", "nC4", 0.0600, _KNAPP),
    ("H2S", "iC5", 0.0600, _KNAPP),
    ("H2S", "nC5", 0.0650, _KNAPP),
    ("H2S", "nC6", 0.0600, _KNAPP),
    ("H2S", "nC7", 0.0600, _KNAPP),
    ("H2S", "nC8", 0.0600, _PRACTICE),
    ("H2S", "nC9", 0.0600, _PRACTICE),
    ("H2S", "nC10", 0.0333, _KNAPP),
    # non-hydrocarbons with each other
    ("N2", "CO2", -0.0170, _KNAPP),
    ("N2", "H2S", 0.1767, _KNAPP),
    ("CO2", "H2S", 0.0974, _KNAPP),
    ("H2O", "CO2", 0.1896, _SW),
    ("H2O", "N2", 0.4778, _SW),
    ("H2O", "H2S", 0.19031, _SW),
)

#: Water with any hydrocarbon (built-in or pseudo-component), Soreide & Whitson (1992).
_WATER_HYDROCARBON = (0.4850, _SW)


def _table(rows):
    out: dict[frozenset[str], tuple[float, str]] = {}
    for a, b, value, source in rows:
        key = frozenset((a, b))
        assert key not in out and len(key) == 2, (a, b)
        out[key] = (value, source)
    return MappingProxyType(out)


_TABLES = {"PR76": _table(_PR_ROWS), "PR78": _table(_PR_ROWS), "SRK": _table(_PR_ROWS)}


def default_pair(eos: str, name_a: str, name_b: str) -> tuple[float, str] | None:
    """Default ``(kij, source key)`` of a pair, or ``None`` when the table has no value for it.

    Parameters
    ----------
    eos : {"PR76", "PR78", "SRK"}
    name_a, name_b : str
        Component names: built-in shorthand (``"CO2"``, ``"nC4"``), or a user pseudo-component's
        name (taken to be a hydrocarbon).
    """
    found = _TABLES[eos].get(frozenset((name_a, name_b)))
    if found is not None:
        return found
    for water, other in ((name_a, name_b), (name_b, name_a)):
        if water == "H2O" and other not in NON_HYDROCARBONS:
            return _WATER_HYDROCARBON
    return None
