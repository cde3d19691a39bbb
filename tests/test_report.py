"""The HTML report: parses, is self-contained, and its summary numbers are the GeoPackage's."""

from __future__ import annotations

import base64
import io
from html.parser import HTMLParser

import numpy as np
import pyogrio
import pytest
from click.testing import CliRunner
from matplotlib.figure import Figure
from PIL import Image

from trajectory import CAUTION
from trajectory.frontends.cli import EXIT_INPUT, EXIT_OVERWRITE, main
from trajectory.judgement.status import STATUSES
from trajectory.outputs.report import write_report

VOID = {"meta", "img", "br", "link", "hr", "input", "col", "source", "wbr"}


class _Page(HTMLParser):
    """Collects images, keyed cells and text; checks that tags nest properly."""

    def __init__(self):
        super().__init__(convert_charrefs=True)
        self.stack, self.images, self.cells, self.refs = [], [], {}, []
        self.text, self._key = [], None

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        if tag == "img":
            self.images.append(a)
        for k in ("src", "href"):
            if k in a:
                self.refs.append(a[k])
        if tag not in VOID:
            self.stack.append(tag)
        if "data-key" in a:
            self._key = a["data-key"]
            self.cells.setdefault(a["data-key"], []).append(a.get("data-value"))

    def handle_endtag(self, tag):
        assert self.stack and self.stack[-1] == tag, (tag, self.stack[-3:])
        self.stack.pop()

    def handle_data(self, data):
        self.text.append(data)


@pytest.fixture(scope="module")
def report(demo_result, tmp_path_factory):
    _, out = demo_result
    path = tmp_path_factory.mktemp("report") / "report.html"
    fig = Figure()
    fig.add_subplot().plot([0, 1], [1, 0])
    write_report(out, path, extra_sections=[("Extra figure", fig),
                                            ("Extra table", "<p id='extra'>added</p>")])
    page = _Page()
    html = path.read_text(encoding="utf-8")
    page.feed(html)
    page.close()
    return path, html, page, out


def _option_figures(gpkg) -> int:
    from trajectory.judgement.remedies import OPTIONS
    from trajectory.outputs.report_remedies import N_WORST

    opt = pyogrio.read_dataframe(gpkg, layer="options")
    return min(N_WORST, opt.loc[opt["option"].isin(OPTIONS), "from_chainage"].nunique())


def _piping_figures(gpkg) -> int:
    """One piping figure per short piping stretch, at most N_WORST (report_piping.py)."""
    from trajectory.outputs.report_piping import N_WORST

    runs = pyogrio.read_dataframe(gpkg, layer="piping_stretches")
    return min(N_WORST, int((runs["status"] == "short").sum()))


def _stability_figures(gpkg) -> int:
    """One stability figure per worst screened station, at most N_WORST (report_stability.py)."""
    from trajectory.outputs.profiles import worst_stability_chainages
    from trajectory.outputs.report_stability import N_WORST

    st = pyogrio.read_dataframe(gpkg, layer="stations", read_geometry=False)
    if "stability_status" not in st or not (st["stability_status"] != "not_screened").any():
        return 0
    return len(worst_stability_chainages(st, n=N_WORST))


def test_page_parses_and_is_self_contained(report):
    _, html, page, out = report
    assert page.stack == []
    assert html.startswith("<!DOCTYPE html>")
    assert all(r.startswith("data:") or r.startswith("#") for r in page.refs)
    # summary bar, longitudinal, map, cross-sections, margin band, one options figure per
    # deficit stretch (the demo has two), one piping figure per short piping stretch (at
    # most three), one stability figure per worst screened station (the demo has one),
    # return period held, extra figure; a single survey: no epoch figures
    assert _piping_figures(out) == 3 and _stability_figures(out) == 1
    assert len(page.images) == (4 + 1 + _option_figures(out) + _piping_figures(out)
                                + _stability_figures(out) + 1 + 1)
    for img in page.images:
        head, data = img["src"].split(",", 1)
        assert head == "data:image/png;base64"
        im = Image.open(io.BytesIO(base64.b64decode(data)))
        assert im.format == "PNG" and im.size[0] >= 600
        assert img.get("alt")


def test_caution_is_on_the_first_screen(report):
    _, html, _, _ = report
    body = html[html.index("<body>"):]
    assert CAUTION in body[:body.index("<section")]


def test_summary_numbers_match_the_geopackage(report):
    _, _, page, out = report
    s = pyogrio.read_dataframe(out, layer="stretches")
    st = pyogrio.read_dataframe(out, layer="stations")
    assert float(page.cells["length_assessed"][0]) == pytest.approx(s["length"].sum(), abs=1e-3)
    for status in STATUSES:
        want = s.loc[s["status"] == status, "length"].sum()
        assert float(page.cells[f"length_{status}"][0]) == pytest.approx(want, abs=1e-3)
    text = " ".join(page.text)
    for status in STATUSES:
        assert f"{int((st['status'] == status).sum())} stations" in text
    # the worst stretches table lists the deficit stretches' worst margins, worst first
    deficit = np.sort(s.loc[s["status"] == "deficit", "worst_margin"].to_numpy())
    assert f"{deficit[0]:+.2f}" in text and f"{deficit[-1]:+.2f}" in text


