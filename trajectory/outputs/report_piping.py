"""Report section for piping: the stretches, and a cross-section per worst station.

Built from the results GeoPackage (:class:`~.report_data.ReportData`): the
``piping_stretches`` layer, the stations' piping fields, the ``piping_berm``
rows of ``options`` and the stored profiles (``section_profiles`` keeps the
worst station of the piping stretches drawn here, see
:func:`trajectory.outputs.geopackage.section_profile_table`).
"""

from __future__ import annotations

import html
from typing import TYPE_CHECKING

import numpy as np
import pandas as pd
from matplotlib.figure import Figure

from ..inner.piping_screen import CAVEAT, berm_face
from .plots import figure_html, new_figure
from .report_data import number_text
from .style import STATUS_COLOURS

if TYPE_CHECKING:
    from .report_data import ReportData

TITLE = "Piping (backward erosion)"
#: stretches short on piping drawn, worst margin first
N_WORST = 3


def drawn_chainages(stretches: pd.DataFrame, *, n: int = N_WORST) -> np.ndarray:
    """Worst stations of the piping stretches drawn: the ``short`` ones, worst first (<= n);
    with none short, the screened station with the least margin."""
    if stretches is None or stretches.empty:
        return np.array([], float)
    m = stretches["worst_margin"].to_numpy(float)
    short = (stretches["status"].to_numpy(object) == "short") & np.isfinite(m)
    pick = short if short.any() else (stretches["status"].to_numpy(object) == "ok") & \
        np.isfinite(m)
    if not pick.any():
        return np.array([], float)
    order = np.argsort(np.where(pick, m, np.inf), kind="stable")[:int(pick.sum())]
    return stretches["worst_chainage"].to_numpy(float)[order][: n if short.any() else 1]


def piping_figure(station: pd.Series, profile: pd.DataFrame,
                  berm: pd.Series | None = None, *, thickness: float = 1.0) -> Figure:
    """The station's ground, still water, polder level, entry and exit points, the berm."""
    fig = new_figure(9.0, 3.6)
    ax = fig.add_subplot()
    x = profile["offset"].to_numpy(float)
    z = profile["level"].to_numpy(float)
    ax.plot(x, z, color="#8C7B6B", lw=1.0, label="ground (DEM)")
    swl = float(station["water_level"] + station["sea_level_rise"])
    ax.axhline(swl, color="#2B6FA8", lw=0.7, ls=(0, (1, 4)),
               label="still water + sea-level rise")
    ax.axhline(float(station["polder_level"]), color="#2e7d32", lw=0.7, ls=(0, (6, 3)),
               label="polder level")
    ent, ext = float(station["piping_entry_offset"]), float(station["piping_exit_offset"])
    zi = np.interp([ent, ext], x[np.isfinite(z)], z[np.isfinite(z)])
    ax.plot([ent, ext], zi, ls="none", marker="v", color="#1b5e9e", ms=6)
    ax.annotate("entry", (ent, zi[0]), xytext=(0, 8), textcoords="offset points",
                ha="center", fontsize=7)
    ax.annotate("exit", (ext, zi[1]), xytext=(0, 8), textcoords="offset points",
                ha="center", fontsize=7)
    ax.plot([ext, ent], [min(zi) - 0.4] * 2, color="#1b5e9e", lw=1.2,
            label=f"seepage length {float(station['seepage_length']):.1f} m")
    if berm is not None:
        t = float(berm["berm_level"]) - float(station["inner_toe_level"])
        b = float(berm["berm_width"])
        n = float(berm_face(np.array([float(station["inner_slope"])]))[0])
        top = float(berm["berm_level"])
        bx = [ext + t * n, ext - b + t * n, ext - b]
        bz = [top, top, top - t]
        ax.plot(bx, bz, color="#c26a00", lw=1.9, ls="-.",
                label=f"piping berm {b:.1f} m x {t:.1f} m")
    ax.set_xlabel("offset from centreline (m), + towards the water")
    ax.set_ylabel("level (m, DEM datum)")
    margin = float(station["piping_margin"])
    ax.set_title(f"chainage {float(station['chainage']):,.0f} m: seepage length vs "
                 f"{station['piping_rule']} ({float(station['piping_required']):.1f} m), "
                 f"margin {margin:+.1f} m", fontsize=8,
                 color=STATUS_COLOURS["deficit"] if margin < 0 else "black")
    ax.grid(alpha=0.3, lw=0.4)
    fig.legend(*ax.get_legend_handles_labels(), fontsize=7, ncol=3,
               loc="outside upper center", frameon=False)
    return fig


