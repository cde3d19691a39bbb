"""Frequency lines: the still water level (and waves) as a function of return period.

Published forms only, no I/O. Three kinds of line per section:

- ``table``: levels (and optionally Hm0, Tm-1,0) at listed return periods,
  interpolated linearly in log10(return period) (the way hydraulic boundary
  data are read, common practice);
- ``decimation``: an exponential line by its decimation height,
  h(T) = level_ref + decimation_height * log10(T / return_period_ref)
  (common practice in delta design);
- ``gumbel``: the Gumbel (1958) distribution of annual maxima,
  h(T) = mu - beta * ln(-ln(1 - 1/T)).

A line is never extrapolated silently: outside a table's range the level is
NaN unless one decade of log-linear extrapolation was asked for, and then the
station is flagged. The analytic lines are searched on :data:`ANALYTIC_RANGE`.
Annual probability here is the annual exceedance frequency 1/T (common practice
for return periods of design levels).
"""

from __future__ import annotations

from dataclasses import dataclass, fields

import numpy as np

#: where the design water level came from (public values of ``water_level_source``)
LEVEL_SOURCES: tuple[str, ...] = ("given", "table", "decimation", "gumbel")
#: return periods (years) the analytic lines (decimation, Gumbel) are searched over
ANALYTIC_RANGE: tuple[float, float] = (2.0, 1.0e6)
#: decades of log-linear extrapolation allowed beyond a table on request
EXTRAPOLATION_DECADES = 1.0


def gumbel_level(t: np.ndarray, location: np.ndarray, scale: np.ndarray) -> np.ndarray:
    """Level of return period ``t`` (years, > 1) of Gumbel annual maxima (Gumbel 1958).

    h(T) = mu - beta ln(-ln(1 - 1/T)), the quantile of non-exceedance 1 - 1/T.
    """
    t = np.asarray(t, float)
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.asarray(location) - np.asarray(scale) * np.log(-np.log1p(-1.0 / t))


def decimation_level(t: np.ndarray, level_ref: np.ndarray, t_ref: np.ndarray,
                     decimation_height: np.ndarray) -> np.ndarray:
    """h(T) = level_ref + decimation_height * log10(T / T_ref) (exponential line)."""
    with np.errstate(invalid="ignore", divide="ignore"):
        return (np.asarray(level_ref)
                + np.asarray(decimation_height) * np.log10(np.asarray(t, float) / t_ref))


def interp_rows(knots: np.ndarray, values: np.ndarray, x: np.ndarray) -> np.ndarray:
    """Row-wise linear interpolation (and extrapolation from the end segments).

    ``knots`` and ``values`` are (n, m), increasing knots per row, NaN-padded at
    the end; ``x`` is (n,). Where a row has one knot its value is returned.
    """
    knots = np.asarray(knots, float)
    values = np.asarray(values, float)
    x = np.asarray(x, float)
    n, m = knots.shape
    count = np.isfinite(knots).sum(axis=1)
    if m == 0:
        return np.full(n, np.nan)
    # segment index: last knot <= x, held within 0 .. count - 2
    with np.errstate(invalid="ignore"):
        below = (knots <= x[:, None]).sum(axis=1) - 1
    j = np.clip(below, 0, np.maximum(count - 2, 0))
    r = np.arange(n)
    j1 = np.minimum(j + 1, m - 1)
    x0, x1 = knots[r, j], knots[r, j1]
    y0, y1 = values[r, j], values[r, j1]
    with np.errstate(invalid="ignore", divide="ignore"):
        w = np.where(x1 > x0, (x - x0) / (x1 - x0), 0.0)
    return np.where(count >= 2, y0 + w * (y1 - y0), y0)


