"""How sure is each verdict: the terrain model's vertical accuracy carried to the margin.

Model (documented in the README, section "How sure is each verdict"):

- every DEM cell is ``truth + b + e``: ``b`` a systematic offset common to the whole
  survey (standard deviation ``sigma_systematic``), ``e`` independent per cell
  (``sigma_random``), both normal;
- the crest level is the mean of ``crest_cells`` bilinear samples: the random part
  shrinks with the number of independent cells the crest run covers, the
  systematic part does not;
- the outer slope's standard deviation comes from the least-squares fit, widened
  for the correlation that bilinear sampling puts between neighbouring samples;
- it enters the required level through the derivative of the freeboard with
  respect to the slope (central difference of :func:`requirement.required_level`);
- ``margin_sigma`` combines both (crest and slope cells are disjoint, so their
  random errors are independent; the systematic offset does not change a slope);
- ``p_short`` = P(margin < 0) under a normal model; ``confidence`` is ``firm``
  where the status is the same at margin +- 2 sigma, ``marginal`` where it is not.

Everything here is pure (arrays in, arrays out) except :func:`simulate`, which
reads one DEM window through the handle it is given.
"""

from __future__ import annotations

import logging
import math
import warnings
from dataclasses import dataclass
from typing import Any

import numpy as np
from scipy.special import erfc

from ..errors import ParameterError
from ..requirement.crest_level import StationConditions, required_level, requirement_slope
from .status import Stretches, classify

log = logging.getLogger(__name__)

#: Vertical accuracy classes of the ASPRS Positional Accuracy Standards for Digital
#: Geospatial Data, Edition 1 (2014): the class is the RMSEz of non-vegetated
#: terrain in cm (from memory: classes 1, 2.5, 5, 10, 15, 20, 33.3, 66.7, 100 and
#: 333.3 cm; Edition 2 (2023) keeps RMSE-named classes). Values in m.
ASPRS_CLASSES: dict[str, float] = {
    "asprs-2.5cm": 0.025,
    "asprs-5cm": 0.05,
    "asprs-10cm": 0.10,
    "asprs-15cm": 0.15,
    "asprs-20cm": 0.20,
    "asprs-33.3cm": 0.333,
}
#: our convention (not the standard's): the class RMSE is split into a systematic
#: part of half the RMSE and a random part making up the rest, sys^2 + rand^2 = RMSE^2
SYSTEMATIC_SHARE = 0.5
#: choice meaning "use sigma_systematic and sigma_random as given"
CUSTOM = "custom"
#: statuses hold at this many standard deviations to be "firm"
FIRM_SIGMAS = 2.0
#: line-average factor of bilinearly interpolated white noise: the variance of the
#: mean over a run L cells long is sigma^2 * KAPPA / L. KAPPA = integral of the
#: squared Radon projection of the bilinear kernel = 2/3 along a grid axis, 0.678
#: on the diagonal (computed by quadrature), so one value serves every direction.
KAPPA = 2.0 / 3.0


@dataclass(frozen=True)
class VerticalAccuracy:
    """Vertical accuracy of one terrain model (standard deviations, m)."""

    systematic: float
    random: float
    source: str = CUSTOM


def accuracy_preset(name: str) -> VerticalAccuracy:
    """The accuracy of a named ASPRS (2014) vertical accuracy class, split by our convention."""
    try:
        rmse = ASPRS_CLASSES[name]
    except KeyError:
        raise ParameterError(f"unknown vertical accuracy class {name!r}; known are: "
                             f"{', '.join(ASPRS_CLASSES)} or {CUSTOM}") from None
    sys_ = SYSTEMATIC_SHARE * rmse
    return VerticalAccuracy(sys_, math.sqrt(rmse**2 - sys_**2), name)


