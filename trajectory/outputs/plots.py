"""Figures of the report, drawn with matplotlib's object interface on the Agg canvas.

Pure functions: tables in, :class:`matplotlib.figure.Figure` out (no pyplot
state, no files). Axes carry units; statuses use the colours of
:mod:`.style`, and a status strip under the longitudinal plot keeps it
readable in grey-scale print.
"""

from __future__ import annotations

import base64
import io
from html import escape

import numpy as np
import pandas as pd
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure
from matplotlib.patches import Patch

from ..judgement.status import STATUSES
from .style import INK, STATUS_COLOURS


def new_figure(w: float, h: float) -> Figure:
    """An empty figure of ``w`` x ``h`` inches on the Agg canvas, constrained layout."""
    fig = Figure(figsize=(w, h), dpi=150, layout="constrained")
    FigureCanvasAgg(fig)
    return fig


_figure = new_figure


def figure_html(fig: Figure, alt: str) -> str:
    """A figure as an ``<img>`` holding its PNG as a base64 data URI."""
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=150)
    data = base64.b64encode(buf.getvalue()).decode("ascii")
    return f'<img src="data:image/png;base64,{data}" alt="{escape(alt)}">'


def _legend_handles(statuses=STATUSES) -> list[Patch]:
    return [Patch(facecolor=STATUS_COLOURS[s], edgecolor=INK, linewidth=0.4, label=s)
            for s in statuses]


def length_by_status(stretches: pd.DataFrame) -> Figure:
    """Horizontal bar of the length (m) per status."""
    lengths = [float(stretches.loc[stretches["status"] == s, "length"].sum()) for s in STATUSES]
    fig = _figure(7.0, 1.9)
    ax = fig.add_subplot()
    y = np.arange(len(STATUSES))[::-1]
    ax.barh(y, lengths, color=[STATUS_COLOURS[s] for s in STATUSES], edgecolor=INK,
            linewidth=0.5)
    ax.set_yticks(y, STATUSES)
    total = sum(lengths) or 1.0
    for yi, v in zip(y, lengths, strict=True):
        ax.text(v, yi, f"  {v:,.0f} m ({100 * v / total:.0f} %)", va="center", fontsize=8)
    ax.set_xlabel("length along the centreline (m)")
    ax.set_xlim(0, max(lengths) * 1.3 or 1.0)
    ax.spines[["top", "right"]].set_visible(False)
    return fig


def _sections(stations: pd.DataFrame) -> list[tuple[float, str]]:
    sid = stations["section_id"].astype(str).to_numpy()
    c = stations["chainage"].to_numpy(float)
    start = np.flatnonzero(np.concatenate([[True], sid[1:] != sid[:-1]]))
    return [(c[i], sid[i]) for i in start]


def longitudinal(stations: pd.DataFrame, stretches: pd.DataFrame) -> Figure:
    """Crest level and required level along chainage, statuses shaded, sections marked."""
    c = stations["chainage"].to_numpy(float)
    fig = _figure(10.0, 4.6)
    gs = fig.add_gridspec(2, 1, height_ratios=[9, 1])
    ax = fig.add_subplot(gs[0])
    strip = fig.add_subplot(gs[1], sharex=ax)
    for _, s in stretches.iterrows():
        colour = STATUS_COLOURS.get(s["status"], "#FFFFFF")
        ax.axvspan(s["from_chainage"], s["to_chainage"], color=colour, alpha=0.18, lw=0)
        strip.axvspan(s["from_chainage"], s["to_chainage"], color=colour, lw=0)
    swl = stations["water_level"].to_numpy(float) + stations["sea_level_rise"].to_numpy(float)
    ax.plot(c, swl, color="#2B6FA8", lw=1.0, ls=":", label="design water level + sea-level rise")
    ax.plot(c, stations["required_level"].to_numpy(float), color=INK, lw=1.2, ls="--",
            label="required crest level")
    ax.plot(c, stations["crest_level"].to_numpy(float), color="black", lw=1.4,
            label="measured crest level")
    low = stations["status"].to_numpy(object) == "deficit"
    ax.plot(c[low], stations["crest_level"].to_numpy(float)[low], ls="none", marker="v",
            ms=3.5, color=STATUS_COLOURS["deficit"], label="station in deficit")
    for x, sid in _sections(stations):
        ax.axvline(x, color="#777777", lw=0.6, ls="-.")
        ax.annotate(sid, (x, 1.0), xycoords=("data", "axes fraction"), xytext=(2, -10),
                    textcoords="offset points", fontsize=7, color="#444444")
    ax.set_ylabel("level (m, DEM datum)")
    ax.grid(alpha=0.3, lw=0.4)
    ax.tick_params(labelbottom=False)
    h, lab = ax.get_legend_handles_labels()
    fig.legend(h + _legend_handles(), lab + list(STATUSES), fontsize=7, ncol=4,
               loc="outside upper center", frameon=False)
    strip.set_yticks([])
    strip.set_xlabel("chainage (m)")
    strip.set_ylabel("status", rotation=0, ha="right", va="center", fontsize=7)
    lo, hi = float(stretches["from_chainage"].min()), float(stretches["to_chainage"].max())
    ax.set_xlim(lo, hi)
    return fig


