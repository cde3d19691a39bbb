"""Command line: a thin shell over :mod:`trajectory.assess` (no logic of its own).

Run-parameter options are generated from :class:`trajectory.params.Settings`;
library errors become one-line messages here and nowhere else.
"""

from __future__ import annotations

import contextlib
import dataclasses
import logging
import signal
import sys
import warnings
from collections.abc import Callable
from typing import Any

import click

from .. import CAUTION, __version__
from ..errors import FileOverwriteError, TrajectoryError, TrajectoryWarning
from ..inputs.input_table import INPUTS, merge_inputs
from ..judgement.status import STATUSES
from ..params import Settings, load_run_file

log = logging.getLogger("trajectory")

#: exit codes (README "When something is wrong")
EXIT_OK = 0
EXIT_INTERNAL = 1      # an unexpected failure (a bug): run again with --debug and report it
EXIT_INPUT = 2         # bad input or parameter: nothing written
EXIT_OVERWRITE = 3     # output exists and --overwrite not given: nothing written
EXIT_INCOMPLETE = 4    # outputs written, but parts of the line could not be read (no_data)
EXIT_INTERRUPTED = 130  # Ctrl-C or kill (SIGTERM): previous outputs untouched


def _settings_options(fn: Callable) -> Callable:
    """Add one click option per field of Settings (defaults come from the table)."""
    for f in reversed(dataclasses.fields(Settings)):
        m = f.metadata
        flag = "--" + f.name.replace("_", "-")
        unit = f" [{m['unit']}]" if m["unit"] else ""
        help_text = f"{m['help']}{unit} (default: {f.default})"
        if isinstance(f.default, bool):
            # --x / --no-x: either can override the run file; neither given = not given
            opt = click.option(f"{flag}/--no-{flag[2:]}", f.name, default=None,
                               help=help_text)
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
    # the library logs each TrajectoryWarning too; show it once, as a log line
    warnings.simplefilter("ignore", TrajectoryWarning)


def _build_settings(config: str | None, given: dict[str, Any]) -> Settings:
    values: dict[str, Any] = load_run_file(config) if config else {}
    values.update({k: v for k, v in given.items() if v is not None})
    return Settings.from_mapping(values, source=config or "command line")


class _Progress:
    """Progress bar drawn by the CLI from the library's callback.

    While the bar is on screen, log lines go through it (tqdm's logging redirect),
    so a terminal shows a clean bar under clean lines; closing it leaves nothing.
    """

    def __init__(self, quiet: bool):
        self.quiet = quiet
        self.bar: Any = None
        self._redirect: contextlib.AbstractContextManager | None = None

    def __call__(self, done: int, total: int) -> None:
        if self.quiet or done <= 0:
            return  # no bar drawn at 0 %: it appears with the first finished chunk
        if self.bar is None:
            from tqdm import tqdm
            from tqdm.contrib.logging import logging_redirect_tqdm
            # drawn first at the count already done, so no 0 % line is left behind
            self.bar = tqdm(total=total, initial=done, unit="station", file=sys.stderr,
                            leave=False, dynamic_ncols=True)
            self._redirect = logging_redirect_tqdm()
            self._redirect.__enter__()
        self.bar.update(done - self.bar.n)

    def close(self) -> None:
        if self.bar is not None:
            self.bar.close()
            self.bar = None
        if self._redirect is not None:
            self._redirect.__exit__(None, None, None)
            self._redirect = None


@click.group()
@click.version_option(__version__, prog_name="trajectory")
def main() -> None:
    """Screen levee crest levels against the required crest level."""


def _input_options(fn: Callable) -> Callable:
    """Add one click option per input of the input table (:mod:`trajectory.inputs.input_table`)."""
    for spec in reversed(INPUTS):
        where = " (repeatable)" if spec.repeat else ""
        fn = click.option(spec.flag, spec.name, multiple=spec.repeat, default=None,
                          help=f"{spec.help}{where}"
                          + (" Required, here or in the run file." if spec.required else ""))(fn)
    return fn


@main.command()
@_input_options
@click.option("--config", default=None, help="TOML run file: parameters, and input files "
              "under [inputs] (the command line wins).")
