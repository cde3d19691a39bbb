"""Status classes and stretch merging on constructed sequences."""

from __future__ import annotations

import numpy as np

from trajectory.status import classify, merge_stretches


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
