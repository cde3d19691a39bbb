"""Report section on safety standards: the return period each station holds, per stretch.

Built from the results GeoPackage (:class:`~.report_data.ReportData`): the held
return periods from the ``stations`` layer, per stretch from ``stretches``,
the van Dantzig (1956) optimum per section from ``economics``. A run without
frequency lines has no such section.
"""

from __future__ import annotations

from html import escape
from typing import TYPE_CHECKING

import numpy as np
import pandas as pd
from matplotlib.figure import Figure

from ..judgement.economics import CAVEAT
from .plots import figure_html, new_figure
from .style import INK, STATUS_COLOURS

if TYPE_CHECKING:
    from .report_data import ReportData

TITLE = "Return period held against the standard"


def _years(v: float, rng: str = "") -> str:
    if not np.isfinite(v):
        return ""
    text = f"{v:,.0f}" if v >= 10 else f"{v:.1f}"
    return {"above": "&ge; ", "below": "&le; "}.get(rng, "") + text + (
        " (extrapolated)" if rng == "extrapolated" else "")


def held_figure(stations: pd.DataFrame, stretches: pd.DataFrame) -> Figure:
    """Held return period along chainage (log scale) against the standard line."""
    c = stations["chainage"].to_numpy(float)
    fig = new_figure(10.0, 4.2)
    ax = fig.add_subplot()
    s = pd.DataFrame(stretches)
    below = s["below_standard"].to_numpy(float) == 1
    for lo, hi in zip(s["from_chainage"][below], s["to_chainage"][below], strict=True):
        ax.axvspan(lo, hi, color=STATUS_COLOURS["deficit"], alpha=0.15, lw=0)
    series = (("return_period_held", "held today", "black", "-", 1.4),
              ("return_period_held_low", "held at crest - 2 sigma", "#606060", ":", 1.0),
              ("return_period_held_future", "held with the future allowances",
               STATUS_COLOURS["deficit"], "--", 1.0))
    for col, label, colour, ls, lw in series:
        ax.plot(c, stations[col].to_numpy(float), color=colour, ls=ls, lw=lw, label=label)
    rng = stations["held_range"].astype(str).to_numpy()
    t = stations["return_period_held"].to_numpy(float)
    for kind, marker in (("above", "^"), ("below", "v")):
        m = rng == kind
        if m.any():
            ax.plot(c[m], t[m], ls="none", marker=marker, ms=3, color=INK,
                    label=f"{kind} the line's range (bound shown)")
    ax.step(c, stations["standard_return_period"].to_numpy(float), where="mid", color="#2B6FA8",
            lw=1.6, label="standard")
    ax.set_yscale("log")
    ax.set_xlabel("chainage (m)")
    ax.set_ylabel("return period (years)")
    ax.grid(alpha=0.3, lw=0.4, which="both")
    if len(s):
        ax.set_xlim(float(s["from_chainage"].min()), float(s["to_chainage"].max()))
    fig.legend(*ax.get_legend_handles_labels(), fontsize=7, ncol=3, loc="outside upper center",
               frameon=False)
    return fig


def stretch_rows(stretches: pd.DataFrame) -> str:
    """HTML table: per stretch the smallest held return period, the standard, the optimum."""
    s = pd.DataFrame(stretches)
    head = ("<tr><th>from (m)</th><th>to (m)</th><th>status</th><th>smallest held (years)"
            "</th><th>at (m)</th><th>standard (years)</th><th>below standard</th>"
            "<th>economic optimum (years)</th></tr>")
    rows = []
    for r in s.itertuples(index=False):
        below = {1.0: "yes", 0.0: "no"}.get(float(r.below_standard), "")
        style = ' style="font-weight:bold"' if below == "yes" else ""
        rows.append(
            f"<tr{style}><td>{r.from_chainage:,.0f}</td><td>{r.to_chainage:,.0f}</td>"
            f"<td>{escape(str(r.status))}</td>"
            f"<td>{_years(r.min_return_period_held, str(r.min_held_range))}</td>"
            f"<td>{'' if not np.isfinite(r.min_held_chainage) else f'{r.min_held_chainage:,.0f}'}"
            f"</td><td>{_years(r.standard_return_period)}</td><td>{below}</td>"
            f"<td>{_years(r.economic_return_period)}</td></tr>")
    return f"<table>{head}{''.join(rows)}</table>"


def economics_rows(econ: pd.DataFrame) -> str:
    """HTML table of the van Dantzig optimum per section next to the standard."""
    head = ("<tr><th>section</th><th>standard (years)</th><th>level for the standard (m)"
            "</th><th>held today (years)</th><th>optimum (years)</th><th>optimum level (m)"
            "</th><th>optimal raise (m)</th><th>alpha (1/m)</th><th>I' per m</th></tr>")
    rows = []
    for r in econ.itertuples(index=False):
        rows.append(
            f"<tr><td>{escape(str(r.section_id))}</td><td>{_years(r.standard_return_period)}"
            f"</td><td>{r.standard_level:.2f}</td><td>{_years(r.return_period_held)}</td>"
            f"<td>{_years(r.optimal_return_period)}</td><td>{r.optimal_level:.2f}</td>"
            f"<td>{r.optimal_raise:.2f}</td><td>{r.alpha:.2f}</td>"
            f"<td>{r.marginal_cost:,.0f}</td></tr>")
    return f"<table>{head}{''.join(rows)}</table>"


def standards_section(data: ReportData) -> tuple[str, str] | None:
    """The report's section on standards; None where no station has a frequency line."""
    st = data.stations
    if "return_period_held" not in st.columns or not np.isfinite(
            st["return_period_held"].to_numpy(float)).any():
        return None
    parts = [
        "<p>The return period whose water level and waves each station's measured crest "
        "holds today (the required level by the section's own freeboard rule, without the "
        "future allowances), read off the section's frequency line; with the allowances of "
        "the end of the planning period; and at the crest lowered by two standard deviations "
        "of the survey. Beyond a line's range the bound is drawn, marked above or below; "
        "nothing is extrapolated unless asked for, and then it is flagged. Shaded: stretches "
        "whose smallest held return period is below the standard.</p>",
        figure_html(held_figure(st, data.stretches), "return period held per station"),
        "<h3>Stretches</h3>", stretch_rows(data.stretches),
    ]
    econ = data.layers.get("economics")
    if econ is not None and not econ.empty:
        parts += ["<h3>Economic optimum per section (van Dantzig 1956)</h3>",
                  f"<p>{escape(CAVEAT)} X* = ln(alpha V P0 / (delta I')) / alpha from the "
                  "weakest station's crest, P* = delta I' / (alpha V).</p>",
                  economics_rows(econ)]
    return TITLE, "\n".join(parts)
