"""The pieces of the profile reading against constructed truth and reference libraries.

- gap filling against ``numpy.interp`` row by row (linear, ends held at the nearest value);
- the noise estimate against ``scipy.stats.median_abs_deviation`` of the second
  differences (centre 0, normal scale) and against the sigma of the noise a test adds;
- object removal on ground whose posts the test plants (narrower ones go, wider ones
  stay, the ground around keeps its measured values);
- the running median against ``scipy.ndimage.median_filter``;
- the characteristic slope (EurOtop 2018, Section 5.3.4) on composite profiles drawn as
  polylines with their vertices on the sample grid, so the test knows where every
  level lies: the slope from the definition, worked out per station in the test;
- the length of a polyline above a level and the run around a cell, from their
  definitions, sample by sample.
"""

from __future__ import annotations

import dataclasses
import warnings

import numpy as np
import pytest
from scipy import ndimage, stats
from test_profile_composite import composite

from trajectory.formulas.hydraulics import runup_2pct
from trajectory.terrain import profile as pr
from trajectory.terrain.profile import ProfileMetrics

KW = dict(object_width=1.0, crest_search=15.0, crest_tolerance=0.10, max_nodata=0.5)


def _offsets(step: float, half: float) -> np.ndarray:
    return np.arange(-round(half / step), round(half / step) + 1) * step


# ------------------------------------------------------------------ gap filling
@pytest.mark.parametrize("dtype", [np.float64, np.float32])
def test_fill_gaps_is_numpy_interp_row_by_row(dtype):
    rng = np.random.default_rng(21)
    z = rng.normal(0.0, 3.0, (60, 37)).astype(dtype)
    z[rng.random(z.shape) < 0.3] = np.nan
    z[4] = np.nan
    z[7, :30] = np.nan
    z[8, 3:] = np.nan
    z[9] = rng.normal(size=37)                # no gap at all
    got = pr.fill_gaps(z)
    assert got.dtype == np.float64
    j = np.arange(z.shape[1])
    for i, row in enumerate(z.astype(np.float64)):
        ok = np.isfinite(row)
        if not ok.any():
            assert np.isnan(got[i]).all()     # nothing to fill from
            continue
        # float32 input is interpolated at its own precision
        tol = 1e-12 if dtype == np.float64 else 1e-6
        np.testing.assert_allclose(got[i], np.interp(j, j[ok], row[ok]), rtol=0, atol=tol)


# ------------------------------------------------------------------ noise
def _mad_reference(z: np.ndarray) -> np.ndarray:
    d2 = z[:, 2:] - 2 * z[:, 1:-1] + z[:, :-2]
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        mad = stats.median_abs_deviation(d2, axis=1, center=lambda x, axis: 0.0 * x.mean(axis),
                                         scale="normal", nan_policy="omit")
    # white noise of std s has second differences of std s * sqrt(6)
    return np.asarray(mad) / np.sqrt(6.0)


def test_robust_noise_is_the_mad_of_second_differences():
    rng = np.random.default_rng(22)
    for m in (40, 41, 3):                     # even and odd numbers of second differences
        z = np.round(rng.normal(0.0, 0.05, (30, m)), 2)   # rounded: ties in the median
        z[3, 1] = np.nan
        z[4] = np.nan
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", RuntimeWarning)
            got = pr.robust_noise(z, 0.5)
        ref = _mad_reference(z)
        np.testing.assert_array_equal(np.isnan(got), np.isnan(ref))
        ok = np.isfinite(ref)
        # the module's 1.4826 is scipy's 1 / 0.67449 (the normal scale) to 5 digits
        np.testing.assert_allclose(got[ok], ref[ok], rtol=2e-6, atol=1e-15)


def test_robust_noise_finds_the_noise_added_to_a_levee_and_ignores_its_slopes():
    rng = np.random.default_rng(27)
    off = _offsets(0.5, 50.0)
    base = composite(off)                     # crest, slopes, berm: piecewise linear
    assert pr.robust_noise(base[None, :], 0.5)[0] < 0.01
    for sigma in (0.02, 0.05, 0.12):
        z = base + rng.normal(0.0, sigma, (200, off.size))
        est = pr.robust_noise(z, 0.5)
        assert np.median(est) == pytest.approx(sigma, rel=0.05)


