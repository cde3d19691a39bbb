"""Margin, status per station, and stretches of one status."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

#: station statuses, in order of severity (the public values of `status`)
STATUSES = ("ok", "watch", "deficit", "no_data", "excluded")
#: the status of stations a known structure excludes from the verdict (structures.py)
EXCLUDED = "excluded"


def classify(margin: np.ndarray, *, watch_band: float) -> np.ndarray:
    """Status per station: ok (margin >= band), watch (0 <= margin < band), deficit, no_data."""
    m = np.asarray(margin, dtype=float)
    out = np.full(m.shape, "no_data", dtype=object)
    out[m >= watch_band] = "ok"
    out[(m >= 0) & (m < watch_band)] = "watch"
    out[m < 0] = "deficit"
    return out


@dataclass(frozen=True)
class Stretches:
    """Runs of consecutive stations of one status (columnar)."""

    first: np.ndarray   # index of the first station of each stretch
    last: np.ndarray    # index of the last station (inclusive)
    status: np.ndarray
    from_chainage: np.ndarray
    to_chainage: np.ndarray
    worst_margin: np.ndarray
    worst_chainage: np.ndarray

    @property
    def length(self) -> np.ndarray:
        return self.to_chainage - self.from_chainage


def station_extents(chainage: np.ndarray, start: float,
                    end: float) -> tuple[np.ndarray, np.ndarray]:
    """Chainage interval each station represents: halfway to its neighbours."""
    c = np.asarray(chainage, float)
    mid = 0.5 * (c[1:] + c[:-1])
    lo = np.concatenate([[start], mid])
    hi = np.concatenate([mid, [end]])
    return lo, hi


def merge_stretches(
    chainage: np.ndarray, status: np.ndarray, margin: np.ndarray, *,
    start: float, end: float, min_length: float = 0.0,
) -> Stretches:
    """Merge consecutive stations of one status into stretches.

    Each station stands for the chainage halfway to its neighbours, so the
    stretches tile ``start``-``end`` without gaps. With ``min_length`` > 0,
    short runs are first absorbed by a more severe neighbour
    (:func:`absorb_short_runs`); the stations keep their own status.
    """
    st = np.asarray(status, dtype=object)
    if min_length > 0 and st.size:
        st = absorb_short_runs(chainage, st, start=start, end=end, min_length=min_length)
    n = st.size
    if n == 0:
        e = np.array([], dtype=float)
        return Stretches(np.array([], int), np.array([], int), np.array([], object), e, e, e, e)
    brk = np.flatnonzero(st[1:] != st[:-1]) + 1
    first = np.concatenate([[0], brk])
    last = np.concatenate([brk - 1, [n - 1]])
    lo, hi = station_extents(chainage, start, end)
    m = np.where(np.isnan(margin), np.inf, margin)
    worst_idx = np.array([f + int(np.argmin(m[f:la + 1]))
                          for f, la in zip(first, last, strict=True)])
    worst = np.asarray(margin, float)[worst_idx]
    return Stretches(first=first, last=last, status=st[first], from_chainage=lo[first],
                     to_chainage=hi[last], worst_margin=worst,
                     worst_chainage=np.asarray(chainage, float)[worst_idx])


#: rank of each status for the minimum-stretch-length rule (higher = more severe);
#: no_data ranks lowest: a short unreadable run takes its neighbours' status
SEVERITY = {"excluded": -2, "no_data": -1, "ok": 0, "watch": 1, "deficit": 2}


def _runs(st: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    brk = np.flatnonzero(st[1:] != st[:-1]) + 1
    return np.concatenate([[0], brk]), np.concatenate([brk - 1, [st.size - 1]])


def absorb_short_runs(
    chainage: np.ndarray, status: np.ndarray, *, start: float, end: float, min_length: float,
) -> np.ndarray:
    """Status of the stretch each station belongs to, after the minimum-length rule.

    A run of consecutive stations of one status that is shorter than
    ``min_length`` (m, each station standing for the chainage halfway to its
    neighbours) takes the status of its more severe neighbour, if that
    neighbour is more severe than the run itself; repeated until nothing
    changes. A run is never given a milder status, so a short deficit is never
    hidden; one ok or unreadable station inside a deficit stretch no longer
    splits it. Severity: no_data < ok < watch < deficit (:data:`SEVERITY`); runs of
    ``excluded`` stations are left as they are.
    """
    st = np.asarray(status, dtype=object).copy()
    lo, hi = station_extents(chainage, start, end)
    rank_of = np.vectorize(SEVERITY.__getitem__, otypes=[float])
    while st.size:
        first, last = _runs(st)
        length = hi[last] - lo[first]
        rank = rank_of(st[first])
        left = np.concatenate([[-np.inf], rank[:-1]])
        right = np.concatenate([rank[1:], [-np.inf]])
        # an excluded run (a known structure) neither takes nor gives a status
        change = ((length < min_length) & (np.maximum(left, right) > rank)
                  & (st[first] != EXCLUDED))
        if not change.any():
            break
        run_status = st[first]
        take_left = np.concatenate([[False], left[1:] >= right[1:]])
        new = np.where(take_left, np.roll(run_status, 1), np.roll(run_status, -1))
        run_status = np.where(change, new, run_status)
        st = np.repeat(run_status, last - first + 1)
    return st
