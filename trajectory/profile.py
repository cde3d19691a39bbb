"""Interpret cross-section profiles: crest, edges, toes, slopes, berms and water.

All functions work on a profile matrix ``z`` (stations x offsets) whose offsets
are positive towards the OUTER (water) side; the caller orients it. Every
quantity is computed for all stations at once with array operations.

Definitions (documented in the README, "How each quantity is found"):

- crest objects: cells rising above a grey opening over ``object_width`` by more
  than ``OBJECT_MIN_HEIGHT`` and four times the noise (posts, fences, hedges) are
  replaced by the ground under them;
- crest top: the highest de-spiked level within ``crest_search`` of the centreline;
- crest: the contiguous run of samples around the top that lie within the
  crest tolerance (at least three times the profile's own noise) of the top;
- crest edges: where the fitted slope lines meet the crest level (within the run);
  crest width: their distance; crest level: the mean of the levels between the
  edges (unbiased by noise, unlike the maximum; not lowered by shoulder samples);
- toe: going down from a crest edge, the first point where the ground is
  flatter than 1:``TOE_COT`` and falls less than ``TOE_DROP`` over the next
  ``TOE_LOOKAHEAD`` metres (a berm, which is followed by more slope, is not a toe);
- slope: least-squares line through the samples from the edge down to the first
  flat part (a berm or the toe), leaving out the first and last 10 % of that
  length (by position: trimming by level would flatten noisy fits); reported as
  n of a 1:n slope, with the fit's root-mean-square residual as a quality figure;
- berm: the first part of a slope much flatter than the slope above it (see
  :func:`_berm_side`), with its level, width between the slope lines and gradient;
- water: the outer side ends in flat, noise-free returns or nodata beyond its toe;
- characteristic outer slope: :func:`characteristic_slope` (EurOtop 2018).
"""

from __future__ import annotations

import functools
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
from scipy import ndimage, signal

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
#: objects must rise this much (m), and four times the noise, above the ground under them
OBJECT_MIN_HEIGHT = 0.05
#: a berm is a flat part at least this long (m) ...
BERM_MIN_WIDTH = 2.0
#: ... with the gradient taken by least squares over this length (m)
BERM_WINDOW = 4.0
#: flat, noise-free returns (or nodata) this long (m) beyond the outer toe are water
WATER_MIN_LENGTH = 3.0

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
    "outer_water": 256,     # outer side ends in water (flat returns or nodata) above its toe
    "slope_extrapolated": 512,  # characteristic slope extended below the lowest dry point
    "sections_cross": 1024,  # the section crosses a neighbour within its half-width
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
    outer_berm_level: np.ndarray  # level of the first berm below each crest edge (NaN: none)
    outer_berm_width: np.ndarray
    inner_berm_level: np.ndarray
    inner_berm_width: np.ndarray
    outer_berm_slope: np.ndarray  # berm gradient (m/m, + falling away from the crest)
    inner_berm_slope: np.ndarray
    outer_lower_slope: np.ndarray  # n of 1:n below the outer berm (= outer_slope if none)
    outer_water: np.ndarray       # bool: the outer side ends in water above its toe


def fill_gaps(z: np.ndarray) -> np.ndarray:
    """Fill NaN samples by linear interpolation along each row (ends: nearest).

    Rows that are entirely NaN stay NaN. Returns a new float array.
    """
    return _fill_gaps(z, ~np.isnan(z))


def _fill_gaps(z: np.ndarray, valid: np.ndarray) -> np.ndarray:
    """:func:`fill_gaps` given the mask of valid samples; rows without gaps are copied."""
    out = np.array(z, dtype=np.result_type(z.dtype, np.float64))
    gap = np.flatnonzero(~valid.all(axis=1))
    if gap.size == 0:
        return out
    zg, valid = z[gap], valid[gap]
    n, m = zg.shape
    j = np.broadcast_to(np.arange(m), (n, m))
    left = np.maximum.accumulate(np.where(valid, j, -1), axis=1)
    right = np.minimum.accumulate(np.where(valid, j, m)[:, ::-1], axis=1)[:, ::-1]
    has_l, has_r = left >= 0, right < m
    li, ri = np.clip(left, 0, m - 1), np.clip(right, 0, m - 1)
    zl = np.take_along_axis(zg, li, 1)
    zr = np.take_along_axis(zg, ri, 1)
    span = np.where(ri > li, ri - li, 1)
    t = (j - li) / span
    both = np.where(ri > li, zl + t * (zr - zl), zl)
    filled = np.where(has_l & has_r, both, np.where(has_l, zl, zr))
    out[gap] = np.where(valid, zg, filled)
    return out


