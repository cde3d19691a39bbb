"""Common table formats: separators, decimal commas, encodings, typos in a column name.

The invented synthetic levee (trajectory.scenario.synthetic, 300 m) assessed with its
conditions table written in each format; the comma/UTF-8 table is the reference
every other format must reproduce exactly. Each case checks the exit code,
the message naming the file and column, and that the inputs are unchanged.
"""

from __future__ import annotations

import hashlib

import pandas as pd
import pyogrio
import pytest
from click.testing import CliRunner

from trajectory.frontends.cli import EXIT_INPUT, EXIT_OK, main
from trajectory.scenario.synthetic import LeveeSpec, make_centreline, write_scenario


@pytest.fixture(scope="module")
def scenario(tmp_path_factory):
    out = tmp_path_factory.mktemp("formats")
    paths = write_scenario(out, spec=LeveeSpec().scaled(300.0),
                           centreline=make_centreline(300.0), epochs=False)
    res = CliRunner().invoke(main, _args(paths, paths["sections"], out / "ref.gpkg"))
    assert res.exit_code == EXIT_OK, res.output
    paths["reference"] = pyogrio.read_dataframe(out / "ref.gpkg", layer="stations")
    return paths


def _args(paths, conditions, out):
    return ["assess", "--centreline", str(paths["centreline"]), "--dem", str(paths["dem"]),
            "--conditions", str(conditions), "--out", str(out), "--quiet"]


def _sha(p) -> str:
    return hashlib.sha256(p.read_bytes()).hexdigest()


def _rewrite(scenario, path, *, sep=",", decimal=".", encoding="utf-8", rename=None,
             section_id_suffix=""):
    t = pd.read_csv(scenario["sections"], dtype=str)
    if rename:
        t = t.rename(columns=rename)
    t["section_id"] = t["section_id"] + section_id_suffix
    if decimal != ".":
        t = t.apply(lambda c: c.str.replace(".", decimal, regex=False))
    path.write_bytes(t.to_csv(sep=sep, index=False).encode(encoding))
    return path


@pytest.mark.parametrize("name, kw", [
    ("semicolon_decimal_comma", {"sep": ";", "decimal": ","}),
    ("tab", {"sep": "\t"}),
    ("utf8_bom", {"encoding": "utf-8-sig"}),
    ("latin1", {"encoding": "latin-1", "section_id_suffix": " Süd"}),
    ("cp1252", {"encoding": "cp1252", "section_id_suffix": " – Nord"}),
])
def test_common_formats_give_the_reference_result(scenario, tmp_path, name, kw):
    cond = _rewrite(scenario, tmp_path / f"{name}.csv", **kw)
    before = _sha(cond)
    res = CliRunner().invoke(main, _args(scenario, cond, tmp_path / "r.gpkg"))
    assert res.exit_code == EXIT_OK, res.output
    st = pyogrio.read_dataframe(tmp_path / "r.gpkg", layer="stations")
    ref = scenario["reference"]
    pd.testing.assert_series_equal(st["margin"], ref["margin"])
    assert (st["section_id"] == ref["section_id"] + kw.get("section_id_suffix", "")).all()
    assert _sha(cond) == before


@pytest.mark.parametrize("content, text", [
    ("", "the conditions file is empty (0 bytes); give the complete file"),
    ("\n  \n# only a comment\n", "holds no header line; give a CSV whose first line names"),
    (None, "the table has no rows under its header; give one row per section"),
])
def test_an_empty_table_says_what_to_give(scenario, tmp_path, content, text):
    cond = tmp_path / "c.csv"
    header = scenario["sections"].read_text().splitlines()[0] + "\n"
    cond.write_text(header if content is None else content)  # None: the header line only
    before = _sha(cond)
    res = CliRunner().invoke(main, _args(scenario, cond, tmp_path / "r.gpkg"))
    assert res.exit_code == EXIT_INPUT
    assert str(cond) in res.output.splitlines()[0] and text in res.output
    assert len(res.output.strip().splitlines()) <= 2  # the file line and one finding
    assert _sha(cond) == before and not (tmp_path / "r.gpkg").exists()


def test_decimal_commas_in_a_comma_separated_file_say_how_to_fix(scenario, tmp_path):
    cond = _rewrite(scenario, tmp_path / "c.csv", decimal=",")  # pandas quotes "4,2"
    before = _sha(cond)
    res = CliRunner().invoke(main, _args(scenario, cond, tmp_path / "r.gpkg"))
    assert res.exit_code == EXIT_INPUT
    assert str(cond) in res.output.splitlines()[0]
    assert "column water_level: '4,2' is not a number (a decimal comma: write 4.2, or save " \
        "the file with ';' as the separator)" in res.output
    assert "'4,35' is not a number (a decimal comma: write 4.35," in res.output
    assert _sha(cond) == before and not (tmp_path / "r.gpkg").exists()


@pytest.mark.parametrize("wrong, right", [("min_freebord", "min_freeboard"),
                                          ("q_allwo", "q_allow")])
def test_a_column_one_letter_off_is_an_error_naming_the_likely_one(scenario, tmp_path,
                                                                     wrong, right):
    cond = _rewrite(scenario, tmp_path / "c.csv", rename={right: wrong})
    before = _sha(cond)
    res = CliRunner().invoke(main, _args(scenario, cond, tmp_path / "r.gpkg"))
    assert res.exit_code == EXIT_INPUT
    assert f"column {wrong!r} is not known; did you mean {right!r}? Rename the column" \
        in res.output
    assert str(cond) in res.output.splitlines()[0]
    assert _sha(cond) == before and not (tmp_path / "r.gpkg").exists()


def test_a_required_column_one_letter_off_is_named_in_the_missing_message(scenario, tmp_path):
    cond = _rewrite(scenario, tmp_path / "c.csv", rename={"water_level": "water_levl"})
    res = CliRunner().invoke(main, _args(scenario, cond, tmp_path / "r.gpkg"))
    assert res.exit_code == EXIT_INPUT
    assert "missing column(s): water_level (column 'water_levl' looks like 'water_level'" \
        in res.output


def test_a_section_wholly_beyond_the_line_is_not_a_gap(scenario, tmp_path, caplog):
    t = pd.read_csv(scenario["sections"], dtype=str)
    extra = t.iloc[[-1]].assign(section_id="FAR", from_chainage="400", to_chainage="500")
    cond = tmp_path / "c.csv"
    pd.concat([t, extra]).to_csv(cond, index=False)  # 300-400 m: a gap beyond the 300 m line
    before = _sha(cond)
    res = CliRunner().invoke(main, _args(scenario, cond, tmp_path / "r.gpkg"))
    assert res.exit_code == EXIT_OK, res.output
    assert _sha(cond) == before
    assert any("section 'FAR'" in r.message and "not used" in r.message
               for r in caplog.records)


def test_a_gap_within_the_line_is_still_a_finding(scenario, tmp_path):
    t = pd.read_csv(scenario["sections"], dtype=str)
    t.loc[1, "from_chainage"] = str(float(t.loc[1, "from_chainage"]) + 10.0)
    cond = tmp_path / "c.csv"
    t.to_csv(cond, index=False)
    res = CliRunner().invoke(main, _args(scenario, cond, tmp_path / "r.gpkg"))
    assert res.exit_code == EXIT_INPUT
    assert "gap in chainage between section" in res.output
