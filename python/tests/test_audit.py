"""gridtruth's Python API against the command (same library: equal to the last bit), against pyproj + GeographicLib
(independent truth) and its own contracts (invalid rows, threads, pickling, errors)."""
import math
import pickle

import numpy as np
import pandas as pd
import pytest
import shapely.geometry
import shapely.wkb
import shapely.wkt

import gridtruth
from conftest import DEMO, assert_table_equals_cli, demo_features, random_polygons, run_cli, write_ndjson

TOLERANCE = "area=0.05%,length=1:2000"


@pytest.fixture(scope="module")
def auditor():
    return gridtruth.Auditor("EPSG:32615", tolerance=TOLERANCE)


def test_demo_as_mappings_equals_the_command(auditor, tmp_path):
    rows, _ = run_cli([DEMO, "--crs", "EPSG:32615", "--tolerance", TOLERANCE], tmp_path)
    features = demo_features()
    table = auditor.audit_many([f["geometry"] for f in features], ids=[f["id"] for f in features], threads=2)
    assert_table_equals_cli(table, rows)


def test_shapely_wkb_and_wkt_inputs_equal_the_command(auditor, tmp_path):
    features = random_polygons(seed=16, count=300)
    print("seed 16")
    path = tmp_path / "r.ndjson"
    write_ndjson(path, features)
    rows, _ = run_cli([str(path), "--crs", "EPSG:32615", "--tolerance", TOLERANCE], tmp_path)
    shapes = [shapely.geometry.shape(f["geometry"]) for f in features]
    ids = [f["id"] for f in features]
    for geometries in (shapes, np.array(shapes, dtype=object), [s.wkb for s in shapes],
                       [f["geometry"] for f in features]):
        assert_table_equals_cli(auditor.audit_many(geometries, ids=ids, threads=2), rows)
    # WKT goes through the library's parser: the decimal text of shapely's WKT is not the double of the input, so
    # compare with the command on the same WKT (CSV input).
    wkt_csv = tmp_path / "w.csv"
    wkt_csv.write_text("id,wkt\n" + "".join(f'{i},"{s.wkt}"\n' for i, s in zip(ids, shapes)))
    wkt_rows, _ = run_cli([str(wkt_csv), "--crs", "EPSG:32615", "--tolerance", TOLERANCE, "--id-field", "id"],
                          tmp_path)
    assert_table_equals_cli(auditor.audit_many([s.wkt for s in shapes], ids=ids), wkt_rows)


def test_heights_add_the_combined_factor_as_the_command(tmp_path):
    features = random_polygons(seed=17, count=50)
    path = tmp_path / "h.ndjson"
    write_ndjson(path, features)
    rows, _ = run_cli([str(path), "--crs", "EPSG:32615", "--height-field", "h"], tmp_path)
    a = gridtruth.Auditor("EPSG:32615")
    table = a.audit_many([f["geometry"] for f in features], heights=[f["properties"]["h"] for f in features],
                         ids=[f["id"] for f in features])
    assert_table_equals_cli(table, rows, combined_factor=True)


BOUND_FIELDS = ["reference", "grid", "error", "from_edges", "from_scale", "from_datum", "from_height"]


def test_bounds_columns_equal_the_commands_and_the_budgets(auditor, tmp_path):
    # bounds=True gives the 14 columns of `gridtruth audit --bounds`, after every other, equal to the command's to
    # the last bit; the single audit's Budget carries the same values; without it there are none.
    features = random_polygons(seed=18, count=40)
    path = tmp_path / "b.ndjson"
    write_ndjson(path, features)
    rows, _ = run_cli([str(path), "--crs", "EPSG:32615", "--tolerance", TOLERANCE, "--bounds"], tmp_path)
    geometries = [f["geometry"] for f in features]
    table = auditor.audit_many(geometries, ids=[f["id"] for f in features], bounds=True)
    assert_table_equals_cli(table, rows, bounds=True)
    plain = gridtruth.result_columns()
    names = gridtruth.result_columns(bounds=True)
    assert names[:len(plain)] == plain and len(names) == len(plain) + 14
    assert names[len(plain)] == "true_length_bound_m" and names[-1] == "area_from_height_bound_m2"
    assert "true_length_bound_m" not in auditor.audit_many(geometries[:3]).columns
    for k in (0, 17, 39):
        r = auditor.audit(geometries[k])
        row = table.iloc[k]
        for measure, unit in (("length", "m"), ("area", "m2")):
            budget = getattr(r, measure)
            for field, column in zip(BOUND_FIELDS, ["true", "grid", "error", "from_edges", "from_scale",
                                                    "from_datum", "from_height"]):
                name = (f"{column}_{measure}_bound_{unit}" if column in ("true", "grid")
                        else f"{measure}_{column}_bound_{unit}")
                assert getattr(budget, field + "_bound") == row[name], name
                assert row[name] >= 0, name
        assert r.area.densified_grid_bound >= 0 and r.area.ellipsoid_source_bound >= 0


