"""Report section on how sure each verdict is: margin +- 2 sigma figure and stretch table.

Built from the results GeoPackage (:class:`~.report_data.ReportData`): the
stations' ``margin`` and ``margin_sigma``, the stretches' ``confidence``,
``margin_sigma``, ``p_short`` and ``marginal_stations``, and the accuracy
parameters recorded in the run metadata. Marginal stretches are hatched, in
the table and in the figure.
"""

from __future__ import annotations

import html
from typing import TYPE_CHECKING

import numpy as np
import pandas as pd
from matplotlib.figure import Figure
from matplotlib.patches import Patch

from ..errors import TrajectoryError
from ..judgement.uncertainty import CUSTOM, FIRM_SIGMAS, VerticalAccuracy, accuracy_preset
from .plots import figure_html, new_figure
from .report_data import number_text
from .style import INK

if TYPE_CHECKING:
    from .report_data import ReportData

TITLE = "How sure is each verdict"

#: the sentence that says what a marginal verdict means (table and figure captions)
MARGINAL_MEANS = (
    "Hatched ground is marginal: there the status does not hold at two standard "
    "deviations of the margin, so the survey's own accuracy could change it (in the "
    "figure each marginal station over the length it stands for; in the table the "
    "stretches holding such stations). Treat it as 'check by a field survey', not as a "
    "proven deficit or a proven safe crest."
)

_HATCH_CSS = ("background: repeating-linear-gradient(45deg, #ffffff, #ffffff 4px, "
              "#d9d9d9 4px, #d9d9d9 6px);")


def accuracy_of(metadata: dict[str, str]) -> VerticalAccuracy | None:
    """The terrain model accuracy recorded in the run metadata (None if not recorded)."""
    name = metadata.get("param_vertical_accuracy")
    if not name:
        return None
    try:
        if name == CUSTOM:
            return VerticalAccuracy(float(metadata.get("param_sigma_systematic", "nan")),
                                    float(metadata.get("param_sigma_random", "nan")), CUSTOM)
        return accuracy_preset(name)
    except (TrajectoryError, ValueError):
        return None


def _accuracy_text(metadata: dict[str, str]) -> str:
    acc = accuracy_of(metadata)
    used = ("" if acc is None else
            f"Terrain model accuracy used: {html.escape(acc.source)}, systematic "
            f"{acc.systematic:.3f} m, random per cell {acc.random:.3f} m (standard "
            f"deviations). ")
    return used + ("p_short is the probability that the margin is below zero under a "
                   "normal model.")


def _num(x, digits: int) -> str:
    return number_text(x, f".{digits}f")


def stretch_table_html(stretches: pd.DataFrame) -> str:
    """The stretches with worst margin, its standard deviation, p_short and confidence."""
    rows = []
    for r in pd.DataFrame(stretches).itertuples(index=False):
        conf = "" if r.confidence is None or pd.isna(r.confidence) else str(r.confidence)
        style = f' style="{_HATCH_CSS}"' if conf == "marginal" else ""
        cells = (_num(r.from_chainage, 0), _num(r.to_chainage, 0), html.escape(str(r.status)),
                 _num(r.worst_margin, 3), _num(r.margin_sigma, 3), _num(r.p_short, 2),
                 html.escape(conf), _num(r.marginal_stations, 0))
        rows.append(f"<tr{style}>" + "".join(f"<td class='n'>{c}</td>" if i != 2 and i != 6
                                             else f"<td>{c}</td>"
                                             for i, c in enumerate(cells)) + "</tr>")
    head = ("<tr><th>from (m)</th><th>to (m)</th><th>status</th><th>worst margin (m)</th>"
            "<th>margin sigma (m)</th><th>p_short</th><th>confidence</th>"
            "<th>marginal stations</th></tr>")
    return f'<table class="uncertainty">\n{head}\n' + "\n".join(rows) + "\n</table>"


def marginal_runs(chainage: np.ndarray, marginal: np.ndarray) -> list[tuple[float, float]]:
    """Chainage ranges of consecutive marginal stations, each station over the length it
    stands for (half-way to its neighbours; the line's ends at the end stations)."""
    ch = np.asarray(chainage, float)
    if ch.size == 0:
        return []
    mid = 0.5 * (ch[1:] + ch[:-1])
    lo = np.concatenate([[ch[0]], mid])
    hi = np.concatenate([mid, [ch[-1]]])
    flag = np.concatenate([[False], np.asarray(marginal, bool), [False]])
    starts = np.flatnonzero(flag[1:] & ~flag[:-1])
    ends = np.flatnonzero(~flag[1:] & flag[:-1]) - 1
    return [(float(lo[a]), float(hi[b])) for a, b in zip(starts, ends, strict=True)]


def margin_figure(stations: pd.DataFrame, stretches: pd.DataFrame) -> Figure:
    """Margin along the chainage with its +- 2 sigma band; marginal ground hatched (the
    marginal stations, not whole stretches: one doubtful station does not make a
    kilometre doubtful)."""
    ch = stations["chainage"].to_numpy(float)
    m = stations["margin"].to_numpy(float)
    sig = stations["margin_sigma"].to_numpy(float)
    fig = new_figure(10.0, 3.6)
    ax = fig.add_subplot()
    conf = (stations["confidence"].astype(str).to_numpy() if "confidence" in stations
            else np.full(ch.size, ""))
    for a, b in marginal_runs(ch, conf == "marginal"):
        ax.axvspan(a, b, facecolor="none", edgecolor="0.55", hatch="///", linewidth=0)
    ax.fill_between(ch, m - FIRM_SIGMAS * sig, m + FIRM_SIGMAS * sig, color="0.8",
                    label=f"margin ± {FIRM_SIGMAS:g} σ")
    ax.plot(ch, m, color="0.1", linewidth=1.0, label="margin")
    ax.axhline(0.0, color=INK, linewidth=0.8, linestyle="--", label="zero margin")
    ax.set_xlabel("chainage (m)")
    ax.set_ylabel("margin (m)")
    ax.grid(alpha=0.3, lw=0.4)
    handles, labels = ax.get_legend_handles_labels()
    handles.append(Patch(facecolor="none", edgecolor="0.55", hatch="///"))
    labels.append("marginal ground")
    fig.legend(handles, labels, fontsize=7, ncol=4, loc="outside upper center",
               frameon=False)
    if ch.size:
        ax.set_xlim(float(ch.min()), float(ch.max()))
    return fig


def uncertainty_section(data: ReportData) -> tuple[str, str] | None:
    """The report's section on confidence; None when the file has no uncertainty fields."""
    need_st, need_sr = {"margin_sigma"}, {"confidence", "margin_sigma", "p_short",
                                          "marginal_stations"}
    if not (need_st <= set(data.stations.columns) and need_sr <= set(data.stretches.columns)):
        return None
    sr = pd.DataFrame(data.stretches.drop(columns="geometry", errors="ignore"))
    content = "\n".join([
        f"<p>{_accuracy_text(data.metadata)}</p>",
        figure_html(margin_figure(data.stations, sr), "margin and its uncertainty"),
        f"<p>{MARGINAL_MEANS}</p>",
        stretch_table_html(sr),
    ])
    return TITLE, content
