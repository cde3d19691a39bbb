"""The economic optimum of a section's safety: van Dantzig (1956), the classic model.

One section, a crest raised by X from today's level: investment I0 + I' X,
flood probability P(X) = P0 exp(-alpha X) (an exponential frequency line with
alpha = 1 / (d level / d ln T)), damage V per flood, discount rate delta net of
economic growth. The total cost I0 + I' X + V P0 exp(-alpha X) / delta is least at

    X* = ln(alpha V P0 / (delta I')) / alpha,   P* = delta I' / (alpha V)

(van Dantzig 1956, Econometrica 24(3)). The single-section model of the paper:
no dike-ring length effect, no growth of damage, a guide for discussion, not
a standard.
"""

from __future__ import annotations

import logging

import numpy as np
import pandas as pd

from ..requirement.held import alpha_from_rise
from .remedies import Geometry, raise_area

log = logging.getLogger(__name__)

#: the wording beside every economic optimum (README, report, workbook)
CAVEAT = ("Economic optimum by van Dantzig (1956): the classic single-section model (no "
          "dike-ring length effect, no growth of damage), a guide for discussion, not a "
          "standard.")


def total_cost(x: np.ndarray, *, i0: float, i_prime: float, damage: float, p0: float,
               alpha: float, delta: float) -> np.ndarray:
    """Present value of investment and expected flood damage for a raise ``x`` (m)."""
    x = np.asarray(x, float)
    return i0 + i_prime * x + damage * p0 * np.exp(-alpha * x) / delta


def van_dantzig(*, alpha: np.ndarray, damage: np.ndarray, p0: np.ndarray, delta: np.ndarray,
                i_prime: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Optimal raise X* (m, unclipped) and optimal annual probability P* (van Dantzig 1956)."""
    a, v, p, d, c = (np.asarray(z, float) for z in (alpha, damage, p0, delta, i_prime))
    with np.errstate(divide="ignore", invalid="ignore"):
        x = np.log(a * v * p / (d * c)) / a
        p_star = d * c / (a * v)
    ok = (a > 0) & (v > 0) & (d > 0) & (c > 0)
    return np.where(ok & (p > 0), x, np.nan), np.where(ok, p_star, np.nan)


def section_economics(stations: pd.DataFrame, table: pd.DataFrame, *,
                      extents: np.ndarray, unit_cost: float, line_id: str = "") -> pd.DataFrame:
    """The optimum per section that gives ``flood_damage`` and ``discount_rate``.

    ``extents`` is the chainage length each station stands for (m); the
    marginal cost I' sums the fill area of one metre of raise (remedies.py)
    times that length, times ``unit_cost``, plus ``raise_fixed_cost`` per km.
    """
    cols = ("flood_damage", "discount_rate")
    if not all(c in table.columns for c in cols):
        return pd.DataFrame()
    use = table[np.isfinite(table["flood_damage"].to_numpy(float))
                & np.isfinite(table["discount_rate"].to_numpy(float))]
    sid = stations["section_id"].to_numpy(object)
    geom = Geometry(*(stations[c].to_numpy(float) for c in (
        "crest_level", "crest_width", "outer_slope", "inner_slope", "outer_toe_level",
        "inner_toe_level")))
    area = raise_area(np.ones(len(stations)), geom)
    # the columns once, and each section's stations by one sort (not a scan per section)
    col = {c: stations[c].to_numpy(float) for c in (
        "return_period_held", "rise_per_decade", "crest_level", "standard_return_period",
        "chainage", "standard_level")}
    held_range = stations["held_range"].to_numpy(object)
    order = np.argsort(sid.astype(str), kind="stable")
    keys, first = np.unique(sid.astype(str)[order], return_index=True)
    groups = dict(zip(keys, np.split(order, first[1:]), strict=True))
    rows = []
    for r in use.itertuples(index=False):
        at = groups.get(str(r.section_id))
        if at is None or at.size == 0:
            continue
        at = np.sort(at)
        held = col["return_period_held"][at]
        if not np.isfinite(held).any():
            continue
        w = at[int(np.nanargmin(held))]
        fixed = getattr(r, "raise_fixed_cost", np.nan)
        fixed = 0.0 if not np.isfinite(fixed) else float(fixed)
        a_ok = np.isfinite(area[at])
        i_prime = (unit_cost * float(np.sum(area[at][a_ok] * extents[at][a_ok]))
                   + fixed * float(np.sum(extents[at])) / 1000.0)
        alpha = alpha_from_rise(col["rise_per_decade"][at])
        alpha = float(np.nanmedian(alpha)) if np.isfinite(alpha).any() else np.nan
        t_held = float(col["return_period_held"][w])
        in_range = held_range[w] in ("within", "extrapolated")
        p0 = 1.0 / t_held if in_range else np.nan
        x, p_star = van_dantzig(alpha=alpha, damage=r.flood_damage, p0=p0,
                                delta=r.discount_rate, i_prime=i_prime)
        if i_prime <= 0:
            log.warning("section %r: no cost of raising (give --fill-unit-cost or "
                        "raise_fixed_cost), so no economic optimum", r.section_id)
        crest = float(col["crest_level"][w])
        rows.append({
            "line_id": line_id, "section_id": r.section_id,
            "standard_return_period": float(col["standard_return_period"][w]),
            "weakest_chainage": float(col["chainage"][w]),
            "return_period_held": t_held, "crest_level": crest,
            "standard_level": float(col["standard_level"][w]),
            "flood_damage": float(r.flood_damage), "discount_rate": float(r.discount_rate),
            "alpha": alpha, "marginal_cost": i_prime,
            "optimal_raise": float(np.maximum(x, 0.0)) if np.isfinite(x) else np.nan,
            "optimal_level": crest + float(x) if np.isfinite(x) else np.nan,
            "optimal_probability": float(p_star),
            "optimal_return_period": 1.0 / float(p_star) if p_star > 0 else np.nan,
        })
    # the writers order the columns by the output schema (outputs/schema.py, "economics")
    return pd.DataFrame(rows)
