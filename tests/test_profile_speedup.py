"""The profile reading after its speed-up gives the results of the straightforward code.

Reference: the previous implementation of the pieces of :mod:`trajectory.profile` that
the speed-up changed (fill, noise, objects, characteristic slope), kept below as a
private copy,
and scipy (``signal.savgol_filter``, ``ndimage.median_filter``) for the pieces that
replace a scipy call. Profiles are synthetic composites whose geometry the test draws
(slopes, berms, crest objects, noise, nodata gaps, water), plus sections of the
synthetic levee of :mod:`trajectory.synthetic`.
"""

from __future__ import annotations

import dataclasses
import warnings

import numpy as np
import pytest
from scipy import ndimage
from test_profile_composite import composite

from trajectory import profile as pr
from trajectory.hydraulics import runup_2pct
from trajectory.profile import OBJECT_MIN_HEIGHT, ProfileMetrics
from trajectory.synthetic import LeveeSpec, levee_surface

# ------------------------------------------------------------------ reference
# The previous implementation, unchanged but for names (prefix _ref) and docstrings.

def _ref_fill_gaps(z: np.ndarray) -> np.ndarray:
    """Fill NaN samples by linear interpolation along each row (ends: nearest)."""
    n, m = z.shape
    valid = ~np.isnan(z)
    j = np.broadcast_to(np.arange(m), (n, m))
    left = np.maximum.accumulate(np.where(valid, j, -1), axis=1)
    right = np.minimum.accumulate(np.where(valid, j, m)[:, ::-1], axis=1)[:, ::-1]
    has_l, has_r = left >= 0, right < m
    li, ri = np.clip(left, 0, m - 1), np.clip(right, 0, m - 1)
    zl = np.take_along_axis(z, li, 1)
    zr = np.take_along_axis(z, ri, 1)
    span = np.where(ri > li, ri - li, 1)
    t = (j - li) / span
    both = np.where(ri > li, zl + t * (zr - zl), zl)
    out = np.where(has_l & has_r, both, np.where(has_l, zl, zr))
    return np.where(valid, z, out)


def _ref_robust_noise(z: np.ndarray, step: float) -> np.ndarray:
    """Per-row noise estimate from the median absolute second difference."""
    d2 = z[:, 2:] - 2 * z[:, 1:-1] + z[:, :-2]
    with np.errstate(all="ignore"):
        mad = np.nanmedian(np.abs(d2), axis=1)
    return 1.4826 * mad / np.sqrt(6.0)


def _ref_remove_objects(z: np.ndarray, step: float, *, object_width: float,
                   noise: np.ndarray) -> np.ndarray:
    """Remove objects narrower than ``object_width`` standing on the ground."""
    if object_width <= 0:
        return z
    k = int(np.ceil(object_width / step)) + 2
    opened = ndimage.grey_opening(z, size=(1, k), mode="nearest")
    thr = np.maximum(OBJECT_MIN_HEIGHT, 4.0 * np.nan_to_num(noise, nan=0.0))[:, None]
    obj = (z - opened) > thr
    # widen by one cell: the flanks of an object are blurred by the sampling too
    obj = ndimage.binary_dilation(obj, structure=np.ones((1, 3), bool))
    return np.where(obj, opened, z)


