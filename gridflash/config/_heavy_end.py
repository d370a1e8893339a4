"""``[fluid.heavy_end]`` of a config: a plus-fraction characterised into pseudo-components.

One stream (``stream``) carries the laboratory analysis: its ``mole_fractions`` give the light
components of ``fluid.components`` by name, optionally measured single carbon-number cuts as
``"C7"``, ``"C8"``, ... (described in ``measured``), and the plus-fraction under ``name``
(e.g. ``"C7+"``). :func:`gridflash.thermo.characterise` splits, characterises and lumps that heavy
end; the resulting pseudo-components are appended to the fluid's components and their
interaction parameters with CO2, N2, H2S and methane are added to ``fluid.kij`` (pairs given in
``fluid.kij`` take precedence).

Every stream may name the heavy-end entries (plus-fraction and measured cuts); their total is
spread over the pseudo-components in the proportions of the analysed stream. The analysed stream
gets the characterised composition exactly.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from .._errors import ConfigError, InputError
from ..thermo import CharacterisedFluid, Component, FluidAnalysis, PlusFraction, ScnFraction
from ..thermo import characterise as _characterise
from ._checks import as_float, as_int, bad, check_keys

__all__ = ["HEAVY_END_KEYS", "HeavyEnd", "parse_heavy_end"]

HEAVY_END_KEYS = (
    "stream",
    "name",
    "carbon_number",
    "molar_mass",
    "specific_gravity",
    "max_carbon_number",
    "pseudo_components",
    "correlation",
    "measured",
)
_MEASURED_KEYS = ("carbon_number", "molar_mass", "specific_gravity")
_CORRELATIONS = ("kesler-lee", "riazi-daubert")


@dataclass(frozen=True, eq=False)
class HeavyEnd:
    """A parsed and characterised heavy end."""

    stream: str
    labels: tuple[str, ...]  # names of the heavy-end entries in stream fractions (cuts, plus)
    fluid: CharacterisedFluid
    n_light: int
    canonical: dict[str, Any]

    @property
    def pseudo_components(self) -> tuple[Component, ...]:
        return self.fluid.components[self.n_light :]

    @property
    def shares(self) -> np.ndarray:
        """Mole shares of the pseudo-components within the heavy end (sum 1)."""
        heavy = np.asarray(self.fluid.composition[self.n_light :], dtype=float)
        return heavy / heavy.sum()

    def is_label(self, name: str) -> bool:
        return name.strip().lower() in (label.lower() for label in self.labels)

    def provenance(self) -> tuple[tuple[str, str], ...]:
        items = {
            "heavy_end.stream": self.stream,
            **{f"heavy_end.{k}": str(v) for k, v in self.fluid.provenance.items()},
        }
        return tuple(sorted(items.items()))


def parse_heavy_end(
    table: object,
    light: tuple[Component, ...],
    raw_streams: object,
) -> HeavyEnd:
    """Validate ``[fluid.heavy_end]`` and characterise the analysed stream's heavy end.

    Parameters
    ----------
    table : object
        The ``fluid.heavy_end`` value from the TOML document.
    light : tuple of Component
        The components listed in ``fluid.components``.
    raw_streams : object
        The ``streams`` value from the TOML document (read for the analysed stream).

    Raises
    ------
    ConfigError
        One line naming the key, the value and what is allowed.
    """
    path = "fluid.heavy_end"
    if not isinstance(table, dict):
        bad(path, table, "is not a table; write [fluid.heavy_end] with stream, name, ...")
    check_keys(table, path, HEAVY_END_KEYS)
    for key in ("stream", "name", "carbon_number", "molar_mass", "specific_gravity"):
        if key not in table:
            raise ConfigError(
                f"{path}.{key} is missing; a heavy end needs stream, name, carbon_number, "
                "molar_mass (g/mol) and specific_gravity (see docs/config.md)"
            )
    stream = table["stream"]
    if (
        not isinstance(stream, str)
        or not isinstance(raw_streams, dict)
        or stream not in raw_streams
    ):
        known = ", ".join(raw_streams) if isinstance(raw_streams, dict) else "none"
        bad(f"{path}.stream", stream, f"is not a stream of [streams] (streams: {known})")
    name = table["name"]
    if not isinstance(name, str) or not name.strip():
        bad(f"{path}.name", name, 'is not a label such as "C7+"')
    light_names = {c.name.lower() for c in light}
    if name.strip().lower() in light_names:
        bad(f"{path}.name", name, "is also a name in fluid.components; pick another label")
    n_plus = as_int(
        table["carbon_number"],
        f"{path}.carbon_number",
        6,
        44,
        "the carbon number where the plus-fraction starts",
    )
    mw = as_float(table["molar_mass"], f"{path}.molar_mass", "a molar mass in g/mol")
    sg = as_float(
        table["specific_gravity"],
        f"{path}.specific_gravity",
        "a specific gravity (60 degF / 60 degF)",
    )
    max_c = as_int(
        table.get("max_carbon_number", 45),
        f"{path}.max_carbon_number",
        n_plus + 1,
        200,
        "the carbon number of the last split fraction",
    )
    n_pseudo = as_int(
        table.get("pseudo_components", 4),
        f"{path}.pseudo_components",
        1,
        20,
        "a number of pseudo-components",
    )
    correlation = table.get("correlation", "kesler-lee")
    if correlation not in _CORRELATIONS:
        bad(
            f"{path}.correlation",
            correlation,
            f"is not one of {', '.join(map(repr, _CORRELATIONS))}",
        )
    measured_raw = table.get("measured", [])
    if not isinstance(measured_raw, list):
        bad(
            f"{path}.measured",
            measured_raw,
            "is not a list of { carbon_number = ..., molar_mass = ..., "
            "specific_gravity = ... } tables",
        )
    measured: list[dict[str, Any]] = []
    for i, cut in enumerate(measured_raw):
        key = f"{path}.measured[{i}]"
        if not isinstance(cut, dict):
            bad(key, cut, "is not a { carbon_number = ..., ... } table")
        check_keys(cut, key, _MEASURED_KEYS)
        if "carbon_number" not in cut:
            raise ConfigError(f"{key}.carbon_number is missing; name the cut's carbon number")
        n = as_int(
            cut["carbon_number"],
            f"{key}.carbon_number",
            6,
            n_plus - 1,
            "a carbon number below the plus-fraction's",
        )
        entry: dict[str, Any] = {"carbon_number": n}
        if "molar_mass" in cut:
            entry["molar_mass"] = as_float(
                cut["molar_mass"], f"{key}.molar_mass", "a molar mass in g/mol"
            )
        if "specific_gravity" in cut:
            entry["specific_gravity"] = as_float(
                cut["specific_gravity"], f"{key}.specific_gravity", "a specific gravity"
            )
        measured.append(entry)
    labels = (*(f"C{m['carbon_number']}" for m in measured), name.strip())

    # The analysed stream's fractions, by light component and heavy-end label.
    skey = f"streams.{stream}.mole_fractions"
    raw = raw_streams[stream]
    fractions = raw.get("mole_fractions") if isinstance(raw, dict) else None
    if not isinstance(fractions, dict):
        bad(
            skey,
            fractions,
            "must be a table by name (light components and "
            f"{', '.join(map(repr, labels))}) for the stream named by {path}.stream",
        )
    lowered = {k.strip().lower(): v for k, v in fractions.items() if isinstance(k, str)}
    if name.strip().lower() not in lowered:
        raise ConfigError(
            f"{skey} has no {name!r} entry; the analysed stream must give the plus-fraction's "
            f"mole fraction under {path}.name"
        )

    def frac(label: str) -> float:
        v = lowered.get(label.lower(), 0.0)
        return as_float(v, f"{skey}.{label}", "a mole fraction")

    total = sum(as_float(v, f"{skey}.{k}", "a mole fraction") for k, v in fractions.items())
    scale = total if (isinstance(raw, dict) and raw.get("normalise") is True) else 1.0
    light_pairs = []
    for comp in light:
        v = 0.0
        for k, val in fractions.items():
            if k.strip().lower() == comp.name.lower():
                v = as_float(val, f"{skey}.{k}", "a mole fraction")
        light_pairs.append((comp, v / scale))
    try:
        scn = tuple(
            ScnFraction(
                m["carbon_number"],
                frac(f"C{m['carbon_number']}") / scale,
                mw=m.get("molar_mass"),
                sg=m.get("specific_gravity"),
            )
            for m in measured
        )
        analysis = FluidAnalysis(
            light=tuple(light_pairs),
            plus=PlusFraction(n_plus, frac(name.strip()) / scale, mw=mw, sg=sg),
            scn=scn,
        )
        fluid = _characterise(
            analysis, max_carbon=max_c, n_pseudo=n_pseudo, correlation=correlation
        )
    except InputError as exc:
        raise ConfigError(f"{path}: {exc}") from None
    canonical = {
        "stream": stream,
        "name": name.strip(),
        "carbon_number": n_plus,
        "molar_mass": mw,
        "specific_gravity": sg,
        "max_carbon_number": max_c,
        "pseudo_components": n_pseudo,
        "correlation": correlation,
        "measured": measured,
    }
    return HeavyEnd(
        stream=stream, labels=labels, fluid=fluid, n_light=len(light), canonical=canonical
    )
