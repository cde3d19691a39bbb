"""Linear referencing: stations at fixed chainage and their section normals."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import shapely
from shapely.geometry import LineString


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


def make_stations(
    line: LineString, *, spacing: float, start_chainage: float = 0.0,
    reverse: bool = False, smooth_length: float = 10.0,
) -> Stations:
    """Place stations along ``line`` and compute smoothed section normals.

    The tangent at a station is the chord between the points ``smooth_length/2``
    before and after it (clipped at the line's ends), so sections at a vertex are
    not skewed by the vertex's kink.
    """
    length = line.length
    along = station_distances(length, spacing, reverse=reverse)
    chain = start_chainage + (length - along if reverse else along)
    pts = shapely.get_coordinates(shapely.line_interpolate_point(line, along))
    h = max(smooth_length / 2.0, 1e-3 * spacing, 1e-6)
    a = shapely.get_coordinates(shapely.line_interpolate_point(line, np.clip(along - h, 0, length)))
    b = shapely.get_coordinates(shapely.line_interpolate_point(line, np.clip(along + h, 0, length)))
    t = b - a
    t /= np.hypot(t[:, 0], t[:, 1])[:, None]
    return Stations(chainage=chain, along=along, x=pts[:, 0], y=pts[:, 1],
                    nx=-t[:, 1], ny=t[:, 0])
