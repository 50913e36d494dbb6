#!/usr/bin/env bash
# Reruns gridtruth's benchmarks and prints one table of ratios, every number measured in this run.
#   bash bench/run.sh            (about 3 minutes on 2 cores)
#   FEATURES=20000 RSS_SIZES="10000 100000 1000000" RANK_FEATURES=100000 PYTHON_FEATURES=100000 bash bench/run.sh
set -euo pipefail
cd "$(dirname "$0")/.."
features=${FEATURES:-20000}
rss_sizes=${RSS_SIZES:-"10000 100000 1000000"}
rank_features=${RANK_FEATURES:-100000}
python_features=${PYTHON_FEATURES:-100000}
bash cmake/install-deps.sh >/dev/null
extra=()
for p in python3-pyproj python3-shapely time; do
  dpkg-query -W -f='${Status}' "$p" 2>/dev/null | grep -q "install ok installed" || extra+=("$p")
done
if [ ${#extra[@]} -gt 0 ]; then
  SUDO=""; [ "$(id -u)" -ne 0 ] && SUDO=sudo
  DEBIAN_FRONTEND=noninteractive $SUDO apt-get install -y -qq --no-install-recommends "${extra[@]}" >/dev/null
fi
cmake --preset release >/dev/null
cmake --build --preset release --target bench_audit make_features make_ring audit_only rank_vs_audit gridtruth_cli \
    >/dev/null
bin=build/release
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
crs=EPSG:32615

echo "== kernel (Google Benchmark, 1 thread)" >&2
"$bin/bench/bench_audit" --benchmark_format=json --benchmark_min_time=1 > "$work/kernel.json"

echo "== command on $features features (1 km edges, 32 vertices)" >&2
"$bin/bench/make_features" "$features" 1000 32 ndjson "$work/f.ndjson"
seconds() { /usr/bin/time -f "%e %M" -o "$work/time" "$@" > /dev/null 2>&1 || true; cat "$work/time"; }
read -r t1 _ < <(seconds "$bin/examples/gridtruth" audit "$work/f.ndjson" --crs "$crs" --threads 1 --out "$work/o1.csv")
read -r t2 _ < <(seconds "$bin/examples/gridtruth" audit "$work/f.ndjson" --crs "$crs" --threads 2 --out "$work/o2.csv")
read -r lib _ _ < <("$bin/bench/audit_only" "$work/f.ndjson" "$crs")
read -r py _ < <(seconds /usr/bin/python3 bench/python_pipeline.py "$work/f.ndjson" "$crs" "$work/py.csv")

rss=()
for n in $rss_sizes; do
  echo "== peak memory on $n features" >&2
  "$bin/bench/make_features" "$n" 1000 8 geojson "$work/r.geojson"
  read -r _ kib < <(seconds "$bin/examples/gridtruth" audit "$work/r.geojson" --crs "$crs" --out /dev/null)
  rss+=("$n:$kib")
  rm -f "$work/r.geojson"
done

# Peak RSS per input byte on one huge ring (input = the GeoJSON text of the file, one feature). The baseline is the
# same command on an 8-vertex ring (PROJ's database, the libraries): the ratio above it is what the ring costs.
echo "== peak memory on single rings of 10^5 and 10^6 vertices" >&2
"$bin/bench/make_ring" 8 "$work/ring.geojson"
read -r _ base_kib < <(seconds "$bin/examples/gridtruth" audit "$work/ring.geojson" --crs "$crs" --out /dev/null)
rings=()
for spec in 100000:40000 1000000:40000 1000000:5000; do
  "$bin/bench/make_ring" "${spec%%:*}" "$work/ring.geojson" "${spec##*:}"
  bytes=$(stat -c %s "$work/ring.geojson")
  read -r _ kib < <(seconds "$bin/examples/gridtruth" audit "$work/ring.geojson" --crs "$crs" --out /dev/null)
  rings+=("$spec:$bytes:$kib")
done
rm -f "$work/ring.geojson"

echo "== ranking every candidate CRS of $rank_features features" >&2
rank_line=$("$bin/bench/rank_vs_audit" "$rank_features" 2 | grep -i 'ratio' | tail -n 1)

echo "== Python package and Dask on $python_features polygons" >&2
cmake --build --preset release --target gridtruth_python >/dev/null
python_rows=$(/usr/bin/python3 bench/python_bench.py "$bin" "$python_features" 2000)

echo "| measure | value | target |"
echo "|---|---|---|"
echo "| rank every candidate CRS / one plain audit, $rank_features features, 2 threads | $rank_line | ≤ 10 |"
echo "$python_rows"
/usr/bin/python3 - "$work/kernel.json" "$t1" "$t2" "$lib" "$py" "$base_kib" "${rings[*]}" "${rss[@]}" <<'PY'
import json, sys
kernel = json.load(open(sys.argv[1]))["benchmarks"]
t1, t2, lib, py = map(float, sys.argv[2:6])
base_kib, rings = int(sys.argv[6]), sys.argv[7].split()
per = {}
dens = {}
for b in kernel:
    name, arg = b["name"].split("/")[:2]
    per[(name, int(arg))] = b["per_vertex"] * 1e6  # µs per vertex
    if "densified_per_vertex" in b:
        dens[int(arg)] = b["densified_per_vertex"]
for edge, target in ((10, "≤ 2.0"), (1000, "≤ 2.0"), (100000, "≤ 5")):
    ratio = per[("BM_Audit", edge)] / per[("BM_Truth", edge)]
    print(f"| full audit / bare PolygonArea, per vertex, {edge} m edges | {ratio:.2f} "
          f"({per[('BM_Audit', edge)]:.2f} / {per[('BM_Truth', edge)]:.2f} µs) | {target} |")
for edge in (10, 1000):
    ratio = per[("BM_AuditInverseEveryEdge", edge)] / per[("BM_Audit", edge)]
    print(f"| audit with GeographicLib's inverse per edge / with closed-form short edges, {edge} m edges | {ratio:.2f} "
          f"({per[('BM_AuditInverseEveryEdge', edge)]:.2f} / {per[('BM_Audit', edge)]:.2f} µs) | (no target) |")
for edge in (10, 1000, 100000):
    ratio = per[("BM_Validate", edge)] / per[("BM_Audit", edge)]
    print(f"| validate() (coordinates + polygon topology) / full audit, per vertex, {edge} m edges | {ratio:.3f} "
          f"({per[('BM_Validate', edge)]:.3f} / {per[('BM_Audit', edge)]:.2f} µs) | ≤ 0.2 |")
for edge, target in ((10, "≤ 2"), (1000, "≤ 2"), (100000, "≤ 16")):
    print(f"| densified points per vertex, {edge} m edges | {dens[edge]:.2f} | {target} |")
print(f"| command 1 thread / 2 threads (speed-up) | {t1 / t2:.2f} ({t1:.2f} s / {t2:.2f} s) | ≥ 1.85 |")
print(f"| command, 1 thread / library audit alone | {t1 / lib:.2f} ({t1:.2f} s / {lib:.2f} s) | ≤ 1.25 |")
print(f"| command, 1 thread / Python pyproj+shapely pipeline | {t1 / py:.2f} ({t1:.2f} s / {py:.2f} s) | ≤ 0.5 |")
for ring in rings:
    vertices, radius_m, size, kib = map(int, ring.split(":"))
    print(f"| peak RSS / input bytes, one ring of {vertices:,} vertices ({radius_m / 1000:g} km star, "
          f"{size / 2**20:.1f} MiB) | {kib * 1024 / size:.2f} ({kib / 1024:.0f} MiB; above the "
          f"{base_kib / 1024:.0f} MiB of an 8-vertex ring: {(kib - base_kib) * 1024 / size:.2f}) | "
          f"{'< 5' if vertices >= 1000000 else '< 5 above the baseline'} |")
for item in sys.argv[8:]:
    n, kib = item.split(":")
    print(f"| peak RSS, {int(n):,} features | {int(kib) / 1024:.0f} MiB | flat, < 200 MiB |")
PY
