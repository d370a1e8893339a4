"""Small stores shared by the lookup, saturation-line, plot and README tests.

The grids and streams are invented test data (no field data). Each store is built once per test
session (cached by name) with local threads.
"""

from __future__ import annotations

from pathlib import Path

from gridflash.config._parser import load_config
from gridflash.runner import run

#: Methane + propane, both streams single components, so the mixing ratio is the methane mole
#: fraction z1 and its ends are pure propane (r = 0) and pure methane (r = 1).
BINARY_CONFIG = """\
# Invented test grid: methane + propane along the methane mole fraction.
[fluid]
eos = "PR78"
components = ["C1", "C3"]

[streams.propane]
mole_fractions = { C3 = 1.0 }

[streams.methane]
mole_fractions = { C1 = 1.0 }

[pressure]
unit = "bar"
start = 1.0
stop = 121.0
count = 25

[temperature]
unit = "K"
values = [230.0, 250.0, 270.0, 290.0, 310.0, 330.0, 350.0]

[composition]
kind = "mixing"
streams = ["propane", "methane"]
values = [0.0, 0.2, 0.5, 0.8, 1.0]

[run]
output = "binary.zarr"
workers = 2
scheduler = "threads"
"""

#: Three invented feeds of an invented oil/gas system on a list (``mixture``) axis; nC10 has an
#: explicit Peneloux shift so the store must carry it back.
LIST_CONFIG = """\
# Invented test grid: three invented feeds on a list axis.
[fluid]
eos = "SRK"
components = ["C1", "C3", HEAVY_COMPONENT]
kij = { "C1-HEAVY" = 0.04 }

[streams.oil]
mole_fractions = { C1 = 0.40, C3 = 0.20, HEAVY = 0.40 }

[streams.gas]
mole_fractions = { C1 = 0.90, C3 = 0.10 }

[streams.mid]
mole_fractions = { C1 = 0.65, C3 = 0.15, HEAVY = 0.20 }

[pressure]
unit = "bar"
start = 20.0
stop = 220.0
count = 6

[temperature]
unit = "degC"
values = [40.0, 90.0, 140.0]

[composition]
kind = "list"
streams = ["oil", "mid", "gas"]

[run]
output = "list.zarr"
workers = 2
scheduler = "threads"
""".replace(
    "HEAVY_COMPONENT",
    '{ name = "HEAVY", tc = 617.7, tc_unit = "K", pc = 21.1, pc_unit = "bar", omega = 0.49, '
    'mw = 142.3, volume_shift = 0.12 }',
)

_BUILT: dict[str, Path] = {}


def build_store(tmp_path_factory, name: str, config_text: str) -> Path:
    """Run ``config_text`` once per session into a fresh folder; return the store path."""
    if name not in _BUILT:
        folder = tmp_path_factory.mktemp(name)
        config = folder / f"{name}.toml"
        config.write_text(config_text)
        summary = run(load_config(config))
        _BUILT[name] = summary.output
    return _BUILT[name]
