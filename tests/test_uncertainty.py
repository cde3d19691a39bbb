"""Survey accuracy carried through to the margin (trajectory.judgement.uncertainty).

References: Monte Carlo over synthetic levees whose truth the tests build;
scipy.stats.norm (reference library); numpy.polyfit's covariance (reference
library); the EurOtop (2018) Eq. 5.10 breaking-wave inverse differentiated by hand.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

from trajectory.errors import ParameterError
from trajectory.geometry.sections import bilinear
from trajectory.judgement.uncertainty import (
    VerticalAccuracy,
    accuracy_from_settings,
    accuracy_preset,
    change_sigma,
    confidence,
    crest_sigma,
    effective_cells,
    p_short,
    rate_sigma,
    required_slope_derivative,
    slope_sigma,
    station_uncertainty,
)
from trajectory.params import Settings
from trajectory.requirement.crest_level import StationConditions, required_level
from trajectory.terrain.profile import read_profiles

CELL = 0.5
KW = dict(object_width=1.0, crest_search=15.0, crest_tolerance=0.10, max_nodata=0.5)


def trapezoid(o, *, crest=6.0, width=4.0, n_out=3.0, n_in=2.5, outer_base=1.5,
              inner_base=1.0):
    """Synthetic levee cross-profile: flat crest, straight slopes, flat ground (+ = outer)."""
    z = np.full(np.shape(o), crest)
    z = np.where(o > width / 2, np.maximum(crest - (o - width / 2) / n_out, outer_base), z)
    z = np.where(o < -width / 2, np.maximum(crest - (-o - width / 2) / n_in, inner_base), z)
    return z


def conditions(n: int, *, hm0=1.0, tm10=4.0, q=1.0, min_fb=0.3) -> StationConditions:
    one = np.ones(n)
    return StationConditions(water_level=3.0 * one, hm0=hm0 * one, tm10=tm10 * one,
                             wave_angle=0.0 * one, q_allow=q * one, sea_level_rise=0.2 * one,
                             settlement=0.1 * one, roughness=1.0 * one,
                             min_freeboard=min_fb * one)


# ------------------------------------------------------------------ accuracy presets
def test_asprs_presets_split_the_class_rmse():
    # ASPRS Positional Accuracy Standards (2014), 10-cm class: RMSEz 0.10 m (from memory)
    a = accuracy_preset("asprs-10cm")
    assert math.hypot(a.systematic, a.random) == pytest.approx(0.10)
    assert a.systematic == pytest.approx(0.05)
    assert accuracy_from_settings(Settings()) == a
    custom = Settings(vertical_accuracy="custom", sigma_systematic=0.02, sigma_random=0.07)
    assert accuracy_from_settings(custom) == VerticalAccuracy(0.02, 0.07, "custom")
    with pytest.raises(ParameterError, match="custom"):
        accuracy_from_settings(Settings(sigma_random=0.07))


# ------------------------------------------------------------------ crest level vs Monte Carlo
def test_crest_sigma_matches_monte_carlo_of_noisy_dems():
    """200 noisy DEMs of an oblique straight levee (truth built here), sampled bilinearly
    and read as the run does; the analytic std must be within 20 % of the empirical."""
    acc = accuracy_preset("asprs-10cm")
    phi = math.radians(30.0)
    tx, ty = math.cos(phi), math.sin(phi)
    nx, ny = -ty, tx
    w = 260
    centre = np.arange(w) * CELL + CELL / 2
    gx, gy = np.meshgrid(centre, centre)
    x0 = y0 = w * CELL / 2
    truth = trapezoid((gx - x0) * nx + (gy - y0) * ny)
    s = np.arange(-25.0, 25.1, 2.3)          # stations along the levee
    off = np.arange(-60, 61) * CELL
    px = x0 + s[:, None] * tx + off[None, :] * nx
    py = y0 + s[:, None] * ty + off[None, :] * ny
    col, row = px / CELL, py / CELL          # pixel coordinates, cell centres at i + 0.5
    rng = np.random.default_rng(11)
    n_real = 200
    crest = np.empty((n_real, s.size))
    crest_rand = np.empty((n_real, s.size))
    analytic = np.empty((n_real, s.size))
    analytic_rand = np.empty((n_real, s.size))
    slope = np.empty((n_real, s.size))
    slope_an = np.empty((n_real, s.size))
    for r in range(n_real):
        e = rng.normal(0.0, acc.random, truth.shape)
        b = rng.normal(0.0, acc.systematic)
        m_rand = read_profiles(bilinear(truth + e, col, row), off, **KW)
        crest_rand[r] = m_rand.crest_level
        crest[r] = m_rand.crest_level + b    # the offset shifts every sample alike
        slope[r] = m_rand.outer_slope
        slope_an[r] = slope_sigma(m_rand.outer_slope_se, step=CELL, cell=CELL)
        tol = np.maximum(KW["crest_tolerance"], 3.0 * m_rand.noise)
        analytic[r], analytic_rand[r] = crest_sigma(m_rand.crest_cells, accuracy=acc,
                                                    step=CELL, cell=CELL, tolerance=tol)
    assert np.abs(crest_rand.mean(0) - 6.0).max() < 0.02     # the estimate is unbiased
    ratio_rand = crest_rand.std(0, ddof=1) / np.sqrt((analytic_rand**2).mean(0))
    ratio = crest.std(0, ddof=1) / np.sqrt((analytic**2).mean(0))
    assert abs(np.median(ratio_rand) - 1.0) < 0.20, ratio_rand
    assert np.mean(np.abs(ratio_rand - 1.0) < 0.25) > 0.8, ratio_rand
    assert abs(np.median(ratio) - 1.0) < 0.20, ratio
    # the outer slope's std from the widened fit error (truth n = 3)
    ratio_slope = slope.std(0, ddof=1) / np.sqrt((slope_an**2).mean(0))
    assert abs(np.median(slope.mean(0)) - 3.0) < 0.05
    assert abs(np.median(ratio_slope) - 1.0) < 0.20, ratio_slope
    # the systematic part does not shrink: the total is never below it
    assert (analytic >= acc.systematic).all()


@pytest.mark.parametrize("deg", [0.0, 30.0])
def test_effective_cells_match_exact_bilinear_weights(deg):
    """The mean of bilinear samples is linear in the cells: its variance per unit cell
    variance is exactly the sum of squared cell weights, found here by sampling each
    unit-impulse grid near the run; averaged over a 4 x 4 grid of sub-cell positions."""
    g = 24
    th = math.radians(deg)
    phases = (np.arange(4) + 0.5) / 4
    for n, step, tol in ((4, CELL, 0.05), (8, CELL, 0.05), (16, CELL, 0.05),
                         (16, CELL / 2, 0.08)):
        exact = []
        for fc in phases:
            for fr in phases:
                k = (np.arange(n) - (n - 1) / 2) * step / CELL
                col = g / 2 + fc + k * math.cos(th)
                row = g / 2 + fr + k * math.sin(th)
                near = [(i, j) for i in range(int(row.min()) - 2, int(row.max()) + 3)
                        for j in range(int(col.min()) - 2, int(col.max()) + 3)]
                total = 0.0
                for i, j in near:
                    unit = np.zeros((g, g))
                    unit[i, j] = 1.0
                    total += bilinear(unit, col, row).mean() ** 2
                exact.append(total)
        model = 1.0 / effective_cells(np.array([n]), step=step, cell=CELL)[0]
        assert model == pytest.approx(np.mean(exact), rel=tol), (n, step)


def test_random_part_shrinks_with_the_run_length():
    acc = VerticalAccuracy(0.0, 0.1)
    short, _ = crest_sigma(np.array([4]), accuracy=acc, step=CELL, cell=CELL)
    long, _ = crest_sigma(np.array([16]), accuracy=acc, step=CELL, cell=CELL)
    # variance ~ (L - 1/3) / L^2: 16 cells against 4 -> ratio sqrt((15 2/3 / 256) / (3 2/3 / 16))
    assert long[0] / short[0] == pytest.approx(math.sqrt((47 / 3 / 256) / (11 / 3 / 16)))
    sys_only, _ = crest_sigma(np.array([1000]), accuracy=VerticalAccuracy(0.04, 0.1),
                              step=CELL, cell=CELL)
    assert sys_only[0] == pytest.approx(0.04, rel=0.05)


# ------------------------------------------------------------------ slope through the freeboard
def test_slope_derivative_matches_the_eurotop_inverse_differentiated_by_hand():
    # EurOtop (2018) Eq. 5.10 (from memory), breaking branch, design approach a = 0.026,
    # b = 2.5: Rc = xi Hm0 / b * ln(a xi / (sqrt(tan a) q*))^(1/1.3), xi = tan a / sqrt(H/L0);
    # dRc/dtan(a) = Rc / tan(a) * (1 + (1/1.3) / (2 ln(...))), dn = -dtan(a) n^2
    n = np.array([3.0, 4.0, 6.0])
    cond = conditions(n.size, hm0=1.0, tm10=4.0, q=1.0, min_fb=0.3)
    g, h, t, q = 9.81, 1.0, 4.0, 1.0e-3
    ta = 1.0 / n
    xi = ta / np.sqrt(h / (g * t**2 / (2 * math.pi)))
    ln_b = np.log(0.026 / np.sqrt(ta) * xi / (q / math.sqrt(g * h**3)))
    rc = xi * h / 2.5 * ln_b ** (1 / 1.3)
    req = required_level(cond, outer_slope=n, crest_level=np.full(n.size, 6.0))
    assert req.freeboard_eurotop == pytest.approx(rc, rel=1e-9)   # breaking branch governs
    analytic = -(rc / ta) * (1 + (1 / 1.3) / (2 * ln_b)) / n**2
    fd = required_slope_derivative(cond, outer_slope=n, crest_level=np.full(n.size, 6.0),
                                   approach="design")
    assert fd == pytest.approx(analytic, rel=1e-6)
    # on a steep slope the non-breaking maximum governs (c = 0.1035, d = 1.35, from
    # memory): Rc = Hm0 / d * ln(c / q*)^(1/1.3), independent of the slope
    steep = required_level(conditions(1), outer_slope=np.array([1.5]),
                           crest_level=np.array([6.0]))
    rc_n = h / 1.35 * math.log(0.1035 / (q / math.sqrt(g * h**3))) ** (1 / 1.3)
    assert steep.freeboard_eurotop[0] == pytest.approx(rc_n, rel=1e-9)
    d_steep = required_slope_derivative(conditions(1), outer_slope=np.array([1.5]),
                                        crest_level=np.array([6.0]), approach="design")
    assert d_steep[0] == pytest.approx(0.0, abs=1e-9)
    # where the minimum freeboard governs, the slope does not move the requirement
    cond_min = conditions(2, hm0=0.2, tm10=2.0, q=10.0, min_fb=1.0)
    flat = required_slope_derivative(cond_min, outer_slope=np.array([3.0, 4.0]),
                                     crest_level=np.full(2, 6.0), approach="design")
    assert flat == pytest.approx([0.0, 0.0], abs=1e-12)


def test_linear_propagation_matches_sampled_slopes():
    # Monte Carlo of normal slope errors through the same requirement (small sigma: linear)
    n0, sn = 3.0, 0.05
    cond1 = conditions(1)
    d = required_slope_derivative(cond1, outer_slope=np.array([n0]),
                                  crest_level=np.array([6.0]), approach="design")
    ns = np.random.default_rng(5).normal(n0, sn, 20000)
    req = required_level(conditions(ns.size), outer_slope=ns,
                         crest_level=np.full(ns.size, 6.0)).required_level
    assert req.std() == pytest.approx(abs(d[0]) * sn, rel=0.03)


# ------------------------------------------------------------------ probability and verdict
def test_p_short_matches_scipy_normal():
    m = np.array([-0.3, -0.02, 0.0, 0.05, 0.4, np.nan])
    s = np.array([0.05, 0.06, 0.1, 0.02, 0.1, 0.1])
    ref = stats.norm.cdf(0.0, loc=m, scale=s)       # reference: scipy.stats.norm
    np.testing.assert_allclose(p_short(m, s), ref, rtol=1e-12, atol=1e-300)
    assert p_short(np.array([-0.1, 0.1]), np.array([0.0, 0.0])).tolist() == [1.0, 0.0]


def test_confidence_two_sigma_rule():
    c = confidence(np.array([0.5, 0.05, 0.05, -0.01, -0.3, np.nan]),
                   np.array([0.05, 0.01, 0.03, 0.05, 0.05, 0.05]), watch_band=0.10)
    assert c.tolist() == ["firm", "firm", "marginal", "marginal", "firm", None]


def _judged_levees(crest_above_required: float, n_real: int = 60):
    """Noisy profiles of a levee whose crest is set relative to its required level.

    Row 0 is the noise-free profile; rows 1.. add a survey offset and cell noise.
    """
    cond = conditions(n_real)
    req0 = required_level(conditions(1), outer_slope=np.array([3.0]),
                          crest_level=np.array([6.0])).required_level[0]
    off = np.arange(-100, 101) * CELL
    truth = trapezoid(off, crest=req0 + crest_above_required)
    acc = accuracy_preset("asprs-10cm")
    rng = np.random.default_rng(23)
    # per-profile survey offset plus the random part as bilinear sampling leaves it (2/3)
    z = (truth[None, :] + rng.normal(0.0, acc.systematic, (n_real, 1))
         + rng.normal(0.0, acc.random * 2 / 3, (n_real, off.size)))
    z[0] = truth
    prof = read_profiles(z, off, **KW)
    req = required_level(cond, outer_slope=prof.outer_slope, crest_level=prof.crest_level)
    margin = prof.crest_level - req.required_level
    unc = station_uncertainty(prof, cond, margin=margin, accuracy=acc, step=CELL, cell=CELL,
                              crest_tolerance=0.10, approach="design", watch_band=0.10)
    return margin, unc


def test_a_status_that_noise_alone_flips_is_marginal():
    margin, unc = _judged_levees(-0.03)
    # the constructed truth is 3 cm short: read without noise, a deficit, but marginal
    assert -0.04 < margin[0] < -0.02
    assert unc.confidence[0] == "marginal"
    assert 0.5 < unc.p_short[0] < 0.8
    # noise alone flips it in many realisations, and every flipped verdict is marginal
    flipped = margin[1:] >= 0
    assert 0.1 < flipped.mean() < 0.9
    assert (unc.confidence[1:][flipped] == "marginal").all()
    assert (unc.confidence[1:] == "marginal").mean() > 0.75


def test_a_clear_deficit_is_firm():
    margin, unc = _judged_levees(-0.50)
    assert (margin < 0).all()
    assert (unc.confidence == "firm").all()
    assert (unc.p_short > 0.999).all()


# ------------------------------------------------------------------ surveys over years
def test_rate_sigma_matches_weighted_polyfit_covariance():
    # reference: numpy.polyfit with weights 1/sigma and cov='unscaled'
    years = np.array([2015.0, 2018.0, 2021.0, 2024.0])
    sig = np.array([0.08, 0.06, 0.05, 0.05])
    y = np.array([6.10, 6.07, 6.05, 6.02])
    _, cov = np.polyfit(years, y, 1, w=1 / sig, cov="unscaled")
    assert rate_sigma(years, sig) == pytest.approx(math.sqrt(cov[0, 0]), rel=1e-9)
    # one column per station: the same, station by station
    both = rate_sigma(years, np.stack([sig, 2 * sig], 1))
    assert both == pytest.approx([math.sqrt(cov[0, 0]), 2 * math.sqrt(cov[0, 0])], rel=1e-9)
    # difference of two independent surveys: variances add; a shared offset cancels
    assert change_sigma(0.05, 0.05) == pytest.approx(0.05 * math.sqrt(2))
    assert change_sigma(0.05, 0.05, shared_systematic=0.05) == pytest.approx(0.0)


# ------------------------------------------------------------------ end to end
def test_demo_outputs_carry_the_uncertainty(demo, demo_result):
    import pyogrio

    result, gpkg = demo_result
    st = result.stations
    read = st["status"] != "no_data"
    assert np.isfinite(st.loc[read, "margin_sigma"]).all()
    assert (st.loc[read, "margin_sigma"] > 0.04).all()   # at least the systematic part
    assert set(st.loc[read, "confidence"]) <= {"firm", "marginal"}
    for low in demo["truth_data"]["low_stretches"]:
        sel = (st["chainage"] >= low["full_depth_from"]) & (
            st["chainage"] <= low["full_depth_to"])
        if low.get("depth", 1.0) >= 0.3:
            assert (st.loc[sel, "confidence"] == "firm").all(), low
    lay = pyogrio.read_dataframe(gpkg, layer="stretches")
    assert {"margin_sigma", "p_short", "confidence", "marginal_stations"} <= set(lay.columns)
    deficit = lay[lay["status"] == "deficit"]
    assert (deficit["p_short"] > 0.5).all()


def test_simulate_reports_empirical_sigmas(demo):
    from trajectory.assess import RunInputs, run

    s = Settings(simulate=40, spacing=250.0)
    res = run(RunInputs(str(demo["centreline"]), str(demo["dem"]), str(demo["sections"])), s)
    st = res.stations[res.stations["status"] != "no_data"]
    ratio = st["sim_crest_sigma"] / st["crest_sigma"]
    assert np.isfinite(ratio).all()
    # 40 realisations: the std itself is uncertain by about 1/sqrt(2*40) = 11 %
    assert abs(np.median(ratio) - 1.0) < 0.3
    again = run(RunInputs(str(demo["centreline"]), str(demo["dem"]), str(demo["sections"])), s)
    np.testing.assert_array_equal(again.stations["sim_margin_sigma"],
                                  res.stations["sim_margin_sigma"])


# ------------------------------------------------------------------ report fragment
def _small_stretches():
    import pandas as pd

    from trajectory.judgement.status import classify, merge_stretches
    from trajectory.judgement.uncertainty import confidence as conf
    from trajectory.judgement.uncertainty import stretch_uncertainty

    ch = np.arange(7) * 25.0
    margin = np.array([0.4, 0.4, -0.03, -0.02, 0.4, -0.6, 0.5])
    sigma = np.full(7, 0.06)
    status = classify(margin, watch_band=0.10)
    stations = pd.DataFrame({"chainage": ch, "margin": margin, "margin_sigma": sigma,
                             "p_short": p_short(margin, sigma), "status": status,
                             "confidence": conf(margin, sigma, watch_band=0.10)})
    s = merge_stretches(ch, status, margin, start=0.0, end=162.5)
    # the stretches layer's columns, as the GeoPackage writer fills them
    stretches = pd.DataFrame({"from_chainage": s.from_chainage, "to_chainage": s.to_chainage,
                              "status": s.status, "worst_margin": s.worst_margin,
                              **stretch_uncertainty(s, stations)})
    return stations, stretches


def test_report_marks_marginal_stretches():
    from trajectory.outputs.report_uncertainty import margin_figure, stretch_table_html

    stations, stretches = _small_stretches()
    frag = stretch_table_html(stretches)
    rows = [r for r in frag.split("<tr") if "<td" in r]
    # stretches: ok, deficit of two stations within noise of zero (marginal), ok,
    # a clear deficit (firm), ok
    assert len(rows) == len(stretches) == 5
    hatched = ["repeating-linear-gradient" in r for r in rows]
    marginal = ["<td>marginal</td>" in r for r in rows]
    assert hatched == marginal == [False, True, False, False, False]
    fig = margin_figure(stations, stretches)
    hatches = [p for p in fig.axes[0].patches if p.get_hatch()]
    assert len(hatches) == sum(marginal)


def test_report_section_is_built_from_the_geopackage(demo_result):
    import pyogrio

    from trajectory.outputs.report import load_report_data
    from trajectory.outputs.report_uncertainty import MARGINAL_MEANS, uncertainty_section

    _, out = demo_result
    title, frag = uncertainty_section(load_report_data(out))
    assert title == "How sure is each verdict" and MARGINAL_MEANS in frag
    s = pyogrio.read_dataframe(out, layer="stretches")
    rows = [r for r in frag.split("<tr") if "<td" in r]
    assert len(rows) == len(s)
    assert sum("repeating-linear-gradient" in r for r in rows) == int(
        (s["confidence"] == "marginal").sum())
    # the accuracy sentence gives the class recorded in the run metadata (default class)
    assert f"accuracy used: {Settings().vertical_accuracy}" in frag


def test_marginal_ground_is_the_marginal_stations_not_their_stretch():
    """Constructed truth: stations every 25 m; marginal ones at 75-100 m and at 225 m
    cover half-way to their neighbours; the line's end stations stop at the end."""
    from trajectory.outputs.report_uncertainty import marginal_runs

    ch = np.arange(0.0, 301.0, 25.0)
    marg = np.zeros(ch.size, bool)
    marg[[3, 4, 9, 12]] = True
    assert marginal_runs(ch, marg) == [(62.5, 112.5), (212.5, 237.5), (287.5, 300.0)]
    assert marginal_runs(ch, np.zeros(ch.size, bool)) == []
    assert marginal_runs(ch, np.ones(ch.size, bool)) == [(0.0, 300.0)]
