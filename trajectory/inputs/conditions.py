"""Section conditions: read, validate and attach them to stations.

An edge module (it touches files). Three forms are accepted:

- a CSV table, one row per section with its chainage range;
- a non-spatial table in a GeoPackage (same columns);
- section polygons in a GeoPackage (or any OGR format): the stations are joined
  to the polygon they lie in, so no chainage range is needed.

Every bad row is reported at once, naming the row, the column and the rule.
"""

from __future__ import annotations

import logging
import re
from collections.abc import Callable
from dataclasses import dataclass, replace
from pathlib import Path

import numpy as np
import pandas as pd
import pyogrio
import shapely
from pyproj import CRS

from ..checks import check_file, condition_plausibility
from ..errors import ConditionsError, InputError, InputFileError
from ..formulas import hydraulics as hy
from ..formulas.frequency import Lines
from ..inner.stability import Soil
from ..requirement.crest_level import METHODS, WAVE_METHODS
from .frequency_conditions import LINE_COLUMNS, LINE_RULES, design_from_lines, section_lines
from .frequency_table import FrequencyTable
from .piping_conditions import PIPING_COLUMNS, PIPING_RULES, piping_findings

log = logging.getLogger(__name__)

#: Columns every conditions table needs: name -> (unit, rule). The README's tables are
#: generated from these (:func:`refresh_readme_tables`).
CONDITION_COLUMNS: dict[str, tuple[str, str]] = {
    "section_id": ("", "text, unique"),
    "from_chainage": ("m", "number; start of the section's chainage range (not for section "
                           "polygons)"),
    "to_chainage": ("m", "number > from_chainage; its end (not for section polygons)"),
    "water_level": ("m (DEM datum)", "number; design still-water level (at from_chainage); "
                                     "may be empty where a frequency line and a standard "
                                     "give it"),
    "sea_level_rise": ("m", "0 <= number <= 10; sea-level-rise allowance"),
    "settlement": ("m", "0 <= number <= 10; settlement allowance of the subsoil (extra "
                        "construction height)"),
}
#: Optional columns of the crest assessment; which a row needs depends on its method.
SECTION_COLUMNS: dict[str, tuple[str, str]] = {
    "water_side": ("", "left or right of the digitised direction; overrides --water-side"),
    "freeboard_method": ("", "one of " + ", ".join(METHODS) + " (empty: overtopping)"),
    "water_level_end": ("m (DEM datum)", "number; design water level at to_chainage, "
                                         "interpolated linearly between (a river gradient; "
                                         "for polygons between the first and last station "
                                         "in the polygon)"),
    "hm0": ("m", "0 <= number <= 30; spectral significant wave height Hm0 at the toe; needed "
                 "by overtopping, runup, cfr_coastal"),
    "tm10": ("s", "0 < number <= 60; spectral period Tm-1,0 (give tm10 or tp)"),
    "tp": ("s", "0 < number <= 60; peak period, Tm-1,0 = Tp / 1.1 (give tm10 or tp)"),
    "wave_angle": ("degrees", "0 <= number <= 90; wave direction vs levee normal (empty: 0)"),
    "q_allow": ("l/s per m", "0 < number <= 10000; allowed mean overtopping discharge; "
                             "needed by overtopping"),
    "roughness": ("-", "0 < number <= 1 (gamma_f), or a revetment name from the table "
                       "below (empty: 1.0)"),
    "min_freeboard": ("m", "0 <= number <= 20; lower bound of the freeboard (empty: 0)"),
    "fixed_freeboard": ("m", "0 <= number <= 20; the freeboard of constant"),
    "near_structure": ("", "yes or no; cfr_riverine: within 100 ft of a structure or "
                           "constriction"),
    "upstream_share": ("-", "0 <= number <= 1; cfr_riverine: share of the 0.5 ft "
                            "upstream-end allowance at from_chainage"),
    "upstream_share_end": ("-", "0 <= number <= 1; the share at to_chainage, interpolated "
                                "linearly between"),
    "fill_settlement": ("m", "0 <= number <= 10; settlement allowance of new fill for the "
                             "reinforcement options (empty: 0)"),
    "design_outer_slope": ("n of 1:n", "1 <= number <= 20; the registered design outer slope: "
                                       "where given, the requirement uses it instead of the "
                                       "measured characteristic slope (flag design_slope)"),
}
#: Optional columns of the inner-slope stability screening (trajectory.inner.stability): one
#: homogeneous soil per section, the screening level. A section that gives none of them
#: is not screened; one that gives any must give the unit weight, cohesion, friction
#: angle and required factor.
STABILITY_COLUMNS: dict[str, tuple[str, str]] = {
    "soil_unit_weight": ("kN/m3", "10 <= number <= 30; unit weight of the levee's soil above "
                                  "the phreatic line"),
    "soil_unit_weight_sat": ("kN/m3", "10 <= number <= 30, at least soil_unit_weight; below "
                                      "the phreatic line (empty: soil_unit_weight)"),
    "soil_cohesion": ("kPa", "0 <= number <= 500; effective cohesion c'"),
    "soil_friction_angle": ("degrees", "0 <= number <= 60; effective friction angle phi'"),
    "required_safety_factor": ("-", "1 <= number <= 3; the factor of safety the inner slope "
                                    "must reach (the user's code or screening value)"),
}
#: the stability columns a screened section must give
_STABILITY_NEEDED = ("soil_unit_weight", "soil_cohesion", "soil_friction_angle",
                     "required_safety_factor")
