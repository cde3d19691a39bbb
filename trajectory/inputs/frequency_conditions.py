"""Frequency lines and safety standards of the sections (conditions table side).

Checks the line and standard columns of a conditions table, reads the design
water level (and the table's Hm0, Tm-1,0) off the line at the standard where
``water_level`` is empty, and gathers each section's line as
:class:`trajectory.formulas.frequency.Lines`.
"""

from __future__ import annotations

import logging

import numpy as np
import pandas as pd

from ..formulas.frequency import Lines, no_lines
from .frequency_table import FrequencyTable

log = logging.getLogger(__name__)

#: conditions columns of the lines, standards and economics: name -> (unit, rule)
LINE_COLUMNS: dict[str, tuple[str, str]] = {
    "standard_return_period": ("years", "1 < number <= 1e8; the safety standard (or give "
                                        "standard_probability)"),
    "standard_probability": ("per year", "0 < number < 1; the safety standard as an annual "
                                         "probability (or give standard_return_period)"),
    "level_ref": ("m (DEM datum)", "number; decimation line: level at return_period_ref"),
    "return_period_ref": ("years", "number > 0; decimation line: its reference return period"),
    "decimation_height": ("m", "0 < number <= 10; decimation line: rise per factor ten in "
                               "return period"),
    "gumbel_location": ("m (DEM datum)", "number; Gumbel line of annual maxima: mu"),
    "gumbel_scale": ("m", "0 < number <= 10; Gumbel line of annual maxima: beta"),
    "flood_damage": ("currency", "number >= 0; damage of a flood behind the section "
                                 "(van Dantzig 1956 optimum)"),
    "discount_rate": ("per year", "0 < number <= 1; net of economic growth (van Dantzig)"),
    "raise_fixed_cost": ("currency per m of raise per km", "number >= 0; added to the fill "
                                                          "cost of raising (empty: 0)"),
}
#: (min, max, min exclusive) of each, read by the conditions' numeric check
LINE_RULES: dict[str, tuple[float | None, float | None, bool]] = {
    "standard_return_period": (1.0, 1e8, True),
    "standard_probability": (0.0, 1.0 - 1e-12, True),
    "level_ref": (-500.0, 9000.0, False),
    "return_period_ref": (0.0, 1e8, True),
    "decimation_height": (0.0, 10.0, True),
    "gumbel_location": (-500.0, 9000.0, False),
    "gumbel_scale": (0.0, 10.0, True),
    "flood_damage": (0.0, 1e15, False),
    "discount_rate": (0.0, 1.0, True),
    "raise_fixed_cost": (0.0, 1e12, False),
}
_DECIMATION = ("level_ref", "return_period_ref", "decimation_height")
_GUMBEL = ("gumbel_location", "gumbel_scale")


def _has(out: pd.DataFrame, col: str) -> np.ndarray:
    return np.isfinite(out[col].to_numpy(float))


def section_lines(out: pd.DataFrame, freq: FrequencyTable | None, *,
                  extrapolate: bool = False) -> Lines:
    """Each row's frequency line: its table rows, decimation or Gumbel columns."""
    n = len(out)
    base = no_lines(n)
    sid = out["section_id"].to_numpy(object)
    tables = freq.sections if freq is not None else {}
    m = max((len(t.return_period) for t in tables.values()), default=0)
    log_t, lev, hm0, tm10 = (np.full((n, m), np.nan) for _ in range(4))
    kind = np.full(n, "", dtype=object)
    for i, s in enumerate(sid):
        t = tables.get(str(s))
        if t is not None:
            k = len(t.return_period)
            log_t[i, :k] = np.log10(t.return_period)
            lev[i, :k], hm0[i, :k], tm10[i, :k] = t.water_level, t.hm0, t.tm10
            kind[i] = "table"
    dec = np.all([_has(out, c) for c in _DECIMATION], axis=0) & (kind == "")
    kind[dec] = "decimation"
    gum = np.all([_has(out, c) for c in _GUMBEL], axis=0) & (kind == "")
    kind[gum] = "gumbel"
    t_std = out["standard_return_period"].to_numpy(float)
    with np.errstate(divide="ignore"):
        t_std = np.where(np.isfinite(t_std), t_std,
                         1.0 / out["standard_probability"].to_numpy(float))
    col = {c: out[c].to_numpy(float) for c in (*_DECIMATION, *_GUMBEL)}
    return Lines(kind=kind, log_t=log_t, level=lev, hm0=hm0, tm10=tm10,
                 level_ref=col["level_ref"], return_period_ref=col["return_period_ref"],
                 decimation_height=col["decimation_height"],
                 gumbel_location=col["gumbel_location"], gumbel_scale=col["gumbel_scale"],
                 standard=np.where(np.isfinite(t_std), t_std, base.standard),
                 extrapolate=extrapolate)