def overview_map(stations: pd.DataFrame, stretches, *,
                 terrain: tuple[np.ndarray, tuple[float, ...]] | None = None) -> Figure:
    """Plan view of the line, stretches coloured by status (a GeoDataFrame with geometry).

    ``terrain``: a hillshade (uint8, 0 no value, row 0 north) and its bounds (left,
    bottom, right, top), drawn in grey under the line.
    """
    x0, y0, x1, y1 = stretches.total_bounds
    ratio = float(np.clip((y1 - y0) / max(x1 - x0, 1e-9), 0.3, 1.3))
    fig = _figure(8.0, 1.4 + 6.6 * ratio)
    ax = fig.add_subplot()
    if terrain is not None:
        shade, (left, bottom, right, top) = terrain
        ax.imshow(np.ma.masked_equal(shade, 0), cmap="gray", vmin=1, vmax=255, alpha=0.7,
                  extent=(left, right, bottom, top), origin="upper",
                  interpolation="bilinear", zorder=0)
        ax.ignore_existing_data_limits = True  # the view is the line's, not the shade's
    for status in STATUSES:
        sub = stretches[stretches["status"] == status]
        for g in sub.geometry:
            if g is None or g.is_empty:
                continue
            parts = getattr(g, "geoms", [g])
            for part in parts:
                x, y = np.asarray(part.coords)[:, :2].T
                ax.plot(x, y, color=STATUS_COLOURS[status], lw=4.0, solid_capstyle="butt")
    x, y = stations["x"].to_numpy(float), stations["y"].to_numpy(float)
    ax.plot(x, y, color=INK, lw=0.5)
    c = stations["chainage"].to_numpy(float)
    if c.size:
        step = _nice_step((c[-1] - c[0]) / 6 if c.size > 1 else 1.0)
        marks = np.arange(np.ceil(c[0] / step) * step, c[-1] + 1e-9, step)
        for i in np.unique(np.clip(np.searchsorted(c, marks), 0, c.size - 1)):
            ax.plot(x[i], y[i], marker="|", color=INK, ms=6)
            ax.annotate(f"{c[i]:,.0f}", (x[i], y[i]), xytext=(4, 4), textcoords="offset points",
                        fontsize=7)
    ax.set_aspect("equal", adjustable="datalim")
    ax.set_xlabel("easting (m)")
    ax.set_ylabel("northing (m)")
    ax.ticklabel_format(useOffset=False, style="plain")
    ax.tick_params(labelsize=7)
    ax.grid(alpha=0.3, lw=0.4)
    ax.legend(handles=_legend_handles(), fontsize=7, loc="best", title="stretch status",
              title_fontsize=7)
    return fig


def _nice_step(x: float) -> float:
    if x <= 0:
        return 1.0
    e = 10 ** np.floor(np.log10(x))
    return float(min((m * e for m in (1, 2, 5, 10) if m * e >= x), default=10 * e))


def parse_breaks(text: object) -> np.ndarray:
    """A breakline text (``offset/level`` pairs, stations layer) as an (k, 2) array."""
    if not isinstance(text, str) or not text.strip():
        return np.empty((0, 2))
    return np.array([[float(v) for v in pair.split("/")] for pair in text.split()], float)


#: a breakline piece flatter than this (gradient) is a berm (the profile's flat limit, 1:12)
BERM_GRADIENT = 1.0 / 12.0


