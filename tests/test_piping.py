"""Piping screening: the published rules, the seepage path read from a profile, the berm.

External checks: hand calculations from Bligh's (1910) and Lane's (1935) creep ratios
(the values as tabulated in TAW 1999, Technical Report on Sand Boils, and in Lane's
Table 4; from memory); Sellmeijer et al. (2011) recomputed here term by term from the
published formula; profiles of synthetic geometry whose toes and berm the test builds.
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest

from trajectory.formulas import piping as pp
from trajectory.inner.piping_screen import (
    MIN_BERM_LENGTH,
    berm_face,
    piping_options,
    piping_stretches,
    screen_piping,
    waterline_offset,
    with_berm,
)
from trajectory.inputs.conditions import validate_conditions
from trajectory.terrain.profile import read_profiles


# ------------------------------------------------------------- creep rules
def test_bligh_hand_calculation():
    # Bligh (1910): L >= C_B dH; fine sand C_B = 15, coarse sand 12 (from memory):
    # dH = 2.0 m -> 30 m and 24 m; no head, no length
    got = pp.bligh_required_length(np.array([2.0, 2.0, 0.0, -1.0]),
                                   np.array([pp.BLIGH_CREEP["fine_sand"],
                                             pp.BLIGH_CREEP["coarse_sand"], 15.0, 15.0]))
    assert got == pytest.approx([30.0, 24.0, 0.0, 0.0])
    assert pp.BLIGH_CREEP["fine_sand"] == 15.0 and pp.BLIGH_CREEP["silt"] == 18.0


def test_lane_hand_calculation():
    # Lane (1935): L_v + L_h / 3 >= C_L dH; fine sand C_L = 7.0 (Table 4, from memory).
    # dH = 2 m, no vertical path: L_h = 3 * 7 * 2 = 42 m; with 4 m of sheet pile
    # (L_v = 4): L_h = 3 * (14 - 4) = 30 m; a long pile leaves nothing to the horizontal
    c = pp.LANE_CREEP["fine_sand"]
    assert c == 7.0 and pp.LANE_CREEP["medium_sand"] == 6.0
    got = pp.lane_required_length(np.array([2.0, 2.0, 2.0]), np.full(3, c),
                                  np.array([0.0, 4.0, 20.0]))
    assert got == pytest.approx([42.0, 30.0, 0.0])
    # the weighted length of what it requires meets C_L dH exactly
    assert pp.lane_weighted_length(30.0, 4.0) == pytest.approx(14.0)


# ------------------------------------------------------------- Sellmeijer
def _sellmeijer_by_hand(L: float, D: float, d70: float, k: float) -> float:
    """Sellmeijer, Lopez de la Cruz, van Beek & Knoeff (2011), Eur. J. Env. Civ. Eng.
    15(8): H_c = F_res F_scale F_geo L, term by term with the paper's constants."""
    eta, theta, gp, gw = 0.25, 37.0, 16.5, 10.0   # White's coefficient, bedding angle
    d70m, nu, g = 2.08e-4, 1.33e-6, 9.81          # reference d70; water at ~10 C
    kappa = nu / g * k                            # intrinsic permeability
    f_res = gp / gw * eta * math.tan(math.radians(theta))
    f_scale = d70m / (kappa * L) ** (1.0 / 3.0) * (d70 / d70m) ** 0.4
    r = D / L
    f_geo = 0.91 * r ** (0.28 / (r ** 2.8 - 1.0) + 0.04)
    return f_res * f_scale * f_geo * L