# ------------------------------------------------------------------ objects
def test_remove_objects_takes_narrow_posts_and_keeps_wide_shapes():
    rng = np.random.default_rng(23)
    step, m = 0.5, 120
    ground = np.round(rng.normal(0.0, 0.02, (40, m)), 3)
    z = ground.copy()
    narrow = np.zeros_like(z, bool)
    for i in range(40):                       # posts of 1-2 cells (0.5-1.0 m), 0.1-2 m high,
        for j in (10, 30, 50) + rng.integers(-3, 4, 3):   # standing apart
            w = int(rng.integers(1, 3))
            z[i, j:j + w] += rng.uniform(0.1, 2.0)
            narrow[i, j:j + w] = True
    z[:, 80:92] += 1.0                        # a 6 m wide shape (a dam on the crest)
    noise = pr.robust_noise(ground, step)
    out = pr.remove_objects(z, step, object_width=1.0, noise=noise)
    # the posts are gone: back to the ground within the noise
    assert np.abs(out[narrow] - ground[narrow]).max() < 0.1
    # the wide shape stays, and the ground away from the objects keeps its measured values
    np.testing.assert_array_equal(out[:, 83:89], z[:, 83:89])
    far = ~ndimage.binary_dilation(narrow, structure=np.ones((1, 5), bool))
    far[:, 78:94] = False
    # (a noise spike rising 4 sigma above the local opening counts as an object too)
    same = out[far] == z[far]
    assert same.mean() > 0.99
    assert np.abs(out[far] - z[far]).max() < 0.15
    # width 0 leaves everything
    np.testing.assert_array_equal(pr.remove_objects(z, step, object_width=0.0, noise=noise), z)


def test_running_median_of_three_is_scipys():
    # reference: scipy.ndimage.median_filter, size 3 along the rows, mode "nearest"
    rng = np.random.default_rng(24)
    for m in (2, 3, 7, 201):
        x = np.round(rng.normal(0.0, 1.0, (20, m)), 1)   # ties
        x[0] = np.inf
        x[1, ::2] = -np.inf
        np.testing.assert_array_equal(
            pr._median3(x), ndimage.median_filter(x, size=(1, 3), mode="nearest"))


# ------------------------------------------------------------------ definitions
def test_length_above_is_the_polyline_length_above_the_level():
    rng = np.random.default_rng(25)
    s = np.round(np.cumsum(-np.abs(rng.normal(0.0, 0.2, (50, 60))), axis=1) + 6.0, 1)
    s[:, 45:] = np.nan                        # beyond the section's end
    s[3, 10:20] = 2.0                         # a level run
    stop = rng.integers(0, 60, 50)

    def by_definition(level):
        out = np.zeros(50)
        for i in range(50):
            for j in range(min(stop[i], 59)):
                a, b, lv = s[i, j], s[i, j + 1], level[i]
                if not (np.isfinite(a) and np.isfinite(b)) or np.isnan(lv):
                    continue
                if a == b:
                    out[i] += float(a > lv)
                else:                          # the share of the segment above lv
                    out[i] += min(max((max(a, b) - lv) / abs(a - b), 0.0), 1.0)
        return out

    length = pr._lengths_above(s, stop)
    for level in (rng.uniform(-5.0, 7.0, 50), np.full(50, 2.0), np.full(50, np.nan),
                  np.where(rng.random(50) < 0.5, np.inf, -np.inf)):
        np.testing.assert_allclose(length(level), by_definition(level), rtol=0, atol=1e-12)
        np.testing.assert_allclose(pr._length_above(s, level, stop), by_definition(level),
                                   rtol=0, atol=1e-12)


