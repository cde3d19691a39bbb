"""The characteristic outer slope against values worked out by hand.

Definition: EurOtop (2018) Section 5.3.4, composite slopes (from memory): the
average slope between the point 1.5 Hm0 below the still water level and the
run-up level Ru2% above it (or the crest if lower), with the berm width B left
out: tan(alpha) = (z_up - z_low) / (L_slope - B).
"""

from __future__ import annotations

import numpy as np
import pytest
from test_profile_composite import KW, OFF, composite

from trajectory.formulas import hydraulics as hy
from trajectory.terrain.profile import characteristic_slope, read_profiles


def _slope(z, *, swl, hm0, **kw):
    m = read_profiles(z, OFF, **KW)
    args = dict(crest_level=m.crest_level, outer_edge=m.outer_edge, swl=swl, hm0=hm0,
                berm_width=m.outer_berm_width, berm_level=m.outer_berm_level,
                outer_toe=m.outer_toe, lower_slope=m.outer_lower_slope)
    args.update(kw)
    return characteristic_slope(z, OFF, **args), m


def test_composite_with_berm_crest_as_upper_point_by_hand():
    # crest 6.0 at the edge (x = 2), 1:3 down to a berm at 3.5 (x = 9.5), berm 8 m
    # (to x = 17.5), then 1:4. SWL 4.0, Hm0 1.0: lower point 4.0 - 1.5 = 2.5 m lies
    # 1.0 m below the berm, at x = 17.5 + 4 = 21.5. Without a wave period the crest
    # is the upper point. By hand: L_slope = 21.5 - 2 = 19.5, B = 8,
    # tan = (6.0 - 2.5) / (19.5 - 8) = 3.5 / 11.5
    tan, _ = _slope(composite()[None, :], swl=4.0, hm0=1.0)
    assert tan[0] == pytest.approx(3.5 / 11.5, rel=1e-9)


def test_upper_point_below_the_crest_by_hand_and_berm_outside_the_zone():
    # SWL 2.8, Hm0 0.4: band 2.2 .. 3.4 m lies wholly on the lower slope 1:4 (berm at
    # 3.5 is above it, so no berm width is taken off); Ru2% fixed by hand to the
    # first estimate 1.5 Hm0 with iterations=1: tan = 1.2 / (1.2 * 4) = 0.25
    tan, _ = _slope(composite()[None, :], swl=2.8, hm0=0.4, tm10=4.0, iterations=1)
    assert tan[0] == pytest.approx(0.25, rel=1e-9)


def test_runup_iteration_reaches_the_definition_fixed_point():
    # with Tm-1,0 the upper point is min(crest, SWL + Ru2%(tan)); the result must
    # satisfy the definition with Ru2% from EurOtop (2018) Eq. 5.2 at that slope
    z = composite(n_up=3.0, n_low=3.0, berm_width=0.0)[None, :]   # plain 1:3 slope
    swl, hm0, tm10 = 3.0, 0.5, 3.0
    tan, m = _slope(z, swl=swl, hm0=hm0, tm10=tm10, iterations=8)
    ru = float(hy.runup_2pct(hm0, tm10, tan[0]))
    assert ru < 6.0 - swl                        # run-up below the crest here
    # on a straight 1:3 slope every band gives 1/3, whatever the run-up
    assert tan[0] == pytest.approx(1 / 3, rel=1e-6)
    # on the composite profile: check the fixed point by hand from the geometry
    z = composite()[None, :]
    tan, m = _slope(z, swl=swl, hm0=hm0, tm10=tm10, iterations=12)
    up = min(6.0, swl + float(hy.runup_2pct(hm0, tm10, tan[0])))
    low = swl - 1.5 * hm0                        # 2.25 m, on the 1:4 slope
    x_low = 17.5 + (3.5 - low) * 4.0
    x_up = 2.0 + (6.0 - up) * 3.0 if up > 3.5 else 17.5 + (3.5 - up) * 4.0
    b = 8.0 if 3.5 < up else 0.0
    assert tan[0] == pytest.approx((up - low) / (x_low - x_up - b), rel=1e-3)