def _ref_run_around(mask: np.ndarray, centre: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """First and last index of the True-run of ``mask`` containing ``centre`` per row."""
    n, m = mask.shape
    j = np.broadcast_to(np.arange(m), (n, m))
    false_left = np.maximum.accumulate(np.where(~mask, j, -1), axis=1)
    false_right = np.minimum.accumulate(np.where(~mask, j, m)[:, ::-1], axis=1)[:, ::-1]
    c = centre[:, None]
    lo = np.take_along_axis(false_left, c, 1)[:, 0] + 1
    hi = np.take_along_axis(false_right, c, 1)[:, 0] - 1
    return lo, hi


def _ref_side(d: np.ndarray, start: np.ndarray, direction: int, length: int) -> np.ndarray:
    """Samples going away from ``start`` (per row) in ``direction``; NaN beyond the end."""
    n, m = d.shape
    k = np.arange(length)
    idx = start[:, None] + direction * k[None, :]
    ok = (idx >= 0) & (idx < m)
    vals = np.take_along_axis(d, np.clip(idx, 0, m - 1), 1)
    return np.where(ok, vals, np.nan)


def _ref_masked_line_fit(x: np.ndarray, z: np.ndarray, w: np.ndarray
                    ) -> tuple[np.ndarray, ...]:
    """Ordinary least-squares line z = a + b x per row over the samples where w = 1."""
    zv = np.nan_to_num(z)
    cnt = w.sum(1)
    sx = (w * x).sum(1)
    sz = (w * zv).sum(1)
    sxx = (w * x**2).sum(1)
    sxz = (w * x * zv).sum(1)
    with np.errstate(all="ignore"):
        den = cnt * sxx - sx**2
        b = (cnt * sxz - sx * sz) / den
        a = (sz - b * sx) / cnt
        res = np.sqrt((w * (zv - a[:, None] - b[:, None] * x) ** 2).sum(1) / cnt)
        sxx_c = sxx - sx**2 / cnt
        se_b = np.sqrt(res**2 * cnt / (cnt - 2) / sxx_c)
    few = cnt < 3
    return (np.where(few, np.nan, a), np.where(few, np.nan, b), np.where(few, np.nan, res),
            np.where(few, np.nan, se_b), cnt)


def _ref_length_above(s: np.ndarray, level: np.ndarray, stop: np.ndarray) -> np.ndarray:
    """Length (in samples) of the polyline ``s[0..stop]`` per row lying above ``level``."""
    a, b = s[:, :-1], s[:, 1:]
    lv = level[:, None]
    with np.errstate(all="ignore"):
        frac = np.where(a == b, (a > lv).astype(float),
                        np.clip((np.maximum(a, b) - lv) / np.abs(a - b), 0.0, 1.0))
    j = np.arange(a.shape[1])[None, :]
    return np.where((j < stop[:, None]) & np.isfinite(frac), frac, 0.0).sum(axis=1)


def _ref_characteristic_slope(
    z: np.ndarray, offsets: np.ndarray, *, crest_level: np.ndarray, outer_edge: np.ndarray,
    swl: np.ndarray, hm0: np.ndarray, berm_width: np.ndarray,
    berm_level: np.ndarray | None = None, outer_toe: np.ndarray | None = None,
    toe_is_ground: np.ndarray | None = None, lower_slope: np.ndarray | None = None,
    tm10: np.ndarray | None = None, gamma_f: np.ndarray | float = 1.0,
    gamma_beta: np.ndarray | float = 1.0, object_width: float = 1.0, iterations: int = 4,
    approach: str = "design",
) -> np.ndarray:
    """Characteristic (average) outer slope tan(alpha) of a composite profile."""
    n, m = z.shape
    step = float(offsets[1] - offsets[0])
    full = lambda v: np.broadcast_to(np.asarray(v, dtype=float), (n,)).astype(float)  # noqa: E731
    crest, edge, swl, hm0 = full(crest_level), full(outer_edge), full(swl), full(hm0)
    bw = np.nan_to_num(full(berm_width), nan=0.0)
    bl = full(np.nan) if berm_level is None else full(berm_level)
    filled = _ref_fill_gaps(z)
    empty = np.isnan(filled).all(axis=1)
    filled[empty] = 0.0
    clean = _ref_remove_objects(filled, step, object_width=object_width,
                               noise=_ref_robust_noise(filled, step))
    ok = np.isfinite(crest) & np.isfinite(edge) & ~empty
    e = np.clip(np.rint((np.nan_to_num(edge) - offsets[0]) / step).astype(int), 0, m - 1)
    s = _ref_side(clean, e, +1, m)
    last = np.isfinite(s).sum(axis=1) - 1
    if outer_toe is None:
        stop = last
    else:
        toe_d = np.nan_to_num(full(outer_toe) - edge, nan=np.inf)
        stop = np.minimum(last, np.floor(np.clip(toe_d / step, 0, m)).astype(int))
    stop_level = np.take_along_axis(s, stop[:, None], 1)[:, 0]
    ground = np.zeros(n, bool) if toe_is_ground is None else np.broadcast_to(
        np.asarray(toe_is_ground, bool), (n,))
    cot_ext = full(np.nan) if lower_slope is None else full(lower_slope)

    def position(level: np.ndarray) -> np.ndarray:
        """Distance from the edge (m) where the profile passes ``level``."""
        inside = np.where(level >= crest, 0.0, _ref_length_above(s, level, stop) * step)
        # below the last sample: extend from where the profile reaches that sample's level
        beyond = (_ref_length_above(s, stop_level, stop) * step
                  + (stop_level - level) * cot_ext)
        return np.where(level < stop_level, beyond, inside)

    low = swl - 1.5 * hm0
    low = np.where(ground & (low < stop_level), stop_level, low)
    up = crest.copy() if tm10 is None else np.minimum(crest, swl + 1.5 * hm0)
    x_low = position(low)
    tan = np.full(n, np.nan)
    for it in range(max(iterations, 1)):
        x_up = position(up)
        b_in = np.where(np.isfinite(bl), (bl > low) & (bl < up), True)
        run = x_low - x_up - np.where(b_in, bw, 0.0)
        with np.errstate(all="ignore"):
            tan = np.where(ok & (up > low) & (run > 0.1 * (x_low - x_up)),
                           (up - low) / run, np.nan)
        if tm10 is None or it == iterations - 1:
            break
        good = np.isfinite(tan) & (full(tm10) > 0)
        ru = np.where(good, 0.0, np.nan)
        ru[good] = runup_2pct(hm0[good], full(tm10)[good], tan[good],
                              gamma_f=full(gamma_f)[good], gamma_beta=full(gamma_beta)[good],
                              approach=approach)
        up = np.where(good, np.minimum(crest, swl + ru), up)
    return tan



# ------------------------------------------------------------------ profiles


def _offsets(step: float, half: float) -> np.ndarray:
    return np.arange(-round(half / step), round(half / step) + 1) * step


def _composites(rng: np.random.Generator, n: int, off: np.ndarray) -> np.ndarray:
    """Composite levees of random geometry, with objects, noise, gaps and water."""
    rows = []
    for _ in range(n):
        crest = rng.uniform(3.0, 9.0)
        base = rng.uniform(-1.0, 2.0)
        berm = rng.random() < 0.6
        g = dict(crest=crest, width=rng.uniform(2.5, 8.0), n_up=rng.uniform(1.5, 5.0),
                 berm_level=base + rng.uniform(0.3, 0.8) * (crest - base),
                 berm_width=rng.uniform(2.0, 12.0) if berm else 0.0,
                 n_low=rng.uniform(2.0, 6.0), outer_base=base, n_in=rng.uniform(1.5, 4.0),
                 inner_base=rng.uniform(0.0, 2.0))
        if rng.random() < 0.3:
            g["inner_berm"] = (g["inner_base"] + 0.5 * (crest - g["inner_base"]),
                               rng.uniform(2.0, 8.0))
        centre = rng.choice([0.0, rng.uniform(-4.0, 4.0), rng.uniform(-25.0, 25.0)],
                            p=[0.4, 0.5, 0.1])
        z = composite(off - centre, **g)
        clean = z.copy()
        z = z + rng.normal(0.0, rng.choice([0.0, 0.01, 0.05, 0.12]), off.size)
        if rng.random() < 0.5:
            z = np.round(z, 3)                 # levels to the mm, as in a DEM: many ties
        top = np.flatnonzero(np.abs(off - centre) < g["width"] / 2)
        if top.size and rng.random() < 0.4:    # a post, or an object a few cells wide
            j = rng.choice(top)
            z[j:j + rng.integers(1, 4)] += rng.uniform(0.1, 2.0)
        if rng.random() < 0.2:                 # water over the outer side
            level = base + rng.uniform(0.2, 2.0)
            wet = (off > centre) & (clean < level)
            z[wet] = level if rng.random() < 0.6 else np.nan
        if rng.random() < 0.3:                 # nodata gaps
            for _ in range(rng.integers(1, 4)):
                j = rng.integers(0, off.size)
                z[j:j + rng.integers(1, 12)] = np.nan
        if rng.random() < 0.05:
            z[:] = np.nan
        elif rng.random() < 0.05:
            z[rng.random(off.size) < 0.7] = np.nan
        rows.append(z)
    return np.array(rows)


def _synthetic_levee(rng: np.random.Generator, n: int, off: np.ndarray) -> np.ndarray:
    """Sections of the synthetic demo levee (berm, hedge, water stretches) with noise."""
    spec = LeveeSpec()
    s, d = np.meshgrid(rng.uniform(0.0, spec.length_m, n), off, indexing="ij")
    z = levee_surface(s.ravel(), d.ravel(), spec=spec).reshape(s.shape)
    return np.round(z + rng.normal(0.0, spec.noise_sigma, z.shape), 3)


def _flat_and_odd(off: np.ndarray) -> np.ndarray:
    """Flat ground, a plain ramp, a rise at the section's end, a single valid sample."""
    z = np.array([np.full(off.size, 2.0), 0.1 * off + 3.0, np.maximum(0.0, off - off[-5]),
                  np.full(off.size, np.nan)])
    z[3, off.size // 2] = 4.0
    return z


def _batch(rs: int, step: float = 0.5, half: float = 50.0, n: int = 64) -> tuple:
    rng = np.random.default_rng(rs)
    off = _offsets(step, half)
    z = np.vstack([_composites(rng, n - 16, off), _synthetic_levee(rng, 12, off),
                   _flat_and_odd(off)])
    return z, off


KW = dict(object_width=1.0, crest_search=15.0, crest_tolerance=0.10, max_nodata=0.5)
#: (rs, sample step, half-width, reading settings)
CASES = [
    (1, 0.5, 50.0, KW),
    (2, 0.5, 50.0, KW),
    (3, 0.5, 50.0, KW),
    (4, 0.5, 50.0, dict(KW, object_width=2.5, crest_tolerance=0.05)),
    (5, 0.5, 50.0, dict(KW, object_width=0.0)),
    (6, 0.5, 50.0, dict(KW, crest_search=60.0)),   # the search zone reaches the ends
    (7, 1.0, 40.0, KW),
    (8, 0.25, 30.0, dict(KW, crest_search=10.0)),
    (9, 0.5, 20.0, KW),                              # short sections: slopes run out
]


def _station_conditions(rng: np.random.Generator, m: ProfileMetrics) -> dict:
    n = m.crest_level.size
    crest = np.nan_to_num(m.crest_level, nan=5.0)
    return dict(swl=crest - rng.uniform(0.5, 4.0, n), hm0=rng.choice([0.0, 0.3, 0.8, 1.5], n),
                berm_width=m.outer_berm_width, berm_level=m.outer_berm_level,
                outer_toe=m.outer_toe, lower_slope=m.outer_lower_slope,
                toe_is_ground=rng.random(n) < 0.5, gamma_f=rng.choice([1.0, 0.8], n),
                gamma_beta=rng.uniform(0.8, 1.0, n))


@pytest.mark.parametrize("rs,step,half,kw", CASES)
@pytest.mark.parametrize("waves", ["tm10", "no_period"])
def test_characteristic_slope_matches_the_reference(rs, step, half, kw, waves):
    z, off = _batch(rs, step, half)
    rng = np.random.default_rng(rs + 100)
    m = pr.read_profiles(z, off, **kw)
    args = dict(crest_level=m.crest_level, outer_edge=m.outer_edge,
                **_station_conditions(rng, m), object_width=kw["object_width"])
    if waves == "tm10":
        args["tm10"] = rng.uniform(2.0, 6.0, z.shape[0])
    ref = _ref_characteristic_slope(z, off, **args)
    clean = pr.cleaned_profiles(m, z, off, object_width=kw["object_width"])
    assert clean is not None
    for tan in (pr.characteristic_slope(z, off, **args, clean=clean),
                pr.characteristic_slope(z, off, **args)):
        np.testing.assert_array_equal(np.isnan(tan), np.isnan(ref))
        ok = np.isfinite(ref)
        assert ok.sum() >= 10
        assert np.abs(tan[ok] - ref[ok]).max() <= 1e-12


def test_pipeline_slope_is_the_same_with_and_without_the_kept_matrix():
    from test_characteristic_slope import _conditions

    from trajectory.profile_conditions import outer_characteristic_slope

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


# ------------------------------------------------------------------ pieces


@pytest.mark.parametrize("dtype", [np.float64, np.float32])
def test_fill_gaps_matches_the_reference(dtype):
    rng = np.random.default_rng(21)
    z = rng.normal(0.0, 3.0, (60, 37)).astype(dtype)
    z[rng.random(z.shape) < 0.3] = np.nan
    z[4] = np.nan
    z[7, :30] = np.nan
    z[8, 3:] = np.nan
    z[9] = rng.normal(size=37)                # no gap at all
    got = pr.fill_gaps(z)
    ref = _ref_fill_gaps(z)
    assert got.dtype == ref.dtype == np.float64
    np.testing.assert_array_equal(got, ref)
    assert np.isnan(got[4]).all() and not np.isnan(got[5:]).any()


def test_robust_noise_matches_the_reference_with_and_without_gaps():
    rng = np.random.default_rng(22)
    for m in (40, 41, 3):                     # even and odd numbers of second differences
        z = np.round(rng.normal(0.0, 0.05, (30, m)), 2)   # rounded: ties in the median
        z[3, 1] = np.nan
        z[4] = np.nan
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", RuntimeWarning)
            np.testing.assert_array_equal(pr.robust_noise(z, 0.5), _ref_robust_noise(z, 0.5))


def test_remove_objects_matches_the_reference():
    rng = np.random.default_rng(23)
    z = np.round(rng.normal(0.0, 0.03, (40, 80)), 3)
    z[rng.random(z.shape) < 0.05] += rng.uniform(0.05, 2.0)
    z[:, 0] += 1.0                            # objects at the ends of the rows
    z[:, -1] += 1.0
    noise = pr.robust_noise(z, 0.5)
    for width in (0.0, 0.5, 1.0, 2.5):
        np.testing.assert_array_equal(
            pr.remove_objects(z, 0.5, object_width=width, noise=noise),
            _ref_remove_objects(z, 0.5, object_width=width, noise=noise))


def test_running_median_of_three_is_scipys():
    # reference: scipy.ndimage.median_filter, size 3 along the rows, mode "nearest"
    rng = np.random.default_rng(24)
    for m in (2, 3, 7, 201):
        x = np.round(rng.normal(0.0, 1.0, (20, m)), 1)   # ties
        x[0] = np.inf
        x[1, ::2] = -np.inf
        np.testing.assert_array_equal(
            pr._median3(x), ndimage.median_filter(x, size=(1, 3), mode="nearest"))


def test_length_above_matches_the_reference():
    rng = np.random.default_rng(25)
    s = np.round(np.cumsum(-np.abs(rng.normal(0.0, 0.2, (50, 60))), axis=1) + 6.0, 1)
    s[:, 45:] = np.nan                        # beyond the section's end
    s[3, 10:20] = 2.0                         # a level run
    stop = rng.integers(0, 60, 50)
    length = pr._lengths_above(s, stop)
    for level in (rng.uniform(-5.0, 7.0, 50), np.full(50, 2.0), np.full(50, np.nan),
                  np.where(rng.random(50) < 0.5, np.inf, -np.inf)):
        np.testing.assert_array_equal(length(level), _ref_length_above(s, level, stop))
        np.testing.assert_array_equal(pr._length_above(s, level, stop),
                                      _ref_length_above(s, level, stop))


def test_run_around_matches_the_reference():
    rng = np.random.default_rng(26)
    mask = rng.random((200, 30)) < 0.7
    mask[0], mask[1] = True, False
    centre = rng.integers(0, 30, 200)           # on a True cell or not
    for got, ref in zip(pr._run_around(mask, centre), _ref_run_around(mask, centre),
                        strict=True):
        np.testing.assert_array_equal(got, ref)
