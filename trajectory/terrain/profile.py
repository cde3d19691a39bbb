"""Interpret cross-section profiles: crest, edges, slope segments, toes, berms and water.

All functions work on a profile matrix ``z`` (stations x offsets) whose offsets
are positive towards the OUTER (water) side; the caller orients it. Every
quantity is computed for all stations at once with array operations.

Definitions (documented in the README, "How each quantity is found"):

- crest objects: cells rising above a grey opening over ``object_width`` by more
  than ``OBJECT_MIN_HEIGHT`` and four times the noise (posts, fences, hedges) are
  replaced by the ground under them;
- crest top: the highest de-spiked level within ``crest_search`` of the centreline;
- crest: the samples within the crest tolerance of the top, extended over the flat
  top (flatter than 1:12, at most ``CREST_MAX_FALL`` below the top: a road with a
  cross-fall) to where the flanks begin;
- each side from there outward (:mod:`trajectory.terrain.profile_sides`): runs of slope, one or
  two straight segments each (a knee), separated by flat parts; a flat part of any
  width is a berm when more slope follows down to lower ground, else the toe;
- crest edges: where each flank's upper segment meets the crest's level (the
  terrain's shoulder); crest width: their distance; crest level: the mean of the
  measured levels between the edges, or the crest's water-side edge level where a
  resolved cross-fall makes that lower;
- slope: the least-squares line from the edge down to the first berm or the toe,
  trimmed at both ends, as n of a 1:n slope (the representative slope), with the
  steepest segment and the breakline of each side beside it;
- nodata: counted in the levee's body (toe to toe); holes on the crest and its
  shoulders are flagged from ``CREST_GAP_FLAG`` and make the crest no_data beyond
  ``CREST_GAP_MAX``; nodata beyond the outer slope is water only where its edge
  lies at or below a plausible water level, else the survey's end;
- characteristic outer slope: :func:`characteristic_slope` (EurOtop 2018).
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
from scipy import ndimage

from . import profile_sides as sides
from .profile_sides import BERM_MIN_DROP, BERM_MIN_WIDTH, FIT_TRIM, FLAT_COT, TOE_DROP

#: a slope flatter than 1:TOE_COT counts as flat ground (crest, berm, toe)
TOE_COT = FLAT_COT
#: objects must rise this much (m), and four times the noise, above the ground under them
OBJECT_MIN_HEIGHT = 0.05
#: flat, noise-free returns (or nodata) this long (m) beyond the outer toe are water
WATER_MIN_LENGTH = 3.0
#: the crest's flat top reaches at most this far (m) below the top (cross-fall)
CREST_MAX_FALL = 1.5
#: a fall across the crest smaller than this (m) is not read as a cross-fall
CROSS_FALL_MIN = 0.05
#: ... nor on a crest narrower than this (m)
CROSS_FALL_MIN_WIDTH = 6.0
#: the crest edge lies at most this far (m) beyond the crest's flat run
EDGE_REACH = 2.0
#: a hole (filled nodata) this long (m) on the crest or its shoulders is flagged ...
CREST_GAP_FLAG = 1.5
#: ... and one longer than this makes the crest no_data
CREST_GAP_MAX = 5.0
#: a flat part wider than this (m) on the outer side is the foreland, not a berm: EurOtop
#: (2018, Section 5.3.4; from memory) counts a berm wider than 0.25 L0 as a foreshore,
#: and 0.25 L0 is 6-14 m for Tm-1,0 of 4-6 s
OUTER_BERM_MAX_WIDTH = 15.0
#: nodata beyond the outer slope is water if its edge is at most this far (m) above the
#: lowest dry return of the section (or at or below the design water level)
WATER_EDGE_TOLERANCE = 0.3

__all__ = ["BERM_MIN_DROP", "BERM_MIN_WIDTH", "FIT_TRIM", "TOE_DROP"]

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
    "crest_interpolated": 2048,  # a hole of CREST_GAP_FLAG or more on the crest or shoulders
}
#: residual (m) above which a slope fit is flagged as poor
POOR_FIT_RMSE = 0.15


@dataclass(frozen=True)
class ProfileMetrics:
    """Measured profile quantities, one entry per station (NaN where unknown)."""

    crest_level: np.ndarray       # the level assessed: crest_mean, or crest_level_outer if lower
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
    crest_mean: np.ndarray        # mean measured level between the edges
    crest_level_outer: np.ndarray  # level of the crest's water-side edge (cross-fall line)
    crest_hole: np.ndarray        # longest hole (m) on the crest and its shoulders
    outer_slope_steepest: np.ndarray  # n of 1:n of the steepest segment of each side
    inner_slope_steepest: np.ndarray
    outer_toe_dry: np.ndarray     # bool: the outer toe is on dry ground (a flat part)
    outer_data_end_level: np.ndarray  # level where the outer side's data ends (NaN: none)
    outer_breaks: np.ndarray      # (stations x breaks x 2) offset, level of each break
    inner_breaks: np.ndarray


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


def _water_outer(raw: np.ndarray, toe_j: np.ndarray, noise: np.ndarray, step: float
                 ) -> np.ndarray:
    """True where the outer side ends in water at its toe.

    ``raw`` runs from the outer crest end outward (not smoothed; NaN where there is no
    measured return). Water returns are flat and free of the ground's noise: over
    ``WATER_MIN_LENGTH`` beyond the toe, 90 % of the samples have a second difference
    below a tenth of the profile's noise (profiles with less than 1 cm of noise carry
    no such contrast). Nodata beyond the toe is judged by its level instead
    (:func:`trajectory.terrain.profile_sides.read_side`).
    """
    n, k = raw.shape
    d2 = np.abs(np.pad(raw[:, 2:] - 2 * raw[:, 1:-1] + raw[:, :-2], ((0, 0), (1, 1)),
                       mode="edge"))
    thr = np.maximum(0.003, 0.1 * np.nan_to_num(noise))[:, None]
    calm = (d2 < thr) & (np.nan_to_num(noise) > 0.01)[:, None]
    like = calm & np.isfinite(raw)
    run = max(int(round(WATER_MIN_LENGTH / step)), 2)
    c = np.concatenate([np.zeros((n, 1)), np.cumsum(like, axis=1)], axis=1)
    a = np.clip(toe_j + 1, 0, k)
    b = np.clip(toe_j + 1 + run, 0, k)
    got = np.take_along_axis(c, b[:, None], 1)[:, 0] - np.take_along_axis(c, a[:, None], 1)[:, 0]
    return (b - a >= run // 2) & (got >= 0.9 * (b - a)) & (b > a)


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


def _gap_run_length(gaps: np.ndarray) -> np.ndarray:
    """Length (in samples) of the nodata run each sample belongs to (0 for data)."""
    def forward(g: np.ndarray) -> np.ndarray:
        c = np.cumsum(g, axis=1)
        return c - np.maximum.accumulate(np.where(~g, c, 0), axis=1)

    return np.where(gaps, forward(gaps) + forward(gaps[:, ::-1])[:, ::-1] - 1, 0)


def _crest_line(offsets: np.ndarray, clean: np.ndarray, w: np.ndarray, noise: np.ndarray
                ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Mean level, and the cross-fall line z = a + b x where it is resolved, of crest samples.

    The fall across the crest counts where it exceeds ``CROSS_FALL_MIN`` and three
    standard errors of the fitted line's gradient (at least the profile noise's) times the
    crest's length, on crests at least ``CROSS_FALL_MIN_WIDTH`` wide; elsewhere
    the line is flat at the mean (noise is not read as a cross-fall).
    """
    x = np.broadcast_to(offsets[None, :], clean.shape)
    a, b, _, se_fit, cnt = _line_fit(x, np.where(w > 0, clean, 0.0), w)
    with np.errstate(all="ignore"):
        sxx = (w * (x - (w * x).sum(1, keepdims=True) / cnt[:, None]) ** 2).sum(1)
        se_b = np.fmax(se_fit, np.nan_to_num(noise) / np.sqrt(sxx))
        mean = (w * np.nan_to_num(clean)).sum(1) / cnt
        span = np.where(w > 0, x, -np.inf).max(1) - np.where(w > 0, x, np.inf).min(1)
        fall = np.abs(b) * span
        real = (fall > CROSS_FALL_MIN) & (fall > 3.0 * se_b * span) & (span >= CROSS_FALL_MIN_WIDTH)
    return mean, np.where(real, a, mean), np.where(real, b, 0.0)


