"""Known structures and accepted exceptions along the line, applied before the verdict.

An optional table (``--structures``, the run parameter ``structures_file``) of
objects a manager already knows: road ramps, gates, culverts, crossings, crest
walls, and stretches already accepted or scheduled for works. Each row gives
where (a chainage range ``from_chainage``-``to_chainage``, or a polygon in a
vector file), a ``kind`` and an ``effect``:

exclude
    the stations it covers are not judged: status ``excluded`` (margin kept);
crest_level
    the flood defence there is the given ``crest_level`` (a wall's top, a gate's
    sill), used instead of the measured ground crest;
note
    the verdict stands; the ``note`` is carried to the stations.

Reading is an edge (:func:`read_structures`); matching stations to structures
(:func:`match_structures`) is pure. Where a station lies in several, the
strongest effect wins (exclude, then crest_level, then note) and every id is listed.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd

from ..errors import InputError, InputFileError

#: kinds of object (our own list; ``other`` for anything else)
KINDS: tuple[str, ...] = ("ramp", "gate", "culvert", "crossing", "crest_wall", "accepted",
                          "scheduled", "other")
#: what an object means for the verdict, strongest first
EFFECTS: tuple[str, ...] = ("exclude", "crest_level", "note")
#: columns of the validated table (and of the GeoPackage's ``structures`` table)
COLUMNS: tuple[str, ...] = ("structure_id", "line_id", "kind", "effect", "from_chainage",
                            "to_chainage", "crest_level", "note")


@dataclass(frozen=True)
class Structures:
    """The validated structures table; ``polygons`` per row (None: by chainage)."""

    table: pd.DataFrame
    polygons: tuple
    source: str


def _text(df: pd.DataFrame, col: str) -> pd.Series:
    if col not in df:
        return pd.Series([""] * len(df), index=df.index, dtype=object)
    return df[col].fillna("").astype(str).str.strip()


def _number(df: pd.DataFrame, col: str) -> np.ndarray:
    if col not in df:
        return np.full(len(df), np.nan)
    return pd.to_numeric(df[col], errors="coerce").to_numpy(float)


def validate_structures(df: pd.DataFrame, *, has_polygons: np.ndarray,
                        source: str) -> pd.DataFrame:
    """The table in :data:`COLUMNS` form; every bad row reported at once.

    Rows are numbered as in the file (header = line 1 for a CSV).
    """
    out = pd.DataFrame({
        "structure_id": _text(df, "structure_id"), "line_id": _text(df, "line_id"),
        "kind": _text(df, "kind").str.lower(), "effect": _text(df, "effect").str.lower(),
        "from_chainage": _number(df, "from_chainage"), "to_chainage": _number(df, "to_chainage"),
        "crest_level": _number(df, "crest_level"), "note": _text(df, "note")},
        index=df.index)
    problems = []
    for k, (_, r) in enumerate(out.iterrows()):
        where = f"row {k + 2}"
        if r["kind"] not in KINDS:
            problems.append(f"{where}, column kind: {r['kind']!r} is not one of "
                            f"{', '.join(KINDS)}")
        if r["effect"] not in EFFECTS:
            problems.append(f"{where}, column effect: {r['effect']!r} is not one of "
                            f"{', '.join(EFFECTS)}")
        ranged = np.isfinite(r["from_chainage"]) and np.isfinite(r["to_chainage"])
        if not ranged and not has_polygons[k]:
            problems.append(f"{where}: give from_chainage and to_chainage (numbers, m) or a "
                            "polygon")
        elif ranged and r["to_chainage"] < r["from_chainage"]:
            problems.append(f"{where}: to_chainage {r['to_chainage']} is before from_chainage "
                            f"{r['from_chainage']}")
        if r["effect"] == "crest_level" and not np.isfinite(r["crest_level"]):
            problems.append(f"{where}, column crest_level: effect crest_level needs the level "
                            "(m, DEM datum) of the wall top or sill")
    if problems:
        raise InputError(f"{source}: {len(problems)} problem(s) in the structures table:\n  - "
                         + "\n  - ".join(problems[:30]))
    ids = out["structure_id"].to_numpy(object)
    out["structure_id"] = np.where(ids == "", [f"S{k + 1}" for k in range(len(out))], ids)
    return out.reset_index(drop=True)


def read_structures(path: str | Path, *, target_crs=None) -> Structures:
    """Read the structures table: a CSV, or any vector file GDAL reads (polygons or table)."""
    p = Path(path)
    if not p.is_file():
        raise InputFileError(f"{p}: structures table not found (structures_file)")
    if p.suffix.lower() in (".csv", ".txt"):
        try:
            df = pd.read_csv(p, dtype=str, comment="#", skipinitialspace=True)
        except (pd.errors.ParserError, pd.errors.EmptyDataError, UnicodeDecodeError) as exc:
            raise InputError(f"{p}: cannot read the structures table ({exc})") from exc
        polys: tuple = (None,) * len(df)
    else:
        import pyogrio

        try:
            gdf = pyogrio.read_dataframe(p)
        except Exception as exc:  # pyogrio raises several kinds for unreadable files
            raise InputFileError(f"{p}: not a table GDAL can read ({exc})") from exc
        if "geometry" in gdf and gdf.crs is not None and target_crs is not None:
            gdf = gdf.to_crs(target_crs)
        geoms = gdf["geometry"] if "geometry" in gdf else [None] * len(gdf)
        polys = tuple(g if g is not None and g.geom_type in ("Polygon", "MultiPolygon")
                      else None for g in geoms)
        df = pd.DataFrame(gdf.drop(columns="geometry", errors="ignore"))
    table = validate_structures(df, has_polygons=np.array([q is not None for q in polys]),
                                source=str(p))
    return Structures(table, polys, p.name)


@dataclass(frozen=True)
class StructureMatch:
    """Per station: the structures it lies in and what they mean (columnar)."""

    structure_id: np.ndarray   # ';'-joined ids, '' where none
    kind: np.ndarray
    effect: np.ndarray         # the strongest effect, '' where none
    note: np.ndarray
    crest_level: np.ndarray    # given level where effect == crest_level, else NaN
    stations: np.ndarray       # per structure: number of stations it covers
    first: np.ndarray          # per structure: first / last chainage covered (NaN: none)
    last: np.ndarray


def match_structures(s: Structures, chainage: np.ndarray, x: np.ndarray, y: np.ndarray, *,
                     line_id: str = "") -> StructureMatch:
    """Which structure each station lies in (chainage range, or polygon contains the station)."""
    import shapely

    ch = np.asarray(chainage, float)
    n, t = ch.size, s.table
    ids, kinds, notes = ([[] for _ in range(n)] for _ in range(3))
    rank = np.full(n, len(EFFECTS))
    crest = np.full(n, np.nan)
    count = np.zeros(len(t), int)
    first, last = np.full(len(t), np.nan), np.full(len(t), np.nan)
    for k, r in enumerate(t.itertuples(index=False)):
        if r.line_id and r.line_id != line_id:
            continue
        if s.polygons[k] is not None:
            inside = shapely.intersects_xy(s.polygons[k], np.asarray(x, float),
                                           np.asarray(y, float))
        else:
            inside = (ch >= r.from_chainage) & (ch <= r.to_chainage)
        hit = np.flatnonzero(inside)
        count[k] = hit.size
        if hit.size:
            first[k], last[k] = ch[hit].min(), ch[hit].max()
        e = EFFECTS.index(r.effect)
        for i in hit:
            ids[i].append(r.structure_id)
            kinds[i].append(r.kind)
            if r.note:
                notes[i].append(r.note)
            if e < rank[i]:
                rank[i] = e
                crest[i] = r.crest_level if r.effect == "crest_level" else np.nan
    effect = np.array([EFFECTS[k] if k < len(EFFECTS) else "" for k in rank], dtype=object)

    def joined(v: list[list[str]]) -> np.ndarray:
        return np.array([";".join(dict.fromkeys(a)) for a in v], dtype=object)

    return StructureMatch(joined(ids), joined(kinds), effect, joined(notes),
                          np.where(effect == "crest_level", crest, np.nan), count, first, last)


def structure_table(s: Structures, matches: list[StructureMatch]) -> pd.DataFrame:
    """The structures as given, with the stations each covers (summed over lines)."""
    t = s.table.copy()
    t["stations"] = np.sum([m.stations for m in matches], axis=0) if matches else 0
    firsts = np.array([m.first for m in matches]) if matches else np.full((1, len(t)), np.nan)
    lasts = np.array([m.last for m in matches]) if matches else np.full((1, len(t)), np.nan)
    seen = np.isfinite(firsts).any(axis=0)
    lo = np.where(seen, np.min(np.where(np.isfinite(firsts), firsts, np.inf), axis=0), np.nan)
    hi = np.where(seen, np.max(np.where(np.isfinite(lasts), lasts, -np.inf), axis=0), np.nan)
    # a polygon's chainage range: that of the stations it covers
    t["from_chainage"] = np.where(np.isfinite(t["from_chainage"]), t["from_chainage"], lo)
    t["to_chainage"] = np.where(np.isfinite(t["to_chainage"]), t["to_chainage"], hi)
    return t


__all__ = ["COLUMNS", "EFFECTS", "KINDS", "StructureMatch", "Structures", "match_structures",
           "read_structures", "structure_table", "validate_structures"]
