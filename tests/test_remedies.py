"""Remedies: berm factor, areas and volumes, round trips and the demo's deficit stretches."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from shapely.geometry import Polygon

from trajectory.formulas import hydraulics as hy
from trajectory.judgement.remedies import (
    OPTIONS,
    Geometry,
    berm_area,
    largest_effective_berm,
    outline,
    raise_area,
    station_options,
)
from trajectory.requirement.crest_level import StationConditions, required_level


def _cond(n=1, **kw):
    base = dict(water_level=4.2, hm0=0.6, tm10=3.0, wave_angle=20.0, q_allow=1.0,
                sea_level_rise=0.2, settlement=0.1, roughness=1.0, min_freeboard=0.5)
    base.update(kw)
    return StationConditions(**{k: np.full(n, float(v)) for k, v in base.items()})


def _geom(crest, n=None, **kw):
    crest = np.atleast_1d(np.asarray(crest, float))
    m = crest.size
    base = dict(crest_width=4.0, outer_slope=3.0, inner_slope=2.5, outer_toe_level=1.5,
                inner_toe_level=1.0)
    base.update(kw)
    return Geometry(crest_level=crest, **{k: np.full(m, float(v)) for k, v in base.items()})


# ---------------------------------------------------------------- gamma_b by hand
# EurOtop (2018) berm factor, Eq. 5.33-5.36 (numbers from memory):
#   gamma_b = 1 - rB (1 - rdb), 0.6 <= gamma_b <= 1
#   rB = B / L_berm, L_berm = Hm0 n_below + B + Hm0 n_above (1.0 Hm0 below and above)
#   rdb = 0.5 - 0.5 cos(pi db / x), x = 2 Hm0 (berm below SWL) or Ru2% (above); rdb = 1
#   outside the zone |db| >= x
def test_gamma_b_worked_values():
    # Hm0 = 1, 1:3 both sides, B = 2, db = +0.5 (submerged): L = 3 + 2 + 3 = 8, rB = 0.25,
    # rdb = 0.5 - 0.5 cos(pi/4) = 0.146447, gamma_b = 1 - 0.25 * 0.853553 = 0.786612
    assert hy.gamma_berm(2.0, 0.5, 1.0, 5.0, 1 / 3, 1 / 3) == pytest.approx(0.786612, abs=1e-6)
    # B = 4 at still water: L = 10, rB = 0.4, rdb = 0 -> 0.6, exactly the lower bound
    assert hy.gamma_berm(4.0, 0.0, 1.0, 5.0, 1 / 3, 1 / 3) == pytest.approx(0.6, abs=1e-12)
    # B = 10: rB = 10/16 = 0.625 -> 0.375, bounded to 0.6
    assert hy.gamma_berm(10.0, 0.0, 1.0, 5.0, 1 / 3, 1 / 3) == pytest.approx(0.6, abs=1e-12)
    # berm 2.5 m above still water with Ru2% = 2.0: outside the zone, no reduction
    assert hy.gamma_berm(3.0, -2.5, 1.0, 5.0, 1 / 3, 1 / 3, runup=2.0) == 1.0


def test_largest_effective_berm_reaches_the_lower_bound():
    # at still water rdb = 0 so rB = 0.4: B = 0.4 * Hm0 * 2n / 0.6 = 4.0 m for Hm0 = 1, n = 3
    cond = _cond(hm0=1.0, tm10=5.0, water_level=4.0, sea_level_rise=0.0)
    g = _geom([6.0])
    b = largest_effective_berm(cond, g, np.array([4.0]))
    assert b[0] == pytest.approx(4.0, rel=1e-9)
    assert hy.gamma_berm(b, 0.0, 1.0, 5.0, 1 / 3, 1 / 3) == pytest.approx(0.6, abs=1e-9)


# ---------------------------------------------------------------- areas (shapely)
def _area_between(g, i, *, opt, base):
    """Area between an option's outline and the existing one, by shapely polygons."""
    new_x, new_z = outline(g, i, **opt)
    span = (new_x[0], new_x[-1])
    old_x, old_z = outline(g, i, span=span)
    new_x, new_z = outline(g, i, span=span, **opt)

    def poly(x, z):
        return Polygon(list(zip(x, z, strict=True)) + [(x[-1], base), (x[0], base)])

    return poly(new_x, new_z).area - poly(old_x, old_z).area


