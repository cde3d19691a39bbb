"""Report section for the inner-slope stability screening (Bishop 1955, trajectory.inner.stability).

Built from the results GeoPackage (:class:`~.report_data.ReportData`): the stability
fields of ``stations``, the ``stability_berm`` rows of ``options`` and the
stored ground profiles of ``section_profiles`` (the worst station of each
short stretch is stored, :func:`.profiles.worst_stability_chainages`).
"""

from __future__ import annotations

import html
from typing import TYPE_CHECKING

import numpy as np
import pandas as pd
from matplotlib.figure import Figure

from ..inner import stability as sb
from ..inner.stability_berms import OPTION, berm_face, short_runs
from .plots import figure_html, new_figure
from .profiles import worst_stability_chainages
from .report_data import number_text
from .style import STATUS_COLOURS

if TYPE_CHECKING:
    from .report_data import ReportData

TITLE = "Inner-slope stability"
#: stations drawn, least factor of safety (relative to the required one) first
N_WORST = 3


def _f(v, fmt: str) -> str:
    return number_text(v, fmt, missing="–")


def _crest(st: pd.Series) -> float:
    """The crest level read from the DEM (the search's; a structure may give another)."""
    return float(st["ground_crest_level"] if "ground_crest_level" in st else st["crest_level"])


def _frame(st: pd.Series) -> sb.Frame:
    w, c = float(st["crest_width"]), float(st["crest_offset"])
    return sb.Frame(*(np.array([v], float) for v in (
        _crest(st),
        c + w / 2, c - w / 2, st["inner_toe"], st["inner_toe_level"], st["outer_slope"],
        st["water_level"] + st["sea_level_rise"])))


def stability_figure(st: pd.Series, profile: pd.DataFrame, berm: pd.Series | None = None,
                     *, phreatic: str = "line", share: float = np.nan) -> Figure:
    """One station's ground, phreatic line, critical circle and any proposed berm."""
    off = profile["offset"].to_numpy(float)
    z = profile["level"].to_numpy(float)[None, :]
    frame = _frame(st)
    fig = new_figure(9.0, 3.8)
    ax = fig.add_subplot()
    ax.plot(off, z[0], color="#8C7B6B", lw=1.2, label="ground (DEM)")
    if phreatic == "saturated":
        ax.plot(off, z[0] - 0.05, color="#2B6FA8", lw=1.0, ls="--",
                label="phreatic line: ground surface (saturated)")
    else:
        p = sb.phreatic_through(off, np.nan_to_num(z, nan=-1e9),
                                np.array([st["phreatic_entry"]], float),
                                np.array([st["phreatic_entry_level"]], float),
                                frame.inner_toe, frame.inner_toe_level)[0]
        ax.plot(off, np.where(np.isfinite(z[0]), p, np.nan), color="#2B6FA8", lw=1.0, ls="--",
                label="phreatic line (schematised)")
    if berm is not None and np.isfinite(share):
        level = frame.inner_toe_level + share * frame.height
        built = sb.berm_profile(off, z, frame, level=level,
                                width=np.array([float(berm["berm_width"])]),
                                face=berm_face(np.array([float(st["inner_slope"])])))[0]
        added = built > z[0] + 1e-6
        ax.fill_between(off, z[0], built, where=added, color="#2e7d32", alpha=0.35, lw=0,
                        label=f"stability berm {float(berm['berm_width']):.0f} m "
                              f"at {float(level[0]):.2f} m")
    x, lev = sb.arc_points(float(st["slip_centre_offset"]), float(st["slip_centre_level"]),
                           float(st["slip_radius"]), float(st["slip_entry"]),
                           float(st["slip_exit"]))
    colour = STATUS_COLOURS["deficit"] if st["stability_status"] == "short" else "#303030"
    ax.plot(x, lev, color=colour, lw=1.8,
            label=f"critical circle, F = {float(st['stability_fos']):.2f}")
    ax.plot([x[0], x[-1]], [lev[0], lev[-1]], "o", color=colour, ms=4,
            label="exit and entry")
    ax.plot([float(st["slip_centre_offset"])], [float(st["slip_centre_level"])], "+",
            color=colour, ms=8)
    lo = min(float(st["slip_exit"]), float(st["inner_toe"])) - 10.0
    ax.set_xlim(lo, float(st["crest_offset"]) + float(st["crest_width"]) / 2 + 15.0)
    ax.set_xlabel("offset from centreline (m), + towards the water")
    ax.set_ylabel("level (m, DEM datum)")
    ax.set_title(f"chainage {float(st['chainage']):,.0f} m: factor of safety "
                 f"{float(st['stability_fos']):.2f}, required "
                 f"{float(st['stability_required']):.2f} (Bishop 1955, screening)", fontsize=8)
    ax.grid(alpha=0.3, lw=0.4)
    fig.legend(*ax.get_legend_handles_labels(), fontsize=7, ncol=3, loc="outside upper center",
               frameon=False)
    return fig


