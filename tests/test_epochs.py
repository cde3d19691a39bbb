"""Epoch arithmetic (trajectory.judgement.epochs) against reference libraries and constructed truth.

References: scipy.stats.linregress and numpy.polyfit (least-squares slope, intercept,
standard error and the unscaled covariance); scipy.stats.t (coverage of a slope's
confidence interval, n - 2 degrees of freedom); pandas groupby (stretch figures).
Synthetic crest series are built here with a random state, so their truth is known.
"""

from __future__ import annotations

import datetime as dt

import numpy as np
import pandas as pd
import pytest
from scipy import stats

from trajectory.judgement.epochs import (
    EpochError,
    assess_epochs,
    check_order,
    decimal_year,
    fit_rates,
    match_stations,
    parse_dem_options,
    parse_epoch,
    projected_year,
    stretch_figures,
)
from trajectory.judgement.uncertainty import rate_sigma

YEARS = np.array([2012.0, 2015.5, 2017.0, 2019.0, 2021.25, 2024.0])


def _series(rate, *, n=400, sigma=0.01, level=6.0, random_state=3, years=YEARS):
    rng = np.random.default_rng(random_state)
    rate = np.broadcast_to(np.asarray(rate, float), (n,))
    return level - rate[:, None] * (years - years[0]) + rng.normal(0, sigma, (n, years.size))


def test_fit_matches_scipy_linregress_and_numpy_polyfit():
    z = _series(0.02, n=50, sigma=0.03)
    fit = fit_rates(YEARS, z)
    for i in range(z.shape[0]):
        ref = stats.linregress(YEARS, z[i])  # reference: scipy
        assert fit.slope[i] == pytest.approx(ref.slope, rel=1e-9, abs=1e-12)
        assert fit.intercept[i] == pytest.approx(ref.intercept, rel=1e-9)
        assert fit.slope_se[i] == pytest.approx(ref.stderr, rel=1e-7)
        p = np.polyfit(YEARS, z[i], 1)  # reference: numpy
        assert fit.slope[i] == pytest.approx(p[0], rel=1e-8, abs=1e-12)


def test_fit_leaves_out_missing_epochs_like_a_fit_of_the_rest():
    z = _series(0.02, n=3, sigma=0.03)
    z[0, 2] = np.nan
    z[1, [0, 5]] = np.nan
    z[2, 1:] = np.nan          # one epoch only: no rate
    fit = fit_rates(YEARS, z)
    for i in (0, 1):
        ok = np.isfinite(z[i])
        ref = stats.linregress(YEARS[ok], z[i, ok])
        assert fit.slope[i] == pytest.approx(ref.slope, rel=1e-9)
        assert fit.slope_se[i] == pytest.approx(ref.stderr, rel=1e-7)
    assert np.isnan(fit.slope[2]) and fit.n.tolist() == [5, 4, 1]


def test_two_epochs_give_a_slope_but_no_residual_standard_error():
    fit = fit_rates(np.array([2019.0, 2024.0]), np.array([[6.1, 6.0]]))
    assert fit.slope[0] == pytest.approx(-0.02)
    assert np.isnan(fit.slope_se[0])


def test_accuracy_standard_error_is_the_unscaled_polyfit_covariance():
    # numpy.polyfit(cov="unscaled") returns (X'X)^-1; Var(slope) = sigma^2 [(X'X)^-1]_00
    _, cov = np.polyfit(YEARS, np.zeros_like(YEARS) + np.arange(YEARS.size), 1, cov="unscaled")
    read = np.ones((YEARS.size, 3), bool)
    read[1, 1] = False                 # station 1 not read in the second survey
    read[1:, 2] = False                # station 2 read once: no rate
    se = rate_sigma(YEARS, np.full(3, 0.05)[None, :], read=read)
    assert se[0] == pytest.approx(0.05 * np.sqrt(cov[0, 0]), rel=1e-9)
    keep = np.arange(YEARS.size) != 1
    _, cov1 = np.polyfit(YEARS[keep], np.arange(keep.sum()), 1, cov="unscaled")
    assert se[1] == pytest.approx(0.05 * np.sqrt(cov1[0, 0]), rel=1e-9)
    assert np.isnan(se[2])
    # the run uses it: one station, four surveys on a straight line (no scatter), so
    # the standard error is the accuracy one
    ep = assess_epochs(YEARS, 6.0 - 0.01 * (YEARS - YEARS[0])[None, :], np.array([0.3]),
                       vertical_accuracy=0.05)
    assert ep.lowering_rate_se[0] == pytest.approx(0.05 * np.sqrt(cov[0, 0]), rel=1e-9)


