"""From deficit to remedy: raise the crest, add an outer berm, or both, with fill volumes.

A screening estimate for planning, not a design. For each station that falls
short, three options bring the required crest level back to (at most) the
crest level:

raise
    Raise the crest by the deficit plus the settlement allowance of the new
    fill, keeping crest width, crest centre and both slopes: each slope moves
    outward by ``n * dh``. Added cross-section area, from the trapezoid::

        dA = W dh + n_out (H_out dh + dh^2 / 2) + n_in (H_in dh + dh^2 / 2)

    with W the crest width and H the crest height above each toe.
outer_berm
    A horizontal berm of width B on the outer slope at a chosen level (default:
    the still water, design level + sea-level rise, where the berm factor of
    EurOtop (2018) is smallest); the slope below it keeps its gradient, moved
    outward by B, so the added area is ``B (berm level - outer toe level)``.
    B is the width whose berm factor gamma_b makes the required level equal
    to the crest. gamma_b is bounded below by 0.6 (EurOtop 2018), so widths
    beyond the one reaching that bound do nothing more: where even that berm
    cannot close the gap the option says so and gives that berm.
combined
    A berm of width B and the crest raise still needed with it; B is chosen by
    a 1-D search over widths from 0 to the largest effective one (plus the
    berm-only width) for the least added area. With B = 0 it is the raise, at
    the berm-only width it is the berm, so it never needs more fill than the
    better of the two.

Every option is judged by the rule the status used (:class:`Rule`: the
characteristic outer slope and the measured berm, one requirement function,
:func:`requirement_with`), so a crest raised by the option's raise meets the
very required level the verdict compared with. Where the profile has an outer
berm, the berm option widens it at its level. Volumes are areas times the
length each station stands for. Per stretch the options are given twice: one
design over the whole stretch (the largest raise, the widest berm, or a uniform
combination), and designed station by station and summed; either is marked as
closing the gap only after every station's margin has been recomputed with it
built in (:func:`margin_with_option`).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from ..formulas import hydraulics as hy
from ..requirement.crest_level import StationConditions, required_level

#: the caveat beside every reinforcement option (report and workbook)
CAVEAT = ("Screening estimates for planning, not a design: idealised profiles from the "
          "measured crest, slopes and toes; volumes are cross-section areas times stretch "
          "length. To be reviewed by a qualified engineer under local codes.")
#: the wording on costs, beside the caveat (report and workbook)
COST_NOTE = "Costs are order-of-magnitude estimates (fill volume times the unit rate)."
#: option names (the public values of the `option` field)
OPTIONS = ("raise", "outer_berm", "combined")
#: widths tried by the combined option's search
SEARCH_POINTS = 121
#: the berm width is bisected until it is known to this (m)
WIDTH_TOLERANCE = 1e-4


@dataclass(frozen=True)
class Geometry:
    """Measured cross-section geometry used by the options (columnar)."""

    crest_level: np.ndarray
    crest_width: np.ndarray
    outer_slope: np.ndarray        # n of 1:n
    inner_slope: np.ndarray
    outer_toe_level: np.ndarray
    inner_toe_level: np.ndarray


def raise_area(dh: np.ndarray, g: Geometry) -> np.ndarray:
    """Added cross-section area (m2) of a crest raise ``dh`` keeping width and slopes."""
    h_out = np.maximum(g.crest_level - g.outer_toe_level, 0.0)
    h_in = np.maximum(g.crest_level - g.inner_toe_level, 0.0)
    return (g.crest_width * dh + g.outer_slope * (h_out * dh + dh**2 / 2)
            + g.inner_slope * (h_in * dh + dh**2 / 2))


def berm_area(width: np.ndarray, berm_level: np.ndarray, g: Geometry) -> np.ndarray:
    """Added area (m2) of a horizontal outer berm: width x height above the outer toe."""
    return width * np.maximum(berm_level - g.outer_toe_level, 0.0)


def outline(g: Geometry, i: int, *, crest_raise: float = 0.0, berm_width: float = 0.0,
            berm_level: float = np.nan, inner_edge: float = 0.0,
            span: tuple[float, float] | None = None) -> tuple[np.ndarray, np.ndarray]:
    """Idealised profile (offset, level) of station ``i`` with an option applied.

    Offsets are positive towards the outer side, the inner crest edge at
    ``inner_edge``. The profile runs toe to toe (or over ``span``, extended
    horizontally at the toe levels), so outlines of different options can be
    compared over the same width.
    """
    c = float(g.crest_level[i]) + crest_raise
    w, no, ni = float(g.crest_width[i]), float(g.outer_slope[i]), float(g.inner_slope[i])
    to, ti = float(g.outer_toe_level[i]), float(g.inner_toe_level[i])
    x_ie, x_oe = inner_edge, inner_edge + w
    xs = [x_ie - ni * (c - ti), x_ie, x_oe]
    zs = [ti, c, c]
    if berm_width > 0 and to < berm_level < c:
        x_b = x_oe + no * (c - berm_level)
        xs += [x_b, x_b + berm_width, x_b + berm_width + no * (berm_level - to)]
        zs += [berm_level, berm_level, to]
    else:
        xs.append(x_oe + no * (c - to))
        zs.append(to)
    if span is not None:
        xs = [min(span[0], xs[0])] + xs + [max(span[1], xs[-1])]
        zs = [ti] + zs + [to]
    return np.asarray(xs), np.asarray(zs)


def largest_effective_berm(cond: StationConditions, g: Geometry, berm_level: np.ndarray,
                           *, approach: str = "design",
                           tan_alpha: np.ndarray | None = None) -> np.ndarray:
    """Berm width (m) at which gamma_b reaches its lower bound 0.6 (EurOtop 2018).

    With rB = B / (B + Hm0 (n_below + n_above)) and gamma_b = 1 - rB (1 - rdb),
    solving gamma_b = 0.6 gives rB = 0.4 / (1 - rdb), i.e.
    B = rB Hm0 (n_below + n_above) / (1 - rB); rdb (hydraulics.berm_depth_factor,
    with the 2 % run-up of the run's approach above still water) does not depend on B.
    The slopes below and above the berm are those of the requirement: ``tan_alpha``
    (the characteristic slope the status used), by default the fitted outer slope.
    """
    swl = cond.water_level + cond.sea_level_rise
    with np.errstate(divide="ignore", invalid="ignore"):
        n = g.outer_slope if tan_alpha is None else 1.0 / np.asarray(tan_alpha, float)
    ru = hy.runup_2pct(cond.hm0, cond.tm10, 1.0 / n, gamma_f=cond.roughness,
                       gamma_beta=hy.gamma_beta_runup(cond.wave_angle), approach=approach)
    rdb = hy.berm_depth_factor(swl - berm_level, cond.hm0, runup=ru)
    with np.errstate(divide="ignore", invalid="ignore"):
        r_b = np.clip((1.0 - hy.GAMMA_B_MIN) / (1.0 - rdb), 0.0, 0.999)
        b = r_b * cond.hm0 * 2.0 * n / (1.0 - r_b)
    return np.where(rdb < 1.0, b, 0.0)


@dataclass(frozen=True)
class Rule:
    """The requirement rule of the status, per station, that every option is judged by.

    ``tan_alpha`` is the slope tangent the status used (the characteristic outer
    slope, EurOtop 2018 section 5.3.3); ``berm_width`` and ``berm_level`` the
    outer berm it counted (0 and NaN where none). An option's berm widens that
    berm at its level; where there is none it is a new berm at ``new_level``.
    """

    tan_alpha: np.ndarray | None
    berm_width: np.ndarray
    berm_level: np.ndarray
    approach: str = "design"

    @staticmethod
    def fitted(n: int, approach: str = "design") -> Rule:
        """The rule without a characteristic slope or measured berm (fitted slope)."""
        return Rule(None, np.zeros(n), np.full(n, np.nan), approach)

    @staticmethod
    def of_stations(stations: pd.DataFrame, approach: str = "design") -> Rule:
        """The rule the status used, from the station table's own columns."""
        n = len(stations)
        tan = stations["tan_alpha"].to_numpy(float) if "tan_alpha" in stations else None
        bw = (stations["outer_berm_width"].to_numpy(float) if "outer_berm_width" in stations
              else np.zeros(n))
        bl = (stations["outer_berm_level"].to_numpy(float) if "outer_berm_level" in stations
              else np.full(n, np.nan))
        return Rule(tan, bw, bl, approach)

    def take(self, idx: np.ndarray) -> Rule:
        return Rule(None if self.tan_alpha is None else self.tan_alpha[idx],
                    self.berm_width[idx], self.berm_level[idx], self.approach)

    def berm(self, new_level: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """(level, existing width) of the berm an option widens, per station."""
        has = np.isfinite(self.berm_width) & (self.berm_width > 0) & np.isfinite(self.berm_level)
        return (np.where(has, self.berm_level, new_level),
                np.where(has, self.berm_width, 0.0))


def requirement_with(cond: StationConditions, g: Geometry, rule: Rule, *,
                     added_width: np.ndarray | float, level: np.ndarray,
                     base_width: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Required level and gamma_b with the outer berm widened by ``added_width``.

    The one call of :func:`trajectory.requirement.crest_level.required_level` for options, with
    the status's slope tangent; with ``added_width`` 0 it is the status's own
    requirement (the crest level only enters the overtopping at the crest).
    """
    n = g.crest_level.size
    width = base_width + np.broadcast_to(np.asarray(added_width, float), (n,))
    req = required_level(cond, outer_slope=g.outer_slope, crest_level=g.crest_level,
                         approach=rule.approach, tan_alpha=rule.tan_alpha,
                         berm_width=width, berm_level=level)
    return req.required_level, req.gamma_b


def _fields(obj) -> dict:
    return {k: np.asarray(v) for k, v in obj.__dict__.items()
            if v is not None and not isinstance(v, str)}


def _repeat(obj, k: int):
    """The same record with every station repeated ``k`` times (for a grid, flattened)."""
    return type(obj)(**{k_: np.repeat(v, k) if v.ndim else v for k_, v in _fields(obj).items()})


def _take(obj, idx: np.ndarray):
    """The same record restricted to stations ``idx``."""
    return type(obj)(**{k: v[idx] if v.ndim else v for k, v in _fields(obj).items()})


def _repeat_rule(rule: Rule, k: int) -> Rule:
    return Rule(None if rule.tan_alpha is None else np.repeat(rule.tan_alpha, k),
                np.repeat(rule.berm_width, k), np.repeat(rule.berm_level, k), rule.approach)


def effective_raise(crest_raise: np.ndarray | float, settle: np.ndarray) -> np.ndarray:
    """The raise left once the new fill has settled: ``dh - settlement``, never below 0."""
    dh = np.broadcast_to(np.asarray(crest_raise, float), settle.shape)
    return np.where(dh > 0, np.maximum(dh - settle, 0.0), 0.0)


def station_options(
    cond: StationConditions, g: Geometry, *, target_margin: np.ndarray,
    berm_above_swl: float = 0.0, fill_settlement: np.ndarray | float = 0.0,
    approach: str = "design", rule: Rule | None = None,
) -> dict[str, dict[str, np.ndarray]]:
    """The three options per station (columnar), each as a dict of arrays.

    ``target_margin`` is the margin the option must reach (0 for a deficit).
    ``rule`` is the requirement the status used (:class:`Rule`); by default the
    fitted outer slope without a measured berm. Keys per option: crest_raise,
    berm_level, berm_width (the width added), area, footprint_outer,
    footprint_inner, gamma_b, closes_gap, remaining (m still short).
    """
    n = g.crest_level.size
    rule = rule or Rule.fitted(n, approach)
    target = g.crest_level - np.broadcast_to(target_margin, (n,))
    settle = np.broadcast_to(np.asarray(fill_settlement, float), (n,))
    swl = cond.water_level + cond.sea_level_rise
    lb, base = rule.berm(swl + berm_above_swl)
    zero = np.zeros(n)

    def req_at(c, gg, rr, width, level, base_w):
        return requirement_with(c, gg, rr, added_width=width, level=level, base_width=base_w)

    req0, _ = req_at(cond, g, rule, zero, lb, base)
    short = np.maximum(req0 - target, 0.0)

    # raise: the deficit plus the settlement of the new fill
    dh = np.where(short > 0, short + settle, 0.0)
    out = {"raise": {
        "crest_raise": dh, "berm_level": np.full(n, np.nan), "berm_width": zero,
        "area": raise_area(dh, g), "footprint_outer": g.outer_slope * dh,
        "footprint_inner": g.inner_slope * dh, "gamma_b": np.ones(n),
        "closes_gap": np.ones(n, bool), "remaining": zero}}

    # outer berm: bisection on the width (required level falls as the berm widens)
    b_total = np.nan_to_num(largest_effective_berm(cond, g, lb, approach=approach,
                                                   tan_alpha=rule.tan_alpha))
    b_max = np.maximum(b_total - base, 0.0)
    req_max, gb_max = req_at(cond, g, rule, b_max, lb, base)
    closes = (req_max <= target + 1e-9) | (short <= 0)
    lo, hi = zero.copy(), b_max.copy()
    for _ in range(60):   # to a tenth of a millimetre of width (about 20 halvings)
        if not np.any(hi - lo > WIDTH_TOLERANCE):
            break
        mid = 0.5 * (lo + hi)
        r_mid, _ = req_at(cond, g, rule, mid, lb, base)
        ok = r_mid <= target
        hi = np.where(ok, mid, hi)
        lo = np.where(ok, lo, mid)
    width = np.where(short <= 0, 0.0, np.where(closes, hi, b_max))
    req_b, gb = req_at(cond, g, rule, width, lb, base)
    out["outer_berm"] = {
        "crest_raise": zero, "berm_level": lb, "berm_width": width,
        "area": berm_area(width, lb, g), "footprint_outer": width,
        "footprint_inner": zero, "gamma_b": gb, "closes_gap": closes,
        "remaining": np.maximum(req_b - target, 0.0)}

    # combined: least area over berm widths 0..b_max and the berm-only width
    frac = np.linspace(0.0, 1.0, SEARCH_POINTS)
    grid = np.concatenate([frac[None, :] * b_max[:, None], width[:, None]], axis=1)
    k_pts = grid.shape[1]
    r_g, gb_g = req_at(_repeat(cond, k_pts), _repeat(g, k_pts), _repeat_rule(rule, k_pts),
                       grid.ravel(), np.repeat(lb, k_pts), np.repeat(base, k_pts))
    r_g, gb_g = r_g.reshape(grid.shape), gb_g.reshape(grid.shape)
    g_g = Geometry(**{k_: np.asarray(v, float)[:, None] for k_, v in g.__dict__.items()})
    need = np.maximum(r_g - target[:, None], 0.0)
    dh_g = np.where(need > 0, need + settle[:, None], 0.0)
    area_g = raise_area(dh_g, g_g) + berm_area(grid, lb[:, None], g_g)
    area_g = np.where(np.isfinite(area_g), area_g, np.inf)
    k = np.argmin(area_g, axis=1)
    rows = np.arange(n)
    bw_c = grid[rows, k]
    dh_c = dh_g[rows, k]
    out["combined"] = {
        "crest_raise": dh_c, "berm_level": np.where(bw_c > 0, lb, np.nan),
        "berm_width": bw_c, "area": area_g[rows, k] * np.isfinite(area_g[rows, k]),
        "footprint_outer": bw_c + g.outer_slope * dh_c,
        "footprint_inner": g.inner_slope * dh_c, "gamma_b": gb_g[rows, k],
        "closes_gap": np.ones(n, bool), "remaining": zero}
    return out


def margin_with_option(cond: StationConditions, g: Geometry, rule: Rule, *,
                       crest_raise: np.ndarray | float, added_width: np.ndarray | float,
                       new_level: np.ndarray, fill_settlement: np.ndarray) -> np.ndarray:
    """Each station's margin with an option built in, under the status's rule.

    The crest is raised by ``crest_raise`` less the settlement of the new fill;
    the outer berm (the measured one, or a new one at ``new_level``) is widened by
    ``added_width``; the required level is computed again by
    :func:`requirement_with`. An option closes the gap where this is >= 0.
    """
    level, base = rule.berm(new_level)
    req, _ = requirement_with(cond, g, rule, added_width=added_width, level=level,
                              base_width=base)
    return g.crest_level + effective_raise(crest_raise, fill_settlement) - req


#: tolerance of the closing check (m): below a tenth of a millimetre counts as reached
CLOSE_TOLERANCE = 1e-4


#: berm widths tried per stretch for the combined whole-stretch design (0..widest)
STRETCH_WIDTHS = 41


def _stretch_designs(cond, g, rule, opts, *, target, settle, extents, lb, bounds):
    """One design per option and stretch, sized so every station of it reaches target.

    Stretches are consecutive runs of the (concatenated) stations, ``bounds`` their
    start indices and the end. raise: the largest station raise; outer_berm: the
    widest station berm; combined: a uniform added berm width (searched over
    0..the widest effective one) and the uniform raise still needed with it, least
    total fill. All stretches and widths in one requirement call (columnar).
    Returns ``{option: (raise per stretch, added width per stretch)}``.
    """
    starts = bounds[:-1]
    sizes = np.diff(bounds)
    of = np.repeat(np.arange(sizes.size), sizes)          # stretch of each station
    level, base = rule.berm(lb)
    designs = {"raise": (np.maximum.reduceat(opts["raise"]["crest_raise"], starts),
                         np.zeros(sizes.size)),
               "outer_berm": (np.zeros(sizes.size),
                              np.maximum.reduceat(opts["outer_berm"]["berm_width"], starts))}
    b_all = np.maximum(np.nan_to_num(largest_effective_berm(
        cond, g, level, approach=rule.approach, tan_alpha=rule.tan_alpha)) - base, 0.0)
    b_max = np.maximum(np.maximum.reduceat(b_all, starts), 0.0)
    # the widths tried per stretch, ascending (equal areas: the narrower berm wins)
    widths = np.sort(np.concatenate([np.linspace(0.0, 1.0, STRETCH_WIDTHS)[None, :]
                                     * b_max[:, None], designs["outer_berm"][1][:, None]],
                                    axis=1), axis=1)
    k = widths.shape[1]
    w_st = widths[of]                                     # stations x widths
    req, _ = requirement_with(_repeat(cond, k), _repeat(g, k), _repeat_rule(rule, k),
                              added_width=w_st.ravel(), level=np.repeat(level, k),
                              base_width=np.repeat(base, k))
    need = np.maximum(req.reshape(w_st.shape) - (g.crest_level - target)[:, None], 0.0)
    dh_st = np.where(need > 0, need + settle[:, None], 0.0)
    dh_sw = np.maximum.reduceat(dh_st, starts, axis=0)    # stretches x widths
    g_col = Geometry(**{k_: np.asarray(v, float)[:, None] for k_, v in g.__dict__.items()})
    area_st = (raise_area(dh_sw[of], g_col) + berm_area(w_st, level[:, None], g_col)) \
        * extents[:, None]
    area_sw = np.add.reduceat(area_st, starts, axis=0)
    area_sw = np.where(np.isfinite(area_sw), area_sw, np.inf)
    best = np.argmin(area_sw, axis=1)
    rows = np.arange(sizes.size)
    found = np.isfinite(area_sw[rows, best])
    designs["combined"] = (np.where(found, dh_sw[rows, best], 0.0),
                           np.where(found, widths[rows, best], 0.0))
    return designs, level


def _segment_argmin(values: np.ndarray, bounds: np.ndarray) -> np.ndarray:
    """Index (into ``values``) of the first minimum of each segment ``bounds[i]:bounds[i+1]``."""
    sizes = np.diff(bounds)
    of = np.repeat(np.arange(sizes.size), sizes)
    order = np.lexsort((np.arange(values.size), values, of))
    return order[bounds[:-1]]


def plan_options(
    stations: pd.DataFrame, cond: StationConditions, stretches, *, extents: np.ndarray,
    watch_band: float, include_watch: bool = False, berm_above_swl: float = 0.0,
    fill_settlement: np.ndarray | float = 0.0, unit_cost: float = 0.0,
    approach: str = "design",
) -> pd.DataFrame:
    """One row per stretch, basis and option: the remedies of every deficit stretch.

    Every option is judged by the rule the status used (:meth:`Rule.of_stations`:
    the characteristic slope, the measured berm). ``extents`` is the chainage
    length each station stands for (m). Deficit stretches target a margin of 0;
    with ``include_watch`` watch stretches target the watch band. ``basis`` is
    ``whole_stretch`` (one design over the stretch, sized by the station that
    needs most: ``chainage``) or ``every_station`` (each station's own design,
    volumes summed, widths and raises their maxima). ``closes_gap`` is checked
    afterwards: the margin of every station with the option built in
    (:func:`margin_with_option`) reaches the target.
    """
    g = Geometry(*(stations[c].to_numpy(float) for c in (
        "crest_level", "crest_width", "outer_slope", "inner_slope",
        "outer_toe_level", "inner_toe_level")))
    rule_all = Rule.of_stations(stations, approach)
    settle = np.broadcast_to(np.asarray(fill_settlement, float), (len(stations),))
    wanted = ("deficit", "watch") if include_watch else ("deficit",)
    rows = []
    margin = stations["margin"].to_numpy(float)
    chainage = stations["chainage"].to_numpy(float)
    # every station of every wanted stretch designed in one vectorised call
    picked = [i for i in np.flatnonzero(np.isin(stretches.status, wanted))]
    members = [np.arange(stretches.first[i], stretches.last[i] + 1) for i in picked]
    members = [idx[np.isfinite(margin[idx])] for idx in members]
    every = np.concatenate(members) if members else np.array([], int)
    if every.size == 0:
        return pd.DataFrame(columns=list(OPTION_COLUMNS))
    targets = np.concatenate([np.full(idx.size, 0.0 if stretches.status[i] == "deficit"
                                      else watch_band)
                              for i, idx in zip(picked, members, strict=True)])
    nonempty = [k for k, idx in enumerate(members) if idx.size]
    picked = [picked[k] for k in nonempty]
    members = [members[k] for k in nonempty]
    c_e, g_e, r_e = cond.take(every), _take(g, every), rule_all.take(every)
    s_e, e_e = settle[every], extents[every]
    all_opts = station_options(c_e, g_e, target_margin=targets,
                               berm_above_swl=berm_above_swl, fill_settlement=s_e,
                               approach=approach, rule=r_e)
    bounds = np.concatenate([[0], np.cumsum([idx.size for idx in members])])
    starts, sizes = bounds[:-1], np.diff(bounds)
    lb = c_e.water_level + c_e.sea_level_rise + berm_above_swl
    designs, level = _stretch_designs(c_e, g_e, r_e, all_opts, target=targets, settle=s_e,
                                      extents=e_e, lb=lb, bounds=bounds)
    base_w = r_e.berm(lb)[1]
    whole: dict[str, dict] = {}
    for name in OPTIONS:
        # one design over each whole stretch, checked at every station of it
        dh_s, w_s = designs[name]
        dh, w = np.repeat(dh_s, sizes), np.repeat(w_s, sizes)
        req, gb = requirement_with(c_e, g_e, r_e, added_width=w, level=level,
                                   base_width=base_w)
        after = g_e.crest_level + effective_raise(dh, s_e) - req - targets
        area = raise_area(dh, g_e) + berm_area(w, level, g_e)
        o = all_opts[name]
        # each station its own design, checked station by station
        after_own = margin_with_option(c_e, g_e, r_e, crest_raise=o["crest_raise"],
                                       added_width=o["berm_width"], new_level=lb,
                                       fill_settlement=s_e) - targets
        whole[name] = {"dh": dh_s, "w": w_s, "after": after, "gb": gb,
                       "volume": np.add.reduceat(area * e_e, starts),
                       "gov": _segment_argmin(after, bounds),
                       "after_own": np.minimum.reduceat(after_own, starts)}
    for k, i in enumerate(picked):
        part = slice(bounds[k], bounds[k + 1])
        status = stretches.status[i]
        base = {"from_chainage": float(stretches.from_chainage[i]),
                "to_chainage": float(stretches.to_chainage[i]),
                "length": float(stretches.to_chainage[i] - stretches.from_chainage[i]),
                "status": status, "stretch": int(i)}
        for name in OPTIONS:
            d = whole[name]
            dh, w, gov = float(d["dh"][k]), float(d["w"][k]), int(d["gov"][k])
            worst = float(d["after"][gov])
            rows.append({**base, "basis": "whole_stretch", "option": name,
                         "chainage": float(chainage[every[gov]]), "crest_raise": dh,
                         "berm_level": float(level[gov]) if w > 0 else np.nan,
                         "berm_width": w, "fill_volume": float(d["volume"][k]),
                         "footprint_outer": w + float(g_e.outer_slope[gov]) * dh,
                         "footprint_inner": float(g_e.inner_slope[gov]) * dh,
                         "gamma_b": float(d["gb"][gov]),
                         "closes_gap": bool(worst >= -CLOSE_TOLERANCE),
                         "remaining_deficit": float(max(-worst, 0.0))})
            o = {key: v[part] for key, v in all_opts[name].items()}
            own = float(d["after_own"][k])
            with np.errstate(all="ignore"):
                rows.append({**base, "basis": "every_station", "option": name,
                             "chainage": np.nan,
                             "crest_raise": float(np.max(o["crest_raise"])),
                             "berm_level": float(np.nanmax(o["berm_level"]))
                             if (np.isfinite(o["berm_level"]) & (o["berm_width"] > 0)).any()
                             else np.nan,
                             "berm_width": float(np.max(o["berm_width"])),
                             "fill_volume": float(np.sum(o["area"] * e_e[part])),
                             "footprint_outer": float(np.max(o["footprint_outer"])),
                             "footprint_inner": float(np.max(o["footprint_inner"])),
                             "gamma_b": float(np.min(o["gamma_b"])),
                             "closes_gap": bool(own >= -CLOSE_TOLERANCE),
                             "remaining_deficit": float(max(-own, 0.0))})
    df = pd.DataFrame(rows, columns=list(OPTION_COLUMNS))
    if df.empty:
        return df
    df["cost"] = df["fill_volume"] * unit_cost if unit_cost > 0 else np.nan
    # the cheapest option that closes the gap, per stretch and basis (the first of equals)
    closes = df["closes_gap"].to_numpy(bool)
    order = np.lexsort((np.arange(len(df)), df["fill_volume"].to_numpy(float),
                        df["basis"].to_numpy(str), df["stretch"].to_numpy(int)))
    order = order[closes[order]]
    stretch, basis = df["stretch"].to_numpy(int)[order], df["basis"].to_numpy(str)[order]
    first = np.ones(order.size, bool)
    first[1:] = (stretch[1:] != stretch[:-1]) | (basis[1:] != basis[:-1])
    cheapest = np.zeros(len(df), bool)
    cheapest[order[first]] = True
    df["cheapest"] = cheapest
    return df


#: columns of the options table, in order (the options layer adds the geometry)
OPTION_COLUMNS = (
    "from_chainage", "to_chainage", "length", "status", "stretch", "basis", "option",
    "chainage", "crest_raise", "berm_level", "berm_width", "fill_volume",
    "footprint_outer", "footprint_inner", "gamma_b", "closes_gap", "remaining_deficit",
    "cost", "cheapest", "fos_with_option",
)


__all__ = ["CAVEAT", "COST_NOTE", "OPTIONS", "OPTION_COLUMNS", "Geometry", "Rule", "berm_area",
           "effective_raise", "largest_effective_berm", "margin_with_option", "outline",
           "plan_options", "raise_area", "requirement_with", "station_options"]
