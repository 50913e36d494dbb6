#!/usr/bin/python3
"""Cross-check of tests/validity_test.cpp with Debian's python3-shapely (GEOS): prints explain_validity() for
each case. Run by hand when the cases change (not at test time):  /usr/bin/python3 tests/tools/validity_shapely.py
Coordinates are (longitude, latitude) degrees; features are small and far from the antimeridian and the poles,
where planar and spherical topology agree."""
from shapely import wkt
from shapely.validation import explain_validity

CASES = {
    "bowtie": "POLYGON((10 45,10.01 45.01,10.01 45,10 45.01,10 45))",
    "hole_outside": "POLYGON((10 45,10.01 45,10.01 45.01,10 45.01,10 45),"
                    "(10.02 45.002,10.024 45.002,10.024 45.006,10.02 45.006,10.02 45.002))",
    "hole_crosses_shell": "POLYGON((10 45,10.01 45,10.01 45.01,10 45.01,10 45),"
                          "(10.005 45.002,10.015 45.002,10.015 45.006,10.005 45.006,10.005 45.002))",
    "nested_holes": "POLYGON((10 45,10.01 45,10.01 45.01,10 45.01,10 45),"
                    "(10.001 45.001,10.009 45.001,10.009 45.009,10.001 45.009,10.001 45.001),"
                    "(10.004 45.004,10.006 45.004,10.006 45.006,10.004 45.006,10.004 45.004))",
    "parts_overlap": "MULTIPOLYGON(((10 45,10.01 45,10.01 45.01,10 45.01,10 45)),"
                     "((10.005 45.005,10.015 45.005,10.015 45.015,10.005 45.015,10.005 45.005)))",
    "part_inside_part": "MULTIPOLYGON(((10 45,10.01 45,10.01 45.01,10 45.01,10 45)),"
                        "((10.002 45.002,10.004 45.002,10.004 45.004,10.002 45.004,10.002 45.002)))",
    "spike": "POLYGON((10 45,10.01 45,10.01 45.01,10.005 45.01,10.005 45.02,10.005 45.01,10 45.01,10 45))",
    "disconnected": "POLYGON((10 45,10.005 45,10.01 45,10.01 45.01,10.005 45.01,10 45.01,10 45),"
                    "(10.005 45,10.006 45.005,10.005 45.01,10.004 45.005,10.005 45))",
    "hole_touches_shell_once": "POLYGON((10 45,10.005 45,10.01 45,10.01 45.01,10.005 45.01,10 45.01,10 45),"
                               "(10.005 45,10.006 45.005,10.004 45.005,10.005 45))",
    "nearly_collinear": "POLYGON((10 45,10.005 45.000000001,10.01 45,10.01 45.01,10 45.01,10 45))",
    "duplicate_vertices": "POLYGON((10 45,10 45,10.01 45,10.01 45.01,10.01 45.01,10 45.01,10 45))",
}

for name, text in CASES.items():
    print(f"{name}: {explain_validity(wkt.loads(text))}")
