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
    freeboard_rule: np.ndarray  # which term governs: 'eurotop' or 'minimum'


def required_level(
    cond: StationConditions, *, outer_slope: np.ndarray, crest_level: np.ndarray,
    approach: str = "design", tan_alpha: np.ndarray | None = None,
) -> Requirement:
    """Required crest level per station (EurOtop 2018 overtopping inverse + allowances)."""
    tan_a = 1.0 / outer_slope if tan_alpha is None else tan_alpha
    g_beta = hy.gamma_beta_overtopping(cond.wave_angle)
    g_f = cond.roughness
    swl = cond.water_level + cond.sea_level_rise
    with np.errstate(invalid="ignore"):
        fb_e = hy.freeboard_for_discharge(
            cond.q_allow / LPS_PER_M3S, cond.hm0, cond.tm10, tan_a,
            gamma_f=g_f, gamma_beta=g_beta, approach=approach)
        fb_e = np.where(np.isfinite(tan_a), fb_e, np.nan)
        fb = np.maximum(fb_e, cond.min_freeboard)
        q = hy.overtopping_discharge(
            crest_level - swl, cond.hm0, cond.tm10, tan_a,
            gamma_f=g_f, gamma_beta=g_beta, approach=approach) * LPS_PER_M3S
    rule = np.where(fb_e >= cond.min_freeboard, "eurotop", "minimum").astype(object)
    req = swl + fb + cond.settlement
    return Requirement(still_water=swl, freeboard=fb, freeboard_eurotop=fb_e,
                       required_level=req, q_at_crest=np.where(np.isfinite(req), q, np.nan),
                       gamma_beta=np.broadcast_to(g_beta, req.shape).astype(float),
                       gamma_f=np.broadcast_to(g_f, req.shape).astype(float),
                       freeboard_rule=rule)
