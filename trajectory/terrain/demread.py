"""How terrain values become levels in metres: fill values and vertical units.

Suppliers deliver DEMs whose nodata value is unset although they hold fill
values (-9999, the float32 minimum -3.4e38, ...), and integer DEMs in
centimetres. :func:`reading_rules` inspects a decimated window around the
line once, refuses what cannot be read as metres, and returns a small
picklable :class:`DemReading`; :func:`with_rules` applies it to every windowed
read, so the sampling code stays unaware of it.
"""

from __future__ import annotations

import logging
import warnings
from dataclasses import dataclass

import numpy as np
import rasterio
from rasterio.enums import MaskFlags
from rasterio.windows import Window, from_bounds
from shapely.geometry import LineString

from ..errors import InputError, TrajectoryWarning

log = logging.getLogger(__name__)

#: fill values common in delivered DEMs (common practice: ESRI/ASCII grid -9999,
#: int16 -32767/-32768, float32 lowest value); used only where nodata is unset
COMMON_FILL_VALUES: tuple[float, ...] = (-9999.0, -99999.0, -32767.0, -32768.0,
                                          float(np.finfo(np.float32).min))
#: beyond this magnitude a value is a fill value, never a level
FILL_MAGNITUDE = 1e30
#: plausible terrain levels in metres (from memory: Dead Sea shore about -430 m,
#: Everest about 8849 m), with room for local datums
LEVEL_RANGE = (-500.0, 9000.0)
#: side (cells) of the decimated probe read
PROBE_CELLS = 1024
#: metres per vertical unit, by the names band units are written with (international
#: foot 0.3048 m exactly; US survey foot 1200/3937 m, NIST SP 811 / EPSG 9003)
UNIT_METRES: dict[str, float] = {
    **dict.fromkeys(("m", "metre", "meter", "metres", "meters", "metro"), 1.0),
    **dict.fromkeys(("ft", "foot", "feet", "international foot", "ft (international)",
                     "intl foot"), 0.3048),
    **dict.fromkeys(("us survey foot", "us survey feet", "us-ft", "ftus", "us_survey_foot",
                     "survey foot", "us ft", "foot_us", "ft_us"), 1200.0 / 3937.0),
    **dict.fromkeys(("cm", "centimetre", "centimeter", "centimetres", "centimeters"), 0.01),
    **dict.fromkeys(("mm", "millimetre", "millimeter", "millimetres", "millimeters"), 0.001),
}


@dataclass(frozen=True)
class DemReading:
    """Rules turning raw DEM values into levels (m); picklable for worker processes."""

    fill_values: tuple[float, ...] = ()  # treated as nodata (only where nodata is unset)
    scale: float = 1.0                   # level = raw * scale + offset
    offset: float = 0.0
    #: tiles of a VRT mosaic that do not exist: (file, (left, bottom, right, top))
    missing: tuple[tuple[str, tuple[float, float, float, float]], ...] = ()

    @property
    def trivial(self) -> bool:
        return not self.fill_values and self.scale == 1.0 and self.offset == 0.0


