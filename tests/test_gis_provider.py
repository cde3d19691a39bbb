"""The desktop-GIS processing provider, run headless through the host's processing API.

The host's Python bindings bind to the system interpreter, not to the project venv,
so the QGIS side runs in ``.venv-qgis`` (``scripts/setup_qgis_env.sh``) through
``tests/qgis_driver.py``; results are read back here. Where the host is absent these
tests skip with the reason, except in CI (``CI=true``), where they fail.
"""

from __future__ import annotations

import configparser
import dataclasses
import json
import os
import subprocess
import sys
import zipfile
from pathlib import Path

import numpy as np
import pyogrio
import pytest
from click.testing import CliRunner

from trajectory import __version__
from trajectory.frontends.cli import assess as cli_assess
from trajectory.frontends.cli import main
from trajectory.inputs.input_table import INPUTS
from trajectory.params import Settings, parameter_table

ROOT = Path(__file__).resolve().parents[1]
DRIVER = ROOT / "tests" / "qgis_driver.py"


def _qgis_python() -> str:
    """The QGIS-side interpreter, or skip (fail in CI) with the reason."""
    py = os.environ.get("TRAJECTORY_QGIS_PYTHON") or str(ROOT / ".venv-qgis" / "bin" / "python")
    reason = None
    if not Path(py).exists():
        reason = (f"no QGIS-side interpreter at {py}: install the Debian packages qgis "
                  "python3-qgis qgis-providers, then run scripts/setup_qgis_env.sh")
    else:
        chk = subprocess.run([py, "-c", "import qgis.core, trajectory.frontends.gis_provider"],
                             capture_output=True, text=True, timeout=120)
        if chk.returncode != 0:
            reason = f"{py} cannot import qgis.core and trajectory: {chk.stderr.strip()[-300:]}"
    if reason:
        if os.environ.get("CI") == "true":
            pytest.fail(f"CI must run the GIS provider tests: {reason}")
        pytest.skip(reason)
    return py


@pytest.fixture(scope="module")
def qgis_python() -> str:
    return _qgis_python()


def _drive(py: str, *args: str, timeout: float = 600) -> dict:
    env = {k: v for k, v in os.environ.items() if k not in ("PYTHONPATH", "PYTHONHOME")}
    env["QT_QPA_PLATFORM"] = "offscreen"
    res = subprocess.run([py, str(DRIVER), *args], capture_output=True, text=True,
                         timeout=timeout, env=env, cwd=str(ROOT))
    assert res.returncode == 0, f"driver failed:\n{res.stdout[-2000:]}\n{res.stderr[-4000:]}"
    return json.loads(res.stdout.strip().splitlines()[-1])


def _inputs(demo) -> dict:
    return {"centreline": str(demo["centreline"]), "dem": str(demo["dem"]),
            "conditions": str(demo["sections"])}


# ------------------------------------------------------------- parameter table
def test_parameter_definitions_match_params_table(qgis_python):
    """GIS tool, CLI and run file all carry exactly the parameter table's names and values."""
    answer = _drive(qgis_python, "params")
    gis = {p["name"]: p for p in answer["parameters"]}
    table = parameter_table()
    kinds = {"float": ("number", 1), "int": ("number", 0)}   # QgsProcessingParameterNumber
    for row in table:
        p = gis[row["name"]]
        assert row["help"] in p["help"]
        if row["unit"]:
            assert f"[{row['unit']}]" in p["description"]
        if row["choices"]:
            assert p["type"] == "enum"
            assert p["options"] == list(row["choices"])
            assert p["options"][p["default"]] == row["default"]
        elif row["type"] == "bool":
            assert p["type"] == "boolean"
            assert p["default"] is row["default"]
        elif row["type"] == "str":
            # file parameters get a file picker, other text a text field (the scheduler
            # address is not a file); "" (not given) is the table's default
            assert p["type"] == ("file" if row["path"] else "string"), row["name"]
            assert row["default"] == "" and p["default"] in (None, "")
        else:
            assert (p["type"], p["data_type"]) == kinds[row["type"]]
            assert p["default"] == row["default"]
            assert p["minimum"] == row["min"]
            assert p["maximum"] == row["max"]
    # the three front ends share one set of run-parameter and input names (the input
    # table, trajectory.inputs.input_table); in the GIS tool a layer name comes with the layer
    # picked, and the latest terrain model's date and earlier surveys are fields of their own
    inputs = {s.name for s in INPUTS}
    gis_inputs = {s.name for s in INPUTS if s.gis} | {"dem_date", "dem_earlier", "config"}
    cli_names = {p.name for p in cli_assess.params}
    settings_names = {f.name for f in dataclasses.fields(Settings)}
    assert set(gis) == settings_names | gis_inputs
    assert cli_names == settings_names | inputs | {"config", "overwrite", "quiet", "debug"}
    assert {s.name for s in INPUTS if not s.gis} == {"layer", "conditions_layer"}
    run_file = Settings.from_mapping({r["name"]: r["default"] for r in table})
    assert run_file == Settings()


