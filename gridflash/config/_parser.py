"""Read a run description (TOML) into a validated, immutable :class:`~.RunSpec`.

The key reference is ``docs/config.md``; the annotated examples are in ``configs/``. In short::

    [fluid]        eos, components (built-in names or inline pseudo-component tables), kij
    [streams.NAME] mole_fractions (table by component, or list in component order), normalise
    [pressure]     unit, and either start/stop/count or values
    [temperature]  unit, and either start/stop/count or values
    [composition]  kind = "mixing" | "simplex" | "list", streams, and the kind's own keys
    [run]          output, chunks, workers, scheduler, scheduler_address, sweep, warm_start
    [sampling]     optional: points, sequence, seed -- N samples drawn by a scrambled
                   low-discrepancy sequence over the ranges start..stop of [pressure],
                   [temperature] and [composition] instead of the full grid

Every problem raises :class:`~gridflash._errors.ConfigError` with a one-line message that starts
with the config's source, names the full dotted key and the bad value (``!r``), and says what is
allowed. Parsing writes nothing anywhere.

Fingerprint
-----------
``RunSpec.config_hash`` is the SHA-256 of :func:`canonical_json` of :func:`canonical_config`: the
validated document with defaults filled in, unit spellings and component names made canonical,
numbers as floats (integers for counts), stream fractions listed for every component, pair keys of
``kij`` in component order and the chunk lengths given (capped at the axis length). Comments,
whitespace, key order, ``10`` vs ``10.0``, ``"°C"`` vs ``"degC"`` and list vs table forms of the
same data do not change it. Keys that only say *how* or *where* to run and cannot change a stored
value -- ``run.output``, ``run.workers``, ``run.scheduler``, ``run.scheduler_address`` -- and the
``source`` label of pseudo-components are left out, so a run may be resumed with more workers or
on a cluster.
:func:`changed_keys` lists the dotted keys that differ between two canonical documents.
"""

from __future__ import annotations

import difflib
import hashlib
import json
import os
import re
from pathlib import Path
from typing import Any, NoReturn

import numpy as np

from .._errors import ConfigError, InputError
from ..thermo import EOS_NAMES, Component, Mixture, builtin_component, builtin_names
from ..thermo._mixture import KIJ_MAX, KIJ_MIN, KIJ_ZERO_REQUESTED, KIJ_ZERO_SPELLINGS, pair_key
from ._checks import (
    as_bool,
    as_float,
    as_int,
    as_list,
    as_str,
    as_table,
    bad,
    check_keys,
    choice,
    join_key,
    missing,
    one_line,
)
from ._composition import list_axis, mixing_axis, simplex_axis, simplex_size
from ._fingerprint import canonical_json, changed_keys
from ._heavy_end import HeavyEnd, parse_heavy_end
from ._spec import SEQUENCES, Axis, CompositionAxis, FluidSpec, RunOptions, RunSpec, SampleDesign
from ._toml import load_toml
from ._units import (
    PRESSURE_UNITS,
    TEMPERATURE_UNITS,
    molar_volume_to_si,
    molar_volume_unit,
    pressure_to_pa,
    pressure_unit,
    temperature_to_kelvin,
    temperature_unit,
)

__all__ = [
    "MAX_AXIS_POINTS",
    "MAX_COMPOSITION_POINTS",
    "MAX_SAMPLE_POINTS",
    "SUM_TOLERANCE",
    "canonical_config",
    "canonical_json",
    "changed_keys",
    "load_config",
    "parse_config",
]

#: Stream fractions must sum to 1 within this, unless the stream says ``normalise = true``.
SUM_TOLERANCE = 1e-6
#: Largest number of points on the pressure or temperature axis.
MAX_AXIS_POINTS = 1_000_000
#: Largest number of points on the composition axis (each point stores a feed composition).
MAX_COMPOSITION_POINTS = 100_000
#: Largest ``sampling.points`` (each sample stores its own feed composition).
MAX_SAMPLE_POINTS = 1_000_000
#: Keys of the optional ``[sampling]`` table.
_SAMPLING_KEYS = ("points", "sequence", "seed")
#: Upper bound accepted for ``run.workers``.
_MAX_WORKERS = 100_000

_TOP_KEYS = ("fluid", "streams", "pressure", "temperature", "composition", "run")
_FLUID_KEYS = ("eos", "components", "kij", "heavy_end")
_PSEUDO_REQUIRED = ("name", "tc", "tc_unit", "pc", "pc_unit", "omega", "mw")
_PSEUDO_KEYS = (*_PSEUDO_REQUIRED, "vc", "vc_unit", "zra", "volume_shift", "source")
_STREAM_KEYS = ("mole_fractions", "normalise")
_AXIS_KEYS = ("unit", "start", "stop", "count", "values")
_RANGE_KEYS = ("start", "stop", "count")
_COMPOSITION_KEYS: dict[str, tuple[str, ...]] = {
    "mixing": ("kind", "streams", "start", "stop", "count", "values"),
    "simplex": ("kind", "streams", "divisions"),
    "list": ("kind", "streams", "mole_fractions", "normalise"),
}
_RUN_KEYS = ("output", "chunks", "workers", "scheduler", "scheduler_address", "sweep", "warm_start")
#: Run keys left out of the canonical document (and so of the hash): they cannot change results.
EXECUTION_KEYS = ("output", "workers", "scheduler", "scheduler_address")
_SCHEDULERS = ("threads", "processes")
_AXIS_CONFIG_NAMES = ("pressure", "temperature", "composition")



# --------------------------------------------------------------------------------------------
# Public functions
# --------------------------------------------------------------------------------------------


