"""The `epochs` layer (one row per station and survey) and the stretches' epoch figures."""

from __future__ import annotations

import geopandas as gpd
import numpy as np
import shapely

from ..judgement.epochs import EpochLevels, stretch_figures
from .schema import field_names


def epoch_stretch_columns(result) -> dict[str, np.ndarray]:
    """Mean and worst lowering rate and earliest projected year of each stretch."""
    t, s = result.stations, result.stretches
    nan = np.full(len(t), np.nan)
    return stretch_figures(s.first, s.last, _col(t, "lowering_rate", nan),
                           _col(t, "projected_year", nan))


def _col(t, name: str, default: np.ndarray) -> np.ndarray:
    return t[name].to_numpy(float) if name in t.columns else default


def levels_of(result) -> EpochLevels:
    """The result's crest levels per epoch; the latest survey alone if none were kept."""
    if result.epochs is not None:
        return result.epochs
    crest = result.stations["crest_level"].to_numpy(float)[:, None]
    name = str(result.metadata.get("input_dem", ""))
    return EpochLevels(labels=("",), years=np.array([np.nan]), sources=(name,), crest=crest)


def epoch_layer(result) -> gpd.GeoDataFrame:
    """One point per station and survey epoch, oldest epoch first within a station."""
    t = result.stations
    lv = levels_of(result)
    n, k = lv.crest.shape
    z = lv.crest
    prev = np.concatenate([np.full((n, 1), np.nan), z[:, :-1]], axis=1)
    # change since the station's previous readable survey, and since its first
    last_seen = np.where(np.isfinite(prev), prev, np.nan)
    for j in range(2, k):  # carry the last readable level forward (few epochs)
        last_seen[:, j] = np.where(np.isfinite(last_seen[:, j]), last_seen[:, j],
                                   last_seen[:, j - 1])
    ok = np.isfinite(z)
    first_idx = np.where(ok.any(axis=1), ok.argmax(axis=1), 0)
    first = z[np.arange(n), first_idx]
    req = t["required_level"].to_numpy(float)
    data = {
        "chainage": np.repeat(t["chainage"].to_numpy(float), k),
        "epoch": np.tile(np.asarray(lv.labels, object), n),
        "year": np.tile(lv.years, n),
        "source": np.tile(np.asarray(lv.sources, object), n),
        "crest_level": z.ravel(),
        "change_previous": (z - last_seen).ravel(),
        "change_first": (z - first[:, None]).ravel(),
        "margin": (z - req[:, None]).ravel(),
    }
    geom = shapely.points(np.repeat(t["x"].to_numpy(), k), np.repeat(t["y"].to_numpy(), k))
    return gpd.GeoDataFrame({c: data[c] for c in field_names("epochs")}, geometry=geom,
                            crs=result.crs)
