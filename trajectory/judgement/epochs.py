"""Several surveys of one line: crest change, lowering rate and the year the margin runs out.

Pure functions over columnar arrays: ``crest`` is a matrix stations x epochs
(oldest epoch first, NaN where an epoch could not be read), ``years`` the
epochs' dates as decimal years. Reading the earlier surveys is done by
:mod:`trajectory.inputs.epoch_sources`; the pipeline calls :func:`assess_epochs`.

Definitions (documented in the README):

- change since the previous / the first epoch: latest crest level minus that
  epoch's crest level (negative: the crest went down);
- lowering rate: minus the slope of the ordinary least-squares line of crest
  level against time over the epochs a station was read in (m/yr, positive
  when the crest goes down); its standard error is the larger of the fit's own
  (residuals, n - 2 degrees of freedom) and the one the terrain models'
  vertical accuracy alone gives, ``sigma_v / sqrt(sum (t - mean t)^2)``, so
  that a few epochs that happen to line up do not make a rate look certain;
- significant: the lowering rate exceeds ``rate_z`` standard errors (one-sided
  test; 1.645 is the 95 % level, common practice);
- significant drop: the crest fell since the previous survey by more than
  ``rate_z * sqrt(2) * sigma_v`` (the difference of two surveys of accuracy
  ``sigma_v``), e.g. a local slip or excavation;
- projected year: the calendar year in which the latest margin reaches zero at
  the lowering rate, ``floor(t_latest + margin / rate)``; none where the crest
  is stable or rising or the rate is not significant. Where the margin is
  already negative the station falls short now: the latest epoch's year.
  The required level is today's: changes of the requirement itself are not
  projected.
"""

from __future__ import annotations

import datetime as _dt
import re
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd

from ..errors import InputError
from .uncertainty import change_sigma, rate_sigma

#: a bare year, or an ISO date
_DATE = re.compile(r"^\s*(\d{4})(?:-(\d{2})-(\d{2}))?\s*$")


class EpochError(InputError):
    """The survey epochs given cannot be compared (order, dates, CRS or station layout)."""


@dataclass(frozen=True)
class Epoch:
    """One earlier survey: its date as given, and a DEM or an earlier result GeoPackage."""

    label: str
    path: str
    kind: str = "dem"          # 'dem' (terrain model) or 'result' (earlier result GeoPackage)

    @property
    def year(self) -> float:
        return decimal_year(self.label)


@dataclass(frozen=True)
class EpochLevels:
    """Crest level of every station in every epoch (oldest first)."""

    labels: tuple[str, ...]
    years: np.ndarray          # decimal years, NaN for an undated single survey
    sources: tuple[str, ...]   # file name of each epoch
    crest: np.ndarray          # stations x epochs (m)


@dataclass(frozen=True)
class RateFit:
    """Least-squares line of crest level against time, per station."""

    slope: np.ndarray          # m/yr, + rising
    intercept: np.ndarray      # m at year 0 of the time axis given
    slope_se: np.ndarray       # standard error of the slope from the residuals (NaN if n < 3)
    n: np.ndarray              # epochs used


@dataclass(frozen=True)
class EpochStations:
    """Per-station epoch figures (the `stations` fields of the epoch block)."""

    epochs_used: np.ndarray
    first_year: np.ndarray
    change_previous: np.ndarray
    change_first: np.ndarray
    lowering_rate: np.ndarray
    lowering_rate_se: np.ndarray
    rate_significant: np.ndarray
    projected_year: np.ndarray
    significant_drop: np.ndarray

    def columns(self) -> dict[str, np.ndarray]:
        return {k: getattr(self, k) for k in self.__dataclass_fields__}


# ------------------------------------------------------------------ dates and order
def decimal_year(label: str) -> float:
    """Date ``YYYY`` or ``YYYY-MM-DD`` as a decimal year (a bare year is 1 January)."""
    m = _DATE.match(str(label))
    if not m:
        raise EpochError(f"survey date {label!r} is not a year (2019) or a date (2019-05-14)")
    y = int(m[1])
    if m[2] is None:
        return float(y)
    try:
        d = _dt.date(y, int(m[2]), int(m[3]))
    except ValueError as exc:
        raise EpochError(f"survey date {label!r} is not a valid date ({exc})") from exc
    days = (_dt.date(y + 1, 1, 1) - _dt.date(y, 1, 1)).days
    return y + (d.toordinal() - _dt.date(y, 1, 1).toordinal()) / days


def parse_epoch(text: str, *, option: str = "--dem") -> tuple[str | None, str]:
    """Split ``DATE=PATH`` into (date, path); a plain path gives (None, path)."""
    head, sep, tail = str(text).partition("=")
    if sep and _DATE.match(head):
        if not tail.strip():
            raise EpochError(f"{option} {text}: no file after '='")
        decimal_year(head)
        return head.strip(), tail.strip()
    return None, str(text)


