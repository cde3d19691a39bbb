"""Several surveys end to end: the invented scenario's planted lowering comes out.

The truth is the synthetic generator's (trajectory.scenario.synthetic): a base lowering of
spec.lowering_rate and a faster stretch (spec.rate_stretches), surveys in
spec.epochs and spec.survey_year; one extra latest survey with a local drop
planted here. Mismatched inputs are refused with a message naming the cause.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import pyogrio
import pytest
import rasterio
from click.testing import CliRunner

from trajectory.assess import RunInputs, assess, run
from trajectory.frontends.cli import EXIT_INPUT, main
from trajectory.judgement.epochs import Epoch, EpochError
from trajectory.outputs.report import load_report_data
from trajectory.outputs.report_epochs import crest_epochs_figure, epoch_section
from trajectory.outputs.schema import EPOCH_STATION_FIELDS, field_names
from trajectory.params import Settings
from trajectory.scenario.synthetic import (
    LeveeSpec,
    LowStretch,
    make_centreline,
    write_dem,
    write_scenario,
)

pytestmark = pytest.mark.slow  # writes four 3 km terrain models (about 10 s)

DROP = (1000.0, 1100.0, 0.30, 10.0)   # from, to, depth (m), taper (m)


@pytest.fixture(scope="module")
def series(tmp_path_factory):
    """The demo scenario with its earlier surveys, plus a latest survey with a local drop."""
    out = tmp_path_factory.mktemp("epochs")
    spec = LeveeSpec()
    line = make_centreline(spec.length_m)
    paths = write_scenario(out, spec=spec, centreline=line, epochs=True)
    dropped = replace(spec, low_stretches=spec.low_stretches + (LowStretch(*DROP),))
    paths["dem_drop"] = write_dem(out / "dem_drop.tif", line, spec=dropped)
    return spec, paths


def _inputs(paths, dems, **kw):
    earlier = tuple(Epoch(str(y), str(paths[k])) for y, k in dems[:-1])
    y, k = dems[-1]
    return RunInputs(str(paths["centreline"]), str(paths[k]), str(paths["sections"]),
                     dem_date=str(y), earlier=earlier, **kw)


@pytest.fixture(scope="module")
def three(series, tmp_path_factory):
    spec, paths = series
    out = tmp_path_factory.mktemp("three") / "r.gpkg"
    res = assess(_inputs(paths, [(2019, "dem_2019"), (2021, "dem_2021"), (2024, "dem")]), out)
    return res, out


def test_planted_rates_are_recovered_within_their_standard_error(series, three):
    spec, _ = series
    res, _ = three
    st = res.stations
    c = st["chainage"].to_numpy()
    fast = spec.rate_stretches[0]
    inside = (c >= fast.from_chainage + fast.taper) & (c <= fast.to_chainage - fast.taper)
    others = (c < fast.from_chainage - 25) | (c > fast.to_chainage + 25)
    rate, se = st["lowering_rate"].to_numpy(), st["lowering_rate_se"].to_numpy()
    for sel, truth in ((inside, fast.rate), (others, spec.lowering_rate)):
        ok = sel & np.isfinite(rate)
        assert ok.sum() >= 5
        # per station within 2 standard errors (about 95 %), the mean well within one
        assert (np.abs(rate[ok] - truth) <= 2 * se[ok]).mean() >= 0.9
        assert abs(rate[ok].mean() - truth) < se[ok].mean()
    # 0.03 m/yr stands out against 0.05 m surveys (2.1 standard errors; 5 stations in 7
    # pass 1.645 here), 0.01 m/yr (0.7 standard errors) rarely does
    assert st["rate_significant"].to_numpy()[inside].mean() >= 0.6
    assert st["rate_significant"].to_numpy()[others].mean() <= 0.1


def test_projected_year_follows_margin_over_rate(three):
    res, _ = three
    st = res.stations
    go = (st["rate_significant"] == 1) & (st["margin"] >= 0)
    assert go.sum() >= 3
    expect = np.floor(2024.0 + st.loc[go, "margin"] / st.loc[go, "lowering_rate"])
    assert np.array_equal(st.loc[go, "projected_year"].to_numpy(), expect.to_numpy())
    short = st["margin"] < 0
    assert (st.loc[short, "projected_year"] == 2024.0).all()
    quiet = (st["rate_significant"] == 0) & (st["margin"] >= 0)
    assert st.loc[quiet, "projected_year"].isna().all()


def test_outputs_carry_the_epoch_figures(series, three):
    spec, _ = series
    res, out = three
    n = len(res.stations)
    st = pyogrio.read_dataframe(out, layer="stations")
    for f in EPOCH_STATION_FIELDS:
        assert f.name in st.columns
    ep = pyogrio.read_dataframe(out, layer="epochs")
    assert len(ep) == 3 * n and sorted(ep["epoch"].unique()) == ["2019", "2021", "2024"]
    latest = ep[ep["epoch"] == "2024"].sort_values("chainage")
    assert np.allclose(latest["crest_level"], res.stations["crest_level"], equal_nan=True)
    first = ep[ep["epoch"] == "2019"].sort_values("chainage")
    assert np.allclose(latest["crest_level"].to_numpy() - first["crest_level"].to_numpy(),
                       res.stations["change_first"], equal_nan=True)
    stretches = pyogrio.read_dataframe(out, layer="stretches")
    # the stretch holding the fast lowering gets the earliest year among the ok stretches
    fast = spec.rate_stretches[0]
    s = stretches[(stretches.from_chainage <= fast.from_chainage)
                  & (stretches.to_chainage >= fast.to_chainage)].iloc[0]
    assert s["worst_lowering_rate"] > 0.025 and 2024 < s["earliest_projected_year"] < 2060
    table = (out.with_suffix(".csv")).read_text().splitlines()
    header = next(line for line in table if not line.startswith("#"))
    assert "lowering_rate" in header and "projected_year" in header
    meta = pyogrio.read_dataframe(out, layer="run_metadata")
    kv = dict(zip(meta["key"], meta["value"], strict=True))
    assert kv["epochs"].startswith("2019 (dem_2019.tif); 2021 (dem_2021.tif); 2024")


def test_report_figures_plot_every_epoch(three):
    res, out = three
    data = load_report_data(out)
    title, frag = epoch_section(data)
    # the crest level per survey, the change at every station, the projected year
    assert title == "Change between surveys" and frag.count("data:image/png;base64,") == 3
    fig = crest_epochs_figure(data.layers["epochs"], data.stations)
    ax = fig.axes[0]
    assert len(ax.lines) == 4  # three surveys and the required level
    # the oldest survey's line is the in-memory crest of that survey, read back from the file
    assert np.allclose(ax.lines[0].get_ydata(), res.epochs.crest[:, 0], equal_nan=True)
    assert np.allclose(ax.lines[-1].get_ydata(), res.stations["required_level"],
                       equal_nan=True)


def test_single_survey_report_has_no_epoch_section(demo_result):
    _, out = demo_result
    assert epoch_section(load_report_data(out)) is None


def test_same_terrain_model_twice_is_stable(series):
    _, paths = series
    res = run(_inputs(paths, [(2019, "dem"), (2024, "dem")]))
    st = res.stations
    assert np.allclose(st["lowering_rate"].dropna(), 0.0, atol=1e-9)
    assert (st["rate_significant"] == 0).all()
    assert st.loc[st["margin"] >= 0, "projected_year"].isna().all()


def test_sudden_local_drop_is_found_at_its_chainage(series):
    spec, paths = series
    res = run(_inputs(paths, [(2019, "dem_2019"), (2021, "dem_2021"), (2024, "dem_drop")]))
    st = res.stations
    c = st["chainage"]
    flagged = st["significant_drop"] == 1
    # every station of the drop's full depth is flagged ...
    full = c.between(DROP[0] + DROP[3], DROP[1] - DROP[3])
    assert full.sum() >= 3 and flagged[full].all()
    # ... and outside it only the fast-lowering stretch may be (0.09 m in 3 years plus noise)
    fast = spec.rate_stretches[0]
    elsewhere = ~c.between(DROP[0], DROP[1]) & ~c.between(fast.from_chainage, fast.to_chainage)
    assert not flagged[elsewhere].any()
    assert DROP[0] <= st.loc[st["change_previous"].idxmin(), "chainage"] <= DROP[1]


def test_compare_with_an_earlier_result_matches_by_chainage(series, tmp_path):
    _, paths = series
    old = tmp_path / "old.gpkg"
    base = RunInputs(str(paths["centreline"]), str(paths["dem_2019"]), str(paths["sections"]))
    first = assess(base, old)
    later = RunInputs(str(paths["centreline"]), str(paths["dem"]), str(paths["sections"]),
                      dem_date="2024", earlier=(Epoch("2019", str(old), "result"),))
    res = run(later)
    assert np.allclose(res.epochs.crest[:, 0], first.stations["crest_level"], equal_nan=True)
    assert res.epochs.sources == ("old.gpkg", "dem.tif")
    # the earlier result's stations cannot be matched to a run at another spacing
    with pytest.raises(EpochError, match="spacing"):
        run(later, Settings(spacing=10.0))


def test_terrain_model_in_another_crs_is_refused(series, tmp_path):
    _, paths = series
    other = tmp_path / "dem_2019_other_crs.tif"
    with rasterio.open(paths["dem_2019"]) as src:
        prof = src.profile | {"crs": "EPSG:25832"}
        with rasterio.open(other, "w", **prof) as dst:
            dst.write(src.read())
    inputs = RunInputs(str(paths["centreline"]), str(paths["dem"]), str(paths["sections"]),
                       dem_date="2024", earlier=(Epoch("2019", str(other)),))
    with pytest.raises(EpochError, match="EPSG:25832.*EPSG:32632"):
        run(inputs)


def _cli(paths, out, *extra):
    return ["assess", "--centreline", str(paths["centreline"]), "--conditions",
            str(paths["sections"]), "--out", str(out), "--quiet", *extra]


def test_cli_refuses_wrong_order_duplicates_and_undated(series, tmp_path):
    _, paths = series
    d19, d24 = paths["dem_2019"], paths["dem"]
    cases = {
        "oldest first": ["--dem", f"2024={d24}", "--dem", f"2019={d19}"],
        "given twice": ["--dem", f"2024={d19}", "--dem", f"2024={d24}"],
        "needs its date": ["--dem", f"2019={d19}", "--dem", str(d24)],
    }
    for i, (msg, args) in enumerate(cases.items()):
        res = CliRunner().invoke(main, _cli(paths, tmp_path / f"r{i}.gpkg", *args))
        assert res.exit_code == EXIT_INPUT, res.output
        assert msg in res.output and "Traceback" not in res.output
        assert not (tmp_path / f"r{i}.gpkg").exists()


def test_cli_run_file_lists_the_surveys(series, tmp_path):
    _, paths = series
    cfg = tmp_path / "run.toml"
    cfg.write_text("[inputs]\ndem = [" + ", ".join(
        f'"{y}={paths[k].as_posix()}"' for y, k in ((2019, "dem_2019"), (2024, "dem")))
        + "]\n[parameters]\nspacing = 100.0\n")
    out = tmp_path / "r.gpkg"
    res = CliRunner().invoke(main, _cli(paths, out, "--config", str(cfg)))
    assert res.exit_code == 0, res.output
    ep = pyogrio.read_dataframe(out, layer="epochs")
    assert sorted(ep["epoch"].unique()) == ["2019", "2024"]
    assert list(ep.columns[:-1]) == field_names("epochs")


def test_cli_compare_with_an_earlier_result(series, tmp_path):
    _, paths = series
    old = tmp_path / "old.gpkg"
    res = CliRunner().invoke(main, _cli(paths, old, "--dem", str(paths["dem_2019"]),
                                        "--spacing", "50"))
    assert res.exit_code == 0, res.output
    out = tmp_path / "new.gpkg"
    res = CliRunner().invoke(main, _cli(paths, out, "--dem", f"2024={paths['dem']}",
                                        "--compare", f"2019={old}", "--spacing", "50"))
    assert res.exit_code == 0, res.output
    before = pyogrio.read_dataframe(old, layer="stations")
    ep = pyogrio.read_dataframe(out, layer="epochs")
    assert np.allclose(ep.loc[ep["epoch"] == "2019", "crest_level"], before["crest_level"],
                       equal_nan=True)
    # the same comparison at the default 25 m spacing is refused, with the reason
    res = CliRunner().invoke(main, _cli(paths, tmp_path / "r.gpkg", "--dem",
                                        f"2024={paths['dem']}", "--compare", f"2019={old}"))
    assert res.exit_code == EXIT_INPUT and "--spacing" in res.output
    # and a comparison needs the date of the latest survey
    res = CliRunner().invoke(main, _cli(paths, tmp_path / "s.gpkg", "--dem", str(paths["dem"]),
                                        "--compare", f"2019={old}"))
    assert res.exit_code == EXIT_INPUT and "needs its date" in res.output


def test_cli_without_a_terrain_model_says_so(series, tmp_path):
    _, paths = series
    res = CliRunner().invoke(main, _cli(paths, tmp_path / "r.gpkg"))
    assert res.exit_code == EXIT_INPUT and "no terrain model given" in res.output