#: The README's conditions tables, by marker name (``<!-- conditions:NAME -->``).
README_TABLES: dict[str, dict[str, tuple[str, str]]] = {
    "sections": {**CONDITION_COLUMNS, **SECTION_COLUMNS},
    "lines": LINE_COLUMNS,
    "piping": PIPING_COLUMNS,
    "stability": STABILITY_COLUMNS,
}
#: Optional columns (all but the required ones).
OPTIONAL_COLUMNS: dict[str, tuple[str, str]] = {
    k: v for table in README_TABLES.values() for k, v in table.items()
    if k not in CONDITION_COLUMNS}


def conditions_markdown(name: str) -> str:
    """The README table of the conditions columns of group ``name``."""
    rows = ["| column | unit | rule |", "|---|---|---|"]
    for col, (unit, rule) in README_TABLES[name].items():
        need = "" if col in CONDITION_COLUMNS else " (optional)"
        rows.append(f"| `{col}`{need} | {unit} | {rule} |")
    return "\n".join(rows)


def refresh_readme_tables(text: str) -> str:
    """Rewrite the tables between ``<!-- conditions:NAME -->`` and ``<!-- /conditions -->``."""
    import re

    def table(match: re.Match) -> str:
        return (f"<!-- conditions:{match[1]} -->\n{conditions_markdown(match[1])}\n"
                "<!-- /conditions -->")

    return re.sub(r"<!-- conditions:(\w+) -->.*?<!-- /conditions -->", table, text,
                  flags=re.S)
_NUMERIC_RULES: dict[str, tuple[float | None, float | None, bool]] = {
    # column: (min, max, min exclusive)
    "from_chainage": (None, None, False),
    "to_chainage": (None, None, False),
    "water_level": (None, None, False),
    "water_level_end": (None, None, False),
    "sea_level_rise": (0.0, 10.0, False),
    "settlement": (0.0, 10.0, False),
    "hm0": (0.0, 30.0, False),
    "tm10": (0.0, 60.0, True),
    "tp": (0.0, 60.0, True),
    "wave_angle": (0.0, 90.0, False),
    "q_allow": (0.0, 1e4, True),
    "min_freeboard": (0.0, 20.0, False),
    "fixed_freeboard": (0.0, 20.0, False),
    "upstream_share": (0.0, 1.0, False),
    "upstream_share_end": (0.0, 1.0, False),
    "fill_settlement": (0.0, 10.0, False),
    "soil_unit_weight": (10.0, 30.0, False),
    "soil_unit_weight_sat": (10.0, 30.0, False),
    "soil_cohesion": (0.0, 500.0, False),
    "soil_friction_angle": (0.0, 60.0, False),
    "required_safety_factor": (1.0, 3.0, False),
    "design_outer_slope": (1.0, 20.0, False),
    **LINE_RULES,
    **PIPING_RULES,
}
_DEFAULTS = {"wave_angle": 0.0, "min_freeboard": 0.0, "upstream_share": 0.0,
             "fill_settlement": 0.0}
