"""The input files of a run, declared once (trajectory.inputs.input_table), as the front
ends use them.

Constructed truth: a run given entirely by a run file must give, value by value,
what the same run given on the command line gives; the command line wins over
the run file, for inputs and for yes/no parameters in both directions.
"""

from __future__ import annotations

import os

import numpy as np
import pyogrio
import pytest
from click.testing import CliRunner

from trajectory.errors import ParameterError
from trajectory.frontends.cli import EXIT_INPUT, main
from trajectory.inputs.input_table import INPUTS, merge_inputs, read_run_file_inputs
from trajectory.params import load_run_file


def test_run_file_inputs_resolve_from_the_run_file(tmp_path):
    (tmp_path / "run.toml").write_text(
        '[inputs]\ndem = ["2019=dem_2019.tif", "2024=dem.tif"]\ncentreline = "levee.gpkg"\n'
        'layer = "centreline"\nout = "/abs/r.gpkg"\n[parameters]\nspacing = 50.0\n')
    got = read_run_file_inputs(tmp_path / "run.toml")
    assert got["dem"] == (f"2019={tmp_path / 'dem_2019.tif'}", f"2024={tmp_path / 'dem.tif'}")
    assert got["centreline"] == str(tmp_path / "levee.gpkg")
    assert got["layer"] == "centreline"          # a layer name is not a path
    assert got["out"] == "/abs/r.gpkg"
    assert "compare" not in got


def test_given_inputs_win_over_the_run_file(tmp_path):
    run = tmp_path / "run.toml"
    run.write_text('[inputs]\ncentreline = "a.gpkg"\nconditions = "c.csv"\n'
                   'dem = "d.tif"\nout = "r.gpkg"\n')
    merged = merge_inputs({"centreline": "/x/b.gpkg", "dem": (), "out": None}, run)
    assert merged["centreline"] == "/x/b.gpkg"
    assert merged["dem"] == (str(tmp_path / "d.tif"),)
    assert merged["out"] == str(tmp_path / "r.gpkg")
    assert set(merged) == {s.name for s in INPUTS}


def test_missing_and_unknown_inputs_are_named(tmp_path):
    with pytest.raises(ParameterError, match=r"no terrain model given: pass --dem PATH"):
        merge_inputs({"centreline": "a", "conditions": "c", "out": "o"}, None)
    run = tmp_path / "run.toml"
    run.write_text('[inputs]\ncentreline = "a.gpkg"\ndems = ["d.tif"]\n')
    with pytest.raises(ParameterError, match=r"run.toml: \[inputs\] has unknown entries dems"):
        read_run_file_inputs(run)
    run.write_text('[inputs]\ncentreline = 3\n')
    with pytest.raises(ParameterError, match=r"\[inputs\] centreline must be a text"):
        read_run_file_inputs(run)


def test_file_parameters_of_a_run_file_are_found_from_its_folder(tmp_path):
    (tmp_path / "run.toml").write_text('[parameters]\nfrequency = "freq.csv"\n'
                                       'scheduler = "tcp://host:8786"\n')
    values = load_run_file(tmp_path / "run.toml")
    assert values["frequency"] == str(tmp_path / "freq.csv")
    assert values["scheduler"] == "tcp://host:8786"   # text, not a path


def _cli(*args: str):
    return CliRunner().invoke(main, ["assess", "--quiet", *args])


def test_a_run_given_by_its_run_file_alone_equals_the_command_line(demo, tmp_path):
    run = tmp_path / "job" / "run.toml"
    run.parent.mkdir()
    # paths relative to the run file's folder
    rel = {k: os.path.relpath(demo[k], run.parent) for k in ("centreline", "dem", "sections")}
    assert all(not os.path.isabs(v) for v in rel.values())
    run.write_text(f'[inputs]\ncentreline = "{rel["centreline"]}"\ndem = ["{rel["dem"]}"]\n'
                   f'conditions = "{rel["sections"]}"\nout = "out/r.gpkg"\n'
                   '[parameters]\nspacing = 50.0\nreverse = true\n')
    (run.parent / "out").mkdir()
    res = _cli("--config", str(run))
    assert res.exit_code == 0, res.output
    # the command line wins: --no-reverse turns off the run file's reverse = true
    res2 = _cli("--config", str(run), "--out", str(tmp_path / "cli.gpkg"), "--no-reverse")
    assert res2.exit_code == 0, res2.output
    res3 = _cli("--centreline", str(demo["centreline"]), "--dem", str(demo["dem"]),
                "--conditions", str(demo["sections"]), "--out", str(tmp_path / "plain.gpkg"),
                "--spacing", "50")
    assert res3.exit_code == 0, res3.output
    a = pyogrio.read_dataframe(run.parent / "out" / "r.gpkg", layer="stations")
    b = pyogrio.read_dataframe(tmp_path / "cli.gpkg", layer="stations")
    c = pyogrio.read_dataframe(tmp_path / "plain.gpkg", layer="stations")
    # reverse = true runs chainage the other way: the crest levels come in reverse order
    np.testing.assert_allclose(b["crest_level"], c["crest_level"], equal_nan=True)
    assert len(a) == len(c)
    np.testing.assert_allclose(np.sort(a["crest_level"].dropna()),
                               np.sort(c["crest_level"].dropna()), atol=0.05)
    assert not np.allclose(a["crest_level"].to_numpy(), c["crest_level"].to_numpy(),
                           equal_nan=True)


def test_missing_input_on_the_command_line_exits_with_the_input_code(demo, tmp_path):
    res = _cli("--centreline", str(demo["centreline"]), "--conditions", str(demo["sections"]),
               "--out", str(tmp_path / "r.gpkg"))
    assert res.exit_code == EXIT_INPUT
    assert "no terrain model given: pass --dem PATH" in res.output
