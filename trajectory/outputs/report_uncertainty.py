"""Report section on how sure each verdict is (HTML fragment and a figure).

The report builder takes ``(title, html_fragment_or_figure)`` pairs; this module
provides :func:`uncertainty_sections`, which returns this topic's pairs. Marginal
stretches are hatched, in the table and in the figure.
"""

from __future__ import annotations

import html
from typing import Any

import numpy as np
from matplotlib.figure import Figure

from ..uncertainty import FIRM_SIGMAS, accuracy_from_settings, stretch_uncertainty

#: the sentence that says what a marginal verdict means (table and figure captions)
MARGINAL_MEANS = (
    "Hatched stretches are marginal: their status does not hold at two standard "
    "deviations of the margin, so the survey's own accuracy could change it. Treat "
    "them as 'check by a field survey', not as proven deficits or proven safe crest."
)

_HATCH_CSS = ("background: repeating-linear-gradient(45deg, #ffffff, #ffffff 4px, "
              "#d9d9d9 4px, #d9d9d9 6px);")


def _accuracy_text(result: Any) -> str:
    from ..params import Settings

    meta = result.metadata
    keys = ("vertical_accuracy", "sigma_systematic", "sigma_random")
    given = {k: meta[f"param_{k}"] for k in keys if f"param_{k}" in meta}
    acc = accuracy_from_settings(Settings().replace(**given))
    return (f"Terrain model accuracy used: {html.escape(acc.source)}, systematic "
            f"{acc.systematic:.3f} m, random per cell {acc.random:.3f} m (standard "
            f"deviations). p_short is the probability that the margin is below zero "
            f"under a normal model.")


def stretch_table_html(result: Any) -> str:
    """The stretches with their margin, its standard deviation, p_short and confidence."""
    s = result.stretches
    unc = stretch_uncertainty(s, result.stations)
    rows = []
    for i in range(s.status.size):
        marginal = unc["confidence"][i] == "marginal"
        style = f' style="{_HATCH_CSS}"' if marginal else ""
        conf = unc["confidence"][i] or ""
        cells = (f"{s.from_chainage[i]:.0f}", f"{s.to_chainage[i]:.0f}",
                 html.escape(str(s.status[i])), _num(s.worst_margin[i], 3),
                 _num(unc["margin_sigma"][i], 3), _num(unc["p_short"][i], 2),
                 html.escape(conf))
        rows.append(f"<tr{style}>" + "".join(f"<td>{c}</td>" for c in cells) + "</tr>")
    head = ("<tr><th>from (m)</th><th>to (m)</th><th>status</th><th>worst margin (m)</th>"
            "<th>margin sigma (m)</th><th>p_short</th><th>confidence</th></tr>")
    return (f"<p>{_accuracy_text(result)}</p>\n<p>{MARGINAL_MEANS}</p>\n"
            f'<table class="uncertainty">\n{head}\n' + "\n".join(rows) + "\n</table>")


def margin_figure(result: Any) -> Figure:
    """Margin along the chainage with its +-2 sigma band; marginal stretches hatched."""
    st = result.stations
    ch = st["chainage"].to_numpy(float)
    m = st["margin"].to_numpy(float)
    sig = st["margin_sigma"].to_numpy(float)
    fig = Figure(figsize=(9.0, 3.2))
    ax = fig.add_subplot()
    unc = stretch_uncertainty(result.stretches, st)
    s = result.stretches
    for i in np.flatnonzero(unc["confidence"] == "marginal"):
        ax.axvspan(s.from_chainage[i], s.to_chainage[i], facecolor="none",
                   edgecolor="0.6", hatch="///", linewidth=0)
    ax.fill_between(ch, m - FIRM_SIGMAS * sig, m + FIRM_SIGMAS * sig, color="0.8",
                    label=f"margin +- {FIRM_SIGMAS:g} sigma")
    ax.plot(ch, m, color="0.1", linewidth=1.0, label="margin")
    ax.axhline(0.0, color="0.3", linewidth=0.8, linestyle="--")
    ax.set_xlabel("chainage (m)")
    ax.set_ylabel("margin (m)")
    ax.legend(loc="upper right", fontsize="small")
    ax.set_title("Margin and its uncertainty (hatched: marginal)", fontsize="medium")
    fig.tight_layout()
    return fig


def uncertainty_sections(result: Any) -> list[tuple[str, Any]]:
    """This topic's report sections: (title, html fragment or Figure) pairs."""
    return [("How sure is each verdict", stretch_table_html(result)),
            ("Margin and its uncertainty", margin_figure(result))]


def _num(x: float, digits: int) -> str:
    return "" if x is None or not np.isfinite(x) else f"{x:.{digits}f}"