_YES = {"yes", "true", "1", "y"}
_NO = {"no", "false", "0", "n", ""}
_TEXT_SUFFIXES = {".csv", ".txt"}


@dataclass(frozen=True)
class Conditions:
    """Section conditions, one row per section, columnar and validated.

    ``polygons`` holds the section polygons (in the working CRS) when the
    conditions came as polygons; the table then has no chainage ranges until
    :func:`assign_sections` fills them from the stations.
    """

    table: pd.DataFrame  # sorted by from_chainage (tables), index 0..n-1
    polygons: np.ndarray | None = None
    source: str = ""
    lines: Lines | None = None  # frequency line and standard per row (frequency.py)

    def lookup(self, chainage: np.ndarray) -> np.ndarray:
        """Row index of the section covering each chainage; -1 where none does."""
        t = self.table
        lo = t["from_chainage"].to_numpy(float)
        hi = t["to_chainage"].to_numpy(float)
        i = np.searchsorted(lo, chainage, side="right") - 1
        ok = (i >= 0) & (chainage <= hi[np.clip(i, 0, None)] + 1e-6)
        return np.where(ok, i, -1)


# ------------------------------------------------------------------ reading
@dataclass(frozen=True)
class ConditionsTable:
    """A conditions file as read, before validation: one reader for every user.

    ``raw`` holds the cells as text with lower-case column names; ``polygons`` the
    section polygons (working CRS) of a polygon layer, row for row; ``row_base`` the
    number of the first row in messages (2 for a text table under its header line,
    1 for the first feature of a vector file).
    """

    raw: pd.DataFrame
    polygons: np.ndarray | None
    row_base: int
    source: str

    def rows(self, pos: np.ndarray, *, drop: tuple[str, ...] = ()) -> ConditionsTable:
        """The rows at positions ``pos`` (numbered from ``row_base`` again), less ``drop``."""
        raw = self.raw.iloc[pos].drop(columns=list(drop)).reset_index(drop=True)
        polys = None if self.polygons is None else self.polygons[pos]
        return replace(self, raw=raw, polygons=polys)


def read_conditions_table(path: str | Path, *, layer: str | None = None,
                          target_crs: CRS | None = None) -> ConditionsTable:
    """Read a conditions file in any accepted form, cells as text, not yet validated.

    A text table (``.csv``, ``.txt``: comma, semicolon with decimal commas or tab;
    UTF-8, Windows-1252 or Latin-1), or a vector file GDAL reads (a GeoPackage table
    or section polygons; ``layer`` where it has several, polygons reprojected to
    ``target_crs``).
    """
    p = check_file(path, role="conditions", option="--conditions")
    polygons = None
    if p.suffix.lower() in _TEXT_SUFFIXES:
        raw = _read_text_table(p)
        row_base = 2  # line number in the file: header is line 1
    else:
        raw, polygons = _read_vector(p, layer, target_crs)
        row_base = 1  # feature number, first is 1
    raw.columns = [str(c).strip().lower() for c in raw.columns]
    return ConditionsTable(raw=raw, polygons=polygons, row_base=row_base, source=str(p))


def conditions_from_table(t: ConditionsTable, *, frequency: FrequencyTable | None = None,
                          extrapolate: bool = False,
                          extent: tuple[float, float] | None = None
                          ) -> tuple[Conditions | None, list[str]]:
    """Validate a table as read (:func:`validate_conditions`, and its polygons);
    return the conditions, or ``None`` and every finding."""
    polygons = t.polygons
    table, findings = validate_conditions(t.raw, spatial=polygons is not None,
                                          row_base=t.row_base, frequency=frequency,
                                          extrapolate=extrapolate, extent=extent)
    if polygons is not None and not findings:
        findings += _polygon_findings(polygons, table["section_id"].to_numpy(object),
                                      t.row_base)
    if findings:
        return None, findings
    if polygons is not None:
        polygons = polygons[table["_row"].to_numpy(int) - t.row_base]
    return Conditions(table=table, polygons=polygons, source=t.source,
                      lines=section_lines(table, frequency, extrapolate=extrapolate)), []