def load_config(path: str | os.PathLike[str]) -> RunSpec:
    """Read and validate a TOML run description.

    Parameters
    ----------
    path : str or path-like
        The config file. A relative ``run.output`` is taken relative to its folder.

    Returns
    -------
    RunSpec
        Frozen, in SI units, with ``config_text`` the file's text and ``config_hash`` its
        fingerprint (see the module notes).

    Raises
    ------
    ConfigError
        If the file cannot be read or the config is invalid; the one-line message starts with the
        path and names the key, the value and what is allowed.
    """
    file = Path(path)
    try:
        raw = file.read_bytes()
    except OSError as exc:
        raise ConfigError(
            f"cannot read config file {str(file)!r}: {exc.strerror or exc}; give the path of an "
            "existing TOML file"
        ) from None
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        raise ConfigError(
            f"{file}: the config is not UTF-8 text (bad byte at offset {exc.start}); TOML files "
            "must be saved as UTF-8"
        ) from None
    return parse_config(text, source=str(file), base_dir=file.parent.absolute())


def parse_config(
    text: str, *, source: str = "<string>", base_dir: str | os.PathLike[str] | None = None
) -> RunSpec:
    """Validate the text of a TOML run description.

    Parameters
    ----------
    text : str
        The TOML text.
    source : str, optional
        Where the text came from, put at the start of error messages.
    base_dir : path-like, optional
        Folder a relative ``run.output`` is relative to; the current working directory if None.

    Returns
    -------
    RunSpec

    Raises
    ------
    ConfigError
        On malformed TOML (the message gives the line) or any invalid key or value (the message
        names the dotted key, the value and what is allowed).

    Examples
    --------
    ::

        spec = parse_config(Path("configs/small_test.toml").read_text(), base_dir="configs")
        spec.shape  # (5, 3, 6): pressure x temperature x mixing_ratio
    """
    spec, _ = _parse_with_source(text, source, base_dir)
    return spec


def canonical_config(text: str, *, source: str = "<string>") -> dict[str, Any]:
    """The canonical document of a config text, the basis of its ``config_hash``.

    The text is fully validated first. See the module notes for what the canonical form keeps.
    The resume check compares ``canonical_config(old_text)`` with ``canonical_config(new_text)``
    through :func:`changed_keys`.

    Raises
    ------
    ConfigError
        If the text is not a valid config.
    """
    _, canonical = _parse_with_source(text, source, None)
    return canonical


# --------------------------------------------------------------------------------------------
# The parser
# --------------------------------------------------------------------------------------------


def _parse_with_source(
    text: object, source: str, base_dir: str | os.PathLike[str] | None
) -> tuple[RunSpec, dict[str, Any]]:
    try:
        return _Parser(text, base_dir).parse()
    except ConfigError as exc:
        prefix = f"{source}: " if source else ""
        raise ConfigError(one_line(f"{prefix}{exc}")) from None