def robust_noise(z: np.ndarray, step: float) -> np.ndarray:
    """Per-row noise estimate from the median absolute second difference.

    For white noise of std s the second difference has std s*sqrt(6); slopes
    (linear) contribute nothing, so the median is robust to the profile shape.
    NaN samples are left out.
    """
    d2 = np.abs(z[:, 2:] - 2 * z[:, 1:-1] + z[:, :-2])
    with np.errstate(all="ignore"):
        if d2.shape[1] == 0:
            mad = np.nanmedian(d2, axis=1)
        else:
            mad = np.median(d2, axis=1)   # NaN exactly in the rows holding a NaN
            gap = np.flatnonzero(np.isnan(mad))
            if gap.size:
                mad[gap] = np.nanmedian(d2[gap], axis=1)
    return 1.4826 * mad / np.sqrt(6.0)


def remove_objects(z: np.ndarray, step: float, *, object_width: float,
                   noise: np.ndarray) -> np.ndarray:
    """Remove objects narrower than ``object_width`` standing on the ground.

    A grey opening (running minimum then maximum) over ``object_width`` plus one
    cell each side (the bilinear blur) erases every peak narrower than that and
    keeps wider shapes; cells rising clearly above the opening (by 0.05 m or four
    times the noise) are objects and are replaced by the
    ground under them as the opening estimates it. Other cells keep their measured
    value, so noise is not biased.
    """
    if object_width <= 0:
        return z
    k = int(np.ceil(object_width / step)) + 2
    opened = ndimage.grey_opening(z, size=(1, k), mode="nearest")
    thr = np.maximum(OBJECT_MIN_HEIGHT, 4.0 * np.nan_to_num(noise, nan=0.0))[:, None]
    obj = (z - opened) > thr
    # widen by one cell: the flanks of an object are blurred by the sampling too
    # (a binary dilation with a 1 x 3 structure)
    wide = obj.copy()
    wide[:, 1:] |= obj[:, :-1]
    wide[:, :-1] |= obj[:, 1:]
    return np.where(wide, opened, z)


def _median3(x: np.ndarray) -> np.ndarray:
    """Running median over three samples along each row (ends: nearest); no NaN in ``x``."""
    if x.shape[1] < 2:
        return x.copy()
    before = np.concatenate([x[:, :1], x[:, :-1]], axis=1)
    after = np.concatenate([x[:, 1:], x[:, -1:]], axis=1)
    return np.maximum(np.minimum(before, x), np.minimum(np.maximum(before, x), after))