def accuracy_from_settings(settings: Any) -> VerticalAccuracy:
    """The terrain model's accuracy from the run's settings (preset or custom values)."""
    name = settings.vertical_accuracy
    if name == CUSTOM:
        return VerticalAccuracy(settings.sigma_systematic, settings.sigma_random, CUSTOM)
    if settings.sigma_systematic or settings.sigma_random:
        raise ParameterError(f"sigma_systematic / sigma_random are used only with "
                             f"vertical_accuracy = {CUSTOM}; set it, or drop them to use "
                             f"the class {name}")
    return accuracy_preset(name)


# ----------------------------------------------------------------- crest and slope
def effective_cells(crest_cells: np.ndarray, *, step: float, cell: float) -> np.ndarray:
    """Number of independent cells equivalent to a crest run of ``crest_cells`` samples.

    The run is L = crest_cells * step / cell DEM cells long. The mean of bilinear
    samples over it has variance sigma^2 * KAPPA * (L - 1/3) / L^2 (exact along a
    grid axis with step = cell, averaged over the sub-cell position; the -1/3 is the
    shorter weight of the two end cells), so n_eff = L^2 / (KAPPA (L - 1/3)).
    Runs shorter than one cell count as one bilinear sample (n_eff = 9/4).
    """
    length = np.maximum(np.asarray(crest_cells, float) * step / cell, 1.0)
    return length**2 / (KAPPA * (length - 1.0 / 3.0))


def crest_sigma(crest_cells: np.ndarray, *, accuracy: VerticalAccuracy, step: float,
                cell: float, tolerance: np.ndarray | float = 0.0
                ) -> tuple[np.ndarray, np.ndarray]:
    """Standard deviation of the crest level: (total, random part), m.

    random^2 = sigma_random^2 / n_eff (:func:`effective_cells`) + tolerance^2 / (2 N^2):
    the second term is each end of the run gaining or losing, with even odds, one
    shoulder sample up to the crest tolerance below the top (an approximation of the
    run's noise-dependent extent, checked by Monte Carlo in the tests);
    total^2 = sigma_systematic^2 + random^2 (the survey offset does not average out).
    """
    n = np.asarray(crest_cells, float)
    with np.errstate(divide="ignore", invalid="ignore"):
        var_r = (accuracy.random**2 / effective_cells(n, step=step, cell=cell)
                 + np.asarray(tolerance, float) ** 2 / (2.0 * n**2))
    var_r = np.where(n > 0, var_r, np.nan)
    return np.sqrt(accuracy.systematic**2 + var_r), np.sqrt(var_r)


def slope_sigma(outer_slope_se: np.ndarray, *, step: float, cell: float) -> np.ndarray:
    """Standard deviation of n (1:n) from the fit's standard error, widened for correlation.

    The OLS standard error assumes independent residuals; neighbouring bilinear
    samples share cells. For a long fit the variance grows by the ratio of the
    long-run to the single-sample variance of the sampled noise,
    KAPPA * (cell / step) / (4/9) (4/9: mean squared bilinear weight sum), at least 1.
    """
    tau = np.maximum(KAPPA * (cell / step) / (4.0 / 9.0), 1.0)
    return np.asarray(outer_slope_se, float) * math.sqrt(tau)


def required_slope_derivative(cond: StationConditions, *, outer_slope: np.ndarray,
                              crest_level: np.ndarray, approach: str,
                              rel_step: float = 1e-4, **kwargs: Any) -> np.ndarray:
    """d(required level)/dn by a central difference of :func:`requirement.required_level`.

    Follows whatever the requirement does with the slope (EurOtop 2018 Eq. 5.10 inverse,
    minimum freeboard: 0 where the minimum governs). Extra keyword arguments are
    passed to ``required_level``.
    """
    n = np.asarray(outer_slope, float)
    h = rel_step * n
    k = n.size
    # both sides of the difference in one call (stations stacked twice)
    twice = np.concatenate([np.arange(k), np.arange(k)])

    def stack(v: Any) -> Any:
        a = np.asarray(v)
        return a[twice] if a.ndim and a.shape[0] == k else v

    r = required_level(cond.take(twice), outer_slope=np.concatenate([n + h, n - h]),
                       crest_level=stack(crest_level), approach=approach,
                       **{key: stack(v) for key, v in kwargs.items()}).required_level
    with np.errstate(invalid="ignore"):
        return (r[:k] - r[k:]) / (2.0 * h)


