"""The GeoPackage carries its field descriptions and default styles (read with sqlite3 and GDAL).

Table layouts checked against the OGC GeoPackage 1.3 encoding standard, schema
extension (gpkg_data_columns, gpkg_data_column_constraints, gpkg_extensions),
and the desktop-GIS style table convention (layer_styles: f_table_name,
styleQML, styleSLD, useAsDefault).
"""

from __future__ import annotations

import contextlib
import sqlite3

import pyogrio

from trajectory.judgement.status import STATUSES
from trajectory.outputs.schema import LAYERS
from trajectory.outputs.style import LAYER_LOOK, qml, sld, sld_paths


def _query(path, sql):
    with contextlib.closing(sqlite3.connect(path)) as con:
        return con.execute(sql).fetchall()


def test_gpkg_is_valid_sqlite_and_gdal_reads_every_layer(demo_result):
    _, out = demo_result
    assert _query(out, "PRAGMA integrity_check") == [("ok",)]
    assert _query(out, "PRAGMA application_id")[0][0] == 0x47504B47   # 'GPKG' (GeoPackage 1.2+)
    for name in (*LAYERS, "layer_styles"):
        # the structures and changes tables are there but empty: the demo fixture gives
        # no structures and a single survey
        least = 0 if name in ("structures", "changes") else 1
        assert pyogrio.read_info(out, layer=name)["features"] >= least, name


def test_every_field_is_described_in_gpkg_data_columns(demo_result):
    _, out = demo_result
    rows = _query(out, "SELECT table_name, column_name, title, description, constraint_name "
                       "FROM gpkg_data_columns")
    got = {(t, c): (ti, d, k) for t, c, ti, d, k in rows}
    for layer, (_, fields) in LAYERS.items():
        for f in fields:
            title, desc, constraint = got[(layer, f.name)]
            assert desc.startswith(f.description)
            if f.unit and f.unit != "-":
                assert f"[{f.unit}]" in title and f"({f.unit})" in desc
            assert (constraint is not None) == (f.name == "status")
    ext = _query(out, "SELECT table_name, extension_name, scope FROM gpkg_extensions "
                      "WHERE extension_name = 'gpkg_schema'")
    assert sorted(ext) == [("gpkg_data_column_constraints", "gpkg_schema", "read-write"),
                           ("gpkg_data_columns", "gpkg_schema", "read-write")]
    enum = _query(out, "SELECT value FROM gpkg_data_column_constraints "
                       "WHERE constraint_type = 'enum' ORDER BY value")
    assert sorted(v for (v,) in enum) == sorted(STATUSES)


def test_default_styles_are_stored_and_written_beside(demo_result):
    _, out = demo_result
    rows = _query(out, "SELECT f_table_name, f_geometry_column, styleQML, styleSLD, "
                       "useAsDefault FROM layer_styles")
    assert sorted(r[0] for r in rows) == sorted(LAYER_LOOK)
    geom_cols = dict(_query(out, "SELECT table_name, column_name FROM gpkg_geometry_columns"))
    for name, geom_col, q, s, default in rows:
        assert default == 1 and geom_col == geom_cols[name]
        assert q == qml(name) and s == sld(name)
    contents = _query(out, "SELECT data_type FROM gpkg_contents WHERE table_name='layer_styles'")
    assert contents == [("attributes",)]
    for layer, p in sld_paths(out).items():
        assert p.read_text(encoding="utf-8") == sld(layer)


def test_metadata_records_crs_of_inputs_and_every_parameter(demo_result):
    import dataclasses

    from trajectory.params import Settings
    from trajectory.pipeline.execution import EXECUTION_FIELDS

    _, out = demo_result
    kv = dict(_query(out, "SELECT key, value FROM run_metadata"))
    # every parameter that can change a result; how the run is executed (workers,
    # chunking, scheduler, cache) is left out so serial and parallel files are identical
    for f in dataclasses.fields(Settings):
        assert (f"param_{f.name}" in kv) != (f.name in EXECUTION_FIELDS), f.name
    for k in ("software", "run_time", "caution", "crs", "crs_centreline", "crs_dem",
              "sha256_centreline", "sha256_dem", "sha256_conditions"):
        assert kv.get(k), k
    assert kv["crs_dem"] == "EPSG:32632"     # the invented scenario's CRS (synthetic.CRS)


def test_section_profiles_hold_the_worst_stations(demo_result):
    result, out = demo_result
    prof = pyogrio.read_dataframe(out, layer="section_profiles")
    st = pyogrio.read_dataframe(out, layer="stretches")
    worst = st[st["status"].isin(["deficit", "watch"])]["worst_chainage"]
    opt = pyogrio.read_dataframe(out, layer="options")
    design = opt.loc[opt["basis"] == "whole_stretch", "chainage"]
    # the worst stations, the stations that govern a whole-stretch option, and the worst
    # station of each stretch short on inner-slope stability (drawn by its report section)
    from trajectory.outputs.profiles import worst_stability_chainages

    shaky = set(worst_stability_chainages(result.stations))
    assert shaky and shaky <= set(prof["chainage"])
    assert set(worst) <= set(prof["chainage"]) <= set(worst) | set(design) | shaky
    assert len(prof) == prof["chainage"].nunique() * result.offsets.size
