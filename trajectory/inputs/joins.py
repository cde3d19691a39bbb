"""Join the parts of a centreline into one line: order, gaps, branches.

Pure geometry (shapely in, shapely out); :func:`trajectory.inputs.sources.read_centreline`
calls it after reading the features.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import shapely
from scipy.spatial import cKDTree
from shapely.geometry import LineString

from ..errors import InputError


@dataclass(frozen=True)
class Gap:
    """A gap between two consecutive parts of the joined line."""

    distance: float   # m
    x: float          # middle of the gap
    y: float
    parts: tuple[int, int]  # the two parts (0-based, in file order)


@dataclass(frozen=True)
class Branch:
    """A point where the parts branch."""

    x: float
    y: float
    on_part: int | None  # 0-based part whose middle an end touches; None: 3+ parts meet

    def text(self) -> str:
        where = f"({self.x:.1f}, {self.y:.1f})"
        if self.on_part is None:
            return f"{where}: three or more parts meet there"
        return f"{where}: a part ends on the middle of part {self.on_part + 1}"


def find_branches(parts: list[LineString], *, tolerance: float) -> list[Branch]:
    """Points where the parts branch: three or more parts' ends meet (a Y), or an end
    meets another part away from that part's ends (a T). One finding per location."""
    n = len(parts)
    if n < 2:
        return []
    ends = np.array([[q.coords[0][:2], q.coords[-1][:2]] for q in parts]).reshape(-1, 2)
    owner = np.repeat(np.arange(n), 2)
    found: list[Branch] = []
    # Y: the ends within the tolerance of each end belong to three or more parts
    for k, near in enumerate(cKDTree(ends).query_ball_point(ends, tolerance)):
        if np.unique(owner[near]).size >= 3:
            found.append(Branch(float(ends[k, 0]), float(ends[k, 1]), None))
    # T: an end within the tolerance of another part, but of neither of its ends
    i_pt, i_part = shapely.STRtree(parts).query(shapely.points(ends), predicate="dwithin",
                                                  distance=tolerance)
    near_end = np.minimum(np.hypot(*(ends[i_pt] - ends[2 * i_part]).T),
                          np.hypot(*(ends[i_pt] - ends[2 * i_part + 1]).T)) <= tolerance
    for k in np.flatnonzero((owner[i_pt] != i_part) & ~near_end):
        x, y = ends[i_pt[k]]
        found.append(Branch(float(x), float(y), int(i_part[k])))
    uniq: list[Branch] = []
    for f in found:
        if all(np.hypot(f.x - u.x, f.y - u.y) > tolerance for u in uniq):
            uniq.append(f)
    return uniq


def join_parts(parts: list[LineString], *, tolerance: float) -> tuple[LineString, list[Gap]]:
    """Chain the parts end to end into one LineString; return it and every gap.

    The first part keeps its digitised direction, so the joined line runs the way
    the first feature was drawn; the others are reversed where needed and joined
    at their nearest free end, in chain order (not file order). Gaps are returned,
    all of them; the caller decides which are too large. Branching lines are
    refused with :class:`~trajectory.errors.InputError`.
    """
    coords = [np.asarray(q.coords, dtype=float)[:, :2] for q in parts]
    if len(coords) == 1:
        return LineString(coords[0]), []
    branches = find_branches([LineString(c) for c in coords], tolerance=tolerance)
    if branches:
        where = "; ".join(b.text() for b in branches[:10])
        raise InputError(f"the centreline branches at {where}; keep one continuous levee "
                         "line (put side branches in another file and assess them "
                         "separately)")
    chain = [coords[0]]
    head_id, tail_id = 0, 0
    free = set(range(1, len(coords)))
    gaps: list[Gap] = []
    while free:
        start, end = chain[0][0], chain[-1][-1]
        best = None
        for i in free:
            c = coords[i]
            for at, anchor in (("end", end), ("start", start)):
                for flip, tip in ((False, c[0]), (True, c[-1])):
                    d = float(np.hypot(*(tip - anchor)))
                    if best is None or d < best[0]:
                        best = (d, i, at, flip)
        d, i, at, flip = best
        c = coords[i]
        if at == "end":
            c = c[::-1] if flip else c
            a, b = chain[-1][-1], c[0]
            chain.append(c if d > 0 else c[1:])
            pair, tail_id = (tail_id, i), i
        else:
            c = c if flip else c[::-1]   # its far end first, the joining end last
            a, b = c[-1], chain[0][0]
            chain.insert(0, c if d > 0 else c[:-1])
            pair, head_id = (i, head_id), i
        if d > 0:
            gaps.append(Gap(d, float((a[0] + b[0]) / 2), float((a[1] + b[1]) / 2),
                            tuple(sorted(pair))))
        free.discard(i)
    return LineString(np.vstack(chain)), gaps
