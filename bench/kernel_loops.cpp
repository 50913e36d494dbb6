// The audit and the bare truth (GeographicLib's PolygonArea) as two plain loops over the same generated polygons,
// for instruction counting with callgrind (repeatable whatever else the machine is doing; bench/instructions.sh).
//   kernel_loops EDGE_M      (200 polygons of 32 vertices, 12 for edges of 100 km or more, in UTM zone 15N)
#include <gridtruth/audit.hpp>

#include <cstdio>
#include <cstdlib>

#include "polygons.hpp"

namespace {

__attribute__((noinline)) double truth_loop(const std::vector<gridtruth::Geometry>& polygons) {
  return gridtruth::bench::bare_truth(polygons);
}

__attribute__((noinline)) double audit_loop(const gridtruth::Auditor& auditor,
                                            const std::vector<gridtruth::Geometry>& polygons) {
  double sink = 0;
  for (const auto& g : polygons) sink += auditor.audit(g).area->grid;
  return sink;
}

}  // namespace

int main(int argc, char** argv) {
  if (argc != 2) {
    std::fprintf(stderr, "usage: kernel_loops EDGE_M\n");
    return 2;
  }
  const double edge_m = std::atof(argv[1]);
  const auto polygons = gridtruth::bench::polygons(200, edge_m, edge_m >= 1e5 ? 12 : 32);
  gridtruth::AuditOptions options;
  options.target_crs = "EPSG:32615";
  const gridtruth::Auditor auditor(options);
  std::printf("%g %g\n", truth_loop(polygons), audit_loop(auditor, polygons));
  return 0;
}