@pytest.mark.parametrize("dh", [0.05, 0.3, 1.0, 2.5])
def test_raise_area_matches_shapely(dh):
    # reference: shapely polygon areas of the constructed trapezoids
    g = _geom([5.4], outer_toe_level=1.5, inner_toe_level=0.8)
    ref = _area_between(g, 0, opt={"crest_raise": dh}, base=-5.0)
    assert raise_area(np.array([dh]), g)[0] == pytest.approx(ref, rel=1e-9)


@pytest.mark.parametrize(("width", "level"), [(2.0, 4.4), (6.0, 3.0), (0.5, 5.0)])
def test_berm_area_matches_shapely(width, level):
    g = _geom([5.4])
    ref = _area_between(g, 0, opt={"berm_width": width, "berm_level": level}, base=-5.0)
    assert berm_area(np.array([width]), np.array([level]), g)[0] == pytest.approx(ref, rel=1e-9)


def test_raise_area_is_the_closed_form_trapezoid_expression():
    # dA = W dh + n_o (H_o dh + dh^2/2) + n_i (H_i dh + dh^2/2): quadratic in dh
    g = _geom([6.0])
    dh = np.linspace(0, 2, 9)
    a = raise_area(dh, Geometry(*(np.full(9, v[0]) for v in g.__dict__.values())))
    expected = 4.0 * dh + 3.0 * (4.5 * dh + dh**2 / 2) + 2.5 * (5.0 * dh + dh**2 / 2)
    assert np.allclose(a, expected)
    assert np.all(np.diff(a, 2) > 0)  # grows faster than linearly


# ---------------------------------------------------------------- round trips
def test_proposed_berm_brings_the_required_level_to_the_crest():
    # round trip through the assessment's own required-level computation
    crest = np.array([5.35, 5.5, 5.62])
    cond, g = _cond(3), _geom(crest)
    opts = station_options(cond, g, target_margin=np.zeros(3))
    ob = opts["outer_berm"]
    assert ob["closes_gap"].all()
    req = required_level(cond, outer_slope=g.outer_slope, crest_level=crest,
                         berm_width=ob["berm_width"], berm_level=ob["berm_level"])
    assert np.allclose(req.required_level, crest, atol=0.01)
    # the raise closes the gap too: the raised crest meets the (unchanged) requirement
    req0 = required_level(cond, outer_slope=g.outer_slope, crest_level=crest)
    assert np.allclose(crest + opts["raise"]["crest_raise"], req0.required_level, atol=1e-9)


def test_berm_that_cannot_close_says_so_and_gives_the_closest():
    cond, g = _cond(1, hm0=0.8, tm10=3.6), _geom([4.9])
    opts = station_options(cond, g, target_margin=np.zeros(1))
    ob = opts["outer_berm"]
    assert not ob["closes_gap"][0] and ob["remaining"][0] > 0
    assert ob["gamma_b"][0] == pytest.approx(0.6, abs=1e-6)
    assert opts["combined"]["crest_raise"][0] > 0


@settings(max_examples=60, deadline=None)
@given(crest=st.floats(4.6, 5.68), hm0=st.floats(0.2, 1.5), n=st.floats(2.0, 5.0),
       settle=st.floats(0.0, 0.3))
def test_combined_never_needs_more_fill_than_the_better_single_option(crest, hm0, n, settle):
    cond, g = _cond(1, hm0=hm0, tm10=3.0 + hm0), _geom([crest], outer_slope=n)
    opts = station_options(cond, g, target_margin=np.zeros(1), fill_settlement=settle)
    best = opts["raise"]["area"][0]
    if opts["outer_berm"]["closes_gap"][0]:
        best = min(best, opts["outer_berm"]["area"][0])
    assert opts["combined"]["area"][0] <= best + 1e-9