def check_order(labels: Sequence[str], sources: Sequence[str]) -> np.ndarray:
    """Decimal years of the epochs; refuse duplicate dates and epochs not oldest first."""
    years = np.array([decimal_year(x) for x in labels], float)
    for i in range(1, len(years)):
        for j in range(i):
            if years[j] == years[i]:
                raise EpochError(f"survey date {labels[i]} is given twice ({sources[j]} and "
                                 f"{sources[i]}); give each survey once, with its own date")
        if years[i] < years[i - 1]:
            raise EpochError(
                f"surveys must be given oldest first: {labels[i - 1]} ({sources[i - 1]}) "
                f"comes before {labels[i]} ({sources[i]}); the last one is the survey "
                "that gives the status")
    return years


def parse_dem_options(dems: Sequence[str], compares: Sequence[str] = ()
                      ) -> tuple[str, str | None, tuple[Epoch, ...]]:
    """The terrain models and earlier results given on the command line or in a run file.

    Returns the latest terrain model's path, its date (None for a single
    undated ``--dem PATH``) and the earlier epochs, oldest first: the earlier
    results (``--compare DATE=OLD.gpkg``) then the earlier terrain models.
    """
    if not dems:
        raise EpochError("no terrain model given: pass --dem PATH (or several --dem DATE=PATH)")
    parsed = [parse_epoch(d) for d in dems]
    old = [parse_epoch(c, option="--compare") for c in compares]
    if len(parsed) == 1 and parsed[0][0] is None and not old:
        return parsed[0][1], None, ()
    undated = [p for d, p in parsed if d is None] + [p for d, p in old if d is None]
    if undated:
        raise EpochError(f"with several surveys each needs its date: write DATE=PATH, e.g. "
                         f"--dem 2024={undated[0]} (undated: {', '.join(undated)})")
    # every entry is dated here (the undated were refused above)
    epochs = ([Epoch(str(d), p, "result") for d, p in old]
              + [Epoch(str(d), p, "dem") for d, p in parsed])
    check_order([e.label for e in epochs], [e.path for e in epochs])
    latest = epochs[-1]
    if latest.kind != "dem":  # pragma: no cover - the dems come last by construction
        raise EpochError("the latest survey must be a terrain model")
    return latest.path, latest.label, tuple(epochs[:-1])


# ------------------------------------------------------------------ least squares
def fit_rates(years: np.ndarray, crest: np.ndarray) -> RateFit:
    """Ordinary least-squares line of crest level against time, per station (NaN-aware).

    Normal equations of simple linear regression for every row at once (e.g.
    Montgomery & Runger, Applied Statistics, ch. 11): slope = Sxz / Sxx,
    se(slope) = sqrt(SSE / (n - 2) / Sxx). Rows with fewer than 2 readable
    epochs get NaN; the standard error needs at least 3.
    """
    t = np.broadcast_to(np.asarray(years, float), np.shape(crest))
    z = np.asarray(crest, float)
    ok = np.isfinite(z) & np.isfinite(t)
    w = ok.astype(float)
    n = w.sum(axis=1)
    with np.errstate(invalid="ignore", divide="ignore"):
        tm = np.where(ok, t, 0.0).sum(axis=1) / n
        zm = np.where(ok, z, 0.0).sum(axis=1) / n
        dt = np.where(ok, t - tm[:, None], 0.0)
        dz = np.where(ok, z - zm[:, None], 0.0)
        sxx = (dt * dt).sum(axis=1)
        slope = (dt * dz).sum(axis=1) / sxx
        intercept = zm - slope * tm
        res = np.where(ok, dz - slope[:, None] * dt, 0.0)
        sse = (res * res).sum(axis=1)
        se = np.sqrt(sse / (n - 2) / sxx)
    fit = n >= 2
    slope = np.where(fit & (sxx > 0), slope, np.nan)
    intercept = np.where(np.isfinite(slope), intercept, np.nan)
    se = np.where((n >= 3) & np.isfinite(slope), se, np.nan)
    return RateFit(slope=slope, intercept=intercept, slope_se=se, n=n.astype(int))


def projected_year(margin: np.ndarray, lowering_rate: np.ndarray, significant: np.ndarray, *,
                   year_now: float) -> np.ndarray:
    """Calendar year in which ``margin`` reaches zero at ``lowering_rate`` (NaN: none).

    ``floor(year_now + margin / rate)`` where the rate is a significant
    lowering; ``floor(year_now)`` wherever the margin is already negative.
    """
    m = np.asarray(margin, float)
    r = np.asarray(lowering_rate, float)
    go = np.asarray(significant, bool) & (r > 0) & (m >= 0)
    with np.errstate(invalid="ignore", divide="ignore"):
        when = np.where(m < 0, year_now, year_now + m / r)
    return np.where(go | (m < 0), np.floor(when), np.nan)