def test_run_around_is_the_true_run_holding_the_centre():
    rng = np.random.default_rng(26)
    mask = rng.random((200, 30)) < 0.7
    mask[0], mask[1] = True, False
    centre = rng.integers(0, 30, 200)           # on a True cell or not
    lo, hi = pr._run_around(mask, centre)
    for i in range(200):
        c = centre[i]
        if not mask[i, c]:
            assert hi[i] < lo[i]                # an empty run
            continue
        a = c
        while a > 0 and mask[i, a - 1]:
            a -= 1
        b = c
        while b < 29 and mask[i, b + 1]:
            b += 1
        assert (lo[i], hi[i]) == (a, b)


# ------------------------------------------------------------------ characteristic slope
def _polyline_profile(rng, off):
    """A composite outer side drawn as vertices on the sample grid, and the vertices."""
    step = float(off[1] - off[0])
    snap = lambda x: round(x / step) * step    # noqa: E731
    crest = rng.uniform(4.0, 8.0)
    edge = snap(rng.uniform(1.5, 4.0))
    knee = snap(edge + rng.uniform(2.0, 6.0))                # steep upper part
    z_knee = crest - (knee - edge) / rng.uniform(1.8, 2.5)
    berm = rng.random() < 0.6
    b0 = snap(knee + rng.uniform(2.0, 8.0))
    z_b = z_knee - (b0 - knee) / rng.uniform(2.5, 4.0)
    bw = snap(rng.uniform(3.0, 10.0)) if berm else 0.0
    b1 = b0 + bw
    toe = snap(b1 + rng.uniform(6.0, 20.0))
    z_toe = z_b - (toe - b1) / rng.uniform(3.0, 5.0)
    vx = np.array([-edge - 10.0, -edge, edge, knee, b0, b1, toe, off[-1] + step])
    vz = np.array([crest - 3.0, crest, crest, z_knee, z_b, z_b, z_toe, z_toe])
    z = np.interp(off, vx, vz)
    return z, dict(crest=crest, edge=edge, berm=(z_b, bw) if berm else None, vx=vx, vz=vz,
                   toe=toe, z_toe=z_toe)


def _x_of(level, g):
    """Offset where the drawn outer side passes ``level`` (on its falling part)."""
    vx, vz = g["vx"][1:7], g["vz"][1:7]
    for k in range(len(vx) - 1):
        hi, lo = vz[k], vz[k + 1]
        if hi >= level >= lo and hi > lo:
            return vx[k] + (hi - level) / (hi - lo) * (vx[k + 1] - vx[k])
    raise AssertionError("level outside the drawn slope")


def _tan_by_definition(g, swl, hm0, tm10=None):
    """EurOtop (2018) 5.3.4: (z_up - z_low) / (horizontal run - berm width in between)."""
    low = swl - 1.5 * hm0
    up = g["crest"] if tm10 is None else min(g["crest"], swl + 1.5 * hm0)
    tan = np.nan
    for _ in range(4 if tm10 is not None else 1):
        run = _x_of(low, g) - _x_of(up, g)
        if g["berm"] is not None and low < g["berm"][0] < up:
            run -= g["berm"][1]
        tan = (up - low) / run
        if tm10 is not None:
            up = min(g["crest"], swl + float(runup_2pct(hm0, tm10, tan)))
    return tan


