"""Stretches sorted by severity, with the length needing raising and a fill-volume estimate.

The estimate (documented in the README) treats each station's section as a
trapezoid of crest width ``B``, height ``H`` above the mean of its two toes and
side slopes 1:m (outer) and 1:n (inner). Raising the crest by ``dh`` with the
same crest width and slopes widens the base, and the section grows by

    dA = dh * (B + (m + n) * H) + (m + n) / 2 * dh**2

(the difference of the two trapezoid areas, plane geometry). Per station,
``dh = max(0, required_level - crest_level)``; the volume is the sum of
``dA`` times the chainage each station stands for. Unknown geometry at a
station is taken from the median of the line's readable stations. It is an
order-of-magnitude estimate for planning, not a design quantity.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from ..status import station_extents

#: columns of the stretch table, with units (after the stretch layer's fields)
EXTRA_COLUMNS: dict[str, tuple[str, str]] = {
    "crest_raise": ("m", "Crest raise that closes the stretch's gap: the raise option's "
                    "(whole_stretch, incl. settlement of new fill); else required - crest"),
    "length_to_raise": ("m", "Chainage length whose crest is below the required level"),
    "fill_volume": ("m3", "Estimated fill of that raise, keeping crest width and slopes"),
    "severity_rank": ("", "1 = the worst margin of the line(s), then in order (no_data last)"),
}


def section_area_increase(dh: np.ndarray, *, crest_width: np.ndarray, height: np.ndarray,
                          outer_slope: np.ndarray, inner_slope: np.ndarray) -> np.ndarray:
    """Growth of a trapezoidal section (m2) when its crest is raised by ``dh`` (m).

    Crest width and slopes (n of 1:n) are kept, so the base widens; the
    result is the difference of the two trapezoid areas (plane geometry).
    """
    s = outer_slope + inner_slope
    return dh * (crest_width + s * height) + 0.5 * s * dh ** 2


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
    toes = stations[["outer_toe_level", "inner_toe_level"]].to_numpy(float)
    known = np.isfinite(toes)
    with np.errstate(invalid="ignore", divide="ignore"):
        toe = np.where(known, toes, 0.0).sum(1) / known.sum(1)   # NaN where both unknown
    height = np.maximum(_filled(stations["crest_level"].to_numpy(float) - toe), 0.0)
    area = section_area_increase(
        dh, crest_width=_filled(stations["crest_width"].to_numpy(float)), height=height,
        outer_slope=_filled(stations["outer_slope"].to_numpy(float)),
        inner_slope=_filled(stations["inner_slope"].to_numpy(float)))
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
