"""Report section of a multi-survey run: crest level per survey, projected year per stretch.

Built from the results GeoPackage (:class:`~.report_data.ReportData`): the crest
levels per survey come from the ``epochs`` layer (one row per station and
survey), the projected years from the ``stretches`` layer. A single-survey
run has no such section.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np
import pandas as pd
from matplotlib.figure import Figure

from .plots import figure_html, new_figure
from .style import INK, STATUS_COLOURS

if TYPE_CHECKING:
    from .report_data import ReportData

#: line styles of successive surveys, oldest first (told apart in grey-scale print)
_SURVEY_STYLES = (("#A0A0A0", (0, (1, 1))), ("#808080", (0, (4, 1, 1, 1, 1, 1))),
                  ("#5A5A5A", "-."), ("black", "-"))
TITLE = "Change between surveys"


def survey_levels(epochs: pd.DataFrame) -> tuple[list[str], np.ndarray, np.ndarray, np.ndarray]:
    """Surveys oldest first: labels, years, chainages and crest levels (stations x surveys)."""
    ep = pd.DataFrame(epochs)
    order = (ep.groupby("epoch", sort=False)["year"].first().sort_values(kind="stable"))
    labels = [str(lab) for lab in order.index]
    wide = ep.pivot_table(index="chainage", columns="epoch", values="crest_level",
                          aggfunc="first", dropna=False).reindex(columns=order.index)
    return (labels, order.to_numpy(float), wide.index.to_numpy(float),
            wide.to_numpy(float))


def crest_epochs_figure(epochs: pd.DataFrame, stations: pd.DataFrame) -> Figure:
    """Crest level along chainage, one line per survey, with the required level."""
    labels, _, ch, crest = survey_levels(epochs)
    fig = new_figure(10.0, 4.0)
    ax = fig.add_subplot()
    styles = _SURVEY_STYLES[-len(labels):] if len(labels) <= len(_SURVEY_STYLES) else None
    for j, lab in enumerate(labels):
        colour, ls = styles[j] if styles else (None, "-")
        ax.plot(ch, crest[:, j], lw=1.0, color=colour, ls=ls, label=f"crest level {lab}")
    ax.plot(stations["chainage"].to_numpy(float), stations["required_level"].to_numpy(float),
            color=STATUS_COLOURS["deficit"], lw=1.6, ls=(0, (9, 3)),
            label="required crest level (latest)")
    ax.set_xlabel("chainage (m)")
    ax.set_ylabel("level (m, DEM datum)")
    ax.grid(alpha=0.3, lw=0.4)
    fig.legend(*ax.get_legend_handles_labels(), fontsize=7, ncol=min(len(labels) + 1, 5),
               loc="outside upper center", frameon=False)
    ax.set_xlim(float(ch.min()), float(ch.max()))
    return fig


def lowering_figure(stations: pd.DataFrame, *, rate_z: float) -> Figure:
    """Crest change since the previous survey at every station (a bar each), the band a
    drop must leave to count (rate_z x sqrt 2 x crest_sigma), the significant drops marked,
    and the lowering rate per station below."""
    c = stations["chainage"].to_numpy(float)
    d = stations["change_previous"].to_numpy(float)
    band = rate_z * np.sqrt(2.0) * stations["crest_sigma"].to_numpy(float)
    sig = stations["significant_drop"].to_numpy(float) > 0 \
        if "significant_drop" in stations else np.zeros(c.size, bool)
    fig = new_figure(10.0, 4.6)
    gs = fig.add_gridspec(2, 1, height_ratios=[3, 2])
    ax = fig.add_subplot(gs[0])
    width = float(np.median(np.diff(c))) * 0.8 if c.size > 1 else 1.0
    ax.fill_between(c, -band, band, color="#E4E4E4", lw=0, step="mid",
                    label=f"within ±{rate_z:g} x √2 x crest σ (not significant)")
    ax.bar(c, np.nan_to_num(d), width=width, color=np.where(sig, STATUS_COLOURS["deficit"],
                                                             "#8C8C8C"),
           edgecolor=INK, linewidth=0.2, label="crest change at a station")
    if sig.any():
        ax.plot(c[sig], d[sig], ls="none", marker="v", ms=4, color=STATUS_COLOURS["deficit"],
                label="significant drop")
        for x, v in zip(c[sig], d[sig], strict=True):
            ax.annotate(f"{x:,.0f}", (x, v), xytext=(0, -11), textcoords="offset points",
                        ha="center", fontsize=6)
    ax.axhline(0, color=INK, lw=0.6)
    ax.set_ylabel("crest change since\nprevious survey (m)")
    ax.grid(alpha=0.3, lw=0.4)
    ax.tick_params(labelbottom=False)
    fig.legend(*ax.get_legend_handles_labels(), fontsize=7, ncol=3,
               loc="outside upper center", frameon=False)
    rx = fig.add_subplot(gs[1], sharex=ax)
    rate = stations["lowering_rate"].to_numpy(float) * 1000.0
    signif = stations["rate_significant"].to_numpy(float) > 0 \
        if "rate_significant" in stations else np.zeros(c.size, bool)
    rx.bar(c, np.nan_to_num(rate), width=width, color=np.where(signif, "#E08214", "#B5B5B5"),
           edgecolor=INK, linewidth=0.2)
    rx.axhline(0, color=INK, lw=0.6)
    rx.set_ylabel("lowering rate\n(mm/yr, + down;\norange: significant)", fontsize=7)
    rx.set_xlabel("chainage (m)")
    rx.grid(alpha=0.3, lw=0.4)
    if c.size:
        ax.set_xlim(float(c.min()) - width, float(c.max()) + width)
    return fig


def projected_year_figure(stretches: pd.DataFrame, *, survey_year: float,
                          stations: pd.DataFrame | None = None) -> Figure:
    """Earliest projected year of each stretch, drawn over the stretch's chainage."""
    s = pd.DataFrame(stretches)
    year = s["earliest_projected_year"].to_numpy(float)
    a, b = s["from_chainage"].to_numpy(float), s["to_chainage"].to_numpy(float)
    status = s["status"].astype(str).to_numpy()
    fig = new_figure(10.0, 3.4)
    ax = fig.add_subplot()
    has = np.isfinite(year)
    for lo, hi in zip(a[~has], b[~has], strict=True):
        ax.axvspan(lo, hi, facecolor="none", edgecolor="#B0B0B0", hatch="..", lw=0)
    for lo, hi, y, st in zip(a[has], b[has], year[has], status[has], strict=True):
        ax.hlines(y, lo, hi, lw=6, color=STATUS_COLOURS.get(st, INK))
        ax.annotate(f"{y:.0f}", ((lo + hi) / 2, y), textcoords="offset points",
                    xytext=(0, 6), ha="center", fontsize=7)
    if stations is not None and "projected_year" in stations:
        py = stations["projected_year"].to_numpy(float)
        k = np.isfinite(py)
        ax.plot(stations["chainage"].to_numpy(float)[k], py[k], ls="none", marker="o", ms=3,
                color=INK, label="station's projected year")
    if np.isfinite(survey_year):
        ax.axhline(survey_year, color=INK, lw=0.8, ls=":")
        ax.annotate(f"latest survey {survey_year:.0f}", (1.0, survey_year),
                    xycoords=("axes fraction", "data"), xytext=(-2, -10),
                    textcoords="offset points", ha="right", fontsize=7)
    if has.any():
        lo_y = min(float(np.nanmin(year[has])), survey_year if np.isfinite(survey_year)
                   else np.inf)
        ax.set_ylim(lo_y - 3, float(np.nanmax(year[has])) + 6)
    if a.size:
        ax.set_xlim(float(a.min()), float(b.max()))
    ax.set_xlabel("chainage (m)")
    ax.set_ylabel("projected year")
    ax.grid(alpha=0.3, lw=0.4)
    return fig


