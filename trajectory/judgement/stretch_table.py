"""Every figure of each stretch, computed once in the run for every writer.

The stretches layer, the stretch CSV, the workbook's stretches sheet and the report
all show this one table (:func:`stretch_rows`). Per stretch: its status run and the
stations the minimum-length rule absorbed, the epoch figures (epochs.py), the
uncertainty (uncertainty.py), the smallest return period held against the standard
and the economic optimum (held.py, economics.py), and the crest raise with its length
and fill volume and a severity rank (:func:`raise_and_rank`).

The fill of a raise is the remedies' one model (:func:`.remedies.raise_area`: crest
width and both slopes kept, each slope moved outward by ``n * dh`` above its own toe),
so a stretch shows the same figure here and in the options. Per station,
``dh = max(0, required_level - crest_level)``; the volume is the sum of the added area
times the chainage each station stands for. Unknown geometry at a station is taken from
the median of the line's readable stations. Where the options hold a whole-stretch
raise, its raise and fill are the stretch's. An order-of-magnitude estimate for
planning, not a design quantity.
"""

from __future__ import annotations

from typing import Any

import numpy as np
import pandas as pd

from ..requirement.held import stretch_held
from .epochs import stretch_figures
from .remedies import Geometry, raise_area
from .status import Stretches, station_extents
from .uncertainty import stretch_uncertainty


def stretch_rows(result: Any) -> pd.DataFrame:
    """The stretches of a run with all their figures, by line and chainage.

    ``result`` is the run's :class:`trajectory.assess.Result` (its stations,
    stretches, options and economics).
    """
    t, s = result.stations, result.stretches
    ids = _line_ids(t)[s.first] if len(s.first) else np.array([], object)
    data = {"line_id": ids, "from_chainage": s.from_chainage, "to_chainage": s.to_chainage,
            "length": s.length, "status": s.status, "worst_margin": s.worst_margin,
            "worst_chainage": s.worst_chainage, "stations": s.last - s.first + 1,
            "absorbed": absorbed(t["status"].to_numpy(object), s)}
    nan = np.full(len(t), np.nan)
    data.update(stretch_figures(s.first, s.last, _col(t, "lowering_rate", nan),
                                _col(t, "projected_year", nan)))
    data.update(stretch_uncertainty(s, t))
    data.update(_held_columns(t, s, result.economics))
    return raise_and_rank(t, pd.DataFrame(data), result.options)


def absorbed(station_status: np.ndarray, s: Stretches) -> np.ndarray:
    """Stations per stretch whose own status differs from the stretch's (minimum-length rule)."""
    n = s.last - s.first + 1
    own = np.repeat(np.asarray(s.status, object), n)
    differs = np.concatenate([[0], np.cumsum(station_status != own)])
    return differs[s.last + 1] - differs[s.first]


def _line_ids(t: pd.DataFrame) -> np.ndarray:
    return t["line_id"].to_numpy(object) if "line_id" in t else np.full(len(t), "", object)


def _col(t: pd.DataFrame, name: str, default: np.ndarray) -> np.ndarray:
    return t[name].to_numpy(float) if name in t.columns else default


def _held_columns(t: pd.DataFrame, s: Stretches,
                  economics: pd.DataFrame | None) -> dict[str, np.ndarray]:
    """Smallest held return period per stretch, the standard and the economic optimum there."""
    nan = np.full(len(t), np.nan)
    out, idx = stretch_held(s.first, s.last, t["chainage"].to_numpy(float),
                            _col(t, "return_period_held", nan),
                            t["held_range"].to_numpy(object) if "held_range" in t
                            else np.full(len(t), "", object),
                            _col(t, "standard_return_period", nan))
    opt: dict[tuple[Any, Any], float] = {}
    if economics is not None and not economics.empty:
        opt = dict(zip(zip(economics["line_id"], economics["section_id"], strict=True),
                       economics["optimal_return_period"], strict=True))
    ids, sid = _line_ids(t), t["section_id"].to_numpy(object)
    out["economic_return_period"] = np.array(
        [opt.get((ids[i], sid[i]), np.nan) if i >= 0 else np.nan for i in idx], dtype=float)
    return out


def _filled(v: np.ndarray) -> np.ndarray:
    v = np.asarray(v, float)
    med = np.nanmedian(v) if np.isfinite(v).any() else 0.0
    return np.where(np.isfinite(v), v, med)