@click.option("--overwrite", is_flag=True, help="Replace existing outputs.")
@click.option("--quiet", is_flag=True, help="Only warnings and errors; no progress bar.")
@click.option("--debug", is_flag=True, help="Show tracebacks and debug logs.")
@_settings_options
def assess(config: str | None, overwrite: bool, quiet: bool, debug: bool,
           **values: Any) -> None:
    """Assess a levee line and write a GeoPackage and a deficit table."""
    from ..assess import RunInputs, summary
    from ..assess import assess as run_assess
    from ..judgement.epochs import parse_dem_options, summary_text

    given = {s.name: values.pop(s.name) for s in INPUTS}
    params = values
    out = given["out"] or "the output"
    _setup_logging(quiet, debug)
    bar = _Progress(quiet)
    previous = _terminate_as_interrupt()
    try:
        settings = _build_settings(config, params)
        io = merge_inputs(given, config)
        out = io["out"]
        dem_path, dem_date, earlier = parse_dem_options(io["dem"], io["compare"])
        inputs = RunInputs(io["centreline"], dem_path, io["conditions"], io["layer"],
                           dem_date=dem_date, earlier=earlier,
                           conditions_layer=io["conditions_layer"],
                           line_id_field=io["line_id_field"])
        result = run_assess(inputs, out, settings, overwrite=overwrite, table=io["table"],
                            progress=bar, report=io["report"],
                            read={"--config": config} if config else None)
    except FileOverwriteError as exc:
        bar.close()
        _fail(exc, debug, EXIT_OVERWRITE)
    except TrajectoryError as exc:
        bar.close()
        _fail(exc, debug, EXIT_INPUT)
    except KeyboardInterrupt as exc:
        bar.close()
        _fail(exc, debug, EXIT_INTERRUPTED, _interrupted_text(out))
    except Exception as exc:  # a bug: one line unless --debug
        bar.close()
        _fail(exc, debug, EXIT_INTERNAL,
              f"unexpected failure ({type(exc).__name__}: {exc}); run again with --debug "
              "for the traceback and report it")
    finally:
        if previous is not None:
            signal.signal(signal.SIGTERM, previous)
    bar.close()
    s = summary(result)
    log.info("assessed %.0f m: ok %.0f m, watch %.0f m, deficit %.0f m, no_data %.0f m, "
             "excluded %.0f m", sum(s[f"length_{k}"] for k in STATUSES),
             s["length_ok"], s["length_watch"], s["length_deficit"], s["length_no_data"],
             s["length_excluded"])
    if result.epochs is not None:
        st = result.stations
        line = summary_text(result.epochs.labels, st["rate_significant"].to_numpy(),
                            st["projected_year"].to_numpy(), st["margin"].to_numpy())
        if line:
            log.info(line)
    log.info(CAUTION)
    if result.metadata.get("incomplete"):
        click.echo(f"Incomplete: {result.metadata['incomplete']}", err=True)
        sys.exit(EXIT_INCOMPLETE)


@main.command()
@click.argument("results", type=click.Path(dir_okay=False))
@click.option("--out", default=None, help="HTML file to write; default: RESULTS with .html.")
@click.option("--overwrite", is_flag=True, help="Replace an existing report.")
@click.option("--quiet", is_flag=True, help="Only warnings and errors.")
@click.option("--debug", is_flag=True, help="Show tracebacks and debug logs.")
def report(results: str, out: str | None, overwrite: bool, quiet: bool, debug: bool) -> None:
    """Write the self-contained HTML report of a results GeoPackage."""
    from pathlib import Path

    from ..outputs.report import write_report

    _setup_logging(quiet, debug)
    target = out or str(Path(results).with_suffix(".html"))
    try:
        write_report(results, target, overwrite=overwrite)
    except FileOverwriteError as exc:
        _fail(exc, debug, EXIT_OVERWRITE)
    except TrajectoryError as exc:
        _fail(exc, debug, EXIT_INPUT)
    log.info("wrote %s", target)


def _interrupted_text(out: str) -> str:
    """What an interrupt left behind, truthfully (the switch of the set is never cut)."""
    from ..outputs.atomic import was_switched

    if was_switched(out):
        return (f"interrupted after the outputs were written; {out} and the files beside it "
                "are complete and from this run")
    return "interrupted; no output was replaced (earlier results are intact)"


def _fail(exc: BaseException, debug: bool, code: int, text: str | None = None) -> None:
    if debug:
        raise exc
    click.echo(f"Error: {text or exc}", err=True)
    sys.exit(code)


def _raise_interrupt(signum: int, frame: Any) -> None:
    raise KeyboardInterrupt(f"signal {signum}")


def _terminate_as_interrupt() -> Any:
    """Treat SIGTERM like Ctrl-C so temporary files are removed; return the old handler."""
    try:
        return signal.signal(signal.SIGTERM, _raise_interrupt)
    except ValueError:  # not the main thread: leave signals alone
        return None


if __name__ == "__main__":  # pragma: no cover
    main()