def read_conditions(path: str | Path, *, layer: str | None = None,
                    target_crs: CRS | None = None, frequency: FrequencyTable | None = None,
                    extrapolate: bool = False,
                    extent: tuple[float, float] | None = None) -> Conditions:
    """Read and validate the section conditions; report every bad row at once.

    Parameters
    ----------
    path : str or Path
        A CSV, or a vector file (GeoPackage) holding a non-spatial table or a
        polygon layer (:func:`read_conditions_table`).
    layer : str, optional
        Layer of a vector file; needed when it has several.
    target_crs : pyproj.CRS, optional
        Working CRS the section polygons are reprojected to.
    frequency : FrequencyTable, optional
        Frequency lines by section (``--frequency``); ``extrapolate`` allows one
        decade beyond them, flagged.
    extent : (float, float), optional
        First and last chainage of the line: a gap between sections lying wholly
        beyond them is not a finding (those sections are not used).
    """
    t = read_conditions_table(path, layer=layer, target_crs=target_crs)
    cond, findings = conditions_from_table(t, frequency=frequency, extrapolate=extrapolate,
                                           extent=extent)
    if cond is None:
        raise ConditionsError(t.source, findings)
    return cond


#: separators tried on the header line (comma; semicolon of European spreadsheets; tab)
_SEPARATORS = (",", ";", "\t")
_SEP_NAMES = {",": "comma", ";": "semicolon", "\t": "tab"}
#: encodings tried in turn (UTF-8 with or without BOM, then Windows-1252, then Latin-1)
_ENCODINGS = ("utf-8-sig", "cp1252", "latin-1")
#: a number written with a decimal comma in a comma-separated file (quoted, e.g. "4,2")
_DECIMAL_COMMA = re.compile(r"[-+]?\d+,\d+")


def _read_text_table(p: Path) -> pd.DataFrame:
    """A CSV's cells as text: separator from the header line, decimal commas made points."""
    import io

    data = p.read_bytes()
    for enc in _ENCODINGS:  # latin-1 decodes every byte, so the loop always ends decoded
        try:
            text = data.decode(enc)
            break
        except UnicodeDecodeError:
            continue
    if enc != "utf-8-sig":
        log.info("%s: not UTF-8; read as %s", p, enc)
    lines = [ln for ln in text.splitlines() if ln.strip() and not ln.lstrip().startswith("#")]
    if not lines:
        raise InputError(f"{p}: the conditions table holds no header line; give a CSV whose "
                         "first line names the columns (section_id, from_chainage, ...)")
    sep = max(_SEPARATORS, key=lines[0].count)
    try:
        raw = pd.read_csv(io.StringIO(text), sep=sep if lines[0].count(sep) else ",", dtype=str,
                          skipinitialspace=True, comment="#")
    except (pd.errors.EmptyDataError, pd.errors.ParserError) as exc:
        raise InputError(f"{p}: cannot read the conditions table as {_SEP_NAMES[sep]}-"
                         f"separated ({exc}); give every row the header's number of fields"
                         ) from exc
    if sep != ",":  # a decimal comma is only possible where the comma does not separate
        raw = raw.apply(lambda col: col.str.replace(
            r"^\s*([+-]?\d*),(\d+(?:[eE][+-]?\d+)?)\s*$", r"\1.\2", regex=True))
        log.info("%s: %s-separated; decimal commas read as points", p, _SEP_NAMES[sep])
    return raw


def _one_edit(a: str, b: str) -> bool:
    """True when ``a`` and ``b`` differ by one letter inserted, dropped, changed or swapped."""
    if a == b or abs(len(a) - len(b)) > 1:
        return False
    if len(a) == len(b):
        diff = [i for i in range(len(a)) if a[i] != b[i]]
        return len(diff) == 1 or (len(diff) == 2 and diff[1] == diff[0] + 1
                                  and a[diff[0]] == b[diff[1]] and a[diff[1]] == b[diff[0]])
    short, long_ = sorted((a, b), key=len)
    return any(long_[:i] + long_[i + 1:] == short for i in range(len(long_)))


