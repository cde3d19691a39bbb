"""Checks of inputs that come before any computing: files, line geometry, parameters.

Each check raises an error the user can act on (naming the file, the feature
or the parameter and what to do) or returns the findings as text.
"""

from __future__ import annotations

import os
from pathlib import Path
from typing import Any

import numpy as np
import shapely
from shapely.geometry import LineString

from .errors import InputError, InputFileError

#: at most this many samples per chunk (stations x samples) are held at once
MAX_CHUNK_SAMPLES = 50_000_000


# ---------------------------------------------------------------------- files
def check_file(path: str | Path, *, role: str, option: str) -> Path:
    """Refuse a missing, empty, unreadable path or a folder; return it as a Path."""
    p = Path(path)
    if not p.exists():
        raise InputFileError(f"{p}: {role} file not found (check {option})")
    if p.is_dir():
        raise InputFileError(f"{p}: is a folder, not a {role} file (check {option})")
    if not os.access(p, os.R_OK):
        raise InputFileError(f"{p}: the {role} file cannot be read (permissions); "
                             f"make it readable or copy it (check {option})")
    if p.stat().st_size == 0:
        raise InputFileError(f"{p}: the {role} file is empty (0 bytes); "
                             f"give the complete file (check {option})")
    return p


def is_raster(path: str | Path) -> bool:
    """True when GDAL opens ``path`` as a raster."""
    import rasterio

    try:
        with rasterio.open(path):
            return True
    except Exception:  # any failure means "not a raster"
        return False


def is_vector(path: str | Path) -> bool:
    """True when GDAL opens ``path`` as a vector file with at least one layer."""
    import pyogrio

    try:
        return len(pyogrio.list_layers(path)) > 0
    except Exception:  # any failure means "not a vector file"
        return False


# ------------------------------------------------------------------ geometry
def check_parts(parts: list[LineString], *, source: str) -> None:
    """Refuse zero-length parts (all vertices coincide). Branches are found where the
    parts are joined (:func:`trajectory.inputs.joins.find_branches`)."""
    for k, q in enumerate(parts):
        if q.length <= 0:
            raise InputError(f"{source}: line part {k + 1} has zero length (all its vertices "
                             "coincide); delete it or digitise it again")


def check_simple(line: LineString, *, source: str) -> None:
    """Refuse a centreline that crosses or touches itself, naming where."""
    if line.is_simple:
        return
    noded = shapely.union_all([line])
    pieces = list(getattr(noded, "geoms", [noded]))
    ends = np.array([c for g in pieces for c in (g.coords[0], g.coords[-1])])[:, :2]
    key = np.round(ends, 3)
    uniq, count = np.unique(key, axis=0, return_counts=True)
    first, last = np.round(np.asarray(line.coords[0])[:2], 3), np.round(
        np.asarray(line.coords[-1])[:2], 3)
    where = [u for u, c in zip(uniq, count, strict=True) if c >= 3 or (
        c >= 2 and not (np.allclose(u, first) or np.allclose(u, last)))]
    xy = where[0] if where else ends[0]
    closed = np.allclose(first, last)
    what = "is closed (ends where it starts)" if closed and not where else "crosses itself"
    raise InputError(f"{source}: the centreline {what} at ({xy[0]:.1f}, {xy[1]:.1f}); "
                     "chainage would be ambiguous there: split it into lines that do not "
                     "cross and assess them separately")


# ---------------------------------------------------------------- conditions
#: smallest wave height (m) that is not "no waves" and smallest period (s); below these
#: the overtopping formulas meet underflow and the values are no design condition
#: (common practice: wave heights are given to the centimetre)
MIN_WAVE_HEIGHT = 0.01
MIN_WAVE_PERIOD = 0.1
#: smallest roughness factor gamma_f accepted (EurOtop 2018 Table 6.2 lists about 0.38
#: for armour units as its lowest values, from memory)
MIN_ROUGHNESS = 0.3


