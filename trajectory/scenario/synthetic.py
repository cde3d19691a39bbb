"""Invented demo scenario: a levee along the river Vennel, Harrowmere polder.

Pure generator functions for the sample data, the tests and benchmarks. The
scenario is invented; place names, coordinates and levels are made up.

Geometry convention: chainage ``s`` (m) runs along the digitised centreline,
the signed offset ``d`` (m) is positive to the LEFT of the digitised direction,
which is the river (outer, water) side; negative ``d`` is the polder (inner)
side. Levels are in metres above an invented datum.

Terrain values depend only on absolute cell indices, so a single GeoTIFF and a
mosaic of tiles on the same cell grid hold identical values.
"""

from __future__ import annotations

import json
import logging
import math
from dataclasses import asdict, dataclass, replace
from pathlib import Path
from typing import Any
from xml.sax.saxutils import escape

import numpy as np
import shapely
from numpy.typing import NDArray
from scipy.spatial import cKDTree
from shapely.geometry import LineString

from ..errors import FileOverwriteError, ParameterError

log = logging.getLogger(__name__)

NODATA = -9999.0
CRS = "EPSG:32632"
RIVER = "Vennel"
POLDER = "Harrowmere"
LINE_ID = "vennel-north"
LINE_NAME = "Vennel north levee (Harrowmere polder)"

_NOISE_BLOCK = 256  # cells; noise is drawn per absolute block of this size
_WINDOW = 512  # cells; processing window, a multiple of the GeoTIFF block size
_NODE = 4  # cells between exactly located nodes of the (chainage, offset) field


# --------------------------------------------------------------------------- records


@dataclass(frozen=True)
class LowStretch:
    """A planted low crest stretch; full ``depth`` between the two tapers."""

    from_chainage: float
    to_chainage: float
    depth: float
    taper: float = 40.0


@dataclass(frozen=True)
class Berm:
    """A horizontal outer berm at ``level`` (m), ``width`` (m) wide."""

    from_chainage: float
    to_chainage: float
    level: float = 3.5
    width: float = 8.0
    taper: float = 25.0


@dataclass(frozen=True)
class InnerBerm:
    """A piping berm on the inner side: ``thickness`` (m) above the hinterland, reaching
    ``length`` (m) landward of the inner toe (foot to foot), its face at the inner slope."""

    from_chainage: float
    to_chainage: float
    length: float = 10.0
    thickness: float = 1.0
    taper: float = 20.0


@dataclass(frozen=True)
class WaterStretch:
    """Stretch whose outer slope ends in water: flat surface at ``level``."""

    from_chainage: float
    to_chainage: float
    level: float = 2.0


@dataclass(frozen=True)
class Hole:
    """A round nodata blob of ``radius`` (m) at (chainage, offset)."""

    chainage: float
    offset: float
    radius: float
    where: str


@dataclass(frozen=True)
class Hedge:
    """A hedge on the crest: a band ``width`` wide centred at ``offset``."""

    from_chainage: float
    to_chainage: float
    offset: float = 1.45
    width: float = 0.9
    height: float = 1.0


@dataclass(frozen=True)
class RateStretch:
    """Stretch with a crest lowering rate (m/yr) other than the base rate."""

    from_chainage: float
    to_chainage: float
    rate: float
    taper: float = 30.0


@dataclass(frozen=True)
class DemoSection:
    """One row of the demo section-conditions table."""

    section_id: str
    from_chainage: float
    to_chainage: float
    water_level: float
    hm0: float
    tm10: float
    wave_angle: float
    q_allow: float
    sea_level_rise: float
    settlement: float
    roughness: float
    min_freeboard: float
    # piping (all optional; empty: not screened)
    polder_level: float = float("nan")
    subsoil_class: str = ""
    aquifer_d70: float = float("nan")        # um
    aquifer_k: float = float("nan")          # m/s
    aquifer_thickness: float = float("nan")  # m
    blanket_thickness: float = float("nan")  # m
    design_outer_slope: float = float("nan")  # registered design slope 1:n (empty: measured)


SECTION_COLUMNS: tuple[str, ...] = (
    "section_id", "from_chainage", "to_chainage", "water_level", "hm0", "tm10",
    "wave_angle", "q_allow", "sea_level_rise", "settlement", "roughness", "min_freeboard",
    "polder_level", "subsoil_class", "aquifer_d70", "aquifer_k", "aquifer_thickness",
    "blanket_thickness",
    "design_outer_slope",
)
#: the text columns of the sections table (the others are numbers; empty where NaN)
_TEXT_COLUMNS = ("section_id", "subsoil_class")

_DEFAULT_SECTIONS: tuple[DemoSection, ...] = (
    # the polder level is the ground behind the levee (hinterland_level, 1.0 m).
    # Sellmeijer: holds on the full profile, short where the crest is low (steeper toes)
    DemoSection("VN-01", 0.0, 800.0, 4.20, 0.60, 3.0, 20.0, 1.0, 0.20, 0.10, 1.0, 0.5,
                polder_level=1.0, aquifer_d70=300.0, aquifer_k=1e-4, aquifer_thickness=15.0,
                blanket_thickness=1.0),
    # Sellmeijer on finer sand: held where the outer berm lengthens the path
    DemoSection("VN-02", 800.0, 1500.0, 4.30, 0.55, 2.8, 30.0, 1.0, 0.20, 0.10, 1.0, 0.5,
                polder_level=1.0, aquifer_d70=200.0, aquifer_k=1e-4, aquifer_thickness=20.0,
                blanket_thickness=1.5),
    # Lane on coarse gravel: held where the inner (piping) berm lies, short elsewhere
    DemoSection("VN-03", 1500.0, 2300.0, 4.35, 0.80, 3.6, 35.0, 10.0, 0.25, 0.15, 0.9, 0.5,
                polder_level=1.0, subsoil_class="coarse_gravel"),
    # VN-04 is assessed on its registered design slope, 1:3 as built (no slope jitter)
    DemoSection("VN-04", 2300.0, 3000.0, 4.55, 0.45, 2.6, 40.0, 1.0, 0.15, 0.05, 1.0, 0.5,
                design_outer_slope=3.0),
)


@dataclass(frozen=True)
class DemoLine:
    """The invented frequency line, standard and economics of one demo section.

    ``kind`` is ``table`` (rows in ``frequency.csv``: return period, level,
    optionally Hm0 and Tm-1,0), ``decimation`` or ``gumbel``. Each line passes
    through the section's design water level at its standard, so the design
    read off the line equals the one given in ``sections.csv``.
    """

    kind: str
    standard: float                    # return period, years
    table: tuple[tuple[float, ...], ...] = ()  # (T, level[, hm0, tm10]) rows
    decimation_height: float = 0.0
    gumbel_scale: float = 0.0
    level_given: bool = False          # keep water_level in the standards file
    standard_as_probability: bool = False
    flood_damage: float = float("nan")
    discount_rate: float = float("nan")
    raise_fixed_cost: float = float("nan")