def _read_vector(p: Path, layer: str | None,
                 target_crs: CRS | None) -> tuple[pd.DataFrame, np.ndarray | None]:
    try:
        layers = [(str(n), g) for n, g in pyogrio.list_layers(p)]
    except Exception as exc:  # pyogrio raises several kinds for unreadable data
        raise InputFileError(f"{p}: not a CSV nor a vector file GDAL can read ({exc})") from exc
    names = [n for n, _ in layers]
    if layer is None:
        if len(layers) != 1:
            raise InputError(f"{p}: {len(layers)} layers ({', '.join(names)}); choose the "
                             "conditions layer with --conditions-layer")
        layer = names[0]
    elif layer not in names:
        raise InputError(f"{p}: no layer {layer!r}; layers are {', '.join(names)}")
    gtype = dict(layers)[layer]
    if not gtype:
        df = pyogrio.read_dataframe(p, layer=layer, read_geometry=False)
        return _as_text(pd.DataFrame(df)), None
    if "Polygon" not in str(gtype):
        raise InputError(f"{p}: layer {layer!r} holds {gtype} geometry; section conditions "
                         "need a table without geometry or polygons")
    gdf = pyogrio.read_dataframe(p, layer=layer)
    if gdf.crs is None:
        raise InputError(f"{p}: the section polygons have no coordinate reference system; "
                         "assign one (e.g. in a GIS) and run again")
    if target_crs is not None and not CRS.from_user_input(gdf.crs).equals(target_crs):
        gdf = gdf.to_crs(target_crs)
    geoms = np.asarray(gdf.geometry.values, dtype=object)
    return _as_text(pd.DataFrame(gdf.drop(columns=gdf.geometry.name))), geoms


def _as_text(df: pd.DataFrame) -> pd.DataFrame:
    """Every cell as text (or None), so that all sources validate alike."""
    out = pd.DataFrame(index=df.index)
    for c in df.columns:
        out[c] = df[c].map(lambda v: None if v is None or (isinstance(v, float) and np.isnan(v))
                           else (f"{v:.17g}" if isinstance(v, float) else str(v)))
    return out.reset_index(drop=True)