def test_known_uniform_lowering_is_recovered_within_its_standard_error():
    true = 0.02
    z = _series(true, n=4000, sigma=0.02, random_state=11)
    fit = fit_rates(YEARS, z)
    tscore = np.abs(-fit.slope - true) / fit.slope_se
    # coverage of +-1 and +-2 standard errors follows Student's t with n - 2 dof (scipy)
    for k in (1.0, 2.0):
        expected = stats.t.cdf(k, YEARS.size - 2) - stats.t.cdf(-k, YEARS.size - 2)
        assert (tscore <= k).mean() == pytest.approx(expected, abs=0.025)
    # the stretch mean of 4000 stations is within its own standard error
    mean_se = np.sqrt(np.mean(fit.slope_se ** 2) / z.shape[0])
    assert abs(-fit.slope.mean() - true) < 2 * mean_se


def test_significant_lowering_gives_the_projected_year():
    z = _series(0.04, n=200, sigma=0.01)
    margin = np.full(200, 0.30)
    ep = assess_epochs(YEARS, z, margin, vertical_accuracy=0.05)
    assert ep.rate_significant.all()
    # margin 0.30 m at about 0.04 m/yr: the margin is gone about 7.5 years after 2024
    expected = np.floor(2024.0 + 0.30 / ep.lowering_rate)
    assert np.array_equal(ep.projected_year, expected)
    assert set(np.unique(ep.projected_year)) <= {2030.0, 2031.0, 2032.0}
    assert np.allclose(ep.change_first, z[:, -1] - z[:, 0])
    assert np.allclose(ep.change_previous, z[:, -1] - z[:, -2])


def test_stable_or_rising_crest_has_no_projected_year():
    for rate in (0.0, -0.03):
        z = _series(rate, n=500, sigma=0.01)
        ep = assess_epochs(YEARS, z, np.full(500, 0.2), vertical_accuracy=0.05)
        assert not ep.rate_significant.any(), rate
        assert np.isnan(ep.projected_year).all(), rate


def test_rate_below_the_terrain_models_accuracy_is_not_significant():
    # 0.005 m/yr over 12 years is 6 cm: within the noise of 5 cm surveys (se about 0.0065)
    z = _series(0.005, n=300, sigma=0.001)
    ep = assess_epochs(YEARS, z, np.full(300, 0.2), vertical_accuracy=0.05)
    assert not ep.rate_significant.any()
    assert np.isnan(ep.projected_year).all()
    # the same lowering is significant for surveys accurate to 1 cm
    ep = assess_epochs(YEARS, z, np.full(300, 0.2), vertical_accuracy=0.01)
    assert ep.rate_significant.all()


def test_projected_year_cases():
    p = projected_year(np.array([0.3, -0.1, 0.3, 0.3, np.nan]),
                       np.array([0.04, 0.0, 0.04, -0.02, 0.04]),
                       np.array([True, False, False, True, True]), year_now=2024.0)
    # 2024 + 7.5; already short; not significant; rising; unknown margin
    assert p[0] == 2031.0 and p[1] == 2024.0
    assert np.isnan(p[2:]).all()


def test_sudden_local_drop_is_found_at_its_chainage():
    chainage = np.arange(0.0, 2000.1, 25.0)
    years = np.array([2019.0, 2021.0, 2024.0])
    z = _series(0.01, n=chainage.size, sigma=0.01, years=years)
    drop = (chainage >= 1200) & (chainage <= 1275)
    z[drop, -1] -= 0.30
    ep = assess_epochs(years, z, np.full(chainage.size, 0.5), vertical_accuracy=0.05)
    assert np.array_equal(ep.significant_drop.astype(bool), drop)
    assert 1200 <= chainage[np.argmin(ep.change_previous)] <= 1275


def test_changes_skip_a_survey_in_which_the_station_was_not_read():
    years = np.array([2019.0, 2021.0, 2024.0])
    z = np.array([[6.2, np.nan, 6.0], [np.nan, 6.1, 6.0], [6.2, 6.1, np.nan]])
    ep = assess_epochs(years, z, np.array([0.1, 0.1, np.nan]))
    assert np.allclose(ep.change_previous[:2], [-0.2, -0.1])
    assert np.allclose(ep.change_first[:2], [-0.2, -0.1])
    assert ep.first_year.tolist() == [2019.0, 2021.0, 2019.0]
    assert np.isnan(ep.change_previous[2]) and np.isnan(ep.projected_year[2])


def test_single_undated_survey_gives_empty_epoch_figures():
    ep = assess_epochs(np.array([np.nan]), np.array([[6.0], [5.0]]), np.array([0.2, -0.4]))
    assert ep.epochs_used.tolist() == [1, 1]
    for k in ("change_previous", "change_first", "lowering_rate", "projected_year"):
        assert np.isnan(getattr(ep, k)).all(), k


