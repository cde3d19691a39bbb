"""Report section for the remedies: options drawn on the governing station's section, volumes.

Built from the results GeoPackage (:class:`~.report_data.ReportData`): the
``options`` layer, the governing station's fields in ``stations`` and its stored
ground profile in ``section_profiles`` (which keeps the station that governs
every whole-stretch design, see :mod:`.profiles`).
"""

from __future__ import annotations

import html
from typing import TYPE_CHECKING

import numpy as np
import pandas as pd
from matplotlib.figure import Figure

from ..judgement.remedies import CAVEAT, COST_NOTE, OPTIONS, Geometry, outline
from .plots import figure_html, new_figure
from .report_data import number_text
from .style import STATUS_COLOURS

if TYPE_CHECKING:
    from .report_data import ReportData

TITLE = "Reinforcement options"
#: deficit (or watch) stretches drawn, worst margin first
N_WORST = 3

#: line styles per option (our own; distinguishable in greyscale print)
_STYLE = {"raise": ("#1b5e9e", "--"), "outer_berm": ("#c26a00", "-."),
          "combined": ("#2e7d32", ":")}



def options_figure(station: pd.Series, rows: pd.DataFrame,
                   profile: pd.DataFrame | None = None) -> Figure:
    """The governing station's measured profile, its idealised outline and each option's."""
    g = Geometry(*(np.array([float(station[c])]) for c in (
        "crest_level", "crest_width", "outer_slope", "inner_slope", "outer_toe_level",
        "inner_toe_level")))
    inner_edge = float(station["crest_offset"] - station["crest_width"] / 2)
    fig = new_figure(9.0, 3.8)
    ax = fig.add_subplot()
    if profile is not None and not profile.empty:
        ax.plot(profile["offset"].to_numpy(float), profile["level"].to_numpy(float),
                color="#8C7B6B", lw=1.0, label="ground (DEM)")
    x, z = outline(g, 0, inner_edge=inner_edge)
    ax.plot(x, z, color="black", lw=1.4, label="idealised existing")
    lo, hi = x[0], x[-1]
    for r in rows.itertuples(index=False):
        colour, ls = _STYLE[r.option]
        bw = float(r.berm_width) if np.isfinite(r.berm_width) else 0.0
        x, z = outline(g, 0, crest_raise=float(r.crest_raise), berm_width=bw,
                       berm_level=float(r.berm_level), inner_edge=inner_edge)
        ax.plot(x, z, color=colour, ls=ls, lw=1.9, label=str(r.option))
        lo, hi = min(lo, x[0]), max(hi, x[-1])
    ax.set_xlim(lo - 8.0, hi + 8.0)
    swl = float(station["water_level"] + station["sea_level_rise"])
    ax.axhline(swl, color="#2B6FA8", lw=0.7, ls=(0, (1, 4)),
               label="still water + sea-level rise")
    ax.axhline(float(station["required_level"]), color=STATUS_COLOURS["deficit"], lw=0.7,
               ls=(0, (12, 4)), label="required crest level")
    ax.set_xlabel("offset from centreline (m), + towards the water")
    ax.set_ylabel("level (m, DEM datum)")
    ax.set_title(f"chainage {float(station['chainage']):,.0f} m: options over the stretch, "
                 "drawn on the station that governs the raise",
                 fontsize=8)
    ax.grid(alpha=0.3, lw=0.4)
    fig.legend(*ax.get_legend_handles_labels(), fontsize=7, ncol=4,
               loc="outside upper center", frameon=False)
    return fig


def _f(v, fmt: str) -> str:
    return number_text(v, fmt)