class _Parser:
    """One pass over a parsed TOML document, building the RunSpec and its canonical document."""

    def __init__(self, text: object, base_dir: str | os.PathLike[str] | None) -> None:
        self.text = text
        self.base_dir = Path(base_dir) if base_dir is not None else None
        self.canonical: dict[str, Any] = {}
        self.sampling: dict[str, Any] | None = None  # the parsed [sampling] table, if any

    # -- top level --------------------------------------------------------------------------

    def parse(self) -> tuple[RunSpec, dict[str, Any]]:
        doc = load_toml(self.text)
        self.doc = doc
        check_keys(doc, "", (*_TOP_KEYS, "sampling"))
        for key in _TOP_KEYS:
            if key not in doc:
                missing(key, f"add a [{key}] table (see docs/config.md)")
            as_table(doc[key], key, f"a [{key}] table")
        if "sampling" in doc:
            sampling = as_table(doc["sampling"], "sampling", "a [sampling] table")
            self.sampling = self._sampling(sampling)
        fluid = self._fluid(doc["fluid"])
        streams = self._streams(doc["streams"])
        pressure = self._pressure(doc["pressure"])
        temperature = self._temperature(doc["temperature"])
        composition = self._composition(doc["composition"], streams)
        design = self._design(streams, pressure, temperature, composition)
        options = self._run_options(doc["run"], pressure, temperature, composition)
        canonical = self.canonical
        text = canonical_json(canonical)
        spec = RunSpec(
            fluid=fluid,
            streams=tuple((name, tuple(z.tolist())) for name, z in streams.items()),
            pressure=pressure,
            temperature=temperature,
            composition=composition,
            run=options,
            config_text=str(self.text),
            config_hash=hashlib.sha256(text.encode("ascii")).hexdigest(),
            config_canonical=text,
            sampling=design,
            heavy_end=self.heavy,
        )
        return spec, json.loads(text)

    # -- fluid -------------------------------------------------------------------------------

    def _fluid(self, table: dict[str, Any]) -> FluidSpec:
        check_keys(table, "fluid", _FLUID_KEYS)
        eos = choice(table.get("eos", "PR78"), "fluid.eos", EOS_NAMES, fold_case=True)
        if "components" not in table:
            missing(
                "fluid.components",
                'list the components, e.g. components = ["C1", "nC4"] (see docs/config.md)',
            )
        entries = as_list(
            table["components"],
            "fluid.components",
            "a list of built-in component names and/or pseudo-component tables",
        )
        components: list[Component] = []
        canon_components: list[Any] = []
        for i, entry in enumerate(entries):
            key = f"fluid.components[{i}]"
            if isinstance(entry, str):
                comp = self._builtin(entry, key)
                canon_components.append(comp.name)
            elif isinstance(entry, dict):
                comp, canon = self._pseudo(entry, key)
                canon_components.append(canon)
            else:
                bad(
                    key,
                    entry,
                    "is neither a built-in component name nor a pseudo-component table "
                    "{ name = ..., tc = ..., tc_unit = ..., pc = ..., pc_unit = ..., omega = ..., "
                    "mw = ... }",
                )
            for j, other in enumerate(components):
                if other.name.lower() == comp.name.lower():
                    bad(
                        key,
                        entry if isinstance(entry, str) else comp.name,
                        f"is the same component as fluid.components[{j}]; list each component once",
                    )
            components.append(comp)
        written = [
            e if isinstance(e, str) else c.name for e, c in zip(entries, components, strict=True)
        ]
        self.heavy: HeavyEnd | None = None
        if "heavy_end" in table:
            # A plus-fraction characterised into pseudo-components appended to the components.
            self.heavy = parse_heavy_end(
                table["heavy_end"], tuple(components), self.doc.get("streams")
            )
            components.extend(self.heavy.pseudo_components)
            written.extend(c.name for c in self.heavy.pseudo_components)
        self.components = tuple(components)
        self.names = tuple(c.name for c in components)
        self.written = tuple(written)
        given, canon_kij = self._kij(table.get("kij"))
        pairs = {(self.names[i], self.names[j]): v for (i, j), v in given.items()}
        origin = dict.fromkeys(pairs, "fluid.kij")
        if self.heavy is not None:
            for (a, b), value in self.heavy.fluid.kij.items():
                if (a, b) in pairs or (b, a) in pairs:
                    continue  # a pair given in fluid.kij takes precedence
                pairs[(a, b)] = value
                origin[(a, b)] = "heavy-end characterisation"
        try:
            if canon_kij == KIJ_ZERO_SPELLINGS[0]:
                # No default table; the characterisation's pairs still apply.
                kij = np.zeros((len(self.names),) * 2)
                for (a, b), value in pairs.items():
                    i, j = self.names.index(a), self.names.index(b)
                    kij[i, j] = kij[j, i] = value
                mixture = Mixture(self.components, eos=eos, kij=kij)  # type: ignore[arg-type]
                sources = dict.fromkeys(mixture.kij_sources, KIJ_ZERO_REQUESTED)
            else:
                mixture = Mixture(self.components, eos=eos, kij=pairs)  # type: ignore[arg-type]
                sources = dict(mixture.kij_sources)
        except InputError as exc:
            raise ConfigError(f"fluid: {exc}") from None
        for (a, b), where in origin.items():
            key = pair_key(a, b) if pair_key(a, b) in sources else pair_key(b, a)
            sources[key] = where
        kij = mixture.kij
        self.canonical["fluid"] = {"eos": eos, "components": canon_components, "kij": canon_kij}
        if self.heavy is not None:
            self.canonical["fluid"]["heavy_end"] = self.heavy.canonical
        return FluidSpec(
            components=self.components,
            eos=eos,
            kij=tuple(map(tuple, kij.tolist())),
            kij_sources=tuple(sources.items()),
            provenance=self.heavy.provenance() if self.heavy is not None else (),
        )

    def _builtin(self, name: str, key: str) -> Component:
        try:
            return builtin_component(name)
        except InputError:
            pass
        known = list(builtin_names())
        close = difflib.get_close_matches(name, known, n=2, cutoff=0.5)
        lowered = [n for n in known if n.lower() == name.strip().lower()]
        close = lowered or close
        hint = f" (did you mean {', '.join(map(repr, close))}?)" if close else ""
        bad(
            key,
            name,
            f"is not a built-in component{hint}; built-in: {', '.join(known)}; define others "
            "as a table { name = ..., tc = ..., tc_unit = ..., pc = ..., pc_unit = ..., "
            "omega = ..., mw = ... }",
        )

    def _pseudo(self, entry: dict[str, Any], key: str) -> tuple[Component, dict[str, Any]]:
        check_keys(entry, key, _PSEUDO_KEYS)
        for field in _PSEUDO_REQUIRED:
            if field not in entry:
                missing(
                    f"{key}.{field}",
                    "a pseudo-component needs name, tc, tc_unit, pc, pc_unit, omega and mw "
                    "(mw in g/mol)",
                )
        name = as_str(entry["name"], f"{key}.name", "the pseudo-component's name")
        tc_unit = temperature_unit(entry["tc_unit"], key=f"{key}.tc_unit")
        tc = as_float(entry["tc"], f"{key}.tc", f"a critical temperature in {tc_unit}")
        tc_k = temperature_to_kelvin(tc, tc_unit, key=f"{key}.tc")
        pc_unit = pressure_unit(entry["pc_unit"], key=f"{key}.pc_unit")
        pc = as_float(entry["pc"], f"{key}.pc", f"a critical pressure in {pc_unit}")
        pc_pa = pressure_to_pa(pc, pc_unit, key=f"{key}.pc")
        omega = as_float(entry["omega"], f"{key}.omega", "an acentric factor between -1 and 3")
        mw = as_float(entry["mw"], f"{key}.mw", "a molar mass in g/mol above 0")
        if mw <= 0:
            bad(f"{key}.mw", entry["mw"], "must be above 0; give the molar mass in g/mol")
        canon: dict[str, Any] = {
            "name": name,
            "tc": tc,
            "tc_unit": tc_unit,
            "pc": pc,
            "pc_unit": pc_unit,
            "omega": omega,
            "mw": mw,
        }
        optional: dict[str, Any] = {}
        if "vc" in entry or "vc_unit" in entry:
            if "vc" not in entry:
                missing(f"{key}.vc", f"{key}.vc_unit is given without the critical volume vc")
            if "vc_unit" not in entry:
                missing(
                    f"{key}.vc_unit",
                    "give the unit of vc: m3/mol, cm3/mol or L/mol",
                )
            vc_unit = molar_volume_unit(entry["vc_unit"], key=f"{key}.vc_unit")
            vc = as_float(entry["vc"], f"{key}.vc", f"a critical volume in {vc_unit}")
            optional["vc"] = molar_volume_to_si(vc, vc_unit, key=f"{key}.vc")
            canon.update(vc=vc, vc_unit=vc_unit)
        for field in ("zra", "volume_shift"):
            if field in entry:
                optional[field] = canon[field] = as_float(entry[field], f"{key}.{field}")
        if "source" in entry:
            optional["source"] = as_str(
                entry["source"], f"{key}.source", "a note saying where the constants come from"
            )
        try:
            comp = Component(name, tc=tc_k, pc=pc_pa, omega=omega, mw=mw, **optional)
        except InputError as exc:
            field = next(
                (
                    f
                    for f in ("omega", "vc", "zra", "volume_shift", "pc", "tc", "mw")
                    if f"{f}=" in str(exc)
                ),
                None,
            )
            where = f"{key}.{field}" if field else key
            raise ConfigError(f"{where}: {exc}") from None
        return comp, canon

    def _component_index(self, name: str) -> int | None:
        if name in self.names:
            return self.names.index(name)
        lowered = name.strip().lower()
        for i, (canon, written) in enumerate(zip(self.names, self.written, strict=True)):
            if lowered in (canon.lower(), written.lower()):
                return i
        try:
            canonical = builtin_component(name).name
        except InputError:
            return None
        return self.names.index(canonical) if canonical in self.names else None

    def _unknown_component(self, key: str, name: object, context: str) -> NoReturn:
        close = (
            difflib.get_close_matches(name, self.names, n=1, cutoff=0.5)
            if isinstance(name, str)
            else []
        )
        hint = f" (did you mean {close[0]!r}?)" if close else ""
        raise ConfigError(
            f"{key}: {name!r} is not a component of fluid.components{hint}; {context} must be "
            f"one of {', '.join(self.names)}"
        )

    def _kij(self, value: object) -> tuple[dict[tuple[int, int], float], Any]:
        """The pairs a config gives ``{(i, j): kij}`` and their canonical form.

        ``kij = "zero"`` gives no pairs and the canonical form ``"zero"`` (no default table).
        """
        seen: dict[tuple[int, int], str] = {}
        given: dict[tuple[int, int], float] = {}
        pairs: list[tuple[str, object, object, object]] = []  # key, name_a, name_b, value
        if value is None:
            pass
        elif isinstance(value, str) and value.strip().lower() in KIJ_ZERO_SPELLINGS:
            return given, KIJ_ZERO_SPELLINGS[0]
        elif isinstance(value, dict):
            for pair, v in value.items():
                key = join_key("fluid.kij", pair)
                pairs.append((key, *self._split_pair(pair, key), v))
        elif isinstance(value, list):
            for i, item in enumerate(value):
                key = f"fluid.kij[{i}]"
                if (
                    not isinstance(item, list)
                    or len(item) != 3
                    or not isinstance(item[0], str)
                    or not isinstance(item[1], str)
                ):
                    bad(key, item, 'is not a pair entry; write ["CO2", "C1", 0.12]')
                pairs.append((key, item[0], item[1], item[2]))
        else:
            bad(
                "fluid.kij",
                value,
                'is neither a table of pairs ("CO2-C1" = 0.12), a list of pairs '
                '([["CO2", "C1", 0.12]]) nor "zero" (every pair zero, no default table)',
            )
        for key, a, b, v in pairs:
            idx = []
            for name in (a, b):
                i = self._component_index(name) if isinstance(name, str) else None
                if i is None:
                    self._unknown_component(key, name, "each component of a kij pair")
                idx.append(i)
            i, j = idx
            if i == j:
                bad(
                    key,
                    v,
                    f"pairs {self.names[i]!r} with itself; kij of a component with "
                    "itself is always 0, give pairs of two different components",
                )
            k = as_float(v, key, "a binary interaction parameter in [-0.5, 1)")
            if not KIJ_MIN <= k < KIJ_MAX:
                bad(key, v, f"is out of range; binary interaction parameters need "
                    f"{KIJ_MIN:g} <= kij < {KIJ_MAX:g}")
            pair_id = (min(i, j), max(i, j))
            if pair_id in seen:
                bad(
                    key,
                    v,
                    f"gives the pair again (already given by {seen[pair_id]}); give each pair once",
                )
            seen[pair_id] = key
            given[pair_id] = k
        canon = {f"{self.names[i]}-{self.names[j]}": given[(i, j)] for (i, j) in sorted(seen)}
        return given, canon

    def _split_pair(self, pair: str, key: str) -> tuple[str, str]:
        found: set[tuple[int, int]] = set()
        split: tuple[str, str] | None = None
        for m in re.finditer("-", pair):
            a, b = pair[: m.start()], pair[m.end() :]
            ia, ib = self._component_index(a), self._component_index(b)
            if ia is not None and ib is not None:
                found.add((ia, ib))
                split = (a, b)
        if not found:
            raise ConfigError(
                f"{key}: cannot read {pair!r} as two components of fluid.components joined by "
                f"'-' (components: {', '.join(self.names)}); write \"CO2-C1\" = 0.12, or use the "
                'list form kij = [["CO2", "C1", 0.12]]'
            )
        if len(found) > 1:
            raise ConfigError(
                f"{key}: {pair!r} can be split into components in more than one way; use the "
                'list form kij = [["A", "B", value]]'
            )
        assert split is not None
        return split

    # -- streams -----------------------------------------------------------------------------

    def _streams(self, table: dict[str, Any]) -> dict[str, np.ndarray]:
        if not table:
            missing(
                "streams.NAME",
                "define at least one stream, e.g. [streams.oil] mole_fractions = { C1 = 0.5, "
                "nC10 = 0.5 }",
            )
        out: dict[str, np.ndarray] = {}
        canon: dict[str, Any] = {}
        for name, stream in table.items():
            path = join_key("streams", name)
            if not name.strip():
                bad(path, name, "is not a usable stream name; name streams with a word")
            as_table(stream, path, "a stream table with mole_fractions (and optionally normalise)")
            check_keys(stream, path, _STREAM_KEYS)
            normalise = as_bool(stream.get("normalise", False), f"{path}.normalise")
            if "mole_fractions" not in stream:
                missing(
                    f"{path}.mole_fractions",
                    "give the stream's mole fractions, e.g. "
                    "mole_fractions = { C1 = 0.9, C2 = 0.1 }",
                )
            z, fractions = self._fractions(
                stream["mole_fractions"], f"{path}.mole_fractions", normalise, f"{path}.normalise"
            )
            out[name] = z
            canon[name] = {"mole_fractions": fractions, "normalise": normalise}
        self.canonical["streams"] = canon
        return out

    def _fractions(
        self, value: object, key: str, normalise: bool, normalise_key: str
    ) -> tuple[np.ndarray, dict[str, float]]:
        nc = len(self.names)
        z = np.zeros(nc)
        given: list[str | None] = [None] * nc
        upper = "a mole fraction >= 0" if normalise else "a mole fraction between 0 and 1"
        heavy_total = 0.0
        if isinstance(value, dict) and self.heavy is not None:
            # Heavy-end entries (plus-fraction, measured cuts) go to the pseudo-components.
            rest = {}
            for comp, v in value.items():
                if isinstance(comp, str) and self.heavy.is_label(comp):
                    heavy_total += self._fraction_value(v, join_key(key, comp), normalise, upper)
                else:
                    rest[comp] = v
            value = rest
        if isinstance(value, dict):
            for comp, v in value.items():
                ckey = join_key(key, comp)
                i = self._component_index(comp)
                if i is None:
                    self._unknown_component(ckey, comp, "each key of mole_fractions")
                if given[i] is not None:
                    bad(ckey, v, f"is the same component as {given[i]}; give each component once")
                given[i] = ckey
                z[i] = self._fraction_value(v, ckey, normalise, upper)
        elif isinstance(value, list):
            if len(value) != nc:
                bad(
                    key,
                    value,
                    f"has {len(value)} entries but there are {nc} components "
                    f"({', '.join(self.names)}); give one fraction per component, in order, or a "
                    "table by component name",
                )
            for i, v in enumerate(value):
                z[i] = self._fraction_value(v, f"{key}[{i}]", normalise, upper)
        else:
            bad(
                key,
                value,
                "is not a table of mole fractions by component (e.g. { C1 = 0.9, C2 = 0.1 }) "
                "nor a list with one fraction per component",
            )
        if heavy_total > 0.0:
            assert self.heavy is not None
            pseudo = slice(self.heavy.n_light, self.heavy.n_light + len(self.heavy.shares))
            if np.any(z[pseudo] > 0.0):
                bad(key, value, "gives both heavy-end entries and pseudo-component fractions; "
                    "give one or the other")
            z[pseudo] = heavy_total * self.heavy.shares
        fractions = {name: float(v) for name, v in zip(self.names, z, strict=True)}
        if normalise:
            if not np.any(z > 0.0):
                bad(key, value, "has no positive fraction; at least one component must be > 0")
            # Relative amounts of any size: scaled by the largest first, so that a sum beyond
            # the float range (e.g. 1.7e308 + 1.7e308) cannot overflow to inf.
            if not np.all(np.isfinite(z)):
                bad(key, value, "adds up to more than the largest float; give relative amounts "
                    "below 1e300")
            z = z / z.max()
        total = float(z.sum())
        if not normalise and abs(total - 1.0) > SUM_TOLERANCE:
            bad(
                key,
                value,
                f"sums to {total:.10g}, not 1 within {SUM_TOLERANCE:g}; correct the fractions or "
                f"set {normalise_key} = true to rescale them",
            )
        return z / total, fractions

    @staticmethod
    def _fraction_value(v: object, key: str, normalise: bool, what: str) -> float:
        x = as_float(v, key, what)
        if x < 0.0 or (not normalise and x > 1.0):
            bad(key, v, f"is out of range; expected {what}")
        return x

    # -- axes --------------------------------------------------------------------------------

    def _axis_numbers(
        self,
        table: dict[str, Any],
        path: str,
        what: str,
        check: Any,
    ) -> tuple[np.ndarray, dict[str, Any]]:
        """Values of an axis in the config's unit, from ``values`` or ``start/stop/count``.

        ``check(value, key)`` validates one number (and its unit conversion) and raises with the
        key named. In sampling mode the values are the ends of the sampled range.
        """
        if self.sampling is not None:
            return self._sample_range(table, path, what, check)
        if "values" in table:
            extra = [k for k in _RANGE_KEYS if k in table]
            if extra:
                raise ConfigError(
                    f"{path}.values cannot be combined with {join_key(path, extra[0])}; give "
                    "either values = [...] or start, stop and count"
                )
            items = as_list(table["values"], f"{path}.values", f"a list of values, each {what}")
            if len(items) > MAX_AXIS_POINTS:
                bad(f"{path}.values", items, f"has more than {MAX_AXIS_POINTS} values")
            numbers = [as_float(v, f"{path}.values[{i}]", what) for i, v in enumerate(items)]
            for i, v in enumerate(numbers):
                check(v, f"{path}.values[{i}]")
            for i in range(1, len(numbers)):
                if numbers[i] <= numbers[i - 1]:
                    bad(
                        f"{path}.values[{i}]",
                        items[i],
                        f"is not greater than {path}.values[{i - 1}] = {items[i - 1]!r}; axis "
                        "values must be strictly increasing (no repeats, not descending)",
                    )
            return np.array(numbers), {"values": numbers}
        for k in _RANGE_KEYS:
            if k not in table:
                missing(
                    join_key(path, k),
                    f"give {path}.start, {path}.stop and {path}.count, or {path}.values = [...]",
                )
        start = as_float(table["start"], f"{path}.start", what)
        stop = as_float(table["stop"], f"{path}.stop", what)
        count = as_int(table["count"], f"{path}.count", 1, MAX_AXIS_POINTS, "a number of points")
        check(start, f"{path}.start")
        check(stop, f"{path}.stop")
        if count == 1:
            if start != stop:
                bad(
                    f"{path}.stop",
                    table["stop"],
                    f"differs from {path}.start = {table['start']!r} but {path}.count = 1; for a "
                    f"single value set stop equal to start, or use {path}.values = [x]",
                )
            numbers = np.array([start])
        else:
            if stop <= start:
                bad(
                    f"{path}.stop",
                    table["stop"],
                    f"is not greater than {path}.start = {table['start']!r}; axes run in "
                    "increasing order (swap start and stop)",
                )
            # (start (n-1-i) + stop i) / (n-1): exact whenever the numerator is, so decimal
            # inputs give the decimal points users expect (0.6, not 0.6000000000000001).
            i = np.arange(count, dtype=float)
            numbers = (start * (count - 1 - i) + stop * i) / (count - 1)
            numbers[0], numbers[-1] = start, stop
            if not np.all(np.diff(numbers) > 0):
                bad(
                    f"{path}.count",
                    count,
                    f"is too large for the span {start!r}..{stop!r}: the points would not be "
                    "distinct numbers",
                )
        return numbers, {"start": start, "stop": stop, "count": count}

    def _pressure(self, table: dict[str, Any]) -> Axis:
        check_keys(table, "pressure", _AXIS_KEYS)
        if "unit" not in table:
            missing(
                "pressure.unit", f"give the unit of the pressures: {', '.join(PRESSURE_UNITS)}"
            )
        unit = pressure_unit(table["unit"], key="pressure.unit")

        def check(v: float, key: str) -> None:
            pressure_to_pa(v, unit, key=key)

        numbers, canon = self._axis_numbers(
            table, "pressure", f"an absolute pressure in {unit}", check
        )
        values = pressure_to_pa(numbers, unit, key="pressure.values")
        self.canonical["pressure"] = {"unit": unit, **canon}
        return Axis("pressure", tuple(np.asarray(values).tolist()), "Pa", "pressure")

    def _temperature(self, table: dict[str, Any]) -> Axis:
        check_keys(table, "temperature", _AXIS_KEYS)
        if "unit" not in table:
            missing(
                "temperature.unit",
                f"give the unit of the temperatures: {', '.join(TEMPERATURE_UNITS)}",
            )
        unit = temperature_unit(table["unit"], key="temperature.unit")

        def check(v: float, key: str) -> None:
            temperature_to_kelvin(v, unit, key=key)

        numbers, canon = self._axis_numbers(table, "temperature", f"a temperature in {unit}", check)
        values = temperature_to_kelvin(numbers, unit, key="temperature.values")
        self.canonical["temperature"] = {"unit": unit, **canon}
        return Axis("temperature", tuple(np.asarray(values).tolist()), "K", "temperature")

    # -- composition -------------------------------------------------------------------------

    def _composition(
        self, table: dict[str, Any], streams: dict[str, np.ndarray]
    ) -> CompositionAxis:
        all_keys = tuple(dict.fromkeys(k for keys in _COMPOSITION_KEYS.values() for k in keys))
        check_keys(table, "composition", all_keys)
        kinds = tuple(_COMPOSITION_KEYS)
        if "kind" not in table:
            missing("composition.kind", f"choose one of {', '.join(map(repr, kinds))}")
        kind = choice(table["kind"], "composition.kind", kinds)
        if self.sampling is not None and kind == "list":
            bad(
                "composition.kind",
                kind,
                "cannot be sampled; with [sampling] use 'mixing' (a range of mixing ratios of "
                "two streams) or 'simplex' (every mixture of three or more streams)",
            )
        for key in table:
            if key not in _COMPOSITION_KEYS[kind]:
                raise ConfigError(
                    f"{join_key('composition', key)} is not used with composition.kind = {kind!r}; "
                    f"keys for this kind: {', '.join(_COMPOSITION_KEYS[kind])}"
                )
        canon: dict[str, Any] = {"kind": kind}
        names: list[str] = []
        if "streams" in table or kind != "list":
            if "streams" not in table:
                missing("composition.streams", "list the names of the streams to combine")
            names = self._stream_names(table["streams"], streams)
            canon["streams"] = names
        if kind == "mixing":
            axis = self._mixing(table, names, streams, canon)
        elif kind == "simplex":
            axis = self._simplex(table, names, streams, canon)
        else:
            axis = self._explicit_list(table, names, streams, canon)
        self.canonical["composition"] = canon
        return axis

    def _stream_names(self, value: object, streams: dict[str, np.ndarray]) -> list[str]:
        items = as_list(value, "composition.streams", "a list of stream names")
        names: list[str] = []
        for i, name in enumerate(items):
            key = f"composition.streams[{i}]"
            if not isinstance(name, str):
                bad(key, name, "is not a stream name (a string)")
            if name not in streams:
                close = difflib.get_close_matches(name, list(streams), n=1, cutoff=0.5)
                hint = f" (did you mean {close[0]!r}?)" if close else ""
                bad(
                    key,
                    name,
                    f"is not a defined stream{hint}; defined streams: "
                    f"{', '.join(map(repr, streams))}",
                )
            if name in names:
                bad(key, name, "is listed twice; list each stream once")
            names.append(name)
        return names

    def _mixing(
        self,
        table: dict[str, Any],
        names: list[str],
        streams: dict[str, np.ndarray],
        canon: dict[str, Any],
    ) -> CompositionAxis:
        if len(names) != 2:
            bad(
                "composition.streams",
                table["streams"],
                "must name exactly two streams for kind = 'mixing' (the first at ratio 0, the "
                "second at ratio 1); use kind = 'simplex' for three or more",
            )

        def check(v: float, key: str) -> None:
            if not 0.0 <= v <= 1.0:
                bad(key, v, "is out of range; a mixing ratio is between 0 and 1")

        ratios, axis_canon = self._axis_numbers(
            table, "composition", "a mixing ratio between 0 and 1", check
        )
        if len(ratios) > MAX_COMPOSITION_POINTS:
            bad("composition.count", len(ratios), f"exceeds {MAX_COMPOSITION_POINTS} points")
        canon.update(axis_canon)
        first, second = names
        return mixing_axis(first, second, streams[first], streams[second], ratios.tolist())

    def _simplex(
        self,
        table: dict[str, Any],
        names: list[str],
        streams: dict[str, np.ndarray],
        canon: dict[str, Any],
    ) -> CompositionAxis:
        if len(names) < 3:
            bad(
                "composition.streams",
                table["streams"],
                "must name at least three streams for kind = 'simplex'; use kind = 'mixing' "
                "for two",
            )
        if self.sampling is not None:
            if "divisions" in table:
                raise ConfigError(
                    "composition.divisions is not used with [sampling]: the samples cover the "
                    "whole simplex of the streams; remove it"
                )
            # The corners (the streams themselves); the samples are drawn inside.
            return simplex_axis(names, np.array([streams[n] for n in names]), 1)
        if "divisions" not in table:
            missing(
                "composition.divisions",
                "give the number of divisions of each simplex edge (an integer >= 1)",
            )
        divisions = as_int(
            table["divisions"],
            "composition.divisions",
            1,
            MAX_COMPOSITION_POINTS,
            "a number of divisions",
        )
        size = simplex_size(len(names), divisions)
        if size > MAX_COMPOSITION_POINTS:
            bad(
                "composition.divisions",
                divisions,
                f"gives {size} simplex points over {len(names)} streams, more than "
                f"{MAX_COMPOSITION_POINTS}; use fewer divisions",
            )
        canon["divisions"] = divisions
        return simplex_axis(names, np.array([streams[n] for n in names]), divisions)

    def _explicit_list(
        self,
        table: dict[str, Any],
        names: list[str],
        streams: dict[str, np.ndarray],
        canon: dict[str, Any],
    ) -> CompositionAxis:
        has_rows = "mole_fractions" in table
        if names and has_rows:
            raise ConfigError(
                "composition.mole_fractions cannot be combined with composition.streams; give "
                "either a list of stream names or a list of compositions"
            )
        if not names and not has_rows:
            missing(
                "composition.streams",
                "for kind = 'list' give composition.streams = [names of streams] or "
                "composition.mole_fractions = [compositions]",
            )
        if names:
            if "normalise" in table:
                raise ConfigError(
                    "composition.normalise applies only to composition.mole_fractions; set "
                    "normalise in each stream's own table instead"
                )
            return list_axis(np.array([streams[n] for n in names]), names)
        normalise = as_bool(table.get("normalise", False), "composition.normalise")
        rows = as_list(
            table["mole_fractions"], "composition.mole_fractions", "a list of compositions"
        )
        if len(rows) > MAX_COMPOSITION_POINTS:
            bad("composition.mole_fractions", rows, f"has more than {MAX_COMPOSITION_POINTS} rows")
        feeds = []
        canon_rows = []
        for i, row in enumerate(rows):
            z, fractions = self._fractions(
                row, f"composition.mole_fractions[{i}]", normalise, "composition.normalise"
            )
            feeds.append(z)
            canon_rows.append(fractions)
        canon.update(mole_fractions=canon_rows, normalise=normalise)
        return list_axis(np.array(feeds))

    # -- run options -------------------------------------------------------------------------

    def _run_options(
        self,
        table: dict[str, Any],
        pressure: Axis,
        temperature: Axis,
        composition: CompositionAxis,
    ) -> RunOptions:
        check_keys(table, "run", _RUN_KEYS)
        if "output" not in table:
            missing("run.output", 'give the path of the zarr store to write, e.g. "out.zarr"')
        output = as_str(table["output"], "run.output", "a path for the zarr store")
        output = Path(output).expanduser()
        if not output.is_absolute():
            base = self.base_dir if self.base_dir is not None else Path.cwd()
            # lexically normalised, so "../out/x.zarr" is shown as ".../out/x.zarr"
            output = Path(os.path.normpath(base.absolute() / output))
        if self.sampling is not None:
            sweep_dim, chunks = self._sample_run(table)
        else:
            dims = ("pressure", "temperature", composition.name)
            lengths = {
                "pressure": len(pressure),
                "temperature": len(temperature),
                composition.name: len(composition),
            }
            sweep_choices = tuple(dict.fromkeys((*_AXIS_CONFIG_NAMES, composition.name)))
            sweep = choice(table.get("sweep", "pressure"), "run.sweep", sweep_choices)
            sweep_dim = composition.name if sweep == "composition" else sweep
            chunks = self._chunks(table.get("chunks", {}), dims, lengths)
        workers = None
        if "workers" in table:
            workers = as_int(
                table["workers"], "run.workers", 1, _MAX_WORKERS, "a number of workers"
            )
        scheduler = choice(table.get("scheduler", "threads"), "run.scheduler", _SCHEDULERS)
        address = None
        if "scheduler_address" in table:
            address = as_str(
                table["scheduler_address"],
                "run.scheduler_address",
                'the address of a dask.distributed scheduler, e.g. "tcp://10.0.0.5:8786"',
            )
            if any(ch.isspace() for ch in address):
                bad(
                    "run.scheduler_address",
                    address,
                    'contains whitespace; give an address such as "tcp://10.0.0.5:8786"',
                )
        warm_start = as_bool(table.get("warm_start", True), "run.warm_start")
        self.canonical["run"] = {
            "chunks": {("composition" if d == composition.name else d): n for d, n in chunks},
            "sweep": "composition" if sweep_dim == composition.name else sweep_dim,
            "warm_start": warm_start,
        }
        return RunOptions(
            output=output,
            chunks=chunks,
            sweep=sweep_dim,
            workers=workers,
            scheduler=scheduler,  # type: ignore[arg-type]
            scheduler_address=address,
            warm_start=warm_start,
        )

    # -- sampling mode -----------------------------------------------------------------------

    def _sampling(self, table: dict[str, Any]) -> dict[str, Any]:
        check_keys(table, "sampling", _SAMPLING_KEYS)
        if "points" not in table:
            missing(
                "sampling.points",
                f"give the number of samples to draw (an integer 1 to {MAX_SAMPLE_POINTS})",
            )
        points = as_int(table["points"], "sampling.points", 1, MAX_SAMPLE_POINTS,
                      "a number of samples")
        sequence = choice(table.get("sequence", "sobol"), "sampling.sequence", SEQUENCES,
                           fold_case=True)
        if "seed" not in table:
            missing(
                "sampling.seed",
                "give an integer >= 0 that seeds the scrambling (the same seed always draws "
                "the same samples)",
            )
        seed = as_int(table["seed"], "sampling.seed", 0, None, "a seed for the scrambling")
        out = {"points": points, "sequence": sequence, "seed": seed}
        self.canonical["sampling"] = dict(out)
        return out

    def _sample_range(
        self, table: dict[str, Any], path: str, what: str, check: Any
    ) -> tuple[np.ndarray, dict[str, Any]]:
        for key in ("count", "values"):
            if key in table:
                raise ConfigError(
                    f"{join_key(path, key)} is not used with [sampling]: give the sampled range as "
                    f"{path}.start and {path}.stop (the number of samples is sampling.points)"
                )
        for key in ("start", "stop"):
            if key not in table:
                missing(
                    join_key(path, key),
                    f"with [sampling] give the sampled range as {path}.start and {path}.stop",
                )
        start = as_float(table["start"], f"{path}.start", what)
        stop = as_float(table["stop"], f"{path}.stop", what)
        check(start, f"{path}.start")
        check(stop, f"{path}.stop")
        if stop < start:
            bad(
                f"{path}.stop",
                table["stop"],
                f"is less than {path}.start = {table['start']!r}; give the sampled range in "
                "increasing order (stop = start fixes the value)",
            )
        return np.array([start, stop]), {"start": start, "stop": stop}

    def _design(
        self,
        streams: dict[str, np.ndarray],
        pressure: Axis,
        temperature: Axis,
        composition: CompositionAxis,
    ) -> SampleDesign | None:
        if self.sampling is None:
            return None
        mixing = composition.name == "mixing_ratio"
        return SampleDesign(
            points=self.sampling["points"],
            sequence=self.sampling["sequence"],
            seed=self.sampling["seed"],
            pressure=(pressure.values[0], pressure.values[-1]),
            temperature=(temperature.values[0], temperature.values[-1]),
            composition="mixing" if mixing else "simplex",
            streams=composition.streams,
            stream_compositions=tuple(
                tuple(float(v) for v in streams[name]) for name in composition.streams
            ),
            mixing_ratio=(
                (composition.values[0], composition.values[-1]) if mixing else (0.0, 1.0)
            ),
        )

    def _sample_run(self, table: dict[str, Any]) -> tuple[str, tuple[tuple[str, int], ...]]:
        assert self.sampling is not None
        if "sweep" in table:
            raise ConfigError(
                "run.sweep is not used with [sampling]: each sample is warm-started from the "
                "nearest sample computed before it in its chunk (see docs/config.md); remove it"
            )
        value = table.get("chunks", {})
        chunks = as_table(value, "run.chunks", "a table of chunk lengths, e.g. { sample = 4096 }")
        for key in chunks:
            if key != "sample":
                raise ConfigError(
                    f"{join_key('run.chunks', str(key))} is not a dimension of a sampling run; its "
                    "one dimension is sample: give run.chunks.sample (samples per chunk)"
                )
        if "sample" not in chunks:
            return "sample", ()
        n = as_int(chunks["sample"], "run.chunks.sample", 1, None, "a chunk length in samples")
        return "sample", (("sample", min(n, self.sampling["points"])),)

    def _chunks(
        self,
        value: object,
        dims: tuple[str, str, str],
        lengths: dict[str, int],
    ) -> tuple[tuple[str, int], ...]:
        table = as_table(value, "run.chunks", "a table of chunk lengths, e.g. { pressure = 10 }")
        allowed = tuple(dict.fromkeys((*_AXIS_CONFIG_NAMES, dims[2])))
        check_keys(table, "run.chunks", allowed)
        if "composition" in table and dims[2] in table:
            raise ConfigError(
                f"run.chunks.composition and run.chunks.{dims[2]} name the same dimension; "
                "give one of them"
            )
        given: dict[str, int] = {}
        for key, v in table.items():
            dim = dims[2] if key == "composition" else key
            n = as_int(v, join_key("run.chunks", key), 1, None, "a chunk length in grid points")
            given[dim] = min(n, lengths[dim])
        # Only the dimensions the config gives: the chunk plan (gridflash.plan._chunks) chooses the
        # others, so the default policy lives in one place.
        return tuple((d, given[d]) for d in dims if d in given)
