"""Inner-slope stability (trajectory.inner.stability): Bishop (1955) against outside references.

References: the general-purpose slope-stability library pycss-lem 0.1.0 (PyPI; its
Bishop simplified routine on the same circle and ground); Taylor's (1937) stability
numbers for phi = 0 as charted in soil-mechanics textbooks (e.g. Craig's Soil
Mechanics; values from memory); the infinite-slope limit F = tan phi' / tan beta for a
cohesionless dry slope (textbook result, common practice); shapely for the moment of a
phi = 0 slip mass and for the area of a berm.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
import shapely

from trajectory.inner import stability as sb
from trajectory.inner.stability_berms import berm_face, plan_berms
from trajectory.inputs.conditions import validate_conditions


def _soil(gamma, gamma_sat, c, phi, n=1) -> sb.Soil:
    return sb.Soil(*(np.full(n, float(v)) for v in (gamma, gamma_sat, c, phi)))


def levee(n_in: float, *, height: float = 10.0, crest: float = 20.0, step: float = 0.25,
          half: float = 80.0, still_water: float = -5.0):
    """A straight levee: inner slope 1:n_in to the left (offsets -), outer 1:2 (synthetic)."""
    off = np.arange(-half, half + 1e-9, step)
    ie, oe = -crest / 2, crest / 2
    z = np.where(off >= ie, height, np.clip(height - (ie - off) / n_in, 0, height))
    z = np.where(off > oe, np.clip(height - (off - oe) / 2.0, 0, height), z)
    frame = sb.Frame(*(np.array([v], float) for v in (
        height, oe, ie, ie - n_in * height, 0.0, 2.0, still_water)))
    return off, z[None, :], frame


# ------------------------------------------------------------------ one circle
def test_bishop_matches_pycss_lem_on_the_same_circles():
    """pycss-lem's Bishop simplified (interatefbishopsimpsat) on its own slope and circles."""
    from pycss_lem.defineslipcircle import defineslipcircle
    from pycss_lem.defineswatertable import defineswatertable
    from pycss_lem.divideslipintoslices import divideslipintoslices
    from pycss_lem.interatefbishopsimpsat import interatefbishopsimpsat
    from pycss_lem.interateffelleniussat import interateffelleniussat
    from pycss_lem.materialboundary import materialboundary
    from pycss_lem.obtainmaxdepthdist import obtainmaxdepthdist
    from pycss_lem.terrainsurface import terrainsurface
    from pycss_lem.vertprojection2pline import vertprojection2pline

    height, dip, crown, toe = 10.0, [2, 1], 10.0, 20.0   # a 1:2 slope, 10 m high
    gamma, phi, c = 18.0, 30.0, 10.0
    checked = 0
    for a_crown, a_toe, radius in ((-2.0, 25.0, 22.0), (1.0, 22.0, 18.0), (-4.0, 28.0, 30.0)):
        for wt_depth in (None, 4.0):
            depth = obtainmaxdepthdist(height, dip, crown, toe)
            _, origin, _ = materialboundary(height, dip, crown, toe)
            surf, chords = terrainsurface(np.array([origin[0], depth]), height, dip, crown, toe)
            wt, _ = defineswatertable(height + depth if wt_depth is None else wt_depth, surf,
                                      False)
            pc = vertprojection2pline(np.array([a_crown + chords[1][0], 0]), surf)
            pt = vertprojection2pline(np.array([a_toe + chords[1][0], 0]), surf)
            _, arc = defineslipcircle(pt, pc, radius)
            slices = divideslipintoslices(arc, surf, wt, 50, pt, pc, True)
            fell = interateffelleniussat(slices, 9.81, gamma, phi, c, radius)
            ref = interatefbishopsimpsat(slices, 9.81, gamma, phi, c, radius, fell)
            # the same ground in our frame: the crest on the + side (offset = -x)
            off = np.arange(-80.0, 20.0 + 1e-9, 0.05)
            z = np.interp(-off, chords[:, 0], chords[:, 1])[None, :]
            p = z - 1e4 if wt_depth is None else np.minimum(z, chords[0, 1] - wt_depth)
            f, xc, zc = sb.circle_fos(off, z, p, np.array([[-pt[0]]]), np.array([[-pc[0]]]),
                                      np.array([[radius]]), _soil(gamma, gamma, c, phi),
                                      slices=50)
            assert -xc[0, 0] == pytest.approx(arc["center"][0], abs=1e-6)
            assert zc[0, 0] == pytest.approx(arc["center"][1], abs=1e-6)
            assert f[0, 0] == pytest.approx(ref, rel=0.01), (a_crown, a_toe, radius, wt_depth)
            checked += 1
    assert checked == 6


