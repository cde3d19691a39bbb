"""Inner-slope stability: Bishop's simplified method of slices on the measured profile.

A screening of geometry with schematised soil, not a geotechnical assessment.
One homogeneous soil per section (the body and, below it, the same soil) is
the screening level.

Method
------
Bishop (1955), "The use of the slip circle in the stability analysis of
slopes", Geotechnique 5(1), 7-17, simplified form (inter-slice shear forces
neglected, moment equilibrium about the circle's centre)::

    F = sum[(c' b + (W - u b) tan phi') / m_alpha] / sum(W sin alpha)
    m_alpha = cos alpha + sin alpha tan phi' / F

solved for every circle at once by Steffensen's iteration (Aitken's delta-squared
on two fixed-point steps, :data:`ROUNDS` times, then one plain step) from the value
at ``m_alpha = cos alpha`` (the limit F -> infinity, above the root, from which the
plain iteration falls monotonically to it). ``m_alpha`` is held at or above
:data:`M_ALPHA_MIN` (the numerical trouble of small ``m_alpha`` near the toe is
known since Whitman and Bailey 1967; the 0.2 bound is common practice).

Circles slide towards the land (negative offsets). Each circle is given by its
exit point, its entry point and the half-angle it subtends; both points lie on
the measured ground. Exits run from where the measured ground comes down to
half the height (:data:`EXIT_TOP`) over the toe region and beyond the toe,
entries from the crest's outer edge down to where the ground
comes down to :data:`ENTRY_LOW` of the height. Both levels are found on the
measured ground (:func:`ground_at_level`), not on the straight line from toe
to crest edge: on a levee with an inner berm that line runs inside the berm,
and slips exiting on the berm or just above it (the critical ones there) would
be missed. The search takes a coarse grid of exits, entries and angles for
every station at once, then one refinement around each station's best circle;
the least factor of safety is the station's. The circles through one pair of
exit and entry share their slices' ground and phreatic levels (read once per
pair, :func:`pair_fos`); only the slip surface differs between their angles.

Phreatic line (schematisation, our own screening choice)
--------------------------------------------------------
``line``: horizontal at the still water (design level + sea-level rise, at most
the crest level) up to where that level meets the outer slope, straight from
there to the inner toe at the inner toe's level, and at the inner toe level
further landward; nowhere above the ground (the land-side water level is taken
as the inner toe level). ``saturated``: at the ground surface everywhere (a
fully saturated body, the cautious choice after long high water or heavy
rain). Pore pressure is hydrostatic below the line, ``u = gamma_w (p - z)``.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

#: unit weight of water (kN/m3), common practice
GAMMA_W = 9.81
#: lower bound of m_alpha (common practice after Whitman and Bailey 1967, from memory)
M_ALPHA_MIN = 0.2
#: slices per circle: the coarse grid ranks circles with fewer, the refinement uses more
SLICES, SLICES_COARSE = 24, 12
#: Steffensen rounds on Bishop's fixed point (each two plain steps): within 2e-5 of the
#: root even on saturated slopes with F near 0.2, where six plain steps were 3 % off
ROUNDS = 3
#: coarse search grid: exits, entries, half-angles (degrees) per station
N_EXIT, N_ENTRY = 9, 5
ANGLES = (15.0, 27.5, 40.0, 52.5, 65.0)
#: levels on the measured inner slope bounding the exits and entries, as shares of the height
EXIT_TOP, ENTRY_LOW = 0.5, 0.6
#: share of the exit grid on the slope (from the EXIT_TOP level down to the toe), the rest
#: beyond the toe
EXIT_ON_SLOPE = 0.375
#: how far beyond the inner toe circles may exit: this many times the height (at least 4 m)
REACH_HEIGHTS, REACH_MIN = 2.0, 4.0
#: phreatic line schematisations (the ``stability_phreatic`` setting); ``dry`` for checks
PHREATIC = ("line", "saturated", "dry")
#: stability status values
STATUSES = ("ok", "short", "no_data", "not_screened")
#: the caution beside every stability result (README, report, workbook)
CAUTION = ("Inner-slope stability is a screening of the measured geometry with schematised "
           "soil (one homogeneous soil per section, the same below the levee) and a schematised "
           "phreatic line; it is not a geotechnical assessment. Soil layers, foundation, "
           "seepage and loads are not modelled: a qualified geotechnical engineer must review "
           "every result under local codes.")
#: stations per block of the search (bounds memory: block x circles x slices)
BLOCK = 160


@dataclass(frozen=True)
class Soil:
    """One homogeneous soil per station (columnar): kN/m3, kPa, degrees."""

    unit_weight: np.ndarray      # above the phreatic line
    unit_weight_sat: np.ndarray  # below it
    cohesion: np.ndarray         # c'
    friction_angle: np.ndarray   # phi'

    def take(self, idx: np.ndarray | slice) -> Soil:
        return Soil(*(np.asarray(getattr(self, f), float)[idx] for f in self.__dataclass_fields__))


@dataclass(frozen=True)
class Frame:
    """The profile's measured edges and toes a search is placed on (columnar, offsets + water)."""

    crest_level: np.ndarray
    outer_edge: np.ndarray
    inner_edge: np.ndarray
    inner_toe: np.ndarray
    inner_toe_level: np.ndarray
    outer_slope: np.ndarray       # n of 1:n (for the phreatic line's entry)
    still_water: np.ndarray       # design water level + sea-level rise

    def take(self, idx: np.ndarray | slice) -> Frame:
        return Frame(*(np.asarray(getattr(self, f), float)[idx] for f in self.__dataclass_fields__))

    @property
    def height(self) -> np.ndarray:
        return self.crest_level - self.inner_toe_level

    def slope_at(self, level: np.ndarray) -> np.ndarray:
        """Offset of ``level`` on the straight inner slope from the toe to the inner edge."""
        with np.errstate(divide="ignore", invalid="ignore"):
            f = (level - self.inner_toe_level) / self.height
        return self.inner_toe + f * (self.inner_edge - self.inner_toe)


