"""Frequency lines, the return period held, and the van Dantzig (1956) optimum.

External checks: scipy.stats.gumbel_r (Gumbel quantiles), numpy.interp on log T
(table lines), the definition of the decimation height, the forward requirement
(the solver's answer reproduces the crest), scipy.optimize.minimize_scalar (the
van Dantzig total cost).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import optimize, stats

from trajectory.formulas.frequency import Lines, decimation_level, gumbel_level, no_lines
from trajectory.judgement.economics import total_cost, van_dantzig
from trajectory.requirement.crest_level import StationConditions, required_level
from trajectory.requirement.held import (
    _conditions_at,
    solve_held,
    station_held,
    stretch_held,
)


def _table_lines(t, level, hm0=None, tm10=None, *, standard=1000.0, n=1, extrapolate=False):
    base = no_lines(n)
    row = np.log10(np.asarray(t, float))[None, :].repeat(n, 0)

    def mat(v):
        return (np.full(row.shape, np.nan) if v is None
                else np.asarray(v, float)[None, :].repeat(n, 0))
    return Lines(kind=np.full(n, "table", dtype=object), log_t=row, level=mat(level),
                 hm0=mat(hm0), tm10=mat(tm10), level_ref=base.level_ref,
                 return_period_ref=base.return_period_ref,
                 decimation_height=base.decimation_height,
                 gumbel_location=base.gumbel_location, gumbel_scale=base.gumbel_scale,
                 standard=np.full(n, standard), extrapolate=extrapolate)


def _conditions(n, *, method="overtopping"):
    one = np.ones(n)
    return StationConditions(
        water_level=np.full(n, np.nan), hm0=0.6 * one, tm10=3.0 * one, wave_angle=0 * one,
        q_allow=1.0 * one, sea_level_rise=0.3 * one, settlement=0.1 * one, roughness=one,
        min_freeboard=0.0 * one, method=np.full(n, method, dtype=object),
        fixed_freeboard=0.8 * one, near_structure=np.zeros(n, bool), upstream_share=0 * one,
        period_from_tp=np.zeros(n, bool))


# ------------------------------------------------------------------ the lines
def test_gumbel_level_matches_scipy_gumbel_r_ppf():
    """h(T) = mu - beta ln(-ln(1 - 1/T)) is scipy's gumbel_r quantile at 1 - 1/T."""
    t = np.array([2.0, 10.0, 100.0, 1250.0, 1e5])
    got = gumbel_level(t, 3.1, 0.27)
    want = stats.gumbel_r.ppf(1.0 - 1.0 / t, loc=3.1, scale=0.27)
    np.testing.assert_allclose(got, want, rtol=0, atol=1e-9)


def test_table_line_is_numpy_interp_on_log_return_period():
    t = np.array([10.0, 100.0, 1000.0, 10000.0])
    wl = np.array([3.6, 3.9, 4.25, 4.5])
    hm0 = np.array([0.4, 0.5, 0.62, 0.7])
    q = np.geomspace(10.0, 10000.0, 37)
    lines = _table_lines(t, wl, hm0, n=q.size)
    level, h, tm = lines.evaluate(q)
    np.testing.assert_allclose(level, np.interp(np.log(q), np.log(t), wl), atol=1e-12)
    np.testing.assert_allclose(h, np.interp(np.log(q), np.log(t), hm0), atol=1e-12)
    assert np.isnan(tm).all()  # the table has no period: the section's own is used


def test_decimation_line_by_its_definition():
    """Level at the reference, and one decimation height per factor ten."""
    ref, t_ref, d = 4.35, 1000.0, 0.28
    assert decimation_level(t_ref, ref, t_ref, d) == pytest.approx(ref, abs=1e-12)
    t = np.array([3.0, 47.0, 2500.0])
    np.testing.assert_allclose(decimation_level(10 * t, ref, t_ref, d)
                               - decimation_level(t, ref, t_ref, d), d, atol=1e-12)


