"""Profile reading on synthetic trapezoids whose truth the test builds."""

from __future__ import annotations

import numpy as np
import pytest

from trajectory.terrain.profile import FLAGS, fill_gaps, masked_line_fit, read_profiles

STEP = 0.5
OFF = np.arange(-100, 101) * STEP
KW = dict(object_width=1.0, crest_search=15.0, crest_tolerance=0.10, max_nodata=0.5)


def trapezoid(off=OFF, *, crest=6.0, width=4.0, n_out=3.0, n_in=2.5, outer_base=1.5,
              inner_base=1.0, centre=0.0):
    """Synthetic levee: flat crest, straight slopes, flat ground (outer side at + offsets)."""
    o = off - centre
    z = np.full(o.shape, crest)
    z = np.where(o > width / 2, np.maximum(crest - (o - width / 2) / n_out, outer_base), z)
    z = np.where(o < -width / 2, np.maximum(crest - (-o - width / 2) / n_in, inner_base), z)
    return z


def test_clean_trapezoid_exact():
    z = np.array([trapezoid(), trapezoid(crest=4.0, width=6.0, n_out=4.0, centre=3.0)])
    m = read_profiles(z, OFF, **KW)
    assert m.crest_level == pytest.approx([6.0, 4.0], abs=1e-9)
    assert m.outer_slope == pytest.approx([3.0, 4.0], rel=1e-6)
    assert m.inner_slope == pytest.approx([2.5, 2.5], rel=1e-6)
    assert m.crest_width == pytest.approx([4.0, 6.0], abs=STEP + 1e-9)
    assert m.crest_offset == pytest.approx([0.0, 3.0], abs=STEP)
    # toe where the outer slope meets the foreshore: 2 + 4.5 * 3 = 15.5 m
    assert m.outer_toe[0] == pytest.approx(15.5, abs=1.5)
    assert m.outer_toe_level[0] == pytest.approx(1.5, abs=0.05)
    assert m.readable.all()


def test_noisy_trapezoids_within_tolerance():
    # LiDAR-like noise of 0.05 m (common practice: 5-15 cm per cell)
    rng = np.random.default_rng(11)
    z = np.array([trapezoid() for _ in range(300)]) + rng.normal(0, 0.05, (300, OFF.size))
    m = read_profiles(z, OFF, **KW)
    assert abs(np.mean(m.crest_level) - 6.0) < 0.03
    assert np.percentile(np.abs(m.crest_level - 6.0), 90) < 0.06
    assert np.median(m.outer_slope) == pytest.approx(3.0, rel=0.05)
    assert np.median(m.inner_slope) == pytest.approx(2.5, rel=0.05)
    assert np.median(m.noise) == pytest.approx(0.05, rel=0.3)


def test_single_cell_spike_and_post_do_not_raise_the_crest():
    z0 = trapezoid()
    z = np.array([z0, z0.copy(), z0.copy()])
    z[1, 101] += 1.2          # a post one cell wide on the crest
    z[2, 103:105] += 1.5      # a 1 m wide object at the crest edge
    m = read_profiles(z, OFF, **KW)
    assert m.crest_level == pytest.approx([6.0, 6.0, 6.0], abs=1e-9)


def test_nodata_gaps_are_filled_and_flagged_and_empty_is_no_data():
    z = np.array([trapezoid(), trapezoid(), np.full(OFF.size, np.nan)])
    z[1, 90:95] = np.nan
    m = read_profiles(z, OFF, **KW)
    assert m.flags[1] & FLAGS["nodata_gaps"]
    assert np.isfinite(m.crest_level[1])
    assert not m.readable[2] and np.isnan(m.crest_level[2])
    assert m.flags[2] & FLAGS["nodata"]


def test_fill_gaps_linear():
    z = np.array([[1.0, np.nan, 3.0, np.nan, np.nan, 6.0, np.nan]])
    assert fill_gaps(z)[0].tolist() == [1.0, 2.0, 3.0, 4.0, 5.0, 6.0, 6.0]


def test_masked_line_fit_matches_scipy_linregress():
    # reference: scipy.stats.linregress (OLS gradient, intercept and gradient's std error)
    from scipy.stats import linregress

    rng = np.random.default_rng(3)
    x = np.arange(60) * STEP
    z = 6.0 - x[None, :] / 3.0 + rng.normal(0, 0.05, (20, x.size))
    w = (rng.uniform(size=z.shape) < 0.6).astype(float)
    a, b, res, se_b, cnt = masked_line_fit(x, z, w)
    for r in range(20):
        sel = w[r] > 0
        ref = linregress(x[sel], z[r, sel])
        assert b[r] == pytest.approx(ref.slope, rel=1e-9)
        assert a[r] == pytest.approx(ref.intercept, rel=1e-9)
        assert se_b[r] == pytest.approx(ref.stderr, rel=1e-9)
    m = read_profiles(trapezoid()[None, :] + rng.normal(0, 0.05, (1, OFF.size)), OFF, **KW)
    assert m.outer_fit_count[0] >= 10 and 0 < m.outer_slope_se[0] < 0.2
