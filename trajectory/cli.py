"""Command line: a thin shell over :mod:`trajectory.assess` (no logic of its own).

Run-parameter options are generated from :class:`trajectory.params.Settings`;
library errors become one-line messages here and nowhere else.
"""

from __future__ import annotations

import dataclasses
import logging
import sys
from collections.abc import Callable
from typing import Any

import click

from . import CAUTION, __version__
from .errors import FileOverwriteError, TrajectoryError
from .params import Settings, load_run_file

log = logging.getLogger("trajectory")

#: exit codes
EXIT_INPUT = 2
EXIT_OVERWRITE = 3


def _settings_options(fn: Callable) -> Callable:
    """Add one click option per field of Settings (defaults come from the table)."""
    for f in reversed(dataclasses.fields(Settings)):
        m = f.metadata
        flag = "--" + f.name.replace("_", "-")
        unit = f" [{m['unit']}]" if m["unit"] else ""
        help_text = f"{m['help']}{unit} (default: {f.default})"
        if isinstance(f.default, bool):
            opt = click.option(flag, f.name, is_flag=True, default=None, help=help_text)
        elif m["choices"]:
            opt = click.option(flag, f.name, type=click.Choice(m["choices"]), default=None,
                               help=help_text)
        else:
            opt = click.option(flag, f.name, type=type(f.default), default=None, help=help_text)
        fn = opt(fn)
    return fn


def _setup_logging(quiet: bool, debug: bool) -> None:
    level = logging.DEBUG if debug else (logging.WARNING if quiet else logging.INFO)
    logging.basicConfig(level=level, format="%(levelname)s: %(message)s", stream=sys.stderr)
    # GDAL's writer logs every layer at INFO; keep ours readable
    logging.getLogger("pyogrio").setLevel(logging.WARNING)


def _build_settings(config: str | None, given: dict[str, Any]) -> Settings:
    values: dict[str, Any] = load_run_file(config) if config else {}
    values.update({k: v for k, v in given.items() if v is not None})
    return Settings.from_mapping(values, source=config or "command line")


class _Progress:
    """Progress bar drawn by the CLI from the library's callback."""

    def __init__(self, quiet: bool):
        self.quiet = quiet
        self.bar = None

    def __call__(self, done: int, total: int) -> None:
        if self.quiet:
            return
        if self.bar is None:
            from tqdm import tqdm
            self.bar = tqdm(total=total, unit="station", file=sys.stderr, leave=False)
        self.bar.update(done - self.bar.n)

    def close(self) -> None:
        if self.bar is not None:
            self.bar.close()


@click.group()
@click.version_option(__version__, prog_name="trajectory")
def main() -> None:
    """Screen levee crest levels against the required crest level."""


@main.command()
@click.option("--centreline", required=True, help="Levee centreline (any OGR line format).")
@click.option("--dem", required=True, help="Terrain model (any GDAL raster, VRT mosaics too).")
@click.option("--conditions", required=True, help="Section conditions table (CSV).")
@click.option("--out", required=True, help="Output GeoPackage.")
@click.option("--layer", default=None, help="Line layer of the centreline file.")
@click.option("--line-id-field", default=None,
              help="Field telling several centrelines apart; each line gets its own chainage.")
@click.option("--table", default=None, help="Deficit table (CSV); default: next to --out.")
@click.option("--config", default=None, help="TOML run file with parameters.")
@click.option("--overwrite", is_flag=True, help="Replace existing outputs.")
@click.option("--quiet", is_flag=True, help="Only warnings and errors; no progress bar.")
@click.option("--debug", is_flag=True, help="Show tracebacks and debug logs.")
@_settings_options
def assess(centreline: str, dem: str, conditions: str, out: str, layer: str | None,
           line_id_field: str | None, table: str | None, config: str | None, overwrite: bool,
           quiet: bool, debug: bool, **params: Any) -> None:
    """Assess a levee line and write a GeoPackage and a deficit table."""
    from .assess import RunInputs, summary
    from .assess import assess as run_assess

    _setup_logging(quiet, debug)
    bar = _Progress(quiet)
    try:
        settings = _build_settings(config, params)
        inputs = RunInputs(centreline, dem, conditions, layer, line_id_field)
        result = run_assess(inputs, out, settings, overwrite=overwrite, table=table, progress=bar)
    except FileOverwriteError as exc:
        bar.close()
        _fail(exc, debug, EXIT_OVERWRITE)
    except TrajectoryError as exc:
        bar.close()
        _fail(exc, debug, EXIT_INPUT)
    bar.close()
    s = summary(result)
    log.info("assessed %.0f m: ok %.0f m, watch %.0f m, deficit %.0f m, no_data %.0f m",
             sum(s[f"length_{k}"] for k in ("ok", "watch", "deficit", "no_data")),
             s["length_ok"], s["length_watch"], s["length_deficit"], s["length_no_data"])
    log.info(CAUTION)


def _fail(exc: Exception, debug: bool, code: int) -> None:
    if debug:
        raise exc
    click.echo(f"Error: {exc}", err=True)
    sys.exit(code)


if __name__ == "__main__":  # pragma: no cover
    main()