# --------------------------------------------------------- the return period held
T = np.array([10.0, 100.0, 1000.0, 10000.0])
WL = np.array([3.6, 3.9, 4.2, 4.5])
HM0 = np.array([0.45, 0.52, 0.60, 0.68])
TM10 = np.array([2.6, 2.8, 3.0, 3.2])


@pytest.mark.parametrize("method", ["overtopping", "runup", "constant"])
def test_held_return_period_reproduces_the_crest_through_the_requirement(method):
    """Synthetic line and slope: the requirement at the held T equals the crest to 1 mm."""
    crest = np.linspace(4.95, 5.85, 19)
    n = crest.size
    lines = _table_lines(T, WL, HM0, TM10, n=n)
    cond = _conditions(n, method=method)
    slope = np.full(n, 3.0)
    out = station_held(lines, cond, crest_level=crest, crest_sigma=np.zeros(n),
                       outer_slope=slope, tan_alpha=1 / slope)
    inside = out["held_range"] == "within"
    assert inside.sum() >= 5
    t = out["return_period_held"][inside]
    c = _conditions_at(cond.take(inside), lines.take(inside), t, np.zeros(inside.sum(), bool))
    req = required_level(c, outer_slope=slope[inside], crest_level=crest[inside],
                         tan_alpha=1 / slope[inside]).required_level
    np.testing.assert_allclose(req, crest[inside], atol=1e-3)
    # a higher crest holds a longer return period (monotone)
    assert np.all(np.diff(out["return_period_held"]) >= -1e-9)
    # outside the line's range: the bound, flagged, never an extrapolated number
    assert set(out["held_range"][~inside]) <= {"above", "below"}
    np.testing.assert_array_equal(out["return_period_held"][out["held_range"] == "above"],
                                  10000.0)
    np.testing.assert_array_equal(out["return_period_held"][out["held_range"] == "below"],
                                  10.0)
    # the allowances make the levee hold less; crest - 2 sigma with sigma 0 is the crest
    fut = out["return_period_held_future"]
    ok = np.isfinite(fut) & inside
    assert np.all(fut[ok] <= out["return_period_held"][ok])
    np.testing.assert_allclose(out["return_period_held_low"], out["return_period_held"])


def test_above_and_below_the_range_and_extrapolation_flag():
    lines = _table_lines(T, WL, HM0, TM10, n=3)
    cond = _conditions(3, method="constant")  # required = level + 0.8 m
    crest = np.array([3.0, 6.0, 4.5 + 0.8 + 0.1])
    out = station_held(lines, cond, crest_level=crest, crest_sigma=np.zeros(3),
                       outer_slope=np.full(3, 3.0))
    assert list(out["held_range"]) == ["below", "above", "above"]
    ext = _table_lines(T, WL, HM0, TM10, n=3, extrapolate=True)
    out = station_held(ext, cond, crest_level=crest, crest_sigma=np.zeros(3),
                       outer_slope=np.full(3, 3.0))
    # 0.1 m above the table's top at 0.3 m per decade: 10^(1/3) beyond, flagged
    assert out["held_range"][2] == "extrapolated"
    assert out["return_period_held"][2] == pytest.approx(1e4 * 10 ** (0.1 / 0.3), rel=1e-3)
    assert list(out["held_range"][:2]) == ["below", "above"]


def test_no_line_gives_empty_fields():
    cond = _conditions(2)
    out = station_held(no_lines(2), cond, crest_level=np.array([5.0, 6.0]),
                       crest_sigma=np.zeros(2), outer_slope=np.full(2, 3.0))
    assert np.isnan(out["return_period_held"]).all()
    assert list(out["held_range"]) == ["", ""]


def test_solver_on_a_known_root():
    """req(T) = 2 + log10 T: the root of req = target is 10^(target - 2)."""
    target = np.array([2.5, 3.0, 5.9, 1.0, 9.0])

    def req(rows, t):
        return 2.0 + np.log10(t)
    t, flag = solve_held(req, target, np.full(5, 1.0), np.full(5, 1e6))
    np.testing.assert_allclose(t[:3], 10 ** (target[:3] - 2), rtol=1e-3)
    assert list(flag) == ["within"] * 3 + ["below", "above"]


