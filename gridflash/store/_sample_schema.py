"""Coordinates and provenance of a sampling run's store (the per-cell variables are shared).

A sample store has the single cell dimension ``sample`` (the index of the sample in the
sequence) in place of ``pressure x temperature x composition``. The inputs of every sample are
coordinates along it -- ``pressure(sample)``, ``temperature(sample)`` and, for a mixing design,
``mixing_ratio(sample)`` -- and ``feed_composition(sample, component)`` and
``stream_fraction(sample, stream)`` are data variables, as in a grid store. Everything else
(per-cell results, completion marks, root attributes) is the grid store's schema with
``sample`` as the only grid dimension; ``gridflash.store._schema`` builds it.
"""

from __future__ import annotations

import json
from typing import Any

import numpy as np

from ..config import RunSpec
from ..plan import SAMPLE_DIM, ChunkPlan, sample_inputs

__all__ = ["SAMPLE_MAPPING", "sample_coordinates"]

#: How unit-cube points become inputs, recorded in the store's ``sample_mapping`` attribute.
SAMPLE_MAPPING = (
    "sample i is point i of the scrambled sequence in the unit cube; coordinate 0 -> pressure "
    "and coordinate 1 -> temperature, linearly over their ranges; mixing: coordinate 2 -> "
    "mixing ratio, linearly over its range; simplex of n streams: coordinates 2..n sorted, "
    "stream fractions = spacings (s1, s2 - s1, ..., 1 - s(n-1))"
)


def sample_coordinates(
    spec: RunSpec, plan: ChunkPlan, compressors: tuple[Any, ...] = ()
) -> tuple[dict[str, Any], dict[str, Any], dict[str, dict[str, Any]], dict[str, Any]]:
    """Coordinates, input variables, their encoding and root attributes of a sample store.

    Parameters
    ----------
    spec : RunSpec
        A run with ``spec.sampling`` set.
    plan : ChunkPlan
        Its one-dimensional chunk plan; inputs along ``sample`` are chunked like the results.
    compressors : tuple, optional
        Zarr compressors for the arrays along ``sample``.

    Returns
    -------
    coords, data : dict
        ``name -> (dims, values, attrs)`` as :class:`xarray.Dataset` takes them.
    encoding : dict
        Zarr encoding of the arrays along ``sample``.
    attrs : dict
        Root attributes describing the design.
    """
    design = spec.sampling
    if design is None:
        raise ValueError("sample_coordinates needs a sampling run (spec.sampling is None)")
    inputs = sample_inputs(design, 0, design.points)
    chunk = plan.chunks[0]
    strings = np.array(list(spec.fluid.names), dtype=object)
    coords: dict[str, Any] = {
        SAMPLE_DIM: (SAMPLE_DIM, inputs.index, {
            "units": "1",
            "long_name": f"index of the sample in the scrambled {design.sequence} sequence "
            f"(seed {design.seed})"}),
        "pressure": (SAMPLE_DIM, inputs.pressure,
                     {"units": "Pa", "long_name": "pressure (absolute)"}),
        "temperature": (SAMPLE_DIM, inputs.temperature,
                        {"units": "K", "long_name": "temperature"}),
        "component": ("component", strings, {"long_name": "component name"}),
        "stream": ("stream", np.array(list(design.streams), dtype=object),
                   {"long_name": "stream name"}),
    }
    if inputs.mixing_ratio is not None:
        first, second = design.streams
        coords["mixing_ratio"] = (SAMPLE_DIM, inputs.mixing_ratio, {
            "units": "1",
            "long_name": f"mole fraction of stream {second!r} in its mixture with stream "
            f"{first!r}"})
    data: dict[str, Any] = {
        "feed_composition": ((SAMPLE_DIM, "component"), inputs.z, {
            "units": "1", "long_name": "mole fraction of each component in the feed"}),
        "stream_fraction": ((SAMPLE_DIM, "stream"), inputs.stream_fractions, {
            "units": "1", "long_name": "mole fraction of each stream in the feed"}),
        "stream_composition": (
            ("stream", "component"), np.asarray(design.stream_compositions, dtype=float),
            {"units": "1", "long_name": "mole fraction of each component in the stream"}),
    }
    encoding: dict[str, dict[str, Any]] = {}
    for name, (dims, values, _) in {**coords, **data}.items():
        if ((dims,) if isinstance(dims, str) else dims)[0] == SAMPLE_DIM:
            shape = np.shape(values)
            encoding[name] = {"chunks": (chunk, *shape[1:]), "compressors": compressors}
    attrs = {
        "sample_sequence": design.sequence,
        "sample_seed": design.seed,
        "sample_points": design.points,
        "sample_composition": design.composition,
        "sample_mapping": SAMPLE_MAPPING,
        "sample_ranges": json.dumps({
            "pressure_Pa": list(design.pressure),
            "temperature_K": list(design.temperature),
            **({"mixing_ratio": list(design.mixing_ratio)}
               if design.composition == "mixing" else {}),
        }),
    }
    return coords, data, encoding, attrs