# ----------------------------------------------------------------- margin and verdict
def p_short(margin: np.ndarray, sigma: np.ndarray) -> np.ndarray:
    """P(margin < 0) for a normal margin of mean ``margin`` and std ``sigma``.

    Phi(-margin / sigma) = erfc(margin / (sigma sqrt 2)) / 2; sigma = 0 gives 0 or 1.
    """
    m = np.asarray(margin, float)
    s = np.asarray(sigma, float)
    with np.errstate(divide="ignore", invalid="ignore"):
        p = 0.5 * erfc(m / (s * math.sqrt(2.0)))
    step = np.where(m < 0, 1.0, 0.0)
    return np.where(np.isnan(m) | np.isnan(s), np.nan, np.where(s > 0, p, step))


def confidence(margin: np.ndarray, sigma: np.ndarray, *, watch_band: float,
               k: float = FIRM_SIGMAS) -> np.ndarray:
    """``firm`` where the status at margin - k sigma and margin + k sigma is the same
    as at the margin, ``marginal`` where it is not; None where there is no margin."""
    m = np.asarray(margin, float)
    s = np.asarray(sigma, float)
    st = classify(m, watch_band=watch_band)
    same = (classify(m - k * s, watch_band=watch_band) == st) & (
        classify(m + k * s, watch_band=watch_band) == st)
    out = np.where(same, "firm", "marginal").astype(object)
    out[np.isnan(m) | np.isnan(s)] = None
    return out


@dataclass(frozen=True)
class StationUncertainty:
    """Uncertainty of each station's figures (columnar, m unless stated)."""

    crest_sigma: np.ndarray
    crest_sigma_random: np.ndarray
    slope_sigma: np.ndarray        # of n (1:n)
    required_sigma: np.ndarray
    margin_sigma: np.ndarray
    p_short: np.ndarray
    confidence: np.ndarray

    def columns(self) -> dict[str, np.ndarray]:
        return {f: getattr(self, f) for f in self.__dataclass_fields__}


def station_uncertainty(prof: Any, cond: StationConditions, *, margin: np.ndarray,
                        accuracy: VerticalAccuracy, step: float, cell: float,
                        crest_tolerance: float, approach: str, watch_band: float,
                        slope_given: np.ndarray | None = None,
                        **req_kwargs: Any) -> StationUncertainty:
    """Propagate the terrain model's accuracy through crest, slope and requirement.

    ``prof`` is a :class:`profile.ProfileMetrics`; the crest tolerance used per
    station is the one profile reading used, max(crest_tolerance, 3 x noise).
    Where ``slope_given`` (a design slope, not the survey's) the requirement
    carries no survey error.
    """
    tol = np.maximum(crest_tolerance, 3.0 * np.nan_to_num(prof.noise))
    c_sig, c_rand = crest_sigma(prof.crest_cells, accuracy=accuracy, step=step, cell=cell,
                                tolerance=tol)
    s_sig = slope_sigma(prof.outer_slope_se, step=step, cell=cell)
    deriv = required_slope_derivative(cond, outer_slope=prof.outer_slope,
                                      crest_level=prof.crest_level, approach=approach,
                                      **req_kwargs)
    r_sig = np.abs(deriv) * s_sig
    if slope_given is not None:
        r_sig = np.where(slope_given, 0.0, r_sig)
    m_sig = np.sqrt(c_sig**2 + r_sig**2)
    m_sig = np.where(np.isnan(margin), np.nan, m_sig)
    return StationUncertainty(
        crest_sigma=np.where(np.isnan(margin), np.nan, c_sig),
        crest_sigma_random=np.where(np.isnan(margin), np.nan, c_rand),
        slope_sigma=s_sig, required_sigma=r_sig, margin_sigma=m_sig,
        p_short=p_short(margin, m_sig),
        confidence=confidence(margin, m_sig, watch_band=watch_band))


