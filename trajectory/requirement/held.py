"""The return period each station's crest holds, from its section's frequency line.

The held return period T is where the measured crest equals the required
level computed with the line's water level and waves at T and the section's
own freeboard rule (crest_level.py). The requirement rises with T (the lines
are checked not to fall), so T is found by bracketing on the line's range and
a vectorised Illinois (modified regula falsi) root-find in log10 T, stations as
rows. Beyond the range the result is the range's bound, flagged ``above`` or
``below``; never an extrapolated number without a flag.
"""

from __future__ import annotations

import dataclasses
import math
from typing import Any

import numpy as np

from ..formulas.frequency import Lines
from .crest_level import StationConditions, required_level_values

#: the root-find stops when the crest and the requirement agree to this (m)
LEVEL_TOLERANCE = 1e-4
#: ... or after this many steps (the bracket is then at most a few mm wide)
MAX_STEPS = 60
#: half-width (decades) of the central difference for the slope of the requirement
DERIVATIVE_STEP = 0.1

#: station columns this module adds (declared in the output schema)
HELD_COLUMNS: tuple[str, ...] = (
    "return_period_held", "held_probability", "held_range", "return_period_held_low",
    "held_range_low", "return_period_held_future", "held_range_future", "standard_level",
    "rise_per_decade",
)
#: public values of the ``held_range*`` fields
RANGES = ("within", "extrapolated", "above", "below")


def _conditions_at(cond: StationConditions, lines: Lines, t: np.ndarray,
                   allowances: np.ndarray) -> StationConditions:
    """The stations' conditions with the line's level and waves at return period ``t``."""
    level, hm0, tm10 = lines.evaluate(t)
    keep = np.asarray(allowances, bool)
    return dataclasses.replace(
        cond, water_level=level,
        hm0=np.where(np.isfinite(hm0), hm0, cond.hm0),
        tm10=np.where(np.isfinite(tm10), tm10, cond.tm10),
        sea_level_rise=np.where(keep, cond.sea_level_rise, 0.0),
        settlement=np.where(keep, cond.settlement, 0.0))


class _Requirement:
    """Required level of rows of stacked stations at a return period (one call per step)."""

    def __init__(self, cond: StationConditions, lines: Lines, allowances: np.ndarray,
                 profile: dict[str, np.ndarray], approach: str):
        self.cond, self.lines, self.allowances = cond, lines, allowances
        self.profile, self.approach = profile, approach

    def __call__(self, rows: np.ndarray, t: np.ndarray) -> np.ndarray:
        c = _conditions_at(self.cond.take(rows), self.lines.take(rows), t,
                           self.allowances[rows])
        kw = {k: v[rows] for k, v in self.profile.items()}
        return required_level_values(c, approach=self.approach, **kw)


