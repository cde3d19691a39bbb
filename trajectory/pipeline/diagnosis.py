"""Run-level plausibility: say why nothing was assessed, and what looks wrong.

Pure functions over the station table and the profile matrix (no I/O). They
turn runs that would otherwise end silently with every station ``no_data``
(a DEM without values, flat ground, cells coarser than a crest, sections
reaching past the DEM) into one sentence naming the cause and the fix, and
warn about levels or sides that are very likely wrong.
"""

from __future__ import annotations

import warnings

import numpy as np
import pandas as pd

#: cells coarser than this cannot show a crest a few metres wide (common practice:
#: levee screening uses lidar DEMs of 0.5-2 m cells)
COARSE_CELL = 5.0
#: ground varying less than this across a section shows no levee (m)
FLAT_RELIEF = 0.3
#: a crest more than this above its toes or above the design water level is not a
#: levee in metres (common practice: river and sea levees stand a few metres to about
#: 15 m high; the bound is twice that)
TALL_LEVEE = 30.0
#: the water side must be this much higher than the land side to be suspect (m); a
#: river foreland above a settled polder is common, a metre more is not
SIDE_MARGIN = 1.0


def coarse_cell_text(cell: float, source: str) -> str | None:
    """A warning when the DEM's cells are too coarse to measure a crest."""
    if cell <= COARSE_CELL:
        return None
    return (f"{source}: the DEM's cells ({cell:g} m) are coarser than a levee crest (a few "
            f"metres wide); crest level and slopes cannot be measured. Use a DEM with cells "
            f"of {COARSE_CELL:g} m or less (lidar, 0.5-2 m)")


def short_line_text(length: float, spacing: float, stations: int, where: str) -> str | None:
    """A warning when the line is shorter than the station spacing."""
    if length >= spacing:
        return None
    return (f"{where}: the line ({length:.1f} m) is shorter than the spacing ({spacing:g} m), "
            f"so it gets only {stations} station(s); lower --spacing for a useful profile "
            "along it")


def _ends_off_dem(st: pd.DataFrame, half_width: float,
                  bounds: tuple[float, float, float, float]) -> np.ndarray:
    left, bottom, right, top = bounds
    out = np.zeros(len(st), dtype=bool)
    x, y = st["x"].to_numpy(float), st["y"].to_numpy(float)
    nx, ny = st["nx"].to_numpy(float), st["ny"].to_numpy(float)
    for sign in (-1.0, 1.0):
        ex, ey = x + sign * half_width * nx, y + sign * half_width * ny
        out |= ~((ex >= left) & (ex <= right) & (ey >= bottom) & (ey <= top))
    return out


def nothing_assessed_text(st: pd.DataFrame, profiles: np.ndarray, *, cell: float,
                          half_width: float, max_nodata: float,
                          bounds: tuple[float, float, float, float], source: str) -> str | None:
    """Why no station could be assessed (None when at least one was).

    The causes are tried from the most to the least certain: no values at all,
    sections reaching past the DEM, cells too coarse, flat ground, else the
    crest not found near the centreline.
    """
    if len(st) == 0 or (st["status"] != "no_data").any():
        return None
    n = len(st)
    finite = np.isfinite(profiles)
    if not finite.any():
        return (f"{source}: the DEM holds no values along the line (every sample is nodata), "
                "so no station could be assessed; check the DEM's nodata value and that it "
                "covers the levee")
    nod = st["nodata_fraction"].to_numpy(float)
    off = _ends_off_dem(st, half_width, bounds) & ~(nod <= max_nodata)
    if off.sum() * 2 >= n:
        return (f"{source}: the cross-sections (half-width {half_width:g} m) reach beyond the "
                f"DEM at {int(off.sum())} of {n} stations, leaving too little of each section; "
                "lower --half-width")
    coarse = coarse_cell_text(cell, source)
    if coarse:
        return coarse.replace("cannot be measured.", "could not be measured at any station.")
    with warnings.catch_warnings():  # all-NaN rows give NaN, as wanted
        warnings.simplefilter("ignore", RuntimeWarning)
        relief = np.nanmax(profiles, axis=1) - np.nanmin(profiles, axis=1)
    if np.nanmedian(relief) < FLAT_RELIEF:
        return (f"{source}: the ground is flat across the sections (relief "
                f"{np.nanmedian(relief):.2f} m, under {FLAT_RELIEF:g} m): there is no levee "
                "in the DEM along the line; check that the centreline and the DEM show the "
                "same levee")
    return (f"{source}: no crest was found in any cross-section; check that the centreline "
            "follows the levee (within --crest-search of its crest) and that the DEM is the "
            "right one")


def level_warnings(st: pd.DataFrame) -> list[str]:
    """Levels that are very likely not metres: a crest far above its toes or the water.

    At most one warning (the first that applies), so the cause is said once.
    """
    out: list[str] = []
    crest = st["crest_level"].to_numpy(float)
    toe = np.fmin(st["outer_toe_level"].to_numpy(float), st["inner_toe_level"].to_numpy(float))
    height = crest - toe
    above = crest - st["water_level"].to_numpy(float)
    for what, v in (("above its toes", height), ("above the design water level", above)):
        v = v[np.isfinite(v)]
        if v.size and float(np.median(v)) > TALL_LEVEE:
            out.append(f"the crest stands {float(np.median(v)):.0f} m {what} (median over "
                       f"{v.size} stations), implausible for a levee in metres; check the "
                       "DEM's vertical unit (centimetres: --dem-z-scale 0.01, feet: 0.3048) "
                       "and that the conditions use the DEM's datum")
            break
    return out


def water_side_warning(st: pd.DataFrame, profiles: np.ndarray, offsets: np.ndarray,
                       *, crest_search: float) -> str | None:
    """A warning when the side given as water is the higher ground at most stations.

    Profiles are oriented with positive offsets on the given water side; the
    ground beyond the crest search zone is compared side by side (median of
    each side's far part). Water or foreland is expected to be the lower side
    (common practice); where it is higher by more than ``SIDE_MARGIN`` at most
    assessed stations, the sides may be swapped.
    """
    ok = (st["status"] != "no_data").to_numpy()
    if ok.sum() < 3:
        return None
    far = np.abs(offsets) > crest_search
    outer, inner = far & (offsets > 0), far & (offsets < 0)
    if not outer.any() or not inner.any():
        return None
    z = profiles[ok]
    with warnings.catch_warnings():  # all-NaN sides give NaN, as wanted
        warnings.simplefilter("ignore", RuntimeWarning)
        hi_out = np.nanmedian(z[:, outer], axis=1)
        hi_in = np.nanmedian(z[:, inner], axis=1)
    both = np.isfinite(hi_out) & np.isfinite(hi_in)
    higher = both & (hi_out > hi_in + SIDE_MARGIN)
    if both.sum() == 0 or higher.sum() * 2 <= both.sum():
        return None
    sides = st["water_side"].to_numpy(object)[ok][higher]
    given = ", ".join(sorted({str(s) for s in sides}))
    return (f"at {int(higher.sum())} of {int(both.sum())} stations the ground on the side given "
            f"as water ({given}) is more than {SIDE_MARGIN:g} m higher than on the land side; "
            "the sides may be swapped. Check --water-side or the water_side column")
