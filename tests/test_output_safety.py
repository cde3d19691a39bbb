"""Nothing lost: outputs never replace an input or each other, the set switches whole.

Each case builds its inputs in a temp folder from the invented synthetic levee
(trajectory.scenario.synthetic), runs the command line, and checks the exit code, the
one-line message and that no input or earlier output changed (SHA-256 before
and after). File-system faults (disk full, read-only folder) use a small tmpfs
where the test may mount one, and are skipped with the reason where it may not.
"""

from __future__ import annotations

import contextlib
import errno
import hashlib
import os
import shutil
import signal
import subprocess
import sys
from pathlib import Path

import pytest
from click.testing import CliRunner

from trajectory.frontends.cli import EXIT_INPUT, EXIT_INTERRUPTED, EXIT_OK, EXIT_OVERWRITE, main
from trajectory.scenario.synthetic import LeveeSpec, make_centreline, write_scenario


@pytest.fixture(scope="module")
def scenario(tmp_path_factory):
    out = tmp_path_factory.mktemp("safety")
    return write_scenario(out, spec=LeveeSpec().scaled(300.0),
                          centreline=make_centreline(300.0), epochs=False)


@pytest.fixture()
def inputs(scenario, tmp_path):
    """A private copy of the scenario's inputs (tests may point outputs at them)."""
    d = tmp_path / "in"
    d.mkdir()
    return {k: Path(shutil.copy2(scenario[k], d)) for k in ("centreline", "dem", "sections")}


def _sums(*folders: Path) -> dict[str, str]:
    """SHA-256 of every file under ``folders`` (names relative to each folder)."""
    out = {}
    for f in folders:
        for p in sorted(f.rglob("*")):
            if p.is_file():
                out[str(p)] = hashlib.sha256(p.read_bytes()).hexdigest()
    return out


def _assess(inputs: dict, out: str, *extra: str) -> object:
    args = ["assess", "--centreline", str(inputs["centreline"]), "--dem", str(inputs["dem"]),
            "--conditions", str(inputs["sections"]), "--out", out, "--quiet", *extra]
    return CliRunner().invoke(main, args)


def _error_line(res) -> str:
    lines = [ln for ln in res.output.splitlines() if ln.strip()]
    assert len(lines) == 1, res.output  # one line, no traceback
    assert lines[0].startswith("Error: "), res.output
    return lines[0]


# ------------------------------------------------------------ 1. inputs kept
@pytest.mark.parametrize("option, target, role", [
    ("--out", "centreline", "--centreline"),
    ("--table", "sections", "--conditions"),
    ("--report", "centreline", "--centreline"),
    ("--report", "dem", "--dem"),
])
def test_an_output_onto_an_input_is_refused(inputs, tmp_path, option, target, role):
    before = _sums(inputs["centreline"].parent)
    extra = [] if option == "--out" else [option, str(inputs[target])]
    out = str(inputs[target]) if option == "--out" else str(tmp_path / "r.gpkg")
    res = _assess(inputs, out, *extra, "--overwrite")
    assert res.exit_code == EXIT_INPUT, res.output
    line = _error_line(res)
    assert f"is the input {role}" in line and "Choose another output name" in line
    assert _sums(inputs["centreline"].parent) == before
    assert not (tmp_path / "r.gpkg").exists()


@pytest.mark.parametrize("how", ["table_linked_to_conditions", "out_linked_to_centreline",
                                 "out_in_a_linked_folder"])
