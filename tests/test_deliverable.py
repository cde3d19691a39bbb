"""The year's deliverable: the report's title and header, every station's profile in the
GeoPackage, a section's design slope, and the GIS delivery (styles, descriptions,
aliases, options side by side).

Truth: the invented demo (trajectory.scenario.synthetic, a straight 1:3 outer slope without a
berm in section VN-04), a design slope given here, and the GeoPackage encoding
standard's tables (OGC GeoPackage 1.3: gpkg_contents, gpkg_data_columns).
"""

from __future__ import annotations

import contextlib
import sqlite3
import xml.etree.ElementTree as ET
from dataclasses import replace

import numpy as np
import pandas as pd
import pyogrio
import pytest
import shapely
from click.testing import CliRunner

from trajectory.assess import RunInputs, run
from trajectory.frontends.cli import main
from trajectory.judgement.remedies import OPTIONS
from trajectory.outputs.describe import field_title
from trajectory.outputs.geopackage import OPTION_OFFSET_STEP
from trajectory.outputs.profiles import decode_levels
from trajectory.outputs.report import load_report_data, render_html
from trajectory.outputs.schema import LAYERS
from trajectory.params import Settings, parameter_table
from trajectory.scenario.synthetic import LeveeSpec, indicative_required_level


def _query(path, sql):
    with contextlib.closing(sqlite3.connect(path)) as con:
        return con.execute(sql).fetchall()


# ------------------------------------------------------------------ item 5: the report
def test_title_is_one_parameter_for_cli_run_file_and_gis_and_heads_the_report(demo_result):
    assert "title" in {r["name"] for r in parameter_table()}  # the GIS tool's source too
    assert "--title" in CliRunner().invoke(main, ["assess", "--help"]).output
    assert Settings.from_mapping({"title": "Harrow Dyke"}).title == "Harrow Dyke"
    _, out = demo_result
    data = load_report_data(out)
    named = replace(data, metadata={**data.metadata, "param_title": "Harrow Dyke <north>"})
    html = render_html(named)
    assert '<h1 id="report-title">Harrow Dyke &lt;north&gt; – levee crest screening</h1>' in html
    # the header states the surveys, the water side and the watch band
    assert 'data-key="Survey(s), oldest first"' in html
    assert "left of the centreline&#x27;s digitised direction" in html
    assert "0.10 m: margins from 0 up to it are watch" in html
    assert "Levee crest screening</h1>" in render_html(data)  # no title: generic heading