@dataclass(frozen=True)
class Critical:
    """The critical circle per station (NaN where not screened)."""

    fos: np.ndarray
    centre_offset: np.ndarray
    centre_level: np.ndarray
    radius: np.ndarray
    entry: np.ndarray            # offsets of the arc's ends on the ground
    exit: np.ndarray


# ------------------------------------------------------------ phreatic line
def phreatic_entry(frame: Frame) -> tuple[np.ndarray, np.ndarray]:
    """Offset and level where the schematised phreatic line leaves the still water.

    The still water (at most the crest level) meets the outer slope, taken
    straight from the outer crest edge at ``outer_slope`` (1:2 where unknown).
    """
    level = np.minimum(frame.still_water, frame.crest_level)
    n = np.where(np.isfinite(frame.outer_slope) & (frame.outer_slope > 0), frame.outer_slope, 2.0)
    return frame.outer_edge + n * (frame.crest_level - level), level


def phreatic_levels(offsets: np.ndarray, z: np.ndarray, frame: Frame, *,
                    mode: str = "line") -> np.ndarray:
    """Phreatic level at every sample (stations x offsets), never above the ground."""
    if mode not in PHREATIC:
        raise ValueError(f"phreatic mode {mode!r}: one of {', '.join(PHREATIC)}")
    if mode == "saturated":
        return np.array(z, float)
    if mode == "dry":
        return np.asarray(z, float) - 1e4  # far below any circle
    xe, le = phreatic_entry(frame)
    return phreatic_through(offsets, z, xe, le, frame.inner_toe, frame.inner_toe_level)