def test_phi_zero_reduces_to_the_moment_of_the_slip_mass():
    """phi = 0: F = c R L_arc / (W d), W and its lever from shapely's polygon (common practice)."""
    off, z, frame = levee(2.0, step=0.05)
    ex, en, radius = np.array([[-34.0]]), np.array([[-4.0]]), np.array([[22.0]])
    c, gamma = 25.0, 19.0
    f, xc, zc = sb.circle_fos(off, z, z - 1e4, ex, en, radius, _soil(gamma, gamma, c, 0.0),
                              slices=400)
    xs, zs = sb.arc_points(xc[0, 0], zc[0, 0], radius[0, 0], en[0, 0], ex[0, 0], n=2001)
    ground = np.interp(xs[::-1], off, z[0])[::-1]
    mass = shapely.Polygon(np.column_stack([np.r_[xs, xs[::-1]], np.r_[zs, ground[::-1]]]))
    weight = gamma * mass.area
    lever = mass.centroid.x - xc[0, 0]          # the mass slides towards - offsets
    chord = np.hypot(en - ex, np.interp(en[0], off, z[0]) - np.interp(ex[0], off, z[0]))[0, 0]
    arc_len = 2 * radius[0, 0] * np.arcsin(chord / (2 * radius[0, 0]))
    assert f[0, 0] == pytest.approx(c * radius[0, 0] * arc_len / (weight * lever), rel=0.005)


@pytest.mark.parametrize("n_in, mode, c, phi", [(2.5, "line", 5.0, 30.0),
                                                (1.5, "saturated", 0.0, 22.0)])
def test_fixed_point_is_converged_after_the_fixed_iterations(n_in, mode, c, phi):
    # a saturated cohesionless 1:1.5 slope gives factors near 0.2, where the plain
    # iteration converges slowest (six steps from the Fellenius value were 3 % off);
    # 300 plain steps are the converged reference
    off, z, frame = levee(n_in, still_water=8.0)
    soil = _soil(18, 20, c, phi)
    p = sb.phreatic_levels(off, z, frame, mode=mode)
    ex, en = np.array([[-31.0, -36.0, -30.0, -26.0]]), np.array([[-16.0, -6.0, 0.0, -8.0]])
    r = np.array([[31.2, 20.0, 30.0, 14.0]])
    few = sb.circle_fos(off, z, p, ex, en, r, soil)[0]
    many = sb.circle_fos(off, z, p, ex, en, r, soil, iterations=300)[0]
    assert np.isfinite(many).all()
    np.testing.assert_allclose(few, many, rtol=2e-5)


# ------------------------------------------------------------------ the search
def test_search_against_taylor_stability_number_phi_zero():
    """Taylor (1937) chart, phi = 0, beta = 60 deg: N = c / (F gamma H) = 0.191 (from memory).

    A search can only find a factor at or above the least one; the coarse grid
    and one refinement must land within 5 %.
    """
    off, z, frame = levee(1 / np.tan(np.radians(60.0)))
    c, gamma, h = 30.0, 18.0, 10.0
    crit = sb.search(off, z, frame, _soil(gamma, gamma, c, 0.0), phreatic="dry")
    taylor = c / (0.191 * gamma * h)
    assert 0.99 * taylor <= crit.fos[0] <= 1.05 * taylor