# ------------------------------------------------------------- headless run
def _assert_same_layers(gis_out: Path, cli_out: Path) -> None:
    """Stations and stretches of two GeoPackages agree value by value."""
    for layer in ("stations", "stretches"):
        a = pyogrio.read_dataframe(gis_out, layer=layer)
        b = pyogrio.read_dataframe(cli_out, layer=layer)
        assert list(a.columns) == list(b.columns)
        assert len(a) == len(b) > 0
        for col in a.columns:
            if col == "geometry":
                ca = np.asarray([g.coords[0] for g in a.geometry])
                cb = np.asarray([g.coords[0] for g in b.geometry])
                np.testing.assert_allclose(ca, cb, rtol=0, atol=1e-9)
            elif a[col].dtype.kind in "fi":
                np.testing.assert_allclose(a[col].to_numpy(float), b[col].to_numpy(float),
                                           rtol=1e-9, atol=1e-9, equal_nan=True, err_msg=col)
            else:
                assert a[col].tolist() == b[col].tolist(), col


def _cli_run(demo, out: Path, *args: str) -> None:
    res = CliRunner().invoke(main, [
        "assess", "--centreline", str(demo["centreline"]), "--dem", str(demo["dem"]),
        "--conditions", str(demo["sections"]), "--out", str(out), "--quiet", *args])
    assert res.exit_code == 0, res.output


@pytest.mark.slow
def test_processing_run_matches_cli_value_by_value(qgis_python, demo, tmp_path):
    approach = "mean"
    choices = next(r["choices"] for r in parameter_table() if r["name"] == "approach")
    gis_out = tmp_path / "gis" / "r.gpkg"
    gis_out.parent.mkdir()
    answer = _drive(qgis_python, "assess", json.dumps(
        {**_inputs(demo), "spacing": 20.0, "approach": choices.index(approach),
         "chunk_size": 16, "out": str(gis_out)}))
    cli_out = tmp_path / "cli" / "r.gpkg"
    _cli_run(demo, cli_out, "--spacing", "20", "--approach", approach, "--chunk-size", "16")
    assert answer["progress"] and answer["progress"][-1] == pytest.approx(100.0)
    assert Path(answer["result"]["out"]) == gis_out
    assert Path(answer["result"]["table"]).is_file()

    _assert_same_layers(gis_out, cli_out)
    stretches = pyogrio.read_dataframe(cli_out, layer="stretches")
    deficit = float(stretches.loc[stretches["status"] == "deficit", "length"].sum())
    assert answer["result"]["length_deficit"] == pytest.approx(deficit)
    stations = pyogrio.read_dataframe(cli_out, layer="stations")
    assert answer["result"]["stations_ok"] == int((stations["status"] == "ok").sum())
    meta = pyogrio.read_dataframe(gis_out, layer="run_metadata")
    values = dict(zip(meta["key"], meta["value"], strict=True))
    assert values["param_spacing"] == "20.0" and values["param_approach"] == approach


@pytest.mark.slow
def test_host_command_line_runner_matches_cli(qgis_python, demo, tmp_path):
    """qgis_process (the host's headless runner) with the plugin installed the user's way.

    Inside the host the GDAL/GEOS/PROJ of the host are loaded first, so this also proves
    the QGIS-side packages use those libraries and not clashing bundled copies.
    """
    env = {k: v for k, v in os.environ.items() if k not in ("PYTHONPATH", "PYTHONHOME")}
    env["QGIS_CUSTOM_CONFIG_PATH"] = str(tmp_path / "profile")
    env["PYTHON"] = sys.executable
    inst = subprocess.run(["bash", str(ROOT / "scripts" / "install_plugin.sh")], env=env,
                          capture_output=True, text=True, timeout=300)
    assert inst.returncode == 0, inst.stderr
    assert (Path(inst.stdout.strip().splitlines()[-1]) / "metadata.txt").is_file()
    gis_out = tmp_path / "runner" / "r.gpkg"
    args = [f"{k}={v}" for k, v in _inputs(demo).items()]
    run = subprocess.run(["bash", str(ROOT / "scripts" / "qgis_process.sh"), "--json", "run",
                          "trajectory:crest_assess", "--", *args, "spacing=50",
                          f"out={gis_out}"], env=env, capture_output=True, text=True,
                         timeout=600)
    assert run.returncode == 0, run.stdout[-2000:] + run.stderr[-4000:]
    answer = json.loads(run.stdout[run.stdout.index("{"):])
    assert Path(answer["results"]["out"]) == gis_out
    cli_out = tmp_path / "cli" / "r.gpkg"
    _cli_run(demo, cli_out, "--spacing", "50")
    _assert_same_layers(gis_out, cli_out)