#: demo lines by section id (repeated sections use the line of their base id)
DEMO_LINES: dict[str, DemoLine] = {
    "VN-01": DemoLine("table", 1000.0, table=(
        (10.0, 3.60, 0.45, 2.6), (100.0, 3.90, 0.52, 2.8), (1000.0, 4.20, 0.60, 3.0),
        (10000.0, 4.50, 0.68, 3.2)), flood_damage=4.0e8, discount_rate=0.02,
        raise_fixed_cost=1.5e7),
    "VN-02": DemoLine("table", 1000.0, table=(
        (10.0, 3.75), (100.0, 4.02), (1000.0, 4.30), (10000.0, 4.58)),
        standard_as_probability=True),
    "VN-03": DemoLine("decimation", 1000.0, decimation_height=0.28, flood_damage=2.5e8,
                      discount_rate=0.02, raise_fixed_cost=1.5e7),
    "VN-04": DemoLine("gumbel", 300.0, gumbel_scale=0.22, level_given=True),
}


def demo_line(section_id: str) -> DemoLine | None:
    """The demo line of a section (by its base id, e.g. VN-01 for VN-01-003)."""
    return DEMO_LINES.get("-".join(section_id.split("-")[:2]))


@dataclass(frozen=True)
class LeveeSpec:
    """Design numbers and planted features of the invented levee.

    Slopes are given as cotangents (``outer_slope=3`` is 1:3). Chainages are
    along the centreline from its first vertex. Defaults describe the 3 km
    demo line; :meth:`scaled` and :meth:`repeated` adapt them to other lengths.
    """

    length_m: float = 3000.0
    crest_level: float = 6.0
    crest_variation: float = 0.10
    crest_width: float = 4.0
    outer_slope: float = 3.0
    inner_slope: float = 2.5
    hinterland_level: float = 1.0
    foreshore_level: float = 1.5
    foreshore_edge: float = 55.0
    bank_slope: float = 4.0
    bed_level: float = -1.0
    ditch_offset: float = -32.0
    ditch_width: float = 4.0
    ditch_depth: float = 0.8
    low_stretches: tuple[LowStretch, ...] = (
        LowStretch(420.0, 620.0, 0.65, 40.0),
        LowStretch(1780.0, 2010.0, 0.70, 50.0),
    )
    berms: tuple[Berm, ...] = (Berm(950.0, 1350.0, 3.5, 8.0, 25.0),)
    inner_berms: tuple[InnerBerm, ...] = (InnerBerm(1540.0, 1720.0, 10.0, 1.0, 20.0),)
    water_stretches: tuple[WaterStretch, ...] = (WaterStretch(2480.0, 2880.0, 2.0),)
    holes: tuple[Hole, ...] = (
        Hole(1640.0, 0.4, 1.5, "crest"),
        Hole(2620.0, -7.0, 2.0, "inner slope"),
    )
    hedges: tuple[Hedge, ...] = (Hedge(300.0, 360.0),)
    post_spacing: float = 50.0
    post_offset: float = -1.75
    post_height: float = 1.2
    noise_sigma: float = 0.05
    survey_year: int = 2024
    epochs: tuple[int, ...] = (2019, 2021)
    lowering_rate: float = 0.01
    rate_stretches: tuple[RateStretch, ...] = (RateStretch(2150.0, 2400.0, 0.03, 30.0),)
    sections: tuple[DemoSection, ...] = _DEFAULT_SECTIONS
    cell: float = 0.5
    margin_m: float = 90.0
    random_state: int = 20731
    crs: str = CRS

    def __post_init__(self) -> None:
        problems = [f"{n} must be positive" for n in (
            "length_m", "crest_width", "outer_slope", "inner_slope", "bank_slope", "cell",
            "margin_m") if not getattr(self, n) > 0]
        if self.noise_sigma < 0:
            problems.append("noise_sigma must not be negative")
        for name in ("low_stretches", "berms", "inner_berms", "water_stretches", "hedges",
                     "rate_stretches", "sections"):
            for it in getattr(self, name):
                if not 0 <= it.from_chainage < it.to_chainage <= self.length_m + 1e-6:
                    problems.append(f"{name}: {it.from_chainage}-{it.to_chainage} is not an "
                                    f"increasing stretch within 0-{self.length_m}")
        if any(y >= self.survey_year for y in self.epochs):
            problems.append(f"epochs {self.epochs} must precede survey_year {self.survey_year}")
        if problems:
            raise ParameterError("invalid LeveeSpec: " + "; ".join(problems))

    def scaled(self, length_m: float) -> LeveeSpec:
        """The same scenario stretched or shrunk to ``length_m`` (chainages scale)."""
        r = float(length_m) / self.length_m

        def sc(obj: Any, names: tuple[str, ...]) -> Any:
            return replace(obj, **{n: getattr(obj, n) * r for n in names})

        ft = ("from_chainage", "to_chainage")
        return replace(
            self,
            length_m=float(length_m),
            low_stretches=tuple(sc(x, ft + ("taper",)) for x in self.low_stretches),
            berms=tuple(sc(x, ft + ("taper",)) for x in self.berms),
            inner_berms=tuple(sc(x, ft + ("taper",)) for x in self.inner_berms),
            water_stretches=tuple(sc(x, ft) for x in self.water_stretches),
            holes=tuple(sc(x, ("chainage",)) for x in self.holes),
            hedges=tuple(sc(x, ft) for x in self.hedges),
            rate_stretches=tuple(sc(x, ft + ("taper",)) for x in self.rate_stretches),
            sections=_fix_last(tuple(sc(x, ft) for x in self.sections), float(length_m)),
        )

    def repeated(self, length_m: float) -> LeveeSpec:
        """The feature pattern repeated every :attr:`length_m` up to ``length_m``.

        Features that would run past the end are dropped; the sections are
        repeated and the last one is cut at the end of the line.
        """
        length_m = float(length_m)
        period = self.length_m
        n = int(math.ceil(length_m / period))

        def rep(items: tuple[Any, ...], *, point: bool = False) -> tuple[Any, ...]:
            out = []
            for k in range(n):
                o = k * period
                for it in items:
                    if point:
                        new = replace(it, chainage=it.chainage + o)
                        if new.chainage < length_m:
                            out.append(new)
                    else:
                        new = replace(it, from_chainage=it.from_chainage + o,
                                      to_chainage=it.to_chainage + o)
                        if new.to_chainage <= length_m:
                            out.append(new)
            return tuple(out)

        secs = []
        for k in range(n):
            for sec in self.sections:
                a = sec.from_chainage + k * period
                if a >= length_m - 1e-9:
                    continue
                secs.append(replace(sec, section_id=f"{sec.section_id}-{k + 1:03d}"
                                    if n > 1 else sec.section_id, from_chainage=a,
                                    to_chainage=min(sec.to_chainage + k * period, length_m)))
        return replace(
            self, length_m=length_m,
            low_stretches=rep(self.low_stretches), berms=rep(self.berms),
            inner_berms=rep(self.inner_berms),
            water_stretches=rep(self.water_stretches), holes=rep(self.holes, point=True),
            hedges=rep(self.hedges), rate_stretches=rep(self.rate_stretches),
            sections=_fix_last(tuple(secs), length_m),
        )


def _fix_last(sections: tuple[DemoSection, ...], length_m: float) -> tuple[DemoSection, ...]:
    """Make the last section end exactly at the line end (rounded to mm)."""
    if not sections:
        return sections
    end = round(length_m, 3)
    out = [replace(s, from_chainage=round(s.from_chainage, 3),
                   to_chainage=round(s.to_chainage, 3)) for s in sections]
    out[-1] = replace(out[-1], to_chainage=end)
    return tuple(out)


