"""The demo's planted berm, water and crest objects read back where they were planted.

Truth: the synthetic generator (trajectory.scenario.synthetic), recorded in truth.json.
"""

from __future__ import annotations

import numpy as np
import pytest

from trajectory.assess import RunInputs, run
from trajectory.params import Settings
from trajectory.scenario.synthetic import LeveeSpec, crest_level


def _within(st, lo, hi):
    return (st["chainage"] >= lo) & (st["chainage"] <= hi)


def test_planted_outer_berm_found_with_its_level_and_width(demo, demo_result):
    st = demo_result[0].stations
    for b in demo["truth_data"]["berms"]:
        core = st[_within(st, b["from_chainage"] + b["taper"], b["to_chainage"] - b["taper"])]
        assert len(core) >= 5 and np.isfinite(core["outer_berm_level"]).all()
        assert np.abs(core["outer_berm_level"] - b["level"]).max() < 0.05
        assert np.abs(core["outer_berm_width"] - b["width"]).max() < 0.6
        # the slope under the berm is the planted one
        assert np.median(core["outer_lower_slope"]) == pytest.approx(
            demo["truth_data"]["outer_slope_cot"], rel=0.05)
        away = st[~_within(st, b["from_chainage"] - 30, b["to_chainage"] + 30)]
        assert np.isfinite(away["outer_berm_level"]).mean() < 0.02
    # the planted inner (piping) berm: top at hinterland + thickness, its top as wide as
    # its length beyond the toe (its face keeps the inner slope); none elsewhere
    hinter = demo["truth_data"]["hinterland_level"]
    for b in demo["truth_data"]["inner_berms"]:
        core = st[_within(st, b["from_chainage"] + b["taper"], b["to_chainage"] - b["taper"])]
        assert len(core) >= 5 and np.isfinite(core["inner_berm_level"]).all()
        assert np.abs(core["inner_berm_level"] - (hinter + b["thickness"])).max() < 0.05
        assert np.abs(core["inner_berm_width"] - b["length"]).max() < 0.6
        away = st[~_within(st, b["from_chainage"] - 30, b["to_chainage"] + 30)]
        assert np.isfinite(away["inner_berm_level"]).mean() < 0.02


def test_planted_water_flagged_only_there(demo, demo_result):
    st = demo_result[0].stations
    wet = np.zeros(len(st), bool)
    for w in demo["truth_data"]["water_stretches"]:
        inside = _within(st, w["from_chainage"] + 10, w["to_chainage"] - 10)
        flagged = st.loc[inside, "flags"].str.contains("outer_water")
        assert flagged.mean() >= 0.9
        wet |= _within(st, w["from_chainage"] - 30, w["to_chainage"] + 30)
    assert not st.loc[~wet, "flags"].str.contains("outer_water").any()


def test_crest_level_accuracy_against_the_planted_crest(demo, demo_result):
    # noise 0.05 m in the demo; the target is 0.03 m; hedges and posts included
    st = demo_result[0].stations
    ok = st["status"] != "no_data"
    truth = crest_level(st.loc[ok, "chainage"].to_numpy(), spec=LeveeSpec())
    err = st.loc[ok, "crest_level"].to_numpy() - truth
    assert abs(np.mean(err)) < 0.01            # no bias
    assert np.median(np.abs(err)) < 0.03
    # one section line holds about 7 crest samples: sigma / sqrt(7) = 0.019 m, so the
    # 95th percentile of a single station's error is about 2 x 0.019 = 0.04 m
    assert np.percentile(np.abs(err), 95) < 0.05
    hedge = demo["truth_data"]["hedges"][0]
    h = _within(st.loc[ok], hedge["from_chainage"], hedge["to_chainage"]).to_numpy()
    assert np.abs(err[h]).max() < 0.05


def test_characteristic_slope_reported_and_stations_from_a_list(demo, tmp_path):
    listed = tmp_path / "survey_stations.csv"
    listed.write_text("chainage\n1100\n1137.5\n2600\n")
    r = run(RunInputs(str(demo["centreline"]), str(demo["dem"]), str(demo["sections"])),
            Settings(stations_file=str(listed)))
    st = r.stations
    assert st["chainage"].tolist() == [1100.0, 1137.5, 2600.0]
    # on the planted 1:3 slope with its berm left out the average slope stays 1:3
    assert st["characteristic_slope"].to_numpy() == pytest.approx(3.0, rel=0.05)
    assert "outer_water" in st["flags"].iloc[2]