def test_search_against_the_infinite_slope_for_a_cohesionless_slope():
    """c' = 0, dry: the least factor tends to tan phi' / tan beta (shallow slips; textbook)."""
    off, z, frame = levee(2.0)
    crit = sb.search(off, z, frame, _soil(18, 18, 0.0, 35.0), phreatic="dry")
    limit = np.tan(np.radians(35.0)) / 0.5
    assert crit.fos[0] == pytest.approx(limit, rel=0.02)


def test_critical_circle_lies_on_the_inner_slope():
    """Entry on the crest or upper inner slope, exit in the inner toe region or beyond."""
    off, z, frame = levee(1.5, still_water=8.0)
    crit = sb.search(off, z, frame, _soil(18, 20, 8, 28))
    h = frame.height[0]
    assert np.isfinite(crit.fos[0])
    assert frame.slope_at(np.array([0.6 * h]))[0] - 1e-9 <= crit.entry[0] <= frame.outer_edge[0]
    reach = max(sb.REACH_HEIGHTS * h, sb.REACH_MIN)
    assert frame.inner_toe[0] - reach - 1e-9 <= crit.exit[0]
    assert crit.exit[0] <= frame.slope_at(np.array([0.25 * h]))[0] + 1e-9
    # both ends on the ground, the centre above them, the arc below the ground between
    for x in (crit.entry[0], crit.exit[0]):
        zg = np.interp(x, off, z[0])
        assert np.hypot(x - crit.centre_offset[0], zg - crit.centre_level[0]) == pytest.approx(
            crit.radius[0], rel=1e-6)
        assert crit.centre_level[0] > zg
    xs, zs = sb.arc_points(crit.centre_offset[0], crit.centre_level[0], crit.radius[0],
                           crit.entry[0], crit.exit[0])
    assert (zs[1:-1] < np.interp(xs[1:-1], off, z[0])).all()


def test_dry_body_is_safer_than_the_schematised_line_safer_than_saturated():
    off, z, frame = levee(2.5, still_water=8.0)
    soil = _soil(18, 20, 5, 30)
    f = {m: sb.search(off, z, frame, soil, phreatic=m).fos[0] for m in sb.PHREATIC}
    assert f["dry"] > f["line"] > f["saturated"] > 0


def test_phreatic_line_runs_from_the_still_water_to_the_inner_toe():
    off, z, frame = levee(2.5, still_water=8.0)
    p = sb.phreatic_levels(off, z, frame)[0]
    xe, le = sb.phreatic_entry(frame)
    assert le[0] == 8.0 and xe[0] == pytest.approx(frame.outer_edge[0] + 2.0 * 2.0)
    assert np.interp(xe[0], off, p) == pytest.approx(8.0)
    assert np.interp(frame.inner_toe[0], off, p) == pytest.approx(0.0)
    mid = 0.5 * (xe[0] + frame.inner_toe[0])
    assert np.interp(mid, off, p) == pytest.approx(4.0, abs=1e-6)
    assert (p <= z[0] + 1e-12).all()


def test_stations_without_soil_or_inner_side_are_not_screened():
    off, z, frame = levee(2.0)
    z2 = np.vstack([z, z, np.full_like(z, np.nan)])
    fr = frame.take(np.array([0, 0, 0]))
    soil = sb.Soil(np.array([18.0, np.nan, 18.0]), np.array([18.0, np.nan, 18.0]),
                   np.array([5.0, np.nan, 5.0]), np.array([30.0, np.nan, 30.0]))
    crit = sb.search(off, z2, fr, soil)
    assert np.isfinite(crit.fos[0]) and np.isnan(crit.fos[1:]).all()
    status = sb.status(np.r_[crit.fos[0], crit.fos[1:]], np.full(3, 1.3),
                       screened=np.array([True, False, True]))
    assert list(status) == ["ok" if crit.fos[0] >= 1.3 else "short", "not_screened", "no_data"]


