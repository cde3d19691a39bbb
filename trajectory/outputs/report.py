"""The HTML report: one self-contained page built from a results GeoPackage.

``trajectory report RESULTS.gpkg`` and ``trajectory assess --report PATH`` both
read the written GeoPackage, so the report's numbers are the file's numbers.
Every image is a PNG embedded as a ``data:`` URI; the page needs no network,
no script and no other file. Other stages add their own sections through
``extra_sections``: a list of ``(title, content)`` pairs where content is a
matplotlib Figure or an HTML fragment; or, to appear in every report, by
adding a builder (``ReportData -> (title, content) | None``) to
:data:`SECTION_BUILDERS`, one line each. Layers of the GeoPackage beyond the
core ones are in ``ReportData.layers`` for such builders.
"""

from __future__ import annotations

import logging
from collections.abc import Callable, Sequence
from html import escape
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
import pyogrio
from matplotlib.figure import Figure

from .. import CAUTION
from ..errors import InputFileError
from ..judgement.status import STATUSES
from . import (
    plots,
    report_changes,
    report_epochs,
    report_piping,
    report_remedies,
    report_stability,
    report_standards,
    report_structures,
    report_uncertainty,
)
from .atomic import atomic_path
from .plots import figure_html
from .profiles import worst_chainages
from .report_data import ReportData, number_text
from .schema import field_names
from .style import STATUS_COLOURS
from .terrain_layers import read_terrain_shade

log = logging.getLogger(__name__)

#: one extra report section: (title, Figure or HTML fragment)
Section = tuple[str, Figure | str]
#: rows of the worst-stretches table in the summary
WORST_ROWS = 8


SectionBuilder = Callable[[ReportData], "Section | None"]

#: builders of sections every report carries, after the core ones; other stages
#: add theirs here, one line each (e.g. ``report_epochs.epoch_section,``)
SECTION_BUILDERS: tuple[SectionBuilder, ...] = (
    report_structures.structure_section,      # known structures and exceptions applied
    report_uncertainty.uncertainty_section,   # how sure each verdict is
    report_epochs.epoch_section,              # several surveys (None for one)
    report_changes.changes_section,           # verdict changes since the previous survey
    report_remedies.remedy_section,           # reinforcement options
    report_piping.piping_section,             # piping: seepage length, piping berms
    report_stability.stability_section,       # inner-slope stability and berms
    report_standards.standards_section,       # return period held vs the standard
)

#: layers read into ReportData's own fields, or not needed by the report
_CORE = {"stations", "stretches", "run_metadata", "section_profiles", "layer_styles",
         "cross_sections", "crest_line", "dem_extent"}


def load_report_data(gpkg: str | Path, *, name: str | None = None) -> ReportData:
    """Read the layers the report needs from a results GeoPackage (shown as ``name``)."""
    p = Path(gpkg)
    if not p.is_file():
        raise InputFileError(f"{p}: results GeoPackage not found")
    try:
        names = {str(n) for n, _ in pyogrio.list_layers(p)}
    except Exception as exc:  # pyogrio raises several kinds for unreadable files
        raise InputFileError(f"{p}: not a GeoPackage GDAL can read ({exc})") from exc
    missing = {"stations", "stretches", "run_metadata"} - names
    if missing:
        raise InputFileError(f"{p}: not a trajectory results file (missing layer(s) "
                             f"{', '.join(sorted(missing))}); run `trajectory assess` first")
    st = pyogrio.read_dataframe(p, layer="stations")
    stations = pd.DataFrame(st.drop(columns="geometry"))
    stations["x"], stations["y"] = st.geometry.x.to_numpy(), st.geometry.y.to_numpy()
    stretches = pyogrio.read_dataframe(p, layer="stretches")
    meta = pyogrio.read_dataframe(p, layer="run_metadata")
    profiles = (pyogrio.read_dataframe(p, layer="section_profiles")
                if "section_profiles" in names
                else pd.DataFrame({"chainage": [], "offset": [], "level": []}))
    layers = {n: pyogrio.read_dataframe(p, layer=n) for n in sorted(names - _CORE)}
    return ReportData(stations=stations, stretches=stretches,
                      metadata=dict(zip(meta["key"], meta["value"], strict=True)),
                      profiles=pd.DataFrame(profiles), source=name or p.name, layers=layers,
                      terrain=read_terrain_shade(p))


def summary_figures(stations: pd.DataFrame, stretches: pd.DataFrame) -> dict[str, float]:
    """Length assessed, length and share per status (m), station counts."""
    out: dict[str, float] = {"length_assessed": float(stretches["length"].sum()),
                             "stations": float(len(stations))}
    for s in STATUSES:
        out[f"length_{s}"] = float(stretches.loc[stretches["status"] == s, "length"].sum())
        out[f"stations_{s}"] = float((stations["status"] == s).sum())
    return out


def _num(v: Any, fmt: str) -> str:
    return number_text(v, fmt, missing="–", text=True)


