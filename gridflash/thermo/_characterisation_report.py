"""Text output of a characterised fluid: config-ready TOML and a plain-text component table.

No file I/O here: both functions return strings; the caller decides where they go.

:func:`fluid_table_toml` writes the fluid in the layout of a gridflash config (docs/config.md):
a ``[fluid]`` table whose ``components`` lists built-in components by name and every other
component as an inline table (``name``, ``tc`` + ``tc_unit = "K"``, ``pc`` + ``pc_unit = "bar"``,
``omega``, ``mw`` in g/mol, ``vc`` + ``vc_unit = "m3/mol"``, ``source``), ``kij`` in the list
form ``[["CO2", "C7_C11", 0.1], ...]``, and a ``[streams.NAME]`` table with the characterised
mole fractions. The methods used are written as comments. Floats use Python's shortest
round-trip representation, so reading the text back gives the same numbers (``pc`` is converted
from Pa to bar by one division).
"""

from __future__ import annotations

import math
from collections.abc import Mapping

from .._errors import InputError
from ._characterisation import CharacterisedFluid
from ._components import Component, builtin_component

__all__ = ["fluid_table_text", "fluid_table_toml"]

_PA_PER_BAR = 1e5


def _toml_string(text: str) -> str:
    """A TOML basic string (double-quoted, with escapes)."""
    out = ['"']
    for ch in str(text):
        if ch == "\\":
            out.append("\\\\")
        elif ch == '"':
            out.append('\\"')
        elif ch == "\n":
            out.append("\\n")
        elif ch == "\t":
            out.append("\\t")
        elif ord(ch) < 0x20 or ord(ch) == 0x7F:
            out.append(f"\\u{ord(ch):04X}")
        else:
            out.append(ch)
    out.append('"')
    return "".join(out)


def _toml_value(value: object) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int):
        return str(value)
    if isinstance(value, float):
        if not math.isfinite(value):
            return "nan" if math.isnan(value) else ("inf" if value > 0 else "-inf")
        text = repr(value)
        return text if any(c in text for c in ".en") else text + ".0"
    return _toml_string(str(value))


def fluid_table_toml(
    fluid: CharacterisedFluid,
    *,
    eos: str = "PR78",
    stream: str = "oil",
    kij: Mapping[tuple[str, str], float] | None = None,
) -> str:
    """The characterised fluid as config TOML a user can paste into a gridflash config.

    Parameters
    ----------
    fluid : CharacterisedFluid
        Result of :func:`~gridflash.thermo.characterise`.
    eos : str
        Written as ``fluid.eos``.
    stream : str
        Name of the ``[streams.NAME]`` table that receives the composition.
    kij : mapping, optional
        Interaction pairs to write (e.g. the characterisation's merged with pairs among light
        components); default ``fluid.kij``.

    Returns
    -------
    str
        ``[fluid]`` (eos, components, kij) and ``[streams.<stream>]`` (mole_fractions); see the
        module docstring.
    """
    lines = ["# Fluid characterised by gridflash; methods:"]
    for key, value in fluid.provenance.items():
        lines.append(f"#   {key}: {value}")
    lines += ["", "[fluid]", f"eos = {_toml_string(eos)}", "components = ["]
    for comp in fluid.components:
        if _is_builtin(comp):
            lines.append(f"    {_toml_string(comp.name)},")
            continue
        fields = [
            f"name = {_toml_string(comp.name)}",
            f"tc = {_toml_value(float(comp.tc))}",
            'tc_unit = "K"',
            f"pc = {_toml_value(float(comp.pc) / _PA_PER_BAR)}",
            'pc_unit = "bar"',
            f"omega = {_toml_value(float(comp.omega))}",
            f"mw = {_toml_value(float(comp.mw))}",
            f"vc = {_toml_value(float(comp.critical_volume))}",
            'vc_unit = "m3/mol"',
            f"source = {_toml_string(comp.source)}",
        ]
        lines.append("    { " + ", ".join(fields) + " },")
    lines.append("]")
    lines.append("kij = [")
    for (name_i, name_j), value in (fluid.kij if kij is None else kij).items():
        lines.append(
            f"    [{_toml_string(name_i)}, {_toml_string(name_j)}, {_toml_value(float(value))}],"
        )
    lines += ["]", "", f"[streams.{_toml_string(stream)}]", "mole_fractions = {"]
    entries = [
        f"{_toml_string(comp.name)} = {_toml_value(float(z))}"
        for comp, z in zip(fluid.components, fluid.composition, strict=True)
    ]
    # TOML inline tables are one line long.
    lines[-1] = "mole_fractions = { " + ", ".join(entries) + " }"
    return "\n".join(lines) + "\n"


def _is_builtin(comp: Component) -> bool:
    try:
        return builtin_component(comp.name) == comp
    except InputError:
        return False


def fluid_table_text(fluid: CharacterisedFluid) -> str:
    """A fixed-width text table of the components, then the SCN fractions before lumping.

    Parameters
    ----------
    fluid : CharacterisedFluid

    Returns
    -------
    str
        Human-readable tables (component, mole fraction, Tc [K], Pc [bar], omega, M [g/mol],
        Vc [cm3/mol]; and per SCN fraction also SG, Tb [K] and its pseudo-component).
    """
    head = (
        f"{'component':<12}{'z':>10}{'Tc [K]':>10}{'Pc [bar]':>10}{'omega':>9}"
        f"{'M [g/mol]':>11}{'Vc [cm3/mol]':>14}"
    )
    rows = [head, "-" * len(head)]
    for comp, z in zip(fluid.components, fluid.composition, strict=True):
        rows.append(
            f"{comp.name:<12}{z:>10.6f}{comp.tc:>10.2f}{comp.pc / _PA_PER_BAR:>10.3f}"
            f"{comp.omega:>9.4f}{comp.mw:>11.3f}{comp.critical_volume * 1e6:>14.1f}"
        )
    scn = fluid.scn
    pseudo_names = fluid.names[len(fluid.names) - fluid.n_pseudo :]
    head2 = (
        f"{'fraction':<10}{'z':>11}{'M [g/mol]':>11}{'SG':>8}{'Tb [K]':>9}{'Tc [K]':>9}"
        f"{'Pc [bar]':>10}{'omega':>8}  {'lumped into':<12}"
    )
    rows += ["", "Single carbon-number fractions before lumping (* = measured)", head2]
    rows.append("-" * len(head2))
    for i in range(len(scn)):
        label = scn.name[i] + ("*" if scn.measured[i] else "")
        rows.append(
            f"{label:<10}{scn.mole_fraction[i]:>11.3e}{scn.mw[i]:>11.2f}{scn.sg[i]:>8.4f}"
            f"{scn.tb[i]:>9.1f}{scn.tc[i]:>9.1f}{scn.pc[i] / _PA_PER_BAR:>10.3f}"
            f"{scn.omega[i]:>8.4f}  {pseudo_names[scn.group[i]]:<12}"
        )
    return "\n".join(rows) + "\n"