def assess_epochs(years: np.ndarray, crest: np.ndarray, margin: np.ndarray, *,
                  vertical_accuracy: float | np.ndarray = 0.05,
                  rate_z: float = 1.645) -> EpochStations:
    """Change, lowering rate, significance and projected year for every station.

    Parameters
    ----------
    years
        Decimal years of the epochs, oldest first (the last gives ``margin``).
    crest
        Crest level, stations x epochs (NaN where not read).
    margin
        Margin of the latest epoch (crest level - required level), m.
    vertical_accuracy
        Vertical accuracy (standard deviation) of each terrain model, m.
    rate_z
        Standard errors a lowering (and a drop between epochs) must exceed.
    """
    years = np.asarray(years, float)
    crest = np.atleast_2d(np.asarray(crest, float))
    k = crest.shape[1]
    latest = crest[:, -1]
    readable = np.isfinite(crest)
    used = readable.sum(axis=1)
    first_idx = np.where(readable.any(axis=1), readable.argmax(axis=1), 0)
    first = crest[np.arange(crest.shape[0]), first_idx]
    first_year = np.where(used > 0, years[first_idx], np.nan)
    # previous survey in which the station was read
    before = readable[:, :-1]
    prev_idx = k - 2 - np.argmax(before[:, ::-1], axis=1) if k >= 2 else None
    prev = (np.where(before.any(axis=1), crest[np.arange(crest.shape[0]), prev_idx], np.nan)
            if k >= 2 else np.full(crest.shape[0], np.nan))
    change_previous = latest - prev
    change_first = np.where(used >= 2, latest - first, np.nan)
    fit = fit_rates(years, crest)
    rate = -fit.slope
    # the rate's error from the spread of the levels, or from the surveys' accuracy
    # where that is larger (few surveys on a straight line)
    sigma = np.broadcast_to(np.asarray(vertical_accuracy, float), latest.shape)
    se = np.fmax(fit.slope_se, rate_sigma(years, sigma[None, :], read=readable.T))
    se = np.where(np.isfinite(rate), se, np.nan)
    with np.errstate(invalid="ignore"):
        significant = np.isfinite(latest) & (rate > rate_z * se)
        dropped = change_previous < -rate_z * change_sigma(sigma, sigma)
    year_now = float(years[-1]) if k >= 2 else np.nan
    proj = projected_year(margin, rate, significant, year_now=year_now)
    return EpochStations(
        epochs_used=used.astype(int), first_year=first_year, change_previous=change_previous,
        change_first=change_first, lowering_rate=rate, lowering_rate_se=se,
        rate_significant=significant.astype(int), projected_year=proj,
        significant_drop=dropped.astype(int))


def summary_text(labels: Sequence[str], significant: np.ndarray, projected: np.ndarray,
                 margin: np.ndarray) -> str:
    """One line for the log: surveys, significant lowerings, earliest projected year."""
    if len(labels) < 2:
        return ""
    ahead = np.asarray(projected, float)[np.asarray(margin, float) >= 0]
    first = f"{np.nanmin(ahead):.0f}" if np.isfinite(ahead).any() else "none"
    return (f"surveys {', '.join(labels)}: {int(np.sum(significant))} station(s) with a "
            f"significant lowering; earliest year a margin runs out: {first}")


# ------------------------------------------------------------------ stretches
def stretch_figures(first: np.ndarray, last: np.ndarray, lowering_rate: np.ndarray,
                    projected: np.ndarray) -> dict[str, np.ndarray]:
    """Mean and worst (largest) lowering rate and earliest projected year per stretch.

    ``first``/``last`` are the inclusive station index ranges of the stretches
    (as :class:`trajectory.judgement.status.Stretches`); NaN stations are left out.
    """
    first = np.asarray(first, int)
    if first.size == 0:
        e = np.array([], float)
        return {"mean_lowering_rate": e, "worst_lowering_rate": e, "earliest_projected_year": e}
    r = np.asarray(lowering_rate, float)
    p = np.asarray(projected, float)
    ok = np.isfinite(r)
    cnt = np.add.reduceat(ok.astype(float), first)
    with np.errstate(invalid="ignore", divide="ignore"):
        mean = np.add.reduceat(np.where(ok, r, 0.0), first) / cnt
    worst = np.maximum.reduceat(np.where(ok, r, -np.inf), first)
    earliest = np.minimum.reduceat(np.where(np.isfinite(p), p, np.inf), first)
    return {"mean_lowering_rate": np.where(cnt > 0, mean, np.nan),
            "worst_lowering_rate": np.where(np.isfinite(worst), worst, np.nan),
            "earliest_projected_year": np.where(np.isfinite(earliest), earliest, np.nan)}


