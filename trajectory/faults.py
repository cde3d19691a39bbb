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

from .errors import InputError

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


class Guarded:
    """Call ``fn(chunk)``; a terrain read error becomes a :class:`ChunkFailure` (picklable)."""

    def __init__(self, fn: Callable[[Any], dict[str, np.ndarray]]):
        self.fn = fn

    def __call__(self, chunk: Any) -> dict[str, np.ndarray] | ChunkFailure:
        try:
            return self.fn(chunk)
        except READ_ERRORS as exc:
            c = chunk.stations.chainage
            return ChunkFailure(float(c.min()), float(c.max()), int(c.size), _cause_text(exc))


def part_size(part: dict[str, np.ndarray] | ChunkFailure) -> int:
    """Number of stations of a chunk's result or failure."""
    if isinstance(part, ChunkFailure):
        return part.stations
    return int(part["margin"].size)


def _empty_like(a: np.ndarray, n: int) -> np.ndarray:
    shape = (n,) + a.shape[1:]
    if a.dtype.kind == "f":
        return np.full(shape, np.nan, dtype=a.dtype)
    if a.dtype.kind == "O":
        return np.full(shape, None, dtype=object)
    return np.zeros(shape, dtype=a.dtype)


def fill_failures(parts: list[dict[str, np.ndarray] | ChunkFailure], *, source: str,
                  ) -> tuple[list[dict[str, np.ndarray]], list[ChunkFailure]]:
    """Replace each failure by empty values (NaN, no_data); return parts and failures.

    Raises
    ------
    InputError
        When every chunk failed: there is nothing to assess.
    """
    failures: list[ChunkFailure] = []
    for p in parts:  # neighbouring failed chunks with one cause make one range
        if not isinstance(p, ChunkFailure):
            failures.append(None)  # type: ignore[arg-type]
        elif failures and failures[-1] is not None and failures[-1].message == p.message:
            f = failures[-1]
            failures[-1] = ChunkFailure(f.first_chainage, p.last_chainage,
                                        f.stations + p.stations, f.message)
        else:
            failures.append(p)
    failures = [f for f in failures if f is not None]
    good = [p for p in parts if not isinstance(p, ChunkFailure)]
    if not good:
        raise InputError(f"{source}: the DEM could not be read anywhere along the line "
                         f"({failures[0].message}); check the file and its tiles")
    template = good[0]
    for f in failures:
        log.warning("could not read the DEM for %s; these stations are no_data", f.describe())
    out = [{k: _empty_like(v, p.stations) for k, v in template.items()}
           if isinstance(p, ChunkFailure) else p for p in parts]
    return out, failures


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


def incomplete_text(failures: list[ChunkFailure]) -> str:
    """One line naming every failed chainage range (the run metadata's `incomplete`)."""
    return " | ".join(f.describe() for f in failures)
