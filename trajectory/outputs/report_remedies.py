"""Report section for the remedies: options drawn on the worst cross-sections, volumes."""

from __future__ import annotations

import base64
import html
import io

import numpy as np

from ..remedies import OPTIONS, Geometry, outline

#: line styles per option (our own; distinguishable in greyscale print)
_STYLE = {"raise": ("#1b5e9e", "--"), "outer_berm": ("#c26a00", "-."),
          "combined": ("#2e7d32", ":")}

CAVEAT = ("Screening estimates for planning, not a design: idealised profiles from the "
          "measured crest, slopes and toes; volumes are cross-section areas times stretch "
          "length. To be reviewed by a qualified engineer under local codes.")


def _png(fig) -> str:
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=110, bbox_inches="tight")
    return base64.b64encode(buf.getvalue()).decode("ascii")


def _figure(result, idx: int, rows) -> str:
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    st = result.stations.iloc[idx]
    g = Geometry(*(np.array([st[c]], float) for c in (
        "crest_level", "crest_width", "outer_slope", "inner_slope", "outer_toe_level",
        "inner_toe_level")))
    inner_edge = float(st["crest_offset"] - st["crest_width"] / 2)
    fig, ax = plt.subplots(figsize=(8, 3.6))
    ax.plot(result.offsets, result.profiles[idx], color="0.35", lw=1.0, label="measured")
    x, z = outline(g, 0, inner_edge=inner_edge)
    ax.plot(x, z, color="black", lw=1.4, label="idealised existing")
    lo, hi = x[0], x[-1]
    for _, r in rows.iterrows():
        color, ls = _STYLE[r["option"]]
        bw = float(r["berm_width"]) if np.isfinite(r["berm_width"]) else 0.0
        x, z = outline(g, 0, crest_raise=float(r["crest_raise"]), berm_width=bw,
                       berm_level=float(r["berm_level"]), inner_edge=inner_edge)
        ax.plot(x, z, color=color, ls=ls, lw=1.6, label=r["option"])
        lo, hi = min(lo, x[0]), max(hi, x[-1])
    ax.set_xlim(lo - 8.0, hi + 8.0)
    ax.axhline(st["water_level"] + st["sea_level_rise"], color="#1f77b4", lw=0.8)
    ax.axhline(st["required_level"], color="#b2182b", lw=0.8, ls="--")
    ax.text(result.offsets[0], st["required_level"], " required level", va="bottom",
            fontsize=8, color="#b2182b")
    ax.text(result.offsets[0], st["water_level"] + st["sea_level_rise"],
            " still water + sea-level rise", va="bottom", fontsize=8, color="#1f77b4")
    ax.set_xlabel("offset from centreline (m, + towards the water)")
    ax.set_ylabel("level (m, DEM datum)")
    ax.set_title(f"chainage {st['chainage']:.0f} m: options on the worst station")
    ax.legend(fontsize=8, loc="upper right")
    ax.grid(alpha=0.3)
    out = _png(fig)
    plt.close(fig)
    return out


def _table(rows) -> str:
    head = ("<tr><th>basis</th><th>option</th><th>crest raise (m)</th><th>berm level (m)</th>"
            "<th>berm width (m)</th><th>fill (m&sup3;)</th><th>footprint out / in (m)</th>"
            "<th>&gamma;<sub>b</sub></th><th>closes gap</th><th>cost (indicative)</th></tr>")
    body = []
    for _, r in rows.iterrows():
        cost = "" if not np.isfinite(r["cost"]) else f"{r['cost']:,.0f}"
        mark = " &#9733;" if r["cheapest"] else ""
        berm = "" if not np.isfinite(r["berm_level"]) else f"{r['berm_level']:.2f}"
        closes = "yes" if r["closes_gap"] else f"no (short {r['remaining_deficit']:.2f} m)"
        body.append(
            f"<tr><td>{html.escape(r['basis'])}</td><td>{r['option']}{mark}</td>"
            f"<td>{r['crest_raise']:.2f}</td><td>{berm}</td><td>{r['berm_width']:.1f}</td>"
            f"<td>{r['fill_volume']:,.0f}</td>"
            f"<td>{r['footprint_outer']:.1f} / {r['footprint_inner']:.1f}</td>"
            f"<td>{r['gamma_b']:.2f}</td><td>{closes}</td><td>{cost}</td></tr>")
    return f"<table class='options'>{head}{''.join(body)}</table>"


def remedy_sections(result, *, n_worst: int = 3) -> list[tuple[str, str]]:
    """(title, HTML fragment) pairs for the report: the worst deficit stretches' options."""
    opt = result.options
    if opt is None or opt.empty:
        return [("Reinforcement options", "<p>No deficit stretch: no options needed.</p>")]
    s = result.stretches
    order = sorted(opt["stretch"].unique(), key=lambda i: s.worst_margin[i])[:n_worst]
    parts = [f"<p class='caution'>{html.escape(CAVEAT)} Costs are order-of-magnitude "
             "estimates (fill volume times the unit rate).</p>"]
    chain = result.stations["chainage"].to_numpy()
    for i in order:
        rows = opt[(opt["stretch"] == i)]
        head = rows.iloc[0]
        wc = rows[rows["basis"] == "worst_station"]["chainage"].iloc[0]
        idx = int(np.argmin(np.abs(chain - wc)))
        img = _figure(result, idx, rows[rows["basis"] == "worst_station"])
        parts.append(
            f"<h3>Stretch {head['from_chainage']:.0f}-{head['to_chainage']:.0f} m "
            f"({head['length']:.0f} m, worst margin {s.worst_margin[i]:.2f} m)</h3>"
            f"<img alt='options at chainage {wc:.0f} m' src='data:image/png;base64,{img}'>"
            + _table(rows.sort_values(["basis", "option"],
                                      key=lambda c: c.map(_order) if c.name == "option"
                                      else c)))
    return [("Reinforcement options", "\n".join(parts))]


def _order(name: str) -> int:
    return OPTIONS.index(name)
