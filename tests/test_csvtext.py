"""The column-wise CSV writer against pandas' own ``DataFrame.to_csv`` (the reference)."""

from __future__ import annotations

import io

import numpy as np
import pandas as pd
import pytest

from trajectory.outputs.csvtext import frame_is_plain, write_csv
from trajectory.outputs.geopackage import stretch_frame
from trajectory.outputs.table import deficit_frame


def _pandas(df: pd.DataFrame, decimals: int = 4) -> str:
    buf = io.StringIO()
    df.to_csv(buf, index=False, float_format=f"%.{decimals}f", lineterminator="\n")
    return buf.getvalue()


def _ours(df: pd.DataFrame, decimals: int = 4) -> str:
    buf = io.StringIO()
    write_csv(df, buf, decimals=decimals)
    return buf.getvalue()


def test_edge_values_match_pandas():
    """Missing values, infinities, signed zeros, rounding, quoting: byte for byte as pandas."""
    rng = np.random.default_rng(7)
    x = rng.normal(0, 50, 400)
    x[::9] = np.nan
    x[1], x[2], x[3], x[4] = np.inf, -np.inf, -0.0, -0.00004   # '-0.0000' both ways
    x[5], x[6] = 0.12345, 2.5e-5                             # binary ties as printf rounds them
    text = np.array(["plain", "with, comma", 'say "hi"', "two\nlines", "", "semi;colon",
                     "a\rb", "ü"], dtype=object)[rng.integers(0, 8, 400)]
    df = pd.DataFrame({
        "x": x,
        "x32": x.astype(np.float32),
        "n": rng.integers(-5, 5, 400),
        "flag": rng.integers(0, 2, 400).astype(bool),
        "text": text,
        "str": pd.array(np.where(rng.random(400) < 0.2, None, text), dtype="str"),
        "obj": pd.Series(np.where(rng.random(400) < 0.2, None, text), dtype=object),
        "name, quoted": 1.5,
    })
    assert frame_is_plain(df)
    assert _ours(df) == _pandas(df)
    assert _ours(df, 2) == _pandas(df, 2)


def test_empty_frame_matches_pandas():
    df = pd.DataFrame({"a": np.array([], float), "b": np.array([], object)})
    assert _ours(df) == _pandas(df)


def test_other_kinds_fall_back_to_pandas():
    """A column kind the writer does not format (dates) goes through pandas unchanged."""
    df = pd.DataFrame({"when": pd.to_datetime(["2024-01-02", "2025-03-04"]), "v": [1.0, 2.0]})
    assert not frame_is_plain(df)
    assert _ours(df) == _pandas(df)


@pytest.mark.parametrize("which", ["stations", "stretches"])
def test_demo_tables_match_pandas(demo_result, which):
    """The demo's deficit and stretch tables: the writer's bytes are pandas' bytes."""
    result, _ = demo_result
    df = deficit_frame(result)
    if which == "stretches":
        df = stretch_frame(result)
    assert frame_is_plain(df)
    assert _ours(df) == _pandas(df)


@pytest.mark.parametrize("kind", ["plain", "with_dates"])
def test_columns_with_their_own_decimals_match_pandas_formatting_each_column(kind):
    """Per-column decimals (degrees get 7) give pandas' bytes for the same column formatted
    with its own float format, on the fast path and on the pandas fallback."""
    rng = np.random.default_rng(3)
    lon = rng.uniform(4.0, 6.0, 50)
    lon[::7] = np.nan
    df = pd.DataFrame({"lon": lon, "v": rng.normal(0, 3, 50)})
    if kind == "with_dates":
        df["when"] = pd.Timestamp("2024-05-06")
    ref = df.assign(lon=[f"{v:.7f}" if v == v else "" for v in lon])
    buf = io.StringIO()
    write_csv(df, buf, decimals=3, column_decimals={"lon": 7})
    assert buf.getvalue() == _pandas(ref, 3)
    assert buf.getvalue().splitlines()[2].split(",")[0] == f"{lon[1]:.7f}"  # row 0 is NaN