def reading_rules(path: str, line: LineString, *, margin: float,
                  z_scale: float = 0.0) -> DemReading:
    """Inspect the DEM around ``line`` and decide how to read its values.

    Parameters
    ----------
    path
        The DEM.
    line
        Centreline in the DEM's CRS; only a decimated window around it is read.
    margin
        Buffer (m) around the line's bounds (the section half-width).
    z_scale
        Metres per DEM unit given by the user (0.01 for centimetres); 0 means
        from the file: its band scale/offset, else 1.

    Raises
    ------
    InputError
        Integer levels without a declared scale, or levels implausible in metres.
    """
    with rasterio.open(path) as ds:
        unit, unit_source = vertical_unit(path, ds.units[0], ds.crs, z_scale=z_scale)
        dtype = np.dtype(ds.dtypes[0])
        nodata = ds.nodata
        f_scale = float(ds.scales[0] or 1.0)
        f_offset = float(ds.offsets[0] or 0.0)
        try:
            raw = _probe(ds, line, margin)
        except (rasterio.errors.RasterioError, OSError) as exc:
            # a damaged part is reported chunk by chunk later; judge by the data type only
            log.debug("probe read of %s failed: %s", path, exc)
            raw = np.ma.masked_all((1, 1))
    # a declared scale, or a unit of a centimetre or finer, makes whole numbers usable
    declared = (f_scale, f_offset) != (1.0, 0.0) or unit <= 0.01
    if z_scale > 0:
        scale, offset = float(z_scale), 0.0
    else:  # the band's scale and offset give values in its unit; the unit gives metres
        scale, offset = f_scale * unit, f_offset * unit
        if unit != 1.0:
            log.warning("%s: DEM levels are in %s; converted to metres (x %.10g). The "
                        "conditions' levels must be metres in the same datum", path,
                        unit_source, unit)
    fills: tuple[float, ...] = ()
    if nodata is None:
        fills = COMMON_FILL_VALUES
        data = raw.compressed() if np.ma.isMaskedArray(raw) else raw.ravel()
        hit = _is_fill(data, fills)
        if hit.any():
            found = ", ".join(f"{v:g}" for v in np.unique(data[hit])[:3])
            msg = (f"{path}: the DEM declares no nodata value but holds fill values ({found}); "
                   "they are treated as nodata. Set the nodata value in the file to be sure")
            log.warning(msg)
            warnings.warn(msg, TrajectoryWarning, stacklevel=2)
    levels = np.asarray(raw, dtype=float)
    if np.ma.isMaskedArray(raw):
        levels = np.ma.filled(raw.astype(float), np.nan)
    levels = levels[np.isfinite(levels) & ~_is_fill(levels, fills)]
    if np.issubdtype(dtype, np.integer) and not declared and z_scale <= 0:
        span = f", {levels.min():g} to {levels.max():g} near the line" if levels.size else ""
        raise InputError(
            f"{path}: the DEM holds whole numbers ({dtype.name}{span}) and declares no "
            "vertical scale; 1-unit steps cannot measure a crest. If the values are "
            "centimetres pass --dem-z-scale 0.01 (millimetres: 0.001)")
    missing = missing_tiles(path, within=tuple(line.buffer(margin).bounds))
    if levels.size == 0:
        return DemReading(fill_values=fills, scale=scale, offset=offset, missing=missing)
    lo, hi = float(levels.min()), float(levels.max())
    zlo, zhi = lo * scale + offset, hi * scale + offset
    if zlo < LEVEL_RANGE[0] or zhi > LEVEL_RANGE[1]:
        raise InputError(
            f"{path}: DEM levels near the line run from {zlo:g} to {zhi:g} m, implausible for "
            "terrain in metres; if the values are centimetres pass --dem-z-scale 0.01, or set "
            "the DEM's nodata value if these are fill values")
    return DemReading(fill_values=fills, scale=scale, offset=offset, missing=missing)


def missing_tiles(path: str, *, within: tuple[float, float, float, float] | None = None,
                  ) -> tuple[tuple[str, tuple[float, float, float, float]], ...]:
    """The source files of a VRT mosaic that are missing or cannot be opened, with their extent.

    GDAL reads such a source as nodata without an error, so the run would not
    know that part is lost; the extents come from each source's ``DstRect`` and
    the mosaic's ``GeoTransform`` (GDAL VRT format). Only sources overlapping
    ``within`` (left, bottom, right, top) are opened to check them.
    """
    import xml.etree.ElementTree as ET
    from pathlib import Path

    vrt = Path(path)
    if vrt.suffix.lower() != ".vrt" or not vrt.is_file():
        return ()
    try:
        root = ET.parse(vrt).getroot()
        c, a, _, f, _, e = (float(v) for v in (root.findtext("GeoTransform") or "").split(","))
    except (ET.ParseError, ValueError):  # not a plain VRT file: GDAL judges it
        return ()
    out: dict[str, tuple[float, float, float, float]] = {}
    for src in root.iter():
        name, rect = src.find("SourceFilename"), src.find("DstRect")
        if name is None or rect is None or not (name.text or "").strip():
            continue
        text = name.text.strip()
        tile = vrt.parent / text if name.get("relativeToVRT") == "1" else Path(text)
        if text.startswith("/vsi"):
            continue
        xo, yo, xs, ys = (float(rect.get(k, 0)) for k in ("xOff", "yOff", "xSize", "ySize"))
        xa, xb, ya, yb = c + xo * a, c + (xo + xs) * a, f + yo * e, f + (yo + ys) * e
        box = (min(xa, xb), min(ya, yb), max(xa, xb), max(ya, yb))
        if within is not None and (box[2] < within[0] or box[0] > within[2]
                                   or box[3] < within[1] or box[1] > within[3]):
            continue
        if _opens(tile):
            continue
        old = out.get(str(tile))
        out[str(tile)] = box if old is None else (min(old[0], box[0]), min(old[1], box[1]),
                                                  max(old[2], box[2]), max(old[3], box[3]))
    return tuple(out.items())


