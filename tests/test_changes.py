"""What changed since the previous survey: verdicts per station and stretches of change.

The truth is constructed: the invented demo terrain (trajectory.scenario.synthetic) and the
same terrain with two planted crest drops (a deep one that turns ok stations into
deficits, a shallow one that only lowers them). Outside the drops the two terrain
models are the same file content, so nothing may change there. The previous verdict
is defined as today's rules on the previous terrain: it must equal the status of a
run of that terrain alone.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import pyogrio
import pytest

from trajectory.assess import RunInputs, assess, run
from trajectory.judgement.changes import change_class, change_runs
from trajectory.judgement.epochs import Epoch
from trajectory.outputs.report import load_report_data, render_html
from trajectory.outputs.report_changes import changes_section
from trajectory.scenario.synthetic import (
    LeveeSpec,
    LowStretch,
    make_centreline,
    write_dem,
    write_scenario,
)

pytestmark = pytest.mark.slow  # two 3 km terrain models, three runs (about 40 s)

DEEP = LowStretch(1000.0, 1100.0, 0.55, 10.0)     # margins near 0.4 m: ok -> deficit
SHALLOW = LowStretch(2700.0, 2800.0, 0.25, 10.0)  # margins near 0.5 m: stays ok, worse


@pytest.fixture(scope="module")
def scenario(tmp_path_factory):
    out = tmp_path_factory.mktemp("changes")
    spec = LeveeSpec()
    line = make_centreline(spec.length_m)
    paths = write_scenario(out, spec=spec, centreline=line, epochs=False)
    dropped = replace(spec, low_stretches=spec.low_stretches + (DEEP, SHALLOW))
    paths["dem_drop"] = write_dem(out / "dem_drop.tif", line, spec=dropped)
    return paths


def _inputs(paths, previous: str, latest: str, *, kind: str = "dem") -> RunInputs:
    return RunInputs(str(paths["centreline"]), str(paths[latest]), str(paths["sections"]),
                     dem_date="2025", earlier=(Epoch("2024", str(previous), kind),))


@pytest.fixture(scope="module")
def lowered(scenario, tmp_path_factory):
    """Previous survey: the demo terrain; latest: the same with the drops."""
    out = tmp_path_factory.mktemp("lowered") / "r.gpkg"
    res = assess(_inputs(scenario, scenario["dem"], "dem_drop"), out)
    return res, out


def _core(c: np.ndarray, s: LowStretch) -> np.ndarray:
    return (c >= s.from_chainage + s.taper) & (c <= s.to_chainage - s.taper)


def _outside(c: np.ndarray) -> np.ndarray:
    return np.all([(c < s.from_chainage - 25) | (c > s.to_chainage + 25)
                   for s in (DEEP, SHALLOW)], axis=0)


def test_previous_verdict_is_todays_rules_on_the_previous_terrain(scenario, lowered):
    res, _ = lowered
    alone = run(RunInputs(str(scenario["centreline"]), str(scenario["dem"]),
                          str(scenario["sections"])))
    st = res.stations
    np.testing.assert_array_equal(st["status_previous"].to_numpy(object),
                                  alone.stations["status"].to_numpy(object))
    np.testing.assert_allclose(st["margin_previous"], alone.stations["margin"], atol=1e-9)
    # both surveys' accuracy: sqrt(sigma_now^2 + sigma_previous^2), independent surveys
    np.testing.assert_allclose(st["change_sigma"],
                               np.hypot(st["margin_sigma"], alone.stations["margin_sigma"]),
                               rtol=1e-9)


def test_margin_change_is_the_planted_drop_and_nothing_elsewhere(lowered):
    st = lowered[0].stations
    c = st["chainage"].to_numpy(float)
    d = st["margin_change"].to_numpy(float)
    for s in (DEEP, SHALLOW):
        core = _core(c, s)
        assert core.sum() >= 3
        # the crest is lowered by the planted depth (noise is the same in both surveys);
        # the margin by about as much: the requirement moves with the slope read on the
        # lowered crest (the characteristic slope ends at the crest where that lies below
        # the run-up level), a few cm up to about 0.1 m on this profile
        np.testing.assert_allclose(st["change_previous"].to_numpy(float)[core], -s.depth,
                                   atol=0.02)
        assert (d[core] <= -s.depth + 0.02).all() and (d[core] >= -s.depth - 0.15).all()
    out = _outside(c) & np.isfinite(d)
    assert np.abs(d[out]).max() < 1e-9
    assert set(st["verdict_change"].to_numpy(object)[out]) == {"unchanged"}


def test_classes_follow_the_statuses_and_the_combined_sigma(lowered):
    st = lowered[0].stations
    c = st["chainage"].to_numpy(float)
    cls = st["verdict_change"].to_numpy(object)
    prev, now = st["status_previous"].to_numpy(object), st["status"].to_numpy(object)
    deep, shallow = _core(c, DEEP), _core(c, SHALLOW)
    # constructed truth: ok before (margins about 0.4 m), deficit after a 0.55 m drop
    assert set(prev[deep]) == {"ok"} and set(now[deep]) == {"deficit"}
    assert set(cls[deep]) == {"new_deficit"}
    # 0.25 m lower stays ok but exceeds its combined sigma (about 0.085 m)
    assert set(now[shallow]) == {"ok"}
    assert (st["change_sigma"].to_numpy(float)[shallow] < 0.15).all()
    assert set(cls[shallow]) == {"worsened"}


def test_change_table_and_layer_give_the_chainages_of_each_drop(lowered):
    res, out = lowered
    layer = pyogrio.read_dataframe(out, layer="changes")
    assert len(layer) == len(res.changes) >= 2
    for s, kind in ((DEEP, "new_deficit"), (SHALLOW, "worsened")):
        rows = layer[layer["change"] == kind]
        assert len(rows) >= 1
        lo, hi = rows["from_chainage"].min(), rows["to_chainage"].max()
        # the stretch covers the stations of the drop's full depth and ends within one
        # spacing of the drop
        c = res.stations["chainage"].to_numpy(float)
        assert lo <= c[_core(c, s)].min() and hi >= c[_core(c, s)].max()
        assert lo >= s.from_chainage - 25.0 and hi <= s.to_chainage + 25.0
        worst = rows.loc[rows["largest_change"].idxmin()]
        assert s.from_chainage <= worst["largest_change_chainage"] <= s.to_chainage
        assert -s.depth - 0.15 <= worst["largest_change"] <= -s.depth + 0.02
    assert not layer.geometry.is_empty.any()
    # the workbook carries the same table as a sheet
    import zipfile
    with zipfile.ZipFile(out.with_suffix(".xlsx")) as z:
        assert "changes" in z.read("xl/workbook.xml").decode()


def test_report_section_lists_the_stretches_and_plots_the_change(lowered):
    _, out = lowered
    data = load_report_data(out)
    title, html = changes_section(data)
    assert "previous survey" in title
    assert html.count("data-change='new_deficit'") >= 1
    assert html.count("data-change='worsened'") >= 1
    assert "<img" in html
    assert "Where the crest went down, station by station" in render_html(data)


def test_rising_back_resolves_and_compare_keeps_the_delivered_verdict(scenario, lowered,
                                                                      tmp_path):
    """The other way round: previous the lowered result (--compare), latest the demo."""
    _, old = lowered
    res = run(_inputs(scenario, old, "dem", kind="result"))
    st = res.stations
    c = st["chainage"].to_numpy(float)
    deep = _core(c, DEEP)
    assert set(st["verdict_change"].to_numpy(object)[deep]) == {"resolved"}
    assert set(st["verdict_change"].to_numpy(object)[_core(c, SHALLOW)]) == {"improved"}
    earlier = pyogrio.read_dataframe(old, layer="stations")
    np.testing.assert_array_equal(st["status_delivered"].to_numpy(object),
                                  earlier["status"].to_numpy(object))


def test_change_class_and_runs_on_constructed_values():
    status = np.array(["deficit", "ok", "ok", "watch", "ok", "deficit", "no_data"], object)
    prev = np.array(["ok", "deficit", "ok", "ok", "ok", "deficit", "ok"], object)
    margin = np.array([-0.1, 0.2, 0.30, 0.05, 0.50, -0.3, np.nan])
    margin_prev = np.array([0.2, -0.1, 0.41, 0.16, 0.45, -0.1, 0.3])
    sigma = np.full(7, 0.1)
    got = change_class(status, prev, margin, margin_prev, sigma)
    assert list(got) == ["new_deficit", "resolved", "worsened", "worsened", "unchanged",
                         "worsened", ""]
    runs = change_runs(np.arange(7) * 25.0, got, start=0.0, end=162.5)
    assert list(runs.change) == ["new_deficit", "resolved", "worsened", "worsened"]
    np.testing.assert_allclose(runs.from_chainage, [0.0, 12.5, 37.5, 112.5])
    np.testing.assert_allclose(runs.to_chainage, [12.5, 37.5, 87.5, 137.5])
