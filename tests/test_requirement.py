"""Tests of trajectory.requirement.crest_level: the assembly of the required crest level.

Sources named beside each check: EurOtop (2018) equations (numbers from memory,
see tests/test_hydraulics.py for the hand values), 44 CFR 65.10(b)(1) for the
fixed freeboards, numpy for interpolation, and facts of the trade marked
"common practice".
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from trajectory.formulas import hydraulics as hy
from trajectory.requirement.crest_level import (
    H1PCT_OVER_HM0,
    METHODS,
    STATION_COLUMNS,
    Requirement,
    StationConditions,
    profile_berm,
    required_level,
    required_level_values,
    station_conditions,
)

G = 9.81


def _cond(n: int = 1, **kw) -> StationConditions:
    base = dict(water_level=5.0, hm0=2.0, tm10=6.0, wave_angle=0.0, q_allow=1.0,
                sea_level_rise=0.0, settlement=0.0, roughness=1.0, min_freeboard=0.0)
    extra = {k: kw.pop(k) for k in list(kw) if k not in base}
    base.update(kw)
    arrays = {k: np.full(n, v, dtype=float) for k, v in base.items()}
    for k, v in extra.items():
        arrays[k] = np.broadcast_to(np.asarray(v), (n,)).copy()
    return StationConditions(**arrays)


def _req(cond: StationConditions, slope: float = 3.0, crest: float = 20.0, **kw) -> Requirement:
    n = np.asarray(cond.water_level).size
    return required_level(cond, outer_slope=np.full(n, slope), crest_level=np.full(n, crest),
                          **kw)


# --------------------------------------------------------------------------- #
# assembly of the terms
# --------------------------------------------------------------------------- #
def test_sum_of_terms_and_existing_call():
    # Definition (issue text): required = water level + sea-level rise + freeboard + settlement
    c = _cond(3, sea_level_rise=0.3, settlement=0.2)
    r = _req(c)
    np.testing.assert_allclose(r.required_level,
                               r.water_level + r.sea_level_rise + r.freeboard + r.settlement)
    # EurOtop (2018) Eq. 5.12 inverted, hand value of test_hydraulics: Hm0=2, 1:3 ...
    np.testing.assert_allclose(r.freeboard_eurotop,
                               hy.freeboard_for_discharge(1e-3, 2.0, 6.0, 1 / 3))
    assert list(r.freeboard_method) == ["overtopping"] * 3
    assert list(r.freeboard_rule) == ["overtopping"] * 3
    for name in STATION_COLUMNS:
        assert np.asarray(getattr(r, name)).shape == (3,), name


def test_minimum_freeboard_governs_when_larger():
    # Definition of the section's lower bound (README): freeboard = max(method, minimum)
    r = _req(_cond(1, hm0=0.3, tm10=2.5, q_allow=10.0, min_freeboard=1.0))
    assert r.freeboard[0] == 1.0 and r.freeboard_rule[0] == "minimum"
    assert r.freeboard_eurotop[0] < 1.0


def test_tan_alpha_keyword_overrides_outer_slope():
    # Interface agreement: tan_alpha given wins over 1 / outer_slope
    c = _cond(1)
    a = _req(c, slope=3.0)
    b = _req(c, slope=99.0, tan_alpha=np.array([1 / 3]))
    assert b.freeboard[0] == pytest.approx(a.freeboard[0], rel=1e-12)
    assert b.tan_alpha[0] == pytest.approx(1 / 3)


def test_berm_gives_published_gamma_b_and_lowers_freeboard():
    # EurOtop (2018) Eq. 5.33-5.36 (from memory): B=5 m, berm 1 m below still water,
    # Hm0=2 m, 1:3 both sides -> γb = 0.74896 (hand value, tests/test_hydraulics.py)
    c = _cond(1)
    r = _req(c, berm_width=np.array([5.0]), berm_level=np.array([4.0]))
    assert r.gamma_b[0] == pytest.approx(0.748955, rel=1e-5)
    base = _req(c)
    assert base.gamma_b[0] == 1.0
    assert r.freeboard[0] < base.freeboard[0]
    np.testing.assert_allclose(
        r.freeboard_eurotop,
        hy.freeboard_for_discharge(1e-3, 2.0, 6.0, 1 / 3, gamma_b=0.748955), rtol=1e-5)
    # NaN berm (none found in the profile) -> no influence
    none = _req(c, berm_width=np.array([np.nan]), berm_level=np.array([np.nan]))
    assert none.gamma_b[0] == 1.0


def test_profile_berm_keywords():
    # Interface agreement: berm fields of the profile metrics, when present, feed γb
    from types import SimpleNamespace

    assert profile_berm(SimpleNamespace(outer_slope=np.array([3.0]))) == {}
    kw = profile_berm(SimpleNamespace(outer_berm_width=np.array([5.0]),
                                      outer_berm_level=np.array([4.0])))
    r = _req(_cond(1), **kw)
    assert r.gamma_b[0] == pytest.approx(0.748955, rel=1e-5)  # hand value above


def test_q_at_crest_and_runup_level():
    # EurOtop (2018) Eq. 5.12 forward at the measured crest, in l/s per m; run-up
    # level = still water + Ru2% (Eq. 5.2); hand values of tests/test_hydraulics.py:
    # Rc = 3 m -> 0.049335 m³/s/m; Ru2% (Hm0=2, Tm-1,0=5, 1:4) = 3.8655 m
    r = _req(_cond(1), crest=8.0)
    assert r.q_at_crest[0] == pytest.approx(49.335, rel=1e-4)
    r2 = _req(_cond(1, tm10=5.0, sea_level_rise=0.5), slope=4.0)
    assert r2.freeboard_runup[0] == pytest.approx(3.8655, rel=1e-4)
    assert r2.runup_level[0] == pytest.approx(5.5 + 3.8655, rel=1e-5)


# --------------------------------------------------------------------------- #
# freeboard methods
# --------------------------------------------------------------------------- #
def test_runup_method():
    # Rule "crest at or above the 2 % run-up level", EurOtop (2018) Eq. 5.2
    r = _req(_cond(1, tm10=5.0, method=np.array(["runup"], dtype=object)), slope=4.0)
    assert r.freeboard[0] == pytest.approx(3.8655, rel=1e-4)
    assert r.freeboard_rule[0] == "runup"


def test_constant_method():
    # A constant freeboard per section: the number given
    c = _cond(2, method=np.array(["constant"] * 2, dtype=object),
              fixed_freeboard=np.array([0.8, 1.25]), hm0=np.nan, tm10=np.nan, q_allow=np.nan)
    r = _req(c)
    np.testing.assert_allclose(r.freeboard, [0.8, 1.25])
    np.testing.assert_allclose(r.required_level, [5.8, 6.25])
    assert np.isnan(r.q_at_crest).all()


def test_cfr_riverine_in_feet_and_metres():
    # 44 CFR 65.10(b)(1)(i): 3 ft; 4 ft within 100 ft of structures; 3.5 ft at the
    # upstream end; 1 ft = 0.3048 m exactly -> 0.9144, 1.2192, 1.0668 m
    c = _cond(3, method=np.array(["cfr_riverine"] * 3, dtype=object),
              near_structure=np.array([False, True, False]),
              upstream_share=np.array([0.0, 0.0, 1.0]), hm0=np.nan, tm10=np.nan)
    r = _req(c)
    np.testing.assert_allclose(r.freeboard_fixed_ft, [3.0, 4.0, 3.5], atol=1e-12)
    np.testing.assert_allclose(r.freeboard, [0.9144, 1.2192, 1.0668], atol=1e-12)
    assert list(r.freeboard_rule) == ["cfr_riverine"] * 3


def test_cfr_coastal_one_foot_above_the_greater():
    # 44 CFR 65.10(b)(1)(iii): 1 ft above the greater of the 1 % wave height and the
    # maximum run-up. H1% = sqrt(ln 100 / 2) Hm0 = 1.5174 Hm0 (Rayleigh, common practice).
    assert H1PCT_OVER_HM0 == pytest.approx(1.51743, rel=1e-5)
    m = np.array(["cfr_coastal"] * 2, dtype=object)
    # steep 1:2, Hm0=1, Tm-1,0=8: Ru2% = 3.5621 m (Eq. 5.2 hand value) > 1.5174 m
    r = _req(_cond(2, hm0=1.0, tm10=8.0, method=m), slope=2.0)
    assert r.freeboard[0] == pytest.approx(3.5621 + 0.3048, rel=1e-4)
    assert r.freeboard_fixed_ft[0] == pytest.approx(3.5621 / 0.3048 + 1.0, rel=1e-4)
    # gentle 1:8, Hm0=1, Tm-1,0=3: ξ = 0.125/sqrt(1/14.052) = 0.46858, Ru2% =
    # 1.75*0.46858 = 0.82 m < H1% = 1.5174 m -> 1.5174 + 0.3048
    r = _req(_cond(2, hm0=1.0, tm10=3.0, method=m), slope=8.0)
    assert r.freeboard[0] == pytest.approx(1.51743 + 0.3048, rel=1e-5)


def test_every_method_is_selectable():
    # Each of the documented rules gives a finite freeboard on valid input
    c = _cond(len(METHODS), method=np.array(METHODS, dtype=object),
              fixed_freeboard=np.full(len(METHODS), 1.0))
    r = _req(c)
    assert np.isfinite(r.freeboard).all()
    assert list(r.freeboard_method) == list(METHODS)


def test_the_level_alone_is_the_full_computations_level():
    """required_level_values is required_level without its audit terms: equal numbers
    for every method, with and without berms, waves, slopes (NaN where either is)."""
    rng = np.random.default_rng(5)
    n = 400
    method = rng.choice(np.array(METHODS, dtype=object), n)
    c = _cond(n, method=method, fixed_freeboard=rng.uniform(0.3, 2.0, n),
              hm0=np.where(rng.random(n) < 0.1, np.nan, rng.uniform(0.2, 3.0, n)),
              tm10=rng.uniform(3.0, 9.0, n), min_freeboard=rng.choice([0.0, 0.9], n),
              near_structure=rng.random(n) < 0.3, upstream_share=rng.random(n))
    kw = dict(outer_slope=np.where(rng.random(n) < 0.05, np.nan, rng.uniform(1.5, 6.0, n)),
              crest_level=rng.uniform(6.0, 12.0, n), approach="design",
              berm_width=np.where(rng.random(n) < 0.5, rng.uniform(1.0, 20.0, n), np.nan),
              berm_level=rng.uniform(4.0, 6.0, n))
    full = required_level(c, **kw).required_level
    alone = required_level_values(c, **kw)
    np.testing.assert_array_equal(alone, full)
    assert np.isfinite(full).sum() > 0.8 * n


def test_no_slope_gives_no_number():
    # README: a profile without outer slope is no_data, never a made-up number
    r = required_level(_cond(1), outer_slope=np.array([np.nan]), crest_level=np.array([7.0]))
    assert np.isnan(r.required_level[0]) and r.freeboard_rule[0] == ""


# --------------------------------------------------------------------------- #
# periods, water levels, validity
# --------------------------------------------------------------------------- #
def test_station_conditions_interpolates_water_level_and_tp():
    # Linear interpolation along chainage, checked against numpy.interp
    t = pd.DataFrame({
        "section_id": ["a", "b"], "from_chainage": [0.0, 100.0], "to_chainage": [100.0, 300.0],
        "water_level": [6.0, 5.0], "water_level_end": [5.0, np.nan],
        "hm0": [1.0, 1.0], "tm10": [4.0, 5.0], "tp": [4.4, np.nan],
        "period_from_tp": [True, False], "q_allow": [1.0, 1.0],
        "sea_level_rise": [0.0, 0.0], "settlement": [0.0, 0.0],
    })
    ch = np.array([0.0, 25.0, 50.0, 100.0, 150.0, 300.0])
    idx = np.array([0, 0, 0, 0, 1, 1])
    sc = station_conditions(t, idx, ch)
    np.testing.assert_allclose(sc.water_level[:4], np.interp(ch[:4], [0, 100], [6.0, 5.0]))
    np.testing.assert_allclose(sc.water_level[4:], 5.0)
    r = required_level(sc, outer_slope=np.full(6, 3.0), crest_level=np.full(6, 9.0))
    assert list(r.period_source) == ["tp/1.1"] * 4 + ["tm10"] * 2
    assert list(sc.method) == ["overtopping"] * 6
    assert sc.wave_angle.tolist() == [0.0] * 6 and sc.roughness.tolist() == [1.0] * 6


def test_validity_flags():
    # EurOtop (2018) chapter 5 ranges (from memory; README table): in range -> no flag
    ok = _req(_cond(1))
    assert ok.validity_flags[0] == ""
    # 1:1 slope is steeper than 1:1.5; swell Hm0=0.5, Tm-1,0=12 s has s0 = 0.0022 < 0.01
    steep = _req(_cond(1), slope=1.0)
    assert "slope_out_of_range" in steep.validity_flags[0]
    swell = _req(_cond(1, hm0=0.5, tm10=12.0))
    assert "steepness_out_of_range" in swell.validity_flags[0]
    assert "xi_out_of_range" in swell.validity_flags[0]  # ξ = 0.333/sqrt(0.5/224.8) = 7.07
    capped = _req(_cond(1, wave_angle=85.0))
    assert capped.validity_flags[0] == "angle_capped"
    # result kept despite the flag
    assert np.isfinite(swell.required_level[0])


# --------------------------------------------------------------------------- #
# sanity bands (facts of the trade)
# --------------------------------------------------------------------------- #
def test_exposed_sea_dike_needs_several_metres():
    # Common practice: an exposed sea dike (Hm0 ≈ 3 m) at 1 l/s per m needs a freeboard
    # of several metres, of the order of 5 m. Scenario chosen for that band, honestly:
    # a grass 1:4 outer slope with an 8 m berm at design water level, Hm0 = 3 m,
    # s0 = 0.04 (Tm-1,0 = 6.93 s), design approach: γb = 1 - 8/32 = 0.75 (Eq. 5.33-5.36)
    # gives about 5 m. The same waves on a smooth 1:3 slope without berm need about
    # 9.9 m (tests/test_hydraulics.py), so the band holds for gentle slopes with a berm.
    tm10 = math.sqrt(2 * math.pi * 3.0 / (G * 0.04))
    c = _cond(1, water_level=4.0, hm0=3.0, tm10=tm10)
    r = _req(c, slope=4.0, berm_width=np.array([8.0]), berm_level=np.array([4.0]))
    assert r.gamma_b[0] == pytest.approx(0.75, rel=1e-9)
    assert 4.0 < r.freeboard[0] < 6.5


def test_river_levee_needs_well_under_1_5_m():
    # Common practice: river levee, wind waves Hm0 ≈ 0.5 m, Tm-1,0 ≈ 3 s, 1:3, 1 l/s per m
    r = _req(_cond(1, hm0=0.5, tm10=3.0))
    assert 0.5 < r.freeboard[0] < 1.5


def test_more_overtopping_berm_and_oblique_waves_lower_freeboard():
    # EurOtop (2018) Eq. 5.12 with γb, γβ < 1: each lowers the required freeboard
    base = _req(_cond(1)).freeboard[0]
    assert _req(_cond(1, q_allow=10.0)).freeboard[0] < base
    assert _req(_cond(1, wave_angle=40.0)).freeboard[0] < base
    berm = _req(_cond(1), berm_width=np.array([6.0]), berm_level=np.array([5.0]))
    assert berm.freeboard[0] < base


# --------------------------------------------------------------------------- #
# properties
# --------------------------------------------------------------------------- #
@settings(max_examples=200, deadline=None)
@given(
    hm0=st.floats(0.2, 4.0),
    steepness=st.floats(0.012, 0.06),
    cot=st.floats(1.5, 8.0),
    q=st.floats(0.1, 50.0),
    angle=st.floats(0.0, 80.0),
    approach=st.sampled_from(sorted(hy.COEFFICIENTS)),
)
def test_crest_at_required_level_passes_q_allow(hm0, steepness, cot, q, angle, approach):
    # Definition of the inverse, through the assembly: with the crest at the required
    # level, the forward formula gives back q_allow (1e-6 relative) wherever Rc > 0.
    tm10 = math.sqrt(2 * math.pi * hm0 / (G * steepness))
    c = _cond(1, hm0=hm0, tm10=tm10, q_allow=q, wave_angle=angle, sea_level_rise=0.2,
              settlement=0.3)
    r = _req(c, slope=cot, approach=approach)
    if r.freeboard[0] <= 1e-9:
        return
    crest = r.required_level - 0.3  # settlement is construction height above the need
    back = _req(c, slope=cot, crest=float(crest[0]), approach=approach)
    assert back.q_at_crest[0] == pytest.approx(q, rel=1e-6)


@settings(max_examples=100, deadline=None)
@given(hm0=st.floats(0.3, 3.0), cot=st.floats(2.0, 7.0), q=st.floats(0.1, 20.0))
def test_monotonic_in_q_hm0_and_slope(hm0, cot, q):
    # EurOtop (2018) Eq. 5.12/5.13: required level falls with q_allow, rises with
    # Hm0 (same period) and with a steeper slope
    r = _req(_cond(1, hm0=hm0, q_allow=q), slope=cot).required_level[0]
    assert _req(_cond(1, hm0=hm0, q_allow=q * 1.5), slope=cot).required_level[0] <= r
    assert _req(_cond(1, hm0=hm0 * 1.1, q_allow=q), slope=cot).required_level[0] >= r
    assert _req(_cond(1, hm0=hm0, q_allow=q), slope=cot * 1.1).required_level[0] <= r


def test_demo_stations_carry_every_term(demo_result):
    # Definition (README): the terms add up per station, and each is a station field
    from trajectory.outputs.schema import field_names

    result, _ = demo_result
    st = result.stations
    assert set(STATION_COLUMNS) <= set(field_names("stations"))
    ok = st["required_level"].notna()
    assert ok.sum() > 100
    np.testing.assert_allclose(
        st.loc[ok, "required_level"],
        st.loc[ok, ["water_level", "sea_level_rise", "freeboard", "settlement"]].sum(axis=1))
    assert (st.loc[ok, "freeboard_method"] == "overtopping").all()
    assert (st.loc[ok, "period_source"] == "tm10").all()
    # runup_level is still water + Ru2% (EurOtop 2018 Eq. 5.2)
    np.testing.assert_allclose(st.loc[ok, "runup_level"],
                               st.loc[ok, "water_level"] + st.loc[ok, "sea_level_rise"]
                               + st.loc[ok, "freeboard_runup"])


def test_demo_with_a_method_per_section(demo, tmp_path):
    # Each section of the demo given another rule; the freeboards are the rules' own
    # values: constant as given, 44 CFR 65.10(b)(1)(i) 3 ft = 0.9144 m (4 ft = 1.2192 m
    # near structures), 2 % run-up EurOtop (2018) Eq. 5.2 - and the GeoPackage and
    # deficit table take every column.
    import pyogrio

    from trajectory.assess import RunInputs, assess

    t = pd.read_csv(demo["sections"])
    t["freeboard_method"] = ["constant", "cfr_riverine", "runup", "cfr_riverine"]
    t["fixed_freeboard"] = [1.1, np.nan, np.nan, np.nan]
    t["near_structure"] = ["", "", "", "yes"]
    t["min_freeboard"] = 0.0
    path = tmp_path / "methods.csv"
    t.to_csv(path, index=False)
    out = tmp_path / "r.gpkg"
    res = assess(RunInputs(str(demo["centreline"]), str(demo["dem"]), str(path)), out)
    st = res.stations[res.stations["required_level"].notna()]
    by = {sid: g for sid, g in st.groupby("section_id")}
    ids = list(t["section_id"])
    np.testing.assert_allclose(by[ids[0]]["freeboard"], 1.1)
    np.testing.assert_allclose(by[ids[1]]["freeboard"], 0.9144, atol=1e-12)
    np.testing.assert_allclose(by[ids[3]]["freeboard"], 1.2192, atol=1e-12)
    np.testing.assert_allclose(by[ids[3]]["freeboard_fixed_ft"], 4.0)
    np.testing.assert_allclose(by[ids[2]]["freeboard"], by[ids[2]]["freeboard_runup"])
    back = pyogrio.read_dataframe(out, layer="stations", read_geometry=False)
    assert set(back["freeboard_rule"].dropna()) <= {"constant", "cfr_riverine", "runup", ""}
    table = pd.read_csv(out.with_suffix(".csv"), comment="#")
    assert list(table.columns) == list(back.columns)