# ------------------------------------------------------------------------ centrelines


def _line_from_heading(theta: NDArray[np.float64], *, spacing: float,
                       origin: tuple[float, float]) -> LineString:
    """Polyline whose i-th segment (``spacing`` long) has heading ``theta[i]`` (rad)."""
    dx = spacing * np.cos(theta)
    dy = spacing * np.sin(theta)
    x = origin[0] + np.concatenate([[0.0], np.cumsum(dx)])
    y = origin[1] + np.concatenate([[0.0], np.cumsum(dy)])
    return LineString(np.column_stack([x, y]))


def make_centreline(length_m: float = 3000.0, *,
                    origin: tuple[float, float] = (510530.0, 5809760.0),
                    heading_deg: float = 10.0, bend_deg: float = 11.5,
                    vertex_spacing: float = 10.0) -> LineString:
    """A gentle S-curve of exactly ``length_m``, sampled every ``vertex_spacing``.

    The heading is ``heading_deg + bend_deg * cos(2 pi s / L)`` (degrees,
    anticlockwise from east), so the line swings left then right. Digitised
    west to east with the river on the left (north).
    """
    if length_m <= 0 or vertex_spacing <= 0:
        raise ParameterError("length_m and vertex_spacing must be positive")
    n = max(int(math.ceil(length_m / vertex_spacing)), 2)
    ds = length_m / n
    smid = (np.arange(n) + 0.5) * ds
    theta = np.radians(heading_deg + bend_deg * np.cos(2.0 * np.pi * smid / length_m))
    return _line_from_heading(theta, spacing=ds, origin=origin)


def make_long_centreline(length_m: float, *, random_state: int = 7,
                         origin: tuple[float, float] = (500000.0, 5800000.0),
                         heading_deg: float = 20.0, min_radius: float = 400.0,
                         max_swing_deg: float = 50.0, vertex_spacing: float = 10.0) -> LineString:
    """A smoothly meandering line of exactly ``length_m`` for benchmarks.

    The heading is a sum of five sinusoids with wavelengths 1.5-8 km drawn from
    ``numpy.random.default_rng(random_state)``, scaled so the radius of
    curvature stays above ``min_radius`` and the heading within
    ``max_swing_deg`` of ``heading_deg`` (so the line never turns back on itself).
    """
    if length_m <= 0 or min_radius <= 0:
        raise ParameterError("length_m and min_radius must be positive")
    rng = np.random.default_rng(random_state)
    lam = rng.uniform(1500.0, 8000.0, 5)
    phase = rng.uniform(0.0, 2.0 * np.pi, 5)
    w = rng.uniform(0.5, 1.0, 5)
    k = 2.0 * np.pi / lam
    scale = min(np.radians(max_swing_deg) / w.sum(), (1.0 / min_radius) / (w * k).sum())
    n = max(int(math.ceil(length_m / vertex_spacing)), 2)
    ds = length_m / n
    smid = (np.arange(n) + 0.5) * ds
    theta = np.radians(heading_deg) + scale * (w[:, None] * np.sin(
        k[:, None] * smid[None, :] + phase[:, None])).sum(axis=0)
    return _line_from_heading(theta, spacing=ds, origin=origin)


# --------------------------------------------------------------------------- surface


def _window_weight(s: NDArray[np.float64], a: float, b: float, taper: float) -> NDArray[np.float64]:
    """1 inside [a+taper, b-taper], 0 outside [a, b], raised-cosine ramps between."""
    t = max(min(taper, 0.5 * (b - a)), 1e-9)
    up = np.clip((s - a) / t, 0.0, 1.0)
    dn = np.clip((b - s) / t, 0.0, 1.0)
    return 0.5 - 0.5 * np.cos(np.pi * np.minimum(up, dn))


def _crest_variation(s: NDArray[np.float64], spec: LeveeSpec) -> NDArray[np.float64]:
    """Smooth crest variation bounded by ``spec.crest_variation`` (3 sinusoids)."""
    rng = np.random.default_rng([spec.random_state, 1])
    lam = rng.uniform(280.0, 900.0, 3)
    phase = rng.uniform(0.0, 2.0 * np.pi, 3)
    w = rng.uniform(0.5, 1.0, 3)
    amp = spec.crest_variation * w / w.sum()
    return (amp[:, None] * np.sin(2.0 * np.pi * np.atleast_1d(s)[None, :] / lam[:, None]
                                  + phase[:, None])).sum(axis=0).reshape(np.shape(s))


def lowering_rate(s: NDArray[np.float64] | float, *, spec: LeveeSpec) -> NDArray[np.float64]:
    """Crest lowering rate (m/yr) at chainage ``s``."""
    s = np.asarray(s, dtype=float)
    rate = np.full(s.shape, spec.lowering_rate)
    for st in spec.rate_stretches:
        rate += (st.rate - spec.lowering_rate) * _window_weight(
            s, st.from_chainage, st.to_chainage, st.taper)
    return rate


def crest_level(s: NDArray[np.float64] | float, *, spec: LeveeSpec,
                year: int | None = None) -> NDArray[np.float64]:
    """Noise-free crest level (m) at chainage ``s`` in survey ``year``.

    Nominal level plus the smooth variation, minus the planted low stretches,
    plus the settlement still to come between ``year`` and ``spec.survey_year``.
    """
    s = np.clip(np.asarray(s, dtype=float), 0.0, spec.length_m)
    z = spec.crest_level + _crest_variation(s, spec)
    for low in spec.low_stretches:
        z = z - low.depth * _window_weight(s, low.from_chainage, low.to_chainage, low.taper)
    if year is not None and year != spec.survey_year:
        z = z + lowering_rate(s, spec=spec) * (spec.survey_year - year)
    return z


def _surface_parts(s: NDArray[np.float64], d: NDArray[np.float64], *, spec: LeveeSpec,
                   year: int | None) -> tuple[NDArray[np.float64], NDArray[np.bool_]]:
    """Bare surface incl. hedges, and the mask of water cells."""
    s = np.asarray(s, dtype=float)
    d = np.asarray(d, dtype=float)
    sc = np.clip(s, 0.0, spec.length_m)
    zc = crest_level(sc, spec=spec, year=year)
    half = 0.5 * spec.crest_width
    # outer side: slope, optional berm (EurOtop-style horizontal berm), foreshore, bank, bed
    upper = zc - (d - half) / spec.outer_slope
    outer = upper
    for b in spec.berms:
        wb = b.width * _window_weight(sc, b.from_chainage, b.to_chainage, b.taper)
        lower = upper + wb / spec.outer_slope  # slope line below the berm
        with_berm = np.maximum(upper, np.minimum(b.level, lower))
        outer = np.maximum(outer, with_berm)
    outer = np.minimum(zc, outer)
    ground_out = np.where(d <= spec.foreshore_edge, spec.foreshore_level,
                          np.maximum(spec.bed_level, spec.foreshore_level
                                     - (d - spec.foreshore_edge) / spec.bank_slope))
    water = np.zeros(s.shape, dtype=bool)
    for w in spec.water_stretches:
        inw = (sc >= w.from_chainage) & (sc <= w.to_chainage) & (d > 0)
        ground_out = np.where(inw, w.level, ground_out)
        water |= inw & (outer < w.level)
    # inner side: slope (with piping berms where planted), hinterland with a drainage ditch
    inner = np.minimum(zc, zc - (-d - half) / spec.inner_slope)
    for ib in spec.inner_berms:
        # the toe moves landward by the berm's length; the face keeps the inner slope
        foot = (half + (zc - spec.hinterland_level) * spec.inner_slope
                + ib.length * _window_weight(sc, ib.from_chainage, ib.to_chainage, ib.taper))
        face = spec.hinterland_level + (foot + d) / spec.inner_slope
        inner = np.maximum(inner, np.minimum(spec.hinterland_level + ib.thickness, face))
    ditch = spec.ditch_depth * np.clip(
        1.0 - np.abs(d - spec.ditch_offset) / (0.5 * spec.ditch_width), 0.0, 1.0)
    ground_in = spec.hinterland_level - ditch
    z = np.where(d >= 0, np.maximum(outer, ground_out), np.maximum(inner, ground_in))
    for h in spec.hedges:
        on = ((sc >= h.from_chainage) & (sc <= h.to_chainage)
              & (np.abs(d - h.offset) <= 0.5 * h.width))
        z = np.where(on, z + h.height, z)
    return z, water