def _opens(tile) -> bool:
    """Whether GDAL can open ``tile``; a TIFF is judged by its header alone.

    Opening costs about 0.7 ms per tile, reading the header a few microseconds
    (:func:`_tiff_header_ok`); other formats are opened. Damage past the header
    fails on reading, where the run flags the stations it costs.
    """
    if not tile.is_file():
        return False
    judged = _tiff_header_ok(tile)
    if judged is not None:
        return judged
    try:
        with rasterio.open(tile):
            return True
    except rasterio.errors.RasterioError:
        return False


#: bytes per value of each TIFF field type (TIFF 6.0 section 2; BigTIFF adds 16-18)
_TIFF_TYPE_BYTES = {1: 1, 2: 1, 3: 2, 4: 4, 5: 8, 6: 1, 7: 1, 8: 2, 9: 4, 10: 8, 11: 4,
                    12: 8, 13: 4, 16: 8, 17: 8, 18: 8}


def _tiff_header_ok(tile) -> bool | None:
    """Whether a TIFF's header and first IFD lie whole inside the file; None: not a TIFF.

    After the byte order mark (TIFF 6.0 section 2), the version (42 classic, 43
    BigTIFF), the first IFD and every value it stores out of line must fit in the
    file: what GDAL's GTiff driver reads on opening.
    """
    try:
        size = tile.stat().st_size
        with open(tile, "rb") as fh:
            head = fh.read(16)
            order = {b"II": "little", b"MM": "big"}.get(head[:2])
            if order is None:
                return None
            if len(head) < 8:
                return False

            def num(raw: bytes) -> int:
                return int.from_bytes(raw, order)

            version = num(head[2:4])
            if version not in (42, 43):
                return None
            if version == 42:  # classic: 2-byte entry count, 12-byte entries, 4-byte values
                ifd, count_len, entry_len, inline = num(head[4:8]), 2, 12, 4
            elif version == 43 and len(head) == 16:  # BigTIFF: 8, 20, 8
                ifd, count_len, entry_len, inline = num(head[8:16]), 8, 20, 8
            else:
                return False
            if not 8 <= ifd < size:
                return False
            fh.seek(ifd)
            n = num(fh.read(count_len))
            entries = fh.read(n * entry_len)
    except OSError:
        return False
    if n == 0 or len(entries) < n * entry_len:  # the IFD runs past the file's end
        return False
    for k in range(0, n * entry_len, entry_len):
        kind = num(entries[k + 2:k + 4])
        count = num(entries[k + 4:k + entry_len - inline])
        length = count * _TIFF_TYPE_BYTES.get(kind, 1)
        if length > inline and num(entries[k + entry_len - inline:k + entry_len]) + length > size:
            return False
    return True


def vertical_unit(path: str, band_unit: str | None, crs: object, *,
                  z_scale: float = 0.0) -> tuple[float, str]:
    """Metres per DEM value unit, from the band's unit and the CRS's vertical axis.

    Returns the factor and where it came from (for the log). ``z_scale`` > 0 (the
    user's ``--dem-z-scale``) wins over both.

    Raises
    ------
    InputError
        A band unit not known, or a band unit and a vertical CRS that disagree.
    """
    if z_scale > 0:
        return 1.0, "the unit given by --dem-z-scale"
    from_band = None
    name = (band_unit or "").strip()
    if name:
        from_band = UNIT_METRES.get(name.lower())
        if from_band is None:
            raise InputError(
                f"{path}: the DEM's band unit {name!r} is not one trajectory knows (metres, "
                "feet, US survey feet, centimetres, millimetres); set the unit in the file "
                "(gdal_edit.py -units m) or give --dem-z-scale (metres per DEM unit)")
    from_crs, vname = _crs_vertical_unit(crs)
    if from_band is not None and from_crs is not None and not np.isclose(from_band, from_crs,
                                                                          rtol=1e-6):
        raise InputError(
            f"{path}: the DEM's band unit {name!r} and its vertical CRS ({vname}) disagree; "
            "correct the one that is wrong in the file, or give --dem-z-scale (metres per "
            "DEM unit)")
    if from_crs is not None:
        return from_crs, f"the vertical CRS's unit ({vname})"
    if from_band is not None:
        return from_band, f"the band unit {name!r}"
    return 1.0, "metres (no unit declared)"