def test_cross_sections_layer_holds_every_station_profile(demo_result):
    res, out = demo_result
    xs = pyogrio.read_dataframe(out, layer="cross_sections")
    assert len(xs) == len(res.stations)
    np.testing.assert_array_equal(xs["chainage"], res.stations["chainage"])
    for i in (0, len(xs) // 2, len(xs) - 1):
        z = decode_levels(xs["profile_levels"].iloc[i])
        off = xs["profile_start"].iloc[i] + xs["profile_step"].iloc[i] * np.arange(z.size)
        np.testing.assert_allclose(off, res.offsets, atol=1e-9)
        np.testing.assert_allclose(z, res.profiles[i], atol=5e-4, equal_nan=True)  # to 1 mm


def test_cross_section_figure_marks_edges_toes_and_water_on_the_water_side(demo_result):
    from trajectory.outputs.plots import cross_sections

    _, out = demo_result
    data = load_report_data(out)
    st = data.stations
    ch = float(st.loc[st["margin"].idxmin(), "chainage"])
    fig = cross_sections(data.profiles, st, np.array([ch]))
    labels = {t.get_text() for t in fig.legends[0].get_texts()}
    assert {"crest edge", "toe", "slope segments (breakline)"} <= labels
    ax = fig.axes[0]
    texts = {t.get_text() for t in ax.texts}
    assert {"water side →", "← land side"} <= texts
    water = [c for c in ax.collections if c.get_label() == "water level + sea-level rise"]
    line = next(ln for ln in ax.collections if ln.get_label() == "water level + sea-level rise") \
        if water else None
    assert line is not None
    xs = np.concatenate([seg[:, 0] for seg in line.get_segments()])
    assert xs.min() > float(st.loc[st["chainage"] == ch, "crest_offset"].iloc[0])


@pytest.fixture(scope="module")
def design_run(demo, tmp_path_factory):
    """The demo with a registered design slope of 1:4 on VN-04 (built 1:3)."""
    table = pd.read_csv(demo["sections"])
    table["design_outer_slope"] = np.where(table["section_id"] == "VN-04", 4.0, np.nan)
    path = tmp_path_factory.mktemp("design") / "sections.csv"
    table.to_csv(path, index=False)
    return run(RunInputs(str(demo["centreline"]), str(demo["dem"]), str(path)))


def test_design_slope_replaces_the_measured_one_and_is_flagged(design_run):
    st = design_run.stations
    sec = st["section_id"].to_numpy(object)
    on = (sec == "VN-04") & (st["status"] != "no_data").to_numpy()
    assert on.sum() >= 20
    assert set(st.loc[on, "outer_slope_source"]) == {"design"}
    assert all("design_slope" in f for f in st.loc[on, "flags"])
    np.testing.assert_allclose(st.loc[on, "tan_alpha"], 0.25)
    # the measured characteristic slope is kept for audit (about 1:3 as built)
    assert abs(st.loc[on, "characteristic_slope"].median() - 3.0) < 0.3
    # no jitter: one straight 1:4 slope, no berm, a constant design level -> one
    # requirement, the EurOtop (2018) inverse on 1:4 (the demo's straight-slope helper)
    spec = LeveeSpec()
    vn04 = next(s for s in spec.sections if s.section_id == "VN-04")
    plain = on & (st["gamma_b"].to_numpy(float) == 1.0)
    assert plain.sum() >= 0.8 * on.sum()
    np.testing.assert_allclose(st.loc[plain, "required_level"],
                               indicative_required_level(vn04, cot_alpha=4.0), atol=1e-6)
    # the requirement carries no survey error of the slope there
    np.testing.assert_allclose(st.loc[on, "required_sigma"], 0.0)
    off = sec != "VN-04"
    assert set(st.loc[off, "outer_slope_source"].dropna()) == {"measured"}


def test_options_are_designed_on_the_same_design_requirement(design_run):
    """One requirement serves status and remedies: the options see tan_alpha = 1/4 too."""
    from trajectory.judgement.remedies import Rule

    rule = Rule.of_stations(design_run.stations)
    on = (design_run.stations["section_id"] == "VN-04").to_numpy()
    np.testing.assert_allclose(np.asarray(rule.tan_alpha)[on], 0.25)


# ------------------------------------------------------------------ item 6: GIS delivery
def test_every_spatial_layer_has_a_default_style_with_labels_and_aliases(demo_result):
    _, out = demo_result
    spatial = [n for n, (g, _) in LAYERS.items() if g is not None]
    rows = {r[0]: r for r in _query(out, "SELECT f_table_name, styleQML, styleSLD, "
                                         "useAsDefault FROM layer_styles")}
    assert set(spatial) <= set(rows)
    for name in spatial:
        _, q, s, default = rows[name]
        assert default == 1
        doc = ET.fromstring(q.split("\n", 1)[1])
        assert doc.get("labelsEnabled") == "1"
        style = doc.find("labeling/settings/text-style")
        # layers along the line are labelled by chainage; the DEM's footprint by its file
        assert ("dem" if name == "dem_extent" else "chainage") in style.get("fieldName")
        aliases = {a.get("field"): a.get("name") for a in doc.iter("alias")}
        assert aliases == {f.name: field_title(f.name, f.unit) for f in LAYERS[name][1]}
        assert "TextSymbolizer" in s


def test_contents_descriptions_and_data_column_titles_are_filled(demo_result):
    _, out = demo_result
    desc = dict(_query(out, "SELECT table_name, description FROM gpkg_contents"))
    for name in LAYERS:
        assert desc[name] and desc[name].strip(), name
    titles = {(t, c): (n, ti) for t, c, n, ti in
              _query(out, "SELECT table_name, column_name, name, title FROM gpkg_data_columns")}
    assert titles[("stations", "crest_level")] == ("crest_level [m]", "crest_level [m]")


def test_options_of_a_stretch_lie_side_by_side_on_the_land_side(demo_result):
    res, out = demo_result
    opt = pyogrio.read_dataframe(out, layer="options")
    # the crest's options lie on the crest stretches (berms of the inner side on theirs)
    opt = opt[opt["option"].isin(OPTIONS)]
    assert len(opt) >= 6
    lines = pyogrio.read_dataframe(out, layer="stretches")
    for (a, b), grp in opt.groupby(["from_chainage", "to_chainage"]):
        geoms = list(grp.geometry)
        for i in range(len(geoms)):
            for j in range(i + 1, len(geoms)):
                assert not geoms[i].equals(geoms[j])
        stretch = lines[(lines["from_chainage"] == a) & (lines["to_chainage"] == b)].geometry
        base = stretch.iloc[0]
        # each option's distance from its stretch is a whole number of offset steps
        # (shapely's distance between a line and its parallel offset, a straight levee)
        d = np.array([shapely.hausdorff_distance(g, base) for g in geoms])
        k = d / OPTION_OFFSET_STEP
        assert np.all(k > 0.9)
        assert len(np.unique(np.round(k))) == len(geoms)
    # land side: the demo's water is on the left of the line, the options to its right
    st = res.stations
    x0, y0, nx, ny = (st[c].iloc[len(st) // 2] for c in ("x", "y", "nx", "ny"))
    assert set(st["water_side"]) == {"left"}
    g = opt.geometry.iloc[0]
    p = shapely.line_interpolate_point(g, 0.5, normalized=True)
    near = st.iloc[int(np.argmin(np.hypot(st["x"] - p.x, st["y"] - p.y)))]
    # the section normal (nx, ny) points to the water side where water_side is left
    side = (p.x - near["x"]) * near["nx"] + (p.y - near["y"]) * near["ny"]
    assert side < 0, (x0, y0, nx, ny)


def test_profile_text_matches_pythons_own_integer_formatting():
    """The columnar encoder writes what str() of each rounded millimetre value writes."""
    from trajectory.outputs.profiles import encode_levels

    rng = np.random.default_rng(21)
    z = np.concatenate([rng.normal(3.0, 2.0, (40, 30)), rng.uniform(-500, 9000, (10, 30))])
    z[rng.random(z.shape) < 0.1] = np.nan
    z[0, :4] = [-0.0004, -0.0006, 0.0, 9000.0]
    want = [" ".join("nan" if not np.isfinite(v) else str(int(np.rint(v * 1000.0)))
                     for v in row) for row in z]
    got = [" ".join(t.split()) for t in encode_levels(z)]
    assert got == want
    assert len(encode_levels(np.empty((0, 5)))) == 0


def test_monte_carlo_keeps_the_design_slope_in_every_realisation(demo):
    """With the slope given, each realisation's margin is its crest minus one fixed
    requirement, so the Monte Carlo spreads of margin and crest are the same numbers."""
    res = run(RunInputs(str(demo["centreline"]), str(demo["dem"]), str(demo["sections"])),
              Settings(simulate=8))
    st = res.stations
    on = (st["outer_slope_source"] == "design").to_numpy() & np.isfinite(
        st["sim_margin_sigma"].to_numpy(float))
    assert on.sum() >= 20  # the demo's VN-04 gives its design slope
    np.testing.assert_allclose(st.loc[on, "sim_margin_sigma"], st.loc[on, "sim_crest_sigma"],
                               rtol=1e-9)
    off = (st["outer_slope_source"] == "measured").to_numpy() & np.isfinite(
        st["sim_margin_sigma"].to_numpy(float))
    assert not np.allclose(st.loc[off, "sim_margin_sigma"], st.loc[off, "sim_crest_sigma"])