def test_stretch_minimum_and_its_place():
    held = np.array([500.0, 80.0, np.nan, 3000.0, 90.0, 90.0, np.nan])
    rng = np.array(["within"] * 7, dtype=object)
    out, idx = stretch_held(np.array([0, 3, 6]), np.array([2, 5, 6]),
                            np.arange(7) * 25.0, held, rng, np.full(7, 100.0))
    np.testing.assert_array_equal(idx, [1, 4, -1])
    np.testing.assert_array_equal(out["min_return_period_held"][:2], [80.0, 90.0])
    np.testing.assert_array_equal(out["min_held_chainage"][:2], [25.0, 100.0])
    np.testing.assert_array_equal(out["below_standard"][:2], [1.0, 1.0])
    assert np.isnan(out["min_return_period_held"][2])


# ---------------------------------------------------------------- van Dantzig
@pytest.mark.parametrize("alpha,damage,p0,delta,ip", [
    (2.6, 2.4e10, 1 / 100.0, 0.015, 4.0e7),   # orders of the 1956 paper, from memory
    (4.64, 4.0e8, 1 / 700.0, 0.02, 1.2e7),
    (8.2, 2.5e8, 1 / 50.0, 0.03, 5.0e6),
])
def test_van_dantzig_closed_form_is_the_numerical_minimum(alpha, damage, p0, delta, ip):
    """X* = ln(alpha V P0 / (delta I')) / alpha minimises I0 + I' X + V P0 e^-aX / delta,
    and P* = delta I' / (alpha V) (van Dantzig 1956, Econometrica 24(3))."""
    x, p_star = van_dantzig(alpha=alpha, damage=damage, p0=p0, delta=delta, i_prime=ip)
    res = optimize.minimize_scalar(
        lambda z: float(total_cost(z, i0=1e6, i_prime=ip, damage=damage, p0=p0,
                                   alpha=alpha, delta=delta)),
        bounds=(-5.0, 10.0), method="bounded", options={"xatol": 1e-6})
    assert float(x) == pytest.approx(res.x, abs=1e-3)
    assert float(p_star) == pytest.approx(delta * ip / (alpha * damage), rel=1e-12)
    assert p0 * math.exp(-alpha * float(x)) == pytest.approx(float(p_star), rel=1e-9)


def test_van_dantzig_without_cost_has_no_optimum():
    x, p = van_dantzig(alpha=3.0, damage=1e9, p0=1e-3, delta=0.02, i_prime=0.0)
    assert np.isnan(x) and np.isnan(p)


# ------------------------------------------------------------------ bad input
COND_HEAD = ("section_id,from_chainage,to_chainage,water_level,hm0,tm10,q_allow,"
             "sea_level_rise,settlement,standard_return_period,standard_probability,"
             "flood_damage,discount_rate\n")
FREQ = ("section_id,return_period,water_level\n"
        "A,10,3.6\nA,100,3.9\nA,1000,4.2\nB,10,3.7\nB,100,4.0\nB,1000,4.3\n")


def _write(tmp_path, name, text):
    p = tmp_path / name
    p.write_text(text, encoding="utf-8")
    return p


def _read(tmp_path, cond_rows, freq=FREQ):
    from trajectory.inputs.frequency_table import read_frequency
    from trajectory.inputs.sources import read_conditions

    f = read_frequency(_write(tmp_path, "freq.csv", freq))
    return read_conditions(_write(tmp_path, "cond.csv", COND_HEAD + cond_rows), frequency=f)


def _only_message(excinfo):
    findings = excinfo.value.findings
    assert len(findings) == 1, findings
    return findings[0]


def test_good_tables_give_the_design_level_at_the_standard(tmp_path):
    c = _read(tmp_path, "A,0,100,,0.5,3,1,0.2,0.1,1000,,,\nB,100,200,,0.5,3,1,0.2,0.1,,0.01,,\n")
    np.testing.assert_allclose(c.table["water_level"], [4.2, 4.0], atol=1e-12)
    assert list(c.table["water_level_source"]) == ["table", "table"]
    np.testing.assert_allclose(c.table["standard_return_period"], [1000.0, 100.0])


