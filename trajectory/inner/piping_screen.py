"""Piping screened per station on the measured profile, stretches, and the piping berm.

The geometry comes from the profile reading (:mod:`trajectory.terrain.profile`): the
seepage path runs from the entry point on the water side (the outer toe, or the
design waterline where still water + sea-level rise meets the outer ground) to
the exit point on the land side (the inner toe; where an inner berm was read,
the toe beyond it: the berm's end). Its horizontal length L is compared with
what Bligh (1910), Lane (1935) and Sellmeijer et al. (2011) require for the head
dH = water level + sea-level rise - polder level (:mod:`trajectory.formulas.piping`).
The longest requirement governs.

A piping berm lengthens the path: laid on the ground at the inner toe's level,
``t`` thick, its top running from the inner slope landward and its landward face
at the inner slope's gradient 1:n, it moves the exit point landward by its
length ``B``; its cross-section is exactly ``t B`` (the triangle it adds on the
inner slope equals the one its face leaves out).

This is a screening of geometry with schematised soil, not a geotechnical
assessment: one subsoil class and one set of aquifer parameters per section, no
uplift or heave check, no safety factors.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from ..formulas import piping as pp
from ..judgement.status import EXCLUDED, merge_stretches, station_extents
from ..terrain.profile_sides import BERM_MIN_WIDTH

#: piping statuses, in order of severity (public values of ``piping_status``)
PIPING_STATUSES = ("ok", "short", "no_data", "not_screened", "excluded")
#: rule names of ``piping_rule`` (the governing one)
RULES = ("bligh", "lane", "sellmeijer")
#: the shortest piping berm proposed (m): the profile reading needs a flat part this wide
MIN_BERM_LENGTH = BERM_MIN_WIDTH
#: landward face of a proposed berm where the inner slope is unknown (n of 1:n)
DEFAULT_FACE = 3.0
CAVEAT = ("Piping is screened on the measured geometry with schematised soil (one subsoil "
          "class and aquifer per section, Bligh 1910, Lane 1935, Sellmeijer et al. 2011, no "
          "safety factors, no uplift check): a screening, not a geotechnical assessment.")

#: the station columns :func:`screen_piping` adds (their meaning is in the output schema)
STATION_COLUMNS = (
    "piping_status", "seepage_length", "piping_required", "piping_margin", "piping_rule",
    "piping_head", "piping_required_bligh", "piping_required_lane",
    "piping_required_sellmeijer", "sellmeijer_critical_head", "piping_entry",
    "piping_entry_offset", "piping_exit", "piping_exit_offset", "polder_level",
    "subsoil_class",
)


def waterline_offset(profiles: np.ndarray, offsets: np.ndarray, level: np.ndarray,
                     start: np.ndarray) -> np.ndarray:
    """Offset where the ground first lies at or below ``level`` outward of ``start`` (m).

    Profiles are oriented outer-positive; linear between the two samples that
    bracket the level. NaN where the ground stays above it.
    """
    z = np.asarray(profiles, float)
    x = np.asarray(offsets, float)
    h = np.asarray(level, float)[:, None]
    below = (z <= h) & (x[None, :] > np.asarray(start, float)[:, None])
    hit = below.any(axis=1)
    j = np.argmax(below, axis=1)
    i = np.clip(j - 1, 0, x.size - 1)
    rows = np.arange(z.shape[0])
    z0, z1 = z[rows, i], z[rows, j]
    with np.errstate(invalid="ignore", divide="ignore"):
        f = np.where(np.isfinite(z0) & (z0 > z1), (z0 - h[:, 0]) / (z0 - z1), 1.0)
    out = x[i] + np.clip(f, 0.0, 1.0) * (x[j] - x[i])
    return np.where(hit & (j > 0), out, np.nan)


def _per_station(cond: pd.DataFrame, name: str, n: int) -> np.ndarray:
    return cond[name].to_numpy(float) if name in cond else np.full(n, np.nan)


def screen_piping(stations: pd.DataFrame, cond: pd.DataFrame, *, profiles: np.ndarray,
                  offsets: np.ndarray, entry: str = "outer_toe") -> dict[str, np.ndarray]:
    """Piping fields per station (:data:`STATION_COLUMNS`), all stations at once.

    Parameters
    ----------
    stations : DataFrame
        The station table: ``outer_toe``, ``inner_toe``, ``inner_berm_width``,
        ``crest_offset``, ``water_level``, ``sea_level_rise``, ``status``.
    cond : DataFrame
        The conditions row of each station (``polder_level``, ``subsoil_class``,
        ``aquifer_d70`` in um, ``aquifer_k``, ``aquifer_thickness``,
        ``blanket_thickness``), one row per station.
    profiles, offsets
        The sampled profiles (stations x offsets, outer-positive).
    entry : {"outer_toe", "waterline"}
        Entry point of the seepage path.
    """
    n = len(stations)
    col = stations.__getitem__
    swl = col("water_level").to_numpy(float) + col("sea_level_rise").to_numpy(float)
    polder = _per_station(cond, "polder_level", n)
    toe = col("outer_toe").to_numpy(float)
    if entry == "waterline":
        wl = waterline_offset(profiles, offsets, swl, col("crest_offset").to_numpy(float))
        use_wl = np.isfinite(wl)
    else:
        wl, use_wl = np.full(n, np.nan), np.zeros(n, bool)
    entry_x = np.where(use_wl, wl, toe)
    exit_x = col("inner_toe").to_numpy(float)
    berm = np.isfinite(col("inner_berm_width").to_numpy(float))
    length = entry_x - exit_x
    dh = swl - polder
    soil = (cond["subsoil_class"].to_numpy(object) if "subsoil_class" in cond
            else np.full(n, "", object))
    c_b = np.array([pp.BLIGH_CREEP.get(str(s), np.nan) for s in soil], float)
    c_l = np.array([pp.LANE_CREEP.get(str(s), np.nan) for s in soil], float)
    req_b = pp.bligh_required_length(dh, c_b)
    req_l = pp.lane_required_length(dh, c_l)
    aq = {k: _per_station(cond, c, n) for k, c in (
        ("d70", "aquifer_d70"), ("k", "aquifer_k"), ("aquifer", "aquifer_thickness"))}
    aq["d70"] = aq["d70"] * 1e-6  # um -> m
    blanket = np.nan_to_num(_per_station(cond, "blanket_thickness", n))
    req_s = pp.sellmeijer_required_length(dh, blanket=blanket, **aq)
    with np.errstate(invalid="ignore", divide="ignore"):
        hc = np.where(length > 0, pp.sellmeijer_critical_head(np.where(length > 0, length, 1.0),
                                                              **aq), np.nan)
    reqs = np.stack([req_b, req_l, req_s], axis=1)
    applied = np.isfinite(reqs)
    anyrule = applied.any(axis=1)
    required = np.where(anyrule, np.nanmax(np.where(applied, reqs, -np.inf), axis=1), np.nan)
    rule = np.where(anyrule, np.asarray(RULES, object)[np.argmax(
        np.where(applied, reqs, -np.inf), axis=1)], "")
    margin = length - required
    screened = np.isfinite(polder) & anyrule
    status = np.full(n, "not_screened", dtype=object)
    status[screened] = "no_data"
    known = screened & np.isfinite(margin)
    status[known & (margin >= 0)] = "ok"
    status[known & (margin < 0)] = "short"
    status[col("status").to_numpy(object) == EXCLUDED] = EXCLUDED
    keep = screened
    nan = np.nan

    def only(v: np.ndarray) -> np.ndarray:
        return np.where(keep, v, nan)

    return {
        "piping_status": status,
        "seepage_length": only(length),
        "piping_required": only(required),
        "piping_margin": only(margin),
        "piping_rule": np.where(keep, rule, ""),
        "piping_head": only(dh),
        "piping_required_bligh": only(req_b),
        "piping_required_lane": only(req_l),
        "piping_required_sellmeijer": only(req_s),
        "sellmeijer_critical_head": only(hc),
        "piping_entry": np.where(keep & np.isfinite(entry_x),
                                 np.where(use_wl, "waterline", "outer_toe"), ""),
        "piping_entry_offset": only(entry_x),
        "piping_exit": np.where(keep & np.isfinite(exit_x),
                                np.where(berm, "inner_berm_end", "inner_toe"), ""),
        "piping_exit_offset": only(exit_x),
        "polder_level": polder,
        "subsoil_class": soil,
    }


# ------------------------------------------------------------------ stretches
def piping_stretches(stations: pd.DataFrame, *, start: float, end: float,
                     line_id: str = "") -> pd.DataFrame:
    """Runs of consecutive stations of one piping status (no minimum length: none hidden)."""
    c = stations["chainage"].to_numpy(float)
    st = stations["piping_status"].to_numpy(object)
    m = stations["piping_margin"].to_numpy(float)
    s = merge_stretches(c, st, m, start=start, end=end)
    worst = np.array([f + int(np.argmin(np.where(np.isnan(m[f:la + 1]), np.inf, m[f:la + 1])))
                      for f, la in zip(s.first, s.last, strict=True)], dtype=int)
    pick = (lambda k: stations[k].to_numpy()[worst]) if worst.size else (
        lambda k: np.array([], dtype=stations[k].dtype))
    return pd.DataFrame({
        "from_chainage": s.from_chainage, "line_id": np.full(len(s.first), line_id, object),
        "to_chainage": s.to_chainage, "length": s.length, "status": s.status,
        "worst_margin": s.worst_margin, "worst_chainage": s.worst_chainage,
        "stations": s.last - s.first + 1, "seepage_length": pick("seepage_length"),
        "piping_required": pick("piping_required"), "piping_rule": pick("piping_rule"),
        "first_station": s.first, "last_station": s.last,
    })


# ------------------------------------------------------------------ the berm
def berm_surface(offsets: np.ndarray, *, exit_offset: np.ndarray, toe_level: np.ndarray,
                 length: np.ndarray, thickness: float, face: np.ndarray) -> np.ndarray:
    """Level of a piping berm's surface at ``offsets`` (stations x offsets; -inf off it).

    Top at ``toe_level + thickness`` from the inner slope landward to
    ``exit_offset - length + thickness * face``, then the landward face 1:``face``
    down to the ground at ``exit_offset - length`` (the new exit point).
    Offsets are outer-positive, so the land side is negative.
    """
    x = np.asarray(offsets, float)[None, :]
    e = np.asarray(exit_offset, float)[:, None]
    top = np.asarray(toe_level, float)[:, None] + thickness
    foot = e - np.asarray(length, float)[:, None]
    n = np.asarray(face, float)[:, None]
    surf = np.minimum(top, top - thickness + (x - foot) / n)
    return np.where((x >= foot) & (x <= e + thickness * n + 1e-9), surf, -np.inf)


def with_berm(profiles: np.ndarray, offsets: np.ndarray, **berm) -> np.ndarray:
    """The profiles with a piping berm built in (ground kept where it is higher)."""
    return np.maximum(np.asarray(profiles, float), berm_surface(offsets, **berm))


def piping_options(stations: pd.DataFrame, stretches: pd.DataFrame, *, extents: np.ndarray,
                   thickness: float, unit_cost: float = 0.0) -> pd.DataFrame:
    """A piping berm per stretch short on piping (the options layer's fields).

    Whole-stretch design: one berm length over the stretch, the largest
    seepage deficit of its stations (at least :data:`MIN_BERM_LENGTH`); the
    design station is the one with that deficit. Fill = thickness x length x
    the chainage the stations stand for (the berm's section is thickness x length).
    """
    short = stretches[stretches["status"] == "short"]
    deficit = (stations["piping_required"].to_numpy(float)
               - stations["seepage_length"].to_numpy(float))
    rows = []
    for r in short.itertuples(index=False):
        k = np.arange(r.first_station, r.last_station + 1)
        d = np.where(np.isfinite(deficit[k]), deficit[k], -np.inf)
        i = int(k[np.argmax(d)])
        b = max(float(deficit[i]), MIN_BERM_LENGTH)
        volume = thickness * b * float(np.sum(extents[k]))
        rows.append({
            "from_chainage": r.from_chainage, "line_id": r.line_id, "to_chainage": r.to_chainage,
            "length": r.length, "status": "short", "basis": "whole_stretch",
            "option": "piping_berm", "chainage": float(stations["chainage"].iloc[i]),
            "crest_raise": 0.0,
            "berm_level": float(stations["inner_toe_level"].iloc[i]) + thickness,
            "berm_width": b, "fill_volume": volume, "footprint_outer": 0.0,
            "footprint_inner": b, "gamma_b": np.nan, "closes_gap": True,
            "remaining_deficit": 0.0,
            "cost": volume * unit_cost if unit_cost > 0 else np.nan, "cheapest": True,
        })
    cols = ["from_chainage", "line_id", "to_chainage", "length", "status", "basis", "option",
            "chainage", "crest_raise", "berm_level", "berm_width", "fill_volume",
            "footprint_outer", "footprint_inner", "gamma_b", "closes_gap",
            "remaining_deficit", "cost", "cheapest"]
    return pd.DataFrame(rows, columns=cols)


def berm_face(inner_slope: np.ndarray) -> np.ndarray:
    """The landward face of a proposed berm: the inner slope's 1:n (or 1:3 unknown)."""
    n = np.asarray(inner_slope, float)
    return np.where(np.isfinite(n) & (n > 0), n, DEFAULT_FACE)


__all__ = ["CAVEAT", "PIPING_STATUSES", "RULES", "STATION_COLUMNS", "berm_face",
           "berm_surface", "piping_options", "piping_stretches", "screen_piping",
           "station_extents", "waterline_offset", "with_berm"]