# ------------------------------------------------------------------ matching results
def match_stations(new_chainage: np.ndarray, new_xy: np.ndarray, old_chainage: np.ndarray,
                   old_xy: np.ndarray, *, source: str, tolerance: float = 0.01,
                   position_tolerance: float = 1.0) -> np.ndarray:
    """Index into the old stations for each new station (-1: the old run has none there).

    Refuses layouts that cannot be compared: no chainage in common, new
    stations within the old range without an old one (another spacing or
    start chainage; a multiple of the old spacing is fine), or
    stations of equal chainage at different places (another centreline or
    direction).
    """
    nc = np.asarray(new_chainage, float)
    oc = np.asarray(old_chainage, float)
    if oc.size == 0:
        raise EpochError(f"{source}: the earlier result has no stations")
    order = np.argsort(oc, kind="stable")
    ocs = oc[order]
    if np.any(np.diff(ocs) <= tolerance):
        raise EpochError(f"{source}: several stations share one chainage; give the result "
                         "of a single line")
    j = np.clip(np.searchsorted(ocs, nc), 1, max(ocs.size - 1, 1))
    cand = np.stack([j - 1, np.minimum(j, ocs.size - 1)], 1)
    d = np.abs(ocs[cand] - nc[:, None])
    pick = cand[np.arange(nc.size), d.argmin(axis=1)]
    hit = d.min(axis=1) <= tolerance
    idx = np.where(hit, order[pick], -1)
    if not hit.any():
        raise EpochError(
            f"{source}: no station chainage in common with this run (earlier "
            f"{oc.min():g}-{oc.max():g} m every {_spacing(oc):g} m, now {nc.min():g}-"
            f"{nc.max():g} m every {_spacing(nc):g} m); use the same --spacing and "
            "--start-chainage as the earlier run")
    inside = (nc >= oc.min() - tolerance) & (nc <= oc.max() + tolerance)
    stray = inside & ~hit
    if stray.any():
        raise EpochError(
            f"{source}: {int(stray.sum())} of this run's stations have no earlier station at "
            f"their chainage (e.g. {nc[stray][0]:g} m; earlier every {_spacing(oc):g} m from "
            f"{oc.min():g} m, now every {_spacing(nc):g} m from {nc.min():g} m); use the "
            "same --spacing and --start-chainage as the earlier run (or a multiple of its "
            "spacing)")
    gap = np.hypot(*(np.asarray(new_xy, float)[hit] - np.asarray(old_xy, float)[idx[hit]]).T)
    if gap.size and gap.max() > position_tolerance:
        w = int(np.argmax(gap))
        raise EpochError(
            f"{source}: stations of equal chainage lie up to {gap.max():.1f} m apart "
            f"(chainage {nc[hit][w]:g} m); the earlier run used another centreline, start "
            "chainage or direction (--reverse)")
    return idx


def _spacing(c: np.ndarray) -> float:
    d = np.diff(np.sort(c))
    return float(np.median(d)) if d.size else float("nan")


def epoch_rows(levels: EpochLevels, stations: pd.DataFrame) -> pd.DataFrame:
    """One row per station and survey epoch, oldest epoch first within a station.

    The crest level, its change since the station's previous readable survey and
    since its first, and the margin against today's required level; ``x``, ``y`` of
    the station for the writer's point.
    """
    t = stations
    n, k = levels.crest.shape
    z = levels.crest
    prev = np.concatenate([np.full((n, 1), np.nan), z[:, :-1]], axis=1)
    # change since the station's previous readable survey, and since its first
    last_seen = np.where(np.isfinite(prev), prev, np.nan)
    for j in range(2, k):  # carry the last readable level forward (few epochs)
        last_seen[:, j] = np.where(np.isfinite(last_seen[:, j]), last_seen[:, j],
                                   last_seen[:, j - 1])
    ok = np.isfinite(z)
    first_idx = np.where(ok.any(axis=1), ok.argmax(axis=1), 0)
    first = z[np.arange(n), first_idx]
    req = t["required_level"].to_numpy(float)
    return pd.DataFrame({
        "chainage": np.repeat(t["chainage"].to_numpy(float), k),
        "epoch": np.tile(np.asarray(levels.labels, object), n),
        "year": np.tile(levels.years, n),
        "source": np.tile(np.asarray(levels.sources, object), n),
        "crest_level": z.ravel(),
        "change_previous": (z - last_seen).ravel(),
        "change_first": (z - first[:, None]).ravel(),
        "margin": (z - req[:, None]).ravel(),
        "x": np.repeat(t["x"].to_numpy(float), k),
        "y": np.repeat(t["y"].to_numpy(float), k),
    })
