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
    from ..inner.stability_berms import short_runs

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


#: characters per level in the text: a separator and up to 8 for sign and digits (levels
#: are checked to lie within -500 to 9000 m, i.e. at most 7 digits of millimetres)
_WIDTH = 9
_DIGITS = 7


def encode_levels(profiles: np.ndarray) -> np.ndarray:
    """Each row of ``profiles`` (m) as text: whole millimetres, right-aligned, space-separated.

    NaN (nodata) is written ``nan``; :func:`decode_levels` reads it back in metres. The
    characters are built for all rows at once from the digits (the writer's hot path:
    formatting a million numbers one by one costs about half a second).
    """
    z = np.asarray(profiles, float)
    n = z.shape[0]
    if z.size == 0:
        return np.empty(n, dtype=object)
    ok = np.isfinite(z)
    mm = np.where(ok, np.rint(np.where(ok, z, 0.0) * 1000.0), 0.0).astype(np.int64)
    q = np.minimum(np.abs(mm), 10**_DIGITS - 1).astype(np.int32)
    chars = np.full(z.shape + (_WIDTH,), ord(" "), dtype=np.uint8)
    ndig = np.ones(z.shape, dtype=np.int8)
    chars[..., _WIDTH - 1] = ord("0") + q % 10
    for p in range(1, _DIGITS):
        q //= 10
        show = q > 0
        ndig[show] = p + 1
        chars[..., _WIDTH - 1 - p] = np.where(show, ord("0") + q % 10, ord(" "))
    sign_at = _WIDTH - 1 - ndig.astype(np.int64)
    rows, cols = np.nonzero(mm < 0)
    chars[rows, cols, sign_at[rows, cols]] = ord("-")
    chars[~ok] = np.frombuffer(b" " * (_WIDTH - 3) + b"nan", dtype=np.uint8)
    flat = chars.reshape(n, -1)
    return np.array([row.tobytes().decode("ascii").strip() for row in flat], dtype=object)


def decode_levels(text: str | None) -> np.ndarray:
    """The levels (m) of one ``profile_levels`` text (empty for none)."""
    if not text:
        return np.empty(0)
    return np.array(str(text).split(), dtype=float) / 1000.0


def expand_profiles(sections: pd.DataFrame) -> pd.DataFrame:
    """Long table (chainage, offset, level) from the cross-sections' stored profiles."""
    rows = []
    for r in sections.itertuples(index=False):
        z = decode_levels(getattr(r, "profile_levels", None))
        off = float(r.profile_start) + float(r.profile_step) * np.arange(z.size)
        rows.append(pd.DataFrame({"chainage": float(r.chainage), "offset": off, "level": z}))
    if not rows:
        return pd.DataFrame({"chainage": [], "offset": [], "level": []})
    return pd.concat(rows, ignore_index=True)
