"""Stability berms: per stretch short on inner-slope stability, the least-fill berm.

A screening estimate for planning, not a design. The berm is a horizontal top
on the inner side (:func:`trajectory.inner.stability.berm_profile`), tried at a few
heights (shares of the inner slope's height) and widths; each try is built
into every station's measured profile of the stretch and searched again with
the same Bishop (1955) search that screened the station. One design covers the
stretch (the same height share and width at every station); the least fill
whose every station reaches its required factor of safety is proposed, or,
where none does, the try that comes closest (``closes_gap`` 0). To keep the
cost near one search per station, every try is first searched at the stations
with the least factors only, and the least-fill try passing there is then
searched at every station; stations it fails at join that set and the step is
repeated, so the try proposed is the least-fill one passing at every station.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from ..terrain.profile import fill_gaps
from . import stability as sb

#: the option's name in the options layer (a kind of its own beside the crest's)
OPTION = "stability_berm"
#: stations designed per batch (each with every candidate berm)
BATCH = 40


def short_runs(status: np.ndarray) -> list[tuple[int, int]]:
    """First and last index of each run of consecutive ``short`` stations."""
    s = np.asarray(status, object) == "short"
    edges = np.diff(np.concatenate([[0], s.astype(int), [0]]))
    return list(zip(np.flatnonzero(edges == 1), np.flatnonzero(edges == -1) - 1, strict=True))


def berm_face(inner_slope: np.ndarray) -> np.ndarray:
    """Face of the berm: 1:n of the measured inner slope, at least 1:2 (screening choice)."""
    n = np.asarray(inner_slope, float)
    return np.where(np.isfinite(n), np.maximum(n, 2.0), 2.0)


def _evaluate(offsets: np.ndarray, z: np.ndarray, frame: sb.Frame, soil: sb.Soil,
              face: np.ndarray, level: np.ndarray, width: np.ndarray, st: np.ndarray,
              cand: np.ndarray, *, phreatic: str, search: bool = True
              ) -> tuple[np.ndarray, np.ndarray]:
    """Factor of safety and fill area (m2 per m) of berm ``cand[k]`` at station ``st[k]``."""
    fos, area = np.full(st.size, np.nan), np.full(st.size, np.nan)
    for s in range(0, st.size, BATCH * 8):
        k = slice(s, s + BATCH * 8)
        i, c = st[k], cand[k]
        fr, lv, wd = frame.take(i), level[i, c], width[i, c]
        built = sb.berm_profile(offsets, z[i], fr, level=lv, width=wd, face=face[i])
        area[k] = sb.fill_area(offsets, z[i], built)
        if search:
            fos[k] = sb.search(offsets, built, fr, soil.take(i), phreatic=phreatic,
                               reach=sb.berm_reach(fr, wd)).fos
    return fos, area


#: stations of a stretch every candidate is first tried on (the least factors of safety)
DESIGN_STATIONS = 3
#: rounds of adding the stations a design fails at before giving up
ROUNDS = 4
#: candidates searched together at the design set, in order of fill
CANDIDATE_BATCH = 6


def _design_steps(fos: np.ndarray, fill: np.ndarray, required: np.ndarray,
                  fos_now: np.ndarray):
    """One stretch's design as a generator (see :func:`design`).

    ``fos`` (stations x candidates, NaN: not searched yet) is filled in by the caller:
    the generator yields the (station, candidate) pairs it needs next and is resumed
    once they are in. It returns the chosen candidate and whether it closes the gap.
    """
    n, k = fos.shape

    def need(st: np.ndarray, cand: np.ndarray):
        todo = np.isnan(fos[st, cand])
        if todo.any():
            yield st[todo], cand[todo]

    order = np.argsort(np.where(np.isfinite(fos_now), fos_now / required, np.inf))
    chosen = order[:DESIGN_STATIONS]
    every = np.arange(n)
    by_fill = np.argsort(fill, kind="stable")   # least fill first, ties in candidate order
    for _ in range(ROUNDS):
        # the candidates in order of fill, a few at a time, until one passes at the design
        # set: every cheaper one has failed there, so it is the least-fill passing one
        c = -1
        for s in range(0, k, CANDIDATE_BATCH):
            batch = by_fill[s:s + CANDIDATE_BATCH]
            yield from need(np.repeat(chosen, batch.size), np.tile(batch, chosen.size))
            gap = np.nanmin(fos[chosen][:, batch] - required[chosen, None], axis=0)
            if (gap >= 0).any():
                c = int(batch[np.argmax(gap >= 0)])
                break
        if c < 0:
            break
        yield from need(every, np.full(n, c))
        fails = np.flatnonzero(~(fos[:, c] >= required))
        if fails.size == 0:
            return c, True
        worst = fails[np.argsort(fos[fails, c] / required[fails])][:DESIGN_STATIONS]
        chosen = np.union1d(chosen, worst)
    gap = np.nanmin(fos[chosen] - required[chosen, None], axis=0)
    c = int(np.nanargmax(np.where(np.isfinite(gap), gap, -np.inf)))
    yield from need(every, np.full(n, c))
    return c, bool((fos[:, c] >= required).all())


def design_all(offsets: np.ndarray, z: np.ndarray, frame: sb.Frame, soil: sb.Soil,
               face: np.ndarray, required: np.ndarray, extents: np.ndarray,
               stretches: list[np.ndarray], *, fos_now: np.ndarray,
               phreatic: str = "line") -> list[dict]:
    """:func:`design` of every stretch (station index arrays into ``z``), side by side.

    Each stretch's design asks for the searches it needs next; those of all stretches
    are made in one search, so a line with many short stretches costs a few large
    searches instead of many small ones. The choices are those of designing each
    stretch alone.
    """
    if not stretches:
        return []
    level, width = sb.berm_candidates(frame)
    k = level.shape[1]
    idx = np.concatenate(stretches)
    area = np.full(level.shape, np.nan)
    area[idx] = _evaluate(offsets, z, frame, soil, face, level, width, np.repeat(idx, k),
                          np.tile(np.arange(k), idx.size), phreatic=phreatic,
                          search=False)[1].reshape(idx.size, k)
    fos = [np.full((i.size, k), np.nan) for i in stretches]
    fills = [np.nansum(area[i] * extents[i, None], axis=0) for i in stretches]
    steps = {r: _design_steps(fos[r], fills[r], required[i], fos_now[i])
             for r, i in enumerate(stretches)}
    chosen: dict[int, tuple[int, bool]] = {}
    pending: dict[int, tuple[np.ndarray, np.ndarray]] = {}

    def advance(r: int) -> None:
        try:
            pending[r] = next(steps[r])
        except StopIteration as done:
            chosen[r] = done.value
            pending.pop(r, None)

    for r in steps:
        advance(r)
    while pending:
        asked = list(pending.items())
        got = _evaluate(offsets, z, frame, soil, face, level, width,
                        np.concatenate([stretches[r][st] for r, (st, _) in asked]),
                        np.concatenate([c for _, (_, c) in asked]), phreatic=phreatic)[0]
        at = 0
        for r, (st, c) in asked:
            fos[r][st, c] = got[at:at + st.size]
            at += st.size
            advance(r)
    out = []
    for r, i in enumerate(stretches):
        c, closes = chosen[r]
        out.append(_pick(level[i], width[i], fos[r], fills[r], area[i], c, required[i],
                         closes=closes))
    return out


def design(offsets: np.ndarray, z: np.ndarray, frame: sb.Frame, soil: sb.Soil,
           face: np.ndarray, required: np.ndarray, extents: np.ndarray, *,
           fos_now: np.ndarray, phreatic: str = "line") -> dict:
    """The least-fill candidate berm over one stretch's stations that reaches ``required``.

    The candidates are searched, least fill first and a few at a time, at the few
    stations with the least factor of safety until one passes there (the least-fill
    passing one, as if all had been searched); it is then searched at every station,
    and stations it fails at join the design set (at most :data:`ROUNDS` times).
    Where no candidate passes, the one coming closest at the design set is given.
    """
    return design_all(offsets, z, frame, soil, face, required, extents,
                      [np.arange(z.shape[0])], fos_now=fos_now, phreatic=phreatic)[0]


def _pick(level, width, fos, fill, area, c: int, required: np.ndarray, *, closes: bool) -> dict:
    f = fos[:, c]
    gov = int(np.nanargmin(np.where(np.isfinite(f), f - required, np.inf))) \
        if np.isfinite(f).any() else 0
    return {"candidate": c, "station": gov, "level": float(level[gov, c]),
            "width": float(width[gov, c]), "fill": float(fill[c]), "fos": float(f[gov]),
            "closes": closes, "area": area[:, c]}


def plan_berms(stations: pd.DataFrame, offsets: np.ndarray, profiles: np.ndarray,
               frame: sb.Frame, soil: sb.Soil, required: np.ndarray, *, extents: np.ndarray,
               lo: np.ndarray, hi: np.ndarray, phreatic: str = "line",
               unit_cost: float = 0.0) -> list[dict]:
    """One options row per stretch of ``short`` stations (the options layer's columns)."""
    runs = short_runs(stations["stability_status"].to_numpy(object))
    face = berm_face(stations["inner_slope"].to_numpy(float))
    chainage = stations["chainage"].to_numpy(float)
    fos_now = stations["stability_fos"].to_numpy(float)
    stretches = [np.arange(a, b + 1) for a, b in runs]
    designs = design_all(offsets, profiles, frame, soil, face, required, extents, stretches,
                         fos_now=fos_now, phreatic=phreatic)
    rows = []
    for (a, b), idx, d in zip(runs, stretches, designs, strict=True):
        g = idx[d["station"]]
        level, width = d["level"], d["width"]
        zg = fill_gaps(np.asarray(profiles[g:g + 1], float))
        x_top = float(sb.ground_at_level(offsets, zg, frame.take([g]), np.array([level]))[0])
        foot = x_top - width - (level - float(frame.inner_toe_level[g])) * float(face[g])
        rows.append({
            "from_chainage": float(lo[a]), "to_chainage": float(hi[b]),
            "length": float(hi[b] - lo[a]), "status": "short", "stretch": -1,
            "basis": "whole_stretch", "option": OPTION, "chainage": float(chainage[g]),
            "crest_raise": 0.0, "berm_level": level, "berm_width": width,
            "fill_volume": d["fill"], "footprint_outer": 0.0,
            "footprint_inner": max(float(frame.inner_toe[g]) - foot, 0.0), "gamma_b": np.nan,
            "closes_gap": d["closes"], "remaining_deficit": np.nan,
            "cost": d["fill"] * unit_cost if unit_cost > 0 else np.nan,
            "cheapest": d["closes"], "fos_with_option": d["fos"]})
    return rows