# ------------------------------------------------------------------ the berm
def test_berm_area_equals_the_trapezoid_from_shapely():
    """The fill of a berm on a straight 1:n slope equals the polygon shapely measures."""
    off, z, frame = levee(2.0, step=0.05)
    h, width, face = 3.0, 6.0, 3.0
    built = sb.berm_profile(off, z, frame, level=np.array([h]), width=np.array([width]),
                            face=np.array([face]))
    toe = frame.inner_toe[0]
    x_top = toe + 2.0 * h
    poly = shapely.Polygon([(x_top - width - face * h, 0.0), (x_top - width, h), (x_top, h),
                            (toe, 0.0)])
    assert sb.fill_area(off, z, built)[0] == pytest.approx(poly.area, rel=0.01)


def test_berm_round_trip_reaches_the_target_factor():
    """The proposed berm built into the profile and searched again reaches the target."""
    off, z, frame = levee(1.6, height=6.0, crest=4.0, still_water=5.0)
    n = 3
    zz, fr = np.repeat(z, n, 0), frame.take(np.zeros(n, int))
    soil, required = _soil(18, 20, 4, 26, n), np.full(n, 1.3)
    before = sb.search(off, zz, fr, soil)
    assert (before.fos < 1.3).all()                # short: a berm is needed
    stations = pd.DataFrame({"chainage": [0.0, 25.0, 50.0], "stability_fos": before.fos,
                             "stability_status": sb.status(before.fos, required,
                                                           screened=np.ones(n, bool)),
                             "inner_slope": np.full(n, 1.6)})
    lo, hi = np.array([0.0, 12.5, 37.5]), np.array([12.5, 37.5, 50.0])
    rows = plan_berms(stations, off, zz, fr, soil, required, extents=hi - lo, lo=lo, hi=hi)
    assert len(rows) == 1
    r = rows[0]
    assert r["option"] == "stability_berm" and r["closes_gap"] and r["berm_width"] > 0
    built = sb.berm_profile(off, zz, fr, level=np.full(n, r["berm_level"]),
                            width=np.full(n, r["berm_width"]), face=berm_face(np.full(n, 1.6)))
    again = sb.search(off, built, fr, soil, reach=sb.berm_reach(fr, np.full(n, r["berm_width"])))
    assert (again.fos >= 1.3).all()
    assert again.fos.min() == pytest.approx(r["fos_with_option"], rel=1e-9)
    # a denser search (more exits, entries and angles) finds nothing much lower
    dense = sb.search(off, built, fr, soil, exits=13, entries=9,
                      angles=tuple(np.linspace(12.0, 70.0, 9)),
                      reach=sb.berm_reach(fr, np.full(n, r["berm_width"])))
    assert (dense.fos >= 0.97 * 1.3).all()
    area = sb.fill_area(off, zz, built)
    assert r["fill_volume"] == pytest.approx(float(np.sum(area * (hi - lo))), rel=1e-6)


# ------------------------------------------------------------------ bad input
def _raw(**cells) -> pd.DataFrame:
    base = {"section_id": "A", "from_chainage": "0", "to_chainage": "100", "water_level": "3",
            "sea_level_rise": "0", "settlement": "0", "freeboard_method": "constant",
            "fixed_freeboard": "1"}
    base.update(cells)
    return pd.DataFrame({k: [v] for k, v in base.items()})


