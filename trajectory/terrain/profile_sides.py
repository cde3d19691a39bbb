"""One side of a levee profile, from a crest edge outward: slopes, berms, toe, data end.

A side is read as a breakline model: runs of slope separated by flat parts. Every
flat part at least ``BERM_MIN_WIDTH`` long, whatever its width, is a berm when more
slope follows it down to lower ground (and the lower ground is not the bottom of a
ditch), and the toe otherwise. A flat strip that ends in nodata within
``FORESHORE_MAX`` is the toe (a foreshore strip at the waterline), not a berm. Each run
of slope is one straight segment, or two where a knee (a change of gradient) is
clearly resolved by the data (composite slopes). The lowest piece of a run sets the
slope used below the data end (``lower_cot``, the extension under water) only where it
drops at least ``LOWER_PIECE_DROP`` or is steeper than the run's one line: a short gentle
tail just above the waterline is as often a few samples of noise, tussock or the
waterline's reflection as real geometry, and a gentler extension lowers the run-up
(unsafe side). Everything is computed for all
stations at once; ``s`` is a matrix (stations x samples) running from the crest end
outward, NaN beyond the section's end.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import ndimage, signal

#: a part flatter than 1:FLAT_COT is flat (crest, berm, ground)
FLAT_COT = 12.0
#: a flat part lower than the one above it by less than this (m) is not below it
TOE_DROP = 0.5
#: a flat part counts as a berm only this far (m) below the crest
BERM_MIN_DROP = 0.5
#: flat parts at least this long (m) are berms or ground
BERM_MIN_WIDTH = 2.0
#: the gradient that tells flat from slope is a least-squares one over this length (m)
GRADIENT_WINDOW = 3.0
#: rows noisier than NOISY (m) use a gradient over NOISY_WINDOW (m)
NOISY, NOISY_WINDOW = 0.07, 5.0
#: flat parts closer than this (m) at one level are one flat part
MERGE_GAP = 2.0
#: non-flat blips shorter than this (m) inside a flat part do not split it (noise)
FLAT_CLOSING = 1.0
#: a flat strip ending in nodata within this distance (m) of its end is a foreshore toe
FORESHORE_MAX = 6.0
#: a flat bottom narrower than this (m) from which the ground rises again is a ditch
DITCH_MAX_WIDTH = 8.0
#: ... when the ground rises this much (m) within this distance (m) after it
DITCH_RISE, DITCH_REACH = 0.5, 10.0
#: nodata runs at least this long (m) end the data of a side (water, or the survey's end)
DATA_END_GAP = 6.0
#: part of each segment left out at its ends in the fits; the top of the upper
#: segment leaves out at least ROUNDING_TRIM (m), a rounded shoulder
FIT_TRIM, ROUNDING_TRIM = 0.10, 0.75
#: the crest edge is on a line over this length (m) of the flank's top
EDGE_FIT_LENGTH = 2.5
#: a knee splits a run of slope where two lines beat one by this many noise variances ...
KNEE_F = 40.0
#: ... and their gradients differ by this factor at least
KNEE_RATIO = 1.25
#: a lowest piece below a knee dropping less than this (m) sets ``lower_cot`` only where
#: it is steeper than the whole run's one line
LOWER_PIECE_DROP = 1.5
#: segments of each side kept in the breakline model (slope pieces and berms)
MAX_FLATS, MAX_PIECES = 3, 11


@dataclass(frozen=True)
class SideReading:
    """What :func:`read_side` found, one entry per station (distances from the walk's start)."""

    toe: np.ndarray            # distance of the toe (m)
    toe_j: np.ndarray          # sample index of the toe's flat part (or the last sample)
    toe_level: np.ndarray
    toe_dry: np.ndarray        # bool: the toe is on dry ground (a flat part)
    truncated: np.ndarray      # bool: the side ends before a toe (not in water)
    water: np.ndarray          # bool: the data end beyond the slope or strip is water
    data_end_level: np.ndarray  # level of the last sample before the data end (NaN: no end)
    a: np.ndarray              # representative slope line z = a + b * dist (edge to berm/toe)
    b: np.ndarray
    cot: np.ndarray
    rmse: np.ndarray
    cot_se: np.ndarray
    fit_count: np.ndarray
    edge_a: np.ndarray         # the upper segment's line (the crest edge is on it)
    edge_b: np.ndarray
    berm_level: np.ndarray     # first berm (NaN: none)
    berm_start: np.ndarray
    berm_width: np.ndarray
    berm_slope: np.ndarray     # gradient, + falling away from the crest
    lower_cot: np.ndarray      # n of 1:n below the data end: the lowest slope segment, or the
    #                            lowest run's one line where that is steeper than a short
    #                            lowest piece (see LOWER_PIECE_DROP); = cot without berm
    steepest_cot: np.ndarray   # n of the steepest slope segment
    breaks: np.ndarray         # (stations x MAX_PIECES + 1 x 2): distance, level of each break
    slopes: np.ndarray         # (stations x MAX_PIECES): n of each piece (inf: berm, NaN: none)


class _Sums:
    """Prefix sums of weighted x, z, x^2, xz, z^2 along rows, for fits of any sub-run."""

    def __init__(self, x: np.ndarray, z: np.ndarray, w: np.ndarray) -> None:
        n, m = z.shape
        wx, wz = w * x, w * z
        terms = (w, wx, wz, wx * x, wx * z, wz * z)
        # one (terms x rows x samples + 1) array: one gather serves all six sums
        self.c = np.zeros((len(terms), n, m + 1))
        for k, t in enumerate(terms):
            np.cumsum(t, axis=1, out=self.c[k, :, 1:])
        self.rows = np.arange(n)

    def over(self, a: np.ndarray, b: np.ndarray) -> list[np.ndarray]:
        """Sums over samples a..b inclusive (index arrays of equal shape, rows first)."""
        a2 = np.clip(a, 0, None)
        b2 = np.clip(b + 1, 0, None)
        a2 = np.minimum(a2, b2)
        r = self.rows if a.ndim == 1 else self.rows[:, None]
        return list(self.c[:, r, b2] - self.c[:, r, a2])

    def fit(self, a: np.ndarray, b: np.ndarray) -> dict[str, np.ndarray]:
        """Least-squares line over a..b: intercept, gradient, SSE, RMS, SE of gradient, count."""
        n, sx, sz, sxx, sxz, szz = self.over(a, b)
        with np.errstate(all="ignore"):
            vxx = sxx - sx * sx / n
            vxz = sxz - sx * sz / n
            vzz = szz - sz * sz / n
            grad = vxz / vxx
            icpt = (sz - grad * sx) / n
            sse = np.maximum(vzz - grad * vxz, 0.0)
            rms = np.sqrt(sse / n)
            se = np.sqrt(sse / (n - 2) / vxx)
        few = ~(n >= 3)
        nan = np.nan
        return {"a": np.where(few, nan, icpt), "b": np.where(few, nan, grad),
                "sse": np.where(few, nan, sse), "rms": np.where(few, nan, rms),
                "se": np.where(few, nan, se), "n": n, "mean": np.where(n > 0, sz / np.where(
                    n > 0, n, 1), nan)}


def _savgol_gradient(f: np.ndarray, step: float, length: float) -> np.ndarray:
    win = max(int(round(length / step)) | 1, 5)
    if f.shape[1] < win:
        return np.gradient(f, step, axis=1) if f.shape[1] > 1 else np.zeros_like(f)
    return signal.savgol_filter(f, win, 1, deriv=1, delta=step, axis=1, mode="interp")


def gradient(f: np.ndarray, step: float, noise: np.ndarray | None = None) -> np.ndarray:
    """dz/dx along rows: first-order Savitzky-Golay over ``GRADIENT_WINDOW`` (scipy.signal).

    Rows noisier than ``NOISY`` use ``NOISY_WINDOW``, so that the gradient's noise stays
    well below the flat limit 1/FLAT_COT.
    """
    g = _savgol_gradient(f, step, GRADIENT_WINDOW)
    if noise is not None:
        rough = np.flatnonzero(np.nan_to_num(noise) > NOISY)
        if rough.size:
            g[rough] = _savgol_gradient(f[rough], step, NOISY_WINDOW)
    return g


def _merge_close(fs: np.ndarray, fe: np.ndarray, fl: np.ndarray, fend: np.ndarray,
                 step: float) -> None:
    """Merge (in place) consecutive flat parts less than ``MERGE_GAP`` apart at one level.

    Noise can break one flat part into two; the merged part keeps the longer one's level.
    """
    r = fs.shape[1]
    for _ in range(r - 1):
        merged = False
        for q in range(r - 1):
            with np.errstate(invalid="ignore"):
                close = ((fs[:, q] >= 0) & (fs[:, q + 1] >= 0)
                         & ((fs[:, q + 1] - fe[:, q] - 1) * step <= MERGE_GAP)
                         & (np.abs(fl[:, q] - fl[:, q + 1]) < TOE_DROP))
            w = np.flatnonzero(close)
            if w.size == 0:
                continue
            merged = True
            longer = (fe[w, q + 1] - fs[w, q + 1]) > (fe[w, q] - fs[w, q])
            fl[w, q] = np.where(longer, fl[w, q + 1], fl[w, q])
            fe[w, q], fend[w, q] = fe[w, q + 1], fend[w, q + 1]
            for arr, blank in ((fs, -1), (fe, -1), (fl, np.nan), (fend, False)):
                arr[w, q + 1:r - 1] = arr[w, q + 2:r]
                arr[w, r - 1] = blank
        if not merged:
            break


def flat_mask(grad: np.ndarray, step: float) -> np.ndarray:
    """Where the ground is flatter than 1:FLAT_COT, short non-flat blips closed."""
    flat = np.abs(grad) <= 1.0 / FLAT_COT
    c = max(int(round(FLAT_CLOSING / step)), 1)
    if c > 1:
        closed = ndimage.binary_closing(flat, structure=np.ones((1, c + 1), bool))
        # binary_closing erodes the row ends; keep the original there
        closed[:, :c] |= flat[:, :c]
        closed[:, -c:] |= flat[:, -c:]
        flat = closed
    return flat


def _runs(mask: np.ndarray, limit: int) -> tuple[np.ndarray, np.ndarray]:
    """Start and end index (inclusive) of up to ``limit`` True-runs per row, in order (-1: none)."""
    n, k = mask.shape
    j = np.arange(k)[None, :]
    prev = np.concatenate([np.zeros((n, 1), bool), mask[:, :-1]], axis=1)
    nxt = np.concatenate([mask[:, 1:], np.zeros((n, 1), bool)], axis=1)
    starts = np.sort(np.where(mask & ~prev, j, k), axis=1)[:, :limit]
    ends = np.sort(np.where(mask & ~nxt, j, k), axis=1)[:, :limit]
    if starts.shape[1] < limit:
        pad = np.full((n, limit - starts.shape[1]), k)
        starts, ends = np.hstack([starts, pad]), np.hstack([ends, pad])
    none = starts >= k
    return np.where(none, -1, starts), np.where(none, -1, ends)


def _data_end(meas: np.ndarray, inside: np.ndarray, step: float) -> tuple[np.ndarray, np.ndarray]:
    """First index of the side's data end (a long or final nodata run) and whether there is one.

    Without one the data end is the row's end (``k`` or the first index beyond the section).
    """
    n, k = meas.shape
    gap = inside & ~meas
    long_gap = max(int(round(DATA_END_GAP / step)), 2)
    # length of the nodata run starting at each sample (reverse cumulative count)
    rev = gap[:, ::-1]
    c = np.cumsum(rev, axis=1)
    reset = np.maximum.accumulate(np.where(~rev, c, 0), axis=1)
    run_from = (c - reset)[:, ::-1]
    # a nodata run reaching the section's end ends the data, whatever its length
    j = np.arange(k)[None, :]
    last_in = inside.sum(1) - 1
    reaches_end = gap & ((j + run_from - 1) >= last_in[:, None])
    ends = gap & ((run_from >= long_gap) | reaches_end)
    has = ends.any(axis=1)
    first = np.where(has, np.argmax(ends, axis=1), last_in + 1)
    return first, has


def _split(sums: _Sums, a: np.ndarray, b: np.ndarray, *, min_len: int,
           noise: np.ndarray) -> np.ndarray:
    """Best index c splitting a..b into two lines a..c and c+1..b; -1 where one line is enough.

    Two lines are kept where they lower the sum of squared residuals by more than
    ``KNEE_F`` noise variances and their gradients differ by ``KNEE_RATIO``.
    """
    n = a.shape[0]
    span = int(np.nanmax(np.where(b >= a, b - a + 1, 0), initial=0))
    if span < 2 * min_len + 1:
        return np.full(n, -1)
    c = a[:, None] + min_len - 1 + np.arange(span)[None, :]
    ok = c <= (b - min_len)[:, None]
    cc = np.where(ok, c, a[:, None])
    left = sums.fit(np.broadcast_to(a[:, None], cc.shape), cc)
    right = sums.fit(cc + 1, np.broadcast_to(b[:, None], cc.shape))
    tot = np.where(ok, left["sse"] + right["sse"], np.inf)
    tot = np.where(np.isfinite(tot), tot, np.inf)
    best = np.argmin(tot, axis=1)
    r = np.arange(n)
    one = sums.fit(a, b)["sse"]
    gain = one - tot[r, best]
    bl, br = left["b"][r, best], right["b"][r, best]
    with np.errstate(all="ignore"):
        ratio = np.maximum(bl / br, br / bl)
        var = np.maximum(np.nan_to_num(noise), 0.01) ** 2
        keep = (gain > KNEE_F * var) & (bl < 0) & (br < 0) & (ratio >= KNEE_RATIO)
    return np.where(keep & np.isfinite(tot[r, best]), cc[r, best], -1)


def _meet(line_a: np.ndarray, line_b: np.ndarray, level: np.ndarray, lo: np.ndarray,
          hi: np.ndarray, fallback: np.ndarray) -> np.ndarray:
    """Distance where the line a + b x reaches ``level``, clipped to lo..hi (fallback: none)."""
    with np.errstate(all="ignore"):
        x = (level - line_a) / line_b
    x = np.where((line_b < 0) & np.isfinite(x), x, fallback)
    return np.clip(x, lo, hi)


def read_side(s: np.ndarray, meas: np.ndarray, f: np.ndarray, crest: np.ndarray,
              step: float, noise: np.ndarray, *, water_below: np.ndarray | None = None,
              top_trim: float = ROUNDING_TRIM, max_berm_width: float = np.inf) -> SideReading:
    """Read one side of every profile (see the module docstring).

    ``s``: levels from the crest end outward (NaN beyond the section); ``meas``: measured
    samples (not filled gaps); ``f``: levels with gaps filled (no NaN); ``crest``: crest
    level; ``noise``: the profile's noise. ``water_below``: where the data end counts as
    water, its last level must lie at or below this (per station; None: never water).
    """
    n, k = s.shape
    rows = np.arange(n)
    j = np.arange(k)[None, :]
    dist = (np.arange(k) * step)[None, :]
    inside = np.isfinite(s)
    meas = meas & inside
    zv = np.where(meas, np.nan_to_num(s), 0.0)
    sums = _Sums(np.broadcast_to(dist, (n, k)), zv, meas.astype(float))
    end_j, has_end = _data_end(meas, inside, step)
    # the last measured sample before the data end
    before = meas & (j < end_j[:, None])
    last_meas = np.where(before.any(1), k - 1 - np.argmax(before[:, ::-1], axis=1), 0)
    end_level = np.where(has_end & before.any(1), s[rows, last_meas], np.nan)

    g = -gradient(f, step, noise)             # fall away from the crest
    flat = flat_mask(g, step) & (j < end_j[:, None]) & (j >= 1)
    min_flat = max(int(round(BERM_MIN_WIDTH / step)), 2)
    starts, ends = _runs(flat, 4 * MAX_FLATS + 8)
    # each run: level, length; qualifies as a flat part when long enough and either
    # clearly below the crest or reaching the data end
    valid_run = starts >= 0
    length = np.where(valid_run, ends - starts + 1, 0)
    lvl = sums.fit(np.where(valid_run, starts, 0), np.where(valid_run, ends, 0))["mean"]
    reaches_end = valid_run & (ends >= end_j[:, None] - 1)
    qual = (valid_run & (length >= min_flat)
            & ((lvl < (crest - BERM_MIN_DROP)[:, None]) | reaches_end))
    order = np.argsort(~qual, axis=1, kind="stable")[:, :MAX_FLATS + 4]
    fs = np.where(np.take_along_axis(qual, order, 1), np.take_along_axis(starts, order, 1), -1)
    fe = np.where(fs >= 0, np.take_along_axis(ends, order, 1), -1)
    fl = np.where(fs >= 0, np.take_along_axis(lvl, order, 1), np.nan)
    fend = np.where(fs >= 0, np.take_along_axis(reaches_end, order, 1), False)
    _merge_close(fs, fe, fl, fend, step)
    fs, fe, fl, fend = (a[:, :MAX_FLATS + 1] for a in (fs, fe, fl, fend))
    # the minimum of the profile after each flat part, and the rise after narrow bottoms
    s_inf = np.where(meas & (j < end_j[:, None]), s, np.inf)
    suffix_min = np.minimum.accumulate(s_inf[:, ::-1], axis=1)[:, ::-1]
    suffix_min = np.concatenate([suffix_min, np.full((n, 1), np.inf)], axis=1)
    reach = max(int(round(DITCH_REACH / step)), 1)
    s_ninf = np.where(meas & (j < end_j[:, None]), s, -np.inf)
    ahead_max = ndimage.maximum_filter1d(s_ninf, size=reach, axis=1, mode="nearest",
                                         origin=-(reach // 2))
    fore = max(int(round(FORESHORE_MAX / step)), 1)

    # the data end is water where its last level is plausible for water
    water_end = has_end & np.isfinite(end_level)
    if water_below is None:
        water_end &= False
    else:
        with np.errstate(invalid="ignore"):
            water_end &= end_level <= water_below
    is_toe = np.zeros(n, bool)
    toe_run = np.full(n, -1)
    berms: list[tuple[np.ndarray, np.ndarray, np.ndarray]] = []  # (start, end, level) per berm
    for q in range(MAX_FLATS):
        here = (fs[:, q] >= 0) & ~is_toe
        a_q, e_q, l_q = fs[:, q], fe[:, q], fl[:, q]
        nxt_ok = fs[:, q + 1] >= 0
        l_next = fl[:, q + 1]
        after_min = suffix_min[rows, np.clip(e_q + 1, 0, k)]
        with np.errstate(invalid="ignore"):
            lower_next = nxt_ok & (l_q - l_next >= TOE_DROP)
            # a narrow next bottom from which the ground rises again is a ditch
            nb_w = (fe[:, q + 1] - fs[:, q + 1] + 1) * step
            rise = ahead_max[rows, np.clip(fe[:, q + 1] + 1, 0, k - 1)]
            ditch = nxt_ok & (nb_w <= DITCH_MAX_WIDTH) & ~fend[:, q + 1] & (
                rise >= l_next + DITCH_RISE) & (fe[:, q + 1] + 1 < end_j)
            slope_on = ~nxt_ok & (l_q - after_min >= TOE_DROP)
            foreshore = water_end & (end_j - e_q - 1 <= fore)
            wide = (e_q - a_q + 1) * step > max_berm_width
            berm = here & ~fend[:, q] & (lower_next & ~ditch | slope_on) & ~foreshore & ~wide
        toe_here = here & ~berm
        toe_run = np.where(toe_here, q, toe_run)
        is_toe |= toe_here
        berms.append((np.where(berm, a_q, -1), np.where(berm, e_q, -1),
                      np.where(berm, l_q, np.nan)))
    # the toe: the start of the toe's flat part, or the data end
    has_toe = toe_run >= 0
    tr = np.clip(toe_run, 0, MAX_FLATS)
    toe_start = np.where(has_toe, fs[rows, tr], last_meas)
    toe_ground = sums.fit(toe_start, np.minimum(toe_start + min_flat, np.where(
        has_toe, fe[rows, tr], toe_start)))["mean"]
    toe_level = np.where(has_toe, toe_ground, s[rows, last_meas])
    water = water_end & (~has_toe | (end_j - fe[rows, tr] - 1 <= fore))

    # slope runs: from the crest end (or a berm's end) to the next flat part (or the toe)
    half = max(int(round(0.5 * GRADIENT_WINDOW / step)), 1)
    mids, piece_lines = [], []   # the knee's sample (-1: none) and (a, b) of each piece
    whole_b = []                 # gradient of each run's one line (no knee)
    run_a = np.zeros(n, int)
    bounds: list[tuple[np.ndarray, np.ndarray]] = []  # (first, last) sample of each run
    for q in range(len(berms) + 1):
        stop = toe_start if q == len(berms) else np.where(berms[q][0] >= 0, berms[q][0],
                                                          toe_start)
        active = run_a >= 0
        bounds.append((run_a.copy(), np.where(active, stop, -1)))
        if q < len(berms):
            nb = berms[q][1]
            run_a = np.where((nb >= 0) & active, nb + 1, -1)
    # the representative slope: the first run, trimmed by position at both ends
    ra, rb = bounds[0]
    top = np.maximum(np.rint(FIT_TRIM * (rb - ra)), np.rint(top_trim / step)).astype(int)
    bot = np.maximum(np.rint(FIT_TRIM * (rb - ra)), half).astype(int)
    rep_a, rep_b = ra + np.minimum(top, np.maximum(rb - ra - 3, 0) // 2), rb - bot
    rep = sums.fit(rep_a, rep_b)
    with np.errstate(all="ignore"):
        cot = np.where((rep["n"] >= 3) & (rep["b"] < 0), -1.0 / rep["b"], np.nan)
        cot_se = np.where(np.isfinite(cot), rep["se"] / rep["b"] ** 2, np.nan)
    min_seg = max(int(round(1.0 / step)), 3)
    for q, (ra, rb) in enumerate(bounds):
        ok = (ra >= 0) & (rb > ra)
        t = np.rint(FIT_TRIM * (rb - ra)).astype(int)
        # the first run leaves out only its rounded top (a 10 % trim of a long composite
        # slope would cut away its upper segment); the others the gradient window's blur
        a0 = ra + (np.full(n, int(round(top_trim / step))) if q == 0 else np.maximum(t, half))
        b0 = rb - np.maximum(t, half)
        a0 = np.where(ok & (b0 - a0 >= 2), a0, ra)
        b0 = np.where(ok & (b0 - a0 >= 2), b0, rb)
        c = np.where(ok, _split(sums, np.where(ok, a0, 0), np.where(ok, b0, 0), min_len=min_seg,
                                noise=noise), -1)
        split = c >= 0
        one = sums.fit(a0, b0)
        lft = sums.fit(a0, np.where(split, c, b0))
        rgt = sums.fit(np.where(split, c + 1, a0), b0)
        mid = np.where(split, c, -1)
        mids.append(mid)
        whole_b.append(one["b"])
        piece_lines.append(((np.where(split, lft["a"], one["a"]), np.where(split, lft["b"],
                                                                           one["b"])),
                            (np.where(split, rgt["a"], np.nan), np.where(split, rgt["b"],
                                                                         np.nan))))
        if q == 0:
            # the crest edge lies on the top of the flank: a line over its upper
            # EDGE_FIT_LENGTH (ending at the knee where one is resolved), so a long gentle
            # lower part cannot pull the edge inward
            top_end = np.minimum(np.where(split, c, b0), a0 + int(round(EDGE_FIT_LENGTH / step)))
            top_fit = sums.fit(a0, np.maximum(top_end, a0 + 2))
    edge_a, edge_b = top_fit["a"], top_fit["b"]
    edge_a = np.where(np.isfinite(edge_a), edge_a, rep["a"])
    edge_b = np.where(np.isfinite(edge_b), edge_b, rep["b"])

    # berms: level, ends where the slope lines above and below meet it, gradient
    b1s, b1e, b1l = berms[0] if berms else (np.full(n, -1),) * 2 + (np.full(n, np.nan),)
    has_b = b1s >= 0
    bfit = sums.fit(np.where(has_b, b1s, 0), np.where(has_b, b1e, 0))
    (ua, ub), (ua2, ub2) = piece_lines[0]
    up_a, up_b = np.where(np.isfinite(ua2), ua2, ua), np.where(np.isfinite(ub2), ub2, ub)
    (la, lb), _ = piece_lines[1] if len(piece_lines) > 1 else ((np.full(n, np.nan),) * 2, None)
    x1 = _meet(up_a, up_b, b1l, np.maximum(b1s * step - 2 * half * step, 0),
               b1s * step + 0.5 * half * step, b1s * step)
    x2 = _meet(la, lb, b1l, b1s * step, b1e * step + 2 * half * step, b1e * step + half * step)

    # the lowest segment and the steepest one; the breakline of each side
    breaks = np.full((n, MAX_PIECES + 1, 2), np.nan)
    slopes = np.full((n, MAX_PIECES), np.nan)
    lower_cot = np.where(np.isfinite(cot), cot, np.nan)
    steep = np.full(n, np.nan)
    p = np.zeros(n, int)      # pieces written so far
    cur_x = np.zeros(n)       # the current break (distance, level)

    def put(where: np.ndarray, x: np.ndarray, z: np.ndarray) -> None:
        w = where & (p <= MAX_PIECES)
        r = np.flatnonzero(w)
        breaks[r, p[r], 0] = x[r]
        breaks[r, p[r], 1] = z[r]

    def add_piece(where: np.ndarray, cot_piece: np.ndarray) -> None:
        w = where & (p < MAX_PIECES)
        r = np.flatnonzero(w)
        slopes[r, p[r]] = cot_piece[r]
        p[r] += 1

    def line_at(la_: np.ndarray, lb_: np.ndarray, x: np.ndarray) -> np.ndarray:
        return la_ + lb_ * x

    # the first break is the crest edge on the upper segment's line (set by the caller: 0)
    put(np.ones(n, bool), cur_x, crest)
    for q, (ra, rb) in enumerate(bounds):
        ok = (ra >= 0) & (rb > ra)
        (a1, b1), (a2, b2) = piece_lines[q]
        mid = mids[q]
        split = mid >= 0
        with np.errstate(all="ignore"):
            c1 = np.where(b1 < 0, -1.0 / b1, np.nan)
            c2 = np.where(b2 < 0, -1.0 / b2, np.nan)
            # the knee: where the two lines meet (within the run), else at the split
            xk = np.where(split, (a2 - a1) / (b1 - b2), np.nan)
            xk = np.where(np.isfinite(xk) & (xk > ra * step) & (xk < rb * step), xk,
                          mid * step + 0.5 * step)
        if q > 0:
            # the berm's end is where this run's line meets the berm level
            bs, be, bl_ = berms[q - 1]
            xb = _meet(a1, b1, bl_, bs * step, be * step + 2 * half * step, be * step)
            put(ok, xb, bl_)
        add_piece(ok & split, c1)
        put(ok & split, xk, line_at(a1, b1, xk))
        last_a, last_b = np.where(split, a2, a1), np.where(split, b2, b1)
        last_c = np.where(split, c2, c1)
        add_piece(ok, last_c)
        # the slope below this run's end (see LOWER_PIECE_DROP): a short lowest piece
        # counts only where steeper than the run's one line
        with np.errstate(all="ignore"):
            drop = b2 * (xk - rb * step)
            c_whole = np.where(whole_b[q] < 0, -1.0 / whole_b[q], np.nan)
        short_tail = split & ~(drop >= LOWER_PIECE_DROP) & np.isfinite(c_whole)
        low_c = np.where(short_tail, np.fmin(last_c, c_whole), last_c)
        lower_cot = np.where(ok & np.isfinite(low_c), low_c, lower_cot)
        steep = np.fmin(steep, np.where(ok, np.fmin(c1, np.where(split, c2, np.nan)), np.nan))
        # this run ends at a berm (its start on the level) or at the toe
        if q < len(berms):
            bs, be, bl_ = berms[q]
            isb = ok & (bs >= 0)
            xs = _meet(last_a, last_b, bl_, np.maximum(bs * step - 2 * half * step, 0),
                       bs * step + 0.5 * half * step, bs * step)
            put(isb, xs, bl_)
            add_piece(isb, np.full(n, np.inf))
            endr = ok & ~isb
        else:
            endr = ok
        xt = _meet(last_a, last_b, toe_level, np.maximum(toe_start * step - 2 * half * step, 0),
                   toe_start * step + 0.5 * half * step, toe_start * step)
        xt = np.where(has_toe, xt, toe_start * step)
        put(endr, xt, np.where(has_toe, toe_level, line_at(last_a, last_b, xt)))
        if q == 0:
            toe_x = np.where(endr, xt, np.nan)
        else:
            toe_x = np.where(endr, xt, toe_x)
    toe_x = np.where(np.isfinite(toe_x), toe_x, toe_start * step)

    with np.errstate(all="ignore"):
        return SideReading(
            toe=toe_x, toe_j=toe_start, toe_level=toe_level, toe_dry=has_toe,
            truncated=~has_toe & ~water, water=water, data_end_level=end_level,
            a=rep["a"], b=rep["b"], cot=cot, rmse=np.where(rep["n"] >= 3, rep["rms"], np.nan),
            cot_se=cot_se, fit_count=rep["n"], edge_a=edge_a, edge_b=edge_b,
            berm_level=np.where(has_b, bfit["mean"], np.nan), berm_start=np.where(has_b, x1,
                                                                                  np.nan),
            berm_width=np.where(has_b, x2 - x1, np.nan),
            berm_slope=np.where(has_b, -bfit["b"], np.nan),
            lower_cot=lower_cot, steepest_cot=steep, breaks=breaks, slopes=slopes)
