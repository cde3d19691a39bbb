"""Interpret cross-section profiles: crest, edges, toes and slopes.

All functions work on a profile matrix ``z`` (stations x offsets) whose offsets
are positive towards the OUTER (water) side; the caller orients it. Every
quantity is computed for all stations at once with array operations.

Definitions (documented in the README):

- crest top: the highest level within ``crest_search`` of the centreline after
  a running median of width ``2 * object_width`` (removes posts, fences and
  other objects narrower than ``object_width``);
- crest: the contiguous run of samples around the top that lie within the
  crest tolerance (at least three times the profile's own noise) of the top;
- crest level: the mean of the de-spiked levels over the crest (unbiased by
  noise, unlike the maximum);
- crest edges: the two ends of the crest; crest width: the distance between them;
- toe: going down from a crest edge, the first point where the ground is
  flatter than 1:``TOE_COT`` and falls less than ``TOE_DROP`` over the next
  ``TOE_LOOKAHEAD`` metres (a berm, which is followed by more slope, is not a toe);
- slope: least-squares line through the samples from the edge down to the first
  flat part (a berm or the toe), leaving out the top and bottom 10 % of that
  height; reported as n of a 1:n slope, with the fit's root-mean-square residual
  as a quality figure.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import ndimage

#: a slope flatter than 1:TOE_COT counts as flat ground
TOE_COT = 12.0
#: ground that falls less than this (m) ...
TOE_DROP = 0.5
#: ... over this distance (m) beyond a flat point has reached the toe
TOE_LOOKAHEAD = 15.0
#: a flat part counts as a berm only this far (m) below the crest
BERM_MIN_DROP = 0.5
#: part of the edge-to-toe height left out at each end of the slope fit
FIT_TRIM = 0.10

# quality flags (bit values); names are the public text in the `flags` field
FLAGS = {
    "nodata": 1,          # nodata fraction above the run's limit
    "nodata_gaps": 2,     # some nodata samples filled by interpolation
    "crest_off_centre": 4,  # crest touches the edge of the search zone
    "outer_truncated": 8,   # section ends before the outer toe
    "inner_truncated": 16,  # section ends before the inner toe
    "poor_outer_fit": 32,   # outer slope fit residual large
    "poor_inner_fit": 64,
    "no_outer_slope": 128,  # too few samples on the outer slope
}
#: residual (m) above which a slope fit is flagged as poor
POOR_FIT_RMSE = 0.15


@dataclass(frozen=True)
class ProfileMetrics:
    """Measured profile quantities, one entry per station (NaN where unknown)."""

    crest_level: np.ndarray
    crest_offset: np.ndarray     # centre of the crest, m towards the outer side
    crest_width: np.ndarray
    outer_edge: np.ndarray       # offsets (m, + outer) of the crest edges
    inner_edge: np.ndarray
    outer_toe: np.ndarray        # offsets of the toes
    inner_toe: np.ndarray
    outer_toe_level: np.ndarray
    inner_toe_level: np.ndarray
    outer_slope: np.ndarray      # n of 1:n
    inner_slope: np.ndarray
    outer_fit_rmse: np.ndarray
    inner_fit_rmse: np.ndarray
    outer_slope_se: np.ndarray   # standard error of n from the least-squares fit
    outer_fit_count: np.ndarray  # samples used by the outer slope fit
    crest_cells: np.ndarray      # samples making up the crest estimate
    noise: np.ndarray            # robust noise estimate of the profile (m)
    nodata_fraction: np.ndarray
    flags: np.ndarray            # bitmask of FLAGS
    readable: np.ndarray         # bool: crest and outer slope could be read


def fill_gaps(z: np.ndarray) -> np.ndarray:
    """Fill NaN samples by linear interpolation along each row (ends: nearest).

    Rows that are entirely NaN stay NaN.
    """
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


def robust_noise(z: np.ndarray, step: float) -> np.ndarray:
    """Per-row noise estimate from the median absolute second difference.

    For white noise of std s the second difference has std s*sqrt(6); slopes
    (linear) contribute nothing, so the median is robust to the profile shape.
    """
    d2 = z[:, 2:] - 2 * z[:, 1:-1] + z[:, :-2]
    with np.errstate(all="ignore"):
        mad = np.nanmedian(np.abs(d2), axis=1)
    return 1.4826 * mad / np.sqrt(6.0)


def remove_objects(z: np.ndarray, step: float, *, object_width: float,
                   noise: np.ndarray) -> np.ndarray:
    """Remove objects narrower than ``object_width`` standing on the ground.

    A grey opening (running minimum then maximum) over ``object_width`` plus one
    cell each side (the bilinear blur) erases every peak narrower than that and
    keeps wider shapes; cells rising clearly above the opening (by 0.25 m or four
    times the noise) are objects and are replaced by the
    ground under them as the opening estimates it. Other cells keep their measured
    value, so noise is not biased.
    """
    if object_width <= 0:
        return z
    k = int(np.ceil(object_width / step)) + 2
    opened = ndimage.grey_opening(z, size=(1, k), mode="nearest")
    thr = np.maximum(0.25, 4.0 * np.nan_to_num(noise, nan=0.0))[:, None]
    obj = (z - opened) > thr
    # widen by one cell: the flanks of an object are blurred by the sampling too
    obj = ndimage.binary_dilation(obj, structure=np.ones((1, 3), bool))
    return np.where(obj, opened, z)


def _run_around(mask: np.ndarray, centre: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """First and last index of the True-run of ``mask`` containing ``centre`` per row."""
    n, m = mask.shape
    j = np.broadcast_to(np.arange(m), (n, m))
    false_left = np.maximum.accumulate(np.where(~mask, j, -1), axis=1)
    false_right = np.minimum.accumulate(np.where(~mask, j, m)[:, ::-1], axis=1)[:, ::-1]
    c = centre[:, None]
    lo = np.take_along_axis(false_left, c, 1)[:, 0] + 1
    hi = np.take_along_axis(false_right, c, 1)[:, 0] - 1
    return lo, hi


def _side(d: np.ndarray, start: np.ndarray, direction: int, length: int) -> np.ndarray:
    """Samples going away from ``start`` (per row) in ``direction``; NaN beyond the end."""
    n, m = d.shape
    k = np.arange(length)
    idx = start[:, None] + direction * k[None, :]
    ok = (idx >= 0) & (idx < m)
    vals = np.take_along_axis(d, np.clip(idx, 0, m - 1), 1)
    return np.where(ok, vals, np.nan)


def masked_line_fit(x: np.ndarray, z: np.ndarray, w: np.ndarray
                    ) -> tuple[np.ndarray, ...]:
    """Ordinary least-squares line z = a + b x per row over the samples where w = 1.

    Returns intercept, gradient, RMS residual, standard error of the gradient
    and the sample count (rows with fewer than 3 samples give NaN).
    """
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


def _slope_side(s: np.ndarray, crest: np.ndarray, step: float) -> dict[str, np.ndarray]:
    """Toe and fitted slope on one side; ``s`` runs from the crest edge outward."""
    n, k = s.shape
    dist = np.arange(k) * step
    q = max(int(round(1.0 / step)), 1)
    pad = np.pad(s, ((0, 0), (q, q)), mode="edge")
    grad = (pad[:, 2 * q:] - pad[:, :-2 * q]) / (2 * q * step)  # dz/d(distance)
    look = max(int(round(TOE_LOOKAHEAD / step)), 1)
    s_inf = np.where(np.isnan(s), np.inf, s)
    ahead_min = ndimage.minimum_filter1d(s_inf, size=look, axis=1, mode="nearest",
                                         origin=-(look // 2))
    fall_ahead = s - ahead_min
    flat = (-grad < 1.0 / TOE_COT) & (fall_ahead < TOE_DROP) & np.isfinite(s)
    flat[:, 0] = False
    beyond = np.isnan(s)
    has_toe = flat.any(axis=1)
    first_flat = np.argmax(flat, axis=1)
    last_valid = k - 1 - np.argmax(~beyond[:, ::-1], axis=1)
    toe = np.where(has_toe, first_flat, last_valid)
    toe_level = np.take_along_axis(s, toe[:, None], 1)[:, 0]
    # the slope is fitted from the edge down to the first flat part (a berm or the
    # toe): the upper slope, which governs run-up and overtopping
    any_flat = (-grad < 1.0 / TOE_COT) & (s < (crest - BERM_MIN_DROP)[:, None])
    seg_end = np.where(any_flat.any(axis=1), np.argmax(any_flat, axis=1), toe)
    seg_end = np.minimum(seg_end, toe)
    seg_level = np.take_along_axis(s, seg_end[:, None], 1)[:, 0]
    height = crest - seg_level
    hi = crest - FIT_TRIM * height
    lo = seg_level + FIT_TRIM * height
    kk = np.arange(k)[None, :]
    w = ((kk <= seg_end[:, None]) & (s <= hi[:, None]) & (s >= lo[:, None])).astype(float)
    w[np.isnan(s)] = 0.0
    a, b, res, se_b, cnt = masked_line_fit(dist, s, w)
    with np.errstate(all="ignore"):
        cot = np.where((cnt >= 3) & (b < 0), -1.0 / b, np.nan)
        se_cot = np.where(np.isfinite(cot), se_b / b**2, np.nan)
    return {"toe": toe * step, "toe_level": toe_level, "cot": cot,
            "rmse": np.where(cnt >= 3, res, np.nan), "truncated": ~has_toe,
            "fit_count": cnt, "cot_se": se_cot}


def read_profiles(
    z: np.ndarray, offsets: np.ndarray, *, object_width: float, crest_search: float,
    crest_tolerance: float, max_nodata: float,
) -> ProfileMetrics:
    """Measure crest and slopes of every profile in ``z`` (offsets + towards outer side)."""
    n, m = z.shape
    step = float(offsets[1] - offsets[0])
    nodata_fraction = np.isnan(z).mean(axis=1)
    filled = fill_gaps(z)
    empty = np.isnan(filled).all(axis=1)
    filled[empty] = 0.0
    noise = robust_noise(filled, step)
    clean = remove_objects(filled, step, object_width=object_width, noise=noise)
    # a light running median steadies the search for the top and the crest's extent
    d = ndimage.median_filter(clean, size=(1, 3), mode="nearest")

    zone = np.abs(offsets) <= crest_search
    dz = np.where(zone[None, :], d, -np.inf)
    top_j = np.argmax(dz, axis=1)
    top = dz[np.arange(n), top_j]
    tol = np.maximum(crest_tolerance, 3.0 * np.nan_to_num(noise))
    on_crest = (d >= (top - tol)[:, None]) & zone[None, :]
    lo, hi = _run_around(on_crest, top_j)
    j = np.arange(m)[None, :]
    in_crest = (j >= lo[:, None]) & (j <= hi[:, None])
    cells = in_crest.sum(1)
    crest_level = np.where(in_crest, clean, 0.0).sum(1) / cells
    zone_j = np.flatnonzero(zone)
    off_centre = (lo <= zone_j[0]) | (hi >= zone_j[-1])

    k = m  # long enough to reach the section's end from any edge
    # slopes are read on the de-spiked levels, so posts on a slope do not bend the fit
    out = _slope_side(_side(d, hi, +1, k), crest_level, step)
    inn = _slope_side(_side(d, lo, -1, k), crest_level, step)

    flags = np.zeros(n, dtype=np.int64)
    flags |= np.where(nodata_fraction > max_nodata, FLAGS["nodata"], 0)
    flags |= np.where((nodata_fraction > 0) & (nodata_fraction <= max_nodata),
                      FLAGS["nodata_gaps"], 0)
    flags |= np.where(off_centre, FLAGS["crest_off_centre"], 0)
    flags |= np.where(out["truncated"], FLAGS["outer_truncated"], 0)
    flags |= np.where(inn["truncated"], FLAGS["inner_truncated"], 0)
    flags |= np.where(out["rmse"] > POOR_FIT_RMSE, FLAGS["poor_outer_fit"], 0)
    flags |= np.where(inn["rmse"] > POOR_FIT_RMSE, FLAGS["poor_inner_fit"], 0)
    flags |= np.where(np.isnan(out["cot"]), FLAGS["no_outer_slope"], 0)
    readable = (~empty) & (nodata_fraction <= max_nodata) & ~off_centre & np.isfinite(out["cot"])

    outer_edge = offsets[hi]
    inner_edge = offsets[lo]
    nan = np.where(readable, 1.0, np.nan)  # no made-up numbers where unreadable
    return ProfileMetrics(
        crest_level=crest_level * nan,
        crest_offset=0.5 * (outer_edge + inner_edge) * nan,
        crest_width=(outer_edge - inner_edge) * nan,
        outer_edge=outer_edge * nan,
        inner_edge=inner_edge * nan,
        outer_toe=(outer_edge + out["toe"]) * nan,
        inner_toe=(inner_edge - inn["toe"]) * nan,
        outer_toe_level=out["toe_level"] * nan,
        inner_toe_level=inn["toe_level"] * nan,
        outer_slope=out["cot"] * nan,
        inner_slope=inn["cot"] * nan,
        outer_fit_rmse=out["rmse"] * nan,
        inner_fit_rmse=inn["rmse"] * nan,
        outer_slope_se=out["cot_se"] * nan,
        outer_fit_count=out["fit_count"],
        crest_cells=cells,
        noise=noise,
        nodata_fraction=nodata_fraction,
        flags=flags,
        readable=readable,
    )


def flag_text(flags: np.ndarray) -> np.ndarray:
    """Readable ``;``-joined flag names per station."""
    names = np.array(list(FLAGS))
    bits = np.array(list(FLAGS.values()))
    has = (flags[:, None] & bits[None, :]) > 0
    return np.array([";".join(names[row]) for row in has], dtype=object)
