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
import pandas as pd
from pyproj import CRS
from shapely.geometry import LineString

from ..errors import ConditionsError, InputError, InputFileError
from ..judgement.status import Stretches
from .frequency_conditions import section_lines
from .frequency_table import FrequencyTable
from .sources import (
    Conditions,
    line_from_parts,
    read_conditions,
    read_line_layer,
    validate_conditions,
)

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
                         frequency: FrequencyTable | None = None,
                         extrapolate: bool = False) -> dict[str, Conditions]:
    """Section conditions per line.

    With a ``line_id`` column, each line gets its own rows, validated on their own
    (so chainage ranges of different lines may overlap); every bad row is reported
    with its row number in the file. Without that column every line uses the
    whole table.
    """
    p = Path(path)
    if not p.exists():
        raise InputFileError(f"{p}: conditions file not found")
    try:
        raw = pd.read_csv(p, dtype=str, skipinitialspace=True, comment="#")
    except (pd.errors.EmptyDataError, pd.errors.ParserError, UnicodeDecodeError) as exc:
        raise InputError(f"{p}: cannot read the conditions table ({exc})") from exc
    raw.columns = [str(c).strip().lower() for c in raw.columns]
    if LINE_ID_COLUMN not in raw.columns:
        cond = read_conditions(p, frequency=frequency, extrapolate=extrapolate)
        return {lid: cond for lid in line_ids}
    lid_col = raw[LINE_ID_COLUMN].fillna("").str.strip()
    findings: list[str] = []
    for i in (lid_col == "").to_numpy().nonzero()[0]:
        findings.append(f"row {i + 2}, column {LINE_ID_COLUMN}: empty")
    unknown = sorted(set(lid_col) - set(line_ids) - {""})
    if unknown:
        log.warning("%s: conditions for unknown line(s) %s are ignored", p.name,
                    ", ".join(unknown))
    out: dict[str, Conditions] = {}
    for lid in line_ids:
        pos = (lid_col == lid).to_numpy().nonzero()[0]
        if pos.size == 0:
            findings.append(f"no rows for line {lid!r}")
            continue
        part = raw.iloc[pos].drop(columns=[LINE_ID_COLUMN]).reset_index(drop=True)
        table, found = validate_conditions(part, frequency=frequency, extrapolate=extrapolate)
        findings += [_file_rows(f, pos, lid) for f in found]
        if not found:
            out[lid] = Conditions(table=table, lines=section_lines(
                table, frequency, extrapolate=extrapolate))
    if findings:
        raise ConditionsError(str(p), findings)
    return out


def _file_rows(finding: str, pos, lid: str) -> str:
    """A finding about the rows of one line, with row numbers of the whole file."""
    text = re.sub(r"\brow (\d+)", lambda m: f"row {int(pos[int(m[1]) - 2]) + 2}", finding)
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