def _status_chip(s: str) -> str:
    colour = STATUS_COLOURS.get(s, "#FFFFFF")
    return (f'<span class="status"><span class="chip" style="background:{colour}"></span>'
            f"{escape(s)}</span>")


def _summary_table(fig: dict[str, float]) -> str:
    total = fig["length_assessed"] or 1.0
    rows = [f'<tr><th>length assessed</th><td class="n" data-key="length_assessed" '
            f'data-value="{fig["length_assessed"]:.3f}">{fig["length_assessed"]:,.0f} m</td>'
            f'<td class="n">{int(fig["stations"])} stations</td><td></td></tr>']
    for s in STATUSES:
        v = fig[f"length_{s}"]
        rows.append(f'<tr><th>{_status_chip(s)}</th><td class="n" data-key="length_{s}" '
                    f'data-value="{v:.3f}">{v:,.0f} m</td>'
                    f'<td class="n" data-key="stations_{s}">{int(fig[f"stations_{s}"])} '
                    f'stations</td><td class="n">{100 * v / total:.1f} %</td></tr>')
    return '<table class="summary">' + "".join(rows) + "</table>"


def _worst_table(table: pd.DataFrame) -> str:
    ranked = table.sort_values("severity_rank", kind="stable")
    bad = ranked[ranked["status"].isin(["deficit", "watch"])].head(WORST_ROWS)
    if bad.empty:
        return "<p>No stretch is in deficit or on watch.</p>"
    head = ("<tr><th>#</th><th>from (m)</th><th>to (m)</th><th>length (m)</th><th>status</th>"
            "<th>worst margin (m)</th><th>at chainage (m)</th><th>crest raise (m)</th>"
            "<th>length to raise (m)</th><th>fill, estimate (m³)</th></tr>")
    rows = [
        f"<tr><td>{i}</td><td class='n'>{_num(r.from_chainage, ',.0f')}</td>"
        f"<td class='n'>{_num(r.to_chainage, ',.0f')}</td>"
        f"<td class='n'>{_num(r.length, ',.0f')}</td><td>{_status_chip(r.status)}</td>"
        f"<td class='n' data-key='worst_margin'>{_num(r.worst_margin, '+.2f')}</td>"
        f"<td class='n'>{_num(r.worst_chainage, ',.0f')}</td>"
        f"<td class='n'>{_num(r.crest_raise, '.2f')}</td>"
        f"<td class='n'>{_num(r.length_to_raise, ',.0f')}</td>"
        f"<td class='n'>{_num(r.fill_volume, ',.0f')}</td></tr>"
        for i, r in enumerate(bad.itertuples(index=False), start=1)
    ]
    return f'<table class="worst">{head}{"".join(rows)}</table>'


#: the report's heading where the run gives no --title
DEFAULT_TITLE = "Levee crest screening"


def report_title(meta: dict[str, str]) -> str:
    """The report's heading: the run's ``title`` parameter (the levee's name), else generic."""
    given = str(meta.get("param_title", "") or "").strip()
    return f"{given} – levee crest screening" if given else DEFAULT_TITLE


def _header_table(meta: dict[str, str], stations: pd.DataFrame) -> str:
    """What the year's deliverable states first: surveys, water side, watch band, assessed."""
    surveys = str(meta.get("epochs", "") or meta.get("input_dem", "")) or "–"
    sides = stations["water_side"].astype(str).value_counts() if "water_side" in stations \
        else pd.Series(dtype=int)
    side_text = "; ".join(f"{k} of the centreline's digitised direction ({v} stations)"
                          for k, v in sides.items()) or escape(str(meta.get("param_water_side",
                                                                            "–")))
    band = _num(meta.get("param_watch_band", np.nan), ".2f")
    rows = [("Survey(s), oldest first", surveys), ("Water side", side_text),
            ("Watch band", f"{band} m: margins from 0 up to it are watch, not ok"),
            ("Run", str(meta.get("run_time", "–")))]
    body = "".join(f'<tr><th>{escape(k)}</th><td data-key="{escape(k)}">{escape(v)}</td></tr>'
                   for k, v in rows)
    return f'<table class="head">{body}</table>'


def _metadata_table(meta: dict[str, str]) -> str:
    rows = "".join(f"<tr><th>{escape(k)}</th><td>{escape(str(v))}</td></tr>"
                   for k, v in sorted(meta.items()))
    return f'<table class="meta">{rows}</table>'


def _section_html(title: str, content: Figure | str, anchor: str) -> str:
    body = figure_html(content, title) if isinstance(content, Figure) else content
    return f'<section id="{anchor}"><h2>{escape(title)}</h2>{body}</section>'


