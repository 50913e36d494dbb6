"""GeoDataFrames (python3-geopandas) and the rank / tailor entry points."""
import csv
import math
import subprocess

import geopandas
import numpy as np
import pytest
import shapely.geometry
from geographiclib.geodesic import Geodesic
from pyproj import Transformer

import gridtruth
from conftest import CLI, DEMO, demo_features

US_SURVEY_FOOT_M = 1200 / 3937  # NIST, US survey foot (Federal Register 85 FR 62698, 2020)


def state_plane_parcels():
    """Two invented parcels near Fremont, CA in NAD83 / California zone 3 (EPSG:2227, US survey feet), and one bad
    row, indexed by parcel number."""
    to_grid = Transformer.from_crs("EPSG:4269", "EPSG:2227", always_xy=True)
    x0, y0 = to_grid.transform(-121.98, 37.55)
    ft = 5280.0  # a mile in feet
    parcels = [
        shapely.geometry.Polygon([(x0, y0), (x0 + 2 * ft, y0 + 0.1 * ft), (x0 + 2.2 * ft, y0 + 1.5 * ft),
                                  (x0 + 0.8 * ft, y0 + 2.3 * ft), (x0 - 0.3 * ft, y0 + 1.1 * ft)]),
        shapely.geometry.Polygon([(x0 + 3 * ft, y0), (x0 + 3.4 * ft, y0), (x0 + 3.4 * ft, y0 + 0.25 * ft),
                                  (x0 + 3 * ft, y0 + 0.25 * ft)],
                                 [[(x0 + 3.1 * ft, y0 + 0.05 * ft), (x0 + 3.2 * ft, y0 + 0.05 * ft),
                                   (x0 + 3.2 * ft, y0 + 0.15 * ft)]]),
        None,
    ]
    return geopandas.GeoDataFrame({"owner": ["A", "B", "C"]}, geometry=parcels, crs="EPSG:2227",
                                  index=[1041, 1042, 1043])


def true_area_perimeter(polygon):
    """Area (m²) and perimeter (m) of a polygon whose edges are straight in EPSG:2227's plane, independently of
    gridtruth: each edge cut into 2000 pieces in the plane, taken to NAD83 by pyproj, the resulting polygon
    measured by GeographicLib on GRS 1980 (Karney 2013; geographiclib's Python port). The geodesic chords of
    pieces under 2 m long deviate from the plane-straight edge by far less than a micrometre."""
    to_geo = Transformer.from_crs("EPSG:2227", "EPSG:4269", always_xy=True)
    grs80 = Geodesic(6378137.0, 1 / 298.257222101)  # GRS 1980 (Moritz 2000, Bulletin Géodésique 54, p. 395)
    area = 0.0
    perimeter = 0.0
    for ring, sign in [(polygon.exterior, 1)] + [(r, -1) for r in polygon.interiors]:
        p = grs80.Polygon()
        xy = list(ring.coords)
        for (xa, ya), (xb, yb) in zip(xy[:-1], xy[1:]):
            t = np.linspace(0.0, 1.0, 2000, endpoint=False)
            lon, lat = to_geo.transform(xa + t * (xb - xa), ya + t * (yb - ya))
            for lo, la in zip(lon, lat):
                p.AddPoint(la, lo)
        _, ring_perimeter, ring_area = p.Compute(False, True)
        area += sign * abs(ring_area)
        perimeter += ring_perimeter
    return area, perimeter


