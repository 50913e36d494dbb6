// Cost of a full audit against the bare truth (GeographicLib's PolygonArea) on the same polygons, per vertex.
// Run through bench/run.sh, which turns the timings into ratios measured in one run.
#include <GeographicLib/PolygonArea.hpp>
#include <benchmark/benchmark.h>

#include <map>
#include <gridtruth/audit.hpp>

#include "polygons.hpp"

namespace {

constexpr int kVertices = 32;
constexpr std::size_t kPolygons = 256;

const std::vector<gridtruth::Geometry>& shapes(double edge_m) {
  static std::map<double, std::vector<gridtruth::Geometry>> cache;
  auto& v = cache[edge_m];
  if (v.empty()) v = gridtruth::bench::polygons(kPolygons, edge_m, edge_m >= 1e5 ? 12 : kVertices);
  return v;
}

std::size_t vertex_total(const std::vector<gridtruth::Geometry>& v) {
  std::size_t n = 0;
  for (const auto& g : v) n += g.polygons[0].outer.size();
  return n;
}

void BM_Truth(benchmark::State& state) {
  const double edge_m = static_cast<double>(state.range(0));
  const auto& polys = shapes(edge_m);
  double sink = 0;
  for (auto _ : state) sink += gridtruth::bench::bare_truth(polys);
  benchmark::DoNotOptimize(sink);
  state.counters["per_vertex"] = benchmark::Counter(static_cast<double>(vertex_total(polys)),
                                                    benchmark::Counter::kIsIterationInvariantRate |
                                                        benchmark::Counter::kInvert);
}

/// The full audit; `closed_form` false solves every edge with GeographicLib (AuditOptions::closed_form_short_edges).
void audit_benchmark(benchmark::State& state, bool closed_form) {
  const double edge_m = static_cast<double>(state.range(0));
  const auto& polys = shapes(edge_m);
  gridtruth::AuditOptions options;
  options.target_crs = "EPSG:32615";
  options.closed_form_short_edges = closed_form;
  const gridtruth::Auditor auditor(options);
  double sink = 0;
  std::size_t densified = 0;
  for (auto _ : state) {
    densified = 0;
    for (const auto& g : polys) {
      const gridtruth::AuditResult r = auditor.audit(g);
      sink += r.area->grid;
      densified += r.densified_points;
    }
  }
  benchmark::DoNotOptimize(sink);
  const double vertices = static_cast<double>(vertex_total(polys));
  state.counters["per_vertex"] = benchmark::Counter(
      vertices, benchmark::Counter::kIsIterationInvariantRate | benchmark::Counter::kInvert);
  state.counters["densified_per_vertex"] = static_cast<double>(densified) / vertices;
}

void BM_Audit(benchmark::State& state) { audit_benchmark(state, true); }

/// validate() alone (coordinates and polygon topology), which the audit runs on every feature: its share of the
/// audit is BM_Validate / BM_Audit per vertex.
void BM_Validate(benchmark::State& state) {
  const double edge_m = static_cast<double>(state.range(0));
  const auto& polys = shapes(edge_m);
  std::size_t problems = 0;
  for (auto _ : state) {
    for (const auto& g : polys) problems += gridtruth::validate(g).size();
  }
  benchmark::DoNotOptimize(problems);
  state.counters["per_vertex"] = benchmark::Counter(static_cast<double>(vertex_total(polys)),
                                                    benchmark::Counter::kIsIterationInvariantRate |
                                                        benchmark::Counter::kInvert);
}
void BM_AuditInverseEveryEdge(benchmark::State& state) { audit_benchmark(state, false); }

}  // namespace

BENCHMARK(BM_Truth)->Arg(10)->Arg(1000)->Arg(100000)->Unit(benchmark::kMicrosecond);
BENCHMARK(BM_Audit)->Arg(10)->Arg(1000)->Arg(100000)->Unit(benchmark::kMicrosecond);
BENCHMARK(BM_Validate)->Arg(10)->Arg(1000)->Arg(100000)->Unit(benchmark::kMicrosecond);
BENCHMARK(BM_AuditInverseEveryEdge)->Arg(10)->Arg(1000)->Unit(benchmark::kMicrosecond);
BENCHMARK_MAIN();