def test_cancel_through_feedback_leaves_no_file(qgis_python, demo, tmp_path):
    out = tmp_path / "cancelled" / "r.gpkg"
    out.parent.mkdir()
    answer = _drive(qgis_python, "cancel", json.dumps(
        {**_inputs(demo), "chunk_size": 8, "out": str(out)}))
    assert answer["error"] is not None and "cancelled" in answer["error"]
    # cancelled mid-run: some chunks done, not all
    assert answer["progress"] and 0 < answer["progress"][0] < 100
    assert answer["files"] == []


# ------------------------------------------------------------- plugin zip
def _build_zip(out: Path) -> Path:
    res = subprocess.run([sys.executable, str(ROOT / "scripts" / "build_plugin.py"),
                          "--out", str(out)], capture_output=True, text=True, timeout=120)
    assert res.returncode == 0, res.stderr
    return Path(res.stdout.strip().splitlines()[-1])


def test_plugin_zip_builds_and_metadata_parses(tmp_path):
    path = _build_zip(tmp_path)
    assert path.name == f"trajectory_plugin-{__version__}.zip"
    with zipfile.ZipFile(path) as zf:
        names = zf.namelist()
        text = zf.read("trajectory_plugin/metadata.txt").decode("utf-8")
    assert "trajectory_plugin/__init__.py" in names
    assert "trajectory_plugin/engine/trajectory/frontends/gis_provider/provider.py" in names
    assert not any("__pycache__" in n for n in names)
    meta = configparser.ConfigParser()
    meta.read_string(text)
    general = meta["general"]
    # keys the host's plugin manager requires of metadata.txt (QGIS plugin docs, from memory)
    for key in ("name", "qgisMinimumVersion", "description", "about", "version", "author",
                "email"):
        assert general.get(key), key
    assert general["version"] == __version__
    assert general.getboolean("hasProcessingProvider")
    assert tuple(int(x) for x in general["qgisMinimumVersion"].split(".")) >= (3, 22)


def test_plugin_zip_loads_in_host(qgis_python, tmp_path):
    path = _build_zip(tmp_path)
    answer = _drive(qgis_python, "plugin", str(path))
    assert answer["algorithms"] == ["trajectory:crest_assess", "trajectory:crest_report"]
    # the zip's own engine is used, not the checkout's
    assert answer["engine"].startswith(answer["plugin_dir"])
    assert answer["unloaded"] is True


def test_library_cancellation_from_progress_callback_writes_nothing(demo, tmp_path):
    """The contract the GIS front end relies on: a callback raising RunCancelled aborts
    assess() before any output exists (runs without QGIS)."""
    from trajectory.assess import RunInputs, assess
    from trajectory.errors import RunCancelled

    calls = []

    def progress(done: int, total: int) -> None:
        calls.append((done, total))
        raise RunCancelled("cancelled by the test")

    with pytest.raises(RunCancelled):
        assess(RunInputs(str(demo["centreline"]), str(demo["dem"]), str(demo["sections"])),
               tmp_path / "r.gpkg", Settings(chunk_size=8), progress=progress)
    assert calls and calls[0][0] < calls[0][1]
    assert list(tmp_path.iterdir()) == []


def test_report_algorithm_writes_the_same_page_as_the_cli(qgis_python, demo_result, tmp_path):
    # the GIS report algorithm is the CLI's `trajectory report`: same page, same numbers
    _, gpkg = demo_result
    out = tmp_path / "gis_report.html"
    answer = _drive(qgis_python, "report", json.dumps({"results": str(gpkg), "out": str(out)}))
    assert Path(answer["result"]["out"]) == out
    cli = tmp_path / "cli_report.html"
    res = CliRunner().invoke(main, ["report", str(gpkg), "--out", str(cli), "--quiet"])
    assert res.exit_code == 0, res.output
    gis_html, cli_html = out.read_text(), cli.read_text()
    assert "qualified engineer" in gis_html
    assert gis_html.count("data:image/png;base64") == cli_html.count("data:image/png;base64")