def test_state_plane_feet_against_pyproj_and_geographiclib():
    gdf = state_plane_parcels()
    out = gridtruth.audit_frame(gdf, "EPSG:2227")
    assert list(out.index) == [1041, 1042, 1043] and list(out["owner"]) == ["A", "B", "C"]
    assert list(out["id"]) == ["1041", "1042", "1043"]
    assert list(out["status"]) == ["ok", "ok", "invalid"]
    for k in range(2):
        polygon = gdf.geometry.iloc[k]
        row = out.iloc[k]
        area, perimeter = true_area_perimeter(polygon)
        n_edges = sum(len(r.coords) - 1 for r in [polygon.exterior, *polygon.interiors])
        # Bound of audit.hpp: the true edges are followed to the densify tolerance (1 mm) of planar deviation,
        # so at most 1 mm × perimeter of area and 1 mm per edge of length.
        assert abs(row["true_area_m2"] - area) <= 1e-3 * perimeter, (row["true_area_m2"], area)
        assert abs(row["true_length_m"] - perimeter) <= 1e-3 * n_edges
        # The grid measure is the planar area in US survey square feet (shapely's shoelace, uncentred on
        # 10⁶-foot coordinates: about 1e-10 relative rounding), in m².
        assert row["grid_area_m2"] == pytest.approx(polygon.area * US_SURVEY_FOOT_M ** 2, rel=1e-9)
        assert row["grid_length_m"] == pytest.approx(polygon.length * US_SURVEY_FOOT_M, rel=1e-12)
    # A grid in its own CRS: no edge, datum or height part; the error is the state plane's scale.
    assert (out["area_from_datum_m2"].iloc[:2] == 0).all() and (out["area_from_height_m2"].iloc[:2] == 0).all()
    alone = gridtruth.audit_frame(gdf, "EPSG:2227", join=False)
    assert list(alone.columns) == gridtruth.result_columns() and list(alone.index) == [1041, 1042, 1043]


def test_geographic_frame_to_albers_and_missing_crs():
    features = demo_features()
    gdf = geopandas.GeoDataFrame.from_features(features, crs="EPSG:4326")
    out = gridtruth.audit_frame(gdf, "EPSG:5070", join=False)
    direct = gridtruth.Auditor("EPSG:5070", source_crs="EPSG:4326").audit_many(gdf.geometry.values)
    assert np.array_equal(out["true_area_m2"].to_numpy(), direct["true_area_m2"].to_numpy(), equal_nan=True)
    with pytest.raises(ValueError, match="no CRS"):
        gridtruth.audit_frame(geopandas.GeoDataFrame(geometry=[shapely.geometry.Point(0, 0)]), "EPSG:32615")
    # bounds=True: the bound columns, after the others, as audit_many(bounds=True) gives them.
    bounded = gridtruth.audit_frame(gdf, "EPSG:5070", join=False, bounds=True)
    assert list(bounded.columns) == gridtruth.result_columns(bounds=True)
    direct_bounds = gridtruth.Auditor("EPSG:5070", source_crs="EPSG:4326").audit_many(gdf.geometry.values,
                                                                                     bounds=True)
    for name in gridtruth.result_columns(bounds=True)[len(gridtruth.result_columns()):]:
        assert np.array_equal(bounded[name].to_numpy(), direct_bounds[name].to_numpy(), equal_nan=True), name
    assert "true_area_bound_m2" not in out.columns


def test_rank_equals_the_command(tmp_path):
    if not CLI:
        pytest.skip("GRIDTRUTH_CLI is not set (run through ctest)")
    out = tmp_path / "rank.csv"
    subprocess.run([CLI, "rank", DEMO, "--out", str(out), "--top", "10", "--threads", "2"], check=True,
                   capture_output=True)
    with open(out, newline="") as f:
        expected = list(csv.DictReader(f))
    gdf = geopandas.GeoDataFrame.from_features(demo_features(), crs="EPSG:4326")
    got = gridtruth.rank(gdf, threads=2)  # leaders = 10, as the command with --top 10
    assert list(got["crs"]) == [r["crs"] for r in expected]
    assert list(got["worst_ppm"]) == [float(r["worst_ppm"]) for r in expected]
    assert list(got["p95_ppm"]) == [float(r["p95_ppm"]) for r in expected]
    assert list(got["kind"]) == [r["kind"] for r in expected]


def test_tailor_audit_agrees_with_an_auditor_of_its_crs():
    features = [f for f in demo_features() if f["geometry"]["type"] in ("Polygon", "MultiPolygon")]
    shapes = [shapely.geometry.shape(f["geometry"]) for f in features]
    t = gridtruth.tailor(shapes, "transverse-mercator", source_crs="EPSG:4326", max_evaluations=200,
                         compare_registry=False)
    assert set(t["parameters"]) == {"lon_0", "k_0"} and t["objective_ppm"] <= t["start_objective_ppm"]
    table = gridtruth.Auditor(t["proj_string"]).audit_many(shapes)
    ok = table[table["status"] == "ok"]
    assert t["audit"]["worst_ppm"] == ok["area_error_ppm"].abs().max()
    with pytest.raises(ValueError, match="banana"):
        gridtruth.tailor(shapes, "banana", source_crs="EPSG:4326")