def options_table(rows: pd.DataFrame) -> str:
    """The options of one stretch as an HTML table, the cheapest closing one starred."""
    costed = bool(np.isfinite(rows["cost"].to_numpy(float)).any())
    head = ("<tr><th>basis</th><th>option</th><th>crest raise (m)</th><th>berm level (m)</th>"
            "<th>berm width (m)</th><th>fill, estimate (m&sup3;)</th>"
            "<th>footprint out / in (m)</th><th>&gamma;<sub>b</sub></th><th>closes gap</th>"
            + ("<th>cost, indicative</th>" if costed else "") + "</tr>")
    body = []
    for r in rows.itertuples(index=False):
        mark = " &#9733; cheapest" if int(r.cheapest) else ""
        closes = ("yes" if int(r.closes_gap)
                  else f"no (short {_f(r.remaining_deficit, '.2f')} m)")
        body.append(
            f"<tr><td>{html.escape(str(r.basis))}</td><td>{html.escape(str(r.option))}{mark}"
            f"</td><td class='n'>{_f(r.crest_raise, '.2f')}</td>"
            f"<td class='n'>{_f(r.berm_level, '.2f')}</td>"
            f"<td class='n'>{_f(r.berm_width, '.1f')}</td>"
            f"<td class='n'>{_f(r.fill_volume, ',.0f')}</td>"
            f"<td class='n'>{_f(r.footprint_outer, '.1f')} / {_f(r.footprint_inner, '.1f')}</td>"
            f"<td class='n'>{_f(r.gamma_b, '.2f')}</td><td>{closes}</td>"
            + (f"<td class='n'>{_f(r.cost, ',.0f')}</td>" if costed else "") + "</tr>")
    return f"<table class='options'>{head}{''.join(body)}</table>"


def sorted_options(options: pd.DataFrame) -> pd.DataFrame:
    """Options by stretch, then basis, then option in the order raise, outer_berm, combined."""
    o = pd.DataFrame(options.drop(columns="geometry", errors="ignore"))
    o["_k"] = o["option"].map({n: i for i, n in enumerate(OPTIONS)})
    return o.sort_values(["from_chainage", "basis", "_k"], kind="stable").drop(columns="_k")


def remedy_section(data: ReportData, *, n_worst: int = N_WORST) -> tuple[str, str] | None:
    """The report's section on the remedies of the worst stretches.

    None when the file has no options layer, or options are absent although a
    deficit stretch is present; a note when no stretch is in deficit.
    """
    opt = data.layers.get("options")
    if opt is None:
        return None
    opt = opt[opt["option"].isin(OPTIONS)]  # the crest's; piping berms: report_piping.py
    if opt.empty:
        if (data.stretches["status"] == "deficit").any():
            return None
        return TITLE, "<p>No deficit stretch: no options needed.</p>"
    opt = sorted_options(opt[opt["option"].isin(OPTIONS)])  # the crest's (stability: its own)
    if opt.empty:
        return TITLE, "<p>No deficit stretch: no options needed.</p>"
    sr = data.stretches.set_index("from_chainage")
    worst = sr["worst_margin"].reindex(opt["from_chainage"].unique())
    chosen = worst.sort_values(kind="stable").index[:n_worst]
    costed = bool(np.isfinite(opt["cost"].to_numpy(float)).any())
    note = COST_NOTE if costed else "No unit rate was set (fill_unit_cost): no costs."
    parts = [f"<p class='caution'>{html.escape(CAVEAT)} {html.escape(note)}</p>",
             f"<p>The {len(chosen)} worst of {worst.size} stretches with options; every "
             "option is in the GeoPackage's <code>options</code> layer and the workbook's "
             "<code>options</code> sheet. &#9733;: the least fill that closes the gap.</p>"]
    st_ch = data.stations["chainage"].to_numpy(float)
    prof_ch = data.profiles["chainage"].to_numpy(float)
    for a in chosen:
        rows = opt[opt["from_chainage"] == a]
        head = rows.iloc[0]
        ws = rows[rows["basis"] == "whole_stretch"]
        parts.append(
            f"<h3>Stretch {_f(head['from_chainage'], ',.0f')}–{_f(head['to_chainage'], ',.0f')}"
            f" m ({_f(head['length'], ',.0f')} m, {html.escape(str(head['status']))}, worst "
            f"margin {_f(worst[a], '+.2f')} m)</h3>")
        if not ws.empty and np.isfinite(ws["chainage"].iloc[0]):
            wc = float(ws["chainage"].iloc[0])
            station = data.stations.iloc[int(np.argmin(np.abs(st_ch - wc)))]
            prof = data.profiles[np.isclose(prof_ch, wc)]
            parts.append(figure_html(options_figure(station, ws, prof),
                                     f"options drawn at chainage {wc:,.0f} m"))
        parts.append(options_table(rows))
    return TITLE, "\n".join(parts)