@pytest.mark.parametrize("cells, words", [
    ({"soil_unit_weight": "18", "soil_cohesion": "5"},
     ["row 2", "soil_friction_angle", "required_safety_factor", "empty"]),
    ({"soil_unit_weight": "18", "soil_unit_weight_sat": "16", "soil_cohesion": "5",
      "soil_friction_angle": "30", "required_safety_factor": "1.3"},
     ["row 2", "column soil_unit_weight_sat", "below soil_unit_weight"]),
    ({"soil_unit_weight": "18", "soil_cohesion": "0", "soil_friction_angle": "0",
      "required_safety_factor": "1.3"}, ["row 2", "soil_cohesion and soil_friction_angle"]),
    ({"soil_unit_weight": "180", "soil_cohesion": "5", "soil_friction_angle": "30",
      "required_safety_factor": "1.3"}, ["row 2", "column soil_unit_weight", "180"]),
    ({"soil_unit_weight": "18", "soil_cohesion": "5", "soil_friction_angle": "thirty",
      "required_safety_factor": "1.3"}, ["row 2", "column soil_friction_angle", "not a number"]),
    ({"soil_unit_weight": "18", "soil_cohesion": "5", "soil_friction_angle": "30",
      "required_safety_factor": "0.9"}, ["row 2", "column required_safety_factor", "0.9"]),
])
def test_bad_soil_columns_name_row_and_column(cells, words):
    _, findings = validate_conditions(_raw(**cells))
    assert findings
    text = " | ".join(findings)
    for w in words:
        assert w in text, text


def test_good_soil_columns_pass_and_default_the_saturated_weight():
    table, findings = validate_conditions(_raw(soil_unit_weight="18", soil_cohesion="5",
                                               soil_friction_angle="30",
                                               required_safety_factor="1.3"))
    assert findings == []
    assert table["soil_unit_weight_sat"].iloc[0] == 18.0


# ------------------------------------------------------------------ the demo
def test_demo_shows_the_stability_check_and_the_berm(demo_result):
    import pyogrio

    result, out = demo_result
    st = result.stations
    by = st.groupby("section_id")["stability_status"].agg(lambda s: set(s))
    assert by["VN-04"] == {"not_screened"}
    assert "short" in by["VN-03"] and by["VN-01"] <= {"ok", "no_data"}
    ok = st["stability_status"].isin(["ok", "short"])
    fos, req = st["stability_fos"], st["stability_required"]
    assert ((fos[ok] >= req[ok]) == (st["stability_status"][ok] == "ok")).all()
    berms = result.options[result.options["option"] == "stability_berm"]
    assert len(berms) >= 1 and berms["closes_gap"].all()
    assert (berms["fos_with_option"] >= 1.3).all() and (berms["fill_volume"] > 0).all()
    circles = pyogrio.read_dataframe(out, layer="slip_circles")
    assert len(circles) == int(np.isfinite(fos).sum())
    # the arc's exit lies on the station's section line at the exit offset, at ground level
    row = st[np.isfinite(fos)].iloc[0]
    first = np.asarray(circles.geometry.iloc[0].coords)[0]
    side = 1.0 if row["water_side"] == "left" else -1.0
    assert first[0] == pytest.approx(row["x"] + side * row["slip_exit"] * row["nx"], abs=1e-6)
    assert first[1] == pytest.approx(row["y"] + side * row["slip_exit"] * row["ny"], abs=1e-6)
    k = int(np.flatnonzero(np.isclose(st["chainage"], row["chainage"]))[0])
    ground = np.interp(row["slip_exit"], result.offsets, result.profiles[k])
    assert first[2] == pytest.approx(ground, abs=0.05)


def test_demo_report_has_the_stability_section(demo_result, tmp_path):
    from trajectory.outputs.report import write_report

    _, out = demo_result
    page = write_report(out, tmp_path / "r.html").read_text(encoding="utf-8")
    assert "Inner-slope stability" in page
    assert "not a geotechnical assessment" in page
    assert "stability_berm" in page
    assert page.count("alt=\"stability at chainage") >= 1


