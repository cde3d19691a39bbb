"""Fill-volume estimate and the severity-sorted stretch table."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from shapely.geometry import Polygon

from trajectory.judgement.remedies import Geometry, raise_area
from trajectory.judgement.stretch_table import raise_and_rank


def _ground(height, crest, m, n, dh=0.0, inner_height=None):
    """The terrain across a levee as a polygon closed 10 m down: outer plain at level 0,
    outer slope 1:m, crest ``crest`` wide at ``height + dh``, inner slope 1:n down to the
    inner plain ``inner_height`` below the original crest (default: the outer's)."""
    hi = height if inner_height is None else inner_height
    top, inner = height + dh, height - hi
    return Polygon([(-60.0, -10.0), (-60.0, 0.0), (-crest / 2 - m * top, 0.0),
                    (-crest / 2, top), (crest / 2, top), (crest / 2 + n * (top - inner), inner),
                    (60.0, inner), (60.0, -10.0)])


def _trapezoid(height, crest, m, n):
    """Levee section with its toes at level 0 (outer slope 1:m left, inner 1:n right)."""
    return Polygon([(-crest / 2 - m * height, 0), (-crest / 2, height), (crest / 2, height),
                    (crest / 2 + n * height, 0)])


@pytest.mark.parametrize("h,b,m,n,dh,hi", [(3.0, 4.0, 3.0, 2.5, 0.4, None),
                                           (5.0, 2.0, 4.0, 3.0, 1.2, None),
                                           (2.0, 6.0, 2.0, 2.0, 0.0, None),
                                           (3.0, 4.0, 3.0, 2.0, 0.5, 4.5)])
def test_raise_fill_equals_the_difference_of_two_sections(h, b, m, n, dh, hi):
    # reference: shapely polygon areas of the section before and after the raise, toes
    # at different levels in the last case (the one fill model, trajectory.judgement.remedies)
    ref = _ground(h, b, m, n, dh, hi).area - _ground(h, b, m, n, 0.0, hi).area
    g = Geometry(crest_level=np.array([h]), crest_width=np.array([b]),
                 outer_slope=np.array([m]), inner_slope=np.array([n]),
                 outer_toe_level=np.array([0.0]),
                 inner_toe_level=np.array([h - (h if hi is None else hi)]))
    assert raise_area(np.array([dh]), g)[0] == pytest.approx(ref, rel=1e-12, abs=1e-12)


def _stations(margins, *, spacing=25.0):
    k = len(margins)
    crest = np.full(k, 6.0)
    return pd.DataFrame({
        "chainage": np.arange(k) * spacing, "crest_level": crest,
        "required_level": crest - np.asarray(margins, float),
        "crest_width": np.full(k, 4.0), "outer_slope": np.full(k, 3.0),
        "inner_slope": np.full(k, 2.0), "outer_toe_level": np.full(k, 3.0),
        "inner_toe_level": np.full(k, 3.0), "margin": np.asarray(margins, float),
    })


def test_stretch_table_by_chainage_ranked_by_worst_margin_with_length_and_volume():
    margins = [0.3, 0.3, -0.2, -0.4, 0.05, 0.3, np.nan, 0.3]
    st = _stations(margins)
    stretches = pd.DataFrame({
        "from_chainage": [0.0, 37.5, 87.5, 112.5, 137.5, 162.5],
        "to_chainage": [37.5, 87.5, 112.5, 137.5, 162.5, 175.0],
        "length": [37.5, 50.0, 25.0, 25.0, 25.0, 12.5],
        "status": ["ok", "deficit", "watch", "ok", "no_data", "ok"],
        "worst_margin": [0.3, -0.4, 0.05, 0.3, np.nan, 0.3],
    })
    t = raise_and_rank(st, stretches)
    assert t["from_chainage"].tolist() == stretches["from_chainage"].tolist()
    assert t["severity_rank"].tolist() == [3, 1, 2, 4, 6, 5]
    t = t.sort_values("severity_rank")
    assert t["status"].tolist() == ["deficit", "watch", "ok", "ok", "ok", "no_data"]
    d = t.iloc[0]
    assert d["crest_raise"] == pytest.approx(0.4)
    assert d["length_to_raise"] == pytest.approx(50.0)
    # two stations, 25 m each, H = 3 m, B = 4 m, slopes 1:3 and 1:2 (trapezoid difference)
    expect = sum(25.0 * (_trapezoid(3 + dh, 4, 3, 2).area - _trapezoid(3, 4, 3, 2).area)
                 for dh in (0.2, 0.4))
    assert d["fill_volume"] == pytest.approx(expect)
    assert (t.loc[t["status"] != "deficit", "fill_volume"] == 0).all()