def test_lower_point_under_water_extends_the_lower_slope():
    # water at 2.8 m hides the lower slope; SWL 3.5, Hm0 1.0 -> lower point 2.0 m,
    # 0.8 m under the waterline: extended at 1:4 (the slope below the berm, as read
    # above the water). Waterline at x = 17.5 + 0.7 * 4 = 20.3; lower point at
    # 20.3 + 0.8 * 4 = 23.5.
    base = composite()
    z = base.copy()
    z[(OFF > 0) & (base < 2.8)] = 2.8
    z = z[None, :]
    m = read_profiles(z, OFF, **KW)
    tan = characteristic_slope(z, OFF, crest_level=m.crest_level, outer_edge=m.outer_edge,
                               swl=3.5, hm0=1.0, berm_width=m.outer_berm_width,
                               berm_level=m.outer_berm_level, outer_toe=m.outer_toe,
                               lower_slope=m.outer_lower_slope)
    assert m.outer_lower_slope[0] == pytest.approx(4.0, rel=0.02)
    # by hand: (6.0 - 2.0) / (23.5 - 2 - 8) = 4 / 13.5 (toe read within one sample)
    assert tan[0] == pytest.approx(4.0 / 13.5, rel=0.02)


def test_noise_does_not_bias_the_characteristic_slope():
    rng = np.random.default_rng(21)
    z = composite()[None, :] + rng.normal(0, 0.05, (200, OFF.size))
    tan, _ = _slope(z, swl=4.0, hm0=1.0)
    assert np.median(tan) == pytest.approx(3.5 / 11.5, rel=0.03)


def test_dry_toe_above_the_lower_point_is_the_lower_point():
    # foreshore at 1.5 m; SWL 2.0, Hm0 1.0 -> 0.5 m would be below the ground: the
    # toe (1.5 m, x = 25.5) is the lower point: (6 - 1.5) / (25.5 - 2 - 8) = 4.5 / 15.5
    tan, m = _slope(composite()[None, :], swl=2.0, hm0=1.0, toe_is_ground=np.array([True]))
    assert tan[0] == pytest.approx(4.5 / 15.5, rel=0.02)


def _conditions(n, **kw):
    from trajectory.requirement.crest_level import StationConditions

    base = dict(water_level=3.5, hm0=1.0, tm10=4.0, wave_angle=0.0, q_allow=1.0,
                sea_level_rise=0.0, settlement=0.0, roughness=1.0, min_freeboard=0.0)
    base.update(kw)
    return StationConditions(**{k: np.full(n, float(v)) for k, v in base.items()})


def test_pipeline_slope_flags_extrapolation_under_water_and_drives_the_freeboard():
    from trajectory.requirement.characteristic_slope import outer_characteristic_slope
    from trajectory.requirement.crest_level import required_level
    from trajectory.terrain.profile import FLAGS

    base = composite()
    rows = 20
    noise = np.random.default_rng(4).normal(0, 0.05, (2 * rows, OFF.size))
    z = np.array([base] * (2 * rows)) + noise
    z[rows:, (OFF > 0) & (base < 2.8)] = 2.8    # water returns at 2.8 m (lower point 2.0 m)
    m = read_profiles(z, OFF, **KW)
    assert not m.outer_water[:rows].any() and m.outer_water[rows:].all()
    assert (m.flags[rows:] & FLAGS["outer_water"]).all()
    cond = _conditions(2 * rows)
    tan, extra = outer_characteristic_slope(z, OFF, m, cond)
    assert not extra[:rows].any() and extra[rows:].all()
    # same geometry under the water: the extended slope gives the dry profile's value
    # (only 0.7 m of the lower slope shows above the water, so allow 5 %)
    assert np.median(tan[rows:]) == pytest.approx(np.median(tan[:rows]), rel=0.05)
    # the freeboard is EurOtop's inverse on this slope, not on the upper slope's 1/n
    req = required_level(cond, outer_slope=m.outer_slope, crest_level=m.crest_level,
                         tan_alpha=tan)
    fb = hy.freeboard_for_discharge(1.0 / 1000.0, 1.0, 4.0, tan, gamma_f=1.0,
                                    gamma_beta=hy.gamma_beta_overtopping(0.0))
    assert req.freeboard_eurotop == pytest.approx(fb, rel=1e-9)
    plain = required_level(cond, outer_slope=m.outer_slope, crest_level=m.crest_level)
    assert plain.freeboard_eurotop == pytest.approx(
        hy.freeboard_for_discharge(1.0 / 1000.0, 1.0, 4.0, 1.0 / m.outer_slope, gamma_f=1.0,
                                   gamma_beta=hy.gamma_beta_overtopping(0.0)), rel=1e-9)
    # a flatter average slope (berm left out, 1:4 below) lowers the freeboard
    assert (req.freeboard_eurotop < plain.freeboard_eurotop).all()