@pytest.mark.parametrize("waves", ["crest_as_upper_point", "runup_iteration"])
def test_characteristic_slope_on_drawn_composites_is_the_definition(waves):
    rng = np.random.default_rng(31 if waves == "crest_as_upper_point" else 32)
    off = _offsets(0.5, 60.0)
    rows, geo, swl, hm0 = [], [], [], []
    while len(rows) < 60:
        z, g = _polyline_profile(rng, off)
        h = rng.uniform(0.3, 1.5)
        s = rng.uniform(g["z_toe"] + 1.5 * h + 0.2, g["crest"] - 0.3)
        rows.append(z)
        geo.append(g)
        swl.append(s)
        hm0.append(h)
    z = np.array(rows)
    swl, hm0 = np.array(swl), np.array(hm0)
    tm10 = rng.uniform(3.0, 7.0, len(rows)) if waves == "runup_iteration" else None
    berm_w = np.array([g["berm"][1] if g["berm"] else np.nan for g in geo])
    berm_l = np.array([g["berm"][0] if g["berm"] else np.nan for g in geo])
    tan = pr.characteristic_slope(
        z, off, crest_level=np.array([g["crest"] for g in geo]),
        outer_edge=np.array([g["edge"] for g in geo]), swl=swl, hm0=hm0,
        berm_width=berm_w, berm_level=berm_l, outer_toe=np.array([g["toe"] for g in geo]),
        tm10=tm10, object_width=0.0)
    want = np.array([_tan_by_definition(g, swl[i], hm0[i],
                                        None if tm10 is None else tm10[i])
                     for i, g in enumerate(geo)])
    assert np.isfinite(want).all()
    np.testing.assert_allclose(tan, want, rtol=1e-9)


def test_characteristic_slope_extends_the_lower_slope_below_the_section_end():
    # the survey ends at 2.0 m on a 1:4 slope; the lower point (SWL - 1.5 Hm0 = 1.0 m)
    # lies 1 m lower: 4 m further out along the extended lower slope
    off = _offsets(0.5, 20.0)
    z = np.interp(off, [-20.0, -2.0, 2.0, 20.0], [2.0, 6.5, 6.5, 2.0])[None, :]
    tan = pr.characteristic_slope(z, off, crest_level=np.array([6.5]),
                                  outer_edge=np.array([2.0]), swl=np.array([2.5]),
                                  hm0=np.array([1.0]), berm_width=np.array([np.nan]),
                                  lower_slope=np.array([4.0]), object_width=0.0)
    # from the crest edge (6.5 m at 2 m) to the lower point (1.0 m at 20 + 4 = 24 m)
    assert tan[0] == pytest.approx((6.5 - 1.0) / (24.0 - 2.0), rel=1e-12)


# ------------------------------------------------------------------ the kept matrix
def _batch(rs: int) -> tuple[np.ndarray, np.ndarray]:
    rng = np.random.default_rng(rs)
    off = _offsets(0.5, 50.0)
    z = np.array([composite(off - rng.uniform(-3.0, 3.0), crest=rng.uniform(4.0, 8.0))
                  for _ in range(40)])
    z = np.round(z + rng.normal(0.0, 0.03, z.shape), 3)
    z[rng.random(z.shape) < 0.02] = np.nan
    return z, off


def test_pipeline_slope_is_the_same_with_and_without_the_kept_matrix():
    from test_characteristic_slope import _conditions

    from trajectory.requirement.characteristic_slope import outer_characteristic_slope

    z, off = _batch(11)
    m = pr.read_profiles(z, off, **KW)
    cond = _conditions(z.shape[0], water_level=3.0, hm0=0.8)
    kept = outer_characteristic_slope(z, off, m, cond)
    # dataclasses.replace makes a plain copy of the fields: the slope is made afresh
    fresh = outer_characteristic_slope(z, off, dataclasses.replace(m), cond)
    for a, b in zip(kept, fresh, strict=True):
        np.testing.assert_array_equal(a, b)


def test_the_kept_matrix_is_only_used_for_the_profiles_it_was_made_of():
    z, off = _batch(12)
    m = pr.read_profiles(z, off, **KW)
    assert pr.cleaned_profiles(m, z.copy(), off, object_width=1.0) is not None
    changed = z.copy()
    changed[0, 5] += 0.01
    assert pr.cleaned_profiles(m, changed, off, object_width=1.0) is None
    assert pr.cleaned_profiles(m, z, off, object_width=2.0) is None
    assert pr.cleaned_profiles(m, z, off * 2.0, object_width=1.0) is None
    assert pr.cleaned_profiles(m, z[:10], off, object_width=1.0) is None
    assert pr.cleaned_profiles(dataclasses.replace(m), z, off, object_width=1.0) is None
    # the kept matrix is not a field, so it is no output column
    assert "_cleaned" not in ProfileMetrics.__dataclass_fields__