def stretch_uncertainty(stretches: Stretches, stations: Any) -> dict[str, np.ndarray]:
    """Uncertainty per stretch from its stations' figures.

    ``margin_sigma`` is that of the worst-margin station; ``p_short`` the largest of
    the stations' (a lower bound on the chance that some point of the stretch is
    short); a deficit stretch is ``firm`` when at least one of its stations is a firm
    deficit, any other stretch when all its stations are firm; ``marginal_stations``
    counts the marginal ones.
    """
    ch = np.asarray(stations["chainage"], float)
    sig = np.asarray(stations["margin_sigma"], float)
    p = np.asarray(stations["p_short"], float)
    firm = np.asarray(stations["confidence"], object) == "firm"
    marg = np.asarray(stations["confidence"], object) == "marginal"
    n = stretches.status.size
    out = {"margin_sigma": np.full(n, np.nan), "p_short": np.full(n, np.nan),
           "confidence": np.full(n, None, dtype=object),
           "marginal_stations": np.zeros(n, dtype=np.int64)}
    for i, (a, b) in enumerate(zip(stretches.first, stretches.last, strict=True)):
        sl = slice(int(a), int(b) + 1)
        if stretches.status[i] == "no_data":
            continue
        w = int(np.flatnonzero(ch == stretches.worst_chainage[i])[0])
        out["margin_sigma"][i] = sig[w]
        out["p_short"][i] = np.nanmax(p[sl])
        ok = firm[sl].any() if stretches.status[i] == "deficit" else firm[sl].all()
        out["confidence"][i] = "firm" if ok else "marginal"
        out["marginal_stations"][i] = int(marg[sl].sum())
    return out


# ----------------------------------------------------------------- surveys over years
def change_sigma(sigma_a: np.ndarray, sigma_b: np.ndarray, *,
                 shared_systematic: float = 0.0) -> np.ndarray:
    """Standard deviation of the difference of two surveys' levels (independent errors;
    a systematic part common to both cancels and is taken out)."""
    v = np.asarray(sigma_a, float) ** 2 + np.asarray(sigma_b, float) ** 2
    return np.sqrt(np.maximum(v - 2.0 * shared_systematic**2, 0.0))


def rate_sigma(years: np.ndarray, sigmas: np.ndarray,
               read: np.ndarray | None = None) -> np.ndarray:
    """Standard deviation of a weighted least-squares rate (m/year) through levels of
    known standard deviation: 1 / sqrt(sum w (t - t_w)^2), w = 1/sigma^2 (for equal
    sigmas, sigma / sqrt(Sxx) of simple linear regression).

    ``years`` has one entry per survey; ``sigmas`` is (surveys,) or (surveys, stations).
    ``read`` (same shape as ``sigmas`` once broadcast) leaves out the surveys in which
    a station was not read; fewer than two surveys give NaN.
    """
    t = np.asarray(years, float)
    s = np.asarray(sigmas, float)
    if read is not None:
        s = np.broadcast_to(s, np.shape(read))
    t = t.reshape((-1,) + (1,) * (s.ndim - 1))
    with np.errstate(divide="ignore", invalid="ignore"):
        w = 1.0 / s**2
        if read is not None:
            w = np.where(read, w, 0.0)
        n = np.broadcast_to((w > 0).sum(0), w.shape[1:])
        tw = (w * t).sum(0) / w.sum(0)
        out = 1.0 / np.sqrt((w * (t - tw) ** 2).sum(0))
    return np.where(n >= 2, out, np.nan)


#: station-table columns this module adds (see outputs/schema.py)
STATION_COLUMNS = ("crest_sigma", "slope_sigma", "required_sigma", "margin_sigma", "p_short",
                   "confidence", "sim_crest_sigma", "sim_margin_sigma")