def _draw_breaks(ax, pts: np.ndarray, *, first: bool) -> None:
    """One side's breakline: crest edge, slope segments, berms, toe (from the stations)."""
    if pts.shape[0] == 0:
        return
    ax.plot(pts[:, 0], pts[:, 1], color="#7A3E9D", lw=0.9, ls=(0, (3, 1.5)),
            label="slope segments (breakline)" if first else None)
    dx, dz = np.diff(pts[:, 0]), np.diff(pts[:, 1])
    with np.errstate(divide="ignore", invalid="ignore"):
        flat = np.abs(dz) <= BERM_GRADIENT * np.abs(dx)
    for k in np.flatnonzero(flat):
        ax.plot(pts[k:k + 2, 0], pts[k:k + 2, 1], color="#1B7837", lw=3.2,
                solid_capstyle="butt", label="berm" if first and k == flat.argmax() else None)
    ax.plot(pts[0, 0], pts[0, 1], ls="none", marker="D", ms=4, color="black",
            label="crest edge" if first else None)
    ax.plot(pts[-1, 0], pts[-1, 1], ls="none", marker="^", ms=5, color="#7A3E9D",
            label="toe" if first else None)
    if pts.shape[0] > 2:
        ax.plot(pts[1:-1, 0], pts[1:-1, 1], ls="none", marker="o", ms=2.5, color="#7A3E9D",
                label="slope break" if first else None)


def cross_sections(profiles: pd.DataFrame, stations: pd.DataFrame,
                   chainages: np.ndarray) -> Figure | None:
    """Profiles of the given stations: ground, the picked crest edges, slope segments,
    berms and toes, water on the water side only, the required level and the crest."""
    chainages = np.asarray(chainages, float)
    if chainages.size == 0:
        return None
    ncol = 2 if chainages.size > 1 else 1
    nrow = int(np.ceil(chainages.size / ncol))
    fig = _figure(10.0 if ncol == 2 else 6.0, 3.0 * nrow)
    by_ch = stations.set_index("chainage")
    handles: dict[str, object] = {}
    for k, ch in enumerate(chainages):
        ax = fig.add_subplot(nrow, ncol, k + 1)
        p = profiles[np.isclose(profiles["chainage"], ch)]
        st = by_ch.loc[ch]
        off, z = p["offset"].to_numpy(float), p["level"].to_numpy(float)
        ax.plot(off, z, color="#5A4632", lw=1.1, label="ground (DEM)")
        cw, co, cl = (float(st[k_]) for k_ in ("crest_width", "crest_offset", "crest_level"))
        swl = float(st["water_level"] + st["sea_level_rise"])
        # water only on the water side (+ offsets), where the ground lies below it
        centre = co if np.isfinite(co) else 0.0
        wet = (off > centre) & np.isfinite(z) & (z < swl)
        if wet.any():
            ax.fill_between(off, z, swl, where=wet, color="#9CC3E6", alpha=0.6, lw=0,
                            interpolate=True)
            lo_w = float(off[wet].min())
            ax.hlines(swl, lo_w, float(off.max()), color="#2B6FA8", lw=1.0,
                      label="water level + sea-level rise")
        ax.axhline(float(st["required_level"]), color=INK, lw=1.1, ls="--",
                   label="required crest level")
        if np.isfinite(cl):
            ax.plot([co - cw / 2, co + cw / 2], [cl, cl], color=STATUS_COLOURS["deficit"]
                    if st["status"] == "deficit" else "black", lw=3.0,
                    solid_capstyle="butt", label="measured crest")
        for j, side in enumerate(("outer_breaks", "inner_breaks")):
            if side in st.index:
                _draw_breaks(ax, parse_breaks(st[side]), first=j == 0)
        ax.annotate("water side →", (1.0, 1.0), xycoords="axes fraction", xytext=(-3, -10),
                    textcoords="offset points", ha="right", fontsize=7, color="#2B6FA8")
        ax.annotate("← land side", (0.0, 1.0), xycoords="axes fraction", xytext=(3, -10),
                    textcoords="offset points", ha="left", fontsize=7, color="#5A4632")
        margin = float(st["margin"])
        ax.set_title(f"chainage {ch:,.0f} m  ·  section {st['section_id']}  ·  "
                     f"margin {margin:+.2f} m ({st['status']})", fontsize=8)
        ax.set_xlabel("offset from centreline (m), + towards the water")
        ax.set_ylabel("level (m)")
        ax.grid(alpha=0.3, lw=0.4)
        for h, lab in zip(*ax.get_legend_handles_labels(), strict=True):
            handles.setdefault(lab, h)
    fig.legend(list(handles.values()), list(handles), fontsize=7, ncol=5,
               loc="outside upper center", frameon=False)
    return fig
