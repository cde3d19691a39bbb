"""The `epochs` layer: one point per station and survey (rows from judgement/epochs.py)."""

from __future__ import annotations

import geopandas as gpd
import shapely

from .schema import field_names


def epoch_layer(result) -> gpd.GeoDataFrame:
    """The run's station x survey rows (:attr:`Result.epoch_table`) as points."""
    rows = result.epoch_table
    geom = shapely.points(rows["x"].to_numpy(float), rows["y"].to_numpy(float))
    return gpd.GeoDataFrame(rows[field_names("epochs")].reset_index(drop=True),
                            geometry=geom, crs=result.crs)
