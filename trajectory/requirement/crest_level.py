"""Required crest level per station, assembled from its published terms.

required level = design water level + sea-level-rise allowance
                 + freeboard + settlement allowance

The freeboard rule is chosen per section (column ``freeboard_method``):

- ``overtopping`` (default): the freeboard that solves the EurOtop (2018) mean
  overtopping formula for the allowed discharge ``q_allow``;
- ``runup``: the crest at or above the 2 % run-up level, EurOtop (2018) Eq. 5.1/5.2;
- ``constant``: a fixed freeboard given per section (``fixed_freeboard``);
- ``cfr_riverine``: 44 CFR 65.10(b)(1)(i), 3 ft, 4 ft near structures, 3.5 ft at
  the upstream end;
- ``cfr_coastal``: 44 CFR 65.10(b)(1)(iii), 1 ft above the greater of the height
  of the one-percent wave and the maximum wave run-up.

Every method's freeboard is never less than the section's ``min_freeboard``.
Each term is returned as its own column so an engineer can audit the sum, and
formulas applied outside their validity range set a warning flag (the result is
kept).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any, cast

import numpy as np
import pandas as pd

from ..formulas import hydraulics as hy

#: l/s per m in the interface, m3/s per m inside: converted here, once.
LPS_PER_M3S = 1000.0

#: Freeboard rules selectable per section, in the ``freeboard_method`` column.
METHODS: tuple[str, ...] = ("overtopping", "runup", "constant", "cfr_riverine", "cfr_coastal")

#: Methods that need a wave height and a period.
WAVE_METHODS: frozenset[str] = frozenset({"overtopping", "runup", "cfr_coastal"})

#: Height of the wave exceeded by 1 % of the waves over Hm0, H1% / Hm0 =
#: sqrt(ln(100) / 2) = 1.5174 (Rayleigh distribution of wave heights in deep
#: water, common practice; used for the 44 CFR 65.10 "one-percent wave").
H1PCT_OVER_HM0 = math.sqrt(math.log(100.0) / 2.0)

#: Validity ranges checked per station: flag -> (quantity, low, high).
#: EurOtop (2018) chapter 5, from memory; see the README.
VALIDITY: dict[str, tuple[str, float, float]] = {
    "xi_out_of_range": ("breaker parameter xi_m-1,0", 0.5, 5.0),
    "steepness_out_of_range": ("wave steepness s_m-1,0 = Hm0 / L_m-1,0", 0.01, 0.065),
    "slope_out_of_range": ("slope cot(alpha)", 1.5, 8.0),
    "rc_out_of_range": ("relative freeboard Rc / Hm0 at the required level", 0.0, 4.0),
}
#: Further flags: ``angle_capped`` (|beta| > 80 degrees, the 80 degree value used,
#: EurOtop 2018 Eq. 5.28/5.29) and ``berm_out_of_range`` (gamma_b held at its 0.6
#: bound, or berm wider than 0.25 L_m-1,0, EurOtop 2018 section 5.4.2, from memory).
VALIDITY_FLAGS: tuple[str, ...] = (*VALIDITY, "angle_capped", "berm_out_of_range")


@dataclass(frozen=True)
class StationConditions:
    """Boundary conditions gathered per station (columnar).

    The first nine fields are the end-to-end set; the rest have defaults so an
    existing call keeps working (``method`` None means ``overtopping``
    everywhere; ``period_from_tp`` None means ``tm10`` was given).
    """

    water_level: np.ndarray
    hm0: np.ndarray
    tm10: np.ndarray
    wave_angle: np.ndarray
    q_allow: np.ndarray        # l/s per m
    sea_level_rise: np.ndarray
    settlement: np.ndarray
    roughness: np.ndarray
    min_freeboard: np.ndarray
    method: np.ndarray | None = None          # one of METHODS per station
    fixed_freeboard: np.ndarray | None = None  # m, for 'constant'
    near_structure: np.ndarray | None = None   # bool, for 'cfr_riverine'
    upstream_share: np.ndarray | None = None   # 0..1 of the 0.5 ft, 'cfr_riverine'
    period_from_tp: np.ndarray | None = None   # bool: tm10 derived as Tp / 1.1
    design_outer_slope: np.ndarray | None = None  # n of 1:n; NaN: use the measured slope

    def take(self, idx: np.ndarray | slice) -> StationConditions:
        """The conditions of stations ``idx`` (optional fields that are None stay None)."""
        return StationConditions(**{f: None if getattr(self, f) is None else
                                    np.asarray(getattr(self, f))[idx]
                                    for f in self.__dataclass_fields__})


@dataclass(frozen=True)
class Requirement:
    """Required crest level and each of its terms (columnar)."""

    still_water: np.ndarray     # design water level + sea-level rise
    freeboard: np.ndarray       # freeboard of the chosen method, after the minimum
    freeboard_eurotop: np.ndarray  # the EurOtop overtopping inverse alone
    required_level: np.ndarray
    q_at_crest: np.ndarray      # l/s per m at the measured crest
    gamma_beta: np.ndarray      # obliquity factor for overtopping
    gamma_f: np.ndarray
    freeboard_rule: np.ndarray  # which term governs: the method or 'minimum'
    water_level: np.ndarray     # design water level at the station
    sea_level_rise: np.ndarray
    settlement: np.ndarray
    freeboard_method: np.ndarray
    freeboard_runup: np.ndarray  # Ru2% (EurOtop 2018)
    freeboard_fixed: np.ndarray  # constant or 44 CFR 65.10 freeboard, m
    freeboard_fixed_ft: np.ndarray  # the 44 CFR 65.10 freeboard in feet
    min_freeboard: np.ndarray
    runup_level: np.ndarray      # still water + Ru2%
    tm10: np.ndarray             # period used
    period_source: np.ndarray    # 'tm10' or 'tp/1.1'
    gamma_b: np.ndarray
    gamma_beta_runup: np.ndarray
    tan_alpha: np.ndarray        # slope tangent used in the formulas
    breaker_parameter: np.ndarray
    validity_flags: np.ndarray   # ';'-separated, '' where all in range


#: Requirement columns that become station fields (beyond those assess names itself).
STATION_COLUMNS: tuple[str, ...] = (
    "freeboard_method", "freeboard_runup", "freeboard_fixed", "freeboard_fixed_ft",
    "min_freeboard", "runup_level", "tm10", "period_source", "gamma_b",
    "gamma_beta_runup", "tan_alpha", "breaker_parameter", "validity_flags",
)


def profile_berm(prof: object) -> dict[str, np.ndarray]:
    """``berm_width`` and ``berm_level`` keywords from profile metrics, if it has them.

    Reads ``outer_berm_width`` and ``outer_berm_level`` (NaN where no berm);
    returns ``{}`` for metrics without berm fields, so no berm factor is applied.
    """
    width = getattr(prof, "outer_berm_width", None)
    level = getattr(prof, "outer_berm_level", None)
    if width is None or level is None:
        return {}
    return {"berm_width": np.asarray(width, float), "berm_level": np.asarray(level, float)}


def requirement_slope(tan_measured: np.ndarray,
                      design_outer_slope: np.ndarray | None) -> tuple[np.ndarray, np.ndarray]:
    """The outer slope tangent the requirement uses, and where it is the design slope.

    A section's registered design outer slope (1:n, conditions column
    ``design_outer_slope``) replaces the measured characteristic slope (EurOtop 2018
    Section 5.3.4) where given: assessing on the design profile is common practice
    and keeps the required level from jittering with the survey between stations.
    """
    tan = np.asarray(tan_measured, float)
    if design_outer_slope is None:
        return tan, np.zeros(tan.shape, bool)
    n = np.asarray(design_outer_slope, float)
    given = np.isfinite(n) & (n > 0)
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(given, 1.0 / np.where(given, n, 1.0), tan), given


def _full(x: object, n: int, dtype: type = float) -> np.ndarray:
    return np.broadcast_to(np.asarray(x, dtype=dtype), (n,)).copy()


def required_level(
    cond: StationConditions, *, outer_slope: np.ndarray, crest_level: np.ndarray,
    approach: str = "design", tan_alpha: np.ndarray | None = None,
    berm_width: np.ndarray | None = None, berm_level: np.ndarray | None = None,
) -> Requirement:
    """Required crest level per station and every term of it.

    Parameters
    ----------
    cond : StationConditions
        Conditions per station.
    outer_slope : ndarray
        Outer slope as cotangent n of 1:n (used when ``tan_alpha`` is None).
    crest_level : ndarray
        Measured crest level, m, for ``q_at_crest``.
    approach : {"design", "mean", "taw2002_design", "taw2002_mean"}
        Coefficient set, :data:`trajectory.formulas.hydraulics.COEFFICIENTS`.
    tan_alpha : ndarray, optional
        Characteristic slope tangent (EurOtop 2018 section 5.3.3); default
        ``1 / outer_slope``.
    berm_width, berm_level : ndarray, optional
        Outer berm found in the profile (NaN where none); gives γb by
        EurOtop (2018) Eq. 5.33-5.36 (:func:`trajectory.formulas.hydraulics.gamma_berm`),
        with the slopes below and above the berm both taken as ``tan_alpha`` and,
        for a berm above still water, x = Ru2% without the berm.

    Returns
    -------
    Requirement
    """
    out = _requirement(cond, outer_slope=outer_slope, crest_level=crest_level,
                       approach=approach, tan_alpha=tan_alpha, berm_width=berm_width,
                       berm_level=berm_level, audit=True)
    return cast(Requirement, out)


def required_level_values(
    cond: StationConditions, *, outer_slope: np.ndarray, crest_level: np.ndarray,
    approach: str = "design", tan_alpha: np.ndarray | None = None,
    berm_width: np.ndarray | None = None, berm_level: np.ndarray | None = None,
) -> np.ndarray:
    """The required crest level alone, as :func:`required_level` computes it.

    The same computation without the audit terms (discharge at the crest, breaker
    parameter, validity flags, rule names): for solvers that evaluate the
    requirement many times (the return period a crest holds, held.py).
    """
    out = _requirement(cond, outer_slope=outer_slope, crest_level=crest_level,
                       approach=approach, tan_alpha=tan_alpha, berm_width=berm_width,
                       berm_level=berm_level, audit=False)
    return cast(np.ndarray, out)


def _requirement(
    cond: StationConditions, *, outer_slope: np.ndarray, crest_level: np.ndarray,
    approach: str, tan_alpha: np.ndarray | None, berm_width: np.ndarray | None,
    berm_level: np.ndarray | None, audit: bool,
) -> Requirement | np.ndarray:
    """:func:`required_level` (``audit``) or :func:`required_level_values`."""
    wl = np.asarray(cond.water_level, dtype=float)
    n = wl.size
    hm0 = _full(cond.hm0, n)
    tm10 = _full(cond.tm10, n)
    method = (np.full(n, "overtopping", dtype=object) if cond.method is None
              else _full(cond.method, n, object))
    is_m = {m: method == m for m in ("overtopping", "runup", "constant", "cfr_riverine",
                                      "cfr_coastal")}
    slope = _full(outer_slope, n)
    with np.errstate(divide="ignore", invalid="ignore"):
        tan_a = (1.0 / slope) if tan_alpha is None else _full(tan_alpha, n)
    tan_a = np.where(np.isfinite(tan_a) & (tan_a > 0), tan_a, np.nan)
    swl = wl + cond.sea_level_rise
    g_f = _full(cond.roughness, n)
    g_beta = _full(hy.gamma_beta_overtopping(cond.wave_angle), n)
    g_beta_ru = _full(hy.gamma_beta_runup(cond.wave_angle), n)
    waves = np.isfinite(hm0) & np.isfinite(tm10)
    # a placeholder wave where a section gives none keeps the formulas quiet
    h = np.where(waves, hm0, 0.0)
    t = np.where(waves, tm10, 1.0)
    ta = np.where(np.isfinite(tan_a), tan_a, 1.0)
    # run-up without berm first: it is the x of the berm factor above still water
    ru0 = _full(hy.runup_2pct(h, t, ta, gamma_f=g_f, gamma_beta=g_beta_ru,
                              approach=approach), n)
    g_b = np.ones(n)
    berm_flag = np.zeros(n, dtype=bool)
    if berm_width is not None and berm_level is not None:
        bw = _full(berm_width, n)
        has = np.isfinite(bw) & (bw > 0) & np.isfinite(_full(berm_level, n))
        db = np.where(has, swl - _full(berm_level, n), 0.0)
        g_b = np.where(has, _full(hy.gamma_berm(np.where(has, bw, 0.0), db, h, t, ta, ta,
                                                runup=ru0), n), 1.0)
        with np.errstate(invalid="ignore"):
            berm_flag = has & waves & ((g_b <= hy.GAMMA_B_MIN + 1e-12)
                                       | (bw > 0.25 * np.asarray(hy.wavelength_deep(t))))
    q_allow = _full(cond.q_allow, n) / LPS_PER_M3S
    qa = np.where(np.isfinite(q_allow) & (q_allow > 0), q_allow, 1.0)
    kw: dict[str, Any] = dict(gamma_b=g_b, gamma_f=g_f, gamma_beta=g_beta, approach=approach)
    fb_e = _full(hy.freeboard_for_discharge(qa, h, t, ta, **kw), n)
    ok_e = waves & np.isfinite(tan_a) & np.isfinite(q_allow) & (q_allow > 0)
    fb_e = np.where(ok_e, fb_e, np.nan)
    ru = _full(hy.runup_2pct(h, t, ta, gamma_b=g_b, gamma_f=g_f, gamma_beta=g_beta_ru,
                             approach=approach), n)
    ru = np.where(waves & np.isfinite(tan_a), ru, np.nan)
    # fixed freeboards: constant per section, or 44 CFR 65.10 in feet, exactly converted
    fixed = (np.full(n, np.nan) if cond.fixed_freeboard is None
             else _full(cond.fixed_freeboard, n))
    near = (np.zeros(n, dtype=bool) if cond.near_structure is None
            else _full(cond.near_structure, n, bool))
    share = (np.zeros(n) if cond.upstream_share is None
             else np.nan_to_num(_full(cond.upstream_share, n)))
    riv = hy.freeboard_44cfr6510("riverine", near_structure=near, upstream_end=share)
    coast = hy.freeboard_44cfr6510("coastal")
    riv_ft = _full(riv.margin_ft, n)
    with np.errstate(invalid="ignore"):
        wave_or_runup = np.fmax(H1PCT_OVER_HM0 * np.where(waves, hm0, np.nan), ru)
    fixed_m = np.select(
        [is_m["constant"], is_m["cfr_riverine"], is_m["cfr_coastal"]],
        [fixed, riv_ft * hy.FOOT, wave_or_runup + coast.margin_m], np.nan)
    fb_m = np.select([is_m["overtopping"], is_m["runup"]], [fb_e, ru], fixed_m)
    # outside the valid geometry (no outer slope) the hydraulic rules have no answer
    min_fb = _full(cond.min_freeboard, n)
    with np.errstate(invalid="ignore"):
        fb = np.where(np.isfinite(fb_m), np.maximum(fb_m, min_fb), np.nan)
    req = swl + fb + cond.settlement
    if not audit:
        return req
    # the audit terms: which rule governs, discharge at the crest, validity
    with np.errstate(invalid="ignore"):
        rule = np.where(fb_m >= min_fb, method, "minimum").astype(object)
    rule = np.where(np.isfinite(fb_m), rule, "").astype(object)
    fixed_ft = np.select([is_m["cfr_riverine"], is_m["cfr_coastal"]],
                         [riv_ft, wave_or_runup / hy.FOOT + coast.margin_ft], np.nan)
    q = _full(hy.overtopping_discharge(np.nan_to_num(crest_level - swl, nan=0.0), h, t, ta,
                                       **kw), n) * LPS_PER_M3S
    q = np.where(waves & np.isfinite(tan_a) & np.isfinite(crest_level), q, np.nan)
    xi = np.where(waves & np.isfinite(tan_a),
                  _full(hy.breaker_parameter(ta, np.where(h > 0, h, 1.0), t), n), np.nan)
    xi = np.where(h > 0, xi, np.nan)
    flags = _validity_flags(method=method, hm0=hm0, tm10=tm10, tan_alpha=tan_a, xi=xi,
                            freeboard=fb, wave_angle=_full(cond.wave_angle, n),
                            berm_flag=berm_flag)
    src = (np.full(n, "tm10", dtype=object) if cond.period_from_tp is None
           else np.where(_full(cond.period_from_tp, n, bool), "tp/1.1", "tm10").astype(object))
    src = np.where(np.isfinite(tm10), src, "").astype(object)
    return Requirement(
        still_water=swl, freeboard=fb, freeboard_eurotop=fb_e, required_level=req,
        q_at_crest=np.where(np.isfinite(req), q, np.nan), gamma_beta=g_beta, gamma_f=g_f,
        freeboard_rule=rule, water_level=wl.astype(float),
        sea_level_rise=_full(cond.sea_level_rise, n), settlement=_full(cond.settlement, n),
        freeboard_method=method, freeboard_runup=ru, freeboard_fixed=fixed_m,
        freeboard_fixed_ft=fixed_ft, min_freeboard=min_fb, runup_level=swl + ru,
        tm10=tm10, period_source=src, gamma_b=g_b, gamma_beta_runup=g_beta_ru,
        tan_alpha=tan_a, breaker_parameter=xi, validity_flags=flags)


def _validity_flags(*, method: np.ndarray, hm0: np.ndarray, tm10: np.ndarray,
                    tan_alpha: np.ndarray, xi: np.ndarray, freeboard: np.ndarray,
                    wave_angle: np.ndarray, berm_flag: np.ndarray) -> np.ndarray:
    """';'-separated validity warnings per station (empty where all in range)."""
    uses_waves = np.isin(method, list(WAVE_METHODS)) & (np.nan_to_num(hm0) > 0)
    with np.errstate(divide="ignore", invalid="ignore"):
        values = {
            "xi_out_of_range": xi,
            "steepness_out_of_range": hm0 / (hy.G * tm10**2 / (2 * math.pi)),
            "slope_out_of_range": 1.0 / tan_alpha,
            "rc_out_of_range": np.where(method == "overtopping", freeboard / hm0, np.nan),
        }
    masks = {}
    for name, (_, lo, hi) in VALIDITY.items():
        v = values[name]
        masks[name] = uses_waves & np.isfinite(v) & ((v < lo) | (v > hi))
    masks["angle_capped"] = uses_waves & (np.abs(np.nan_to_num(wave_angle)) > 80.0)
    masks["berm_out_of_range"] = uses_waves & berm_flag
    out = np.full(method.shape, "", dtype=object)
    for name in VALIDITY_FLAGS:
        m = masks[name]
        out[m] = np.where(out[m] == "", name, out[m] + ";" + name)
    return out


def station_conditions(table: pd.DataFrame, idx: np.ndarray,
                       chainage: np.ndarray) -> StationConditions:
    """Gather a validated conditions table onto stations.

    The design water level is constant over a section, or, where the table
    gives ``water_level_end``, interpolated linearly along chainage from
    ``water_level`` at ``from_chainage`` to ``water_level_end`` at
    ``to_chainage`` (a river gradient). The 44 CFR 65.10 upstream-end share is
    interpolated the same way from ``upstream_share`` to ``upstream_share_end``.

    Parameters
    ----------
    table : DataFrame
        Output of :func:`trajectory.inputs.sources.validate_conditions`.
    idx : ndarray of int
        Row of ``table`` per station.
    chainage : ndarray
        Station chainage, m.
    """

    def col(name: str, default: float = np.nan) -> np.ndarray:
        if name in table.columns:
            return table[name].to_numpy(float)[idx]
        return np.full(idx.shape, default)

    lo, hi = col("from_chainage"), col("to_chainage")
    with np.errstate(divide="ignore", invalid="ignore"):
        frac = np.clip(np.where(hi > lo, (np.asarray(chainage, float) - lo) / (hi - lo), 0.0),
                       0.0, 1.0)

    def along(start: str, end: str, default: float = np.nan) -> np.ndarray:
        a = col(start, default)
        b = col(end)
        return np.where(np.isfinite(b), a + (b - a) * frac, a)

    method = (table["freeboard_method"].to_numpy(object)[idx]
              if "freeboard_method" in table.columns
              else np.full(idx.shape, "overtopping", dtype=object))
    near = col("near_structure", 0.0)
    from_tp = (table["period_from_tp"].to_numpy(bool)[idx]
               if "period_from_tp" in table.columns else np.zeros(idx.shape, bool))
    return StationConditions(
        water_level=along("water_level", "water_level_end"),
        hm0=col("hm0"), tm10=col("tm10"), wave_angle=col("wave_angle", 0.0),
        q_allow=col("q_allow"), sea_level_rise=col("sea_level_rise", 0.0),
        settlement=col("settlement", 0.0), roughness=col("roughness", 1.0),
        min_freeboard=col("min_freeboard", 0.0), method=method,
        fixed_freeboard=col("fixed_freeboard"),
        near_structure=np.nan_to_num(near) > 0,
        upstream_share=along("upstream_share", "upstream_share_end", 0.0),
        period_from_tp=from_tp, design_outer_slope=col("design_outer_slope"))