def test_an_output_through_a_symbolic_link_onto_an_input_is_refused(inputs, tmp_path, how):
    if how == "table_linked_to_conditions":
        link, role = tmp_path / "results.csv", "--conditions"
        link.symlink_to(inputs["sections"])
        out, extra = str(tmp_path / "r.gpkg"), ["--table", str(link)]
    elif how == "out_linked_to_centreline":
        link, role = tmp_path / "r.gpkg", "--centreline"
        link.symlink_to(inputs["centreline"])
        out, extra = str(link), []
    else:  # a second name for the input folder: the output is the centreline itself
        link, role = tmp_path / "alias", "--centreline"
        link.symlink_to(inputs["centreline"].parent, target_is_directory=True)
        out, extra = str(link / inputs["centreline"].name), []
    before = _sums(inputs["sections"].parent)
    res = _assess(inputs, out, *extra, "--overwrite")
    assert res.exit_code == EXIT_INPUT
    line = _error_line(res)
    assert f"is the input {role}" in line and "Choose another output name" in line
    assert _sums(inputs["sections"].parent) == before and link.is_symlink()


def test_an_output_hard_linked_to_an_input_is_refused(inputs, tmp_path):
    hard = tmp_path / "r.gpkg"
    os.link(inputs["centreline"], hard)
    before = _sums(inputs["centreline"].parent)
    res = _assess(inputs, str(hard), "--overwrite")
    assert res.exit_code == EXIT_INPUT
    assert "is the input --centreline" in _error_line(res)
    assert _sums(inputs["centreline"].parent) == before


def test_two_outputs_of_one_name_are_refused(inputs, tmp_path):
    before = _sums(tmp_path)
    res = _assess(inputs, str(tmp_path / "r.gpkg"), "--report", str(tmp_path / "r.csv"))
    assert res.exit_code == EXIT_INPUT
    line = _error_line(res)
    assert "--report and --table name the same file" in line
    assert list(tmp_path.iterdir()) == [inputs["sections"].parent]
    assert _sums(tmp_path) == before


def test_the_table_named_like_the_geopackage_is_refused(inputs, tmp_path):
    before = _sums(tmp_path)
    res = _assess(inputs, str(tmp_path / "r.gpkg"), "--table", str(tmp_path / "r.gpkg"))
    assert res.exit_code == EXIT_INPUT
    assert "--table is the deficit table (CSV); give a name ending in .csv" in _error_line(res)
    assert _sums(tmp_path) == before


def test_an_earlier_survey_is_an_input_too(inputs, tmp_path):
    old = Path(shutil.copy2(inputs["dem"], inputs["dem"].with_name("old.tif")))
    before = _sums(old.parent)
    args = ["assess", "--centreline", str(inputs["centreline"]), "--dem", f"2019={old}",
            "--dem", f"2024={inputs['dem']}", "--conditions", str(inputs["sections"]),
            "--out", str(tmp_path / "r.gpkg"), "--report", str(old), "--overwrite", "--quiet"]
    res = CliRunner().invoke(main, args)
    assert res.exit_code == EXIT_INPUT, res.output
    line = _error_line(res)
    assert f"--report is the input the earlier survey 2019 ({old})" in line
    assert _sums(old.parent) == before and not (tmp_path / "r.gpkg").exists()


def test_the_run_file_is_an_input_too(inputs, tmp_path):
    cfg = tmp_path / "run.toml"
    cfg.write_text("spacing = 25.0\n")
    before = _sums(tmp_path)
    res = _assess(inputs, str(tmp_path / "r.gpkg"), "--config", str(cfg), "--report", str(cfg),
                  "--overwrite")
    assert res.exit_code == EXIT_INPUT
    assert "is the input --config" in _error_line(res)
    assert _sums(tmp_path) == before


@pytest.fixture(scope="module")
def mosaic(tmp_path_factory):
    out = tmp_path_factory.mktemp("mosaic")
    return write_scenario(out, spec=LeveeSpec().scaled(300.0), centreline=make_centreline(300.0),
                          epochs=False, tile_size_m=100.0)


