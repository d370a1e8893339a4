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
  gridflash inspect configs/volatile_oil_co2.zarr
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
      gridflash inspect configs/volatile_oil_co2.zarr
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
    quiet: bool,
) -> None:
    """Compute the grid described by the TOML file CONFIG into a zarr store."""
    if resume and overwrite:
        raise click.UsageError("--resume and --overwrite exclude each other; choose one")
    from ._config import load_config
    from ._runner import run

    spec = load_config(config)
    options = spec.run
    if output is not None:
        options = replace(options, output=output.expanduser().absolute())
    if threads is not None:
        options = replace(options, scheduler="threads" if threads else "processes")
    if no_warm_start:
        options = replace(options, warm_start=False)
    spec = replace(spec, run=options)
    logging.getLogger("distributed").setLevel(logging.ERROR)
    show = _ProgressLine(sys.stderr) if not quiet and sys.stderr.isatty() else None
    try:
        summary = run(spec, resume=resume, overwrite=overwrite, workers=workers,
                      scheduler_address=scheduler_address, progress=show)
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
def inspect_command(store: Path, max_listed: int) -> None:
    """Summarise the zarr store STORE: axes, phase states, unconverged cells, iterations."""
    from ._inspect import inspect_store

    click.echo(_format_report(inspect_store(store, max_listed=max_listed)))


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
    from ._config import load_config
    from ._errors import ConfigError
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


def main(argv: list[str] | None = None) -> None:
    """Entry point of the ``gridflash`` command."""
    cli.main(args=argv, prog_name="gridflash")


# --------------------------------------------------------------------------------------------
# Output
# --------------------------------------------------------------------------------------------


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
    attrs = stats.as_attrs()
    where = (f"scheduler {summary.scheduler}" if summary.scheduler not in ("threads", "processes")
             else f"local {summary.scheduler}")
    lines = [
        f"wrote {summary.output} (complete)",
        f"  grid: {shape} = {summary.cells_total:,} cells in {summary.blocks_total} chunks",
        f"  chunks: {summary.blocks_computed} computed, {summary.blocks_reused} reused",
        f"  cells: {stats.two_phase:,} two-phase, {stats.single_phase:,} single-phase, "
        f"{stats.unconverged:,} unconverged",
        f"  iterations per cell: {_mean(attrs.get('mean_iterations'))} mean "
        f"(warm-started {_mean(attrs.get('mean_iterations_warm_start'))}, "
        f"cold {_mean(attrs.get('mean_iterations_cold_start'))})",
    ]
    if summary.blocks_computed:
        lines.append(
            f"  time: {summary.wall_time:.1f} s, {summary.cells_per_second:,.0f} cells/s on "
            f"{summary.workers} worker thread(s), {where}"
        )
    else:
        lines.append(f"  time: {summary.wall_time:.1f} s (nothing left to compute)")
    return "\n".join(lines)


def _format_report(report) -> str:
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
        units = "" if ax.units in ("", "1") else f" {ax.units}"
        span = f"{ax.first:g}" if ax.size == 1 else f"{ax.first:g} .. {ax.last:g}"
        lines.append(f"  {ax.name:<13} {ax.size:>6} points  {span}{units}  ({ax.long_name})")
    lines.append(
        f"  chunks: {' x '.join(map(str, report.chunks))}, swept along {attrs.get('sweep', '?')}"
        f", warm starts {'on' if attrs.get('warm_start') else 'off'}"
    )
    missing = report.cells_total - stats.cells

    def pct(n: int) -> str:
        return f"{100.0 * n / report.cells_total:5.1f}%" if report.cells_total else ""

    lines += [
        f"phase state ({report.cells_total:,} cells):",
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
        where = ", ".join(f"{k}={v:g}" for k, v in cell.coords.items())
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


if __name__ == "__main__":  # pragma: no cover - python -m gridflash.cli
    main()
