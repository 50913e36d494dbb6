// Audits one polygon: how much does its area change on the grid of UTM zone 15N, and why?
#include <gridtruth/audit.hpp>

#include <cstdio>

int main() {
  gridtruth::AuditOptions options;
  options.target_crs = "EPSG:32615";  // WGS 84 / UTM zone 15N
  options.height_m = 350;              // the site sits 350 m above the ellipsoid
  options.tolerances = gridtruth::Tolerance::parse_list("area=0.05%");
  const gridtruth::Auditor auditor(options);

  // An invented 2 km × 1.5 km site, (longitude, latitude) in degrees on WGS 84.
  const auto site = gridtruth::Geometry::polygon(
      {{-95.40, 44.10}, {-95.375, 44.10}, {-95.375, 44.1135}, {-95.40, 44.1135}});
  const gridtruth::AuditResult r = auditor.audit(site);

  const gridtruth::Budget& a = *r.area;
  std::printf("true area %.1f m2, grid area %.1f m2: %+.1f ppm (%s)\n", a.reference, a.grid, a.error_ppm,
              r.verdict == gridtruth::Verdict::pass ? "pass" : "fail");
  std::printf("  from edges %+.3f m2, scale %+.3f m2, datum %+.3f m2, height %+.3f m2\n", a.from_edges,
              a.from_scale, a.from_datum, a.from_height);
  return r.verdict == gridtruth::Verdict::pass ? 0 : 1;
}
