"""gridtruth.dask on a LocalCluster of two worker processes started here: the same rows and summary as one process
(and as the command)."""
import dask.dataframe as dd
import pandas as pd
import pytest
import shapely.geometry
from distributed import Client, LocalCluster

import gridtruth
import gridtruth.dask
from conftest import demo_features, random_polygons, run_cli, write_ndjson

TOLERANCE = "area=0.05%,length=1:2000"


@pytest.fixture(scope="module")
def client():
    # Worker processes inherit PYTHONPATH (ctest points it at the build tree's package).
    cluster = LocalCluster(n_workers=2, threads_per_worker=2, processes=True, dashboard_address=":0")
    with Client(cluster) as c:
        yield c
    cluster.close()


@pytest.fixture(scope="module")
def features():
    print("seed 21")
    found = demo_features() + random_polygons(seed=21, count=400)
    found.insert(5, {"type": "Feature", "id": "BAD-1", "properties": {},
                     "geometry": {"type": "Polygon", "coordinates": [[[-95, 44], [-94.9, 44], [-95, 44]]]}})
    return found


def test_files_on_two_workers_equal_one_process_and_the_command(client, features, tmp_path):
    paths = []
    for k, start in enumerate(range(0, len(features), 150)):
        paths.append(tmp_path / f"part-{k}.ndjson")
        write_ndjson(paths[-1], features[start:start + 150])
    whole = tmp_path / "whole.ndjson"
    write_ndjson(whole, features)
    rows, cli_summary = run_cli([str(whole), "--crs", "EPSG:32615", "--tolerance", TOLERANCE], tmp_path)

    results = gridtruth.dask.audit([str(p) for p in paths], "EPSG:32615", tolerance=TOLERANCE)
    assert results.npartitions == len(paths)
    got = results.compute().reset_index(drop=True)
    ran_on = client.run(lambda: __import__("gridtruth.dask").dask._prototypes.__len__())
    assert len(ran_on) == 2  # two worker processes

    auditor = gridtruth.Auditor("EPSG:32615", tolerance=TOLERANCE)
    one = auditor.audit_many([f["geometry"] for f in features], ids=[f["id"] for f in features], threads=1)
    pd.testing.assert_frame_equal(got, one, check_exact=True)
    assert list(got["id"]) == [r["id"] for r in rows]
    assert list(got["true_area_m2"].fillna(-1)) == [float(r["true_area_m2"] or -1) for r in rows]

    distributed = gridtruth.dask.summary(results, "EPSG:32615", tolerance=TOLERANCE)
    assert distributed == gridtruth.summary(one, auditor)
    for key in ("counts", "totals", "worst_features", "exit_status", "target_crs", "options"):
        assert distributed[key] == cli_summary[key], key


def test_dataframe_partitions_keep_the_index(client, features):
    shapes = [shapely.geometry.shape(f["geometry"]) for f in features]
    frame = pd.DataFrame({"geometry": shapes, "h": [f["properties"].get("h", 0.0) for f in features]},
                         index=pd.RangeIndex(1000, 1000 + len(shapes)))
    ddf = dd.from_pandas(frame, npartitions=4)
    results = gridtruth.dask.audit(ddf, "EPSG:32615", source_crs="EPSG:4326", height_field="h")
    got = results.compute()
    auditor = gridtruth.Auditor("EPSG:32615")
    one = auditor.audit_many(shapes, heights=frame["h"], ids=[str(i) for i in frame.index])
    one.index = frame.index
    assert "combined_factor" in got.columns
    pd.testing.assert_frame_equal(got, one, check_exact=True)
    with pytest.raises(ValueError, match="EPSG:999999"):
        gridtruth.dask.audit(ddf, "EPSG:999999", source_crs="EPSG:4326")
    with pytest.raises(ValueError, match="no CRS"):
        gridtruth.dask.audit(ddf, "EPSG:32615")
