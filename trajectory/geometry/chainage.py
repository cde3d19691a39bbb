"""Linear referencing: stations at fixed chainage and their section normals."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import shapely
from shapely.geometry import LineString

from ..errors import InputError


@dataclass(frozen=True)
class Stations:
    """Stations along a centreline, columnar (one entry per station).

    ``nx, ny`` is the unit normal pointing to the LEFT of the line's digitised
    direction; ``along`` is the distance from the line's first vertex.
    """

    chainage: np.ndarray
    along: np.ndarray
    x: np.ndarray
    y: np.ndarray
    nx: np.ndarray
    ny: np.ndarray

    def __len__(self) -> int:
        return int(self.chainage.size)

    def take(self, idx: np.ndarray | slice) -> Stations:
        return Stations(*(getattr(self, f)[idx] for f in
                          ("chainage", "along", "x", "y", "nx", "ny")))


def station_distances(length: float, spacing: float, *, reverse: bool = False) -> np.ndarray:
    """Distances from the first vertex of stations every ``spacing`` m of chainage.

    Chainage runs from the first vertex, or from the last one when ``reverse``.
    The line's end is a station only where it falls on the spacing.
    """
    n = int(np.floor(length / spacing + 1e-9)) + 1
    d = np.arange(n, dtype=float) * spacing
    return length - d if reverse else d


def distances_for_chainages(chainage: np.ndarray, length: float, *, start_chainage: float = 0.0,
                            reverse: bool = False) -> np.ndarray:
    """Distances from the first vertex of stations at the given chainages.

    Raises :class:`~trajectory.errors.InputError` listing the chainages that fall
    off the line (beyond ``start_chainage`` .. ``start_chainage + length``).
    """
    c = np.unique(np.asarray(chainage, dtype=float))
    rel = c - start_chainage
    off = c[(rel < -1e-6) | (rel > length + 1e-6)]
    if off.size:
        shown = ", ".join(f"{v:g}" for v in off[:10]) + (" ..." if off.size > 10 else "")
        raise InputError(f"{off.size} listed station chainage(s) lie off the line, which runs "
                         f"from {start_chainage:g} to {start_chainage + length:g} m: {shown}")
    rel = np.clip(rel, 0.0, length)
    return length - rel if reverse else rel
def _measure(line: LineString) -> tuple[np.ndarray, np.ndarray]:
    """Vertices (n x 2) and their cumulative distance along ``line``."""
    xy = shapely.get_coordinates(line)
    return xy, np.concatenate([[0.0], np.cumsum(np.hypot(*np.diff(xy, axis=0).T))])


def _interpolate(xy: np.ndarray, cum: np.ndarray, distance: np.ndarray) -> np.ndarray:
    seg = np.diff(cum)
    d = np.clip(np.asarray(distance, dtype=float), 0.0, cum[-1])
    i = np.clip(np.searchsorted(cum, d, side="right") - 1, 0, seg.size - 1)
    with np.errstate(invalid="ignore", divide="ignore"):
        f = np.where(seg[i] > 0, (d - cum[i]) / seg[i], 0.0)
    return xy[i] + f[:, None] * (xy[i + 1] - xy[i])


def interpolate_points(line: LineString, distance: np.ndarray) -> np.ndarray:
    """Points (n x 2) at ``distance`` along ``line`` from its first vertex.

    The same as :func:`shapely.line_interpolate_point` for distances from 0
    (distances are clipped to the line, not counted from its end when negative)
    but by one binary search over the vertices' cumulative distances, so
    it stays fast on lines of many thousand vertices.
    """
    return _interpolate(*_measure(line), distance)


def line_substrings(line: LineString, start: np.ndarray, end: np.ndarray) -> list[LineString]:
    """The parts of ``line`` between distances ``start[i]`` and ``end[i]`` (start <= end).

    Like :func:`shapely.ops.substring` for increasing distances, by a binary
    search over the vertices instead of a walk, so a long line cut into many
    stretches stays fast. Distances are clipped to the line.
    """
    xy, cum = _measure(line)
    lo = np.clip(np.asarray(start, dtype=float), 0.0, cum[-1])
    hi = np.clip(np.asarray(end, dtype=float), 0.0, cum[-1])
    a = _interpolate(xy, cum, lo)
    b = _interpolate(xy, cum, hi)
    first = np.searchsorted(cum, lo, side="right")
    stop = np.searchsorted(cum, hi, side="left")
    return [LineString(np.vstack([a[k:k + 1], xy[first[k]:stop[k]], b[k:k + 1]]))
            for k in range(lo.size)]


def make_stations(
    line: LineString, *, spacing: float, start_chainage: float = 0.0,
    reverse: bool = False, smooth_length: float = 10.0, chainages: np.ndarray | None = None,
) -> Stations:
    """Place stations along ``line`` and compute smoothed section normals.

    Stations are every ``spacing`` m, or at the listed ``chainages`` when given
    (existing survey stations). The tangent at a station is the chord between the
    points ``smooth_length/2`` before and after it (clipped at the line's ends), so
    sections at a vertex are not skewed by the vertex's kink.
    """
    length = line.length
    if chainages is None:
        along = station_distances(length, spacing, reverse=reverse)
    else:
        along = distances_for_chainages(chainages, length, start_chainage=start_chainage,
                                        reverse=reverse)
    chain = start_chainage + (length - along if reverse else along)
    pts = interpolate_points(line, along)
    h = max(smooth_length / 2.0, 1e-3 * spacing, 1e-6)
    a = interpolate_points(line, np.clip(along - h, 0, length))
    b = interpolate_points(line, np.clip(along + h, 0, length))
    t = b - a
    t /= np.hypot(t[:, 0], t[:, 1])[:, None]
    return Stations(chainage=chain, along=along, x=pts[:, 0], y=pts[:, 1],
                    nx=-t[:, 1], ny=t[:, 0])


def crossing_sections(stations: Stations, half_width: float) -> np.ndarray:
    """True for each station whose section crosses a neighbour's within the half-width.

    Sections are the segments ``half_width`` m either side of the station along its
    normal; neighbours are the stations before and after in chainage order. On a
    circular bend of radius R all normals meet at the centre, so neighbours cross
    exactly where ``half_width`` reaches R (the test's analytic check).
    """
    n = len(stations)
    out = np.zeros(n, dtype=bool)
    if n < 2:
        return out
    order = np.argsort(stations.chainage, kind="stable")
    x, y = stations.x[order], stations.y[order]
    nx, ny = stations.nx[order], stations.ny[order]
    seg = shapely.linestrings(np.stack([np.c_[x - half_width * nx, y - half_width * ny],
                                        np.c_[x + half_width * nx, y + half_width * ny]], 1))
    hit = shapely.intersects(seg[:-1], seg[1:])
    flag = np.zeros(n, dtype=bool)
    flag[:-1] |= hit
    flag[1:] |= hit
    out[order] = flag
    return out
