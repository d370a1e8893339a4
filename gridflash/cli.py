"""The ``gridflash`` command line: ``run``, ``inspect``, ``characterise`` and the table commands.

Thin: parses arguments, calls the library, prints. A :class:`~gridflash.GridflashError` becomes
one line on stderr and exit status 1; usage mistakes exit with status 2.
"""

from __future__ import annotations

import logging
import sys
import time
from dataclasses import replace
from pathlib import Path
from typing import TextIO

import click

from ._errors import GridflashError

__all__ = ["cli", "main"]

_EPILOG_RUN = """\b
Examples:
  gridflash run configs/volatile_oil_co2.toml
  gridflash run configs/volatile_oil_co2.toml --output /data/kestrel.zarr --workers 8
  gridflash run my.toml --resume            # finish a run that was killed
  gridflash run my.toml --overwrite         # replace an existing store
  gridflash run my.toml --scheduler tcp://10.0.0.5:8786   # use a running dask cluster

\b
Exit status: 0 on success, 1 on an error (one line on stderr), 2 on a usage mistake.
See docs/running.md for clusters and resuming.
"""

_EPILOG_INSPECT = """\b
Examples:
  gridflash inspect out/volatile_oil_co2.zarr
  gridflash inspect out.zarr --list 50
"""


class _Group(click.Group):
    """Turns library errors into one line and exit status 1, without a traceback."""

    def invoke(self, ctx: click.Context):  # type: ignore[override]
        try:
            return super().invoke(ctx)
        except GridflashError as exc:
            click.echo(f"Error: {_one_line(exc)}", err=True)
            ctx.exit(1)


def _one_line(exc: BaseException) -> str:
    return " ".join(str(exc).split()) or type(exc).__name__


