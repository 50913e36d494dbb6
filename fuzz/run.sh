#!/usr/bin/env bash
# Builds the libFuzzer targets (clang, ASan + UBSan) into build/fuzz and runs each for a bounded time over its seeds
# (fuzz/corpus/<target>/) and every input kept in fuzz/regressions/. Run by .ci/run; fails on the first finding.
#   bash fuzz/run.sh                     (each target FUZZ_SECONDS=60, about 4 minutes with the build on 2 cores)
#   FUZZ_SECONDS=600 bash fuzz/run.sh crs_fuzz
# New inputs go to build/fuzz/corpus/<target>/ and findings to build/fuzz/artifacts/ (the source tree is not
# written to). Keep a finding: fix it, then copy it to fuzz/regressions/ under a name saying what it caught.
set -euo pipefail
cd "$(dirname "$0")/.."
seconds=${FUZZ_SECONDS:-60}
targets=("$@")
[ ${#targets[@]} -gt 0 ] || targets=(reader_fuzz wkt_fuzz crs_fuzz)
launcher=()
command -v ccache >/dev/null && launcher=(-DCMAKE_CXX_COMPILER_LAUNCHER=ccache)
CXX=clang++ cmake -S fuzz -B build/fuzz -G Ninja -DCMAKE_BUILD_TYPE= "${launcher[@]}" >/dev/null
cmake --build build/fuzz --target "${targets[@]}"
mkdir -p build/fuzz/artifacts
export ASAN_OPTIONS=${ASAN_OPTIONS:-detect_leaks=1}
export UBSAN_OPTIONS=${UBSAN_OPTIONS:-print_stacktrace=1}
for t in "${targets[@]}"; do
  mkdir -p "build/fuzz/corpus/$t"
  echo "== $t: ${seconds} s"
  # -timeout: an input taking longer than 20 s is a finding (a hang); -max_len keeps each input a few kB.
  "build/fuzz/$t" -max_total_time="$seconds" -timeout=20 -max_len=4096 -rss_limit_mb=2048 -print_final_stats=1 \
      -artifact_prefix="build/fuzz/artifacts/$t-" "build/fuzz/corpus/$t" "fuzz/corpus/$t" fuzz/regressions \
      2> "build/fuzz/$t.log" || { tail -n 60 "build/fuzz/$t.log"; echo "fuzz: $t found a problem (above)"; exit 1; }
  grep -E '^stat::(number_of_executed_units|peak_rss_mb)|^#[0-9]+ *DONE' "build/fuzz/$t.log" || true
done