def test_sellmeijer_worked_value():
    # d70 = 200 um, k = 1e-4 m/s, D = 20 m, L = 30 m: kappa = 1.356e-11 m2,
    # F_res = 0.3108, F_scale = 0.2764, F_geo = 1.0584 -> H_c = 2.728 m (by hand)
    hand = _sellmeijer_by_hand(30.0, 20.0, 2e-4, 1e-4)
    assert hand == pytest.approx(2.728, abs=0.002)
    got = pp.sellmeijer_critical_head(np.array([30.0]), d70=2e-4, k=1e-4, aquifer=20.0)
    assert got[0] == pytest.approx(hand, rel=1e-9)
    for L, D, d70, k in ((10.0, 5.0, 1.5e-4, 5e-5), (80.0, 40.0, 3e-4, 3e-4),
                         (50.0, 60.0, 2.5e-4, 1e-4)):
        assert pp.sellmeijer_critical_head(np.array([L]), d70=d70, k=k, aquifer=D)[0] == \
            pytest.approx(_sellmeijer_by_hand(L, D, d70, k), rel=1e-9)


def test_sellmeijer_monotonic_in_length_aquifer_ratio_and_grain_size():
    L = np.geomspace(2.0, 2000.0, 200)
    for D in (2.0, 20.0, 80.0):  # a longer path holds a larger head
        h = pp.sellmeijer_critical_head(L, d70=2e-4, k=1e-4, aquifer=D)
        assert np.all(np.diff(h) > 0), D
    # a thicker aquifer (larger D/L) lowers the critical head, over the D/L of levees
    # (0.05-1; F_geo has its minimum near D/L = 2.5)
    D = np.linspace(1.5, 30.0, 100)
    h = pp.sellmeijer_critical_head(np.full(D.size, 30.0), d70=2e-4, k=1e-4, aquifer=D)
    assert np.all(np.diff(h) < 0)
    d70 = np.linspace(1e-4, 5e-4, 50)  # coarser sand resists better (d70^0.4)
    h = pp.sellmeijer_critical_head(np.full(d70.size, 30.0), d70=d70, k=1e-4, aquifer=20.0)
    assert np.all(np.diff(h) > 0)


def test_geometry_factor_is_continuous_at_d_equal_l():
    # the exponent's pole at D/L = 1 is removable (limit 0.91 e^0.1)
    near = pp.geometry_factor(np.array([1.0 - 1e-4, 1.0, 1.0 + 1e-4]))
    assert near[1] == pytest.approx(0.91 * math.exp(0.1))
    assert near == pytest.approx(near[1], rel=1e-4)


def test_sellmeijer_required_length_inverts_the_critical_head():
    dh = np.array([2.0, 3.3, 5.0, 0.2])
    d = np.array([0.0, 1.5, 1.0, 1.0])  # the last: head below 0.3 d, nothing required
    req = pp.sellmeijer_required_length(dh, d70=2e-4, k=1e-4, aquifer=20.0, blanket=d)
    assert req[3] == 0.0
    hc = pp.sellmeijer_critical_head(req[:3], d70=2e-4, k=1e-4, aquifer=20.0)
    assert hc == pytest.approx(dh[:3] - 0.3 * d[:3], rel=1e-9)
    missing = pp.sellmeijer_required_length(np.array([2.0]), d70=np.nan, k=1e-4,
                                            aquifer=20.0, blanket=0.0)
    assert np.isnan(missing[0])


# ------------------------------------------------------------- bad input
def _raw(**cols) -> pd.DataFrame:
    base = {"section_id": ["A", "B"], "from_chainage": ["0", "100"],
            "to_chainage": ["100", "200"], "water_level": ["4", "4"],
            "sea_level_rise": ["0", "0"], "settlement": ["0", "0"],
            "freeboard_method": ["constant", "constant"], "fixed_freeboard": ["1", "1"]}
    base.update(cols)
    return pd.DataFrame(base)