def phreatic_through(offsets: np.ndarray, z: np.ndarray, entry: np.ndarray,
                     entry_level: np.ndarray, toe: np.ndarray,
                     toe_level: np.ndarray) -> np.ndarray:
    """The ``line`` schematisation through its two points, capped by the ground (n, m)."""
    x = np.asarray(offsets, float)[None, :]
    xe, le = np.asarray(entry, float)[:, None], np.asarray(entry_level, float)[:, None]
    xt, lt = np.asarray(toe, float)[:, None], np.asarray(toe_level, float)[:, None]
    with np.errstate(divide="ignore", invalid="ignore"):
        t = np.clip((x - xt) / (xe - xt), 0.0, 1.0)
    return np.minimum(lt + t * (le - lt), z)


def ground_at_level(offsets: np.ndarray, z: np.ndarray, frame: Frame,
                    level: np.ndarray) -> np.ndarray:
    """Offset where the measured ground, walking landward from the inner crest edge,
    first comes down to ``level`` (n,); the straight slope's offset where it never does.

    ``z`` (stations x offsets, + towards the water) without NaN.
    """
    x = np.asarray(offsets, float)
    step = float(x[1] - x[0])
    level = np.asarray(level, float)
    below = (x[None, :] <= frame.inner_edge[:, None]) & (z <= level[:, None])
    m = x.size
    j = m - 1 - np.argmax(below[:, ::-1], axis=1)          # the last such sample
    rows = np.arange(z.shape[0])
    z0, z1 = z[rows, j], z[rows, np.minimum(j + 1, m - 1)]
    with np.errstate(divide="ignore", invalid="ignore"):
        f = np.clip(np.nan_to_num((level - z0) / (z1 - z0), nan=0.0), 0.0, 1.0)
    at = np.minimum(x[j] + f * step, frame.inner_edge)
    return np.where(below.any(axis=1), at, frame.slope_at(level))


# ------------------------------------------------------------ one set of circles
def _at(v: np.ndarray, x: np.ndarray, x0: float, step: float,
        *more: np.ndarray) -> np.ndarray | list[np.ndarray]:
    """Row-wise linear interpolation of ``v`` (and ``more``) (n, m) at offsets ``x`` (n, ...)."""
    n, m = v.shape
    t = (x - x0) / step
    i = np.clip(np.floor(np.nan_to_num(t)).astype(np.intp), 0, m - 2)
    f = np.clip(t - i, 0.0, 1.0).astype(v.dtype)
    # flat indices into the raveled rows: one plain take instead of take_along_axis
    flat = (i.reshape(n, -1) + (np.arange(n, dtype=np.intp) * m)[:, None]).reshape(x.shape)
    out = []
    for a_ in (v, *more):
        r = np.ravel(a_)
        a = r.take(flat)
        b = r.take(flat + 1)
        out.append(a + f * (b - a))
    return out if more else out[0]


def _bishop(num: np.ndarray, drive: np.ndarray, cos: np.ndarray, st: np.ndarray,
            iterations: int | None) -> np.ndarray:
    """Bishop's F = sum(num / m_alpha(F)) / drive over the last axis (see the module docstring).

    ``iterations``: plain fixed-point steps instead of Steffensen's :data:`ROUNDS`.
    """
    def step(f: np.ndarray) -> np.ndarray:
        m_alpha = np.maximum(cos + st * (1.0 / f)[..., None], M_ALPHA_MIN)
        g = np.einsum("...j,...j->...", num, 1.0 / m_alpha) / drive
        return np.where(g > 0, g, np.inf)

    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        f = np.einsum("...j,...j->...", num, 1.0 / np.maximum(cos, M_ALPHA_MIN)) / drive
        f = np.where(f > 0, f, np.inf)
        if iterations is not None:
            for _ in range(iterations):
                f = step(f)
            return f
        for _ in range(ROUNDS):
            f1 = step(f)
            f2 = step(f1)
            d = f2 - 2.0 * f1 + f
            fa = f - (f1 - f) ** 2 / d
            f = np.where(np.isfinite(fa) & (fa > 0), fa, f2)
        return step(f)