def read_profiles(
    z: np.ndarray, offsets: np.ndarray, *, object_width: float, crest_search: float,
    crest_tolerance: float, max_nodata: float, water_level: np.ndarray | float | None = None,
) -> ProfileMetrics:
    """Measure crest and slopes of every profile in ``z`` (offsets + towards outer side).

    ``water_level``: the design still water level per station, if known; nodata beyond
    the outer slope whose edge lies at or below it (or at the lowest dry returns) is
    water, otherwise the survey's end (``outer_truncated``).
    """
    n, m = z.shape
    step = float(offsets[1] - offsets[0])
    rows = np.arange(n)
    gaps = np.isnan(z)
    filled = _fill_gaps(z, ~gaps)
    empty = gaps.all(axis=1)
    filled[empty] = 0.0
    noise = robust_noise(filled, step)
    clean = remove_objects(filled, step, object_width=object_width, noise=noise)
    # a light running median steadies the search for the top and the crest's extent
    d = _median3(clean)

    # the crest top: the highest de-spiked level near the centreline; the crest: the
    # samples within the tolerance of it, extended over the flat top (a road with a
    # cross-fall) to where the flanks begin
    zone = np.abs(offsets) <= crest_search
    dz = np.where(zone[None, :], d, -np.inf)
    top_j = np.argmax(dz, axis=1)
    top = dz[rows, top_j]
    tol = np.maximum(crest_tolerance, 3.0 * np.nan_to_num(noise))
    near_top = (d >= (top - tol)[:, None]) & zone[None, :]
    lo0, hi0 = _run_around(near_top, top_j)
    j = np.arange(m)[None, :]
    top_run = (j >= lo0[:, None]) & (j <= hi0[:, None])
    flat = sides.flat_mask(sides.gradient(d, step, noise), step)
    crestish = (top_run | flat) & zone[None, :] & (d >= (top - CREST_MAX_FALL)[:, None])
    lo, hi = _run_around(crestish, top_j)
    zone_j = np.flatnonzero(zone)
    off_centre = (lo <= zone_j[0]) | (hi >= zone_j[-1])
    in_run = (j >= lo[:, None]) & (j <= hi[:, None])
    measured = ~gaps
    _, ca, cb = _crest_line(offsets, clean, (in_run & measured).astype(float), noise)

    # each side from its crest end outward: slope segments, berms, toe, data end
    out_walk, in_walk = _SideWalk.of(d, hi, +1), _SideWalk.of(d, lo, -1)
    meas_out = np.take(measured, out_walk.flat) & out_walk.inside
    meas_in = np.take(measured, in_walk.flat) & in_walk.inside
    lowest_dry = np.where(measured, d, np.inf).min(axis=1)
    water_below = lowest_dry + WATER_EDGE_TOLERANCE
    if water_level is not None:
        water_below = np.fmax(water_below, np.broadcast_to(np.asarray(water_level, float), (n,)))
    level_hi = ca + cb * offsets[hi]
    level_lo = ca + cb * offsets[lo]
    out = sides.read_side(out_walk.s, meas_out, out_walk.near, level_hi, step, noise,
                          water_below=water_below, max_berm_width=OUTER_BERM_MAX_WIDTH)
    inn = sides.read_side(in_walk.s, meas_in, in_walk.near, level_lo, step, noise)

    # the crest edges: where the upper segment of each flank meets the crest's level
    # (the terrain's own shoulder, not a line through the whole slope)
    span = (hi - lo) * step

    def edge(side: sides.SideReading, level: np.ndarray) -> np.ndarray:
        with np.errstate(all="ignore"):
            x = (level - side.edge_a) / side.edge_b
        ok = (side.edge_b < 0) & np.isfinite(x)
        return np.where(ok, np.clip(x, -0.5 * span, EDGE_REACH), 0.0)

    x_out = offsets[hi] + edge(out, level_hi)
    x_in = offsets[lo] - edge(inn, level_lo)
    swap = x_in > x_out   # a crest narrower than the fits resolve: keep the run's ends
    x_out, x_in = np.where(swap, offsets[hi], x_out), np.where(swap, offsets[lo], x_in)

    # the crest level: the mean of the measured samples between the edges (filled
    # gaps are not averaged in); its water-side edge level from the cross-fall line
    between = (in_run & (offsets[None, :] >= (x_in + 0.5 * step)[:, None])
               & (offsets[None, :] <= (x_out - 0.5 * step)[:, None]))
    inner = between & measured
    use = np.where((inner.sum(1) >= 1)[:, None], inner, in_run & measured)
    cells = use.sum(1)
    crest_mean, ca, cb = _crest_line(offsets, clean, use.astype(float), noise)
    crest_outer = np.where(cb != 0.0, ca + cb * x_out, crest_mean)
    # the lower of the two enters the margin (see the README)
    crest_level = np.fmin(crest_mean, crest_outer)

    # holes on the crest and its shoulders (filled, not measured)
    run_len = _gap_run_length(gaps) * step
    around = ((offsets[None, :] >= (x_in - 1.0)[:, None])
              & (offsets[None, :] <= (x_out + 1.0)[:, None]))
    crest_hole = np.where(around, run_len, 0.0).max(axis=1)
    crest_gap_share = (between & gaps).sum(1) / np.maximum(between.sum(1), 1)

    outer_toe = offsets[hi] + out.toe
    inner_toe = offsets[lo] - inn.toe
    # missing data counts in the levee's body (toe to toe), not on the water beyond
    body = ((offsets[None, :] > inner_toe[:, None] - 0.5 * step)
            & (offsets[None, :] < outer_toe[:, None] + 0.5 * step))
    with np.errstate(all="ignore"):
        nodata_fraction = np.where(body, gaps, False).sum(1) / np.maximum(body.sum(1), 1)
    nodata_fraction = np.where(empty, 1.0, nodata_fraction)

    # water returns (flat and noise-free) beyond the outer toe are water too
    wet = np.take(gaps, out_walk.flat) & out_walk.inside
    land_noise = robust_noise(filled[:, offsets <= 0], step)
    raw_out = np.where(out_walk.inside & ~wet, np.take(clean, out_walk.flat), np.nan)
    toe_k = np.clip(np.ceil(out.toe / step).astype(int), 0, m - 1)
    calm = _water_outer(raw_out, toe_k + 1, land_noise, step) & ~wet[rows, toe_k]
    water = out.water | calm
    toe_dry = out.toe_dry & ~calm
    truncated_out = out.truncated & ~calm

    too_holed = (crest_hole > CREST_GAP_MAX) | (crest_gap_share > 0.5)
    flags = np.zeros(n, dtype=np.int64)
    flags |= np.where((nodata_fraction > max_nodata) | too_holed, FLAGS["nodata"], 0)
    flags |= np.where((nodata_fraction > 0) & (nodata_fraction <= max_nodata),
                      FLAGS["nodata_gaps"], 0)
    flags |= np.where(off_centre, FLAGS["crest_off_centre"], 0)
    flags |= np.where(truncated_out, FLAGS["outer_truncated"], 0)
    flags |= np.where(inn.truncated, FLAGS["inner_truncated"], 0)
    flags |= np.where(out.rmse > POOR_FIT_RMSE, FLAGS["poor_outer_fit"], 0)
    flags |= np.where(inn.rmse > POOR_FIT_RMSE, FLAGS["poor_inner_fit"], 0)
    flags |= np.where(np.isnan(out.cot), FLAGS["no_outer_slope"], 0)
    flags |= np.where(water, FLAGS["outer_water"], 0)
    flags |= np.where(crest_hole >= CREST_GAP_FLAG, FLAGS["crest_interpolated"], 0)
    readable = ((~empty) & (nodata_fraction <= max_nodata) & ~off_centre
                & np.isfinite(out.cot) & ~too_holed & (cells >= 1))

    def breaks(side: sides.SideReading, origin: np.ndarray, sign: int, x_edge: np.ndarray,
               level: np.ndarray) -> np.ndarray:
        """The side's breakline in (offset from the centreline, level)."""
        b = side.breaks.copy()
        b[:, :, 0] = origin[:, None] + sign * b[:, :, 0]
        b[:, 0, 0], b[:, 0, 1] = x_edge, level
        return b

    nan = np.where(readable, 1.0, np.nan)  # no made-up numbers where unreadable
    metrics = ProfileMetrics(
        crest_level=crest_level * nan,
        crest_offset=0.5 * (x_out + x_in) * nan,
        crest_width=(x_out - x_in) * nan,
        outer_edge=x_out * nan,
        inner_edge=x_in * nan,
        outer_toe=outer_toe * nan,
        inner_toe=inner_toe * nan,
        outer_toe_level=out.toe_level * nan,
        inner_toe_level=inn.toe_level * nan,
        outer_slope=out.cot * nan,
        inner_slope=inn.cot * nan,
        outer_fit_rmse=out.rmse * nan,
        inner_fit_rmse=inn.rmse * nan,
        outer_slope_se=out.cot_se * nan,
        outer_fit_count=out.fit_count,
        crest_cells=cells,
        noise=noise,
        nodata_fraction=nodata_fraction,
        flags=flags,
        readable=readable,
        outer_berm_level=out.berm_level * nan,
        outer_berm_width=out.berm_width * nan,
        inner_berm_level=inn.berm_level * nan,
        inner_berm_width=inn.berm_width * nan,
        outer_berm_slope=out.berm_slope * nan,
        inner_berm_slope=inn.berm_slope * nan,
        outer_lower_slope=out.lower_cot * nan,
        outer_water=water & readable,
        crest_mean=crest_mean * nan,
        crest_level_outer=crest_outer * nan,
        crest_hole=crest_hole,
        outer_slope_steepest=out.steepest_cot * nan,
        inner_slope_steepest=inn.steepest_cot * nan,
        outer_toe_dry=toe_dry & readable,
        outer_data_end_level=out.data_end_level,
        outer_breaks=breaks(out, offsets[hi], +1, x_out, level_hi) * nan[:, None, None],
        inner_breaks=breaks(inn, offsets[lo], -1, x_in, level_lo) * nan[:, None, None],
    )
    # kept for characteristic_slope on the same profiles (not a field: not an output)
    object.__setattr__(metrics, "_cleaned", _Cleaned(np.array(z, copy=True), step,
                                                      float(object_width), clean))
    return metrics


