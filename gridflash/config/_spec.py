"""The validated, immutable description of a run, in SI units.

``gridflash.load_config`` builds a :class:`RunSpec` from a TOML file; everything
downstream (grid, runner, store) sees only these frozen records, never a unit string from a config.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from .._types import SchedulerKind
from ..thermo import Component, Mixture
from ..thermo._mixture import KIJ_ZERO_NO_DEFAULT

#: The scrambled low-discrepancy sequences a sampling run may use.
SEQUENCES: tuple[str, ...] = ("sobol", "halton")

__all__ = [
    "SEQUENCES",
    "Axis",
    "CompositionAxis",
    "FluidSpec",
    "RunOptions",
    "RunSpec",
    "SampleDesign",
]


@dataclass(frozen=True)
class FluidSpec:
    """Components, EOS and interaction matrix of the fluid."""

    components: tuple[Component, ...]
    eos: str
    kij: tuple[tuple[float, ...], ...]
    #: Where each pair's kij came from, as ("A-B", source) in component order: a source key of
    #: the default table (see ``gridflash.thermo._interaction_data``), "fluid.kij",
    #: "heavy-end characterisation" or a "zero: ..." label.
    kij_sources: tuple[tuple[str, str], ...] = ()
    #: Methods behind derived components (e.g. a characterised plus-fraction), as (key, text).
    provenance: tuple[tuple[str, str], ...] = ()

    def mixture(self) -> Mixture:
        return Mixture(self.components, eos=self.eos, kij=np.array(self.kij))  # type: ignore[arg-type]

    @property
    def names(self) -> tuple[str, ...]:
        return tuple(c.name for c in self.components)

    @property
    def zero_default_pairs(self) -> tuple[str, ...]:
        """Pairs with CO2, N2, H2S or H2O left at zero for want of a default value."""
        return tuple(pair for pair, source in self.kij_sources if source == KIJ_ZERO_NO_DEFAULT)


@dataclass(frozen=True)
class Axis:
    """One grid axis with its coordinate values in SI units."""

    name: str  # dimension name in the store: "pressure" or "temperature"
    values: tuple[float, ...]
    units: str  # "Pa" or "K"
    long_name: str

    def __len__(self) -> int:
        return len(self.values)


@dataclass(frozen=True)
class CompositionAxis:
    """The composition axis of the grid.

    ``name`` is ``"mixing_ratio"`` when two streams are mixed (``values`` are the molar fractions
    of the second stream, 0 = all first stream) and ``"mixture"`` for a simplex over three or more
    streams or an explicit list of compositions (``values`` are then 0, 1, 2, ...).
    """

    name: str
    values: tuple[float, ...]
    units: str  # "1"
    long_name: str
    streams: tuple[str, ...]  # streams mixed; () for an explicit list of compositions
    stream_fractions: tuple[tuple[float, ...], ...]  # (n_points, n_streams) molar fractions
    feeds: tuple[tuple[float, ...], ...]  # (n_points, n_components) feed mole fractions

    def __len__(self) -> int:
        return len(self.values)

    def feed_array(self) -> np.ndarray:
        return np.array(self.feeds, dtype=float)


@dataclass(frozen=True)
class RunOptions:
    """How to run: where to write, chunking, workers, scheduler, warm starts."""

    output: Path
    chunks: tuple[tuple[str, int], ...]  # (dimension name, chunk length) for every grid dimension
    sweep: str  # dimension swept slab by slab inside a chunk, each slab warm-started
    workers: int | None = None  # None: all cores
    scheduler: SchedulerKind = "threads"
    scheduler_address: str | None = None
    warm_start: bool = True


@dataclass(frozen=True)
class SampleDesign:
    """Sampling mode: ``points`` cells drawn by a scrambled low-discrepancy sequence.

    Built from the config's ``[sampling]`` table and the ranges of ``[pressure]``,
    ``[temperature]`` and ``[composition]``; ``gridflash.plan.sample_inputs`` turns a
    range of sample indices into cell inputs (the mapping is documented there).
    """

    points: int
    sequence: str  # "sobol" or "halton", both scrambled
    seed: int
    pressure: tuple[float, float]  # Pa, (start, stop) of the sampled range
    temperature: tuple[float, float]  # K
    composition: str  # "mixing" (ratio between two streams) or "simplex" (three or more)
    streams: tuple[str, ...]
    stream_compositions: tuple[tuple[float, ...], ...]  # (n_streams, n_components)
    mixing_ratio: tuple[float, float] = (0.0, 1.0)  # range of the second stream's share

    @property
    def dimension(self) -> int:
        """Dimension of the unit cube the sequence fills (pressure, temperature, composition)."""
        return 3 if self.composition == "mixing" else 1 + len(self.streams)


@dataclass(frozen=True)
class RunSpec:
    """A whole validated run description."""

    fluid: FluidSpec
    streams: tuple[tuple[str, tuple[float, ...]], ...]  # (name, mole fractions per component)
    pressure: Axis
    temperature: Axis
    composition: CompositionAxis
    run: RunOptions
    config_text: str = field(repr=False)
    config_hash: str = ""
    #: The canonical document as compact JSON (``config_hash`` is its SHA-256); stored at creation
    #: so that a resume lists the changed keys without parsing the old config text again.
    config_canonical: str = field(default="", repr=False)
    #: Sampling mode (the config has ``[sampling]``): the cells are the design's samples, the
    #: three axes above hold only the ends of the sampled ranges (and the simplex corners), and
    #: the store has the single dimension ``sample``.
    sampling: SampleDesign | None = None
    #: The characterised plus-fraction (``_heavy_end.HeavyEnd``) when the config has
    #: ``[fluid.heavy_end]``; its pseudo-components are already in ``fluid``.
    heavy_end: object | None = field(default=None, repr=False, compare=False)

    @property
    def dims(self) -> tuple[str, ...]:
        """Grid dimensions in store order (``("sample",)`` in sampling mode)."""
        if self.sampling is not None:
            return ("sample",)
        return ("pressure", "temperature", self.composition.name)

    @property
    def shape(self) -> tuple[int, ...]:
        if self.sampling is not None:
            return (self.sampling.points,)
        return (len(self.pressure), len(self.temperature), len(self.composition))