@pytest.mark.parametrize(("cols", "expected"), [
    ({"polder_level": ["1", "1"], "subsoil_class": ["fine_sand", "clayey"]},
     "row 3, column subsoil_class: 'clayey' is not a class"),
    ({"polder_level": ["1", ""], "subsoil_class": ["fine_sand", ""],
      "aquifer_d70": ["", "200"]},
     "row 3, column aquifer_k/aquifer_thickness: empty; Sellmeijer needs"),
    ({"polder_level": ["1", "1"], "subsoil_class": ["fine_sand", ""]},
     "row 3, column polder_level: given, but neither subsoil_class nor the aquifer"),
    ({"polder_level": ["", "1"], "subsoil_class": ["fine_sand", "fine_sand"]},
     "row 2, column polder_level: empty; the piping parameters"),
    ({"polder_level": ["1", "1"], "subsoil_class": ["silt", "silt"],
      "aquifer_d70": ["200", "0.2"], "aquifer_k": ["1e-4", "1e-4"],
      "aquifer_thickness": ["20", "20"]},
     "row 3, column aquifer_d70: 0.2 breaks the rule 50 <= number <= 2000"),
    ({"polder_level": ["1", "low"], "subsoil_class": ["silt", "silt"]},
     "row 3, column polder_level: 'low' is not a number"),
])
def test_bad_piping_columns_name_row_and_column(cols, expected):
    _, findings = validate_conditions(_raw(**cols))
    assert any(expected in f for f in findings), findings


def test_bad_piping_value_in_a_file_names_the_file(tmp_path):
    from trajectory.errors import ConditionsError
    from trajectory.inputs.sources import read_conditions

    p = tmp_path / "sections.csv"
    _raw(polder_level=["1", "1"], subsoil_class=["fine_sand", "peat"]).to_csv(p, index=False)
    with pytest.raises(ConditionsError) as err:
        read_conditions(p)
    assert str(p) in str(err.value) and "row 3, column subsoil_class" in str(err.value)


def test_good_piping_columns_pass_and_are_optional():
    t, findings = validate_conditions(_raw(polder_level=["1.5", ""],
                                           subsoil_class=["Fine sand", ""]))
    assert findings == []
    assert list(t["subsoil_class"]) == ["fine_sand", ""]
    t, findings = validate_conditions(_raw())
    assert findings == [] and t["polder_level"].isna().all()


# ------------------------------------------------- synthetic geometry, end to end
STEP = 0.5
OFFSETS = np.arange(-60.0, 60.0 + STEP / 2, STEP)
CREST, HALF, OUTER_N, INNER_N = 6.0, 2.0, 3.0, 2.5
FORESHORE, HINTERLAND = 1.5, 1.0
OUTER_TOE = HALF + (CREST - FORESHORE) * OUTER_N      # 15.5 m
INNER_TOE = -(HALF + (CREST - HINTERLAND) * INNER_N)  # -14.5 m


def _profile(berm_length: float = 0.0, thickness: float = 1.0) -> np.ndarray:
    """A trapezoid levee (outer positive) with a piping berm of known length, + noise."""
    x = OFFSETS
    outer = np.maximum(CREST - (x - HALF) / OUTER_N, FORESHORE)
    inner = np.maximum(CREST - (-x - HALF) / INNER_N, HINTERLAND)
    foot = -INNER_TOE + berm_length  # landward foot of the berm (distance)
    berm = np.minimum(HINTERLAND + thickness, HINTERLAND + (foot + x) / INNER_N)
    z = np.where(x >= 0, np.minimum(outer, CREST), np.minimum(np.maximum(inner, berm), CREST))
    rng = np.random.default_rng(11)
    return z + rng.normal(0.0, 0.01, x.size)


def _stations(z: np.ndarray, *, swl: float) -> pd.DataFrame:
    prof = read_profiles(z, OFFSETS, object_width=1.0, crest_search=15.0,
                         crest_tolerance=0.1, max_nodata=0.5, water_level=np.full(len(z), swl))
    t = pd.DataFrame({f: getattr(prof, f) for f in (
        "outer_toe", "inner_toe", "inner_berm_width", "crest_offset", "inner_toe_level",
        "inner_slope")})
    t["chainage"] = np.arange(len(z)) * 25.0
    t["water_level"], t["sea_level_rise"], t["status"] = swl, 0.0, "ok"
    return t


def _cond(n: int, **values) -> pd.DataFrame:
    return pd.DataFrame({k: [v] * n for k, v in values.items()})


