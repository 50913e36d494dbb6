#!/usr/bin/python3
"""The Python package's speed, ratios measured in one run (printed as rows of bench/run.sh's table):
  python_bench.py BUILD_DIR FEATURES LOOP_FEATURES [PARTS]
PARTS: a comma-separated subset of "command,loop,dask" (default: all three; "loop" needs the audit_many timings of
"command" and runs them itself).
BUILD_DIR holds examples/gridtruth, bench/make_features and python/gridtruth (PYTHONPATH is set here).
  1. audit_many on shapely polygons (2 threads, conversion from shapely included) / the command on the same
     polygons as newline-delimited GeoJSON (2 threads, reading included);
  2. audit_many (1 thread) / a plain loop of pyproj (grid), shapely (planar area) and geographiclib (true area and
     perimeter) per feature, per feature, the loop timed on LOOP_FEATURES of them;
  3. gridtruth.dask on a LocalCluster: 1 worker / 2 workers (1 thread each), the summary of FEATURES features in 8
     files (the reduction runs on the workers; cluster start-up not timed)."""
import json
import os
import subprocess
import sys
import tempfile
import time


def timed(f):
    t = time.perf_counter()
    f()
    return time.perf_counter() - t


def main():
    build, n, loop_n = sys.argv[1], int(sys.argv[2]), int(sys.argv[3])
    parts_wanted = set((sys.argv[4] if len(sys.argv) > 4 else "command,loop,dask").split(","))
    sys.path.insert(0, os.path.join(build, "python"))
    os.environ["PYTHONPATH"] = os.path.join(build, "python") + os.pathsep + os.environ.get("PYTHONPATH", "")
    import shapely.geometry
    import gridtruth
    import gridtruth.dask
    crs = "EPSG:32615"
    work = tempfile.mkdtemp()
    path = os.path.join(work, "f.ndjson")
    subprocess.run([os.path.join(build, "bench", "make_features"), str(n), "1000", "32", "ndjson", path], check=True,
                   capture_output=True)
    with open(path) as f:
        shapes = [shapely.geometry.shape(json.loads(line)["geometry"]) for line in f]

    rows = []
    if parts_wanted & {"command", "loop"}:
        cli = os.path.join(build, "examples", "gridtruth")
        t_cli = timed(lambda: subprocess.run([cli, "audit", path, "--crs", crs, "--threads", "2", "--out",
                                              os.devnull], capture_output=True))
        auditor = gridtruth.Auditor(crs)
        t_py2 = timed(lambda: auditor.audit_many(shapes, threads=2))
        rows.append(f"| Python audit_many (2 threads, from shapely) / command (2 threads), {n:,} polygons | "
                    f"{t_py2 / t_cli:.2f} ({t_py2:.2f} s / {t_cli:.2f} s) | ≤ 1.3 |")
    if "loop" in parts_wanted:
        t_py1 = timed(lambda: auditor.audit_many(shapes, threads=1))
        from geographiclib.geodesic import Geodesic
        from pyproj import Transformer
        from shapely.ops import transform
        to_grid = Transformer.from_crs("EPSG:4326", crs, always_xy=True)
        wgs84 = Geodesic.WGS84

        def plain_loop():
            for s in shapes[:loop_n]:
                p = wgs84.Polygon()
                for lon, lat in s.exterior.coords[:-1]:
                    p.AddPoint(lat, lon)
                _, perimeter, area = p.Compute(False, True)
                grid = transform(to_grid.transform, s)
                _ = (grid.area - abs(area), grid.length - perimeter)
        t_loop = timed(plain_loop)
        per_py, per_loop = t_py1 / n, t_loop / loop_n
        rows.append(f"| Python audit_many (1 thread) / pyproj+shapely+geographiclib loop, per feature | "
                    f"{per_py / per_loop:.3f} ({per_py * 1e6:.0f} µs / {per_loop * 1e6:.0f} µs) | ≤ 0.3 |")

    if "dask" in parts_wanted:
        parts = []
        for k in range(8):
            parts.append(os.path.join(work, f"part-{k}.ndjson"))
        with open(path) as f:
            lines = f.readlines()
        for k, part in enumerate(parts):
            with open(part, "w") as f:
                f.writelines(lines[k::8])
        from distributed import Client, LocalCluster
        t_dask = {}
        for workers in (1, 2):
            with LocalCluster(n_workers=workers, threads_per_worker=1, processes=True, dashboard_address=":0") as c, \
                    Client(c):
                gridtruth.dask.summary(gridtruth.dask.audit(parts[:workers], crs))  # workers import and build once
                t_dask[workers] = timed(lambda: gridtruth.dask.summary(gridtruth.dask.audit(parts, crs)))
        rows.append(f"| Dask LocalCluster 1 worker / 2 workers (speed-up), {n:,} polygons in 8 files | "
                    f"{t_dask[1] / t_dask[2]:.2f} ({t_dask[1]:.2f} s / {t_dask[2]:.2f} s) | ≥ 1.7 |")
    print(f"(load average {os.getloadavg()[0]:.1f})")
    for row in rows:
        print(row)


if __name__ == "__main__":  # Dask's spawned workers import this file again
    main()