def station_fill(stations: pd.DataFrame, *, start: float, end: float) -> pd.DataFrame:
    """Per station: crest raise ``dh`` (m), chainage it stands for (m), fill volume (m3)."""
    c = stations["chainage"].to_numpy(float)
    lo, hi = station_extents(c, start, end)
    dh = stations["required_level"].to_numpy(float) - stations["crest_level"].to_numpy(float)
    dh = np.where(np.isfinite(dh), np.maximum(dh, 0.0), 0.0)
    crest = stations["crest_level"].to_numpy(float)
    # heights above each toe, unknown ones from the line's median
    h_out = _filled(crest - stations["outer_toe_level"].to_numpy(float))
    h_in = _filled(crest - stations["inner_toe_level"].to_numpy(float))
    g = Geometry(crest_level=np.zeros_like(dh), crest_width=_filled(
        stations["crest_width"].to_numpy(float)),
        outer_slope=_filled(stations["outer_slope"].to_numpy(float)),
        inner_slope=_filled(stations["inner_slope"].to_numpy(float)),
        outer_toe_level=-h_out, inner_toe_level=-h_in)
    area = raise_area(dh, g)
    return pd.DataFrame({"chainage": c, "dh": dh, "extent": hi - lo, "volume": area * (hi - lo)})


def raise_and_rank(stations: pd.DataFrame, stretches: pd.DataFrame,
                   options: pd.DataFrame | None = None) -> pd.DataFrame:
    """The stretches by chainage with their severity rank, raise, length and fill volume.

    ``severity_rank`` is 1 for the smallest worst margin and counts up (no_data
    and excluded stretches last), so sorting on it gives the worst first.

    Where ``options`` (the options layer) has a whole-stretch ``raise`` for a
    stretch, its raise and fill are the stretch's, so the summary, the tables and
    the options give one figure per stretch.
    """
    n = len(stretches)
    out = stretches.reset_index(drop=True).copy()
    if n == 0:
        for name in ("crest_raise", "length_to_raise", "fill_volume"):
            out[name] = pd.Series([], dtype=float)
        out["severity_rank"] = pd.Series([], dtype=int)
        return out
    start = float(stretches["from_chainage"].min())
    end = float(stretches["to_chainage"].max())
    per = station_fill(stations, start=start, end=end)
    c = per["chainage"].to_numpy()
    # station i belongs to the stretch whose chainage range holds it
    which = np.searchsorted(stretches["to_chainage"].to_numpy(float), c, side="right")
    which = np.clip(which, 0, n - 1)
    raise_max = np.zeros(n)
    np.maximum.at(raise_max, which, per["dh"].to_numpy())
    length = np.bincount(which, weights=per["extent"].to_numpy() * (per["dh"].to_numpy() > 0),
                         minlength=n)
    volume = np.bincount(which, weights=per["volume"].to_numpy(), minlength=n)
    out["crest_raise"] = raise_max
    out["length_to_raise"] = length
    out["fill_volume"] = volume
    if options is not None and not options.empty:
        _from_options(out, options)
    key = out["worst_margin"].to_numpy(float)
    last = np.isnan(key) | (out["status"].to_numpy(object) == "excluded")
    order = np.lexsort((out["from_chainage"].to_numpy(float), np.where(last, np.inf, key),
                        last))
    rank = np.empty(n, int)
    rank[order] = np.arange(1, n + 1)
    out["severity_rank"] = rank
    lines = out["line_id"].to_numpy(object) if "line_id" in out else np.zeros(n, object)
    by_chainage = np.lexsort((out["from_chainage"].to_numpy(float), lines.astype(str)))
    return out.iloc[by_chainage].reset_index(drop=True)


def _from_options(out: pd.DataFrame, options: pd.DataFrame) -> None:
    """Take crest_raise and fill_volume from the whole-stretch raise option (in place)."""
    o = options[(options["basis"] == "whole_stretch") & (options["option"] == "raise")]
    key = ["line_id", "from_chainage"] if "line_id" in out and "line_id" in o else ["from_chainage"]
    got = out[key].merge(o[[*key, "crest_raise", "fill_volume"]], on=key, how="left")
    has = got["crest_raise"].notna().to_numpy()
    out.loc[has, "crest_raise"] = got["crest_raise"].to_numpy(float)[has]
    out.loc[has, "fill_volume"] = got["fill_volume"].to_numpy(float)[has]
