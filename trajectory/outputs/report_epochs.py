"""Report figures of a multi-survey run: crest level per epoch, projected year per stretch.

Each function returns a :class:`matplotlib.figure.Figure` (no pyplot, no GUI
backend); :func:`report_sections` gives the (title, figure) pairs the report
builder takes as extra sections.
"""

from __future__ import annotations

import numpy as np
from matplotlib.figure import Figure

from .epochs_layer import epoch_stretch_columns


def crest_epochs_figure(result, *, width: float = 9.0, height: float = 4.0) -> Figure:
    """Crest level along chainage, one line per survey epoch, with the required level."""
    t, lv = result.stations, result.epochs
    c = t["chainage"].to_numpy(float)
    fig = Figure(figsize=(width, height), layout="constrained")
    ax = fig.add_subplot()
    for j, (lab, src) in enumerate(zip(lv.labels, lv.sources, strict=True)):
        ax.plot(c, lv.crest[:, j], lw=1.0, label=lab or src)
    ax.plot(c, t["required_level"].to_numpy(float), "k--", lw=1.0, label="required level")
    ax.set_xlabel("chainage (m)")
    ax.set_ylabel("crest level (m)")
    ax.set_title("Crest level per survey")
    ax.grid(alpha=0.3)
    ax.legend(fontsize="small", ncol=min(len(lv.labels) + 1, 5))
    return fig


def projected_year_figure(result, *, width: float = 9.0, height: float = 3.5) -> Figure:
    """Earliest projected year of each stretch, drawn over the stretch's chainage."""
    s = result.stretches
    fig_cols = epoch_stretch_columns(result)
    year = fig_cols["earliest_projected_year"]
    fig = Figure(figsize=(width, height), layout="constrained")
    ax = fig.add_subplot()
    has = np.isfinite(year)
    for a, b, y, st in zip(s.from_chainage[has], s.to_chainage[has], year[has], s.status[has],
                              strict=True):
        ax.hlines(y, a, b, lw=6, color="tab:red" if st == "deficit" else "tab:orange")
        ax.annotate(f"{y:.0f}", ((a + b) / 2, y), textcoords="offset points", xytext=(0, 6),
                    ha="center", fontsize="small")
    now = result.epochs.years[-1]
    if np.isfinite(now):
        ax.axhline(now, color="grey", lw=0.8, ls=":")
    for a, b in zip(s.from_chainage[~has], s.to_chainage[~has], strict=True):
        ax.axvspan(a, b, color="tab:green", alpha=0.08, lw=0)
    if s.status.size:
        ax.set_xlim(float(s.from_chainage.min()), float(s.to_chainage.max()))
    ax.set_xlabel("chainage (m)")
    ax.set_ylabel("year")
    ax.set_title("Earliest year the margin runs out, per stretch (shaded: none projected)")
    ax.grid(alpha=0.3)
    return fig


def report_sections(result) -> list[tuple[str, Figure]]:
    """The epoch sections of the report; none for a single survey."""
    if result.epochs is None or len(result.epochs.labels) < 2:
        return []
    return [("Crest level per survey", crest_epochs_figure(result)),
            ("Projected year per stretch", projected_year_figure(result))]