def levee_surface(s: NDArray[np.float64], d: NDArray[np.float64], *, spec: LeveeSpec,
                  year: int | None = None) -> NDArray[np.float64]:
    """Noise-free terrain level (m) at chainage ``s`` and signed offset ``d``.

    Trapezoid levee: crest ``spec.crest_width`` wide centred on the line,
    outer slope 1:``outer_slope`` (with berms where planted) down to the
    foreshore, inner slope 1:``inner_slope`` down to the hinterland. Includes
    hedges and water surfaces; excludes noise, posts and nodata holes.
    ``d > 0`` is the outer (river) side.
    """
    return _surface_parts(s, d, spec=spec, year=year)[0]


def hole_mask(s: NDArray[np.float64], d: NDArray[np.float64], *,
              spec: LeveeSpec) -> NDArray[np.bool_]:
    """True where a planted nodata hole covers (s, d)."""
    s = np.asarray(s, dtype=float)
    d = np.asarray(d, dtype=float)
    m = np.zeros(np.broadcast(s, d).shape, dtype=bool)
    for h in spec.holes:
        m |= (s - h.chainage) ** 2 + (d - h.offset) ** 2 <= h.radius ** 2
    return m


def post_chainages(spec: LeveeSpec) -> NDArray[np.float64]:
    """Chainages of the crest posts, every ``post_spacing`` starting at half a spacing."""
    if spec.post_spacing <= 0:
        return np.empty(0)
    return np.arange(0.5 * spec.post_spacing, spec.length_m, spec.post_spacing)


# ----------------------------------------------------------------------- line frame


class LineFrame:
    """Fast (x, y) -> (chainage, signed offset) for a smooth polyline.

    The line is densified to ``spacing`` and indexed with
    :class:`scipy.spatial.cKDTree`; each point is projected on the tangent at
    its nearest dense vertex. Beyond the ends the end tangents extend the line.
    """

    def __init__(self, line: LineString, *, spacing: float = 0.5):
        length = line.length
        n = max(int(math.ceil(length / spacing)), 1)
        self.s = np.linspace(0.0, length, n + 1)
        self.xy = shapely.get_coordinates(shapely.line_interpolate_point(line, self.s))
        eps = min(0.25 * spacing, 0.05)
        a = shapely.get_coordinates(shapely.line_interpolate_point(
            line, np.clip(self.s - eps, 0.0, length)))
        b = shapely.get_coordinates(shapely.line_interpolate_point(
            line, np.clip(self.s + eps, 0.0, length)))
        t = b - a
        self.t = t / np.hypot(t[:, 0], t[:, 1])[:, None]
        self.length = length
        self.spacing = spacing
        self.tree = cKDTree(self.xy)

    def locate(self, x: NDArray[np.float64], y: NDArray[np.float64], *,
               max_offset: float) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
        """Chainage and signed offset (left positive); NaN beyond ``max_offset``."""
        pts = np.column_stack([np.ravel(x), np.ravel(y)])
        dist, idx = self.tree.query(pts, distance_upper_bound=max_offset + self.spacing)
        ok = np.isfinite(dist)
        s = np.full(len(pts), np.nan)
        d = np.full(len(pts), np.nan)
        i = idx[ok]
        dp = pts[ok] - self.xy[i]
        tx, ty = self.t[i, 0], self.t[i, 1]
        s[ok] = self.s[i] + dp[:, 0] * tx + dp[:, 1] * ty
        d[ok] = tx * dp[:, 1] - ty * dp[:, 0]
        far = np.abs(d) > max_offset
        s[far] = np.nan
        d[far] = np.nan
        return s.reshape(np.shape(x)), d.reshape(np.shape(x))


# ------------------------------------------------------------------------- rasters


@dataclass(frozen=True)
class GridWindow:
    """A window on the absolute cell grid.

    Cell (r, c) spans x in [c, c + 1) * cell and y in (-(r + 1), -r] * cell,
    so windows of any file cut from the same grid share cell values.
    """

    row0: int
    col0: int
    nrows: int
    ncols: int
    cell: float

    @property
    def transform(self) -> Any:
        """The rasterio affine transform of the window."""
        from rasterio.transform import Affine

        return Affine(self.cell, 0.0, self.col0 * self.cell, 0.0, -self.cell,
                      -self.row0 * self.cell)

    @property
    def bounds(self) -> tuple[float, float, float, float]:
        """(minx, miny, maxx, maxy) of the window."""
        c = self.cell
        return (self.col0 * c, -(self.row0 + self.nrows) * c,
                (self.col0 + self.ncols) * c, -self.row0 * c)


def grid_for_bounds(bounds: tuple[float, float, float, float], *, cell: float) -> GridWindow:
    """Smallest window on the absolute ``cell`` grid covering ``bounds``."""
    minx, miny, maxx, maxy = bounds
    c0 = int(math.floor(minx / cell + 1e-9))
    c1 = int(math.ceil(maxx / cell - 1e-9))
    r0 = int(math.floor(-maxy / cell + 1e-9))
    r1 = int(math.ceil(-miny / cell - 1e-9))
    return GridWindow(r0, c0, r1 - r0, c1 - c0, cell)


