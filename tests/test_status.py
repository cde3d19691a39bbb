"""Status classes and stretch merging on constructed sequences."""

from __future__ import annotations

import numpy as np

from trajectory.judgement.status import classify, merge_stretches


def test_classify_bands():
    m = np.array([0.5, 0.10, 0.099, 0.0, -0.001, np.nan])
    assert classify(m, watch_band=0.10).tolist() == ["ok", "ok", "watch", "watch", "deficit",
                                                     "no_data"]


def test_merge_stretches_tiles_the_line():
    c = np.arange(0, 250, 25.0)          # 10 stations, 0..225
    st = np.array(["ok"] * 3 + ["deficit"] * 4 + ["ok"] * 2 + ["no_data"], dtype=object)
    m = np.array([0.3, 0.2, 0.2, -0.1, -0.4, -0.2, -0.05, 0.2, 0.3, np.nan])
    s = merge_stretches(c, st, m, start=0.0, end=230.0)
    assert s.status.tolist() == ["ok", "deficit", "ok", "no_data"]
    assert s.from_chainage.tolist() == [0.0, 62.5, 162.5, 212.5]
    assert s.to_chainage.tolist() == [62.5, 162.5, 212.5, 230.0]
    assert s.length.sum() == 230.0
    assert s.worst_margin[1] == -0.4 and s.worst_chainage[1] == 100.0
    assert np.isnan(s.worst_margin[3])


# ---- minimum stretch length (constructed sequences; truth by construction)
def _merge(seq, margins=None, *, min_length, spacing=25.0):
    st = np.array(seq, dtype=object)
    c = np.arange(st.size) * spacing
    m = np.asarray(margins if margins is not None else np.zeros(st.size), float)
    return merge_stretches(c, st, m, start=0.0, end=float(c[-1]), min_length=min_length)


def test_one_ok_station_does_not_split_a_deficit_stretch():
    seq = ["ok"] * 4 + ["deficit"] * 3 + ["ok"] + ["deficit"] * 3 + ["ok"] * 4
    m = [0.3] * 4 + [-0.2, -0.3, -0.2] + [0.15] + [-0.1, -0.5, -0.1] + [0.3] * 4
    s = _merge(seq, m, min_length=50.0)
    assert s.status.tolist() == ["ok", "deficit", "ok"]
    assert s.worst_margin[1] == -0.5 and s.worst_chainage[1] == 9 * 25.0
    assert s.first[1] == 4 and s.last[1] == 10
    # without the rule the ok station splits it
    assert _merge(seq, m, min_length=0.0).status.tolist() == ["ok", "deficit", "ok",
                                                               "deficit", "ok"]


def test_a_short_deficit_is_never_hidden():
    seq = ["ok"] * 5 + ["deficit"] + ["ok"] * 5
    s = _merge(seq, min_length=100.0)
    assert s.status.tolist() == ["ok", "deficit", "ok"]


def test_short_no_data_takes_the_more_severe_neighbour():
    s = _merge(["ok"] * 4 + ["no_data"] + ["watch"] * 4, min_length=50.0)
    assert s.status.tolist() == ["ok", "watch"]
    assert s.first.tolist() == [0, 4]
    # a long no_data run stays
    s = _merge(["ok"] * 4 + ["no_data"] * 3 + ["ok"] * 4, min_length=50.0)
    assert s.status.tolist() == ["ok", "no_data", "ok"]


def test_runs_at_least_min_length_are_kept():
    # two stations at 25 m stand for 50 m (halfway to each neighbour): not shorter than 50
    seq = ["deficit"] * 4 + ["ok"] * 2 + ["deficit"] * 4
    assert _merge(seq, min_length=50.0).status.tolist() == ["deficit", "ok", "deficit"]
    assert _merge(seq, min_length=50.01).status.tolist() == ["deficit"]


def test_short_run_at_the_line_end_joins_its_only_neighbour():
    s = _merge(["ok"] + ["watch"] * 5, min_length=30.0)
    assert s.status.tolist() == ["watch"]
    assert s.from_chainage[0] == 0.0 and s.to_chainage[0] == 125.0


def test_absorbed_count_in_the_stretch_layer():
    from types import SimpleNamespace

    import pandas as pd

    from trajectory.judgement.stretch_table import absorbed

    seq = ["ok"] * 4 + ["deficit"] * 3 + ["ok"] + ["deficit"] * 3 + ["ok"] * 4
    s = _merge(seq, min_length=50.0)
    fake = SimpleNamespace(stations=pd.DataFrame({"status": seq}), stretches=s)
    assert absorbed(fake.stations["status"].to_numpy(object), s).tolist() == [0, 1, 0]