def test_extra_sections_are_added(report):
    _, html, _, _ = report
    assert "<h2>Extra figure</h2>" in html and "<p id='extra'>added</p>" in html
    assert html.index("Extra figure") < html.index("Extra table") < html.index("Run metadata")


@pytest.mark.slow
def test_report_command_and_assess_report(demo, report, tmp_path):
    _, _, _, out = report
    res = CliRunner().invoke(main, ["report", str(out), "--out", str(tmp_path / "r.html"),
                                    "--quiet"])
    assert res.exit_code == 0, res.output
    assert CAUTION in (tmp_path / "r.html").read_text(encoding="utf-8")
    again = CliRunner().invoke(main, ["report", str(out), "--out", str(tmp_path / "r.html")])
    assert again.exit_code == EXIT_OVERWRITE and "--overwrite" in again.output
    res = CliRunner().invoke(main, ["report", str(tmp_path / "missing.gpkg")])
    assert res.exit_code == EXIT_INPUT and "not found" in res.output
    args = ["assess", "--centreline", str(demo["centreline"]), "--dem", str(demo["dem"]),
            "--conditions", str(demo["sections"]), "--out", str(tmp_path / "a.gpkg"),
            "--report", str(tmp_path / "a.html"), "--spacing", "100", "--quiet"]
    res = CliRunner().invoke(main, args)
    assert res.exit_code == 0, res.output
    html = (tmp_path / "a.html").read_text(encoding="utf-8")
    assert "a.gpkg" in html
    assert html.count("data:image/png;base64,") == 4 + 1 + _option_figures(
        tmp_path / "a.gpkg") + _piping_figures(tmp_path / "a.gpkg") + _stability_figures(
        tmp_path / "a.gpkg")


def test_registered_section_builders_run_on_the_report_data(demo_result, monkeypatch):
    from trajectory.outputs import report as rep

    _, out = demo_result
    seen = []

    def builder(data):
        seen.append(len(data.stations))
        return ("Registered", f"<p id='reg'>{len(data.stations)} stations</p>")

    monkeypatch.setattr(rep, "SECTION_BUILDERS", (builder, lambda data: None))
    data = rep.load_report_data(out)
    html = rep.render_html(data, extra_sections=[("Explicit", "<p>x</p>")])
    assert seen == [len(data.stations)]
    assert f"<p id='reg'>{len(data.stations)} stations</p>" in html
    assert html.index("Registered") < html.index("Explicit")


def test_stage_sections_follow_the_core_ones_in_order(report):
    _, html, _, _ = report
    heads = [h.split("</h2>")[0] for h in html.split("<h2>")[1:]]
    # the demo is a single survey: no "Change between surveys"
    assert heads == ["Summary", "Along the levee", "Overview map",
                     "Cross-sections of the worst stations", "How sure is each verdict",
                     "Reinforcement options", "Piping (backward erosion)",
                     "Inner-slope stability",
                     "Return period held against the standard",
                     "Extra figure", "Extra table", "Run metadata"]


def test_stage_builders_leave_out_what_the_file_lacks(demo_result):
    from dataclasses import replace

    from trajectory.outputs import report as rep
    from trajectory.outputs.report_remedies import remedy_section
    from trajectory.outputs.report_uncertainty import uncertainty_section

    _, out = demo_result
    data = rep.load_report_data(out)
    assert remedy_section(data) is not None and uncertainty_section(data) is not None
    # no options layer (a file from before the remedies), or an empty one beside deficits
    assert remedy_section(replace(data, layers={})) is None
    empty = data.layers["options"].iloc[:0]
    assert remedy_section(replace(data, layers={"options": empty})) is None
    # empty options and no deficit stretch: a note, not a gap
    calm = data.stretches.assign(status="ok")
    title, frag = remedy_section(replace(data, stretches=calm, layers={"options": empty}))
    assert "no options needed" in frag
    assert uncertainty_section(replace(data, stations=data.stations.drop(
        columns="margin_sigma"))) is None
    # the page still renders without the later stages' layers
    html = rep.render_html(replace(data, layers={}))
    assert "Reinforcement options" not in html and "How sure is each verdict" in html


def test_standards_section_plots_held_return_periods_and_tables_the_stretches(demo_result):
    """Held return period (log scale) vs the standard; stretches below it marked; optimum."""
    from dataclasses import replace

    from trajectory.outputs import report as rep
    from trajectory.outputs.report_standards import held_figure, standards_section

    _, out = demo_result
    data = rep.load_report_data(out)
    title, frag = standards_section(data)
    assert title == "Return period held against the standard"
    fig = held_figure(data.stations, data.stretches)
    assert fig.axes[0].get_yscale() == "log"
    below = int((data.stretches["below_standard"] == 1).sum())
    assert below >= 1 and frag.count('<tr style="font-weight:bold">') == below
    assert "van Dantzig 1956" in frag and "not a standard" in frag
    no_lines = data.stations.assign(return_period_held=float("nan"))
    assert standards_section(replace(data, stations=no_lines)) is None
