"""Shared helpers of the Python tests: the command's CSV and summary for comparison, demo features, random polygons.

Run by ctest (python/CMakeLists.txt) with PYTHONPATH at the build tree's package and GRIDTRUTH_CLI set."""
import csv
import json
import math
import os
import random
import subprocess

import numpy as np
import pytest

SOURCE_DIR = os.environ.get("GRIDTRUTH_SOURCE_DIR", os.path.join(os.path.dirname(__file__), "..", ".."))
DEMO = os.path.join(SOURCE_DIR, "examples", "data", "habitat_survey.geojson")
CLI = os.environ.get("GRIDTRUTH_CLI")


def run_cli(args, tmp_path):
    """Runs `gridtruth audit` and returns (rows of the CSV as dicts of text, summary JSON). The CSV has every
    number in full (--all-digits), so cells can be compared with the module's doubles to the last bit."""
    if not CLI:
        pytest.skip("GRIDTRUTH_CLI is not set (run through ctest)")
    out, summary = tmp_path / "cli.csv", tmp_path / "cli.json"
    done = subprocess.run([CLI, "audit", *args, "--all-digits", "--out", str(out), "--summary", str(summary)],
                          capture_output=True, text=True)
    assert done.returncode in (0, 1), done.stderr
    with open(out, newline="") as f:
        rows = list(csv.DictReader(f))
    with open(summary) as f:
        return rows, json.load(f)


def cli_column(rows, name, kind):
    """A column of the command's CSV as the DataFrame holds it: numbers (round-trip text) as float64, NaN when
    empty; text as is."""
    if kind == "text":
        return [r[name] for r in rows]
    return np.array([float(r[name]) if r[name] != "" else math.nan for r in rows])


def assert_table_equals_cli(table, rows, combined_factor=False, bounds=False):
    """Every cell of `table` equals the command's CSV cell to the last bit (same columns, same order)."""
    import gridtruth
    from gridtruth import _core
    assert list(table.columns) == list(rows[0].keys())
    assert len(table) == len(rows)
    for name, kind in _core.result_columns(combined_factor, bounds):
        expected = cli_column(rows, name, kind)
        if kind == "text":
            assert list(table[name]) == expected, name
        else:
            got = table[name].astype(float).to_numpy()
            assert np.array_equal(got, expected, equal_nan=True), (name, got, expected)
    assert gridtruth.result_columns(combined_factor, bounds) == list(rows[0].keys())


def demo_features():
    with open(DEMO) as f:
        return json.load(f)["features"]


def random_polygons(seed, count, lon0=-93.0, lat0=45.0):
    """Star-shaped polygons of 6 to 24 vertices, 50 m to 5 km across, around (lon0, lat0): GeoJSON dicts."""
    rng = random.Random(seed)
    features = []
    for k in range(count):
        clon, clat = lon0 + rng.uniform(-2.5, 2.5), lat0 + rng.uniform(-3, 3)
        n = rng.randint(6, 24)
        radius_deg = rng.uniform(0.0005, 0.05)
        ring = []
        for j in range(n):
            a = 2 * math.pi * j / n
            r = radius_deg * rng.uniform(0.5, 1.0)
            ring.append([clon + r * math.cos(a) / math.cos(math.radians(clat)), clat + r * math.sin(a)])
        ring.append(ring[0])
        features.append({"type": "Feature", "id": f"R-{k}", "properties": {"h": rng.uniform(0, 2000)},
                         "geometry": {"type": "Polygon", "coordinates": [ring]}})
    return features


def write_ndjson(path, features):
    with open(path, "w") as f:
        for feature in features:
            f.write(json.dumps(feature) + "\n")