def solve_held(req: _Requirement, target: np.ndarray, lo: np.ndarray,
               hi: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Return period (years) where ``req(T) = target`` per row, and its range flag.

    ``req`` must not fall with T. Rows whose crest is below the requirement at
    ``lo`` get ``lo`` and 'below'; at or above the requirement at ``hi``, ``hi``
    and 'above'; rows without a line or a crest, NaN and ''.
    """
    n = target.size
    rows = np.arange(n)
    t_out = np.full(n, np.nan)
    flag = np.full(n, "", dtype=object)
    ok = np.isfinite(target) & np.isfinite(lo) & np.isfinite(hi)
    idx = rows[ok]
    if idx.size == 0:
        return t_out, flag
    a, b = np.log10(lo[idx]), np.log10(hi[idx])
    fa = target[idx] - req(idx, lo[idx])
    fb = target[idx] - req(idx, hi[idx])
    below = fa < 0
    above = ~below & (fb >= 0)
    t_out[idx[below]], flag[idx[below]] = lo[idx[below]], "below"
    t_out[idx[above]], flag[idx[above]] = hi[idx[above]], "above"
    act = np.isfinite(fa) & np.isfinite(fb) & ~below & ~above
    idx, a, b, fa, fb = idx[act], a[act], b[act], fa[act], fb[act]
    side = np.zeros(idx.size, dtype=np.int8)
    u = 0.5 * (a + b)
    for _ in range(MAX_STEPS):
        if idx.size == 0:
            break
        with np.errstate(invalid="ignore", divide="ignore"):
            c = b - fb * (b - a) / (fb - fa)
        c = np.where(np.isfinite(c) & (c > a) & (c < b), c, 0.5 * (a + b))
        fc = target[idx] - req(idx, 10.0 ** c)
        done = (np.abs(fc) < LEVEL_TOLERANCE) | ((b - a) < 1e-12) | ~np.isfinite(fc)
        low = fc < 0  # the root lies below c: c is the new upper end
        fa = np.where(low & (side == -1), fa / 2, fa)
        fb = np.where(~low & (side == 1), fb / 2, fb)
        b, fb = np.where(low, c, b), np.where(low, fc, fb)
        a, fa = np.where(low, a, c), np.where(low, fa, fc)
        side = np.where(low, -1, 1).astype(np.int8)
        u_done = np.where(np.isfinite(fc), c, np.nan)
        t_out[idx[done]] = 10.0 ** u_done[done]
        flag[idx[done]] = "within"
        keep = ~done
        idx, a, b, fa, fb, side = idx[keep], a[keep], b[keep], fa[keep], fb[keep], side[keep]
        u = 0.5 * (a + b)
    if idx.size:  # not converged in MAX_STEPS: the bracket's middle
        t_out[idx], flag[idx] = 10.0 ** u, "within"
    flag[~np.isfinite(t_out)] = ""
    return t_out, flag


def station_held(lines: Lines, cond: StationConditions, *, crest_level: np.ndarray,
                 crest_sigma: np.ndarray, approach: str = "design",
                 **profile: Any) -> dict[str, np.ndarray]:
    """What the crest holds: return period today, with the allowances, and at crest - 2 sigma.

    Parameters
    ----------
    lines : Lines
        Each station's frequency line (rows = stations).
    cond : StationConditions
        The stations' conditions (waves where the line has none; allowances).
    crest_level, crest_sigma : ndarray
        Measured crest and the margin's standard deviation (uncertainty.py).
    profile
        ``outer_slope``, ``tan_alpha``, berm keywords for
        :func:`~trajectory.requirement.crest_level.required_level`.

    Returns
    -------
    dict
        Station columns (see ``HELD_STATION_FIELDS`` of the output schema).
    """
    n = crest_level.size
    crest = np.asarray(crest_level, float)
    low = crest - 2.0 * np.nan_to_num(np.asarray(crest_sigma, float))
    has = lines.has_line & np.isfinite(crest)
    lo, hi = lines.search_bounds()
    lo, hi = np.where(has, lo, np.nan), np.where(has, hi, np.nan)
    prof = {k: np.broadcast_to(np.asarray(v, float), (n,)) for k, v in profile.items()
            if v is not None}
    prof.setdefault("crest_level", crest)
    # three stacked problems: today, today at crest - 2 sigma, end of the planning period
    rep = np.tile(np.arange(n), 3)
    allow = np.repeat([False, False, True], n)
    req = _Requirement(cond.take(rep), lines.take(rep), allow,
                       {k: v[rep] for k, v in prof.items()}, approach)
    t, flag = solve_held(req, np.concatenate([crest, low, crest]), np.tile(lo, 3),
                         np.tile(hi, 3))
    for k in range(3):  # a value in the decade beyond a table is flagged as such
        part = slice(k * n, (k + 1) * n)
        e = lines.range_flag(t[part]) != ""
        flag[part] = np.where(e & (flag[part] == "within"), "extrapolated", flag[part])
    # at the standard: the crest that holds it today, and the requirement's slope in ln T
    std = np.where(has, lines.standard, np.nan)
    ok = np.isfinite(std)
    k10 = 10.0 ** DERIVATIVE_STEP
    t_lo = np.where(ok, np.maximum(std / k10, lo), np.nan)
    t_hi = np.where(ok, np.minimum(std * k10, hi), np.nan)
    today = _Requirement(cond.take(np.tile(np.arange(n), 3)),
                         lines.take(np.tile(np.arange(n), 3)), np.zeros(3 * n, bool),
                         {k: np.tile(v, 3) for k, v in prof.items()}, approach)
    rows = np.arange(3 * n)
    pick = np.tile(ok, 3)
    r = np.full(3 * n, np.nan)
    if pick.any():
        r[pick] = today(rows[pick], np.concatenate([std, t_lo, t_hi])[pick])
    at_std, r_lo, r_hi = r[:n], r[n:2 * n], r[2 * n:]
    with np.errstate(invalid="ignore", divide="ignore"):
        per_decade = (r_hi - r_lo) / (np.log10(t_hi) - np.log10(t_lo))
    with np.errstate(divide="ignore", invalid="ignore"):
        prob = 1.0 / t[:n]
    return {
        "return_period_held": t[:n], "held_probability": prob, "held_range": flag[:n],
        "return_period_held_low": t[n:2 * n], "held_range_low": flag[n:2 * n],
        "return_period_held_future": t[2 * n:], "held_range_future": flag[2 * n:],
        "standard_level": at_std,
        "rise_per_decade": np.where(np.isfinite(per_decade), per_decade, np.nan),
    }


def empty_held(n: int) -> dict[str, np.ndarray]:
    """The held columns of ``n`` stations without a line."""
    e = np.full(n, np.nan)
    s = np.full(n, "", dtype=object)
    return {"return_period_held": e, "held_probability": e.copy(), "held_range": s,
            "return_period_held_low": e.copy(), "held_range_low": s.copy(),
            "return_period_held_future": e.copy(), "held_range_future": s.copy(),
            "standard_level": e.copy(), "rise_per_decade": e.copy()}


def alpha_from_rise(rise_per_decade: np.ndarray) -> np.ndarray:
    """van Dantzig's alpha (1/m): 1 / (d level / d ln T) = ln 10 / rise per decade."""
    with np.errstate(divide="ignore", invalid="ignore"):
        return math.log(10.0) / np.asarray(rise_per_decade, float)


def stretch_held(first: np.ndarray, last: np.ndarray, chainage: np.ndarray,
                 held: np.ndarray, held_range: np.ndarray,
                 standard: np.ndarray) -> tuple[dict[str, np.ndarray], np.ndarray]:
    """Per stretch: the smallest held return period, where it is, and the standard there.

    Returns the stretch columns and the index of that station per stretch (-1: none).
    """
    first, last = np.asarray(first, int), np.asarray(last, int)
    k = first.size
    t = np.asarray(held, float)
    key = np.where(np.isfinite(t), t, np.inf)
    out = {"min_return_period_held": np.full(k, np.nan), "min_held_chainage": np.full(k, np.nan),
           "min_held_range": np.full(k, "", dtype=object),
           "standard_return_period": np.full(k, np.nan),
           "below_standard": np.full(k, np.nan)}
    if k == 0 or not np.isfinite(t).any():
        out["below_standard"] = np.full(k, np.nan)
        return out, np.full(k, -1)
    # the stretches tile the stations in order: one reduceat finds each minimum
    mins = np.minimum.reduceat(key, first)
    pos = np.arange(t.size)
    owner = np.repeat(np.arange(k), last - first + 1)
    hit = key == mins[owner]
    where = np.full(k, t.size)
    np.minimum.at(where, owner[hit], pos[hit])
    ok = np.isfinite(mins)
    w = where[ok]
    out["min_return_period_held"][ok] = t[w]
    out["min_held_chainage"][ok] = np.asarray(chainage, float)[w]
    out["min_held_range"][ok] = np.asarray(held_range, object)[w]
    out["standard_return_period"][ok] = np.asarray(standard, float)[w]
    std = out["standard_return_period"]
    below = np.where(np.isfinite(std) & ok,
                     (out["min_return_period_held"] < std).astype(float), np.nan)
    out["below_standard"] = below
    return out, np.where(ok, where, -1)
