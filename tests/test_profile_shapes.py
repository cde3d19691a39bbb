"""Profile reading on the shapes of real dikes, each built with its truth.

Rounded shoulders above a composite slope, a wide inner platform, a wide crest with a
cross-fall (a road on top), holes left by ground filtering on the crest, the sea as
nodata beyond a foreshore strip and a survey that ends on the slope. The terrain is
drawn exactly, put on a grid of 0.5 m cells with LiDAR-like noise of 0.03 m per cell
(common practice: 2-5 cm on hard open ground) and read back by bilinear sampling
between cell centres (reference: scipy.ndimage.map_coordinates, order 1), as the
sections sample a DEM.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import ndimage

from trajectory.terrain.profile import FLAGS, characteristic_slope, read_profiles

CELL = 0.5
KW = dict(object_width=1.0, crest_search=15.0, crest_tolerance=0.10, max_nodata=0.5)


def sampled(shape, *, rows: int = 40, half: float = 50.0, sigma: float = 0.03,
            rs: int = 0) -> tuple[np.ndarray, np.ndarray]:
    """``rows`` noisy DEM rows of the exact ``shape(x)``, sampled bilinearly a quarter cell off."""
    rng = np.random.default_rng(rs)
    centres = np.arange(-half - 2 * CELL, half + 2 * CELL + 1e-9, CELL)
    grid = shape(centres)[None, :] + rng.normal(0.0, sigma, (rows, centres.size))
    off = np.arange(-half, half + 1e-9, CELL)
    col = (off + 0.25 * CELL - centres[0]) / CELL
    rr, cc = np.meshgrid(np.arange(rows), col, indexing="ij")
    # NaN cells spread to every sample they touch, as nodata does in bilinear sampling
    z = ndimage.map_coordinates(grid, [rr, cc], order=1, mode="nearest", cval=np.nan)
    return z, off


def slope_n(z, off, m, *, swl: float, hm0: float) -> np.ndarray:
    """n of the characteristic outer slope 1:n per row, from the profile reading ``m``."""
    n = z.shape[0]
    tan = characteristic_slope(z, off, crest_level=m.crest_level, outer_edge=m.outer_edge,
                               swl=np.full(n, swl), hm0=np.full(n, hm0),
                               berm_width=m.outer_berm_width, berm_level=m.outer_berm_level,
                               outer_toe=m.outer_toe, toe_is_ground=m.outer_toe_dry,
                               lower_slope=m.outer_lower_slope)
    return 1.0 / tan


def _round(x, z, *, edge: float, crest: float, cot: float, radius: float, sign: int):
    """Round the corner between the crest (level ``crest``) and a 1:cot flank at ``edge``."""
    theta = np.arctan(1.0 / cot)
    t = radius * np.tan(theta / 2)
    u = sign * (x - edge) + t              # distance from the arc's start towards the flank
    on = (u >= 0) & (u <= radius * np.sin(theta))
    arc = crest - radius + np.sqrt(np.maximum(radius**2 - u**2, 0.0))
    return np.where(on, arc, z)


def rounded_composite(x):
    """Crest 6.0 m, 4 m wide between the virtual edges; outer 1:2 over the top 1.5 m to a
    knee at 4.5 m, then 1:3.4 to the ground at 0; inner 1:2.5; shoulders rounded, R 1.5 m."""
    x = np.asarray(x, float)
    out = np.where(x <= 5.0, 6.0 - (x - 2.0) / 2.0, 4.5 - (x - 5.0) / 3.4)
    inn = 6.0 - (-x - 2.0) / 2.5
    z = np.where(x > 2.0, out, np.where(x < -2.0, inn, 6.0))
    z = np.maximum(z, 0.0)
    z = _round(x, z, edge=2.0, crest=6.0, cot=2.0, radius=1.5, sign=+1)
    return _round(x, z, edge=-2.0, crest=6.0, cot=2.5, radius=1.5, sign=-1)


def test_rounded_shoulder_above_a_composite_slope():
    z, off = sampled(rounded_composite, rs=1)
    m = read_profiles(z, off, **KW)
    assert m.readable.all()
    # the edges on the shoulders (the virtual intersections of crest and upper segment)
    for got, truth in ((m.outer_edge, 2.0), (m.inner_edge, -2.0), (m.crest_width, 4.0)):
        assert np.abs(got - truth).max() <= 0.5
    assert np.abs(m.crest_level - 6.0).max() <= 0.05
    # the upper segment is reported as the steepest, the lower one as the lowest
    assert np.median(m.outer_slope_steepest) == pytest.approx(2.0, abs=0.2)
    assert np.median(m.outer_lower_slope) == pytest.approx(3.4, abs=0.2)
    # EurOtop (2018) Section 5.3.4: average slope between SWL - 1.5 Hm0 and the crest
    # (no period given: the crest is the upper point). SWL 3.5 m, Hm0 1.0 m: from level
    # 2.0 (x = 5 + 2.5 x 3.4 = 13.5 m on the true geometry) to 6.0 (the edge, x = 2 m)
    truth_n = (13.5 - 2.0) / (6.0 - 2.0)
    got = slope_n(z, off, m, swl=3.5, hm0=1.0)
    assert np.abs(got - truth_n).max() <= 0.1
    # never gentler than the truth by more than that (the unsafe side)
    assert (got - truth_n).max() <= 0.1


def inner_platform(x):
    """Crest 7.0 m, 4 m wide, outer 1:3 to 0; inner 1:3 down 1.4 m to a 33 m platform at
    5.6 m, then 1:3 down 5.6 m to the ground at 0 (inner toe at -56 m)."""
    x = np.asarray(x, float)
    d = -x
    inn = np.where(d <= 2.0 + 4.2, 7.0 - (d - 2.0) / 3.0, 5.6)
    inn = np.where(d > 6.2 + 33.0, 5.6 - (d - 39.2) / 3.0, inn)
    out = 7.0 - (x - 2.0) / 3.0
    z = np.where(x > 2.0, out, np.where(x < -2.0, inn, 7.0))
    return np.maximum(z, 0.0)


def test_wide_inner_platform_is_a_berm_and_the_toe_is_below_it():
    z, off = sampled(inner_platform, half=70.0, rs=2)
    m = read_profiles(z, off, **KW)
    assert m.readable.all()
    assert np.abs(m.inner_berm_level - 5.6).max() <= 0.05
    assert np.abs(m.inner_berm_width - 33.0).max() <= 2.0
    assert np.abs(m.inner_toe + 56.0).max() <= 1.5
    assert np.abs(m.inner_toe_level).max() <= 0.1
    assert np.median(m.inner_slope) == pytest.approx(3.0, abs=0.3)


def wide_crest(x):
    """A 20 m crest (a road) falling 0.8 m towards the water, from 6.0 m at the land-side
    edge (-10 m) to 5.2 m at the water-side edge (+10 m); flanks 1:1.5 (outer) and 1:2
    (inner) down to the ground at 1.0 m."""
    x = np.asarray(x, float)
    top = 6.0 - 0.8 * (x + 10.0) / 20.0
    z = np.where(x > 10.0, 5.2 - (x - 10.0) / 1.5, top)
    z = np.where(x < -10.0, 6.0 - (-x - 10.0) / 2.0, z)
    return np.maximum(z, 1.0)


def test_wide_crest_with_a_cross_fall():
    z, off = sampled(wide_crest, rs=3)
    m = read_profiles(z, off, **KW)
    assert m.readable.all()
    assert np.abs(m.crest_width - 20.0).max() <= 1.0
    assert np.abs(m.outer_slope - 1.5).max() <= 0.3
    assert np.abs(m.inner_slope - 2.0).max() <= 0.3
    assert np.abs(m.crest_level_outer - 5.2).max() <= 0.05
    # the lower of mean and water-side edge enters the margin
    assert np.abs(m.crest_mean - 5.6).max() <= 0.05
    assert np.abs(m.crest_level - 5.2).max() <= 0.05
    assert np.abs(m.outer_toe - (10.0 + 4.2 * 1.5)).max() <= 1.0


def trapezoid6(x):
    """Crest 6.0 m, 6 m wide; slopes 1:3 (outer) and 1:2.5 (inner) to the ground at 1.0 m."""
    x = np.asarray(x, float)
    z = np.where(x > 3.0, 6.0 - (x - 3.0) / 3.0, np.where(x < -3.0, 6.0 - (-x - 3.0) / 2.5,
                                                           6.0))
    return np.maximum(z, 1.0)


@pytest.mark.parametrize("hole", [2.0, 4.0, 6.0])
def test_holes_on_the_crest_are_flagged_and_never_read_as_a_lowering(hole):
    def holed(x):
        z = trapezoid6(x)
        # a parked car removed by the ground filter; the chord across it would sag by
        # the hole's length on a rounded crest: draw the crest dipping where unseen
        return np.where(np.abs(x - 0.5) < hole / 2, np.nan, z)

    z, off = sampled(holed, rs=int(hole))
    m = read_profiles(z, off, **KW)
    flagged = (m.flags & FLAGS["crest_interpolated"]) > 0
    assert flagged.all()
    if hole >= 6.0:
        assert not m.readable.any() and np.isnan(m.crest_level).all()
    if hole <= 2.0:
        assert m.readable.all()
    # where read (a hole over less than half the crest), from the measured samples only:
    # within 0.05 m, never a chord; a hole over more than half the crest is no_data
    ok = m.readable
    assert np.abs(m.crest_level[ok] - 6.0).max(initial=0.0) <= 0.05
    assert np.isnan(m.crest_level[~ok]).all()


def test_no_hole_no_flag_and_no_lowering():
    z, off = sampled(trapezoid6, rs=9)
    m = read_profiles(z, off, **KW)
    assert not ((m.flags & FLAGS["crest_interpolated"]) > 0).any()
    assert np.abs(m.crest_level - 6.0).max() <= 0.05


def foreshore(x):
    """Crest 6.0 m, 4 m wide, outer 1:3 down to a 4 m strip at 2.0 m (x = 14-18 m), then the
    sea (nodata); inner 1:2.5 to the ground at 1.0 m."""
    x = np.asarray(x, float)
    z = np.where(x > 2.0, np.maximum(6.0 - (x - 2.0) / 3.0, 2.0), 6.0)
    z = np.where(x < -2.0, np.maximum(6.0 - (-x - 2.0) / 2.5, 1.0), z)
    return np.where(x > 18.0, np.nan, z)


@pytest.mark.parametrize("half", [50.0, 70.0])
def test_sea_as_nodata_beyond_a_foreshore_strip(half):
    z, off = sampled(foreshore, half=half, rs=int(half))
    # the design still water level (4.5 m) makes the nodata's edge at 2.0 m plausible water
    m = read_profiles(z, off, **KW, water_level=4.5)
    assert m.readable.all()
    assert np.abs(m.outer_toe - 14.0).max() <= 1.0
    assert np.abs(m.outer_toe_level - 2.0).max() <= 0.05
    assert np.isnan(m.outer_berm_level).all()
    assert m.outer_water.all() and m.outer_toe_dry.all()
    assert (m.nodata_fraction < 0.05).all()
    # without a water level the strip is still the toe (not a berm, not no_data)
    m2 = read_profiles(z, off, **KW)
    assert m2.readable.all() and np.isnan(m2.outer_berm_level).all()
    assert np.abs(m2.outer_toe - 14.0).max() <= 1.0


def test_a_survey_that_ends_on_the_slope_is_truncated_not_water():
    def ends(x):
        z = foreshore(np.asarray(x, float))
        return np.where(x > 8.0, np.nan, np.nan_to_num(z, nan=2.0))  # ends at level 4.0

    z, off = sampled(ends, rs=5)
    m = read_profiles(z, off, **KW, water_level=3.0)
    assert m.readable.all()
    assert ((m.flags & FLAGS["outer_truncated"]) > 0).all()
    assert not m.outer_water.any() and not m.outer_toe_dry.any()
    assert np.median(m.outer_slope) == pytest.approx(3.0, abs=0.3)


def straight_into_water(x):
    """Crest 6.0 m, 4 m wide; outer 1:3 straight down into the sea, nodata below 2.0 m
    (from 14 m out); inner 1:2.5 to the ground at 1.0 m."""
    x = np.asarray(x, float)
    z = np.where(x > 2.0, 6.0 - (x - 2.0) / 3.0, 6.0)
    z = np.where(x < -2.0, np.maximum(6.0 - (-x - 2.0) / 2.5, 1.0), z)
    return np.where(x > 14.0, np.nan, z)


@pytest.mark.parametrize("rs", range(6))
def test_a_short_knee_near_the_data_end_does_not_make_the_slope_below_gentler(rs):
    # SWL 3.0 m, Hm0 2.0 m: the lower point of the characteristic slope (SWL - 1.5 Hm0 =
    # 0.0 m, EurOtop 2018 Section 5.3.4) lies 2 m below the last dry sample, so the slope
    # is extended there with the lowest piece read. Noise sometimes resolves a "knee" a
    # metre above the waterline; a gentler piece there must not flatten the extension
    # (a gentler slope gives a lower run-up: the unsafe side). The truth is 1:3.
    z, off = sampled(straight_into_water, rows=200, rs=100 + rs)
    m = read_profiles(z, off, **KW, water_level=3.0)
    assert m.readable.all() and m.outer_water.all()
    got = slope_n(z, off, m, swl=3.0, hm0=2.0)
    assert np.median(got) == pytest.approx(3.0, abs=0.1)
    # the worst station no more than 0.15 gentler than the truth
    assert got.max() <= 3.15