def test_stretch_design_is_the_least_fill_berm_passing_at_every_station():
    """The staged design equals trying every berm at every station (synthetic truth)."""
    from trajectory.inner.stability_berms import _evaluate, design

    profiles = [levee(n_in, height=6.0, crest=4.0, still_water=5.0) for n_in in
                (1.5, 2.2, 1.7, 1.9, 1.6)]
    off = profiles[0][0]
    z = np.vstack([p[1] for p in profiles])
    frame = sb.Frame(*(np.concatenate([getattr(p[2], f) for p in profiles])
                       for f in sb.Frame.__dataclass_fields__))
    n = z.shape[0]
    soil, required = _soil(18, 20, 4, 26, n), np.full(n, 1.3)
    face, extents = berm_face(np.array([1.5, 2.2, 1.7, 1.9, 1.6])), np.full(n, 25.0)
    now = sb.search(off, z, frame, soil).fos
    got = design(off, z, frame, soil, face, required, extents, fos_now=now)
    level, width = sb.berm_candidates(frame)
    k = level.shape[1]
    fos, area = _evaluate(off, z, frame, soil, face, level, width, np.repeat(np.arange(n), k),
                          np.tile(np.arange(k), n), phreatic="line")
    fos, area = fos.reshape(n, k), area.reshape(n, k)
    passing = (fos >= 1.3).all(axis=0)
    assert passing.any() and got["closes"]
    fill = (area * 25.0).sum(axis=0)
    best = int(np.argmin(np.where(passing, fill, np.inf)))
    assert got["candidate"] == best
    assert got["fill"] == pytest.approx(fill[best])
    assert got["fos"] == pytest.approx(fos[:, best].min())


def test_stretches_designed_side_by_side_choose_what_each_chooses_alone():
    """design_all (all stretches' searches made together) against design per stretch."""
    from trajectory.inner.stability_berms import design, design_all

    cots = (1.5, 2.2, 1.7, 1.9, 1.6, 1.8, 1.45)
    profiles = [levee(n_in, height=6.0, crest=4.0, still_water=5.0) for n_in in cots]
    off = profiles[0][0]
    z = np.vstack([p[1] for p in profiles])
    frame = sb.Frame(*(np.concatenate([getattr(p[2], f) for p in profiles])
                       for f in sb.Frame.__dataclass_fields__))
    n = z.shape[0]
    soil = _soil(18, 20, 4, 26, n)
    required = np.array([1.3, 1.3, 1.3, 1.2, 1.2, 1.4, 1.4])
    face, extents = berm_face(np.array(cots)), np.full(n, 25.0)
    now = sb.search(off, z, frame, soil).fos
    parts = [np.array([0, 1, 2]), np.array([3, 4]), np.array([5, 6])]
    together = design_all(off, z, frame, soil, face, required, extents, parts, fos_now=now)
    for i, got in zip(parts, together, strict=True):
        alone = design(off, z[i], frame.take(i), soil.take(i), face[i], required[i],
                       extents[i], fos_now=now[i])
        for key in ("candidate", "station", "level", "width", "fill", "fos", "closes"):
            assert got[key] == alone[key], key
        np.testing.assert_array_equal(got["area"], alone["area"])


def test_bad_soil_in_a_csv_names_file_row_and_column_at_once(tmp_path):
    """Every bad stability cell is reported at once, with the file, the line and the column."""
    from trajectory.errors import ConditionsError
    from trajectory.inputs.conditions import read_conditions

    p = tmp_path / "sections.csv"
    p.write_text(
        "section_id,from_chainage,to_chainage,water_level,sea_level_rise,settlement,"
        "freeboard_method,fixed_freeboard,soil_unit_weight,soil_cohesion,"
        "soil_friction_angle,required_safety_factor\n"
        "A,0,100,3,0,0,constant,1,18,5,30,1.3\n"
        "B,100,200,3,0,0,constant,1,18,5,75,1.3\n"
        "C,200,300,3,0,0,constant,1,18,,30,\n", encoding="utf-8")
    with pytest.raises(ConditionsError) as exc:
        read_conditions(p)
    text = str(exc.value)
    assert str(p) in text
    assert "row 3, column soil_friction_angle: 75 breaks the rule" in text
    assert "row 4, column(s) soil_cohesion, required_safety_factor: empty" in text
    assert len(exc.value.findings) == 2