def simulation_summary(stations: Any) -> dict[str, float]:
    """Median ratio of the Monte Carlo to the analytic std (crest level, margin)."""
    out = {}
    for q in ("crest", "margin"):
        with np.errstate(all="ignore"):
            r = (np.asarray(stations[f"sim_{q}_sigma"], float)
                 / np.asarray(stations[f"{q}_sigma"], float))
        r = r[np.isfinite(r)]
        out[f"{q}_ratio"] = float(np.median(r)) if r.size else float("nan")
    return out


# ----------------------------------------------------------------- Monte Carlo
def simulate(ds: Any, stations: Any, side: np.ndarray, offsets: np.ndarray,
             cond: StationConditions, settings: Any, *, accuracy: VerticalAccuracy,
             chunk_key: int = 0) -> dict[str, np.ndarray]:
    """Empirical std of crest level and margin over ``settings.simulate`` noisy terrain models.

    Each realisation adds to the DEM window a normal field independent per cell
    (``accuracy.random``) and one systematic offset (``accuracy.systematic``), then
    samples, reads and judges the profiles exactly as the run does. The offsets come
    from ``settings.simulate_random_state`` alone (the same in every chunk); the
    per-cell fields from it and ``chunk_key``.
    """
    from ..geometry.sections import bilinear, read_window, section_points, to_pixel
    from ..terrain.profile import read_profiles

    n_real = int(settings.simulate)
    nan = np.full(len(stations), np.nan)
    if n_real < 2:
        return {"sim_crest_sigma": nan, "sim_margin_sigma": nan}
    x, y = section_points(stations, offsets)
    got = read_window(ds, x, y)
    if got is None:
        return {"sim_crest_sigma": nan, "sim_margin_sigma": nan}
    grid, c0, r0 = got
    cols, rows = to_pixel(ds.transform, x, y)
    cols, rows = cols - c0, rows - r0
    offs = np.random.default_rng(settings.simulate_random_state).normal(
        0.0, accuracy.systematic, n_real)
    rng = np.random.default_rng([settings.simulate_random_state, chunk_key])
    # only the cells the bilinear samples touch need noise (windows can be large)
    touched = np.zeros(grid.shape, bool)
    h, w = grid.shape
    for dr in (0, 1):
        for dc in (0, 1):
            ii = np.clip(np.floor(rows - 0.5).astype(np.int64) + dr, 0, h - 1)
            jj = np.clip(np.floor(cols - 0.5).astype(np.int64) + dc, 0, w - 1)
            touched[ii[np.isfinite(rows)], jj[np.isfinite(cols)]] = True
    n_touched = int(touched.sum())
    crest = np.empty((n_real, len(stations)))
    margin = np.empty((n_real, len(stations)))
    s = settings
    for r in range(n_real):
        g = grid + offs[r]
        g[touched] += rng.normal(0.0, accuracy.random, n_touched)
        z = bilinear(g, cols, rows)
        z = np.where((side > 0)[:, None], z, z[:, ::-1])
        prof = read_profiles(z, offsets, object_width=s.object_width,
                             crest_search=s.crest_search, crest_tolerance=s.crest_tolerance,
                             max_nodata=s.max_nodata, water_level=cond.water_level)
        # a section's design slope holds in every realisation (no survey error in it)
        with np.errstate(divide="ignore", invalid="ignore"):
            tan, _ = requirement_slope(1.0 / prof.outer_slope, cond.design_outer_slope)
        req = required_level(cond, outer_slope=prof.outer_slope,
                             crest_level=prof.crest_level, approach=s.approach, tan_alpha=tan)
        crest[r] = prof.crest_level
        margin[r] = prof.crest_level - req.required_level
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)  # stations never readable: NaN
        return {"sim_crest_sigma": np.nanstd(crest, axis=0, ddof=1),
                "sim_margin_sigma": np.nanstd(margin, axis=0, ddof=1)}