def test_stretch_figures_match_pandas_groupby():
    rng = np.random.default_rng(5)
    rate = rng.normal(0.01, 0.01, 30)
    rate[[3, 17]] = np.nan
    proj = np.where(rng.random(30) < 0.3, rng.integers(2026, 2060, 30), np.nan)
    first, last = np.array([0, 8, 20, 29]), np.array([7, 19, 28, 29])
    got = stretch_figures(first, last, rate, proj)
    grp = np.repeat(np.arange(4), last - first + 1)
    df = pd.DataFrame({"g": grp, "r": rate, "p": proj}).groupby("g")
    assert np.allclose(got["mean_lowering_rate"], df["r"].mean(), equal_nan=True)
    assert np.allclose(got["worst_lowering_rate"], df["r"].max(), equal_nan=True)
    assert np.allclose(got["earliest_projected_year"], df["p"].min(), equal_nan=True)


def test_dates_and_their_order():
    assert decimal_year("2019") == 2019.0
    doy = dt.date(2019, 7, 2).timetuple().tm_yday  # reference: the standard library
    assert decimal_year("2019-07-02") == pytest.approx(2019 + (doy - 1) / 365)
    assert parse_epoch("2019=a/dem.tif") == ("2019", "a/dem.tif")
    assert parse_epoch("c:/x=y.tif") == (None, "c:/x=y.tif")
    with pytest.raises(EpochError, match="given twice"):
        check_order(["2019", "2021", "2019-01-01"], ["a", "b", "c"])
    with pytest.raises(EpochError, match="oldest first"):
        check_order(["2021", "2019"], ["a", "b"])
    with pytest.raises(EpochError, match="not a valid date"):
        decimal_year("2019-02-30")


def test_parse_dem_options():
    assert parse_dem_options(["dem.tif"]) == ("dem.tif", None, ())
    path, date, earlier = parse_dem_options(["2019=a.tif", "2024=b.tif"], ["2015=old.gpkg"])
    assert (path, date) == ("b.tif", "2024")
    assert [(e.label, e.kind) for e in earlier] == [("2015", "result"), ("2019", "dem")]
    with pytest.raises(EpochError, match="needs its date"):
        parse_dem_options(["2019=a.tif", "b.tif"])
    with pytest.raises(EpochError, match="oldest first"):
        parse_dem_options(["2019=a.tif"], ["2020=old.gpkg"])
    with pytest.raises(EpochError, match="no terrain model"):
        parse_dem_options([])


def test_station_matching_refuses_incompatible_layouts():
    c = np.arange(0.0, 1000.1, 25.0)
    xy = np.stack([c, np.zeros_like(c)], 1)
    assert np.array_equal(match_stations(c, xy, c, xy, source="old"), np.arange(c.size))
    # a multiple of the old spacing, and a shorter earlier line, are fine
    c50 = c[::2]
    assert np.array_equal(match_stations(c50, xy[::2], c, xy, source="old"),
                          np.arange(0, c.size, 2))
    part = match_stations(c, xy, c[:10], xy[:10], source="old")
    assert (part[:10] == np.arange(10)).all() and (part[10:] == -1).all()
    with pytest.raises(EpochError, match="spacing"):
        match_stations(np.arange(0.0, 1000.1, 10.0), np.zeros((101, 2)), c, xy, source="old")
    with pytest.raises(EpochError, match="no station chainage in common"):
        match_stations(c + 12.5, xy, c, xy, source="old")
    with pytest.raises(EpochError, match="apart"):
        match_stations(c, xy[::-1], c, xy, source="old")


def test_summary_line_names_the_earliest_year_ahead():
    from trajectory.judgement.epochs import summary_text

    line = summary_text(["2019", "2024"], np.array([1, 0, 1]), np.array([2031.0, 2024.0, 2040.0]),
                        np.array([0.2, -0.1, 0.4]))
    assert line.endswith("2 station(s) with a significant lowering; earliest year a margin "
                         "runs out: 2031")
    assert summary_text(["2024"], np.array([0]), np.array([np.nan]), np.array([0.1])) == ""


def test_single_survey_run_keeps_its_outputs_and_adds_an_epochs_layer(demo_result):
    import pyogrio

    result, out = demo_result
    ep = pyogrio.read_dataframe(out, layer="epochs")
    assert len(ep) == len(result.stations) and (ep["epoch"] == "").all()
    st = result.stations
    assert st["lowering_rate"].isna().all() and st["projected_year"].isna().all()
    assert (st["epochs_used"] == np.isfinite(st["crest_level"]).astype(int)).all()