def test_seepage_length_of_a_berm_of_known_length():
    lengths = np.array([0.0, 6.0, 12.0])
    z = np.stack([_profile(b) for b in lengths])
    st = _stations(z, swl=4.4)
    got = screen_piping(st, _cond(3, polder_level=2.4, subsoil_class="fine_sand"),
                        profiles=z, offsets=OFFSETS)
    truth = OUTER_TOE - INNER_TOE + lengths  # 30, 36, 42 m
    assert got["seepage_length"] == pytest.approx(truth, abs=STEP)
    assert got["piping_exit_offset"] == pytest.approx(INNER_TOE - lengths, abs=STEP)
    assert got["piping_entry_offset"] == pytest.approx(np.full(3, OUTER_TOE), abs=STEP)
    assert list(got["piping_exit"]) == ["inner_toe", "inner_berm_end", "inner_berm_end"]
    # dH = 4.4 - 2.4 = 2 m; Bligh 15 x 2 = 30 m, Lane 3 x 7 x 2 = 42 m governs
    assert got["piping_required"] == pytest.approx([42.0] * 3)
    assert list(got["piping_rule"]) == ["lane"] * 3
    assert list(got["piping_status"][:2]) == ["short", "short"]


def test_waterline_entry_lies_on_the_outer_slope():
    z = np.stack([_profile()])
    st = _stations(z, swl=4.4)
    # still water 4.4 meets the 1:3 outer slope at 2 + (6 - 4.4) * 3 = 6.8 m
    wl = waterline_offset(z, OFFSETS, np.array([4.4]), np.array([0.0]))
    assert wl[0] == pytest.approx(6.8, abs=0.1)
    got = screen_piping(st, _cond(1, polder_level=2.4, subsoil_class="fine_sand"),
                        profiles=z, offsets=OFFSETS, entry="waterline")
    assert got["piping_entry"][0] == "waterline"
    assert got["seepage_length"][0] == pytest.approx(6.8 - INNER_TOE, abs=STEP)


def test_not_screened_without_polder_level_and_excluded_follows_the_crest():
    z = np.stack([_profile(), _profile()])
    st = _stations(z, swl=4.4)
    st.loc[1, "status"] = "excluded"
    got = screen_piping(st, _cond(2, polder_level=np.nan, subsoil_class=""), profiles=z,
                        offsets=OFFSETS)
    assert list(got["piping_status"]) == ["not_screened", "excluded"]
    assert np.isnan(got["seepage_length"]).all()


def test_berm_round_trip_reaches_the_target_seepage_length():
    """The proposed berm built into the profile and read back closes the deficit."""
    z = np.stack([_profile(), _profile()])
    st = _stations(z, swl=4.4)
    cond = _cond(2, polder_level=2.4, subsoil_class="fine_sand")
    st = st.assign(**screen_piping(st, cond, profiles=z, offsets=OFFSETS))
    runs = piping_stretches(st, start=-12.5, end=37.5)
    assert list(runs["status"]) == ["short"]
    opts = piping_options(st, runs, extents=np.array([25.0, 25.0]), thickness=1.0)
    assert list(opts["option"]) == ["piping_berm"]
    b = float(opts["berm_width"].iloc[0])
    target = float(st["piping_required"].iloc[0])
    assert b == pytest.approx(target - st["seepage_length"].max(), abs=1e-9)
    # fill: the berm's section is thickness x length, over the stretch's 50 m
    assert opts["fill_volume"].iloc[0] == pytest.approx(1.0 * b * 50.0)
    assert opts["berm_level"].iloc[0] == pytest.approx(st["inner_toe_level"].iloc[0] + 1.0)
    built = with_berm(z, OFFSETS, exit_offset=st["piping_exit_offset"].to_numpy(),
                      toe_level=st["inner_toe_level"].to_numpy(), length=np.full(2, b),
                      thickness=1.0, face=berm_face(st["inner_slope"].to_numpy()))
    again = screen_piping(_stations(built, swl=4.4), cond, profiles=built, offsets=OFFSETS)
    assert again["seepage_length"] == pytest.approx(np.full(2, target), abs=STEP)
    assert list(again["piping_exit"]) == ["inner_berm_end"] * 2