def condition_plausibility(t: Any, *, row_base: int = 2) -> list[str]:
    """Findings on conditions values each within its rule but not a design condition.

    ``row_base`` is the row number of the table's first record (2 in a CSV with a header).
    """
    findings = []
    hm0 = t["hm0"].to_numpy(float)
    for i in np.flatnonzero((hm0 > 0) & (hm0 < MIN_WAVE_HEIGHT)):
        findings.append(f"row {i + row_base}, column hm0: {hm0[i]:g} m is below "
                        f"{MIN_WAVE_HEIGHT} m; "
                        "give 0 for no waves")
    gf = t["roughness"].to_numpy(float)
    for i in np.flatnonzero((gf > 0) & (gf < MIN_ROUGHNESS)):
        findings.append(f"row {i + row_base}, column roughness: {gf[i]:g} is below "
                        f"{MIN_ROUGHNESS}, "
                        "rougher than any published slope surface")
    wl = t["water_level"].to_numpy(float)
    for i in np.flatnonzero((wl < -500.0) | (wl > 9000.0)):
        findings.append(f"row {i + row_base}, column water_level: {wl[i]:g} m is not a level in "
                        "metres (check the unit and the datum)")
    tm = t["tm10"].to_numpy(float)
    for i in np.flatnonzero((tm > 0) & (tm < MIN_WAVE_PERIOD)):
        findings.append(f"row {i + row_base}, column tm10: {tm[i]:g} s is below "
                        f"{MIN_WAVE_PERIOD} s; "
                        "check the unit (seconds)")
    return findings


def sections_off_the_line(t: Any, first: float, last: float,
                          line: tuple[float, float] | None = None) -> list[str]:
    """Sections lying wholly outside the stations' chainage ``first``-``last`` (not used).

    ``line`` is the line's own chainage range (the stations' when not given): a section
    within it but beyond the outer stations is said to hold no station, not to be off the
    line (a line shorter than the spacing has one station only).
    """
    lo, hi = t["from_chainage"].to_numpy(float), t["to_chainage"].to_numpy(float)
    start, end = line or (first, last)
    notes = []
    for sid, a, b in zip(t["section_id"], lo, hi, strict=True):
        if b < start or a > end:
            notes.append(f"section {sid!r} ({a:g}-{b:g} m) lies outside the line's chainage "
                         f"({start:g}-{end:g} m) and is not used; check its chainage or "
                         "--start-chainage")
        elif b < first or a > last:
            notes.append(f"section {sid!r} ({a:g}-{b:g} m) holds no station (stations at "
                         f"{first:g}-{last:g} m) and is not used; lower --spacing to assess it")
    return notes


# ---------------------------------------------------------------- parameters
def settings_consistency(s: Any) -> list[str]:
    """Findings on parameters that are each in range but do not fit together."""
    problems = []
    if s.half_width <= s.crest_search:
        problems.append(f"half_width ({s.half_width} m) must exceed crest_search "
                        f"({s.crest_search} m) so the slopes lie inside the section")
    if s.sample_step > 0 and s.sample_step * 5 > s.half_width:
        problems.append(f"sample_step ({s.sample_step} m) gives fewer than 5 samples per side "
                        f"of a {s.half_width} m half-width; lower sample_step")
    if s.object_width >= s.crest_search:
        problems.append(f"object_width ({s.object_width} m) must be smaller than crest_search "
                        f"({s.crest_search} m), or the crest itself is filtered away")
    return problems


def check_chunk_memory(n_samples: int, chunk_size: int) -> str | None:
    """A finding when one chunk's profile matrix would be unreasonably large."""
    if n_samples * chunk_size > MAX_CHUNK_SAMPLES:
        return (f"{chunk_size} stations x {n_samples} samples per chunk is too large "
                f"(more than {MAX_CHUNK_SAMPLES:,} samples); lower chunk_size or raise "
                "sample_step")
    return None
