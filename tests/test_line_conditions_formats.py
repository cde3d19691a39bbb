"""Several lines, one conditions reader: every table format a single line accepts gives
the same per-line conditions.

The table is the invented two-line split of the demo (conftest ``two_lines``), with a
non-ASCII section name; the UTF-8 comma-separated file is the reference every other
form must reproduce exactly (the validated table of each line, and its section ids).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pyogrio
import pytest

from trajectory.errors import ConditionsError
from trajectory.inputs.lines import read_line_conditions

LINES = ["north-a", "north-b"]


def _table(two_lines) -> pd.DataFrame:
    t = pd.read_csv(two_lines["sections"], dtype=str)
    t["section_id"] = t["section_id"] + " Süd"
    return t


def _write(t: pd.DataFrame, path, *, sep=",", decimal=".", encoding="utf-8"):
    if decimal != ".":
        t = t.apply(lambda c: c.str.replace(".", decimal, regex=False))
    path.write_bytes(t.to_csv(sep=sep, index=False).encode(encoding))
    return path


def _typed(t: pd.DataFrame) -> pd.DataFrame:
    """Columns of numbers as numbers (as a spreadsheet or GIS stores them), text as text."""
    def col(c: pd.Series) -> pd.Series:
        try:
            return pd.to_numeric(c)
        except (TypeError, ValueError):
            return c
    return t.apply(col)


def _gpkg_table(t: pd.DataFrame, path):
    num = _typed(t)
    pyogrio.write_dataframe(num, path, layer="conditions", driver="GPKG")
    return path


def _xlsx(t: pd.DataFrame, path):
    pytest.importorskip("openpyxl")
    num = _typed(t)
    num.to_excel(path, index=False, sheet_name="conditions")
    return path


FORMATS = {
    "semicolon_decimal_comma": lambda t, d: _write(t, d / "c.csv", sep=";", decimal=","),
    "tab": lambda t, d: _write(t, d / "c.txt", sep="\t"),
    "latin1": lambda t, d: _write(t, d / "c.csv", encoding="latin-1"),
    "cp1252_semicolon": lambda t, d: _write(t, d / "c.csv", sep=";", encoding="cp1252"),
    "geopackage_table": lambda t, d: _gpkg_table(t, d / "c.gpkg"),
    "xlsx": lambda t, d: _xlsx(t, d / "c.xlsx"),
}


def _frames(conds) -> dict[str, pd.DataFrame]:
    # _row is the row number in messages: line numbers in a text file, feature numbers in
    # a vector file. revetment echoes the roughness cell as written ("1.0" in a text file,
    # the stored number 1 in a GeoPackage or workbook); the factor itself (roughness) is
    # compared with every other column
    return {lid: c.table.drop(columns=["_row", "revetment"]) for lid, c in conds.items()}


@pytest.mark.parametrize("name", list(FORMATS))
def test_each_format_gives_the_same_conditions_per_line(two_lines, tmp_path, name):
    t = _table(two_lines)
    ref = _frames(read_line_conditions(_write(t, tmp_path / "ref.csv"), LINES))
    assert set(ref) == set(LINES)
    # each line has its own rows: its chainages start again at 0 (the fixture's split)
    for lid in LINES:
        assert ref[lid]["from_chainage"].iloc[0] == 0.0
        assert ref[lid]["section_id"].str.endswith(" Süd").all()
    d = tmp_path / name
    d.mkdir()
    got = _frames(read_line_conditions(FORMATS[name](t, d), LINES))
    for lid in LINES:
        pd.testing.assert_frame_equal(got[lid], ref[lid], check_dtype=False)


def test_a_bad_row_in_a_semicolon_file_names_the_line_and_the_file_row(two_lines, tmp_path):
    t = _table(two_lines)
    bad = int(np.flatnonzero(t["line_id"] == "north-b")[1])
    t.loc[bad, "hm0"] = "-1"
    path = _write(t, tmp_path / "c.csv", sep=";", decimal=",")
    with pytest.raises(ConditionsError) as err:
        read_line_conditions(path, LINES)
    # header on line 1: table row k is file row k + 2, as for a single line
    assert f"line 'north-b': row {bad + 2}, column hm0" in str(err.value)
    assert str(path) in str(err.value)


def test_a_gap_beyond_one_lines_end_is_no_finding_for_that_line(two_lines, tmp_path):
    # the single line's rule (conditions.validate_conditions ``extent``), line by line
    t = _table(two_lines)
    a = t[t["line_id"] == "north-a"]
    far = a.iloc[[-1]].assign(section_id="FAR", from_chainage="5000", to_chainage="5100")
    path = _write(pd.concat([t, far]), tmp_path / "c.csv")
    with pytest.raises(ConditionsError, match="line 'north-a'.*gap"):
        read_line_conditions(path, LINES)
    end_a = float(a["to_chainage"].astype(float).max())
    conds = read_line_conditions(path, LINES, extents={"north-a": (0.0, end_a),
                                                       "north-b": (0.0, 1e9)})
    assert "FAR" in set(conds["north-a"].table["section_id"])