def test_non_increasing_return_periods_are_refused_naming_file_row_column(tmp_path):
    from trajectory.errors import ConditionsError
    from trajectory.inputs.frequency_table import read_frequency

    bad = FREQ.replace("A,1000,4.2", "A,100,4.2")
    with pytest.raises(ConditionsError) as e:
        read_frequency(_write(tmp_path, "freq.csv", bad))
    msg = _only_message(e)
    assert "freq.csv" in str(e.value)
    assert "row 4, column return_period" in msg and "increasing" in msg


def test_section_without_a_line(tmp_path):
    from trajectory.errors import ConditionsError

    with pytest.raises(ConditionsError) as e:
        _read(tmp_path, "C,0,100,,0.5,3,1,0.2,0.1,1000,,,\n")
    msg = _only_message(e)
    assert "cond.csv" in str(e.value)
    assert msg.startswith("row 2, column standard_return_period") and "no frequency line" in msg


def test_standard_outside_the_table(tmp_path):
    from trajectory.errors import ConditionsError

    with pytest.raises(ConditionsError) as e:
        _read(tmp_path, "A,0,100,,0.5,3,1,0.2,0.1,5000,,,\n")
    msg = _only_message(e)
    assert msg.startswith("row 2, column standard_return_period")
    assert "freq.csv" in msg and "rows 2-4" in msg and "10-1000 years" in msg


def test_both_standard_columns(tmp_path):
    from trajectory.errors import ConditionsError

    with pytest.raises(ConditionsError) as e:
        _read(tmp_path, "A,0,100,4.2,0.5,3,1,0.2,0.1,1000,0.001,,\n")
    msg = _only_message(e)
    assert msg.startswith("row 2, columns standard_return_period and standard_probability")


def test_negative_damage(tmp_path):
    from trajectory.errors import ConditionsError

    with pytest.raises(ConditionsError) as e:
        _read(tmp_path, "A,0,100,4.2,0.5,3,1,0.2,0.1,1000,,-5,0.02\n")
    msg = _only_message(e)
    assert msg.startswith("row 2, column flood_damage") and "-5" in msg


def test_cli_reports_a_bad_frequency_table_without_traceback(demo, tmp_path):
    from click.testing import CliRunner

    from trajectory.frontends.cli import main

    bad = _write(tmp_path, "f.csv", demo["frequency"].read_text().replace(
        "VN-01,100,3.9", "VN-01,100,3.1"))
    r = CliRunner().invoke(main, [
        "assess", "--centreline", str(demo["centreline"]), "--dem", str(demo["dem"]),
        "--conditions", str(demo["standards"]), "--frequency", str(bad),
        "--out", str(tmp_path / "o.gpkg"), "--quiet"])
    assert r.exit_code == 2, r.output
    assert "f.csv" in r.output and "row 3, column water_level" in r.output
    assert "Traceback" not in r.output
    assert not (tmp_path / "o.gpkg").exists()


# ------------------------------------------------------------------ the demo
def test_demo_reads_design_levels_off_its_lines(demo, demo_result):
    """The demo's lines pass through sections.csv's levels at the standard (by design)."""
    import pandas as pd

    res, _ = demo_result
    st = res.stations
    given = pd.read_csv(demo["sections"]).set_index("section_id")["water_level"]
    np.testing.assert_allclose(st["water_level"], given.loc[st["section_id"]].to_numpy(),
                               atol=1e-9)
    src = st.groupby("section_id")["water_level_source"].first().to_dict()
    assert src == {"VN-01": "table", "VN-02": "table", "VN-03": "decimation",
                   "VN-04": "given"}
    # the planted low stretches hold less than the standard, the rest more
    low = (st["chainage"] > 470) & (st["chainage"] < 570)
    assert (st.loc[low, "return_period_held_future"] < 1000).all()
    assert (res.economics["optimal_probability"] > 0).all()
    assert set(res.economics["section_id"]) == {"VN-01", "VN-03"}
