"""The profile read against the section's conditions: the characteristic outer slope.

Kept apart from :mod:`trajectory.terrain.profile` (geometry only) because it needs the
still water level and the waves of the station's section.
"""

from __future__ import annotations

import numpy as np

from ..formulas import hydraulics as hy
from ..terrain.profile import (
    ProfileMetrics,
    characteristic_slope,
    cleaned_profiles,
    extrapolated_below,
)
from .crest_level import StationConditions


def outer_characteristic_slope(
    z: np.ndarray, offsets: np.ndarray, prof: ProfileMetrics, cond: StationConditions, *,
    object_width: float = 1.0, approach: str = "design",
) -> tuple[np.ndarray, np.ndarray]:
    """tan(alpha) per station for the freeboard, and where it was extended below water.

    EurOtop (2018) Section 5.3.4 average slope (see
    :func:`trajectory.terrain.profile.characteristic_slope`), iterated on Ru2% with the
    section's Tm-1,0 and roughness. Where the outer toe is not dry ground (the slope
    runs into water, or the survey ends on it) the slope below the last sample is
    extended with the lowest measured segment. Where no average slope can be formed
    (no waves, crest below the lower point) the fitted outer slope 1/n is used.
    """
    swl = cond.water_level + cond.sea_level_rise
    toe_is_ground = prof.outer_toe_dry
    with np.errstate(all="ignore"):
        tan = characteristic_slope(
            z, offsets, crest_level=prof.crest_level, outer_edge=prof.outer_edge, swl=swl,
            hm0=cond.hm0, berm_width=prof.outer_berm_width, berm_level=prof.outer_berm_level,
            outer_toe=prof.outer_toe, toe_is_ground=toe_is_ground,
            lower_slope=prof.outer_lower_slope, tm10=cond.tm10, gamma_f=cond.roughness,
            gamma_beta=hy.gamma_beta_runup(cond.wave_angle),
            object_width=object_width, approach=approach,
            clean=cleaned_profiles(prof, z, offsets, object_width=object_width))
        fallback = 1.0 / prof.outer_slope
    tan = np.where(np.isfinite(tan) & (tan > 0), tan, fallback)
    extra = extrapolated_below(outer_toe_level=prof.outer_toe_level,
                               toe_dry=prof.outer_toe_dry, swl=swl, hm0=cond.hm0)
    return tan, extra & np.isfinite(tan)