def _block_noise(win: GridWindow, *, random_state: int, stream: int) -> NDArray[np.float64]:
    """Standard-normal noise of a window, drawn per absolute 256-cell block.

    Each block has its own ``numpy.random.default_rng`` keyed by
    (random_state, stream, block row, block column), so values do not depend
    on how the grid is cut into files.
    """
    B = _NOISE_BLOCK
    off = 1 << 40  # keep the keys non-negative
    out = np.empty((win.nrows, win.ncols))
    r_end, c_end = win.row0 + win.nrows, win.col0 + win.ncols
    for bi in range(win.row0 // B, (r_end - 1) // B + 1):
        for bj in range(win.col0 // B, (c_end - 1) // B + 1):
            blk = np.random.default_rng(
                [random_state, stream, bi + off, bj + off]).standard_normal((B, B))
            ra, rb = max(bi * B, win.row0), min((bi + 1) * B, r_end)
            ca, cb = max(bj * B, win.col0), min((bj + 1) * B, c_end)
            out[ra - win.row0:rb - win.row0, ca - win.col0:cb - win.col0] = \
                blk[ra - bi * B:rb - bi * B, ca - bj * B:cb - bj * B]
    return out


def locate_window(win: GridWindow, frame: LineFrame, *,
                  max_offset: float) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """Chainage and offset of every cell centre of ``win`` (NaN outside reach).

    Exact on nodes every ``_NODE`` cells of the absolute grid, bilinear between
    them: (s, d) are smooth where the radius of curvature exceeds the reach
    (the interpolation error is about h^2 / (8 R), under a millimetre here).
    """
    k = _NODE
    cell = win.cell
    j0, j1 = win.col0 // k, (win.col0 + win.ncols - 1) // k + 1
    i0, i1 = win.row0 // k, (win.row0 + win.nrows - 1) // k + 1
    nx = (np.arange(j0, j1 + 1) * k + 0.5) * cell
    ny = -(np.arange(i0, i1 + 1) * k + 0.5) * cell
    NX, NY = np.meshgrid(nx, ny)
    ns, nd = frame.locate(NX, NY, max_offset=max_offset + 2.0 * k * cell)
    cols = win.col0 + np.arange(win.ncols)
    rows = win.row0 + np.arange(win.nrows)
    jc, fc = cols // k - j0, (cols % k) / k
    ir, fr = rows // k - i0, (rows % k) / k

    def interp(g: NDArray[np.float64]) -> NDArray[np.float64]:
        top = g[ir][:, jc] * (1 - fc) + g[ir][:, jc + 1] * fc
        bot = g[ir + 1][:, jc] * (1 - fc) + g[ir + 1][:, jc + 1] * fc
        return top * (1 - fr)[:, None] + bot * fr[:, None]

    s, d = interp(ns), interp(nd)
    beyond = np.maximum(np.maximum(-s, s - frame.length), 0.0)  # past an end, along its tangent
    far = ~(np.hypot(beyond, d) <= max_offset)  # distance to the line, as its buffer
    s[far] = np.nan
    d[far] = np.nan
    return s, d


def render_window(win: GridWindow, s: NDArray[np.float64], d: NDArray[np.float64], *,
                  spec: LeveeSpec, posts_rc: NDArray[np.int64], year: int | None = None,
                  holes: bool = True) -> NDArray[np.float32]:
    """Terrain of one grid window as float32, ``NODATA`` where ``s`` is NaN.

    Adds LiDAR-like noise (``spec.noise_sigma``) except on water, burns the
    posts given as absolute (row, col) cells, cuts the holes, rounds to 1 mm.
    """
    out = np.full((win.nrows, win.ncols), NODATA, dtype=np.float32)
    ok = np.isfinite(s)
    if not ok.any():
        return out
    z = np.full(s.shape, np.nan)
    zs, water = _surface_parts(s[ok], d[ok], spec=spec, year=year)
    stream = 0 if year is None else int(year)
    noise = _block_noise(win, random_state=spec.random_state, stream=stream)[ok]
    z[ok] = zs + np.where(water, 0.0, spec.noise_sigma * noise)
    if len(posts_rc):
        pr = posts_rc[:, 0] - win.row0
        pc = posts_rc[:, 1] - win.col0
        inside = (pr >= 0) & (pr < win.nrows) & (pc >= 0) & (pc < win.ncols)
        z[pr[inside], pc[inside]] += spec.post_height
    if holes and spec.holes:
        hm = np.zeros(s.shape, dtype=bool)
        hm[ok] = hole_mask(s[ok], d[ok], spec=spec)
        z[hm] = np.nan
    good = np.isfinite(z)
    out[good] = np.round(z[good], 3).astype(np.float32)
    return out


def _posts_rc(line: LineString, spec: LeveeSpec, cell: float) -> NDArray[np.int64]:
    """Absolute (row, col) cells of the crest posts."""
    sk = post_chainages(spec)
    if len(sk) == 0:
        return np.empty((0, 2), dtype=np.int64)
    eps = 0.05
    p = shapely.get_coordinates(shapely.line_interpolate_point(line, sk))
    a = shapely.get_coordinates(shapely.line_interpolate_point(line, np.clip(sk - eps, 0, None)))
    b = shapely.get_coordinates(shapely.line_interpolate_point(line, sk + eps))
    t = (b - a) / np.hypot(*(b - a).T)[:, None]
    q = p + spec.post_offset * np.column_stack([-t[:, 1], t[:, 0]])  # left normal
    return np.column_stack([np.floor(-q[:, 1] / cell), np.floor(q[:, 0] / cell)]).astype(np.int64)


@dataclass(frozen=True)
class _Job:
    """One raster of a series: its file, survey year and whether holes are cut."""

    path: Path
    year: int | None
    holes: bool


def _write_tifs(jobs: list[_Job], win: GridWindow, frame: LineFrame, corridor: Any, *,
                spec: LeveeSpec, posts_rc: NDArray[np.int64]) -> None:
    """Write same-grid GeoTIFFs (tiled 256, deflate, float32) window by window.

    Chainage and offset are located once per window and shared by all jobs.
    """
    import rasterio
    from rasterio.windows import Window

    profile = dict(driver="GTiff", width=win.ncols, height=win.nrows, count=1,
                   dtype="float32", crs=spec.crs, transform=win.transform, nodata=NODATA,
                   tiled=True, blockxsize=256, blockysize=256, compress="deflate",
                   predictor=3, zlevel=6)
    if win.nrows * win.ncols * 4 > 3 * 2**30:
        profile["BIGTIFF"] = "YES"
    dsts = [rasterio.open(j.path, "w", **profile) for j in jobs]
    try:
        for r in range(0, win.nrows, _WINDOW):
            for c in range(0, win.ncols, _WINDOW):
                sub = GridWindow(win.row0 + r, win.col0 + c, min(_WINDOW, win.nrows - r),
                                 min(_WINDOW, win.ncols - c), win.cell)
                rw = Window(c, r, sub.ncols, sub.nrows)
                if not corridor.intersects(shapely.box(*sub.bounds)):
                    blank = np.full((sub.nrows, sub.ncols), NODATA, dtype=np.float32)
                    for dst in dsts:
                        dst.write(blank, 1, window=rw)
                    continue
                s, d = locate_window(sub, frame, max_offset=spec.margin_m)
                for job, dst in zip(jobs, dsts, strict=True):
                    dst.write(render_window(sub, s, d, spec=spec, posts_rc=posts_rc,
                                            year=job.year, holes=job.holes), 1, window=rw)
    finally:
        for dst in dsts:
            dst.close()


def vrt_xml(tiles: list[tuple[str, GridWindow]], mosaic: GridWindow, *, crs_wkt: str) -> str:
    """XML of a GDAL VRT mosaic: one ``SimpleSource`` per non-overlapping tile.

    Tile file names are relative to the VRT. Layout as documented for GDAL's
    VRT driver (``VRTDataset`` / ``VRTRasterBand`` / ``SimpleSource``).
    """
    gt = mosaic.transform
    lines = [f'<VRTDataset rasterXSize="{mosaic.ncols}" rasterYSize="{mosaic.nrows}">',
             f'  <SRS dataAxisToSRSAxisMapping="1,2">{escape(crs_wkt)}</SRS>',
             f"  <GeoTransform>{gt.c!r}, {gt.a!r}, 0.0, {gt.f!r}, 0.0, {gt.e!r}</GeoTransform>",
             '  <VRTRasterBand dataType="Float32" band="1">',
             f"    <NoDataValue>{NODATA:g}</NoDataValue>",
             "    <ColorInterp>Gray</ColorInterp>"]
    for name, w in tiles:
        xo, yo = w.col0 - mosaic.col0, w.row0 - mosaic.row0
        lines += [
            "    <SimpleSource>",
            f'      <SourceFilename relativeToVRT="1">{escape(name)}</SourceFilename>',
            "      <SourceBand>1</SourceBand>",
            f'      <SourceProperties RasterXSize="{w.ncols}" RasterYSize="{w.nrows}" '
            'DataType="Float32" BlockXSize="256" BlockYSize="256"/>',
            f'      <SrcRect xOff="0" yOff="0" xSize="{w.ncols}" ySize="{w.nrows}"/>',
            f'      <DstRect xOff="{xo}" yOff="{yo}" xSize="{w.ncols}" ySize="{w.nrows}"/>',
            "    </SimpleSource>"]
    lines += ["  </VRTRasterBand>", "</VRTDataset>", ""]
    return "\n".join(lines)


def write_dem_series(targets: dict[int | None, str | Path], centreline: LineString, *,
                     spec: LeveeSpec | None = None, tile_size_m: float | None = None,
                     holes_years: tuple[int | None, ...] | None = None) -> dict[int | None, Path]:
    """Write DEMs of several survey years on one grid; return the raster per year.

    ``targets`` maps a year (``None`` is ``spec.survey_year``) to a ``.tif``
    path or, with ``tile_size_m``, to a folder for its tiles and VRT (named
    after the folder). Holes are cut in the years of ``holes_years``, by
    default only the survey year. See :func:`write_dem` for the rest.
    """
    spec = _spec_for(centreline, spec)
    cell = spec.cell
    if None in targets and spec.survey_year in targets:
        raise ParameterError(f"year None and {spec.survey_year} are the same survey")
    # (key as given, year with None for the survey year, target path)
    items = [(k, None if k == spec.survey_year else k, Path(p)) for k, p in targets.items()]
    hy = {None} if holes_years is None else {
        None if y == spec.survey_year else y for y in holes_years}
    frame = LineFrame(centreline, spacing=min(cell, 1.0))
    reach = spec.margin_m + 2.0 * max(cell, frame.spacing) + 2.0 * _NODE * cell
    corridor = shapely.buffer(centreline, reach, quad_segs=8)
    shapely.prepare(corridor)
    posts = _posts_rc(centreline, spec, cell)
    if tile_size_m is None:
        win = grid_for_bounds(shapely.buffer(centreline, spec.margin_m).bounds, cell=cell)
        for _, _, p in items:
            p.parent.mkdir(parents=True, exist_ok=True)
        _write_tifs([_Job(p, y, y in hy) for _, y, p in items], win, frame, corridor,
                    spec=spec, posts_rc=posts)
        log.info("wrote %s (%d x %d cells)", ", ".join(p.name for _, _, p in items),
                 win.ncols, win.nrows)
        return {k: p for k, _, p in items}
    n_tile = tile_size_m / cell
    if tile_size_m <= 0 or abs(n_tile - round(n_tile)) > 1e-9:
        raise ParameterError(f"tile_size_m={tile_size_m} must be a positive multiple of the "
                             f"cell size {cell}")
    n_tile = int(round(n_tile))
    for _, _, p in items:
        p.mkdir(parents=True, exist_ok=True)
    minx, miny, maxx, maxy = shapely.buffer(centreline, spec.margin_m).bounds
    tx = np.arange(math.floor(minx / tile_size_m), math.ceil(maxx / tile_size_m))
    ty = np.arange(math.floor(miny / tile_size_m), math.ceil(maxy / tile_size_m))
    TX, TY = (a.ravel() for a in np.meshgrid(tx, ty))
    boxes = shapely.box(TX * tile_size_m, TY * tile_size_m, (TX + 1) * tile_size_m,
                        (TY + 1) * tile_size_m)
    hit = shapely.intersects(shapely.buffer(centreline, spec.margin_m), boxes)
    tiles: list[tuple[str, GridWindow]] = []
    for i, j in zip(TX[hit], TY[hit], strict=True):
        w = GridWindow(int(-(j + 1) * n_tile), int(i * n_tile), n_tile, n_tile, cell)
        name = f"{int(i * tile_size_m)}_{int(j * tile_size_m)}.tif"
        jobs = [_Job(p / f"{p.name}_{name}", y, y in hy) for _, y, p in items]
        _write_tifs(jobs, w, frame, corridor, spec=spec, posts_rc=posts)
        tiles.append((name, w))
    mosaic = GridWindow(min(w.row0 for _, w in tiles), min(w.col0 for _, w in tiles), 0, 0, cell)
    mosaic = replace(mosaic, nrows=max(w.row0 + w.nrows for _, w in tiles) - mosaic.row0,
                     ncols=max(w.col0 + w.ncols for _, w in tiles) - mosaic.col0)
    from rasterio.crs import CRS as RioCRS

    wkt = RioCRS.from_user_input(spec.crs).to_wkt()
    result: dict[int | None, Path] = {}
    for key, _, p in items:
        vrt = p / f"{p.name}.vrt"
        vrt.write_text(vrt_xml([(f"{p.name}_{n}", w) for n, w in tiles], mosaic, crs_wkt=wkt),
                       encoding="utf-8")
        result[key] = vrt
    log.info("wrote %d tiles of %g m per year and %s", len(tiles), tile_size_m,
             ", ".join(v.name for v in result.values()))
    return result


def write_dem(path_or_dir: str | Path, centreline: LineString, *, spec: LeveeSpec | None = None,
              cell: float | None = None, tile_size_m: float | None = None,
              year: int | None = None, holes: bool | None = None) -> Path:
    """Write the synthetic DEM of ``centreline`` and return the raster to open.

    Parameters
    ----------
    path_or_dir
        A ``.tif`` path, or with ``tile_size_m`` a folder for the tiles and
        the VRT mosaic ``<folder name>.vrt``.
    centreline
        The digitised line (river on its left); its length must match the spec.
    spec
        Scenario design; ``LeveeSpec()`` scaled to the line by default.
    cell
        Cell size (m); ``spec.cell`` by default.
    tile_size_m
        When given, square tiles of this size on a grid aligned to multiples
        of it, only those touching the corridor (``spec.margin_m`` either
        side of the line), plus a VRT mosaic written as plain XML.
    year
        Survey year; ``None`` is ``spec.survey_year``. Earlier years have a
        higher crest (settlement still to come) and their own noise.
    holes
        Cut the planted nodata holes; by default only in the survey year.
    """
    spec = _spec_for(centreline, spec)
    if cell is not None:
        spec = replace(spec, cell=float(cell))
    if holes is None:
        holes = year is None or year == spec.survey_year
    return write_dem_series({year: path_or_dir}, centreline, spec=spec, tile_size_m=tile_size_m,
                            holes_years=(year,) if holes else ())[year]


def _spec_for(line: LineString, spec: LeveeSpec | None) -> LeveeSpec:
    """The spec to use for ``line``; the default spec is scaled to its length."""
    if spec is None:
        spec = LeveeSpec()
        if abs(spec.length_m - line.length) > 1e-6:
            spec = spec.scaled(line.length)
        return spec
    if abs(spec.length_m - line.length) > max(1e-6 * spec.length_m, 1e-3):
        raise ParameterError(f"the centreline is {line.length:.3f} m long but the spec is for "
                             f"{spec.length_m:.3f} m; use spec.scaled() or spec.repeated()")
    return spec


# -------------------------------------------------------------------- tables & truth


def indicative_freeboard(hm0: float, tm10: float, q_allow: float, *, cot_alpha: float,
                         gamma_f: float = 1.0, wave_angle: float = 0.0) -> float:
    """Crest freeboard Rc (m) for ``q_allow`` (l/s per m) on a straight smooth slope.

    The package's own EurOtop (2018) inverse (design or assessment approach)
    with the oblique-wave factor; used to tune and document the demo.
    """
    from ..formulas import hydraulics as hy

    return float(hy.freeboard_for_discharge(
        q_allow / 1000.0, hm0, tm10, 1.0 / cot_alpha, gamma_f=gamma_f,
        gamma_beta=hy.gamma_beta_overtopping(wave_angle), approach="design"))


def indicative_required_level(sec: DemoSection, *, cot_alpha: float) -> float:
    """Water level + sea-level rise + settlement + max(EurOtop Rc, min freeboard)."""
    rc = indicative_freeboard(sec.hm0, sec.tm10, sec.q_allow, cot_alpha=cot_alpha,
                              gamma_f=sec.roughness, wave_angle=sec.wave_angle)
    return (sec.water_level + sec.sea_level_rise + sec.settlement
            + max(rc, sec.min_freeboard))


def write_sections_csv(path: str | Path, spec: LeveeSpec) -> Path:
    """Write the section-conditions table of ``spec`` (columns ``SECTION_COLUMNS``)."""
    path = Path(path)
    rows = [",".join(SECTION_COLUMNS)]
    for sec in spec.sections:
        vals = asdict(sec)
        rows.append(",".join(vals[c] if c in _TEXT_COLUMNS else _num(float(vals[c]))
                             for c in SECTION_COLUMNS))
    path.write_text("\n".join(rows) + "\n", encoding="utf-8")
    return path


#: columns of the demo's conditions with standards (``standards.csv``)
STANDARD_COLUMNS: tuple[str, ...] = (
    *SECTION_COLUMNS, "standard_return_period", "standard_probability", "level_ref",
    "return_period_ref", "decimation_height", "gumbel_location", "gumbel_scale",
    "flood_damage", "discount_rate", "raise_fixed_cost",
    "soil_unit_weight", "soil_unit_weight_sat", "soil_cohesion", "soil_friction_angle",
    "required_safety_factor",
)

#: the demo's invented body soil per section for the inner-slope stability screening:
#: (unit weight, saturated unit weight (kN/m3), c' (kPa), phi' (degrees), required factor).
#: VN-03 is a weak, silty body (short on stability on its 1:2.5 inner slope); VN-04 gives
#: none and is not screened. The required factor 1.3 is the demo's own screening value.
DEMO_SOIL: dict[str, tuple[float, float, float, float, float]] = {
    "VN-01": (18.0, 20.0, 6.0, 30.0, 1.3),
    "VN-02": (18.0, 20.0, 5.0, 32.0, 1.3),
    "VN-03": (17.0, 18.5, 1.0, 22.0, 1.3),
}


def _num(v: float) -> str:
    return "" if v != v else f"{v:.10g}"


def write_standards_csv(path: str | Path, spec: LeveeSpec) -> Path:
    """Write the conditions with a safety standard and a frequency line per section.

    The design water level is left empty where it is read off the line at the
    standard (table, decimation); the line passes through the level of
    ``sections.csv`` there.
    """
    path = Path(path)
    rows = [",".join(STANDARD_COLUMNS)]
    for sec in spec.sections:
        vals: dict[str, Any] = asdict(sec)
        ln = demo_line(sec.section_id)
        extra = dict.fromkeys(STANDARD_COLUMNS[len(SECTION_COLUMNS):], float("nan"))
        if ln is not None:
            key = "standard_probability" if ln.standard_as_probability else \
                "standard_return_period"
            extra[key] = 1.0 / ln.standard if ln.standard_as_probability else ln.standard
            if ln.kind == "decimation":
                extra.update(level_ref=sec.water_level, return_period_ref=ln.standard,
                             decimation_height=ln.decimation_height)
            elif ln.kind == "gumbel":  # mu so that the line meets the level at the standard
                y = -math.log(-math.log1p(-1.0 / ln.standard))
                extra.update(gumbel_location=round(sec.water_level - ln.gumbel_scale * y, 6),
                             gumbel_scale=ln.gumbel_scale)
            extra.update(flood_damage=ln.flood_damage, discount_rate=ln.discount_rate,
                         raise_fixed_cost=ln.raise_fixed_cost)
        if sec.section_id in DEMO_SOIL:
            extra.update(zip(STANDARD_COLUMNS[-5:], DEMO_SOIL[sec.section_id], strict=True))
            if not ln.level_given:
                vals["water_level"] = float("nan")
                if ln.kind == "table" and len(ln.table[0]) > 2:  # waves from the table
                    vals["hm0"] = vals["tm10"] = float("nan")
        vals.update(extra)
        rows.append(",".join(vals[c] if c in _TEXT_COLUMNS else _num(float(vals[c]))
                             for c in STANDARD_COLUMNS))
    path.write_text("\n".join(rows) + "\n", encoding="utf-8")
    return path


def write_frequency_csv(path: str | Path, spec: LeveeSpec) -> Path:
    """Write the frequency table of the demo sections whose line is a table."""
    path = Path(path)
    rows = ["section_id,return_period,water_level,hm0,tm10"]
    for sec in spec.sections:
        ln = demo_line(sec.section_id)
        if ln is None or ln.kind != "table":
            continue
        for r in ln.table:
            waves = [_num(v) for v in r[2:]] + [""] * (4 - len(r))
            rows.append(",".join([sec.section_id, _num(r[0]), _num(r[1]), *waves]))
    path.write_text("\n".join(rows) + "\n", encoding="utf-8")
    return path


#: the demo's known structures and accepted exceptions (invented), as fractions of the
#: line's length: (id, kind, effect, from, to, crest level or None, note)
DEMO_STRUCTURES: tuple[tuple[str, str, str, float, float, float | None, str], ...] = (
    ("W1", "crest_wall", "crest_level", 1840 / 3000, 1905 / 3000, 6.10,
     "parapet wall on the crest, top level from the as-built drawing"),
    ("R1", "ramp", "exclude", 2480 / 3000, 2520 / 3000, None,
     "road ramp to the ferry lane: assessed separately"),
    ("A1", "accepted", "note", 520 / 3000, 560 / 3000, None,
     "deficit known; raising scheduled with the next works programme"),
    ("C1", "culvert", "note", 1195 / 3000, 1205 / 3000, None, "culvert under the levee"),
)


def write_structures_csv(path: str | Path, length_m: float) -> Path:
    """Write the demo's structures table (:data:`DEMO_STRUCTURES`, chainages scaled)."""
    path = Path(path)
    rows = ["structure_id,kind,effect,from_chainage,to_chainage,crest_level,note"]
    for sid, kind, effect, a, b, level, note in DEMO_STRUCTURES:
        lv = "" if level is None else f"{level:g}"
        rows.append(f"{sid},{kind},{effect},{a * length_m:.1f},{b * length_m:.1f},{lv},"
                    f'"{note}"')
    path.write_text("\n".join(rows) + "\n", encoding="utf-8")
    return path


def write_centreline(path: str | Path, centreline: LineString, *, crs: str = CRS,
                     line_id: str = LINE_ID, name: str = LINE_NAME) -> Path:
    """Write the centreline as a one-feature GeoPackage layer ``centreline``."""
    import geopandas as gpd
    import pyogrio

    path = Path(path)
    gdf = gpd.GeoDataFrame({"line_id": [line_id], "name": [name]}, geometry=[centreline],
                           crs=crs)
    # a fixed GeoPackage timestamp keeps the file byte-for-byte reproducible (GDAL GPKG driver)
    pyogrio.set_gdal_config_options({"OGR_CURRENT_DATE": "2024-01-01T00:00:00.000Z"})
    try:
        pyogrio.write_dataframe(gdf, path, layer="centreline", driver="GPKG")
    finally:
        pyogrio.set_gdal_config_options({"OGR_CURRENT_DATE": None})
    return path


def truth_record(spec: LeveeSpec, centreline: LineString, *,
                 epochs: bool = True) -> dict[str, Any]:
    """The planted truth of a scenario as a JSON-ready dict."""
    x0, y0 = centreline.coords[0]
    x1, y1 = centreline.coords[-1]
    sec_rows = []
    for sec in spec.sections:
        row = asdict(sec)
        row["indicative_required_level"] = round(
            indicative_required_level(sec, cot_alpha=spec.outer_slope), 3)
        sec_rows.append(row)
    truth: dict[str, Any] = {
        "scenario": f"invented levee along the river {RIVER}, {POLDER} polder",
        "line_id": LINE_ID,
        "crs": spec.crs,
        "line_length_m": round(centreline.length, 6),
        "line_start_xy": [round(x0, 3), round(y0, 3)],
        "line_end_xy": [round(x1, 3), round(y1, 3)],
        "outer_side": "left of the digitised direction (river)",
        "level_unit": "m above datum",
        "cell_size_m": spec.cell,
        "nodata": NODATA,
        "corridor_half_width_m": spec.margin_m,
        "random_state": spec.random_state,
        "noise_sigma_m": spec.noise_sigma,
        "nominal_crest_level": spec.crest_level,
        "crest_variation_m": spec.crest_variation,
        "crest_width_m": spec.crest_width,
        "outer_slope_cot": spec.outer_slope,
        "inner_slope_cot": spec.inner_slope,
        "hinterland_level": spec.hinterland_level,
        "foreshore_level": spec.foreshore_level,
        "foreshore_edge_offset_m": spec.foreshore_edge,
        "bed_level": spec.bed_level,
        "ditch": {"offset_m": spec.ditch_offset, "width_m": spec.ditch_width,
                  "depth_m": spec.ditch_depth},
        "low_stretches": [
            {**asdict(x), "full_depth_from": x.from_chainage + x.taper,
             "full_depth_to": x.to_chainage - x.taper} for x in spec.low_stretches],
        "berms": [asdict(x) for x in spec.berms],
        "inner_berms": [asdict(x) for x in spec.inner_berms],
        "water_stretches": [{**asdict(x), "side": "outer"} for x in spec.water_stretches],
        "nodata_holes": [asdict(x) for x in spec.holes],
        "hedges": [asdict(x) for x in spec.hedges],
        "posts": {"spacing_m": spec.post_spacing, "offset_m": spec.post_offset,
                  "height_m": spec.post_height, "count": int(len(post_chainages(spec))),
                  "first_chainage": float(post_chainages(spec)[0])
                  if len(post_chainages(spec)) else None},
        "sections": sec_rows,
        "survey_year": spec.survey_year,
    }
    if epochs:
        truth["epochs"] = {
            "years": [*spec.epochs, spec.survey_year],
            "files": {str(spec.survey_year): "dem.tif"}
            | {str(y): f"dem_{y}.tif" for y in spec.epochs},
            "base_lowering_rate_m_per_yr": spec.lowering_rate,
            "rate_stretches": [asdict(x) for x in spec.rate_stretches],
            "note": "crest of year Y is higher than in the survey year by rate * (survey_year"
                    " - Y); nodata holes only in the survey year; independent noise",
        }
    return truth


def write_scenario(out_dir: str | Path, *, spec: LeveeSpec | None = None,
                   centreline: LineString | None = None, epochs: bool = True,
                   tile_size_m: float | None = None, overwrite: bool = False) -> dict[str, Path]:
    """Write the whole demo scenario into ``out_dir`` and return the paths by name.

    Files: ``levee.gpkg`` (layer ``centreline``), ``dem.tif`` (or with
    ``tile_size_m`` a folder ``dem/`` of tiles with ``dem.vrt``),
    ``sections.csv``, ``standards.csv`` with ``frequency.csv`` (the same
    conditions with safety standards and frequency lines), ``structures.csv``,
    ``truth.json`` and, with ``epochs``, ``dem_<year>.tif`` for each of ``spec.epochs``.
    """
    spec = spec or LeveeSpec()
    line = centreline if centreline is not None else make_centreline(spec.length_m)
    spec = _spec_for(line, spec)
    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    names = ["levee.gpkg", "sections.csv", "standards.csv", "frequency.csv", "structures.csv",
             "truth.json",
             "dem.tif" if tile_size_m is None else "dem"]
    if epochs:
        names += [f"dem_{y}.tif" if tile_size_m is None else f"dem_{y}" for y in spec.epochs]
    existing = [n for n in names if (out / n).exists()]
    if existing and not overwrite:
        raise FileOverwriteError(f"{out}: {', '.join(existing)} already exist; "
                                 "pass overwrite=True to replace them")
    gpkg = out / "levee.gpkg"
    if gpkg.exists():
        gpkg.unlink()
    paths: dict[str, Path] = {"centreline": write_centreline(gpkg, line, crs=spec.crs)}

    def dem_target(stem: str) -> Path:
        return out / (f"{stem}.tif" if tile_size_m is None else stem)

    targets: dict[int | None, str | Path] = {None: dem_target("dem")}
    if epochs:
        targets |= {y: dem_target(f"dem_{y}") for y in spec.epochs}
    dems = write_dem_series(targets, line, spec=spec, tile_size_m=tile_size_m)
    paths["dem"] = dems[None]
    for y in spec.epochs if epochs else ():
        paths[f"dem_{y}"] = dems[y]
    paths["sections"] = write_sections_csv(out / "sections.csv", spec)
    paths["standards"] = write_standards_csv(out / "standards.csv", spec)
    paths["frequency"] = write_frequency_csv(out / "frequency.csv", spec)
    paths["structures"] = write_structures_csv(out / "structures.csv", spec.length_m)
    truth = truth_record(spec, line, epochs=epochs)
    if epochs:
        truth["epochs"]["files"] = {str(spec.survey_year): paths["dem"].relative_to(out).as_posix()}
        truth["epochs"]["files"] |= {str(y): paths[f"dem_{y}"].relative_to(out).as_posix()
                                     for y in spec.epochs}
    paths["truth"] = out / "truth.json"
    paths["truth"].write_text(json.dumps(truth, indent=2) + "\n", encoding="utf-8")
    log.info("scenario written to %s", out)
    return paths