@click.group(cls=_Group, context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(package_name="gridflash", prog_name="gridflash")
def cli() -> None:
    """Isothermal flash calculations over pressure x temperature x composition grids.

    \b
    Examples:
      gridflash run configs/volatile_oil_co2.toml
      gridflash inspect out/volatile_oil_co2.zarr
      gridflash run --help
    """


@cli.command("run", epilog=_EPILOG_RUN)
@click.argument("config", type=click.Path(dir_okay=False, path_type=Path))
@click.option("--output", "-o", type=click.Path(path_type=Path), metavar="PATH",
              help="Zarr store to write (default: run.output of the config).")
@click.option("--resume", is_flag=True,
              help="Finish an existing store: keep its complete chunks, compute the rest.")
@click.option("--overwrite", is_flag=True, help="Replace an existing store.")
@click.option("--workers", "-w", type=click.IntRange(min=1), metavar="N",
              help="Local worker processes (or threads); default: run.workers, else all cores.")
@click.option("--scheduler", "scheduler_address", metavar="ADDRESS",
              help="Address of a running dask.distributed scheduler, e.g. tcp://10.0.0.5:8786; "
              "its workers write the store, which must be on a shared filesystem.")
@click.option("--threads/--processes", "threads", default=None,
              help="Local workers as threads or as processes (default: run.scheduler).")
@click.option("--no-warm-start", is_flag=True,
              help="Start every cell cold instead of from the previous slab's K-values.")
@click.option("--max-cells", type=click.IntRange(min=1), metavar="N", default=None,
              help="Largest grid to run, in cells (default: 1,000,000,000); a bigger one is "
              "refused before anything is planned or written.")
@click.option("--quiet", "-q", is_flag=True, help="Print nothing but errors.")
def run_command(
    config: Path,
    output: Path | None,
    resume: bool,
    overwrite: bool,
    workers: int | None,
    scheduler_address: str | None,
    threads: bool | None,
    no_warm_start: bool,
    max_cells: int | None,
    quiet: bool,
) -> None:
    """Compute the grid described by the TOML file CONFIG into a zarr store."""
    if resume and overwrite:
        raise click.UsageError("--resume and --overwrite exclude each other; choose one")
    from .config import load_config
    from .runner import DEFAULT_MAX_CELLS, check_grid_size, run

    spec = load_config(config)
    check_grid_size(spec, max_cells or DEFAULT_MAX_CELLS)  # before the kernels are loaded
    options = spec.run
    if output is not None:
        options = replace(options, output=output.expanduser().absolute())
    if threads is not None:
        options = replace(options, scheduler="threads" if threads else "processes")
    if no_warm_start:
        options = replace(options, warm_start=False)
    spec = replace(spec, run=options)
    logging.getLogger("distributed").setLevel(logging.CRITICAL)  # failures: one line, below
    on_terminal = not quiet and sys.stderr.isatty()
    _load_kernels(spec.fluid.mixture(), sys.stderr if on_terminal else None)
    show = _ProgressLine(sys.stderr) if on_terminal else None
    try:
        summary = run(spec, resume=resume, overwrite=overwrite, workers=workers,
                      scheduler_address=scheduler_address, progress=show,
                      max_cells=max_cells or DEFAULT_MAX_CELLS)
    except KeyboardInterrupt:
        if show:
            show.close()
        click.echo(
            f"Interrupted; the store is incomplete. Finish it with: gridflash run {config} "
            "--resume", err=True,
        )
        sys.exit(130)
    if show:
        show.close()
    if not quiet:
        click.echo(_format_summary(summary, spec))


@cli.command("inspect", epilog=_EPILOG_INSPECT)
@click.argument("store", type=click.Path(path_type=Path))
@click.option("--list", "max_listed", type=click.IntRange(min=0), default=20, show_default=True,
              metavar="N", help="Unconverged cells to list individually.")
@click.option("--pressure-unit", metavar="UNIT",
              help="Pressure unit shown: bar, MPa, kPa, psia, atm, Pa (default: the config's).")
@click.option("--temperature-unit", metavar="UNIT",
              help="Temperature unit shown: degC, K, degF (default: the config's).")
def inspect_command(store: Path, max_listed: int, pressure_unit: str | None,
                    temperature_unit: str | None) -> None:
    """Summarise the zarr store STORE: axes, phase states, unconverged cells, iterations.

    Pressures and temperatures are shown in the units the store's config was written in,
    unless --pressure-unit / --temperature-unit say otherwise.
    """
    from .analysis import config_units, inspect_store

    report = inspect_store(store, max_listed=max_listed)
    p_unit, t_unit = config_units(report.attrs)
    units = _Units(pressure_unit or p_unit, temperature_unit or t_unit)
    click.echo(_format_report(report, units))


_EPILOG_CHARACTERISE = """\b
Examples:
  gridflash characterise configs/heavy_oil.toml
  gridflash characterise configs/heavy_oil.toml --toml fluid.toml
"""


@cli.command("characterise", epilog=_EPILOG_CHARACTERISE)
@click.argument("config", type=click.Path(dir_okay=False, path_type=Path))
@click.option("--toml", "toml_out", type=click.Path(dir_okay=False, path_type=Path),
              metavar="FILE", help="Also write the fluid as config TOML to FILE.")
def characterise_command(config: Path, toml_out: Path | None) -> None:
    """Characterise the plus-fraction of CONFIG's [fluid.heavy_end] and print the components.

    Prints the component table (light components and pseudo-components with their constants)
    and the single carbon-number fractions before lumping; with --toml, writes the fluid as
    [fluid] and [streams.NAME] tables in config form, ready to paste into a config.
    """
    from ._errors import ConfigError
    from .config import load_config
    from .thermo import fluid_table_text, fluid_table_toml

    spec = load_config(config)
    heavy = getattr(spec, "heavy_end", None)
    if heavy is None:
        raise ConfigError(f"{config}: fluid.heavy_end is missing; there is no plus-fraction to "
                          "characterise (see docs/config.md)")
    click.echo(fluid_table_text(heavy.fluid), nl=False)
    if toml_out is not None:
        names, kij = spec.fluid.names, spec.fluid.kij
        pairs = {
            (names[i], names[j]): kij[i][j]
            for i in range(len(names))
            for j in range(i + 1, len(names))
            if kij[i][j] != 0.0
        }
        text = fluid_table_toml(heavy.fluid, eos=spec.fluid.eos, stream=heavy.stream, kij=pairs)
        try:
            toml_out.write_text(text)
        except OSError as exc:
            raise ConfigError(f"cannot write {str(toml_out)!r}: {exc.strerror}") from None
        click.echo(f"wrote {toml_out}")


_EPILOG_PLOT = """\b
Examples:
  gridflash plot out/volatile_oil_co2.zarr --at mixing_ratio=0.3
  gridflash plot out.zarr --x mixing_ratio --y pressure --at temperature=80degC --out figs
  gridflash plot out.zarr --x mixing_ratio --y temperature --at pressure=150bar --kind phase
  gridflash plot out.zarr --pressure-unit MPa --temperature-unit K
  gridflash plot simplex.zarr --kind ternary --at pressure=150bar --at temperature=80degC

\b
Pressures and temperatures in --at need a unit (bar, MPa, psia, degC, K, degF, ...). A value
between grid nodes is interpolated; a value outside the table is an error. Axes left out of
--at are fixed at their first value. Maps are drawn from the table's fields looked up at a fine
set of points (exact flashes next to phase boundaries), within the table's extent. A ternary
view (three-stream simplex tables) fixes pressure and temperature and ignores --x/--y.
Needs matplotlib: pip install 'gridflash[plot]'.
"""


@cli.command("plot", epilog=_EPILOG_PLOT)
@click.argument("store", type=click.Path(path_type=Path))
@click.option("--x", "x_axis", default="temperature", show_default=True, metavar="AXIS",
              help="Horizontal axis: pressure, temperature or the composition axis.")
@click.option("--y", "y_axis", default="pressure", show_default=True, metavar="AXIS",
              help="Vertical axis.")
@click.option("--at", "at_items", multiple=True, metavar="DIM=VALUE",
              help="Value of an axis not plotted, e.g. temperature=80degC (repeatable).")
@click.option("--out", "out_dir", type=click.Path(file_okay=False, path_type=Path),
              metavar="DIR", help="Folder for the PNG files (default: STORE_plots beside it).")
@click.option("--kind", "kinds", multiple=True, type=click.Choice(["phase", "density",
              "viscosity", "ternary"]),
              help="Figures to draw (repeatable; default phase, density and viscosity).")
@click.option("--pressure-unit", default="bar", show_default=True, metavar="UNIT",
              help="Pressure unit on the axes: bar, MPa, kPa, psia, atm, Pa.")
@click.option("--temperature-unit", default="degC", show_default=True, metavar="UNIT",
              help="Temperature unit on the axes: degC, K, degF.")
@click.option("--dpi", type=click.IntRange(min=20, max=1200), default=120, show_default=True,
              help="Resolution of the PNG files.")
def plot_command(store: Path, x_axis: str, y_axis: str, at_items: tuple[str, ...],
                 out_dir: Path | None, kinds: tuple[str, ...], pressure_unit: str,
                 temperature_unit: str, dpi: int) -> None:
    """Write PNG pictures of the table STORE: a phase map and density/viscosity maps.

    The phase map colours two-phase, vapour-like and liquid-like states, draws the phase
    boundary and the stored saturation pressures, and contours the vapour fraction.
    """
    from .analysis import parse_at, plot_table
    from .analysis._plot import _matplotlib
    from .store import open_table

    _matplotlib()  # fail in one line before reading anything if matplotlib is missing
    table = open_table(store)
    at = parse_at(table, at_items)
    folder = out_dir if out_dir is not None else store.parent / f"{store.stem}_plots"
    written = plot_table(table, x=x_axis, y=y_axis, at=at, out=folder,
                         kinds=kinds or ("phase", "density", "viscosity"),
                         pressure_unit=pressure_unit, temperature_unit=temperature_unit, dpi=dpi)
    for path in written:
        click.echo(f"wrote {path}")


@cli.command("saturation")
@click.argument("store", type=click.Path(path_type=Path))
def saturation_command(store: Path) -> None:
    """Compute the saturation lines and cricondenbars of STORE and store them in it.

    A run does this at its end; this command redoes it for an existing store.
    """
    import numpy as np

    from .analysis import add_saturation_lines

    lines = add_saturation_lines(store)
    kind = lines.saturation_kind.values
    lower = lines.lower_saturation_kind.values
    cb = np.isfinite(lines.cricondenbar_pressure.values)
    click.echo(
        f"wrote saturation lines to {store}: {kind.size} (temperature, composition) lines; "
        f"upper boundary found on {int((kind > 0).sum())} ({int((kind == 1).sum())} bubble "
        f"points, {int((kind == 2).sum())} dew points, {int((kind == 3).sum())} vapour "
        f"pressures), lower dew point on {int((lower > 0).sum())}; cricondenbar within the "
        f"table for {int(cb.sum())} of {cb.size} compositions"
    )


_EPILOG_EXPORT = """\b
Examples:
  gridflash export out/training_samples.zarr --out samples.parquet
  gridflash export table.zarr --out table.nc --split 0.7,0.15,0.15 --converged-only
  gridflash export table.zarr --out table.csv

\b
Writes FILE and FILE.columns.json (every column's name, role, units and meaning); a CSV
also gets FILE.units.csv (each column's units, role and meaning, as a table).
See docs/training.md for the columns and how the split is decided.
"""


def _split_option(ctx: click.Context, param: click.Parameter, value: str):
    from ._errors import InputError
    from .analysis._export import parse_split

    try:
        return parse_split(value)
    except InputError as exc:
        raise click.BadParameter(str(exc)) from None


@cli.command("export", epilog=_EPILOG_EXPORT)
@click.argument("store", type=click.Path(path_type=Path))
@click.option("--out", "-o", "out", required=True, metavar="FILE",
              type=click.Path(dir_okay=False, path_type=Path),
              help="Table to write: .parquet, .csv or .nc (NetCDF).")
@click.option("--format", "fmt", type=click.Choice(["parquet", "csv", "netcdf"]), default=None,
              help="File format (default: from FILE's suffix; refused if the suffix names "
              "another format).")
@click.option("--split", "split", default="0.8,0.1,0.1", show_default=True,
              metavar="TRAIN,VALIDATION,TEST", callback=_split_option,
              help="Shares of the train, validation and test splits (summing to 1).")
@click.option("--converged-only", is_flag=True,
              help="Leave out unconverged cells (default: keep them, flagged).")
@click.option("--overwrite", is_flag=True, help="Replace an existing FILE.")
@click.option("--quiet", "-q", is_flag=True, help="Print nothing but errors.")
def export_command(
    store: Path,
    out: Path,
    fmt: str | None,
    split: tuple[float, float, float],
    converged_only: bool,
    overwrite: bool,
    quiet: bool,
) -> None:
    """Write the cells of STORE as a flat table of features and labels for training.

    One row per cell (grid or sample store): features (pressure, temperature, mixing ratio or
    stream fractions, feed composition), labels (phase count and label, vapour fraction, phase
    compositions, K-values, densities, viscosities, converged, status) and a train /
    validation / test split decided by a hash of the cell's inputs.
    """
    from .analysis import export_table

    summary = export_table(store, out, format=fmt, split=split,  # type: ignore[arg-type]
                           converged_only=converged_only, overwrite=overwrite)
    if not quiet:
        counts = ", ".join(f"{n:,} {name}" for name, n in summary.split_counts.items())
        dropped = (f", {summary.dropped_unconverged:,} unconverged left out"
                   if converged_only else "")
        click.echo(f"wrote {summary.path} ({summary.format}): {summary.rows:,} rows of "
                   f"{summary.cells:,} cells{dropped}; {len(summary.columns)} columns")
        click.echo(f"  split: {counts}")
        click.echo(f"  columns described in {summary.columns_path}")
        if summary.format == "csv":
            click.echo(f"  units of the columns in {summary.path}.units.csv")


def main(argv: list[str] | None = None) -> None:
    """Entry point of the ``gridflash`` command."""
    cli.main(args=argv, prog_name="gridflash")


# --------------------------------------------------------------------------------------------
# Output
# --------------------------------------------------------------------------------------------


#: Seconds after which loading the kernels is taken to be a compilation and said so.
_COMPILE_HINT_AFTER = 1.0


def _load_kernels(mixture, stream: TextIO | None) -> float:
    """Flash one cell in this process, so the compiled kernels are ready before the run starts.

    On the first use on a machine (no compiled kernels in the disk cache,
    :func:`kernels_cached`) this compiles them (about half a minute) and writes numba's disk
    cache, which local worker processes then load instead of each compiling again; a
    compilation, and only a compilation, is announced on ``stream`` (None: silent) once it has
    taken a second. Returns the seconds it took.
    """
    import numpy as np

    from .thermo import flash

    nc = mixture.n_components
    return _announce_if_slow(
        lambda: flash(mixture, 1e6, 300.0, np.full(nc, 1.0 / nc)),
        None if kernels_cached() else stream,
        "compiling the flash kernels (first use on this machine, about half a minute; later "
        "runs load them from the disk cache) ...",
        "kernels ready after {seconds:.1f} s",
    )


def kernels_cached() -> bool:
    """True if the disk cache holds compiled kernels of these kernel sources (numba's index
    files, ``*.nbi``), so loading them is not a compilation."""
    from .thermo.kernels._policy import cache_dir

    return any(cache_dir().rglob("*.nbi"))


def _announce_if_slow(
    work, stream: TextIO | None, waiting: str, finished: str,
    hint_after: float = _COMPILE_HINT_AFTER,
) -> float:
    """Run ``work()``; if it is still running after ``hint_after`` seconds print ``waiting``,
    and once it is done ``finished`` (formatted with ``seconds``). Returns the seconds taken."""
    import threading

    done = threading.Event()
    said = threading.Event()

    def hint() -> None:
        if not done.wait(hint_after) and stream is not None:
            print(waiting, file=stream, flush=True)
            said.set()

    watcher = threading.Thread(target=hint, daemon=True)
    watcher.start()
    start = time.perf_counter()
    try:
        work()
    finally:
        done.set()
        watcher.join()
    seconds = time.perf_counter() - start
    if said.is_set():
        print(finished.format(seconds=seconds), file=stream, flush=True)
    return seconds


class _ProgressLine:
    """Rewrites one status line on a terminal, at most a few times a second."""

    def __init__(self, stream: TextIO, interval: float = 0.25) -> None:
        self.stream = stream
        self.interval = interval
        self.last = 0.0
        self.width = 0

    def __call__(self, p) -> None:
        now = time.monotonic()
        if now - self.last < self.interval and p.blocks_done < p.blocks_to_do:
            return
        self.last = now
        share = 100.0 * p.cells_done / p.cells_to_do if p.cells_to_do else 100.0
        left = "" if p.seconds_left is None else f", about {_duration(p.seconds_left)} left"
        text = (f"{p.cells_done:,} / {p.cells_to_do:,} cells ({share:.1f}%), "
                f"{p.cells_per_second:,.0f} cells/s{left}")
        self.stream.write("\r" + text.ljust(self.width))
        self.stream.flush()
        self.width = len(text)

    def close(self) -> None:
        if self.width:
            self.stream.write("\n")
            self.stream.flush()


def _duration(seconds: float) -> str:
    seconds = max(0.0, seconds)
    if seconds < 90:
        return f"{seconds:.0f} s"
    if seconds < 5400:
        return f"{seconds / 60:.0f} min"
    return f"{seconds / 3600:.1f} h"


def _mean(value: object) -> str:
    return "-" if value is None else f"{float(value):.2f}"  # type: ignore[arg-type]


def _format_summary(summary, spec) -> str:
    stats = summary.stats
    dims = spec.dims
    shape = " x ".join(f"{n} {d}" for n, d in zip(spec.shape, dims, strict=True))
    what = "grid"
    if spec.sampling is not None:
        what = "samples"
        shape = f"scrambled {spec.sampling.sequence}, seed {spec.sampling.seed}"
    attrs = stats.as_attrs()
    where = (f"scheduler {summary.scheduler}" if summary.scheduler not in ("threads", "processes")
             else f"local {summary.scheduler}")
    lines = [
        f"wrote {summary.output} (complete)",
        f"  {what}: {shape} = {summary.cells_total:,} cells in {summary.blocks_total} chunks",
        f"  chunks: {summary.blocks_computed} computed, {summary.blocks_reused} reused",
        f"  cells: {stats.three_phase:,} three-phase, {stats.two_phase:,} two-phase, "
        f"{stats.single_phase:,} single-phase, {stats.unconverged:,} unconverged "
        f"({stats.not_certified:,} not certified, {stats.three_phase_failed:,} three-phase "
        "failed)",
        f"  iterations per cell: {_mean(attrs.get('mean_iterations'))} mean "
        f"(warm-started {_mean(attrs.get('mean_iterations_warm_start'))}, "
        f"cold {_mean(attrs.get('mean_iterations_cold_start'))})",
    ]
    zero = spec.fluid.zero_default_pairs
    if zero:
        lines.append(f"  kij left at zero (no default value; set them in fluid.kij): "
                     f"{', '.join(zero)}")
    if summary.blocks_computed:
        overall = summary.cells_computed / summary.wall_time if summary.wall_time > 0 else 0.0
        lines.append(
            f"  time: {summary.wall_time:.1f} s = {overall:,.0f} cells/s overall "
            f"({summary.cells_computed:,} cells); computing the chunks "
            f"{summary.compute_seconds:.1f} s = {summary.cells_per_second:,.0f} cells/s on "
            f"{summary.workers} worker thread(s), {where}"
        )
    else:
        lines.append(f"  time: {summary.wall_time:.1f} s (nothing left to compute)")
    return "\n".join(lines)


def _plain(value: float) -> str:
    """A number to 6 significant digits without e-notation (2000000, 313.15, 0.25)."""
    import numpy as np

    value = float(value)
    if value == 0.0 or not np.isfinite(value) or not 1e-6 <= abs(value) < 1e15:
        return f"{value:g}"
    return np.format_float_positional(float(f"{value:.6g}"), trim="-")


class _Units:
    """Shows SI pressures and temperatures in chosen units (checked at once: a bad unit is a
    one-line error)."""

    def __init__(self, pressure: str, temperature: str) -> None:
        from ._errors import InputError
        from .config import pressure_unit, temperature_unit

        try:
            self.pressure = pressure_unit(pressure, key="--pressure-unit")
            self.temperature = temperature_unit(temperature, key="--temperature-unit")
        except GridflashError as exc:
            raise InputError(str(exc)) from None

    def unit(self, dim: str, si_units: str) -> str:
        shown = {"pressure": self.pressure, "temperature": self.temperature}.get(dim, si_units)
        return "" if shown in ("", "1") else shown

    def value(self, dim: str, si_value: float) -> str:
        from .config import pressure_from_pa, temperature_from_kelvin

        if dim == "pressure":
            return _plain(pressure_from_pa(si_value, self.pressure))
        if dim == "temperature":
            return _plain(temperature_from_kelvin(si_value, self.temperature))
        return _plain(si_value)

    def text(self, dim: str, si_value: float) -> str:
        """``20 bar``, ``40 degC``, ``0.25``."""
        unit = self.unit(dim, "")
        return f"{self.value(dim, si_value)} {unit}".rstrip()


def _format_report(report, units: _Units) -> str:
    attrs = report.attrs
    stats = report.stats
    state = attrs.get("run_state", "?")
    lines = [
        f"store: {report.path}",
        f"  run state: {state} (gridflash {attrs.get('gridflash_version', '?')}, "
        f"{report.blocks_complete} of {report.blocks_total} chunks complete)",
        f"  config hash: {attrs.get('config_hash', '?')}",
        f"  eos: {attrs.get('eos', '?')}; components: {', '.join(report.components)}",
        "axes:",
    ]
    for ax in report.axes:
        unit = units.unit(ax.name, ax.units)
        first, last = units.value(ax.name, ax.first), units.value(ax.name, ax.last)
        span = first if ax.size == 1 else f"{first} .. {last}"
        lines.append(f"  {ax.name:<13} {ax.size:>6} points  {span}{' ' + unit if unit else ''}"
                     f"  ({ax.long_name})")
    lines.append(
        f"  chunks: {' x '.join(map(str, report.chunks))}, swept along {attrs.get('sweep', '?')}"
        f", warm starts {'on' if attrs.get('warm_start') else 'off'}"
    )
    missing = report.cells_total - stats.cells

    def pct(n: int) -> str:
        return f"{100.0 * n / report.cells_total:5.1f}%" if report.cells_total else ""

    lines += [
        f"phase state ({report.cells_total:,} cells):",
        f"  three-phase          {stats.three_phase:>12,}  {pct(stats.three_phase)}",
        f"  two-phase            {stats.two_phase:>12,}  {pct(stats.two_phase)}",
        f"  single, vapour-like  {report.vapour_like:>12,}  {pct(report.vapour_like)}",
        f"  single, liquid-like  {report.liquid_like:>12,}  {pct(report.liquid_like)}",
    ]
    if missing:
        lines.append(f"  not computed yet     {missing:>12,}  {pct(missing)}")
    lines.append(f"convergence: {stats.unconverged:,} unconverged cell(s)")
    for name, count in report.status_counts.items():
        lines.append(f"  {name}: {count:,}")
    for cell in report.unconverged:
        where = ", ".join(f"{k}={units.text(k, v)}" for k, v in cell.coords.items())
        lines.append(f"  at {where}: {cell.status} (residual {cell.residual:.3g})")
    if stats.unconverged > len(report.unconverged):
        lines.append(f"  ... and {stats.unconverged - len(report.unconverged):,} more")
    means = stats.as_attrs()
    lines += [
        "iterations per cell:",
        f"  mean {_mean(means.get('mean_iterations'))} "
        f"(stability test {_mean(means.get('mean_stability_iterations'))})",
    ]
    cold = stats.cells - stats.warm_cells
    if stats.warm_cells:
        lines.append(
            f"  warm-started cells {_mean(means.get('mean_iterations_warm_start'))} "
            f"({stats.warm_cells:,} cells); cold-started "
            f"{_mean(means.get('mean_iterations_cold_start'))} ({cold:,} cells)"
        )
    if "wall_time_seconds" in attrs and state == "complete":
        lines.append(f"wall time: {float(attrs['wall_time_seconds']):.1f} s over "
                     f"{attrs.get('run_sessions', 1)} session(s)")
    return "\n".join(lines)

_EPILOG_ENVELOPE = """\b
Examples:
  gridflash envelope configs/volatile_oil_co2.toml            # the config's compositions
  gridflash envelope configs/volatile_oil_co2.zarr            # (re)compute and store them
  gridflash envelope my.toml --plot envelopes.png --temperature-unit K
"""


@cli.command("envelope", epilog=_EPILOG_ENVELOPE)
@click.argument("target", type=click.Path(exists=True, path_type=Path))
@click.option("--plot", "plot_path", type=click.Path(dir_okay=False, path_type=Path),
              metavar="PNG", help="Also draw the envelopes (several compositions) into PNG.")
@click.option("--pressure-unit", default="bar", show_default=True, metavar="UNIT",
              help="Unit of the printed and plotted pressures.")
@click.option("--temperature-unit", default="degC", show_default=True, metavar="UNIT",
              help="Unit of the printed and plotted temperatures.")
def envelope_command(target: Path, plot_path: Path | None, pressure_unit: str,
                     temperature_unit: str) -> None:
    """Trace the phase envelope of every composition of TARGET and print its critical point,
    cricondenbar and cricondentherm.

    TARGET is a store (the envelopes are then stored in it too) or a TOML config (nothing is
    written but the optional picture).
    """
    import numpy as np

    from ._errors import ConfigError
    from .analysis import add_envelopes, composition_envelopes
    from .config import load_config

    if target.is_dir():
        envelopes = add_envelopes(target)
        comp_dim = envelopes.envelope_status.dims[0]
        where = f"stored in {target}"
    else:
        spec = load_config(target)
        axis = spec.composition
        if spec.sampling is not None:
            raise ConfigError(f"{target}: a sampled config has no composition axis to trace "
                              "envelopes along")
        comp_dim = axis.name
        envelopes = composition_envelopes(spec.fluid.mixture(), axis.feed_array(), comp_dim,
                                          np.asarray(axis.values))
        where = "not stored (a config)"
    click.echo(_envelope_text(envelopes, comp_dim, pressure_unit, temperature_unit))
    click.echo(f"{envelopes.sizes[comp_dim]} envelope(s), {where}")
    if plot_path is not None:
        from .analysis import envelope_figure

        envelope_figure(envelopes, plot_path, pressure_unit=pressure_unit,
                        temperature_unit=temperature_unit)
        click.echo(f"wrote {plot_path}")


def _envelope_text(envelopes, comp_dim: str, p_unit: str, t_unit: str) -> str:
    import numpy as np

    from .config import pressure_from_pa, temperature_from_kelvin
    from .thermo import EnvelopeStatus

    def t(v):
        return f"{temperature_from_kelvin(float(v), t_unit):9.2f}"

    def p(v):
        return f"{pressure_from_pa(float(v), p_unit):9.2f}"

    head = (f"{comp_dim:>12}  {'critical T':>9} {'P':>9}  {'cricondenbar T':>14} {'P':>9}  "
            f"{'cricondentherm T':>16} {'P':>9}  points  status   [{t_unit}, {p_unit}]")
    rows = [head]
    for k in range(envelopes.sizes[comp_dim]):
        e = envelopes.isel({comp_dim: k})
        n = int(np.isfinite(e.envelope_temperature.values).sum())
        status = EnvelopeStatus(int(e.envelope_status)).name.lower()
        rows.append(
            f"{float(e[comp_dim]):>12.4g}  {t(e.critical_temperature)} "
            f"{p(e.critical_pressure)}  {t(e.envelope_cricondenbar_temperature):>14} "
            f"{p(e.envelope_cricondenbar_pressure)}  {t(e.cricondentherm_temperature):>16} "
            f"{p(e.cricondentherm_pressure)}  {n:>6}  {status}")
    return "\n".join(rows)


_EPILOG_MMP = """\b
Examples:
  gridflash mmp configs/volatile_oil_co2.toml               # print MMP vs temperature
  gridflash mmp configs/volatile_oil_co2.zarr --plot figs   # store it, draw P-x diagrams
"""


@cli.command("mmp", epilog=_EPILOG_MMP)
@click.argument("target", type=click.Path(exists=True, path_type=Path))
@click.option("--contacts", type=click.IntRange(min=2), default=40, show_default=True,
              help="Mixing-cell contacts per pressure.")
@click.option("--plot", "plot_dir", type=click.Path(file_okay=False, path_type=Path),
              metavar="DIR", help="Also draw the P-x / swelling diagram of each temperature.")
@click.option("--pressure-unit", default="bar", show_default=True, metavar="UNIT")
@click.option("--temperature-unit", default="degC", show_default=True, metavar="UNIT")
def mmp_command(target: Path, contacts: int, plot_dir: Path | None, pressure_unit: str,
                temperature_unit: str) -> None:
    """Print the first- and multi-contact minimum miscibility pressure of the oil and gas of
    TARGET at each of its temperatures, with the swelling study along its mixing axis.

    TARGET is a store (the results are then stored in it too) or a TOML config. Its
    composition axis must mix two streams: the first is the oil, the second the gas.
    """
    import numpy as np
    import xarray as xr

    from ._errors import ConfigError
    from .analysis import add_studies, miscibility_study, swelling_study
    from .config import load_config, pressure_from_pa, temperature_from_kelvin
    from .thermo import MiscibilityStatus

    if target.is_dir():
        study = add_studies(target, contacts=contacts)
        where = f"stored in {target}"
    else:
        spec = load_config(target)
        axis = spec.composition
        if spec.sampling is not None or axis.name != "mixing_ratio" or len(axis.streams) != 2:
            raise ConfigError(
                f"{target}: the composition axis is not a two-stream mixing axis "
                "([composition] kind = \"mixing\"); MMP needs an oil and a gas stream")
        streams = dict(spec.streams)
        oil, gas = (np.array(streams[name]) for name in axis.streams)
        mixture = spec.fluid.mixture()
        t = np.array(spec.temperature.values)
        study = xr.merge([
            swelling_study(mixture, oil, gas, t, np.array(axis.values)),
            miscibility_study(mixture, oil, gas, t, contacts=contacts)])
        where = "not stored (a config)"
    click.echo(f"{'temperature':>12}  {'first-contact MMP':>17}  {'multi-contact MMP':>17}  "
               f"status  [{temperature_unit}, {pressure_unit}]")
    for k in range(study.sizes["temperature"]):
        s = study.isel(temperature=k)
        status = MiscibilityStatus(int(s.mmp_status)).name.lower()
        if int(s.mmp_three_phase):
            status += ", third phase seen"
        click.echo(
            f"{temperature_from_kelvin(float(s.temperature), temperature_unit):>12.2f}  "
            f"{pressure_from_pa(float(s.first_contact_mmp), pressure_unit):>17.2f}  "
            f"{pressure_from_pa(float(s.multi_contact_mmp), pressure_unit):>17.2f}  {status}")
    click.echo(f"mixing cells: {contacts} contacts; {where}")
    if plot_dir is not None:
        from .analysis import swelling_figure

        for k in range(study.sizes["temperature"]):
            out = swelling_figure(study, plot_dir / f"swelling_{k}.png", temperature_index=k,
                                  pressure_unit=pressure_unit,
                                  temperature_unit=temperature_unit)
            click.echo(f"wrote {out}")


if __name__ == "__main__":  # pragma: no cover - python -m gridflash.cli
    main()
