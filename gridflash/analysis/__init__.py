"""Layer 6, use of the results: lookup with interpolation, saturation lines, inspection,
plots and exports (CSV, Parquet, NetCDF).
"""

from __future__ import annotations

from ._envelopes import (
    ENVELOPE_POINT_DIM,
    ENVELOPE_VARIABLES,
    add_envelopes,
    composition_envelopes,
    envelopes_part,
    join_parts,
    write_envelopes,
)
from ._export import (
    DEFAULT_SPLIT,
    SPLIT_NAMES,
    ExportSummary,
    export_table,
    parse_split,
    split_of,
    split_unit,
)
from ._inspect import (
    AxisReport,
    StoreReport,
    UnconvergedCell,
    config_units,
    inspect_store,
)
from ._lookup import (
    DEFAULT_LOOKUP_VARIABLES,
    lookup,
)
from ._plot import (
    PHASE_COLOURS,
    PLOT_KINDS,
    parse_at,
    phase_map,
    plot_table,
    property_map,
    ternary_map,
)
from ._saturation_lines import (
    SATURATION_VARIABLES,
    add_saturation_lines,
    saturation_lines,
)
from ._study_plots import envelope_figure, swelling_figure
from ._swelling import add_studies, miscibility_study, mixing_streams, swelling_study

__all__ = [
    "ENVELOPE_POINT_DIM",
    "ENVELOPE_VARIABLES",
    "add_envelopes",
    "composition_envelopes",
    "envelopes_part",
    "join_parts",
    "write_envelopes",
    "envelope_figure",
    "mixing_streams",
    "add_studies",
    "miscibility_study",
    "swelling_study",
    "swelling_figure",
    "AxisReport",
    "DEFAULT_LOOKUP_VARIABLES",
    "DEFAULT_SPLIT",
    "ExportSummary",
    "PHASE_COLOURS",
    "PLOT_KINDS",
    "SATURATION_VARIABLES",
    "SPLIT_NAMES",
    "StoreReport",
    "UnconvergedCell",
    "add_saturation_lines",
    "config_units",
    "export_table",
    "inspect_store",
    "lookup",
    "parse_at",
    "parse_split",
    "phase_map",
    "plot_table",
    "property_map",
    "saturation_lines",
    "split_of",
    "split_unit",
    "ternary_map",
]