# ------------------------------------------------------------- parity with the CLI
@pytest.fixture(scope="module")
def surveys(tmp_path_factory):
    """The demo scenario with its earlier surveys (2019, 2021) beside the latest."""
    from trajectory.scenario.synthetic import LeveeSpec, make_centreline, write_scenario

    spec = LeveeSpec()
    out = tmp_path_factory.mktemp("surveys")
    return write_scenario(out, spec=spec, centreline=make_centreline(spec.length_m),
                          epochs=True)


@pytest.mark.slow
def test_surveys_report_and_run_file_match_the_cli(qgis_python, surveys, tmp_path):
    """Earlier surveys, the report and a run file: the GIS tool as the CLI."""
    p = surveys
    run_file = tmp_path / "run.toml"
    run_file.write_text("[parameters]\nspacing = 50.0\nreverse = false\n")
    gis_out = tmp_path / "gis" / "r.gpkg"
    gis_out.parent.mkdir()
    answer = _drive(qgis_python, "assess", json.dumps({
        "centreline": str(p["centreline"]), "conditions": str(p["sections"]),
        "dem": str(p["dem"]), "dem_date": "2024",
        "dem_earlier": f"2019={p['dem_2019']}; 2021={p['dem_2021']}",
        "config": str(run_file), "report": str(tmp_path / "gis" / "report.html"),
        "out": str(gis_out)}))
    assert Path(answer["result"]["report"]).is_file()
    cli_out = tmp_path / "cli" / "r.gpkg"
    res = CliRunner().invoke(main, [
        "assess", "--centreline", str(p["centreline"]), "--conditions", str(p["sections"]),
        "--dem", f"2019={p['dem_2019']}", "--dem", f"2021={p['dem_2021']}",
        "--dem", f"2024={p['dem']}", "--spacing", "50", "--out", str(cli_out), "--quiet"])
    assert res.exit_code == 0, res.output
    _assert_same_layers(gis_out, cli_out)
    st = pyogrio.read_dataframe(gis_out, layer="stations")
    assert np.allclose(np.diff(st["chainage"]), 50.0)      # the run file's spacing
    assert st["lowering_rate"].notna().sum() > 0.9 * len(st)  # three surveys: rates
    for layer in ("epochs",):
        a = pyogrio.read_dataframe(gis_out, layer=layer)
        b = pyogrio.read_dataframe(cli_out, layer=layer)
        assert len(a) == len(b) > 0


@pytest.mark.slow
def test_line_id_field_matches_the_cli(qgis_python, two_lines, tmp_path):
    gis_out = tmp_path / "gis" / "r.gpkg"
    gis_out.parent.mkdir()
    _drive(qgis_python, "assess", json.dumps({
        "centreline": str(two_lines["centreline"]), "conditions": str(two_lines["sections"]),
        "dem": str(two_lines["dem"]), "line_id_field": "dike", "spacing": 50.0,
        "out": str(gis_out)}))
    cli_out = tmp_path / "cli" / "r.gpkg"
    res = CliRunner().invoke(main, [
        "assess", "--centreline", str(two_lines["centreline"]), "--conditions",
        str(two_lines["sections"]), "--dem", str(two_lines["dem"]), "--line-id-field", "dike",
        "--spacing", "50", "--out", str(cli_out), "--quiet"])
    assert res.exit_code == 0, res.output
    _assert_same_layers(gis_out, cli_out)
    st = pyogrio.read_dataframe(gis_out, layer="stations")
    assert set(st["line_id"]) == {"north-a", "north-b"}


# ------------------------------------------------------------- delivery in the GIS
def test_every_spatial_layer_opens_styled_labelled_and_with_aliases(qgis_python, demo_result):
    """The oldest supported desktop GIS (3.22; its GDAL reads no alias from
    gpkg_data_columns) shows the aliases from the default style, with labels on."""
    from trajectory.outputs.describe import field_title
    from trajectory.outputs.schema import LAYERS

    _, out = demo_result
    spatial = [n for n, (g, _) in LAYERS.items() if g is not None]
    os.environ["TRAJECTORY_LAYERS"] = json.dumps(spatial)
    try:
        answer = _drive(qgis_python, "layers", str(out))
    finally:
        os.environ.pop("TRAJECTORY_LAYERS")
    for name in spatial:
        got = answer["layers"][name]
        assert got["valid"] and got["labels"], name
        want = {f.name: field_title(f.name, f.unit) for f in LAYERS[name][1]}
        assert {k: got["aliases"][k] for k in want} == want, name
    assert answer["layers"]["options"]["renderer"] == "categorizedSymbol"
