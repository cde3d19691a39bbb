"""What the report shows, as read from a results GeoPackage: the record every section
builder takes (report.py reads it; the ``report_*`` section modules import it from here,
so nothing imports the report module back), and the number formatting they share."""

from __future__ import annotations

import html
from dataclasses import dataclass, field

import geopandas as gpd
import numpy as np
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
    #: hillshade under the line (uint8 as gdaldem writes it, 0 no value) and its bounds
    terrain: tuple[np.ndarray, tuple[float, ...]] | None = None


def number_text(v: object, fmt: str, *, missing: str = "", text: bool = False) -> str:
    """A table cell: ``v`` formatted with ``fmt``; ``missing`` where it is NaN or infinite;
    a value that is no number shown as (escaped) text with ``text``, else empty."""
    try:
        x = float(v)  # type: ignore[arg-type]
    except (TypeError, ValueError):
        return html.escape(str(v)) if text else ""
    return missing if not np.isfinite(x) else format(x, fmt)
