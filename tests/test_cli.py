"""The command line, driven with click's CliRunner; outputs read back with pyogrio."""

from __future__ import annotations

import dataclasses

import pyogrio
from click.testing import CliRunner

from trajectory.frontends.cli import EXIT_INPUT, EXIT_OVERWRITE, main
from trajectory.params import Settings


def _args(demo, out):
    return ["assess", "--centreline", str(demo["centreline"]), "--dem", str(demo["dem"]),
            "--conditions", str(demo["sections"]), "--out", str(out), "--quiet"]


def test_help_lists_every_parameter_with_its_default():
    res = CliRunner().invoke(main, ["assess", "--help"])
    assert res.exit_code == 0
    for f in dataclasses.fields(Settings):
        assert "--" + f.name.replace("_", "-") in res.output


def test_assess_writes_geopackage_and_table(demo, tmp_path):
    out = tmp_path / "r.gpkg"
    res = CliRunner().invoke(main, _args(demo, out) + ["--spacing", "50"])
    assert res.exit_code == 0, res.output
    st = pyogrio.read_dataframe(out, layer="stations")
    assert st["chainage"].diff().dropna().eq(50.0).all()
    assert (tmp_path / "r.csv").exists()


def test_refuses_to_overwrite(demo, tmp_path):
    out = tmp_path / "r.gpkg"
    out.write_text("previous result")
    res = CliRunner().invoke(main, _args(demo, out))
    assert res.exit_code == EXIT_OVERWRITE
    assert "--overwrite" in res.output
    assert out.read_text() == "previous result"


def test_bad_parameter_and_missing_file_are_one_line_errors(demo, tmp_path):
    res = CliRunner().invoke(main, _args(demo, tmp_path / "a.gpkg") + ["--spacing", "0"])
    assert res.exit_code == EXIT_INPUT and "spacing must be > 0" in res.output
    args = _args(demo, tmp_path / "b.gpkg")
    args[args.index("--dem") + 1] = str(tmp_path / "missing.tif")
    res = CliRunner().invoke(main, args)
    assert res.exit_code == EXIT_INPUT and "missing.tif" in res.output
    assert "Traceback" not in res.output


def test_run_file_sets_parameters_and_cli_wins(demo, tmp_path):
    cfg = tmp_path / "run.toml"
    cfg.write_text("[parameters]\nspacing = 100.0\nwatch_band = 0.2\n")
    out = tmp_path / "r.gpkg"
    res = CliRunner().invoke(main, _args(demo, out) + ["--config", str(cfg),
                                                       "--watch-band", "0.3"])
    assert res.exit_code == 0, res.output
    meta = pyogrio.read_dataframe(out, layer="run_metadata")
    kv = dict(zip(meta["key"], meta["value"], strict=True))
    assert kv["param_spacing"] == "100.0" and kv["param_watch_band"] == "0.3"


def test_progress_bar_and_log_lines_share_the_terminal(capsys):
    """While the bar is drawn, log lines go through tqdm.write (tqdm's own
    ``logging_redirect_tqdm``); at 0 % no bar is drawn; closing restores the handlers."""
    import logging

    from tqdm.contrib.logging import _TqdmLoggingHandler

    from trajectory.frontends.cli import _Progress

    root = logging.getLogger()
    handler = logging.StreamHandler()
    root.addHandler(handler)
    try:
        bar = _Progress(quiet=False)
        bar(0, 10)
        assert bar.bar is None
        bar(4, 10)
        assert bar.bar is not None and bar.bar.n == 4
        assert any(isinstance(h, _TqdmLoggingHandler) for h in root.handlers)
        assert handler not in root.handlers
        bar.close()
        assert handler in root.handlers
        assert not any(isinstance(h, _TqdmLoggingHandler) for h in root.handlers)
        quiet = _Progress(quiet=True)
        quiet(5, 10)
        assert quiet.bar is None
    finally:
        root.removeHandler(handler)