# ---------------------------------------------------------------- the demo
def test_every_demo_deficit_stretch_gets_all_three_options(demo_result):
    result, _ = demo_result
    opt = result.options
    deficit = np.flatnonzero(result.stretches.status == "deficit")
    assert deficit.size >= 2
    for i in deficit:
        rows = opt[opt["stretch"] == i]
        for basis in ("whole_stretch", "every_station"):
            b = rows[rows["basis"] == basis].set_index("option")
            assert set(b.index) == {"raise", "outer_berm", "combined"}
            closing = b.loc[b["closes_gap"].astype(bool), "fill_volume"]
            assert b.loc["combined", "fill_volume"] <= closing.min() + 1e-6
            assert b["cheapest"].sum() == 1


def test_report_section_draws_options_and_lists_volumes(demo_result, tmp_path):
    import base64
    from html.parser import HTMLParser

    from trajectory.outputs.report import load_report_data
    from trajectory.outputs.report_remedies import remedy_section

    result, out = demo_result
    title, frag = remedy_section(load_report_data(out))
    assert title == "Reinforcement options"

    class P(HTMLParser):
        imgs, cells = [], []

        def handle_starttag(self, tag, attrs):
            if tag == "img":
                self.imgs.append(dict(attrs)["src"])

        def handle_data(self, data):
            self.cells.append(data)

    p = P()
    p.feed(frag)
    assert len(p.imgs) == (result.stretches.status == "deficit").sum()
    png = base64.b64decode(p.imgs[0].split(",", 1)[1])
    assert png[:8] == b"\x89PNG\r\n\x1a\n"
    text = " ".join(p.cells)
    assert "qualified engineer" in text
    assert "no costs" in text and "cost, indicative" not in frag  # the demo sets no unit rate
    for name in ("raise", "outer_berm", "combined"):
        assert name in text
    # one star per stretch and basis: the cheapest option that closes the gap
    crest = result.options["option"].isin(OPTIONS)  # stability berms have their own section
    assert text.count("\u2605 cheapest") == int(result.options["cheapest"][crest].sum())
    # with a unit rate the costs are listed, with the order-of-magnitude wording
    from dataclasses import replace

    data = load_report_data(out)
    opt = data.layers["options"]
    costed = opt.assign(cost=opt["fill_volume"] * 12.0)
    _, frag2 = remedy_section(replace(data, layers={"options": costed}))
    assert "order-of-magnitude" in frag2 and "cost, indicative" in frag2
    assert f"{costed['cost'].iloc[0]:,.0f}" in frag2


def test_profiles_of_every_option_design_station_are_stored():
    # synthetic truth: eight deficit stretches, more than the REPORT_PROFILES worst kept
    import pandas as pd

    from trajectory.outputs.profiles import REPORT_PROFILES, stored_chainages

    n = REPORT_PROFILES + 2
    worst_ch = 100.0 * np.arange(n) + 50.0
    stretches = pd.DataFrame({"status": ["deficit"] * n, "worst_margin": -0.1 * np.arange(n),
                              "worst_chainage": worst_ch})
    stations = pd.DataFrame({"chainage": worst_ch, "margin": -0.1 * np.arange(n)})
    options = pd.DataFrame({"basis": ["whole_stretch", "every_station"] * n,
                            "chainage": np.repeat(worst_ch, 2)})
    options.loc[options["basis"] == "every_station", "chainage"] = np.nan
    assert stored_chainages(stretches, stations).size == REPORT_PROFILES  # the worst alone
    got = stored_chainages(stretches, stations, options)
    assert got.size == n and set(got) == set(worst_ch)
    assert got[:REPORT_PROFILES].tolist() == worst_ch[::-1][:REPORT_PROFILES].tolist()


def test_demo_stores_the_design_station_profiles(demo_result):
    import pyogrio

    _, out = demo_result
    opt = pyogrio.read_dataframe(out, layer="options")
    prof = pyogrio.read_dataframe(out, layer="section_profiles")
    design = opt.loc[opt["basis"] == "whole_stretch", "chainage"].to_numpy(float)
    assert design.size and np.isin(design, prof["chainage"].to_numpy(float)).all()
