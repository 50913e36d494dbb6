"""Shapely 1.x geometries read straight from GEOS (python/src/geometry_input.cpp, geos_geometry()) give the same
results, cell for cell, as the same geometries read from the WKB that shapely's GEOS writer makes of them
(`geom.wkb`; the reference route: GEOS's WKB writer, ISO 19125-1 / OGC 06-103r4 §8.2, parsed independently of
GEOS), including empty parts, Z coordinates, rings and what the reader does not take (GeometryCollection)."""
import math
import random

import numpy as np
import pytest
import shapely
import shapely.geometry
import shapely.wkt

import gridtruth
from gridtruth import _core
from conftest import random_polygons


def debian_shapely_1():
    """Shapely 1.x on the system libgeos_c.so.1 (Debian's python3-shapely): the GEOS route must be on there."""
    if not shapely.__version__.startswith("1."):
        return False
    from shapely import geos
    return geos.lgeos._lgeos._name == "libgeos_c.so.1"


def assert_tables_equal(got, expected):
    assert list(got.columns) == list(expected.columns)
    assert len(got) == len(expected)
    for name, kind in _core.result_columns(False):
        if kind == "text":
            assert list(got[name]) == list(expected[name]), name
        else:
            a, b = got[name].astype(float).to_numpy(), expected[name].astype(float).to_numpy()
            assert np.array_equal(a, b, equal_nan=True), (name, a, b)


def test_debian_shapely_is_read_through_geos():
    if not debian_shapely_1():
        pytest.skip(f"shapely {shapely.__version__} is not Debian's 1.x on the system GEOS")
    _ = shapely.geometry.Point(0, 0)  # shapely imported: the link is decided
    assert _core._shapely_geos_linked()


def odd_geometries():
    """Every kind the readers take, with holes, Z, empty parts and empty geometries, around 45°N 93°W (invented)."""
    wkt = [
        "POLYGON ((-93 45, -92.9 45, -92.9 45.1, -93 45.1, -93 45), "
        "(-92.98 45.02, -92.95 45.02, -92.95 45.05, -92.98 45.02))",
        "POLYGON Z ((-93 45 10, -92.99 45 20, -92.99 45.01 30, -93 45 10))",
        "MULTIPOLYGON (((-93 45, -92.99 45, -92.99 45.01, -93 45)), ((-92 44, -91.99 44, -91.99 44.01, -92 44)))",
        "MULTIPOLYGON (EMPTY, ((-93 45, -92.99 45, -92.99 45.01, -93 45)))",
        "LINESTRING (-93 45, -92.5 45.2, -92 45.1)",
        "LINESTRING Z (-93 45 1, -92.5 45.2 2)",
        "LINEARRING (-93 45, -92.99 45, -92.99 45.01, -93 45)",
        "MULTILINESTRING ((-93 45, -92.9 45), (-92 44, -91.9 44.1))",
        "MULTILINESTRING (EMPTY, (-93 45, -92.9 45))",
        "POINT (-93 45)",
        "MULTIPOINT (-93 45, -92 44)",
        "MULTIPOINT (EMPTY, (-93 45))",
        "POINT EMPTY",
        "POLYGON EMPTY",
        "LINESTRING EMPTY",
        "MULTIPOLYGON EMPTY",
        "GEOMETRYCOLLECTION (POINT (-93 45))",
        "POLYGON ((-93 45, -92.9 45, -93 45))",             # too few vertices: invalid, with the library's message
        "POLYGON ((-93 95, -92.9 45, -92.9 45.1, -93 95))",  # latitude out of range
    ]
    shapes = [shapely.wkt.loads(t) for t in wkt]
    shapes += [shapely.geometry.Polygon(), shapely.geometry.Point(math.nan, math.nan)]
    return shapes


def test_every_kind_equals_its_wkb():
    auditor = gridtruth.Auditor("EPSG:32615", tolerance="area=0.05%")
    shapes = odd_geometries()
    got = auditor.audit_many(shapes, threads=1)
    expected = auditor.audit_many([s.wkb for s in shapes], threads=1)
    assert_tables_equal(got, expected)
    assert set(got["status"]) >= {"ok", "invalid"}
    for s in shapes:  # one at a time (Auditor.audit) as well
        a, b = auditor.audit(s), auditor.audit(s.wkb)
        assert (a.status, a.message, a.geometry_type, a.vertices) == (b.status, b.message, b.geometry_type, b.vertices)
        for budget in ("area", "length"):
            x, y = getattr(a, budget), getattr(b, budget)
            assert (x is None) == (y is None)
            if x is not None:
                assert (x.reference, x.grid) == (y.reference, y.grid)


def test_many_polygons_on_two_threads_equal_their_wkb():
    # More than 4096 geometries per thread, so that the GEOS route reads on two threads; mixed with what it does not
    # take (None, a mapping, WKB, a collection) at random places, in order.
    seed = 1616
    print(f"seed {seed}")
    rng = random.Random(seed)
    shapes = [shapely.geometry.shape(f["geometry"]) for f in random_polygons(seed=seed, count=9000)]
    others = [None, {"type": "Point", "coordinates": [-93.0, 45.0]}, shapes[0].wkb,
              shapely.wkt.loads("GEOMETRYCOLLECTION (POINT (-93 45))")]
    for k in range(40):
        shapes.insert(rng.randrange(len(shapes)), others[k % len(others)])
    auditor = gridtruth.Auditor("EPSG:32615")
    expected = auditor.audit_many([s.wkb if hasattr(s, "wkb") else s for s in shapes], threads=1)
    assert_tables_equal(auditor.audit_many(shapes, threads=2), expected)
    array = np.empty(len(shapes), dtype=object)  # element by element: numpy would unpack a shapely 1.8 collection
    for k, s in enumerate(shapes):
        array[k] = s
    assert_tables_equal(auditor.audit_many(array, threads=2), expected)