def epoch_section(data: ReportData) -> tuple[str, str] | None:
    """The report's section on the surveys; None with fewer than two surveys."""
    ep = data.layers.get("epochs")
    if ep is None or ep.empty or ep["epoch"].nunique() < 2:
        return None
    labels, years, _, _ = survey_levels(ep)
    latest = float(np.nanmax(years)) if np.isfinite(years).any() else np.nan
    parts = [
        f"<p>Crest level read from {len(labels)} surveys ({', '.join(labels)}), against "
        "the required crest level of the latest run.</p>",
        figure_html(crest_epochs_figure(ep, data.stations), "crest level per survey"),
    ]
    st = data.stations
    if {"change_previous", "crest_sigma", "lowering_rate"} <= set(st.columns):
        rate_z = float(data.metadata.get("param_rate_z", 1.645))
        n_sig = int((st.get("significant_drop", pd.Series(dtype=float)).fillna(0) > 0).sum())
        parts += [
            "<h3>Where the crest went down, station by station</h3>",
            f"<p>The crest change since the previous survey at every station, against the "
            f"band a drop must leave to count ({rate_z:g} x √2 x the station's crest σ); "
            f"{n_sig} station(s) with a significant drop, labelled with their chainage. "
            "Below: the lowering rate per station over all surveys.</p>",
            figure_html(lowering_figure(st, rate_z=rate_z), "crest change per station"),
        ]
    parts += [
        "<h3>Projected year per stretch</h3>",
        "<p>The earliest year a station of the stretch reaches zero margin at its crest "
        "lowering rate (least squares over the surveys; the survey year where the margin "
        "is already below zero); dots: each station's own projected year. Dotted "
        "background: no projected year (stable, rising or not significant). A "
        "straight-line projection, not a forecast.</p>",
    ]
    if "earliest_projected_year" in data.stretches.columns:
        parts.append(figure_html(projected_year_figure(data.stretches, survey_year=latest,
                                                       stations=st),
                                 "earliest projected year per stretch"))
    return TITLE, "\n".join(parts)