# --------------------------------------------------------------- validation
def validate_conditions(raw: pd.DataFrame, *, spatial: bool = False, row_base: int = 2,
                        frequency: FrequencyTable | None = None,
                        extrapolate: bool = False,
                        extent: tuple[float, float] | None = None,
                        ) -> tuple[pd.DataFrame, list[str]]:
    """Check a conditions table; return the clean table and every finding.

    Parameters
    ----------
    raw : DataFrame
        Cells as text, lower-case column names.
    spatial : bool
        The rows are section polygons: no chainage range is needed, gaps and
        overlaps are checked on the polygons.
    row_base : int
        Number of the first row in messages (2 for a CSV with a header line).
    frequency, extrapolate
        Frequency lines by section and whether one decade of extrapolation is
        allowed (:func:`trajectory.inputs.frequency_conditions.design_from_lines`).
    extent : (float, float), optional
        The line's first and last chainage; gaps wholly beyond them are no finding.
    """
    findings: list[str] = []
    needed = [c for c in CONDITION_COLUMNS
              if not (spatial and c in ("from_chainage", "to_chainage"))]
    known = set(CONDITION_COLUMNS) | set(OPTIONAL_COLUMNS)
    unknown = [c for c in raw.columns if c not in known]
    # a column one letter off a known one is a typo, never silently ignored
    typos = {c: k for c in unknown for k in sorted(known) if _one_edit(c, k)}
    missing = [c for c in needed if c not in raw.columns]
    if missing:
        hints = [f"column {c!r} looks like {k!r}" for c, k in typos.items()]
        return raw, [f"missing column(s): {', '.join(missing)}"
                     + (f" ({'; '.join(hints)}; rename it)" if hints else
                        "; add them to the header line (check the separator too)")]
    for c, k in typos.items():
        findings.append(f"column {c!r} is not known; did you mean {k!r}? Rename the column "
                        "(its values would be ignored)")
    unknown = [c for c in unknown if c not in typos]
    if unknown:
        log.warning("conditions: ignoring unknown column(s) %s", ", ".join(unknown))
    if raw.empty:
        return raw, ["the table has no rows under its header; give one row per section"]
    n = len(raw)

    def text(col: str) -> pd.Series:
        if col not in raw.columns:
            return pd.Series([""] * n)
        return raw[col].fillna("").astype(str).str.strip()

    def row(i: int | np.integer) -> str:
        return f"row {int(i) + row_base}"

    out = pd.DataFrame({"section_id": text("section_id")})
    for col, (lo, hi, excl) in _NUMERIC_RULES.items():
        if col not in raw.columns:
            out[col] = np.nan
            continue
        cells = text(col)
        vals = pd.to_numeric(cells, errors="coerce").to_numpy(float)
        blank = (cells == "").to_numpy()
        for i in np.flatnonzero(np.isnan(vals) & ~blank):
            cell = cells.iloc[i]
            hint = (f" (a decimal comma: write {cell.replace(',', '.')}, or save the file with "
                    "';' as the separator)") if _DECIMAL_COMMA.fullmatch(cell) else ""
            findings.append(f"{row(i)}, column {col}: {cell!r} is not a number{hint}")
        if col == "water_level":
            level_blank = blank  # may come from a frequency line (checked below)
        elif col in needed:
            for i in np.flatnonzero(blank):
                findings.append(f"{row(i)}, column {col}: empty (a number is required)")
        with np.errstate(invalid="ignore"):
            bad = ~np.isfinite(vals) & ~np.isnan(vals)
            if lo is not None:
                bad |= (vals < lo) | (excl & (vals == lo))
            if hi is not None:
                bad |= vals > hi
        rule = OPTIONAL_COLUMNS.get(col, CONDITION_COLUMNS.get(col, ("", "")))[1]
        for i in np.flatnonzero(bad):
            findings.append(f"{row(i)}, column {col}: {vals[i]:g} breaks the rule {rule}")
        out[col] = vals
    for col, value in _DEFAULTS.items():
        out[col] = out[col].fillna(value)
    # frequency lines and standards; the design level read off the line where it is empty
    findings += design_from_lines(out, level_blank, frequency, row_base=row_base,
                                  extrapolate=extrapolate)

    method = text("freeboard_method").str.lower().replace("", "overtopping")
    for i in np.flatnonzero(~method.isin(METHODS).to_numpy()):
        findings.append(f"{row(i)}, column freeboard_method: {method.iloc[i]!r} breaks the "
                        f"rule {OPTIONAL_COLUMNS['freeboard_method'][1]}")
    out["freeboard_method"] = method.to_numpy(object)

    rough = text("roughness")
    gf = np.ones(n)
    for r, cell in enumerate(rough):
        if cell == "":
            continue
        try:
            gf[r] = hy.roughness_factor(cell)
        except (hy.UnknownRevetmentError, hy.ParameterError) as exc:
            findings.append(f"{row(r)}, column roughness: {exc}")
    out["roughness"] = gf
    out["revetment"] = rough.to_numpy(object)
    # piping: polder level, subsoil class, aquifer parameters (piping_conditions.py)
    findings += piping_findings(out, text, row)
    # values each within its rule but not a design condition (checks.py)
    findings += condition_plausibility(out, row_base=row_base)

    near = text("near_structure").str.lower()
    for i in np.flatnonzero(~near.isin(_YES | _NO).to_numpy()):
        findings.append(f"{row(i)}, column near_structure: {near.iloc[i]!r} must be yes or no")
    out["near_structure"] = near.isin(_YES).to_numpy(float)

    # what each row's freeboard method needs (findings in row order)
    m = out["freeboard_method"].to_numpy(object)
    has_t, has_p = np.isfinite(out["tm10"].to_numpy(float)), np.isfinite(out["tp"].to_numpy(float))
    waves = np.isin(m, list(WAVE_METHODS))
    needs = [
        (has_t & has_p, lambda r: "columns tm10 and tp: give one period, not both"),
        (waves & ~np.isfinite(out["hm0"].to_numpy(float)),
         lambda r: f"column hm0: empty; freeboard_method {m[r]} needs the wave height"),
        (waves & ~(has_t | has_p),
         lambda r: f"columns tm10/tp: both empty; freeboard_method {m[r]} needs a wave period"),
        ((m == "overtopping") & ~np.isfinite(out["q_allow"].to_numpy(float)),
         lambda r: "column q_allow: empty; freeboard_method overtopping needs the allowed "
                   "discharge"),
        ((m == "constant") & ~np.isfinite(out["fixed_freeboard"].to_numpy(float)),
         lambda r: "column fixed_freeboard: empty; freeboard_method constant needs it"),
    ]
    missing_terms = sorted((int(r), k) for k, (bad, _) in enumerate(needs)
                           for r in np.flatnonzero(bad))
    findings += [f"{row(r)}, {needs[k][1](r)}" for r, k in missing_terms]
    tp = out["tp"].to_numpy(float)
    from_tp = np.isfinite(tp) & ~np.isfinite(out["tm10"].to_numpy(float))
    out["period_from_tp"] = from_tp | out["table_period_from_tp"].to_numpy(bool)
    from_tp = from_tp & (np.nan_to_num(tp) > 0)  # bad periods are already findings
    if from_tp.any():
        out.loc[from_tp, "tm10"] = np.asarray(hy.tm10_from_tp(out.loc[from_tp, "tp"].to_numpy()))

    findings += _stability_findings(out, row)

    ws = text("water_side").str.lower()
    for i in np.flatnonzero(~ws.isin(["", "left", "right"]).to_numpy()):
        findings.append(f"{row(i)}, column water_side: {ws.iloc[i]!r} must be left or right")
    out["water_side"] = ws.to_numpy(object)

    for i in np.flatnonzero((out["section_id"] == "").to_numpy()):
        findings.append(f"{row(i)}, column section_id: empty")
    dup = out["section_id"][out["section_id"].duplicated() & (out["section_id"] != "")]
    for sid in dup.unique():
        findings.append(f"section_id {sid!r} appears more than once")
    out["_row"] = np.arange(row_base, n + row_base)
    if findings or spatial:
        return out, findings
    bad_span = out["to_chainage"] <= out["from_chainage"]
    for i in np.flatnonzero(bad_span.to_numpy()):
        findings.append(f"{row(i)}, column to_chainage: must be greater than from_chainage")
    out = out.sort_values("from_chainage", kind="stable").reset_index(drop=True)
    lo_c, hi_c = out["from_chainage"].to_numpy(), out["to_chainage"].to_numpy()
    for k in range(1, len(out)):
        a, b = out.iloc[k - 1], out.iloc[k]
        beyond = extent is not None and (lo_c[k] >= extent[1] - 1e-6
                                         or hi_c[k - 1] <= extent[0] + 1e-6)
        if lo_c[k] > hi_c[k - 1] + 1e-6 and not beyond:
            findings.append(f"gap in chainage between section {a.section_id!r} (row {a._row}, "
                            f"to {hi_c[k - 1]:g} m) and {b.section_id!r} (row {b._row}, from "
                            f"{lo_c[k]:g} m)")
        elif lo_c[k] < hi_c[k - 1] - 1e-6:
            findings.append(f"sections {a.section_id!r} (row {a._row}) and {b.section_id!r} "
                            f"(row {b._row}) overlap ({lo_c[k]:g}-{hi_c[k - 1]:g} m)")
    return out, findings


