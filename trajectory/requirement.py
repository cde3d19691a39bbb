"""Required crest level per station, assembled from its published terms.

required level = design water level + sea-level-rise allowance
                 + freeboard + settlement allowance

where the freeboard solves the EurOtop (2018) mean overtopping formula for the
allowed discharge on the measured outer slope, never less than the section's
minimum freeboard. Every term is returned as its own column so an engineer can
audit the sum.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from . import hydraulics as hy

#: l/s per m in the interface, m3/s per m inside: converted here, once.
LPS_PER_M3S = 1000.0


@dataclass(frozen=True)
class StationConditions:
    """Boundary conditions gathered per station (columnar)."""

    water_level: np.ndarray
    hm0: np.ndarray
    tm10: np.ndarray
    wave_angle: np.ndarray
    q_allow: np.ndarray        # l/s per m
    sea_level_rise: np.ndarray
    settlement: np.ndarray
    roughness: np.ndarray
    min_freeboard: np.ndarray


@dataclass(frozen=True)
class Requirement:
    """Required crest level and each of its terms (columnar)."""

    still_water: np.ndarray     # design water level + sea-level rise
    freeboard: np.ndarray       # hydraulic freeboard, after the minimum
    freeboard_eurotop: np.ndarray  # the EurOtop inverse alone
    required_level: np.ndarray
    q_at_crest: np.ndarray      # l/s per m at the measured crest
    gamma_beta: np.ndarray
    gamma_f: np.ndarray
    gamma_b: np.ndarray
    freeboard_rule: np.ndarray  # which term governs: 'eurotop' or 'minimum'


def berm_factor(cond: StationConditions, *, tan_alpha: np.ndarray, berm_width: np.ndarray,
                berm_level: np.ndarray, approach: str = "design") -> np.ndarray:
    """Berm influence factor gamma_b per station (EurOtop 2018, via hydraulics.gamma_berm).

    The berm depth is measured from the still water (design level + sea-level
    rise); above still water the influence length is the 2 % run-up without
    the berm. Stations without a berm (width NaN or 0) get 1.
    """
    swl = cond.water_level + cond.sea_level_rise
    has = np.isfinite(berm_width) & (berm_width > 0) & np.isfinite(berm_level)
    width = np.where(has, berm_width, 0.0)
    depth = np.where(has, swl - np.where(has, berm_level, 0.0), 0.0)
    ta = np.where(np.isfinite(tan_alpha), tan_alpha, 1.0)
    ru = hy.runup_2pct(cond.hm0, cond.tm10, ta, gamma_f=cond.roughness,
                       gamma_beta=hy.gamma_beta_runup(cond.wave_angle), approach=approach)
    gb = hy.gamma_berm(width, depth, cond.hm0, cond.tm10, ta, ta, runup=ru)
    return np.where(has, gb, 1.0)


def required_level(
    cond: StationConditions, *, outer_slope: np.ndarray, crest_level: np.ndarray,
    approach: str = "design", tan_alpha: np.ndarray | None = None,
    berm_width: np.ndarray | None = None, berm_level: np.ndarray | None = None,
) -> Requirement:
    """Required crest level per station (EurOtop 2018 overtopping inverse + allowances).

    ``tan_alpha`` overrides the slope ``1 / outer_slope`` (e.g. the characteristic
    slope of a composite profile); ``berm_width`` and ``berm_level`` add the berm
    influence factor gamma_b. All arrays broadcast together.
    """
    tan_a = 1.0 / np.asarray(outer_slope, float) if tan_alpha is None else tan_alpha
    g_beta = hy.gamma_beta_overtopping(cond.wave_angle)
    g_f = cond.roughness
    swl = cond.water_level + cond.sea_level_rise
    with np.errstate(invalid="ignore"):
        g_b = (np.ones(np.shape(tan_a)) if berm_width is None else
               berm_factor(cond, tan_alpha=tan_a, berm_width=berm_width,
                           berm_level=berm_level, approach=approach))
        fb_e = hy.freeboard_for_discharge(
            cond.q_allow / LPS_PER_M3S, cond.hm0, cond.tm10, tan_a, gamma_b=g_b,
            gamma_f=g_f, gamma_beta=g_beta, approach=approach)
        fb_e = np.where(np.isfinite(tan_a), fb_e, np.nan)
        fb = np.maximum(fb_e, cond.min_freeboard)
        q = hy.overtopping_discharge(
            crest_level - swl, cond.hm0, cond.tm10, tan_a, gamma_b=g_b,
            gamma_f=g_f, gamma_beta=g_beta, approach=approach) * LPS_PER_M3S
    rule = np.where(fb_e >= cond.min_freeboard, "eurotop", "minimum").astype(object)
    req = swl + fb + cond.settlement
    return Requirement(still_water=swl, freeboard=fb, freeboard_eurotop=fb_e,
                       required_level=req, q_at_crest=np.where(np.isfinite(req), q, np.nan),
                       gamma_beta=np.broadcast_to(g_beta, req.shape).astype(float),
                       gamma_f=np.broadcast_to(g_f, req.shape).astype(float),
                       gamma_b=np.broadcast_to(g_b, req.shape).astype(float),
                       freeboard_rule=rule)
