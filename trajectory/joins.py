"""Join the parts of a centreline into one line: order, gaps, branches.

Pure geometry (shapely in, shapely out); :func:`trajectory.sources.read_centreline`
calls it after reading the features.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import shapely
from shapely.geometry import LineString

from .errors import InputError


@dataclass(frozen=True)
class Gap:
    """A gap between two consecutive parts of the joined line."""

    distance: float   # m
    x: float          # middle of the gap
    y: float
    parts: tuple[int, int]  # the two parts (0-based, in file order)


def find_branches(parts: list[LineString], *, tolerance: float) -> list[tuple[float, float]]:
    """Points where the parts branch: three or more part ends meet, or an end meets
    another part away from that part's ends (a T-junction)."""
    n = len(parts)
    ends = np.array([[q.coords[0][:2], q.coords[-1][:2]] for q in parts]).reshape(-1, 2)
    owner = np.repeat(np.arange(n), 2)
    pts = shapely.points(ends)
    found: list[tuple[float, float]] = []
    for k, p in enumerate(pts):
        near_ends = np.hypot(*(ends - ends[k]).T) <= tolerance
        if np.unique(owner[near_ends]).size >= 3:
            found.append(tuple(ends[k]))
            continue
        near = np.flatnonzero(shapely.dwithin(np.asarray(parts, dtype=object), p, tolerance))
        for j in near:
            if j != owner[k] and not near_ends[owner == j].any():
                found.append(tuple(ends[k]))
                break
    # one report per location
    uniq: list[tuple[float, float]] = []
    for f in found:
        if all(np.hypot(f[0] - u[0], f[1] - u[1]) > tolerance for u in uniq):
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
        where = "; ".join(f"({x:.1f}, {y:.1f})" for x, y in branches[:10])
        raise InputError(f"the centreline branches at {len(branches)} point(s): {where}; "
                         "give one unbranched line per levee (split it into separate runs)")
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
