"""Stretches sorted by severity, with the length needing raising and a fill-volume estimate.

The fill of a raise is the one model of the remedies
(:func:`trajectory.judgement.remedies.raise_area`:
crest width and both slopes kept, each slope moved outward by ``n * dh`` above its own
toe), so a stretch shows the same figure here and in the options. Per station,
``dh = max(0, required_level - crest_level)``; the volume is the sum of the added area
times the chainage each station stands for. Unknown geometry at a station is taken from
the median of the line's readable stations. Where the options hold a whole-stretch raise,
its raise and fill are the stretch's. An order-of-magnitude estimate for planning, not a
design quantity.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from ..judgement.remedies import Geometry, raise_area
from ..judgement.status import station_extents

#: columns of the stretch table, with units (after the stretch layer's fields)
EXTRA_COLUMNS: dict[str, tuple[str, str]] = {
    "crest_raise": ("m", "Crest raise that closes the stretch's gap: the raise option's "
                    "(whole_stretch, incl. settlement of new fill); else required - crest"),
    "length_to_raise": ("m", "Chainage length whose crest is below the required level"),
    "fill_volume": ("m3", "Estimated fill of that raise, keeping crest width and slopes"),
    "severity_rank": ("", "1 = the worst margin of the line(s), then in order (no_data last)"),
}


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


def stretch_table(stations: pd.DataFrame, stretches: pd.DataFrame,
                  options: pd.DataFrame | None = None) -> pd.DataFrame:
    """The stretches by chainage with their severity rank, raise, length and fill volume.

    ``severity_rank`` is 1 for the smallest worst margin and counts up (no_data
    and excluded stretches last), so sorting on it gives the worst first.

    Where ``options`` (the options layer) has a whole-stretch ``raise`` for a
    stretch, its raise and fill are the stretch's, so the summary, the tables and
    the options give one figure per stretch.
    """
    start = float(stretches["from_chainage"].min())
    end = float(stretches["to_chainage"].max())
    per = station_fill(stations, start=start, end=end)
    c = per["chainage"].to_numpy()
    # station i belongs to the stretch whose chainage range holds it
    which = np.searchsorted(stretches["to_chainage"].to_numpy(float), c, side="right")
    which = np.clip(which, 0, len(stretches) - 1)
    n = len(stretches)
    raise_max = np.zeros(n)
    np.maximum.at(raise_max, which, per["dh"].to_numpy())
    length = np.bincount(which, weights=per["extent"].to_numpy() * (per["dh"].to_numpy() > 0),
                         minlength=n)
    volume = np.bincount(which, weights=per["volume"].to_numpy(), minlength=n)
    out = stretches.reset_index(drop=True).copy()
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