def _crs_vertical_unit(crs: object) -> tuple[float | None, str]:
    """Metres per unit of the vertical axis of a compound CRS (None: no vertical axis)."""
    if crs is None:
        return None, ""
    from pyproj import CRS

    try:
        c = CRS.from_user_input(crs.to_wkt() if hasattr(crs, "to_wkt") else crs)
    except Exception:  # an unreadable CRS is refused elsewhere (open_dem)
        return None, ""
    for sub in c.sub_crs_list or []:
        if sub.is_vertical and sub.axis_info:
            ax = sub.axis_info[0]
            return float(ax.unit_conversion_factor), f"{sub.name}, {ax.unit_name}"
    return None, ""


def _is_fill(v: np.ndarray, fills: tuple[float, ...]) -> np.ndarray:
    if not fills:
        return np.zeros(np.shape(v), dtype=bool)
    v = np.asarray(v, dtype=float)
    with np.errstate(invalid="ignore"):
        return np.isin(v, np.asarray(fills, dtype=float)) | (np.abs(v) > FILL_MAGNITUDE)


#: places along the line where the DEM's values are probed (constant cost per run)
PROBE_PLACES = 9


def _probe(ds: rasterio.io.DatasetReader, line: LineString, margin: float) -> np.ndarray:
    """Values of small windows at places spread along the line (never the whole DEM).

    ``PROBE_PLACES`` squares of 2 x ``margin`` centred on points evenly spaced
    along the line are read, decimated to at most ``PROBE_CELLS`` a side each, so
    the cost does not grow with the line's length or its bounding box.
    """
    b = ds.bounds
    pts = [line.interpolate(f, normalized=True) for f in np.linspace(0, 1, PROBE_PLACES)]
    parts = []
    for p in pts:
        x0, y0 = max(p.x - margin, b.left), max(p.y - margin, b.bottom)
        x1, y1 = min(p.x + margin, b.right), min(p.y + margin, b.top)
        if x1 <= x0 or y1 <= y0:
            continue
        win = from_bounds(x0, y0, x1, y1, transform=ds.transform).round_offsets().round_lengths()
        win = win.intersection(Window(0, 0, ds.width, ds.height))
        h, w = max(int(win.height), 1), max(int(win.width), 1)
        k = max(h, w) / PROBE_CELLS
        shape = (max(int(h / k), 1), max(int(w / k), 1)) if k > 1 else (h, w)
        band = ds.read(1, window=win, out_shape=shape, masked=True)
        if ds.nodata is not None:  # decimated reads of mosaics do not always carry the mask
            data = np.ma.getdata(band)
            nod = np.isnan(data) if np.isnan(ds.nodata) else data == ds.nodata
            band = np.ma.MaskedArray(data, mask=np.ma.getmaskarray(band) | nod)
        parts.append(band.ravel())
    if not parts:
        return np.ma.masked_all((1, 1))
    return np.ma.concatenate(parts)[None, :]


class _RuledDataset:
    """The few attributes of a rasterio dataset that sampling uses, with the rules applied."""

    def __init__(self, ds: rasterio.io.DatasetReader, rules: DemReading):
        self._ds = ds
        self._rules = rules
        self.transform = ds.transform
        self.width = ds.width
        self.height = ds.height
        self.res = ds.res
        # the rules make the mask more than the nodata value: sampling reads it masked
        self.nodata = None
        self.mask_flag_enums = ([MaskFlags.per_dataset],)

    def read(self, *args, **kwargs) -> np.ndarray:
        band = self._ds.read(*args, **kwargs)
        r = self._rules
        mask = np.ma.getmaskarray(band) | _is_fill(np.ma.getdata(band), r.fill_values)
        vals = np.ma.getdata(band).astype(np.float64) * r.scale + r.offset
        return np.ma.MaskedArray(vals, mask=mask)


def with_rules(ds: rasterio.io.DatasetReader, rules: DemReading | None):
    """``ds`` itself when no rule applies, else a view reading levels by ``rules``."""
    if rules is None or rules.trivial:
        return ds
    return _RuledDataset(ds, rules)
