"""Faults during a run: a chunk that cannot be read, stations off the terrain model.

A chunk whose DEM read fails (a corrupt tile in a mosaic, a vanished network
file) does not stop the run: :class:`Guarded` turns the failure into a
:class:`ChunkFailure`, :func:`fill_failures` gives its stations empty values
(status ``no_data``), and the run is recorded as incomplete with the chainage
range of each failure, so nobody mistakes the result for a finished one.
"""

from __future__ import annotations

import logging
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

import numpy as np
import rasterio

from ..errors import InputError

log = logging.getLogger(__name__)

#: extra quality-flag texts added to the station `flags` field
FLAG_READ_FAILED = "dem_read_failed"
FLAG_OFF_DEM = "off_dem"

#: errors a chunk may meet reading the terrain; anything else is a bug and propagates
READ_ERRORS: tuple[type[BaseException], ...] = (rasterio.errors.RasterioError, OSError)


@dataclass(frozen=True)
class ChunkFailure:
    """A chunk that could not be assessed."""

    first_chainage: float
    last_chainage: float
    stations: int
    message: str

    def describe(self) -> str:
        return (f"chainage {self.first_chainage:.1f}-{self.last_chainage:.1f} m "
                f"({self.stations} stations): {self.message}")


def _cause_text(exc: BaseException) -> str:
    """The error and its causes in one line (GDAL's detail is often in the cause)."""
    texts, seen = [], set()
    e: BaseException | None = exc
    while e is not None and id(e) not in seen:
        seen.add(id(e))
        t = str(e).strip()
        if t and t not in texts and "previous exception" not in t:
            texts.append(t)
        e = e.__cause__ or e.__context__
    # the outermost specific text names the file (e.g. the tile of a mosaic)
    return texts[0] if texts else type(exc).__name__


#: per-station column carrying the read error (None where the station was read)
READ_ERROR = "_read_error"


class Guarded:
    """Call ``fn(chunk)``; a terrain read error is narrowed down station by station.

    When the whole chunk fails and ``split(chunk, i)`` is given (the chunk of
    its i-th station alone), each station is retried, so only the stations whose
    sections touch the unreadable part lose their values. Picklable when ``fn``
    and ``split`` are module-level functions.
    """

    def __init__(self, fn: Callable[[Any], dict[str, np.ndarray]],
                 split: Callable[[Any, int], Any] | None = None):
        self.fn = fn
        self.split = split

    def _one(self, chunk: Any) -> dict[str, np.ndarray] | ChunkFailure:
        try:
            return self.fn(chunk)
        except READ_ERRORS as exc:
            c = chunk.stations.chainage
            return ChunkFailure(float(c.min()), float(c.max()), int(c.size), _cause_text(exc))

    def __call__(self, chunk: Any) -> dict[str, np.ndarray] | ChunkFailure:
        whole = self._one(chunk)
        n = len(chunk.stations)
        if not isinstance(whole, ChunkFailure) or self.split is None or n == 1:
            return whole
        pieces = [self._one(self.split(chunk, i)) for i in range(n)]
        if all(isinstance(p, ChunkFailure) for p in pieces):
            return whole
        return _merge(pieces)


def part_size(part: dict[str, np.ndarray] | ChunkFailure) -> int:
    """Number of stations of a chunk's result or failure."""
    if isinstance(part, ChunkFailure):
        return part.stations
    return int(len(next(iter(part.values()))))


def refuse_missing_tiles(stations: Any, half_width: float, missing: tuple, mosaic: str) -> None:
    """Raise an OSError naming the tile when a station's section touches a missing tile.

    ``missing`` is :attr:`trajectory.terrain.demread.DemReading.missing`; raised as a read
    error, the failure is contained like a corrupt tile (:class:`Guarded`).
    """
    if not missing:
        return
    xs = np.stack([stations.x - half_width * stations.nx, stations.x + half_width * stations.nx])
    ys = np.stack([stations.y - half_width * stations.ny, stations.y + half_width * stations.ny])
    for name, (left, bottom, right, top) in missing:
        hit = ((xs.max(0) >= left) & (xs.min(0) <= right)
               & (ys.max(0) >= bottom) & (ys.min(0) <= top))
        if hit.any():
            raise OSError(f"{name}: this tile of the mosaic {mosaic} is missing or cannot be "
                          "opened")


def _empty_like(a: np.ndarray, n: int) -> np.ndarray:
    shape = (n,) + a.shape[1:]
    if a.dtype.kind == "f":
        return np.full(shape, np.nan, dtype=a.dtype)
    if a.dtype.kind == "O":
        return np.full(shape, None, dtype=object)
    return np.zeros(shape, dtype=a.dtype)


