"""Report section: what changed since the previous survey's verdict (changes.py).

Built from the results GeoPackage: the stations' ``status_previous``,
``margin_change`` and ``change_sigma``, and the ``changes`` layer (stretches of
new deficits, resolved deficits, worsened and improved margins).
"""

from __future__ import annotations

from html import escape
from typing import TYPE_CHECKING

import numpy as np
import pandas as pd
from matplotlib.figure import Figure

from ..judgement.changes import CHANGES
from .plots import figure_html, new_figure
from .style import CHANGE_COLOURS, INK, STATUS_COLOURS

if TYPE_CHECKING:
    from .report_data import ReportData

TITLE = "What changed since the previous survey"
#: the classes' colours of the default styles, plus the unchanged and the unjudged
_COLOURS = {**CHANGE_COLOURS, "unchanged": "#C8C8C8", "": "#FFFFFF"}


def margin_change_figure(stations: pd.DataFrame) -> Figure:
    """Margin change per station (a bar each) with its +-1 combined sigma band, and the
    previous and today's status as two strips underneath."""
    c = stations["chainage"].to_numpy(float)
    d = stations["margin_change"].to_numpy(float)
    sig = stations["change_sigma"].to_numpy(float)
    cls = stations["verdict_change"].fillna("").astype(str).to_numpy()
    fig = new_figure(10.0, 4.4)
    gs = fig.add_gridspec(3, 1, height_ratios=[10, 1, 1])
    ax = fig.add_subplot(gs[0])
    width = float(np.median(np.diff(c))) * 0.8 if c.size > 1 else 1.0
    ax.fill_between(c, -sig, sig, color="#DDDDDD", lw=0, step="mid",
                    label="±1 combined σ (no significant change)")
    ax.bar(c, np.nan_to_num(d), width=width, color=[_COLOURS.get(k, INK) for k in cls],
           edgecolor=INK, linewidth=0.2)
    ax.axhline(0, color=INK, lw=0.6)
    ax.set_ylabel("margin change (m)\n(+ better, - worse)")
    ax.grid(alpha=0.3, lw=0.4)
    ax.tick_params(labelbottom=False)
    from matplotlib.patches import Patch

    handles = [Patch(color="#DDDDDD", label="±1 combined σ")] + [
        Patch(facecolor=_COLOURS[k], edgecolor=INK, lw=0.4, label=k.replace("_", " "))
        for k in (*CHANGES, "unchanged")]
    fig.legend(handles=handles, fontsize=7, ncol=6, loc="outside upper center", frameon=False)
    for row, (col, name) in enumerate((("status_previous", "previous"), ("status", "today"))):
        strip = fig.add_subplot(gs[1 + row], sharex=ax)
        st = stations[col].fillna("").astype(str).to_numpy()
        strip.bar(c, np.ones_like(c), width=width / 0.8,
                  color=[STATUS_COLOURS.get(s, "#FFFFFF") for s in st], lw=0)
        strip.set_yticks([])
        strip.set_ylabel(name, rotation=0, ha="right", va="center", fontsize=7)
        if row == 0:
            strip.tick_params(labelbottom=False)
    strip.set_xlabel("chainage (m)")
    if c.size:
        ax.set_xlim(float(c.min()) - width, float(c.max()) + width)
    return fig


def _table(changes: pd.DataFrame) -> str:
    if changes.empty:
        return "<p>No stretch changed its verdict or its margin beyond the survey accuracy.</p>"
    order = {k: i for i, k in enumerate(CHANGES)}
    t = changes.assign(_o=changes["change"].map(order)).sort_values(["_o", "from_chainage"],
                                                                     kind="stable")
    head = ("<tr><th>change</th><th>from (m)</th><th>to (m)</th><th>stations</th>"
            "<th>previous</th><th>today</th><th>largest margin change (m)</th>"
            "<th>at chainage (m)</th><th>± combined σ (m)</th></tr>")
    rows = "".join(
        f"<tr data-change='{escape(r.change)}'><td>{escape(r.change.replace('_', ' '))}</td>"
        f"<td class='n'>{r.from_chainage:,.1f}</td><td class='n'>{r.to_chainage:,.1f}</td>"
        f"<td class='n'>{int(r.stations)}</td><td>{escape(str(r.status_previous))}</td>"
        f"<td>{escape(str(r.status))}</td><td class='n'>{r.largest_change:+.3f}</td>"
        f"<td class='n'>{r.largest_change_chainage:,.1f}</td>"
        f"<td class='n'>{r.change_sigma:.3f}</td></tr>" for r in t.itertuples(index=False))
    return f'<table class="changes">{head}{rows}</table>'


def changes_section(data: ReportData) -> tuple[str, str] | None:
    """The section on verdict changes; None without a previous survey."""
    st = data.stations
    if "verdict_change" not in st.columns or not (st["verdict_change"].fillna("") != "").any():
        return None
    changes = pd.DataFrame(data.layers.get("changes", pd.DataFrame(columns=["change"])))
    changes = changes.drop(columns="geometry", errors="ignore")
    counts = st["verdict_change"].fillna("").value_counts()
    said = ", ".join(f"{int(counts.get(k, 0))} {k.replace('_', ' ')}" for k in
                     (*CHANGES, "unchanged"))
    prev = escape(str(data.metadata.get("previous_survey", "the previous survey")))
    parts = [
        f"<p>Previous verdict: {prev}. The verdict is today's rules (conditions, parameters, "
        "known structures) applied to the previous survey's terrain, so a change is the "
        "levee's, not the rules'. Stations: " + escape(said) + ". A margin change counts as "
        "worsened or improved beyond ±1 combined σ (both surveys' accuracy); new deficits "
        "and resolved deficits count whatever their size.</p>",
        figure_html(margin_change_figure(st), "margin change per station"),
        "<h3>Stretches of change</h3>", _table(changes),
    ]
    if "status_delivered" in st.columns and st["status_delivered"].notna().any():
        differs = int((st["status_delivered"].notna()
                       & (st["status_delivered"] != st["status_previous"])).sum())
        parts.append(f"<p>The earlier result given with --compare delivered its own verdict "
                     f"(station field status_delivered); it differs from the previous verdict "
                     f"under today's rules at {differs} station(s).</p>")
    return TITLE, "\n".join(parts)