def breaks_text(breaks: np.ndarray) -> np.ndarray:
    """Each station's breakline as text: ``offset/level`` pairs from crest edge to toe.

    Offsets in m from the centreline (+ towards the water) to 0.1 m, levels to 0.01 m;
    empty where unreadable. Columnar: one formatted piece per break, joined per row.
    """
    n = breaks.shape[0]
    if n == 0 or breaks.shape[1] == 0:
        return np.full(n, None, dtype=object)
    ok = np.isfinite(breaks).all(axis=2)
    x, z = np.nan_to_num(breaks[..., 0]), np.nan_to_num(breaks[..., 1])
    pieces = np.char.add(np.char.add(np.char.mod("%.1f/", x), np.char.mod("%.2f", z)), " ")
    text = np.where(ok[:, 0], pieces[:, 0], "")
    for k in range(1, breaks.shape[1]):
        text = np.char.add(text, np.where(ok[:, k], pieces[:, k], ""))
    out = np.char.rstrip(text).astype(object)
    out[~ok.any(axis=1)] = None
    return out


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
    repeat with Ru2% from :func:`trajectory.formulas.hydraulics.runup_2pct` (EurOtop 2018
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
        from ..formulas.hydraulics import runup_2pct

        good = np.isfinite(tan) & (full(tm10) > 0)
        ru = np.where(good, 0.0, np.nan)
        ru[good] = runup_2pct(hm0[good], full(tm10)[good], tan[good],
                              gamma_f=full(gamma_f)[good], gamma_beta=full(gamma_beta)[good],
                              approach=approach)
        up = np.where(good, np.minimum(crest, swl + ru), up)
    return tan


def extrapolated_below(*, outer_toe_level: np.ndarray, toe_dry: np.ndarray,
                       swl: np.ndarray, hm0: np.ndarray) -> np.ndarray:
    """True where the characteristic slope's lower point (SWL - 1.5 Hm0) lies below the
    last sample of a slope that does not end on dry ground (water, or the survey's end).

    Those stations' slope below it is extended with the lowest measured segment.
    """
    return ~np.asarray(toe_dry, bool) & (np.asarray(swl) - 1.5 * np.asarray(hm0)
                                            < np.nan_to_num(outer_toe_level, nan=np.inf))
