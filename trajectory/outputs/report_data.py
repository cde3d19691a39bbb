"""What the report shows, as read from a results GeoPackage: the record every section
builder takes (report.py reads it; the ``report_*`` section modules import it from here,
so nothing imports the report module back)."""

from __future__ import annotations

from dataclasses import dataclass, field

import geopandas as gpd
import pandas as pd


@dataclass(frozen=True)
class ReportData:
    """What the report shows, as read from a results GeoPackage."""

    stations: pd.DataFrame        # stations layer, geometry as x and y
    stretches: gpd.GeoDataFrame   # stretches layer with geometry
    metadata: dict[str, str]
    profiles: pd.DataFrame        # section_profiles (may be empty)
    source: str                   # file name of the GeoPackage
    layers: dict[str, pd.DataFrame] = field(default_factory=dict)  # any further layers
