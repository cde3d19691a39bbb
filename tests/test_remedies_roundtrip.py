"""Round trip of the outer-berm option through the assessment's own profile reading.

Synthetic truth: a trapezoid that falls short; the proposed berm is built into
the profile, the profile is read as any survey would be (berm detection and the
EurOtop 2018 characteristic slope), and the required level computed from what
was read must come back to the existing crest.
"""

from __future__ import annotations

import numpy as np

from trajectory.judgement.remedies import Geometry, outline, station_options
from trajectory.requirement.characteristic_slope import outer_characteristic_slope
from trajectory.requirement.crest_level import StationConditions, profile_berm, required_level
from trajectory.terrain.profile import read_profiles

STEP = 0.25
OFF = np.arange(-240, 241) * STEP   # +-60 m, + towards the water


def _cond():
    # an exposed reach (invented values): waves large enough that the berm is wide
    vals = dict(water_level=4.0, hm0=1.2, tm10=4.5, wave_angle=0.0, q_allow=1.0,
                sea_level_rise=0.2, settlement=0.1, roughness=1.0, min_freeboard=0.5)
    return StationConditions(**{k: np.array([v]) for k, v in vals.items()})


def test_berm_built_into_the_profile_closes_the_gap_when_read_back():
    crest = 6.3
    g = Geometry(*(np.array([v]) for v in (crest, 4.0, 3.0, 2.5, 1.5, 1.0)))
    cond = _cond()
    opts = station_options(cond, g, target_margin=np.zeros(1))
    ob = opts["outer_berm"]
    assert ob["closes_gap"][0] and ob["berm_width"][0] > 3.0
    # build the idealised profile with the proposed berm, sampled like a section
    x, z = outline(g, 0, berm_width=float(ob["berm_width"][0]),
                   berm_level=float(ob["berm_level"][0]), inner_edge=-2.0,
                   span=(OFF[0], OFF[-1]))
    prof_z = np.interp(OFF, x, z)[None, :]
    prof = read_profiles(prof_z, OFF, object_width=1.0, crest_search=15.0,
                         crest_tolerance=0.1, max_nodata=0.5)
    assert abs(prof.outer_berm_width[0] - ob["berm_width"][0]) < 0.3
    assert abs(prof.outer_berm_level[0] - ob["berm_level"][0]) < 0.02
    tan_c, _ = outer_characteristic_slope(prof_z, OFF, prof, cond)
    req = required_level(cond, outer_slope=prof.outer_slope, crest_level=prof.crest_level,
                         tan_alpha=tan_c, **profile_berm(prof))
    assert abs(req.required_level[0] - crest) < 0.01
    # and without the berm the same reading falls short by the deficit the option closed
    x0, z0 = outline(g, 0, inner_edge=-2.0, span=(OFF[0], OFF[-1]))
    prof0 = read_profiles(np.interp(OFF, x0, z0)[None, :], OFF, object_width=1.0,
                          crest_search=15.0, crest_tolerance=0.1, max_nodata=0.5)
    req0 = required_level(cond, outer_slope=prof0.outer_slope, crest_level=prof0.crest_level)
    assert req0.required_level[0] > crest + 0.05
