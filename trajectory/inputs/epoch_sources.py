"""Read the earlier surveys of a multi-epoch run: terrain models and earlier results.

An edge module (it touches files); the arithmetic is in :mod:`trajectory.judgement.epochs`.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pyogrio
from pyproj import CRS

from ..errors import InputFileError
from ..judgement.epochs import Epoch, EpochError, match_stations
from .sources import DemInfo, open_dem


def open_earlier_dem(epoch: Epoch, *, latest: DemInfo) -> DemInfo:
    """Open an earlier terrain model; refuse one in another CRS than the latest."""
    dem = open_dem(epoch.path)
    if not dem.crs.equals(latest.crs):
        raise EpochError(
            f"{epoch.path}: survey {epoch.label} is in {_crs_name(dem.crs)} but the latest "
            f"terrain model {latest.path} is in {_crs_name(latest.crs)}; reproject it to the "
            "same CRS so the stations fall on the same ground")
    return dem


def crest_from_result(epoch: Epoch, *, crs: CRS, chainage: np.ndarray,
                      xy: np.ndarray) -> np.ndarray:
    """Crest level of an earlier result GeoPackage at this run's stations (NaN: none there)."""
    return verdict_from_result(epoch, crs=crs, chainage=chainage, xy=xy)["crest_level"]


#: fields of an earlier result's verdict read with its crest level (where the file has them)
VERDICT_FIELDS = ("status", "margin", "margin_sigma")


def verdict_from_result(epoch: Epoch, *, crs: CRS, chainage: np.ndarray,
                        xy: np.ndarray) -> dict[str, np.ndarray]:
    """Crest level and the delivered verdict (status, margin, margin_sigma) of an earlier
    result GeoPackage at this run's stations (NaN / None where it has none)."""
    p = Path(epoch.path)
    if not p.is_file():
        raise InputFileError(f"{p}: earlier result not found")
    try:
        layers = [str(n) for n, _ in pyogrio.list_layers(p)]
    except Exception as exc:  # pyogrio raises several kinds for unreadable data
        raise InputFileError(f"{p}: not a GeoPackage GDAL can read ({exc}); give a complete "
                             "result GeoPackage or leave out this --compare") from exc
    if "stations" not in layers:
        raise EpochError(f"{p}: no 'stations' layer; give a result GeoPackage written by "
                         "trajectory assess")
    try:
        have = {str(n) for n in pyogrio.read_info(p, layer="stations")["fields"]}
        wanted = ["chainage", "crest_level", *(f for f in VERDICT_FIELDS if f in have)]
        old = pyogrio.read_dataframe(p, layer="stations", columns=wanted)
    except Exception as exc:  # a truncated or damaged file: pyogrio raises several kinds
        raise InputFileError(f"{p}: the earlier result cannot be read ({exc}); give a complete "
                             "result GeoPackage or leave out this --compare") from exc
    missing = [c for c in ("chainage", "crest_level") if c not in old.columns]
    if missing:
        raise EpochError(f"{p}: the stations layer lacks {', '.join(missing)}")
    old_crs = CRS.from_user_input(old.crs) if old.crs is not None else None
    if old_crs is None or not old_crs.equals(crs):
        raise EpochError(f"{p}: the earlier result is in {_crs_name(old_crs)} but this run is "
                         f"in {_crs_name(crs)}; the stations cannot be matched")
    old_xy = np.stack([old.geometry.x.to_numpy(), old.geometry.y.to_numpy()], 1)
    idx = match_stations(chainage, xy, old["chainage"].to_numpy(float), old_xy,
                         source=str(p))
    hit, at = idx >= 0, np.clip(idx, 0, None)
    out = {"crest_level": np.where(hit, old["crest_level"].to_numpy(float)[at], np.nan)}
    for f in VERDICT_FIELDS:
        if f == "status":
            v = (old[f].to_numpy(object) if f in old.columns
                 else np.full(len(old), None, object))
            out[f] = np.where(hit, v[at] if len(v) else None, None).astype(object)
        else:
            v = old[f].to_numpy(float) if f in old.columns else np.full(len(old), np.nan)
            out[f] = np.where(hit, v[at] if len(v) else np.nan, np.nan)
    return out


def _crs_name(crs: CRS | None) -> str:
    if crs is None:
        return "no CRS"
    epsg = crs.to_epsg()
    return f"EPSG:{epsg}" if epsg else crs.name