@dataclass(frozen=True)
class Lines:
    """Frequency lines, one row per section or per station (columnar).

    ``kind`` is '' (no line), ``table``, ``decimation`` or ``gumbel``. Table
    rows hold their knots as log10(T) in ``log_t`` (NaN-padded), with
    ``level`` and, where the table has them, ``hm0`` and ``tm10`` (NaN
    otherwise: the section's own waves are used).
    """

    kind: np.ndarray
    log_t: np.ndarray        # (n, m)
    level: np.ndarray        # (n, m)
    hm0: np.ndarray          # (n, m)
    tm10: np.ndarray         # (n, m)
    level_ref: np.ndarray
    return_period_ref: np.ndarray
    decimation_height: np.ndarray
    gumbel_location: np.ndarray
    gumbel_scale: np.ndarray
    standard: np.ndarray     # standard return period, years (NaN: none)
    extrapolate: bool = False

    def take(self, idx: np.ndarray | slice) -> Lines:
        """The lines of rows ``idx``."""
        return Lines(**{f.name: getattr(self, f.name) if f.name == "extrapolate"
                        else np.asarray(getattr(self, f.name))[idx] for f in fields(self)})

    @property
    def has_line(self) -> np.ndarray:
        return self.kind != ""

    def bounds(self) -> tuple[np.ndarray, np.ndarray]:
        """Lowest and highest return period (years) each row's line is read on, unflagged."""
        n = self.kind.size
        lo = np.full(n, np.nan)
        hi = np.full(n, np.nan)
        tab = self.kind == "table"
        if tab.any():
            lt = self.log_t[tab]
            lo[tab] = 10.0 ** np.nanmin(lt, axis=1)
            hi[tab] = 10.0 ** np.nanmax(lt, axis=1)
        ana = (self.kind == "decimation") | (self.kind == "gumbel")
        lo[ana], hi[ana] = ANALYTIC_RANGE
        return lo, hi

    def search_bounds(self) -> tuple[np.ndarray, np.ndarray]:
        """The range searched: :meth:`bounds`, widened by a decade at each end of a
        table when extrapolation was asked for."""
        lo, hi = self.bounds()
        if self.extrapolate:
            tab = self.kind == "table"
            f = 10.0 ** EXTRAPOLATION_DECADES
            lo = np.where(tab, lo / f, lo)
            hi = np.where(tab, hi * f, hi)
        return lo, hi

    def evaluate(self, t: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """Level, Hm0 and Tm-1,0 at return period ``t`` (years) per row.

        NaN level where a row has no line; NaN waves where its line has none.
        Tables are read linearly in log10 T, extrapolated from their end segment
        (callers keep to :meth:`search_bounds`).
        """
        t = np.broadcast_to(np.asarray(t, float), self.kind.shape)
        level = np.full(t.shape, np.nan)
        hm0 = np.full(t.shape, np.nan)
        tm10 = np.full(t.shape, np.nan)
        tab = self.kind == "table"
        if tab.any():
            with np.errstate(divide="ignore", invalid="ignore"):
                u = np.log10(t[tab])
            kn = self.log_t[tab]
            level[tab] = interp_rows(kn, self.level[tab], u)
            hm0[tab] = interp_rows(kn, self.hm0[tab], u)
            tm10[tab] = interp_rows(kn, self.tm10[tab], u)
        dec = self.kind == "decimation"
        if dec.any():
            level[dec] = decimation_level(t[dec], self.level_ref[dec],
                                          self.return_period_ref[dec],
                                          self.decimation_height[dec])
        gum = self.kind == "gumbel"
        if gum.any():
            level[gum] = gumbel_level(t[gum], self.gumbel_location[gum], self.gumbel_scale[gum])
        return level, hm0, tm10

    def range_flag(self, t: np.ndarray) -> np.ndarray:
        """'extrapolated' where ``t`` lies beyond a table's own range, else ''."""
        lo, hi = self.bounds()
        t = np.asarray(t, float)
        with np.errstate(invalid="ignore"):
            out = (self.kind == "table") & ((t < lo * (1 - 1e-12)) | (t > hi * (1 + 1e-12)))
        return np.where(out, "extrapolated", "").astype(object)


def no_lines(n: int) -> Lines:
    """``n`` rows without a line."""
    e = np.full(n, np.nan)
    m = np.full((n, 0), np.nan)
    return Lines(kind=np.full(n, "", dtype=object), log_t=m, level=m, hm0=m, tm10=m,
                 level_ref=e, return_period_ref=e, decimation_height=e.copy(),
                 gumbel_location=e.copy(), gumbel_scale=e.copy(), standard=e.copy())
