"""The stability search finds the least factor of safety a brute force finds.

Reference: an independent Bishop (1955) simplified method of slices written here,
whose slice weights come from shapely (the slip mass is the ground polygon cut by
the circle's disc, cut again into vertical slices), over a dense grid of circle
centres and radii that knows nothing of the search's exits and entries. The
profiles are synthetic with their truth built in: a plain levee, a levee with a
wide inner berm (where circles exiting on the berm or just above it are the
critical ones) and a rounded shoulder above a composite inner slope. The frame
(crest edges, inner toe) is what the profile reader measures on each.

The search may land a little above the least factor (it samples circles); it must
not land far above it, which would be the unsafe side.
"""

from __future__ import annotations

import numpy as np
import pytest
import shapely

from trajectory.inner import stability as sb
from trajectory.terrain.profile import read_profiles

KW = dict(object_width=1.0, crest_search=15.0, crest_tolerance=0.10, max_nodata=0.5)
STEP = 0.25
OFF = np.arange(-90.0, 40.0 + 1e-9, STEP)


def plain(x):
    """Crest 6 m, 4 m wide; inner 1:2.5 to the ground at 0, outer 1:3."""
    inner = 6.0 - (-x - 2.0) / 2.5
    outer = 6.0 - (x - 2.0) / 3.0
    return np.clip(np.where(x < -2.0, inner, np.where(x > 2.0, outer, 6.0)), 0.0, None)


def bermed(x):
    """Crest 6 m, 4 m wide; inner 1:2 down to a 10 m berm at 2.4 m, then 1:3 to 0."""
    d = -x
    inner = np.where(d <= 2.0 + 7.2, 6.0 - (d - 2.0) / 2.0, 2.4)
    inner = np.where(d > 19.2, 2.4 - (d - 19.2) / 3.0, inner)
    outer = 6.0 - (x - 2.0) / 3.0
    return np.clip(np.where(x < -2.0, inner, np.where(x > 2.0, outer, 6.0)), 0.0, None)


def composite(x):
    """Crest 7 m, 3 m wide, its inner shoulder rounded (radius 6 m); inner 1:1.8 down to
    3.5 m, then 1:4 to 0; outer 1:3."""
    d = -x
    edge, cot, radius = 1.5, 1.8, 6.0
    # the tangent arc between the crest and the 1:cot slope
    a = np.arctan(1.0 / cot)
    t = radius * np.tan(a / 2)
    upper = np.where(d <= edge + t * np.cos(0.0), 7.0, 7.0 - (d - edge) / cot)
    arc = (d > edge - t) & (d < edge + t * np.cos(a))
    zc, xc = 7.0 - radius, edge - t
    upper = np.where(arc, zc + np.sqrt(np.clip(radius ** 2 - (d - xc) ** 2, 0, None)), upper)
    knee = edge + (7.0 - 3.5) * cot
    inner = np.where(d <= knee, upper, 3.5 - (d - knee) / 4.0)
    outer = 7.0 - (x - 1.5) / 3.0
    return np.clip(np.where(x < -1.5, np.minimum(inner, 7.0), np.where(x > 1.5, outer, 7.0)),
                   0.0, None)


def _soil(gamma, gamma_sat, c, phi) -> sb.Soil:
    return sb.Soil(*(np.array([float(v)]) for v in (gamma, gamma_sat, c, phi)))


def _polygon(x, z, floor):
    return shapely.Polygon(np.column_stack([np.r_[x, x[-1], x[0]], np.r_[z, floor, floor]]))