def test_one_geometry_gives_the_budget_fields(auditor):
    polygon = shapely.geometry.Polygon([(-95.40, 44.10), (-95.375, 44.10), (-95.375, 44.1135), (-95.40, 44.1135)])
    r = auditor.audit(polygon)
    row = auditor.audit_many([polygon]).iloc[0]
    assert r.status == "ok" and r.geometry_type == "Polygon" and r.vertices == 5
    assert r.area.reference == row["true_area_m2"] and r.area.grid == row["grid_area_m2"]
    assert r.area.error_ppm == row["area_error_ppm"]
    # The parts telescope to the error (audit.hpp's contract), to rounding of four additions.
    a = r.area
    assert abs(a.from_edges + a.from_scale + a.from_datum + a.from_height - a.error) <= 1e-9 * a.reference
    assert r.verdict in ("pass", "fail")
    # The same polygon as __geo_interface__ (a mapping) and WKT.
    assert auditor.audit(polygon.__geo_interface__).area.reference == a.reference


def test_invalid_geometries_become_rows_with_messages(auditor):
    geometries = [
        None,
        shapely.geometry.GeometryCollection([shapely.geometry.Point(0, 0)]),
        "POLYGON ((-95 44, -94.9 44, -95 44))",            # two distinct vertices
        shapely.geometry.Point(-95, 95),                   # latitude out of range
        b"\x01\x03\x00\x00",                                # truncated WKB
        "LINESTRING (-95 44,",                              # malformed WKT
        shapely.geometry.Polygon(),                        # empty
        42,
        shapely.geometry.Point(-95, 44),
    ]
    t = auditor.audit_many(geometries)
    assert len(t) == len(geometries)
    assert list(t["id"]) == [str(k) for k in range(1, len(geometries) + 1)]
    assert list(t["status"][:8]) == ["invalid"] * 8 and t["status"].iloc[8] == "ok"
    messages = list(t["message"])
    assert messages[0] == "the feature has no geometry"
    assert "GeometryCollection" in messages[1]
    assert "vertices" in messages[2]
    assert "latitude" in messages[3]
    assert "WKB byte" in messages[4]
    assert messages[5] != "" and messages[6] != ""
    assert "not a geometry" in messages[7]
    assert t["vertices"].isna().iloc[0] and t["verdict"].iloc[0] == ""
    assert np.isnan(t["true_area_m2"].iloc[3])


def test_threads_give_identical_results(auditor):
    features = random_polygons(seed=18, count=700)
    print("seed 18")
    shapes = [shapely.geometry.shape(f["geometry"]) for f in features]
    one = auditor.audit_many(shapes, threads=1)
    for threads, batch in ((2, 256), (3, 7), (None, 1)):
        pd.testing.assert_frame_equal(one, auditor.audit_many(shapes, threads=threads, batch_features=batch),
                                      check_exact=True)


def test_pickled_auditor_audits_the_same(auditor):
    features = random_polygons(seed=19, count=40)
    shapes = [shapely.geometry.shape(f["geometry"]) for f in features]
    copy = pickle.loads(pickle.dumps(auditor))
    assert isinstance(copy, gridtruth.Auditor) and copy.options == auditor.options
    pd.testing.assert_frame_equal(auditor.audit_many(shapes), copy.audit_many(shapes), check_exact=True)


def test_errors_are_python_exceptions_with_the_library_message():
    with pytest.raises(ValueError, match="EPSG:999999") as e:
        gridtruth.Auditor("EPSG:999999")
    assert e.value.code == "unknown_crs"
    with pytest.raises(gridtruth.Error) as e:
        gridtruth.Auditor("EPSG:4326")  # geographic: no grid to audit
    assert e.value.code == "unsupported_crs"
    with pytest.raises(ValueError, match="tolerance|area=banana"):
        gridtruth.Auditor("EPSG:32615", tolerance="area=banana")
    with pytest.raises(OSError):
        gridtruth.Auditor("EPSG:32615")._audit_file("/no/such/file.geojson", "auto", "", "wkt", "", 1, 256, False)


def test_summary_equals_the_commands_json(auditor, tmp_path):
    features = demo_features() + random_polygons(seed=20, count=120)
    path = tmp_path / "s.ndjson"
    write_ndjson(path, features)
    rows, expected = run_cli([str(path), "--crs", "EPSG:32615", "--tolerance", TOLERANCE], tmp_path)
    table = auditor.audit_many([f["geometry"] for f in features], ids=[f["id"] for f in features])
    got = gridtruth.summary(table, auditor)
    for key in ("source_crs", "target_crs", "datum_transformation", "edges", "options", "units", "counts", "totals",
                "worst_features", "exit_status"):
        assert got[key] == expected[key], key


def test_file_audit_equals_the_command(auditor, tmp_path):
    rows, _ = run_cli([DEMO, "--crs", "EPSG:32615", "--tolerance", TOLERANCE], tmp_path)
    table = gridtruth._frame(auditor._audit_file(DEMO, "auto", "", "wkt", "", 2, 256, False))
    assert_table_equals_cli(table, rows)