def _stability_findings(out: pd.DataFrame, row: Callable[[int], str]) -> list[str]:
    """A section screened for stability gives its whole soil; the saturated weight defaults."""
    given = np.column_stack([np.isfinite(out[c].to_numpy(float)) for c in _STABILITY_NEEDED])
    sat = out["soil_unit_weight_sat"].to_numpy(float)
    findings = []
    for i in np.flatnonzero(given.any(1) & ~given.all(1)):
        missing = [c for c, g in zip(_STABILITY_NEEDED, given[i], strict=True) if not g]
        findings.append(f"{row(i)}, column(s) {', '.join(missing)}: empty; a section screened "
                        "for inner-slope stability needs " + ", ".join(_STABILITY_NEEDED)
                        + " (or leave all of them empty)")
    for i in np.flatnonzero(np.isfinite(sat) & ~given.any(1)):
        findings.append(f"{row(i)}, column soil_unit_weight_sat: given without soil_unit_weight "
                        "and the other stability columns; give them too or leave it empty")
    gamma = out["soil_unit_weight"].to_numpy(float)
    with np.errstate(invalid="ignore"):
        light = np.isfinite(sat) & (sat < gamma)
    for i in np.flatnonzero(light):
        findings.append(f"{row(i)}, column soil_unit_weight_sat: {sat[i]:g} is below "
                        f"soil_unit_weight {gamma[i]:g}; the saturated soil weighs at least as "
                        "much")
    c, phi = out["soil_cohesion"].to_numpy(float), out["soil_friction_angle"].to_numpy(float)
    for i in np.flatnonzero((c == 0) & (phi == 0)):
        findings.append(f"{row(i)}, columns soil_cohesion and soil_friction_angle: both 0; a soil "
                        "without strength cannot be screened (give c' or phi')")
    out["soil_unit_weight_sat"] = np.where(np.isfinite(sat), sat, gamma)
    return findings