def test_short_deficit_gets_the_shortest_readable_berm():
    z = np.stack([_profile()])
    st = _stations(z, swl=4.4)
    # coarse sand, dH = 31 / 15 m: Lane 3 x 5 x dH = 31 m against 30 m measured, a 1 m
    # deficit; the berm proposed is the shortest the profile reading sees as a berm
    cond = _cond(1, polder_level=4.4 - 31.0 / 15.0, subsoil_class="coarse_sand")
    st = st.assign(**screen_piping(st, cond, profiles=z, offsets=OFFSETS))
    assert st["piping_required"].iloc[0] == pytest.approx(31.0)
    runs = piping_stretches(st, start=-12.5, end=12.5)
    opts = piping_options(st, runs, extents=np.array([25.0]), thickness=1.0)
    assert opts["berm_width"].iloc[0] == MIN_BERM_LENGTH


# ------------------------------------------------------------- the demo
def test_demo_shows_piping_check_and_berm(demo_result, demo):
    import pyogrio

    result, out = demo_result
    st = pyogrio.read_dataframe(out, layer="stations")
    assert {"ok", "short", "not_screened"} <= set(st["piping_status"])
    truth = demo["truth_data"]["inner_berms"][0]
    ch = st["chainage"].to_numpy(float)
    full = (ch >= truth["from_chainage"] + truth["taper"]) & \
        (ch <= truth["to_chainage"] - truth["taper"])
    plain = (st["section_id"] == "VN-03") & ~((ch >= truth["from_chainage"])
                                              & (ch <= truth["to_chainage"]))
    # the planted berm lengthens the path by its length (crest variation +-0.1 m moves
    # each toe by up to 0.3 m)
    gain = st.loc[full, "seepage_length"].median() - st.loc[plain, "seepage_length"].median()
    assert gain == pytest.approx(truth["length"], abs=1.0)
    assert (st.loc[full, "piping_exit"] == "inner_berm_end").all()
    assert (st.loc[full, "piping_status"] == "ok").all()
    opts = pyogrio.read_dataframe(out, layer="options")
    berms = opts[opts["option"] == "piping_berm"]
    runs = pyogrio.read_dataframe(out, layer="piping_stretches")
    assert len(berms) == (runs["status"] == "short").sum() > 0
    assert (berms["berm_width"] >= MIN_BERM_LENGTH).all() and (berms["fill_volume"] > 0).all()
    assert (st.loc[st["section_id"] == "VN-04", "piping_status"] != "ok").all()
    # the stretches tile the line and lie on it (their geometry as long as their chainage)
    assert runs["length"].sum() == pytest.approx(result.line.length, abs=1e-6)
    assert runs.geometry.length.to_numpy() == pytest.approx(runs["length"].to_numpy(),
                                                           abs=0.01)
    # the stations table of the run holds every piping field of the schema
    from trajectory.outputs.schema import PIPING_STATION_FIELDS

    assert {f.name for f in PIPING_STATION_FIELDS} <= set(result.stations.columns)


def test_cli_names_file_row_and_column_of_a_bad_piping_value(demo, tmp_path):
    from click.testing import CliRunner

    from trajectory.frontends.cli import EXIT_INPUT, main

    bad = tmp_path / "sections.csv"
    text = demo["sections"].read_text(encoding="utf-8")
    assert "coarse_gravel" in text  # VN-03, line 4 of the file
    bad.write_text(text.replace("coarse_gravel", "coarse_gravle"), encoding="utf-8")
    res = CliRunner().invoke(main, ["assess", "--centreline", str(demo["centreline"]),
                                    "--dem", str(demo["dem"]), "--conditions", str(bad),
                                    "--out", str(tmp_path / "r.gpkg")])
    assert res.exit_code == EXIT_INPUT, res.output
    assert str(bad) in res.output and "row 4, column subsoil_class" in res.output
    assert "Traceback" not in res.output and not (tmp_path / "r.gpkg").exists()
