// The cost of ranking every candidate CRS of an extent, as a ratio to one plain audit of the same input, both
// measured in this run on the same features and threads (issue 6 target: ratio ≤ 10).
//   rank_vs_audit [COUNT=100000] [THREADS=0]
#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <optional>
#include <thread>
#include <vector>

#include "gridtruth/audit.hpp"
#include "gridtruth/rank.hpp"
#include "polygons.hpp"

namespace {

double seconds_since(std::chrono::steady_clock::time_point t0) {
  return std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
}

/// One plain audit of every feature in one CRS, spread over `threads` clones (what `gridtruth audit` does).
double plain_audit_s(const std::vector<gridtruth::Geometry>& features, const char* crs, unsigned threads) {
  const auto t0 = std::chrono::steady_clock::now();
  gridtruth::AuditOptions o;
  o.target_crs = crs;
  const gridtruth::Auditor first(o);
  std::vector<gridtruth::Auditor> clones;
  for (unsigned t = 0; t < threads; ++t) clones.push_back(first.clone());
  std::vector<double> sink(threads, 0);
  std::vector<std::thread> pool;
  for (unsigned t = 0; t < threads; ++t) {
    pool.emplace_back([&, t] {
      for (std::size_t i = t; i < features.size(); i += threads) {
        const auto r = clones[t].audit(features[i]);
        if (r.area) sink[t] += r.area->error_ppm;
      }
    });
  }
  for (auto& th : pool) th.join();
  return seconds_since(t0);
}

}  // namespace

int main(int argc, char** argv) {
  const std::size_t count = argc > 1 ? std::strtoull(argv[1], nullptr, 10) : 100000;
  unsigned threads = argc > 2 ? static_cast<unsigned>(std::atoi(argv[2])) : 0;
  if (threads == 0) threads = std::max(1u, std::thread::hardware_concurrency());
  // 1 km edges, 32 vertices, spread over 96°W–90°W, 40°N–48°N (bench/polygons.hpp).
  const auto features = gridtruth::bench::polygons(count, 1000, 32);
  const double audit_s = plain_audit_s(features, "EPSG:32615", threads);

  gridtruth::RankOptions o;
  o.metric = gridtruth::RankMetric::area;
  o.threads = threads;
  std::vector<gridtruth::RankFeature> to_rank;  // the same geometries, no heights (built before the clock starts)
  for (const gridtruth::Geometry& g : features) to_rank.push_back({g, std::nullopt});
  const auto t0 = std::chrono::steady_clock::now();
  const gridtruth::RankReport report = gridtruth::rank_crs(to_rank, o);
  const double rank_s = seconds_since(t0);

  std::printf("features %zu, threads %u, candidates %zu, audited exactly %zu (sample %zu, best %zu on all)\n", count,
              threads, report.candidates, report.ranked.size(), report.sample,
              report.sample < report.features ? o.full_reaudit : report.ranked.size());
  std::printf("plain audit (EPSG:32615) %.3f s, rank %.3f s, ratio %.2f (target <= 10)\n", audit_s, rank_s,
              rank_s / audit_s);
  if (!report.ranked.empty()) {
    std::printf("best: %s (%s), worst |area ppm| %.4f\n", report.ranked.front().candidate.crs.c_str(),
                report.ranked.front().candidate.name.c_str(), report.ranked.front().worst_ppm);
  }
  return 0;
}