def design_from_lines(out: pd.DataFrame, raw_blank_level: np.ndarray,
                      freq: FrequencyTable | None, *, row_base: int,
                      extrapolate: bool = False) -> list[str]:
    """Check lines and standards; fill the design level from the line where it is empty.

    ``out`` is the conditions table being validated (numbers parsed); it gains
    ``water_level_source``, ``standard_return_period`` (from either standard
    column) and, where the level is read off a table with waves, ``hm0`` and
    ``tm10`` at the standard. Returns the findings, in row order.
    """
    n = len(out)
    findings: list[tuple[int, str]] = []

    def row(i: int) -> str:
        return f"row {i + row_base}"

    sid = out["section_id"].to_numpy(object)
    tables = freq.sections if freq is not None else {}
    fsrc = freq.source if freq is not None else ""
    has_t, has_p = _has(out, "standard_return_period"), _has(out, "standard_probability")
    for i in np.flatnonzero(has_t & has_p):
        findings.append((i, f"{row(i)}, columns standard_return_period and "
                            "standard_probability: give one standard, not both"))
    for group, name in ((_DECIMATION, "decimation line"), (_GUMBEL, "Gumbel line")):
        given = np.array([_has(out, c) for c in group])
        part = given.any(axis=0) & ~given.all(axis=0)
        for i in np.flatnonzero(part):
            empty = [c for c, g in zip(group, given[:, i], strict=True) if not g]
            findings.append((i, f"{row(i)}, column(s) {', '.join(empty)}: empty; a {name} "
                                f"needs {', '.join(group)}"))
    in_table = np.array([str(s) in tables for s in sid], dtype=bool)
    dec = np.all([_has(out, c) for c in _DECIMATION], axis=0)
    gum = np.all([_has(out, c) for c in _GUMBEL], axis=0)
    several = (in_table.astype(int) + dec + gum) > 1
    for i in np.flatnonzero(several):
        findings.append((i, f"{row(i)}: section {sid[i]!r} has more than one frequency line "
                            "(frequency table, decimation columns, Gumbel columns); keep one"))
    lines = section_lines(out, freq, extrapolate=extrapolate)
    has_line = lines.has_line
    has_std = np.isfinite(lines.standard)
    for i in np.flatnonzero(has_std & ~has_line):
        findings.append((i, f"{row(i)}, column standard_return_period/standard_probability: "
                            f"section {sid[i]!r} has a standard but no frequency line; give "
                            "its rows in the frequency table (--frequency), or level_ref, "
                            "return_period_ref and decimation_height, or gumbel_location and "
                            "gumbel_scale"))
    blank = np.asarray(raw_blank_level, bool)
    for i in np.flatnonzero(blank & ~(has_line & has_std) & ~(has_std & ~has_line)):
        findings.append((i, f"{row(i)}, column water_level: empty; give the design water "
                            "level, or a frequency line and a standard (standard_return_period "
                            "or standard_probability) to read it from"))
    if "water_level_end" in out.columns:
        for i in np.flatnonzero(blank & _has(out, "water_level_end")):
            findings.append((i, f"{row(i)}, column water_level_end: a gradient needs the "
                                "water_level it starts from; leave both empty to read the "
                                "level off the frequency line"))
    lo, hi = lines.search_bounds()
    with np.errstate(invalid="ignore"):
        outside = has_std & has_line & ((lines.standard < lo * (1 - 1e-9))
                                        | (lines.standard > hi * (1 + 1e-9)))
    for i in np.flatnonzero(outside):
        if lines.kind[i] == "table":
            t = tables[str(sid[i])]
            findings.append((i, f"{row(i)}, column standard_return_period/standard_probability:"
                                f" the standard of {lines.standard[i]:g} years lies outside "
                                f"the frequency table {fsrc} of section {sid[i]!r} (rows "
                                f"{t.rows[0]}-{t.rows[-1]}: {lo[i]:g}-{hi[i]:g} years"
                                f"{' with one decade of extrapolation' if extrapolate else ''})"
                                "; extend the table or change the standard"))
        else:
            findings.append((i, f"{row(i)}: the standard of {lines.standard[i]:g} years lies "
                                f"outside the range searched on analytic lines "
                                f"({lo[i]:g}-{hi[i]:g} years)"))
    fd, dr = _has(out, "flood_damage"), _has(out, "discount_rate")
    for i in np.flatnonzero(fd ^ dr):
        findings.append((i, f"{row(i)}, columns flood_damage and discount_rate: give both for "
                            "the economic optimum, or neither"))
    for i in np.flatnonzero((fd | dr) & ~(has_line & has_std)):
        findings.append((i, f"{row(i)}, column flood_damage: the economic optimum needs a "
                            "frequency line and a standard for the section"))
    derive = blank & has_line & has_std & ~outside
    source = np.where(blank, lines.kind, "given").astype(object)
    source[blank & ~derive] = ""
    level, hm0, tm10 = lines.evaluate(np.where(derive, lines.standard, 10.0))
    wl = out["water_level"].to_numpy(float).copy()
    wl[derive] = level[derive]
    out["water_level"] = wl
    for col, v in (("hm0", hm0), ("tm10", tm10)):
        take = derive & np.isfinite(v)
        cur = out[col].to_numpy(float).copy()
        cur[take] = v[take]
        out[col] = cur
        if col == "tm10" and take.any():  # the table's period replaces a tp of the row
            tp = out["tp"].to_numpy(float).copy()
            tp[take] = np.nan
            out["tp"] = tp
    from_tp = np.array([tables[str(s)].from_tp if str(s) in tables else False for s in sid])
    out["table_period_from_tp"] = derive & from_tp & np.isfinite(tm10)
    out["water_level_source"] = source
    out["standard_return_period"] = lines.standard
    out["line_kind"] = lines.kind
    out["design_extrapolated"] = derive & (lines.range_flag(lines.standard) != "")
    known = set(str(s) for s in sid)
    extra = sorted(set(tables) - known)
    if extra and n:
        log.warning("frequency table %s: section(s) %s are not in the conditions table and "
                    "are not used", fsrc, ", ".join(extra))
    return [f for _, f in sorted(findings, key=lambda x: x[0])]