def test_an_output_onto_any_tile_of_the_dem_mosaic_is_refused(mosaic, tmp_path):
    vrt = Path(shutil.copytree(Path(mosaic["dem"]).parent, tmp_path / "dem")) / "dem.vrt"
    inputs = dict(centreline=mosaic["centreline"], sections=mosaic["sections"], dem=vrt)
    tiles = sorted(vrt.parent.glob("*.tif"))
    assert len(tiles) > 2
    before = _sums(vrt.parent)
    for tile in (tiles[0], tiles[len(tiles) // 2]):  # not only the mosaic's last tile
        res = _assess(inputs, str(tmp_path / "r.gpkg"), "--report", str(tile), "--overwrite")
        assert res.exit_code == EXIT_INPUT, res.output
        line = _error_line(res)
        assert "--report is the input tile " in line and "of --dem" in line
        assert str(tile) in line and "Choose another output name" in line
    assert _sums(vrt.parent) == before and not (tmp_path / "r.gpkg").exists()


# ------------------------------------------------------- 5. the set is whole
@pytest.fixture()
def previous(inputs, tmp_path):
    """A complete earlier result set (with its report) and its checksums."""
    out = tmp_path / "res" / "r.gpkg"
    res = _assess(inputs, str(out), "--report", str(out.with_suffix(".html")))
    assert res.exit_code == EXIT_OK, res.output
    return out, _sums(out.parent)


def test_a_failing_report_leaves_the_previous_set_whole(inputs, previous, monkeypatch):
    out, before = previous

    def disk_full(*a, **k):
        raise OSError(errno.ENOSPC, "No space left on device")

    monkeypatch.setattr("trajectory.outputs.report.render_html", disk_full)
    res = _assess(inputs, str(out), "--report", str(out.with_suffix(".html")), "--overwrite",
                  "--spacing", "20")
    assert res.exit_code == EXIT_INPUT, res.output
    line = _error_line(res)
    assert "no space left on the device" in line and "nothing was replaced" in line
    assert _sums(out.parent) == before  # GeoPackage, tables and report: all the old ones


def test_a_rename_failing_midway_undoes_the_switch(inputs, previous, monkeypatch):
    out, before = previous
    real, calls = os.replace, []

    def third_fails(src, dst):
        calls.append(dst)
        if len(calls) == 3:
            raise OSError(errno.EROFS, "Read-only file system")
        return real(src, dst)

    monkeypatch.setattr("trajectory.outputs.atomic.os.replace", third_fails)
    res = _assess(inputs, str(out), "--report", str(out.with_suffix(".html")), "--overwrite",
                  "--spacing", "20")
    assert res.exit_code == EXIT_INPUT, res.output
    assert "read-only file system" in _error_line(res)
    assert len(calls) > 3  # two renames were undone (previous files put back)
    assert _sums(out.parent) == before


def test_an_interrupt_during_the_switch_waits_for_it_and_says_so(inputs, previous, monkeypatch):
    out, before = previous
    real = os.replace

    def interrupted(src, dst):
        os.kill(os.getpid(), signal.SIGINT)  # Ctrl-C between the renames of the set
        return real(src, dst)

    monkeypatch.setattr("trajectory.outputs.atomic.os.replace", interrupted)
    res = _assess(inputs, str(out), "--report", str(out.with_suffix(".html")), "--overwrite",
                  "--spacing", "20")
    assert res.exit_code == EXIT_INTERRUPTED, res.output
    assert "interrupted after the outputs were written" in _error_line(res)
    after = _sums(out.parent)
    assert set(after) == set(before)  # no temporary left
    # every file of the set that depends on the spacing is new (the style files do not)
    assert all(after[k] != before[k] for k in before if not k.endswith(".sld"))


def test_an_interrupt_before_the_switch_replaces_nothing(inputs, previous, monkeypatch):
    out, before = previous

    def interrupted(*a, **k):
        raise KeyboardInterrupt

    monkeypatch.setattr("trajectory.outputs.report.render_html", interrupted)
    res = _assess(inputs, str(out), "--report", str(out.with_suffix(".html")), "--overwrite")
    assert res.exit_code == EXIT_INTERRUPTED
    assert "no output was replaced" in _error_line(res)
    assert _sums(out.parent) == before


def test_a_name_taken_by_another_run_meanwhile_is_not_replaced(inputs, tmp_path, monkeypatch):
    from trajectory.outputs import table as table_module

    out = tmp_path / "r.gpkg"
    real = table_module.write_stretch_table

    def other_run_switches_meanwhile(*a, **k):  # while this run writes its set
        real(*a, **k)
        out.with_suffix(".csv").write_text("the other run's table\n")

    monkeypatch.setattr(table_module, "write_stretch_table", other_run_switches_meanwhile)
    res = _assess(inputs, str(out))
    assert res.exit_code == EXIT_OVERWRITE, res.output
    assert "was created by another run while this one ran" in _error_line(res)
    assert out.with_suffix(".csv").read_text() == "the other run's table\n"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["in", "r.csv"]


def test_two_processes_writing_one_new_set_one_wins_one_is_told(scenario, tmp_path):
    out = tmp_path / "r.gpkg"
    args = [sys.executable, "-m", "trajectory.frontends.cli", "assess", "--centreline",
            str(scenario["centreline"]), "--dem", str(scenario["dem"]), "--conditions",
            str(scenario["sections"]), "--out", str(out), "--quiet"]
    procs = [subprocess.Popen(args, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
             for _ in range(2)]
    done = []
    for p in procs:
        _, err = p.communicate(timeout=300)
        done.append((p.returncode, err))
    codes = sorted(c for c, _ in done)
    # both may notice before their run (exit 3 at once) or at the switch; never both 0
    assert codes == [EXIT_OK, EXIT_OVERWRITE], done
    loser = next(err for c, err in done if c == EXIT_OVERWRITE)
    assert "exists already" in loser or "was created by another run" in loser
    assert not [p for p in tmp_path.iterdir() if p.name.startswith(".")]


# ------------------------------------------------- 6. file-system faults
def test_output_folder_that_is_a_file(inputs, tmp_path):
    (tmp_path / "results").write_text("a file")
    before = _sums(tmp_path)
    res = _assess(inputs, str(tmp_path / "results" / "r.gpkg"))
    assert res.exit_code == EXIT_INPUT
    line = _error_line(res)
    assert "is a file, not a folder" in line and "choose another folder for --out" in line
    assert _sums(tmp_path) == before


@pytest.mark.parametrize("option, name", [("--out", "r.gpkg"), ("--table", "t.csv")])
def test_output_path_that_is_a_folder(inputs, tmp_path, option, name):
    (tmp_path / name).mkdir()
    before = _sums(tmp_path)
    extra = [] if option == "--out" else ["--table", str(tmp_path / name)]
    res = _assess(inputs, str(tmp_path / "r.gpkg"), *extra, "--overwrite")
    assert res.exit_code == EXIT_INPUT
    assert f"{option} is a folder; give a file name inside it" in _error_line(res)
    assert not list((tmp_path / name).iterdir()) and _sums(tmp_path) == before


def test_report_path_that_is_a_folder_replaces_nothing(inputs, previous):
    out, before = previous
    html = out.with_suffix(".html")
    html.unlink()
    html.mkdir()
    before = _sums(out.parent)
    res = _assess(inputs, str(out), "--report", str(html), "--overwrite")
    assert res.exit_code == EXIT_INPUT
    assert "--report is a folder" in _error_line(res)
    assert _sums(out.parent) == before


def test_conditions_path_that_is_a_folder(inputs, tmp_path):
    folder = tmp_path / "sections.csv"
    folder.mkdir()
    inputs = dict(inputs, sections=folder)
    before = _sums(tmp_path)
    res = _assess(inputs, str(tmp_path / "r.gpkg"))
    assert res.exit_code == EXIT_INPUT
    line = _error_line(res)
    assert str(folder) in line and "is a folder, not a conditions file (check --conditions)" in line
    assert _sums(tmp_path) == before and not (tmp_path / "r.gpkg").exists()


@pytest.mark.parametrize("out, text", [
    ("", "--out is empty; give the result GeoPackage's file name"),
    ("results.csv", "--out is the result GeoPackage; give a name ending in .gpkg"),
])
def test_out_empty_or_not_a_geopackage(inputs, tmp_path, out, text):
    before = _sums(tmp_path)
    res = _assess(inputs, str(tmp_path / out) if out else out)
    assert res.exit_code == EXIT_INPUT
    assert text in _error_line(res)
    assert _sums(tmp_path) == before


@contextlib.contextmanager
def _tmpfs(where: Path, options: str):
    where.mkdir()
    try:
        done = subprocess.run(["mount", "-t", "tmpfs", "-o", options, "tmpfs", str(where)],
                              capture_output=True, text=True)
    except OSError as exc:
        pytest.skip(f"cannot run mount ({exc})")
    if done.returncode != 0:
        pytest.skip(f"cannot mount a tmpfs here ({done.stderr.strip() or 'not permitted'})")
    try:
        yield where
    finally:
        subprocess.run(["umount", str(where)], check=False)


def test_disk_full_is_an_input_error_leaving_no_temporaries(inputs, tmp_path):
    before = _sums(inputs["centreline"].parent)
    with _tmpfs(tmp_path / "small", "size=64k") as small:
        res = _assess(inputs, str(small / "r.gpkg"))
        assert res.exit_code == EXIT_INPUT, res.output
        line = _error_line(res)
        assert str(small) in line and "disk full" in line and "nothing was replaced" in line
        assert not list(small.iterdir())  # no temporaries, nothing half-written
    assert _sums(inputs["centreline"].parent) == before


def test_disk_full_where_only_the_report_goes_names_that_folder(inputs, previous, tmp_path):
    out, before = previous  # the GeoPackage and tables go to a folder with room
    inputs_before = _sums(inputs["centreline"].parent)
    with _tmpfs(tmp_path / "small", "size=64k") as small:
        res = _assess(inputs, str(out), "--report", str(small / "r.html"), "--overwrite",
                      "--spacing", "20")
        assert res.exit_code == EXIT_INPUT, res.output
        line = _error_line(res)
        assert line.startswith(f"Error: {small}: ") and "disk full" in line
        assert not list(small.iterdir())
    assert _sums(out.parent) == before  # the earlier set whole, no temporaries beside it
    assert _sums(inputs["centreline"].parent) == inputs_before


@pytest.mark.parametrize("option", ["--out", "--report"])
def test_read_only_folder_is_refused_before_the_run(inputs, tmp_path, option):
    before = _sums(inputs["centreline"].parent)
    with _tmpfs(tmp_path / "ro", "ro,size=64k") as ro:
        if option == "--out":
            res = _assess(inputs, str(ro / "r.gpkg"))
        else:  # the report is part of the set: nothing else is written either
            res = _assess(inputs, str(tmp_path / "r.gpkg"), "--report", str(ro / "r.html"))
        assert res.exit_code == EXIT_INPUT, res.output
        line = _error_line(res)
        assert str(ro) in line and "cannot be written (read-only or no permission)" in line
        assert f"choose a writable folder for {option}" in line
    assert _sums(inputs["centreline"].parent) == before
    assert sorted(p.name for p in tmp_path.iterdir()) == ["in", "ro"]


def test_stale_temporaries_of_a_killed_run_are_removed_by_the_next(inputs, previous):
    out, before = previous
    dead = subprocess.Popen([sys.executable, "-c", "pass"])
    dead.wait()  # a process id that no longer runs
    stale = [out.with_name(f".r.{dead.pid}.partial.gpkg"),
             out.with_name(f".r.{dead.pid}.previous.csv"),
             out.with_name(f".r.{dead.pid}.partial.html"),
             out.with_name(f".r.{dead.pid}.partial.gpkg-journal")]
    live = out.with_name(f".r.{os.getppid()}.partial.gpkg")  # a running process: kept
    for p in [*stale, live]:
        p.write_text("left behind")
    res = _assess(inputs, str(out), "--report", str(out.with_suffix(".html")), "--overwrite")
    assert res.exit_code == EXIT_OK, res.output
    assert not any(p.exists() for p in stale) and live.exists()