def stretch_rows(stations: pd.DataFrame, options: pd.DataFrame | None) -> pd.DataFrame:
    """One row per run of short stations: extent, least factor, the proposed berm."""
    rows = []
    ch = stations["chainage"].to_numpy(float)
    fos = stations["stability_fos"].to_numpy(float)
    req = stations["stability_required"].to_numpy(float)
    berms = (options[options["option"] == OPTION] if options is not None and not options.empty
             else pd.DataFrame(columns=["from_chainage", "to_chainage"]))
    for a, b in short_runs(stations["stability_status"].to_numpy(object)):
        w = a + int(np.nanargmin(fos[a:b + 1] / req[a:b + 1]))
        hit = berms[(berms["from_chainage"] <= ch[a] + 1e-6) & (berms["to_chainage"]
                                                                >= ch[b] - 1e-6)]
        r = hit.iloc[0] if not hit.empty else None
        rows.append({"from_station": ch[a], "to_station": ch[b], "stations": b - a + 1,
                     "worst_chainage": ch[w], "fos": fos[w], "required": req[w],
                     "berm": r})
    return pd.DataFrame(rows)


def _table(rows: pd.DataFrame) -> str:
    head = ("<tr><th>stations from (m)</th><th>to (m)</th><th>stations</th><th>least F</th>"
            "<th>required</th><th>at chainage (m)</th><th>berm level (m)</th>"
            "<th>berm width (m)</th><th>fill, estimate (m&sup3;)</th><th>F with berm</th>"
            "<th>closes gap</th></tr>")
    body = []
    for r in rows.itertuples(index=False):
        b = r.berm
        cells = ("", "", "", "", "none found") if b is None else (
            _f(b["berm_level"], ".2f"), _f(b["berm_width"], ".1f"),
            _f(b["fill_volume"], ",.0f"), _f(b["fos_with_option"], ".2f"),
            "yes" if int(b["closes_gap"]) else "no")
        body.append(f"<tr><td class='n'>{_f(r.from_station, ',.0f')}</td>"
                    f"<td class='n'>{_f(r.to_station, ',.0f')}</td>"
                    f"<td class='n'>{int(r.stations)}</td>"
                    f"<td class='n' data-key='stability_fos'>{_f(r.fos, '.2f')}</td>"
                    f"<td class='n'>{_f(r.required, '.2f')}</td>"
                    f"<td class='n'>{_f(r.worst_chainage, ',.0f')}</td>"
                    + "".join(f"<td class='n'>{c}</td>" for c in cells[:4])
                    + f"<td>{cells[4]}</td></tr>")
    return f"<table class='stability'>{head}{''.join(body)}</table>"


def stability_section(data: ReportData, *, n_worst: int = N_WORST) -> tuple[str, str] | None:
    """The report's section on inner-slope stability; None when no station was screened."""
    st = data.stations
    if "stability_status" not in st or not (st["stability_status"] != "not_screened").any():
        return None
    status = st["stability_status"].to_numpy(object)
    phreatic = str(data.metadata.get("param_stability_phreatic", "line"))
    counts = ", ".join(f"{k} {int((status == k).sum())}" for k in sb.STATUSES)
    options = data.layers.get("options")
    rows = stretch_rows(st, options)
    parts = [f"<p class='caution'>{html.escape(sb.CAUTION)}</p>",
             f"<p>Stations by stability status: {counts}. Bishop's simplified method (Bishop "
             "1955, Géotechnique 5(1)), circles from the crest or upper inner slope to the inner "
             f"toe region or beyond; phreatic line: <b>{html.escape(phreatic)}</b> (see the "
             "README). Each short stretch gets a stability berm on the inner side in the "
             "<code>options</code> layer (option <code>stability_berm</code>).</p>"]
    if rows.empty:
        parts.append("<p>No station is short on stability.</p>")
    else:
        parts.append(_table(rows))
    ch = st["chainage"].to_numpy(float)
    prof_ch = data.profiles["chainage"].to_numpy(float)
    for c in worst_stability_chainages(st, n=n_worst):
        i = int(np.argmin(np.abs(ch - c)))
        prof = data.profiles[np.isclose(prof_ch, c)]
        if prof.empty:
            continue
        berm, share = None, np.nan
        if not rows.empty:
            hit = rows[(rows["from_station"] <= c + 1e-6) & (rows["to_station"] >= c - 1e-6)]
            if not hit.empty and hit.iloc[0]["berm"] is not None:
                berm = hit.iloc[0]["berm"]
                g = st.iloc[int(np.argmin(np.abs(ch - float(berm["chainage"]))))]
                share = ((float(berm["berm_level"]) - float(g["inner_toe_level"]))
                         / (_crest(g) - float(g["inner_toe_level"])))
        parts.append(figure_html(stability_figure(st.iloc[i], prof, berm, phreatic=phreatic,
                                                  share=share),
                                 f"stability at chainage {c:,.0f} m"))
    return TITLE, "\n".join(parts)
