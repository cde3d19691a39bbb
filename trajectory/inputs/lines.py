"""Several centrelines in one run: read the lines by an id field, and their conditions.

Each line gets its own stations and chainage; its section conditions are the
rows of the conditions table with its ``line_id`` (or, without that column, the
whole table). This is an edge module: it reads files and returns plain geometry
and validated tables.
"""

from __future__ import annotations

import logging
import re
from dataclasses import dataclass
from pathlib import Path

import numpy as np
from pyproj import CRS
from shapely.geometry import LineString

from ..errors import ConditionsError, InputError
from ..judgement.status import Stretches
from .conditions import Conditions, conditions_from_table, read_conditions_table
from .frequency_table import FrequencyTable
from .sources import line_from_parts, read_line_layer

log = logging.getLogger(__name__)

#: column of the conditions table that names the line a row belongs to
LINE_ID_COLUMN = "line_id"


@dataclass(frozen=True)
class Centreline:
    """One levee line of a run: its id and geometry (in the working CRS)."""

    line_id: str
    line: LineString


def read_centrelines(
    path: str | Path, *, id_field: str, layer: str | None = None,
    target_crs: CRS | None = None, gap_tolerance: float = 1.0,
) -> tuple[list[Centreline], CRS]:
    """Read every line of a centreline layer, grouped by the values of ``id_field``.

    Features with the same id are joined into one line as
    :func:`trajectory.inputs.sources.read_centreline` joins a single line's parts.
    Lines come in the order their id first appears in the file.
    """
    p, df, crs = read_line_layer(path, layer=layer)
    if id_field not in df.columns:
        fields = ", ".join(c for c in df.columns if c != "geometry") or "none"
        raise InputError(f"{p}: no field {id_field!r} for the line id; fields are {fields}")
    ids = df[id_field]
    if ids.isna().any():
        rows = ", ".join(str(i + 1) for i in ids.index[ids.isna()][:5])
        raise InputError(f"{p}: feature(s) {rows} have no {id_field}; give every line an id")
    ids = ids.astype(str).str.strip()
    out: list[Centreline] = []
    work_crs = crs
    for lid in dict.fromkeys(ids):  # first-appearance order
        geoms = [g for g in df.geometry[(ids == lid).to_numpy()]
                 if g is not None and not g.is_empty]
        if not geoms:
            raise InputError(f"{p}: line {lid!r} has no geometry")
        line, work_crs = line_from_parts(geoms, crs, target_crs=target_crs,
                                         source=f"{p} (line {lid!r})",
                                         gap_tolerance=gap_tolerance)
        out.append(Centreline(lid, line))
    crs = work_crs
    log.info("%d lines in %s by %s", len(out), p.name, id_field)
    return out, crs


def read_line_conditions(path: str | Path, line_ids: list[str], *,
                         layer: str | None = None, target_crs: CRS | None = None,
                         frequency: FrequencyTable | None = None,
                         extrapolate: bool = False,
                         extents: dict[str, tuple[float, float]] | None = None,
                         ) -> dict[str, Conditions]:
    """Section conditions per line, read by the single line's reader.

    The file is read by :func:`trajectory.inputs.conditions.read_conditions_table` (every
    form a single line accepts: separators, decimal commas, encodings, GeoPackage
    tables and section polygons) and validated by the same rules. With a ``line_id``
    column, each line gets its own rows, validated on their own (so chainage ranges
    of different lines may overlap; ``extents`` gives each line's first and last
    chainage, as for a single line); every bad row is reported with its row number
    in the file. Without that column every line uses the whole table.
    """
    t = read_conditions_table(path, layer=layer, target_crs=target_crs)
    if LINE_ID_COLUMN not in t.raw.columns:
        cond, findings = conditions_from_table(t, frequency=frequency, extrapolate=extrapolate)
        if cond is None:
            raise ConditionsError(t.source, findings)
        return {lid: cond for lid in line_ids}
    lid_col = t.raw[LINE_ID_COLUMN].fillna("").astype(str).str.strip()
    findings: list[str] = []
    for i in (lid_col == "").to_numpy().nonzero()[0]:
        findings.append(f"row {i + t.row_base}, column {LINE_ID_COLUMN}: empty")
    unknown = sorted(set(lid_col) - set(line_ids) - {""})
    if unknown:
        log.warning("%s: conditions for unknown line(s) %s are ignored", Path(t.source).name,
                    ", ".join(unknown))
    out: dict[str, Conditions] = {}
    for lid in line_ids:
        pos = (lid_col == lid).to_numpy().nonzero()[0]
        if pos.size == 0:
            findings.append(f"no rows for line {lid!r}")
            continue
        cond, found = conditions_from_table(
            t.rows(pos, drop=(LINE_ID_COLUMN,)), frequency=frequency,
            extrapolate=extrapolate, extent=(extents or {}).get(lid))
        findings += [_file_rows(f, pos, lid, t.row_base) for f in found]
        if cond is not None:
            out[lid] = cond
    if findings:
        raise ConditionsError(t.source, findings)
    return out


def _file_rows(finding: str, pos: np.ndarray, lid: str, row_base: int) -> str:
    """A finding about the rows of one line, with row numbers of the whole file."""
    text = re.sub(r"\brow (\d+)",
                  lambda m: f"row {int(pos[int(m[1]) - row_base]) + row_base}", finding)
    return f"line {lid!r}: {text}"


def stack_stretches(parts: list[Stretches], counts: list[int]) -> Stretches:
    """The stretches of several lines as one table; station indices run over all lines.

    ``counts`` is the number of stations of each line, in the order of ``parts``.
    """
    if len(parts) == 1:
        return parts[0]
    base = np.concatenate([[0], np.cumsum(counts)[:-1]]).astype(int)
    cols = {f: np.concatenate([getattr(p, f) for p in parts])
            for f in Stretches.__dataclass_fields__}
    shift = np.concatenate([np.full(len(p.first), b, dtype=int)
                            for p, b in zip(parts, base, strict=True)])
    cols["first"] = cols["first"] + shift
    cols["last"] = cols["last"] + shift
    return Stretches(**cols)