def brute_force(x, z, p, soil: sb.Soil, frame: sb.Frame, *, slices: int = 24):
    """Least Bishop factor over a grid of centres and radii (shapely slice weights).

    Circles are kept whose centre is above all ground, whose slip mass enters between
    the crest's outer edge and where the ground comes down to ENTRY_LOW of the height,
    and exits no further than the search's reach beyond the inner toe.
    """
    crest, toe, toe_level = frame.crest_level[0], frame.inner_toe[0], frame.inner_toe_level[0]
    h = crest - toe_level
    floor = toe_level - 3 * h
    # the samples' polygons, their collinear vertices dropped (1 mm)
    ground = shapely.simplify(_polygon(x, z, floor), 1e-3)
    wet = shapely.simplify(_polygon(x, np.minimum(p, z), floor), 1e-3)
    low_level = toe_level + sb.ENTRY_LOW * h
    entry_low = float(np.max(x[(x <= frame.inner_edge[0]) & (z <= low_level)]))
    far = toe - max(sb.REACH_HEIGHTS * h, sb.REACH_MIN)
    xc, zc, depth = np.meshgrid(np.linspace(toe - 0.5 * h, frame.outer_edge[0] + 0.5 * h, 40),
                                crest + np.linspace(0.3, 3.0 * h, 16),
                                np.linspace(0.3, 1.4 * h, 28), indexing="ij")
    xc, zc = xc.ravel(), zc.ravel()
    r = zc - (crest - depth.ravel())              # lowest point of the arc depth below the crest

    def cut(quad_segs: int):
        mass = shapely.intersection(ground, shapely.buffer(shapely.points(xc, zc), r,
                                                           quad_segs=quad_segs))
        bounds = shapely.bounds(mass)
        keep = ((shapely.area(mass) > 0.5) & (bounds[:, 2] <= frame.outer_edge[0])
                & (bounds[:, 2] >= entry_low) & (bounds[:, 0] >= far))
        return mass, bounds, keep

    # a coarse polygon of every disc sorts out the circles, a fine one measures them
    keep = cut(8)[2]
    xc, zc, r = xc[keep], zc[keep], r[keep]
    mass, bounds, keep = cut(24)
    xc, zc, r, mass, bounds = xc[keep], zc[keep], r[keep], mass[keep], bounds[keep]
    edges = bounds[:, [0]] + (bounds[:, [2]] - bounds[:, [0]]) * np.linspace(0, 1, slices + 1)
    x0, x1 = edges[:, :-1], edges[:, 1:]
    boxes = shapely.box(x0, floor, x1, crest + 1.0)
    rep = np.repeat(mass[:, None], slices, axis=1)
    area = shapely.area(shapely.intersection(rep, boxes))
    wet_mass = shapely.intersection(mass, wet)
    area_wet = shapely.area(shapely.intersection(np.repeat(wet_mass[:, None], slices, 1), boxes))
    g, gs, c, phi = (float(np.asarray(v)[0]) for v in (soil.unit_weight, soil.unit_weight_sat,
                                                       soil.cohesion, soil.friction_angle))
    tan = np.tan(np.radians(phi))
    b = x1 - x0
    xm = 0.5 * (x0 + x1)
    zb = zc[:, None] - np.sqrt(np.clip(r[:, None] ** 2 - (xm - xc[:, None]) ** 2, 0.0, None))
    u = sb.GAMMA_W * np.clip(np.interp(xm, x, np.minimum(p, z)) - zb, 0.0, None)
    w = g * (area - area_wet) + gs * area_wet
    sin = (xm - xc[:, None]) / r[:, None]
    cos = np.sqrt(1.0 - sin ** 2)
    num = np.where(area > 0, c * b, 0.0) + np.clip(w - u * b, 0.0, None) * tan
    drive = np.sum(w * sin, axis=1)
    xc, num, drive, sin, cos = (v[drive > 0] for v in (xc, num, drive, sin, cos))
    f = np.full(xc.size, 1.5)
    for _ in range(200):                          # to convergence, not a fixed count
        m = np.maximum(cos + sin * tan / f[:, None], sb.M_ALPHA_MIN)
        f = np.sum(num / m, axis=1) / drive
    return float(np.min(f)), int(xc.size)


@pytest.mark.parametrize("shape, soil, mode", [
    (plain, (18.0, 20.0, 5.0, 28.0), "line"),
    (bermed, (18.0, 20.0, 4.0, 26.0), "line"),
    (composite, (17.0, 19.0, 3.0, 30.0), "saturated"),
], ids=["plain", "inner_berm", "rounded_composite"])
def test_search_finds_the_least_factor_of_a_brute_force(shape, soil, mode):
    z = shape(OFF)[None, :]
    prof = read_profiles(z, OFF, **KW)
    assert prof.readable.all()
    frame = sb.frame_of(prof, np.array([5.0]))
    s = _soil(*soil)
    found = sb.search(OFF, z, frame, s, phreatic=mode).fos[0]
    p = sb.phreatic_levels(OFF, z, frame, mode=mode)[0]
    least, circles = brute_force(OFF, z[0], p, s, frame)
    assert circles > 2000
    # not far above the least factor (the unsafe side), and not below it by more than
    # the brute force's own sampling
    assert found <= 1.03 * least, (found, least)
    assert found >= 0.97 * least, (found, least)