def station_soil(table: pd.DataFrame, idx: np.ndarray) -> tuple[Soil, np.ndarray]:
    """The soil and the required factor of safety per station (NaN where not screened)."""
    def col(name: str) -> np.ndarray:
        if name in table.columns:
            return table[name].to_numpy(float)[idx]
        return np.full(np.shape(idx), np.nan)

    soil = Soil(col("soil_unit_weight"), col("soil_unit_weight_sat"), col("soil_cohesion"),
                col("soil_friction_angle"))
    return soil, col("required_safety_factor")


def _polygon_findings(polys: np.ndarray, ids: np.ndarray, row_base: int) -> list[str]:
    """Empty, invalid or overlapping section polygons."""
    findings = []
    for i, g in enumerate(polys):
        if g is None or g.is_empty:
            findings.append(f"row {i + row_base}, geometry: empty polygon")
        elif not g.is_valid:
            findings.append(f"row {i + row_base}, geometry: invalid polygon "
                            f"({shapely.is_valid_reason(g)})")
    if findings:
        return findings
    tree = shapely.STRtree(polys)
    left, right = tree.query(polys, predicate="intersects")
    for i, j in zip(left, right, strict=True):
        if i < j:
            area = shapely.area(shapely.intersection(polys[i], polys[j]))
            if area > 1e-3:
                findings.append(f"section polygons {ids[i]!r} (row {i + row_base}) and "
                                f"{ids[j]!r} (row {j + row_base}) overlap ({area:.1f} m²)")
    return findings


# ------------------------------------------------------------ to stations
def check_conditions_cover(cond: Conditions, chainage: np.ndarray, *, source: str) -> None:
    """Refuse a run whose stations are not all covered by a section."""
    idx = cond.lookup(chainage)
    if (idx < 0).any():
        out = chainage[idx < 0]
        raise ConditionsError(source, [
            f"{out.size} station(s) lie outside every section, chainage "
            f"{out.min():.1f}-{out.max():.1f} m; extend the sections to cover "
            f"{chainage.min():.1f}-{chainage.max():.1f} m"])


def assign_sections(cond: Conditions, chainage: np.ndarray, x: np.ndarray, y: np.ndarray,
                    *, source: str) -> tuple[np.ndarray, Conditions]:
    """Section row of every station, refusing stations no section covers.

    For a chainage table this is :meth:`Conditions.lookup`. For section
    polygons it is a spatial join (a station on a shared boundary goes to the
    first polygon in file order); the table's ``from_chainage`` and
    ``to_chainage`` are then set to the first and last station of each
    section, for the linear water-level interpolation.

    Returns
    -------
    idx : ndarray of int
        Row per station.
    cond : Conditions
        The conditions, with chainage ranges for polygons.
    """
    chainage = np.asarray(chainage, float)
    if cond.polygons is None:
        check_conditions_cover(cond, chainage, source=source)
        return cond.lookup(chainage), cond
    pts = shapely.points(np.asarray(x, float), np.asarray(y, float))
    tree = shapely.STRtree(cond.polygons)
    st_i, poly_i = tree.query(pts, predicate="intersects")
    big = len(cond.polygons)
    idx = np.full(chainage.size, big, dtype=np.int64)
    np.minimum.at(idx, st_i, poly_i)  # the first polygon in file order per station
    idx[idx == big] = -1
    if (idx < 0).any():
        out = chainage[idx < 0]
        raise ConditionsError(source, [
            f"{out.size} station(s) lie in no section polygon (a gap), chainage "
            f"{out.min():.1f}-{out.max():.1f} m; extend the polygons to cover the line"])
    t = cond.table.copy()
    k = len(t)
    lo = np.full(k, np.nan)
    hi = np.full(k, np.nan)
    np.fmin.at(lo, idx, chainage)
    np.fmax.at(hi, idx, chainage)
    t["from_chainage"], t["to_chainage"] = lo, hi
    empty = [str(s) for s in t["section_id"][np.isnan(lo)]]
    if empty:
        log.warning("conditions: no station lies in section polygon(s) %s", ", ".join(empty))
    return idx, replace(cond, table=t)
