"""What changed since the previous assessment: verdicts per station, and stretches of change.

Pure functions over columnar arrays (one row per station). The previous verdict
is today's rules (today's conditions, parameters and known structures) applied
to the previous survey's terrain; the margin change is then the survey's own
change, not a change of the rules. Each station is classed:

- ``new_deficit``: a deficit now, ok or watch before;
- ``resolved``: a deficit before, ok or watch now;
- ``worsened`` / ``improved``: otherwise, the margin fell / rose by more than its
  combined standard deviation sqrt(sigma_now^2 + sigma_previous^2) (the two
  surveys' errors independent, uncertainty.py);
- ``unchanged``: none of these; empty where either verdict has no margin.

Consecutive stations of one class (other than ``unchanged``) form a stretch of
change, each station standing for the chainage halfway to its neighbours.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from .status import EXCLUDED, classify, station_extents

#: classes of change, in the order the report lists them
CHANGES = ("new_deficit", "resolved", "worsened", "improved")
UNCHANGED = "unchanged"


def previous_status(margin_previous: np.ndarray, *, watch_band: float,
                    excluded: np.ndarray | None = None) -> np.ndarray:
    """The previous verdict per station, by today's watch band (excluded where today's is)."""
    out = classify(margin_previous, watch_band=watch_band)
    if excluded is not None:
        out[np.asarray(excluded, bool)] = EXCLUDED
    return out


def combined_sigma(sigma_now: np.ndarray, sigma_previous: np.ndarray) -> np.ndarray:
    """Standard deviation of a margin change between two independent surveys."""
    return np.hypot(np.asarray(sigma_now, float), np.asarray(sigma_previous, float))


def change_class(status: np.ndarray, status_prev: np.ndarray, margin: np.ndarray,
                 margin_prev: np.ndarray, sigma: np.ndarray) -> np.ndarray:
    """The class of change of each station (see the module docstring)."""
    status = np.asarray(status, object)
    prev = np.asarray(status_prev, object)
    d = np.asarray(margin, float) - np.asarray(margin_prev, float)
    sig = np.nan_to_num(np.asarray(sigma, float), nan=0.0)
    judged = np.isin(status, ("ok", "watch", "deficit")) & np.isin(prev, ("ok", "watch",
                                                                          "deficit"))
    judged &= np.isfinite(d)
    out = np.full(status.shape, "", dtype=object)
    out[judged] = UNCHANGED
    out[judged & (d < -sig)] = "worsened"
    out[judged & (d > sig)] = "improved"
    out[judged & (status == "deficit") & (prev != "deficit")] = "new_deficit"
    out[judged & (status != "deficit") & (prev == "deficit")] = "resolved"
    return out


@dataclass(frozen=True)
class ChangeRuns:
    """Stretches of one class of change (columnar; first/last index stations)."""

    first: np.ndarray
    last: np.ndarray
    change: np.ndarray
    from_chainage: np.ndarray
    to_chainage: np.ndarray


def change_runs(chainage: np.ndarray, cls: np.ndarray, *, start: float, end: float,
                line_id: np.ndarray | None = None) -> ChangeRuns:
    """Consecutive stations of one class (not ``unchanged`` or empty), with their chainages."""
    c = np.asarray(chainage, float)
    cls = np.asarray(cls, object)
    lid = np.full(c.size, "", object) if line_id is None else np.asarray(line_id, object)
    if c.size == 0:
        e = np.array([], int)
        return ChangeRuns(e, e, np.array([], object), np.array([]), np.array([]))
    brk = np.flatnonzero((cls[1:] != cls[:-1]) | (lid[1:] != lid[:-1])) + 1
    first = np.concatenate([[0], brk])
    last = np.concatenate([brk - 1, [c.size - 1]])
    keep = np.isin(cls[first], CHANGES)
    first, last = first[keep], last[keep]
    lo, hi = station_extents(c, start, end)
    return ChangeRuns(first, last, cls[first], lo[first], hi[last])


def change_table(stations: pd.DataFrame, runs: ChangeRuns) -> pd.DataFrame:
    """One row per stretch of change: its chainages, class, statuses and worst margin change."""
    t = stations
    d = t["margin_change"].to_numpy(float)
    rows = []
    for a, b, cls, lo, hi in zip(runs.first, runs.last, runs.change, runs.from_chainage,
                                 runs.to_chainage, strict=True):
        sl = slice(int(a), int(b) + 1)
        seg = d[sl]
        # the station that changed most in the stretch's own direction
        k = int(a) + int(np.nanargmax(seg) if cls in ("resolved", "improved")
                         else np.nanargmin(seg))
        rows.append({
            "from_chainage": lo,
            "line_id": t["line_id"].iloc[k] if "line_id" in t else "",
            "to_chainage": hi, "length": hi - lo, "change": cls,
            "stations": int(b) - int(a) + 1,
            "status_previous": _joined(t["status_previous"].to_numpy(object)[sl]),
            "status": _joined(t["status"].to_numpy(object)[sl]),
            "largest_change": float(seg[k - int(a)]),
            "largest_change_chainage": float(t["chainage"].iloc[k]),
            "margin_previous": float(t["margin_previous"].iloc[k]),
            "margin": float(t["margin"].iloc[k]),
            "change_sigma": float(t["change_sigma"].iloc[k]),
        })
    cols = ["from_chainage", "line_id", "to_chainage", "length", "change", "stations",
            "status_previous", "status", "largest_change", "largest_change_chainage",
            "margin_previous", "margin", "change_sigma"]
    return pd.DataFrame(rows, columns=cols)


def _joined(values: np.ndarray) -> str:
    """The distinct values in order of appearance, ';'-joined."""
    seen: list[str] = []
    for v in values:
        if v is not None and str(v) not in seen:
            seen.append(str(v))
    return ";".join(seen)