_CSS = """
body{font-family:"DejaVu Sans",Helvetica,Arial,sans-serif;max-width:1100px;margin:1.5em auto;
 padding:0 1em;color:#222;line-height:1.4}
h1{font-size:1.6em;margin:.2em 0} h2{font-size:1.25em;border-bottom:1px solid #bbb;
 padding-bottom:.15em;margin-top:1.6em} h3{font-size:1.05em}
.caution{border:2px solid #A6103C;background:#fbeef1;padding:.6em .9em;margin:.8em 0;
 font-size:1.02em}
.run{color:#444;font-size:.9em} img{max-width:100%;height:auto;display:block;margin:.5em 0}
table{border-collapse:collapse;font-size:.9em;margin:.5em 0} th,td{padding:.2em .6em;
 border-bottom:1px solid #ddd;text-align:left;vertical-align:top} td.n{text-align:right;
 font-variant-numeric:tabular-nums} table.meta td{word-break:break-all}
.chip{display:inline-block;width:.9em;height:.9em;border:1px solid #303030;margin-right:.4em;
 vertical-align:-.1em;-webkit-print-color-adjust:exact;print-color-adjust:exact}
.status{white-space:nowrap}
.grid{display:flex;flex-wrap:wrap;gap:2em;align-items:flex-start}
@media print{body{max-width:none;margin:0} section{break-inside:avoid-page}
 h2{break-after:avoid}}
"""


def render_html(data: ReportData, *, extra_sections: Sequence[Section] = ()) -> str:
    """The report page as one HTML string (pure: nothing is read or written)."""
    st, sr, meta = data.stations, data.stretches, data.metadata
    attrs = pd.DataFrame(sr.drop(columns="geometry"))[field_names("stretches")]
    figs = summary_figures(st, attrs)
    chosen = worst_chainages(attrs, st)
    have = np.isin(chosen, data.profiles["chainage"].to_numpy(float))
    run_line = " · ".join(escape(str(meta.get(k, ""))) for k in ("software", "run_time")
                          if meta.get(k))
    inputs = ", ".join(escape(str(meta[k])) for k in ("input_centreline", "input_dem",
                                                       "input_conditions") if k in meta)
    title = report_title(meta)
    parts = [
        "<!DOCTYPE html>",
        '<html lang="en"><head><meta charset="utf-8">',
        '<meta name="viewport" content="width=device-width, initial-scale=1">',
        f"<title>{escape(title)} – {escape(data.source)}</title>",
        f"<style>{_CSS}</style></head><body>",
        f'<header><h1 id="report-title">{escape(title)}</h1>',
        f'<div class="caution" role="note"><strong>Caution.</strong> {escape(CAUTION)}</div>',
        _header_table(meta, st),
        f'<p class="run">Results file <b>{escape(data.source)}</b> · {run_line}<br>'
        f"Inputs: {inputs} · CRS {escape(str(meta.get('crs', '?')))}</p></header>",
        '<section id="summary"><h2>Summary</h2><div class="grid"><div>',
        _summary_table(figs), "</div><div style='flex:1;min-width:320px'>",
        figure_html(plots.length_by_status(attrs), "length per status"), "</div></div>",
        "<h3>Worst stretches (worst margin first)</h3>", _worst_table(attrs),
        "<p class='run'>Crest raise, length to raise and fill are screening estimates; "
        "the fill assumes the crest is raised keeping crest width and slopes "
        "(method in the README).</p></section>",
        _section_html("Along the levee", plots.longitudinal(st, attrs), "longitudinal"),
        _section_html("Overview map", plots.overview_map(st, sr, terrain=data.terrain), "map"),
    ]
    fig = plots.cross_sections(data.profiles, st, chosen[have])
    if fig is not None:
        parts.append(_section_html("Cross-sections of the worst stations", fig, "sections"))
    else:
        parts.append(_section_html("Cross-sections of the worst stations",
                                   "<p>No stored profile to draw.</p>", "sections"))
    built = [sec for sec in (b(data) for b in SECTION_BUILDERS) if sec is not None]
    for i, (title, content) in enumerate([*built, *extra_sections]):
        parts.append(_section_html(title, content, f"extra-{i + 1}"))
    parts += [
        '<section id="run-metadata"><h2>Run metadata</h2>'
        "<details><summary>inputs, checksums, every parameter</summary>",
        _metadata_table(meta), "</details></section>",
        f'<footer><p class="caution">{escape(CAUTION)}</p></footer></body></html>',
    ]
    return "\n".join(parts)


def write_report(gpkg: str | Path, out: str | Path, *, overwrite: bool = False,
                 extra_sections: Sequence[Section] = (), name: str | None = None) -> Path:
    """Build the report of a results GeoPackage and write it to ``out`` atomically.

    ``name`` is the GeoPackage's name shown in the report (default: its file name).
    """
    from .targets import check_targets

    check_targets({"the report": Path(out)}, {"the results": gpkg})
    html = render_html(load_report_data(gpkg, name=name), extra_sections=extra_sections)
    with atomic_path(out, overwrite=overwrite) as tmp:
        tmp.write_text(html, encoding="utf-8")
    log.debug("wrote report %s", out)
    return Path(out)
