"""The cross-section profiles kept in the GeoPackage for the report.

The report is built from the GeoPackage alone (``trajectory report
RESULTS.gpkg``), so the profiles it draws are stored in the
``section_profiles`` table: those of the worst station of each of the most
severe stretches, at most :data:`REPORT_PROFILES` of them, and of every station
a worst-station reinforcement option was designed on (the report draws the
options on it). Storing them keeps the report independent of where the DEM is
(or whether it still exists).
"""

from __future__ import annotations

import numpy as np
import pandas as pd

#: number of worst stations whose profiles are kept and drawn
REPORT_PROFILES = 6


def worst_chainages(stretches: pd.DataFrame, stations: pd.DataFrame, *,
                    n: int = REPORT_PROFILES) -> np.ndarray:
    """Chainage of the worst station of each deficit or watch stretch, worst first (<= n).

    With no such stretch, the station with the smallest margin stands in, so a
    report always shows at least one section where any is readable.
    """
    bad = stretches[stretches["status"].isin(["deficit", "watch"])
                    & np.isfinite(stretches["worst_margin"])]
    bad = bad.sort_values("worst_margin", kind="stable")
    ch = bad["worst_chainage"].to_numpy(float)[:n]
    if ch.size == 0:
        m = stations["margin"].to_numpy(float)
        if np.isfinite(m).any():
            ch = np.array([stations["chainage"].to_numpy(float)[int(np.nanargmin(m))]])
    return ch


def stored_chainages(stretches: pd.DataFrame, stations: pd.DataFrame,
                     options: pd.DataFrame | None = None) -> np.ndarray:
    """Chainages whose profiles are stored: :func:`worst_chainages`, then option stations.

    The stations of the ``worst_station`` options (their ``chainage``) are added
    where not already chosen, so every stretch with options has its design
    station's profile even beyond the :data:`REPORT_PROFILES` worst.
    """
    ch = worst_chainages(stretches, stations)
    if options is None or options.empty:
        return ch
    design = options.loc[options["basis"] == "whole_stretch", "chainage"].to_numpy(float)
    design = np.unique(design[np.isfinite(design)])
    return np.concatenate([ch, design[~np.isin(design, ch)]])


def worst_stability_chainages(stations: pd.DataFrame, *, n: int = REPORT_PROFILES,
                              exclude: np.ndarray | None = None) -> np.ndarray:
    """Chainage of the least factor of safety of each run of ``short`` stations, worst first.

    With no short station, the least factor of safety stands in (the report draws
    one screened section); empty where nothing was screened. ``exclude`` are
    chainages already chosen.
    """
    if "stability_fos" not in stations:
        return np.array([])
    from ..stability_berms import short_runs

    fos = stations["stability_fos"].to_numpy(float)
    ratio = fos / stations["stability_required"].to_numpy(float)
    ch = stations["chainage"].to_numpy(float)
    runs = short_runs(stations["stability_status"].to_numpy(object))
    picks = [a + int(np.nanargmin(ratio[a:b + 1])) for a, b in runs]
    picks = sorted(picks, key=lambda i: ratio[i])[:n]
    if not picks and np.isfinite(ratio).any():
        picks = [int(np.nanargmin(ratio))]
    got = ch[np.asarray(picks, int)]
    return got if exclude is None else got[~np.isin(got, exclude)]


def profile_table(chainage: np.ndarray, offsets: np.ndarray, profiles: np.ndarray,
                  chosen: np.ndarray) -> pd.DataFrame:
    """Long table (chainage, offset, level) of the profiles at the ``chosen`` chainages."""
    idx = np.flatnonzero(np.isin(np.asarray(chainage, float), chosen))
    k = offsets.size
    return pd.DataFrame({
        "chainage": np.repeat(np.asarray(chainage, float)[idx], k),
        "offset": np.tile(np.asarray(offsets, float), idx.size),
        "level": np.asarray(profiles, float)[idx].ravel(),
    })
