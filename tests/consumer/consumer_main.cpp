// A program of a gridtruth user, built three ways by the consumer tests (find_package of the installed tree,
// add_subdirectory of the source tree, pkg-config). It checks what it can check without gridtruth's own tests:
// the version header matches the version the build expects, and one audit gives a sane answer.
#include <gridtruth/audit.hpp>
#include <gridtruth/version.hpp>

#include <cmath>
#include <cstdio>
#include <string_view>

#ifndef EXPECTED_VERSION
#error "EXPECTED_VERSION (\"MAJOR.MINOR.PATCH\") must be defined by the consumer build"
#endif

int main() {
  if (gridtruth::version_string() != std::string_view(EXPECTED_VERSION)) {
    std::fprintf(stderr, "version.hpp says %s, the build expects %s\n", GRIDTRUTH_VERSION_STRING, EXPECTED_VERSION);
    return 1;
  }
  gridtruth::AuditOptions options;
  options.target_crs = "EPSG:32631";  // WGS 84 / UTM zone 31N, central meridian 3°E
  const gridtruth::Auditor auditor(options);
  // A 0.01° square on the central meridian: the grid shrinks areas by k0² = 0.9996² (UTM's definition),
  // -799.84 ppm.
  const auto r = auditor.audit(gridtruth::Geometry::polygon({{2.995, 44.995}, {3.005, 44.995}, {3.005, 45.005},
                                                             {2.995, 45.005}}));
  if (r.status != gridtruth::Status::ok || !r.area) {
    std::fprintf(stderr, "audit failed: %s\n", r.message.c_str());
    return 1;
  }
  const double expected_ppm = (0.9996 * 0.9996 - 1) * 1e6;
  std::printf("gridtruth %s: area error %+.2f ppm (expected about %+.2f)\n", GRIDTRUTH_VERSION_STRING,
              r.area->error_ppm, expected_ppm);
  return std::fabs(r.area->error_ppm - expected_ppm) < 1.0 ? 0 : 1;
}