def _f(v, fmt: str) -> str:
    return number_text(v, fmt, missing="–", text=True)


def stretch_table(stretches: pd.DataFrame, berms: pd.DataFrame) -> str:
    """The screened piping stretches as an HTML table, with the proposed berm per short one."""
    shown = stretches[stretches["status"] != "not_screened"]
    by = {float(a): r for a, r in zip(berms["from_chainage"], berms.itertuples(index=False),
                                      strict=True)}
    head = ("<tr><th>from (m)</th><th>to (m)</th><th>length (m)</th><th>piping status</th>"
            "<th>worst margin (m)</th><th>at chainage (m)</th><th>seepage length (m)</th>"
            "<th>required (m)</th><th>rule</th><th>piping berm (m)</th>"
            "<th>fill, estimate (m&sup3;)</th></tr>")
    rows = []
    for r in shown.itertuples(index=False):
        b = by.get(float(r.from_chainage))
        rows.append(
            f"<tr><td class='n'>{_f(r.from_chainage, ',.0f')}</td>"
            f"<td class='n'>{_f(r.to_chainage, ',.0f')}</td>"
            f"<td class='n'>{_f(r.length, ',.0f')}</td><td>{html.escape(str(r.status))}</td>"
            f"<td class='n' data-key='piping_margin'>{_f(r.worst_margin, '+.1f')}</td>"
            f"<td class='n'>{_f(r.worst_chainage, ',.0f')}</td>"
            f"<td class='n'>{_f(r.seepage_length, '.1f')}</td>"
            f"<td class='n'>{_f(r.piping_required, '.1f')}</td>"
            f"<td>{html.escape(str(r.piping_rule or ''))}</td>"
            f"<td class='n'>{_f(b.berm_width, '.1f') if b is not None else ''}</td>"
            f"<td class='n'>{_f(b.fill_volume, ',.0f') if b is not None else ''}</td></tr>")
    return f"<table class='piping'>{head}{''.join(rows)}</table>"


def piping_section(data: ReportData, *, n_worst: int = N_WORST) -> tuple[str, str] | None:
    """The report's piping section; None when the file has no piping layer or nothing
    was screened."""
    sr = data.layers.get("piping_stretches")
    if sr is None or sr.empty or not (sr["status"] != "not_screened").any():
        return None
    sr = pd.DataFrame(sr.drop(columns="geometry", errors="ignore"))
    opt = data.layers.get("options")
    berms = (pd.DataFrame(opt.drop(columns="geometry", errors="ignore")) if opt is not None
             else pd.DataFrame(columns=["option", "from_chainage"]))
    berms = berms[berms["option"] == "piping_berm"]
    st = data.stations
    length = {s: float(sr.loc[sr["status"] == s, "length"].sum()) for s in ("ok", "short")}
    thickness = float(data.metadata.get("param_piping_berm_thickness", 1.0))
    parts = [f"<p class='caution'>{html.escape(CAVEAT)}</p>",
             f"<p>Screened: {length['ok']:,.0f} m ok, <b>{length['short']:,.0f} m short</b> "
             "on piping. Seepage length from the entry point (outer toe or design waterline) "
             "to the exit point (inner toe, or the end of an inner berm); the rule requiring "
             "the longest path governs. Every station's fields are in the "
             "<code>stations</code> layer; the stretches in <code>piping_stretches</code>; "
             "the berms are the <code>piping_berm</code> rows of <code>options</code>.</p>"]
    st_ch = st["chainage"].to_numpy(float)
    prof_ch = data.profiles["chainage"].to_numpy(float)
    for ch in drawn_chainages(sr, n=n_worst):
        prof = data.profiles[np.isclose(prof_ch, ch)]
        if prof.empty:
            continue
        station = st.iloc[int(np.argmin(np.abs(st_ch - ch)))]
        row = sr[np.isclose(sr["worst_chainage"].to_numpy(float), ch)]
        b = berms[np.isclose(berms["from_chainage"].to_numpy(float),
                             float(row["from_chainage"].iloc[0]))] if not row.empty else berms[:0]
        parts.append(figure_html(
            piping_figure(station, prof, b.iloc[0] if not b.empty else None,
                          thickness=thickness), f"piping at chainage {ch:,.0f} m"))
    parts.append(stretch_table(sr, berms))
    return TITLE, "\n".join(parts)