def pair_fos(offsets: np.ndarray, z: np.ndarray, p: np.ndarray, exit_x: np.ndarray,
             entry_x: np.ndarray, soil: Soil, *, theta: np.ndarray | None = None,
             radius: np.ndarray | None = None, slices: int = SLICES,
             iterations: int | None = None
             ) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Bishop (1955) simplified factor of safety of circles through pairs of ground points.

    Parameters
    ----------
    offsets : (m,) evenly spaced sample offsets, + towards the water.
    z, p : (n, m) ground and phreatic levels (no NaN); their dtype is the arithmetic's.
    exit_x, entry_x : (n, P) offsets of the arcs' ends (exit landward of entry).
    theta, radius : (n, P, A) or (A,): the circles through each pair, by the half-angle
        (degrees) the arc subtends or by radius (one of the two). A circle whose
        centre is not above both ends is invalid.
    soil : per station (n,).

    Returns
    -------
    fos, centre_offset, centre_level, radius : (n, P, A); fos is +inf for invalid circles.
    """
    dt = z.dtype
    x0, step = float(offsets[0]), float(offsets[1] - offsets[0])
    exit_x, entry_x = np.asarray(exit_x, dt), np.asarray(entry_x, dt)
    ze, zn = _at(z, exit_x, x0, step), _at(z, entry_x, x0, step)
    dx, dz = entry_x - exit_x, zn - ze
    chord = np.hypot(dx, dz)
    with np.errstate(invalid="ignore", divide="ignore"):
        if radius is None:
            r = chord[..., None] / (2 * np.sin(np.radians(np.asarray(theta, float)))).astype(dt)
        else:
            r = np.broadcast_to(np.asarray(radius, dt), chord.shape + np.shape(radius)[-1:])
        rise = np.sqrt(r ** 2 - (chord / 2)[..., None] ** 2)
        xc = ((exit_x + entry_x) / 2)[..., None] - (dz / chord)[..., None] * rise
        zc = ((ze + zn) / 2)[..., None] + (dx / chord)[..., None] * rise
    valid = (dx > 0)[..., None] & np.isfinite(rise) & (zc > zn[..., None]) & (zc > ze[..., None])
    frac = ((np.arange(slices) + 0.5) / slices).astype(dt)
    xm = exit_x[..., None] + frac * dx[..., None]           # (n, P, J) slice mid-points
    zs, pm = _at(z, xm, x0, step, p)                        # read once per pair
    pw = np.minimum(pm, zs)
    b = (dx / slices)[..., None, None]
    u = xm[:, :, None, :] - xc[..., None]                   # (n, P, A, J)
    rr = r[..., None]
    zb = zc[..., None] - np.sqrt(np.clip(rr ** 2 - u ** 2, 0.0, None))
    h = np.clip(zs[:, :, None, :] - zb, 0.0, None)
    hw = np.clip(pw[:, :, None, :] - zb, 0.0, None)

    def per_station(v: np.ndarray) -> np.ndarray:
        return np.asarray(v, float)[:, None, None, None].astype(dt)

    g, gs, c = (per_station(v) for v in (soil.unit_weight, soil.unit_weight_sat, soil.cohesion))
    tan = per_station(np.tan(np.radians(soil.friction_angle)))
    w = b * (g * h + (gs - g) * hw)
    sin = u / rr
    cos = np.clip((zc[..., None] - zb) / rr, 1e-6, 1.0)
    drive = np.einsum("...j,...j->...", w, sin)
    num = np.where(h > 0, c * b, 0.0) + np.clip(w - GAMMA_W * b * hw, 0.0, None) * tan
    f = _bishop(num, drive, cos, sin * tan, iterations)
    ok = valid & (drive > 0) & np.isfinite(f)
    return np.where(ok, f, np.inf), xc, zc, r


def circle_fos(offsets: np.ndarray, z: np.ndarray, p: np.ndarray, exit_x: np.ndarray,
               entry_x: np.ndarray, radius: np.ndarray, soil: Soil, *,
               slices: int = SLICES, iterations: int | None = None
               ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """:func:`pair_fos` of one circle per pair, given by its radius (n, K): fos, xc, zc."""
    f, xc, zc, _ = pair_fos(offsets, z, p, exit_x, entry_x, soil,
                            radius=np.asarray(radius)[..., None], slices=slices,
                            iterations=iterations)
    return f[..., 0], xc[..., 0], zc[..., 0]


# ------------------------------------------------------------ the search
def _ends(frame: Frame, reach: np.ndarray, top: np.ndarray, low: np.ndarray,
          ue: np.ndarray, ux: np.ndarray, lo: float, hi: float) -> tuple[np.ndarray, np.ndarray]:
    """Exit and entry offsets (n, P) at grid coordinates ``ux``, ``ue`` in 0..1.

    ``top``, ``low``: offsets (n,) where the ground comes down to the exits' upper
    and the entries' lower level.
    """
    far = (frame.inner_toe - reach)[:, None]
    top, low = top[:, None], low[:, None]
    # a share of the exits from the slope down to the toe, the rest beyond it
    toe, s = frame.inner_toe[:, None], EXIT_ON_SLOPE
    ex = np.where(ux <= s, top + ux / s * (toe - top), toe + (ux - s) / (1 - s) * (far - toe))
    ex = np.clip(ex, lo, hi)
    en = np.clip(frame.outer_edge[:, None] + ue * (low - frame.outer_edge[:, None]), lo, hi)
    return ex, en


def search(offsets: np.ndarray, z: np.ndarray, frame: Frame, soil: Soil, *,
           phreatic: str = "line", reach: np.ndarray | None = None,
           exits: int = N_EXIT, entries: int = N_ENTRY,
           angles: tuple[float, ...] = ANGLES, refine: bool = True) -> Critical:
    """The critical circle of every station: coarse grid, then one refinement.

    ``z`` (stations x offsets, + towards the water) may hold NaN (filled along
    the row); stations without a readable inner side or without soil give NaN.
    ``reach``: how far beyond the inner toe circles may exit (default
    :data:`REACH_HEIGHTS` x height, at least :data:`REACH_MIN`).
    """
    from ..terrain.profile import fill_gaps

    offsets = np.asarray(offsets, float)
    z = fill_gaps(np.asarray(z, float))
    n = z.shape[0]
    if reach is None:
        reach = np.maximum(REACH_HEIGHTS * frame.height, REACH_MIN)
    reach = np.broadcast_to(np.asarray(reach, float), (n,))
    geo = np.column_stack([frame.crest_level, frame.outer_edge, frame.inner_edge,
                           frame.inner_toe, frame.inner_toe_level])
    soil_ok = np.column_stack([soil.unit_weight, soil.unit_weight_sat, soil.cohesion,
                               soil.friction_angle])
    good = (np.isfinite(geo).all(1) & np.isfinite(soil_ok).all(1) & np.isfinite(z).all(1)
            & (frame.height > 0.2) & (frame.inner_edge > frame.inner_toe))
    out = {k: np.full(n, np.nan) for k in Critical.__dataclass_fields__}
    idx = np.flatnonzero(good)
    for s in range(0, idx.size, BLOCK):
        k = idx[s:s + BLOCK]
        got = _search_block(offsets, z[k], frame.take(k), soil.take(k), reach[k], phreatic,
                            exits, entries, angles, refine)
        for name, v in got.items():
            out[name][k] = v
    return Critical(**out)


def _search_block(offsets, z, frame, soil, reach, phreatic, exits, entries, angles,
                  refine) -> dict[str, np.ndarray]:
    n = z.shape[0]
    lo, hi = float(offsets[0]), float(offsets[-1])
    p = phreatic_levels(offsets, z, frame, mode=phreatic)
    top = ground_at_level(offsets, z, frame, frame.inner_toe_level + EXIT_TOP * frame.height)
    low = ground_at_level(offsets, z, frame, frame.inner_toe_level + ENTRY_LOW * frame.height)
    angles = np.asarray(angles, float)
    ux, ue = (np.broadcast_to(a.ravel(), (n, a.size)) for a in np.meshgrid(
        np.linspace(0, 1, exits), np.linspace(0, 1, entries), indexing="ij"))

    def run(ue: np.ndarray, ux: np.ndarray, th: np.ndarray, slices: int = SLICES,
            dtype: type = np.float64) -> list[np.ndarray]:
        """Every circle of (n, P) pairs and (n, P, A) angles, flattened to (n, P x A)."""
        ex, en = _ends(frame, reach, top, low, ue, ux, lo, hi)
        f, xc, zc, r = pair_fos(offsets, z.astype(dtype), p.astype(dtype), ex, en, soil,
                                theta=th, slices=slices)
        shape = f.shape
        return [np.reshape(v, (n, -1)).astype(float) for v in (
            f, xc, zc, r, np.broadcast_to(en[..., None], shape),
            np.broadcast_to(ex[..., None], shape))]

    # the coarse grid only ranks circles: fewer slices, single precision
    res = run(ue, ux, angles, slices=SLICES_COARSE, dtype=np.float32) if refine else \
        run(ue, ux, angles)
    if refine:
        du = 0.5 / max(exits - 1, 1), 0.5 / max(entries - 1, 1)
        dt = 0.5 * (angles[1] - angles[0]) if angles.size > 1 else 0.0
        best = np.argmin(res[0], axis=1)
        pair, ang = np.divmod(best, angles.size)
        b_ux, b_ue = (np.take_along_axis(g, pair[:, None], 1) for g in (ux, ue))
        a, c = (v.ravel() for v in np.meshgrid([-1.0, 0.0, 1.0], [-1.0, 0.0, 1.0],
                                                indexing="ij"))
        th = np.clip(angles[ang][:, None, None] + np.array([-1.0, 0.0, 1.0]) * dt,
                     angles.min(), angles.max())
        # the coarse best is among them (offsets 0), on the finer slices
        res = run(np.clip(b_ue + c * du[1], 0, 1), np.clip(b_ux + a * du[0], 0, 1),
                  np.broadcast_to(th, (n, a.size, 3)))
    best = np.argmin(res[0], axis=1)
    pick = [np.take_along_axis(v, best[:, None], 1)[:, 0] for v in res]
    f = np.where(np.isfinite(pick[0]), pick[0], np.nan)
    names = ("fos", "centre_offset", "centre_level", "radius", "entry", "exit")
    return {k: np.where(np.isfinite(f), v, np.nan) for k, v in zip(names, pick, strict=True)}


def status(fos: np.ndarray, required: np.ndarray, *, screened: np.ndarray) -> np.ndarray:
    """``ok`` | ``short`` (below the required factor) | ``no_data`` | ``not_screened``."""
    fos, required = np.asarray(fos, float), np.asarray(required, float)
    out = np.where(fos >= required, "ok", "short").astype(object)
    out[~np.isfinite(fos)] = "no_data"
    out[~np.asarray(screened, bool)] = "not_screened"
    return out


# ------------------------------------------------------------ the berm remedy
def berm_profile(offsets: np.ndarray, z: np.ndarray, frame: Frame, *, level: np.ndarray,
                 width: np.ndarray, face: np.ndarray) -> np.ndarray:
    """The profile with a stability berm on the inner side (stations x offsets).

    A horizontal top at ``level`` from where the measured inner slope comes down
    to it (:func:`ground_at_level`) landward over ``width``, then a face of
    1:``face`` down to the ground; fill only, never cut.
    """
    from ..terrain.profile import fill_gaps

    x = np.asarray(offsets, float)[None, :]
    level = np.asarray(level, float)[:, None]
    x_top = ground_at_level(offsets, fill_gaps(np.asarray(z, float)), frame, level[:, 0])[:, None]
    x_end = x_top - np.asarray(width, float)[:, None]
    top = level - np.clip(x_end - x, 0.0, None) / np.asarray(face, float)[:, None]
    on = (x <= x_top) & (np.asarray(width, float)[:, None] > 0)
    return np.where(on, np.fmax(z, top), z)


def fill_area(offsets: np.ndarray, z: np.ndarray, built: np.ndarray) -> np.ndarray:
    """Cross-section area added (m2 per m) between ``z`` and ``built``."""
    step = float(offsets[1] - offsets[0])
    return np.nansum(np.clip(built - z, 0.0, None), axis=1) * step


#: berm heights tried, as shares of the inner slope's height
BERM_HEIGHTS = (0.25, 0.4, 0.55)
#: berm widths tried (m)
BERM_WIDTHS = (2.0, 4.0, 6.0, 8.0, 11.0, 14.0, 18.0, 23.0, 30.0)


def berm_candidates(frame: Frame) -> tuple[np.ndarray, np.ndarray]:
    """Berm levels and widths tried per station (stations x candidates)."""
    h, w = np.meshgrid(BERM_HEIGHTS, BERM_WIDTHS, indexing="ij")
    level = frame.inner_toe_level[:, None] + h.ravel()[None, :] * frame.height[:, None]
    return level, np.broadcast_to(w.ravel(), level.shape)


def berm_reach(frame: Frame, width: np.ndarray) -> np.ndarray:
    """Exit reach with a berm: over the berm and its face, plus the usual reach."""
    return np.maximum(REACH_HEIGHTS * frame.height, REACH_MIN) + width + frame.height


#: station fields the search gives (besides the factor, the circle and the phreatic entry)
STATION_COLUMNS = ("stability_fos", "slip_centre_offset", "slip_centre_level", "slip_radius",
                   "slip_entry", "slip_exit", "phreatic_entry", "phreatic_entry_level")


def frame_of(prof: object, still_water: np.ndarray) -> Frame:
    """The search frame from the profile metrics
    (:class:`trajectory.terrain.profile.ProfileMetrics`)."""
    return Frame(*(np.asarray(getattr(prof, f), float) for f in (
        "crest_level", "outer_edge", "inner_edge", "inner_toe", "inner_toe_level",
        "outer_slope")), np.asarray(still_water, float))


def station_stability(offsets: np.ndarray, z: np.ndarray, frame: Frame, soil: Soil, *,
                      phreatic: str = "line") -> dict[str, np.ndarray]:
    """The :data:`STATION_COLUMNS` of every station (NaN where not screened)."""
    crit = search(offsets, z, frame, soil, phreatic=phreatic)
    xe, le = phreatic_entry(frame)
    screened = np.isfinite(crit.fos)
    if phreatic == "saturated":  # the line is the ground: no entry point of its own
        xe, le = np.full_like(xe, np.nan), np.full_like(le, np.nan)
    return {"stability_fos": crit.fos, "slip_centre_offset": crit.centre_offset,
            "slip_centre_level": crit.centre_level, "slip_radius": crit.radius,
            "slip_entry": crit.entry, "slip_exit": crit.exit,
            "phreatic_entry": np.where(screened, xe, np.nan),
            "phreatic_entry_level": np.where(screened, le, np.nan)}


def arc_points(centre_offset, centre_level, radius, entry, exit_, *,
               n: int = 41) -> tuple[np.ndarray, np.ndarray]:
    """Offsets and levels of the slip arc from its exit to its entry (lower arc).

    Scalars give (n,) arrays; arrays of shape (k, 1) give (k, n).
    """
    t = np.linspace(0.0, 1.0, n)
    x = exit_ + t * (np.asarray(entry, float) - exit_)
    return x, centre_level - np.sqrt(np.clip(radius ** 2 - (x - centre_offset) ** 2, 0.0, None))
