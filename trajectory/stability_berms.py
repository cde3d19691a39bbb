"""Stability berms: per stretch short on inner-slope stability, the least-fill berm.

A screening estimate for planning, not a design. The berm is a horizontal top
on the inner side (:func:`trajectory.stability.berm_profile`), tried at a few
heights (shares of the inner slope's height) and widths; each try is built
into every station's measured profile of the stretch and searched again with
the same Bishop (1955) search that screened the station. One design covers the
stretch (the same height share and width at every station); the least fill
whose every station reaches its required factor of safety is proposed, or,
where none does, the try that comes closest (``closes_gap`` 0).
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from . import stability as sb

#: the option's name in the options layer (a kind of its own beside the crest's)
OPTION = "stability_berm"
#: stations designed per batch (each with every candidate berm)
BATCH = 40


def short_runs(status: np.ndarray) -> list[tuple[int, int]]:
    """First and last index of each run of consecutive ``short`` stations."""
    s = np.asarray(status, object) == "short"
    edges = np.diff(np.concatenate([[0], s.astype(int), [0]]))
    return list(zip(np.flatnonzero(edges == 1), np.flatnonzero(edges == -1) - 1, strict=True))


def berm_face(inner_slope: np.ndarray) -> np.ndarray:
    """Face of the berm: 1:n of the measured inner slope, at least 1:2 (screening choice)."""
    n = np.asarray(inner_slope, float)
    return np.where(np.isfinite(n), np.maximum(n, 2.0), 2.0)


def design(offsets: np.ndarray, z: np.ndarray, frame: sb.Frame, soil: sb.Soil,
           face: np.ndarray, *, phreatic: str = "line") -> dict[str, np.ndarray]:
    """Every candidate berm at every station: factor of safety and fill area (stations x C)."""
    level, width = sb.berm_candidates(frame)
    n, k = level.shape
    fos = np.full((n, k), np.nan)
    area = np.full((n, k), np.nan)
    for s in range(0, n, BATCH):
        i = np.arange(s, min(s + BATCH, n))
        rep = np.repeat(i, k)
        fr, lv, wd = frame.take(rep), level[i].ravel(), width[i].ravel()
        built = sb.berm_profile(offsets, z[rep], fr, level=lv, width=wd, face=face[rep])
        crit = sb.search(offsets, built, fr, soil.take(rep), phreatic=phreatic,
                         reach=sb.berm_reach(fr, wd))
        fos[i] = crit.fos.reshape(i.size, k)
        area[i] = sb.fill_area(offsets, z[rep], built).reshape(i.size, k)
    return {"level": level, "width": width, "fos": fos, "area": area}


def plan_berms(stations: pd.DataFrame, offsets: np.ndarray, profiles: np.ndarray,
               frame: sb.Frame, soil: sb.Soil, required: np.ndarray, *, extents: np.ndarray,
               lo: np.ndarray, hi: np.ndarray, phreatic: str = "line",
               unit_cost: float = 0.0) -> list[dict]:
    """One options row per stretch of ``short`` stations (the options layer's columns)."""
    runs = short_runs(stations["stability_status"].to_numpy(object))
    if not runs:
        return []
    every = np.concatenate([np.arange(a, b + 1) for a, b in runs])
    face = berm_face(stations["inner_slope"].to_numpy(float))
    got = design(offsets, np.asarray(profiles, float)[every], frame.take(every),
                 soil.take(every), face[every], phreatic=phreatic)
    chainage = stations["chainage"].to_numpy(float)
    rows, start = [], 0
    for a, b in runs:
        part = slice(start, start + b - a + 1)
        start += b - a + 1
        idx = np.arange(a, b + 1)
        short = got["fos"][part] - required[idx][:, None]   # stations x candidates
        worst = np.nanmin(np.where(np.isfinite(short), short, -np.inf), axis=0)
        fill = np.nansum(got["area"][part] * extents[idx][:, None], axis=0)
        closes = worst >= 0
        c = int(np.argmin(np.where(closes, fill, np.inf))) if closes.any() else int(
            np.argmax(worst))
        gov = int(np.argmin(np.where(np.isfinite(short[:, c]), short[:, c], -np.inf)))
        g = idx[gov]
        level, width = float(got["level"][part][gov, c]), float(got["width"][part][gov, c])
        x_top = float(frame.slope_at(np.array([level]))[g])
        foot = x_top - width - (level - float(frame.inner_toe_level[g])) * float(face[g])
        rows.append({
            "from_chainage": float(lo[a]), "to_chainage": float(hi[b]),
            "length": float(hi[b] - lo[a]), "status": "short", "stretch": -1,
            "basis": "whole_stretch", "option": OPTION, "chainage": float(chainage[g]),
            "crest_raise": 0.0, "berm_level": level, "berm_width": width,
            "fill_volume": float(fill[c]), "footprint_outer": 0.0,
            "footprint_inner": max(float(frame.inner_toe[g]) - foot, 0.0), "gamma_b": np.nan,
            "closes_gap": bool(closes[c]), "remaining_deficit": np.nan,
            "cost": float(fill[c]) * unit_cost if unit_cost > 0 else np.nan,
            "cheapest": bool(closes[c]),
            "fos_with_option": float(got["fos"][part][gov, c])})
    return rows