def _run_around(mask: np.ndarray, centre: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """First and last index of the True-run of ``mask`` containing ``centre`` per row."""
    m = mask.shape[1]
    j = np.arange(m)
    c = centre[:, None]
    off = ~mask
    lo = np.where(off & (j <= c), j, -1).max(axis=1) + 1
    hi = np.where(off & (j >= c), j, m).min(axis=1) - 1
    return lo, hi


def _walk(shape: tuple[int, int], rows: np.ndarray, start: np.ndarray,
          direction: np.ndarray | int, length: int) -> tuple[np.ndarray, np.ndarray]:
    """Flat indices into a ``shape`` matrix going from ``start`` in ``direction`` per row.

    Indices beyond the row's ends are clipped to them; the mask says which are inside.
    """
    m = shape[1]
    idx = start[:, None] + np.asarray(direction)[..., None] * np.arange(length)[None, :]
    inside = (idx >= 0) & (idx < m)
    return rows[:, None] * m + np.clip(idx, 0, m - 1), inside


def _side(d: np.ndarray, start: np.ndarray, direction: int, length: int) -> np.ndarray:
    """Samples going away from ``start`` (per row) in ``direction``; NaN beyond the end."""
    flat, inside = _walk(d.shape, np.arange(d.shape[0]), start, direction, length)
    return np.where(inside, np.take(d, flat), np.nan)


def masked_line_fit(x: np.ndarray, z: np.ndarray, w: np.ndarray
                    ) -> tuple[np.ndarray, ...]:
    """Ordinary least-squares line z = a + b x per row over the samples where w = 1.

    Returns intercept, gradient, RMS residual, standard error of the gradient
    and the sample count (rows with fewer than 3 samples give NaN).
    """
    return _line_fit(x, np.nan_to_num(z), w)


def _line_fit(x: np.ndarray, zv: np.ndarray, w: np.ndarray) -> tuple[np.ndarray, ...]:
    """:func:`masked_line_fit` on levels ``zv`` already free of NaN."""
    cnt = w.sum(1)
    wx = w * x
    sx = wx.sum(1)
    sz = (w * zv).sum(1)
    sxx = (w * x**2).sum(1)
    sxz = (wx * zv).sum(1)
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


def _slope_side(s: np.ndarray, crest: np.ndarray, step: float,
                zv: np.ndarray | None = None) -> dict[str, np.ndarray]:
    """Toe and fitted slope on one side; ``s`` runs from the crest edge outward.

    ``zv`` is ``np.nan_to_num(s)`` when the caller has it.
    """
    n, k = s.shape
    dist = np.arange(k) * step
    q = max(int(round(1.0 / step)), 1)
    pad = np.concatenate([np.repeat(s[:, :1], q, axis=1), s, np.repeat(s[:, -1:], q, axis=1)],
                         axis=1)
    grad = (pad[:, 2 * q:] - pad[:, :-2 * q]) / (2 * q * step)  # dz/d(distance)
    gentle = grad > -1.0 / TOE_COT        # flatter than 1:TOE_COT (NaN: not)
    look = max(int(round(TOE_LOOKAHEAD / step)), 1)
    beyond = np.isnan(s)
    s_inf = np.where(beyond, np.inf, s)
    ahead_min = ndimage.minimum_filter1d(s_inf, size=look, axis=1, mode="nearest",
                                         origin=-(look // 2))
    fall_ahead = s - ahead_min
    flat = gentle & (fall_ahead < TOE_DROP) & np.isfinite(s)
    flat[:, 0] = False
    has_toe = flat.any(axis=1)
    first_flat = np.argmax(flat, axis=1)
    last_valid = k - 1 - np.argmax(~beyond[:, ::-1], axis=1)
    toe = np.where(has_toe, first_flat, last_valid)
    toe_level = s[np.arange(n), toe]
    # the slope is fitted from the edge down to the first flat part (a berm or the
    # toe): the upper slope, which governs run-up and overtopping
    any_flat = gentle & (s < (crest - BERM_MIN_DROP)[:, None])
    seg_end = np.where(any_flat.any(axis=1), np.argmax(any_flat, axis=1), toe)
    seg_end = np.minimum(seg_end, toe)
    kk = np.arange(k)[None, :]
    # trimmed by position, not by level: selecting noisy samples by their level would
    # flatten the fitted slope (truncation on the fitted variable)
    # (the lower end also clears the gradient window, by which the flat part is found late)
    trim = np.rint(FIT_TRIM * seg_end).astype(int)[:, None]
    w = ((kk >= trim) & (kk <= seg_end[:, None] - np.maximum(trim, q)) & ~beyond).astype(float)
    a, b, res, se_b, cnt = _line_fit(dist, np.nan_to_num(s) if zv is None else zv, w)
    with np.errstate(all="ignore"):
        cot = np.where((cnt >= 3) & (b < 0), -1.0 / b, np.nan)
        se_cot = np.where(np.isfinite(cot), se_b / b**2, np.nan)
    return {"toe": toe * step, "toe_level": toe_level, "cot": cot,
            "rmse": np.where(cnt >= 3, res, np.nan), "truncated": ~has_toe,
            "fit_count": cnt, "cot_se": se_cot, "toe_j": toe, "a": a, "b": b}


@functools.lru_cache(maxsize=16)
def _savgol_slope(win: int, step: float) -> np.ndarray:
    """Savitzky-Golay convolution coefficients of the first derivative, first order."""
    return signal.savgol_coeffs(win, 1, deriv=1, delta=step)


def _flatter_than(sf: np.ndarray, limit: np.ndarray, relevant: np.ndarray, win: int,
                  step: float) -> np.ndarray:
    """``-grad < limit`` with ``grad`` the Savitzky-Golay gradient of ``sf`` over ``win``.

    The gradient is ``signal.savgol_filter(sf, win, 1, deriv=1, delta=step, axis=1,
    mode="interp")``. Inside the rows it is that filter's own convolution. Within
    ``win // 2`` of the ends, ``mode="interp"`` fits a line to the first (last) ``win``
    samples: the same least-squares gradient the convolution gives next to the ends, up
    to rounding (about 1e-15). That value is used there unless it lies within 1e-9 of
    ``limit`` at a ``relevant`` cell; then the filter itself is run, so every comparison
    is exactly the filter's.
    """
    k = sf.shape[1]
    h = win // 2
    grad = ndimage.convolve1d(sf, _savgol_slope(win, step), axis=1, mode="constant")
    grad[:, :h] = grad[:, h:h + 1]
    grad[:, k - h:] = grad[:, k - h - 1:k - h]
    with np.errstate(invalid="ignore"):
        near = (np.abs(-grad - limit[:, None]) <= 1e-9) & relevant
    if near[:, :h].any() or near[:, k - h:].any():
        grad = signal.savgol_filter(sf, win, 1, deriv=1, delta=step, axis=1, mode="interp")
    return -grad < limit[:, None]


def _berm_side(s: np.ndarray, crest: np.ndarray, side: dict[str, np.ndarray],
               step: float, *, filled: np.ndarray | None = None, zv: np.ndarray | None = None,
               ) -> dict[str, np.ndarray]:
    """First berm between a crest edge and its toe; ``s`` runs from the edge outward.

    A berm is a run at least ``BERM_MIN_WIDTH`` long whose gradient (least squares
    over ``BERM_WINDOW``) is flatter than 1:``TOE_COT`` and than 40 % of the upper
    slope, lying at least ``BERM_MIN_DROP`` below the crest and above the toe. Its
    level is the mean over the run; its ends are where the fitted slope lines above
    and below meet that level, so the blur of the gradient window does not shorten it.

    ``filled`` is ``fill_gaps(s)`` and ``zv`` is ``np.nan_to_num(s)`` when the caller
    has them.
    """
    n, k = s.shape
    dist = np.arange(k) * step
    win = max(int(round(BERM_WINDOW / step)) | 1, 5)
    if k < win:
        nan = np.full(n, np.nan)
        return {"level": nan, "width": nan, "slope": nan, "lower_cot": nan.copy()}
    sf = fill_gaps(s) if filled is None else filled
    if np.isnan(sf).any():
        sf = np.where(np.isnan(sf), 0.0, sf)
    zv = np.nan_to_num(s) if zv is None else zv
    tan_up = np.where(side["b"] < 0, -side["b"], np.nan)
    limit = np.minimum(1.0 / TOE_COT, 0.4 * tan_up)
    toe_j, toe_level = side["toe_j"], side["toe_level"]
    j = np.arange(k)[None, :]
    finite = np.isfinite(s)
    relevant = (finite & (j >= 1) & (j < toe_j[:, None])
                & (s < (crest - BERM_MIN_DROP)[:, None])
                & (s > (toe_level + BERM_MIN_DROP)[:, None]))
    cand = _flatter_than(sf, limit, relevant, win, step) & relevant
    has = cand.any(axis=1)
    lo, hi = _run_around(cand, np.argmax(cand, axis=1))
    has &= (hi - lo + 1) * step >= BERM_MIN_WIDTH
    # level, gradient and ends are measured on the rows with a berm only
    r = np.flatnonzero(has)
    lo, hi, toe_j, zv, finite = lo[r], hi[r], toe_j[r], zv[r], finite[r]
    a_up, b_up = side["a"][r], side["b"][r]
    wt = ((j >= lo[:, None]) & (j <= hi[:, None])).astype(float)
    _, gb, _, _, cnt = _line_fit(dist, zv, wt)
    with np.errstate(all="ignore"):
        level = (wt * zv).sum(1) / cnt
    # the slope line below the berm: from the run's end down to the toe, trimmed
    trim = np.rint(FIT_TRIM * (toe_j - hi)).astype(int)[:, None]
    q = max(int(round(1.0 / step)), 1)   # the toe is found this late (its gradient window)
    below = ((j > (hi[:, None] + trim)) & (j <= (toe_j[:, None] - np.maximum(trim, q)))
             & finite)
    al, bl, _, _, cnt_l = _line_fit(dist, zv, below.astype(float))
    with np.errstate(all="ignore"):
        x1 = np.where(b_up < 0, (level - a_up) / b_up, lo * step)
        x1 = np.clip(x1, 0.0, lo * step + 0.5 * BERM_WINDOW)
        ok_l = (cnt_l >= 3) & (bl < 0)
        x2 = np.where(ok_l, (level - al) / bl, hi * step + 0.5 * BERM_WINDOW)
        x2 = np.clip(x2, hi * step, toe_j * step)
        lower_cot = np.where(ok_l, -1.0 / bl, np.nan)

    def rows(v: np.ndarray, other: np.ndarray | float = np.nan) -> np.ndarray:
        full = np.array(np.broadcast_to(other, (n,)), dtype=float)
        full[r] = v
        return full

    return {"level": rows(level), "width": rows(x2 - x1), "slope": rows(-gb),
            "lower_cot": rows(lower_cot, side["cot"]), "start": rows(x1)}


def _water_outer(raw: np.ndarray, wet: np.ndarray, toe_j: np.ndarray, noise: np.ndarray,
                 step: float) -> np.ndarray:
    """True where the outer side ends in water at its toe.

    ``raw`` runs from the outer crest edge outward (gaps filled, not smoothed) and
    ``wet`` marks nodata there. Water returns are flat and free of the ground's
    noise: over ``WATER_MIN_LENGTH`` beyond the toe, 90 % of the samples are nodata
    or have a second difference below a tenth of the profile's noise (profiles with
    less than 1 cm of noise carry no such contrast; only nodata counts there).
    """
    n, k = raw.shape
    d2 = np.abs(np.pad(raw[:, 2:] - 2 * raw[:, 1:-1] + raw[:, :-2], ((0, 0), (1, 1)),
                       mode="edge"))
    thr = np.maximum(0.003, 0.1 * np.nan_to_num(noise))[:, None]
    calm = (d2 < thr) & (np.nan_to_num(noise) > 0.01)[:, None]
    like = (calm & np.isfinite(raw)) | wet
    run = max(int(round(WATER_MIN_LENGTH / step)), 2)
    c = np.concatenate([np.zeros((n, 1)), np.cumsum(like, axis=1)], axis=1)
    a = np.clip(toe_j + 1, 0, k)
    b = np.clip(toe_j + 1 + run, 0, k)
    got = np.take_along_axis(c, b[:, None], 1)[:, 0] - np.take_along_axis(c, a[:, None], 1)[:, 0]
    return (b - a >= run // 2) & (got >= 0.9 * (b - a)) & (b > a)


def _crest_ends(offsets: np.ndarray, lo: np.ndarray, hi: np.ndarray, crest: np.ndarray,
                out: dict[str, np.ndarray], inn: dict[str, np.ndarray], step: float
                ) -> tuple[np.ndarray, np.ndarray]:
    """Offsets where the fitted outer and inner slope lines reach the crest level.

    Kept within the crest run (and at most one sample beyond its ends); the run's
    ends where a side has no fitted slope.
    """
    span = (hi - lo) * step

    def end(side: dict[str, np.ndarray]) -> np.ndarray:
        with np.errstate(all="ignore"):
            dist = (crest - side["a"]) / side["b"]
        return np.where((side["b"] < 0) & np.isfinite(dist), np.clip(dist, -span, step), 0.0)

    x_out = offsets[hi] + end(out)
    x_in = offsets[lo] - end(inn)
    swap = x_in > x_out   # a crest narrower than the fits resolve: keep the run's ends
    return np.where(swap, offsets[hi], x_out), np.where(swap, offsets[lo], x_in)


@dataclass(frozen=True)
class _SideWalk:
    """One side of a matrix ``d`` free of NaN, from a start column per row to the end."""

    flat: np.ndarray     # flat indices into d (clipped to the row's end)
    inside: np.ndarray   # which of them lie within the row
    near: np.ndarray     # levels, the row's last one beyond its end: fill_gaps of ``s``
    s: np.ndarray        # levels, NaN beyond the row's end
    zv: np.ndarray       # levels, 0 beyond the row's end: np.nan_to_num of ``s``

    @classmethod
    def of(cls, d: np.ndarray, start: np.ndarray, direction: int) -> _SideWalk:
        """The side of ``d`` from column ``start`` per row going in ``direction`` (+1, -1)."""
        n, m = d.shape
        flat, inside = _walk(d.shape, np.arange(n), start, direction, m)
        near = np.take(d, flat)
        s = np.where(inside, near, np.nan)
        zv = np.where(inside, near, 0.0) if np.isfinite(near).all() else np.nan_to_num(s)
        return cls(flat, inside, near, s, zv)


@dataclass(frozen=True)
class _Cleaned:
    """The de-spiked matrix :func:`read_profiles` made, with what it was made from."""

    source: np.ndarray     # a copy of the profile matrix read
    step: float
    object_width: float
    clean: np.ndarray


def read_profiles(
    z: np.ndarray, offsets: np.ndarray, *, object_width: float, crest_search: float,
    crest_tolerance: float, max_nodata: float,
) -> ProfileMetrics:
    """Measure crest and slopes of every profile in ``z`` (offsets + towards outer side)."""
    n, m = z.shape
    step = float(offsets[1] - offsets[0])
    gaps = np.isnan(z)
    nodata_fraction = gaps.mean(axis=1)
    filled = _fill_gaps(z, ~gaps)
    empty = gaps.all(axis=1)
    filled[empty] = 0.0
    noise = robust_noise(filled, step)
    clean = remove_objects(filled, step, object_width=object_width, noise=noise)
    # a light running median steadies the search for the top and the crest's extent
    d = _median3(clean)

    zone = np.abs(offsets) <= crest_search
    dz = np.where(zone[None, :], d, -np.inf)
    top_j = np.argmax(dz, axis=1)
    rows = np.arange(n)
    top = dz[rows, top_j]
    tol = np.maximum(crest_tolerance, 3.0 * np.nan_to_num(noise))
    on_crest = (d >= (top - tol)[:, None]) & zone[None, :]
    lo, hi = _run_around(on_crest, top_j)
    j = np.arange(m)[None, :]
    in_crest = (j >= lo[:, None]) & (j <= hi[:, None])
    cells = in_crest.sum(1)
    crest_level = np.where(in_crest, clean, 0.0).sum(1) / cells
    zone_j = np.flatnonzero(zone)
    off_centre = (lo <= zone_j[0]) | (hi >= zone_j[-1])

    # slopes are read on the de-spiked levels, so posts on a slope do not bend the fit;
    # each side runs from its crest end to the section's end
    out_walk, in_walk = _SideWalk.of(d, hi, +1), _SideWalk.of(d, lo, -1)
    out = _slope_side(out_walk.s, crest_level, step, zv=out_walk.zv)
    inn = _slope_side(in_walk.s, crest_level, step, zv=in_walk.zv)
    # the crest ends where the fitted slope lines meet the crest level: samples on the
    # shoulders (within the tolerance but already on a slope) must not pull the level down
    x_out, x_in = _crest_ends(offsets, lo, hi, crest_level, out, inn, step)
    inner = (in_crest
             & (offsets[None, :] >= (x_in + 0.5 * step)[:, None])
             & (offsets[None, :] <= (x_out - 0.5 * step)[:, None]))
    n_inner = inner.sum(1)
    with np.errstate(all="ignore"):
        refined = np.where(inner, clean, 0.0).sum(1) / n_inner
    crest_level = np.where(n_inner >= 1, refined, crest_level)
    cells = np.where(n_inner >= 1, n_inner, cells)
    berm_out = _berm_side(out_walk.s, crest_level, out, step, filled=out_walk.near,
                          zv=out_walk.zv)
    berm_in = _berm_side(in_walk.s, crest_level, inn, step, filled=in_walk.near,
                         zv=in_walk.zv)
    wet = np.take(gaps, out_walk.flat) & out_walk.inside
    # contrast with the land side's noise (water returns lower the whole row's estimate)
    land_noise = robust_noise(filled[:, offsets <= 0], step)
    raw_out = np.where(out_walk.inside, np.take(clean, out_walk.flat), np.nan)
    water = _water_outer(raw_out, wet, out["toe_j"], land_noise, step)

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
    flags |= np.where(water, FLAGS["outer_water"], 0)
    readable = (~empty) & (nodata_fraction <= max_nodata) & ~off_centre & np.isfinite(out["cot"])

    outer_edge = x_out
    inner_edge = x_in
    nan = np.where(readable, 1.0, np.nan)  # no made-up numbers where unreadable
    metrics = ProfileMetrics(
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
        outer_berm_level=berm_out["level"] * nan,
        outer_berm_width=berm_out["width"] * nan,
        inner_berm_level=berm_in["level"] * nan,
        inner_berm_width=berm_in["width"] * nan,
        outer_berm_slope=berm_out["slope"] * nan,
        inner_berm_slope=berm_in["slope"] * nan,
        outer_lower_slope=berm_out["lower_cot"] * nan,
        outer_water=water & readable,
    )
    # kept for characteristic_slope on the same profiles (not a field: not an output)
    object.__setattr__(metrics, "_cleaned", _Cleaned(np.array(z, copy=True), step,
                                                      float(object_width), clean))
    return metrics


def flag_text(flags: np.ndarray) -> np.ndarray:
    """Readable ``;``-joined flag names per station."""
    names = np.array(list(FLAGS))
    bits = np.array(list(FLAGS.values()))
    has = (flags[:, None] & bits[None, :]) > 0
    return np.array([";".join(names[row]) for row in has], dtype=object)


def _length_above(s: np.ndarray, level: np.ndarray, stop: np.ndarray) -> np.ndarray:
    """Length (in samples) of the polyline ``s[0..stop]`` per row lying above ``level``.

    Exact for a falling piecewise-linear profile (it is then the distance to the
    point where the profile passes ``level``) and unbiased by noise.
    """
    return _lengths_above(s, stop)(level)


def _lengths_above(s: np.ndarray, stop: np.ndarray) -> Callable[[np.ndarray], np.ndarray]:
    """:func:`_length_above` of one ``s`` and ``stop`` for any level (shared parts once)."""
    a, b = s[:, :-1], s[:, 1:]
    level_run = a == b
    top = np.maximum(a, b)
    with np.errstate(all="ignore"):
        fall = np.abs(a - b)
    before = np.arange(a.shape[1])[None, :] < stop[:, None]

    def length(level: np.ndarray) -> np.ndarray:
        lv = level[:, None]
        with np.errstate(all="ignore"):
            frac = np.where(level_run, a > lv, np.clip((top - lv) / fall, 0.0, 1.0))
        return np.where(before & np.isfinite(frac), frac, 0.0).sum(axis=1)

    return length


def cleaned_profiles(prof: ProfileMetrics, z: np.ndarray, offsets: np.ndarray, *,
                     object_width: float) -> np.ndarray | None:
    """The de-spiked matrix :func:`read_profiles` made when it returned ``prof``.

    Only when it read this very ``z`` (equal values) on the same sample step with
    the same ``object_width``; otherwise None. For ``characteristic_slope(clean=...)``.
    """
    kept = getattr(prof, "_cleaned", None)
    if kept is None or kept.object_width != float(object_width) or len(offsets) < 2:
        return None
    if kept.step != float(offsets[1] - offsets[0]) or kept.source.shape != np.shape(z):
        return None
    return kept.clean if np.array_equal(kept.source, z, equal_nan=True) else None


def characteristic_slope(
    z: np.ndarray, offsets: np.ndarray, *, crest_level: np.ndarray, outer_edge: np.ndarray,
    swl: np.ndarray, hm0: np.ndarray, berm_width: np.ndarray,
    berm_level: np.ndarray | None = None, outer_toe: np.ndarray | None = None,
    toe_is_ground: np.ndarray | None = None, lower_slope: np.ndarray | None = None,
    tm10: np.ndarray | None = None, gamma_f: np.ndarray | float = 1.0,
    gamma_beta: np.ndarray | float = 1.0, object_width: float = 1.0, iterations: int = 4,
    approach: str = "design", clean: np.ndarray | None = None,
) -> np.ndarray:
    """Characteristic (average) outer slope tan(alpha) of a composite profile.

    EurOtop (2018) Section 5.3.4 (composite slopes; wording from memory): the
    average slope between the point 1.5 Hm0 below the still water level and the
    run-up level Ru2% above it, or the crest where that is lower, with the width B
    of a berm between those points left out::

        tan(alpha) = (z_up - z_low) / (L_slope - B)

    The run-up level is unknown until the slope is: start from SWL + 1.5 Hm0 and
    repeat with Ru2% from :func:`trajectory.hydraulics.runup_2pct` (EurOtop 2018
    Eq. 5.1/5.2 for ``approach``) when ``tm10`` is given; without ``tm10`` the
    crest is the upper point.

    The horizontal position of a level is read robustly as the length of the
    profile between the crest edge and the toe lying above it (exact on a falling
    profile, unbiased by noise). Where the lower point lies below the last sample before
    ``outer_toe`` the slope is extended with ``lower_slope`` (1:n below the berm)
    — below water, or beyond the section's end — unless ``toe_is_ground`` says the
    toe is dry ground, in which case the toe is the lower point.

    Parameters
    ----------
    z, offsets : profile matrix (stations x offsets, + towards the outer side).
    crest_level, outer_edge : from :func:`read_profiles`.
    swl, hm0 : still water level (incl. allowances) and Hm0 per station.
    berm_width, berm_level : the outer berm (NaN where none); without ``berm_level``
        the berm width is left out wherever it is finite.
    clean : the de-spiked ``z`` (gaps filled, objects of ``object_width`` removed) if
        already made, e.g. :func:`cleaned_profiles`; made here when None.

    Returns
    -------
    ndarray
        tan(alpha) per station (NaN where it cannot be formed).
    """
    n, m = z.shape
    step = float(offsets[1] - offsets[0])
    full = lambda v: np.broadcast_to(np.asarray(v, dtype=float), (n,)).astype(float)  # noqa: E731
    crest, edge, swl, hm0 = full(crest_level), full(outer_edge), full(swl), full(hm0)
    bw = np.nan_to_num(full(berm_width), nan=0.0)
    bl = full(np.nan) if berm_level is None else full(berm_level)
    empty = np.isnan(z).all(axis=1)
    if clean is None:
        filled = fill_gaps(z)
        filled[empty] = 0.0
        clean = remove_objects(filled, step, object_width=object_width,
                               noise=robust_noise(filled, step))
    ok = np.isfinite(crest) & np.isfinite(edge) & ~empty
    e = np.clip(np.rint((np.nan_to_num(edge) - offsets[0]) / step).astype(int), 0, m - 1)
    s = _side(clean, e, +1, m)
    last = np.isfinite(s).sum(axis=1) - 1
    if outer_toe is None:
        stop = last
    else:
        toe_d = np.nan_to_num(full(outer_toe) - edge, nan=np.inf)
        stop = np.minimum(last, np.floor(np.clip(toe_d / step, 0, m)).astype(int))
    stop_level = s[np.arange(n), stop]
    ground = np.zeros(n, bool) if toe_is_ground is None else np.broadcast_to(
        np.asarray(toe_is_ground, bool), (n,))
    cot_ext = full(np.nan) if lower_slope is None else full(lower_slope)

    length_above = _lengths_above(s, stop)
    to_stop = length_above(stop_level) * step

    def position(level: np.ndarray) -> np.ndarray:
        """Distance from the edge (m) where the profile passes ``level``."""
        inside = np.where(level >= crest, 0.0, length_above(level) * step)
        # below the last sample: extend from where the profile reaches that sample's level
        beyond = to_stop + (stop_level - level) * cot_ext
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
        from .hydraulics import runup_2pct

        good = np.isfinite(tan) & (full(tm10) > 0)
        ru = np.where(good, 0.0, np.nan)
        ru[good] = runup_2pct(hm0[good], full(tm10)[good], tan[good],
                              gamma_f=full(gamma_f)[good], gamma_beta=full(gamma_beta)[good],
                              approach=approach)
        up = np.where(good, np.minimum(crest, swl + ru), up)
    return tan


def extrapolated_below(*, outer_toe_level: np.ndarray, outer_water: np.ndarray,
                       swl: np.ndarray, hm0: np.ndarray) -> np.ndarray:
    """True where the characteristic slope's lower point (SWL - 1.5 Hm0) lies under water.

    Those stations' slope below the waterline is extended from the slope above it.
    """
    return np.asarray(outer_water, bool) & (np.asarray(swl) - 1.5 * np.asarray(hm0)
                                            < np.nan_to_num(outer_toe_level, nan=np.inf))