def _normalised(p: dict[str, np.ndarray] | ChunkFailure,
                template: dict[str, np.ndarray]) -> dict[str, np.ndarray]:
    """``p`` with the READ_ERROR column; a failure as empty values (NaN, no_data)."""
    if isinstance(p, ChunkFailure):
        out = {k: _empty_like(v, p.stations) for k, v in template.items() if k != READ_ERROR}
        out[READ_ERROR] = np.full(p.stations, p.message, dtype=object)
        return out
    if READ_ERROR not in p:
        p = dict(p)
        p[READ_ERROR] = np.full(part_size(p), None, dtype=object)
    return p


def _merge(pieces: list[dict[str, np.ndarray] | ChunkFailure]) -> dict[str, np.ndarray]:
    template = next(p for p in pieces if not isinstance(p, ChunkFailure))
    parts = [_normalised(p, template) for p in pieces]
    return {k: np.concatenate([p[k] for p in parts]) for k in parts[0]}


def fill_failures(parts: list[dict[str, np.ndarray] | ChunkFailure], *, source: str,
                  ) -> list[dict[str, np.ndarray]]:
    """Every part as columns with a READ_ERROR column; failures as empty values.

    Raises
    ------
    InputError
        When every chunk failed: there is nothing to assess.
    """
    good = [p for p in parts if not isinstance(p, ChunkFailure)]
    if not good:
        first = next(p for p in parts if isinstance(p, ChunkFailure))
        raise InputError(f"{source}: the DEM could not be read anywhere along the line "
                         f"({first.message}); check the file and its tiles")
    return [_normalised(p, good[0]) for p in parts]


def failure_runs(chainage: np.ndarray, read_error: np.ndarray) -> list[ChunkFailure]:
    """Consecutive stations with one read error, as failures with their chainage range.

    Logs a warning for each.
    """
    failed = np.array([e is not None for e in read_error], dtype=bool)
    out: list[ChunkFailure] = []
    for i in np.flatnonzero(failed):
        msg = str(read_error[i])
        f = out[-1] if out else None
        if f is not None and f.message == msg and i > 0 and failed[i - 1]:
            out[-1] = ChunkFailure(f.first_chainage, float(chainage[i]), f.stations + 1, msg)
        else:
            out.append(ChunkFailure(float(chainage[i]), float(chainage[i]), 1, msg))
    out = [ChunkFailure(min(f.first_chainage, f.last_chainage),
                        max(f.first_chainage, f.last_chainage), f.stations, f.message)
           for f in out]
    for f in out:
        log.warning("could not read the DEM for %s; these stations are no_data", f.describe())
    return out


def blank_stations(cols: dict[str, np.ndarray], mask: np.ndarray) -> None:
    """Empty every measured value of the stations in ``mask`` (in place), so they are no_data."""
    if not mask.any():
        return
    for k, v in cols.items():
        if v.dtype.kind == "f":
            v[mask] = np.nan
        elif v.dtype.kind == "O" and k != "flags":
            v[mask] = None


def off_dem(x: np.ndarray, y: np.ndarray,
            bounds: tuple[float, float, float, float]) -> np.ndarray:
    """Stations whose centre lies outside the DEM's extent."""
    left, bottom, right, top = bounds
    return ~((x >= left) & (x <= right) & (y >= bottom) & (y <= top))


def add_flag(flags: np.ndarray, mask: np.ndarray, name: str) -> np.ndarray:
    """Append ``name`` to the ';'-joined flag text of the stations in ``mask``."""
    out = flags.astype(object).copy()
    for i in np.flatnonzero(mask):
        out[i] = f"{out[i]};{name}" if out[i] else name
    return out


def chainage_runs(chainage: np.ndarray, mask: np.ndarray) -> list[tuple[float, float]]:
    """Consecutive runs of stations in ``mask`` as (first, last) chainage pairs."""
    idx = np.flatnonzero(mask)
    if idx.size == 0:
        return []
    brk = np.flatnonzero(np.diff(idx) > 1) + 1
    return [(float(chainage[r[0]]), float(chainage[r[-1]])) for r in np.split(idx, brk)]


def report_off_dem(chainage: np.ndarray, mask: np.ndarray) -> str | None:
    """Log (and return) how many stations lie off the DEM, and where."""
    if not mask.any():
        return None
    runs = ", ".join(f"{a:.1f}-{b:.1f} m" for a, b in chainage_runs(chainage, mask)[:5])
    msg = (f"{int(mask.sum())} of {mask.size} stations lie off the DEM (chainage {runs}); "
           "they are no_data")
    log.warning(msg)
    return msg


def incomplete_text(failures: list[ChunkFailure], *, what: str = "the DEM",
                    effect: str = "those stations are no_data") -> str:
    """One line naming every failed chainage range and what to do (metadata `incomplete`)."""
    ranges = " | ".join(f.describe() for f in failures)
    return f"{what} could not be read for {ranges}; {effect}. Repair the file and run again"
