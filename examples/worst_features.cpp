// Audits every feature of a file (GeoJSON, newline-delimited GeoJSON, or CSV with a WKT column) against a
// projected CRS and prints the five features whose grid measure is furthest from the truth, with their budgets.
//
//   worst_features [FILE [TARGET_CRS]]      (defaults: a few built-in features, EPSG:32615)
//
// Polygons are ranked by area error, lines by length error, both in ppm; points have neither and are skipped.
#include <gridtruth/audit.hpp>
#include <gridtruth/error.hpp>
#include <gridtruth/io.hpp>
#include <gridtruth/runner.hpp>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <sstream>
#include <string>
#include <vector>

namespace {

struct Ranked {
  std::string id;
  gridtruth::AuditResult result;
  double error_ppm = 0;  // the area's for polygons, the length's for lines
};

// Invented features across UTM zone 15N (central meridian 93°W), in GeoJSON, used when no file is given.
const char* const built_in_features = R"({"type": "FeatureCollection", "features": [
 {"type": "Feature", "id": "central-field", "geometry": {"type": "Polygon", "coordinates":
   [[[-93.02, 45.00], [-92.98, 45.00], [-92.98, 45.03], [-93.02, 45.03], [-93.02, 45.00]]]}},
 {"type": "Feature", "id": "west-field", "geometry": {"type": "Polygon", "coordinates":
   [[[-95.95, 45.00], [-95.91, 45.00], [-95.91, 45.03], [-95.95, 45.03], [-95.95, 45.00]]]}},
 {"type": "Feature", "id": "east-lake", "geometry": {"type": "Polygon", "coordinates":
   [[[-90.40, 46.10], [-90.30, 46.12], [-90.28, 46.18], [-90.38, 46.19], [-90.40, 46.10]]]}},
 {"type": "Feature", "id": "ridge-road", "geometry": {"type": "LineString", "coordinates":
   [[-94.50, 44.00], [-93.80, 44.20], [-93.10, 44.30]]}},
 {"type": "Feature", "id": "river-reach", "geometry": {"type": "LineString", "coordinates":
   [[-91.60, 43.50], [-91.40, 43.70], [-91.30, 44.00]]}},
 {"type": "Feature", "id": "survey-mark", "geometry": {"type": "Point", "coordinates": [-93.5, 44.9]}},
 {"type": "Feature", "id": "north-bog", "geometry": {"type": "Polygon", "coordinates":
   [[[-94.80, 48.40], [-94.70, 48.40], [-94.70, 48.46], [-94.80, 48.46], [-94.80, 48.40]]]}}
]})";

void print_budget(const char* what, const gridtruth::Budget& b, const char* unit) {
  std::printf("    %-6s %+10.2f ppm  grid %.3f %s, true %.3f %s\n", what, b.error_ppm, b.grid, unit, b.reference,
              unit);
  std::printf("           edges %+.4f, scale %+.4f, datum %+.4f, height %+.4f %s\n", b.from_edges, b.from_scale,
              b.from_datum, b.from_height, unit);
}

}  // namespace

int main(int argc, char** argv) {
  const std::string path = argc > 1 ? argv[1] : "";
  gridtruth::AuditOptions options;
  options.target_crs = argc > 2 ? argv[2] : "EPSG:32615";  // WGS 84 / UTM zone 15N
  try {
    const gridtruth::Auditor auditor(options);
    std::istringstream built_in(built_in_features);
    gridtruth::FeatureReader reader = path.empty() ? gridtruth::FeatureReader(built_in)
                                                   : gridtruth::FeatureReader(path);

    // The sink runs in input order on one thread at a time, so it may collect without locking.
    std::vector<Ranked> ranked;
    std::size_t not_measured = 0;
    const std::size_t read = gridtruth::run_audit(
        reader, auditor, gridtruth::RunOptions{},
        [&](const gridtruth::InputFeature& feature, const gridtruth::AuditResult& result) {
          if (result.status != gridtruth::Status::ok) {
            ++not_measured;
            std::printf("%s: %s (%s)\n", feature.id.c_str(), std::string(to_string(result.status)).c_str(),
                        result.message.c_str());
            return;
          }
          const auto& budget = result.area ? result.area : result.length;
          if (!budget || std::isnan(budget->error_ppm)) return;  // points: nothing to rank
          ranked.push_back({feature.id, result, budget->error_ppm});
        });

    const std::size_t shown = std::min<std::size_t>(5, ranked.size());
    std::partial_sort(ranked.begin(), ranked.begin() + static_cast<std::ptrdiff_t>(shown), ranked.end(),
                      [](const Ranked& a, const Ranked& b) { return std::fabs(a.error_ppm) > std::fabs(b.error_ppm); });
    std::printf("%zu features read, %zu measured, %zu not measured; on the grid of %s (%s), worst first:\n", read,
                ranked.size(), not_measured, auditor.target().definition.c_str(), auditor.target().name.c_str());
    for (std::size_t i = 0; i < shown; ++i) {
      const Ranked& r = ranked[i];
      std::printf("%zu. %s (%s)\n", i + 1, r.id.c_str(), std::string(to_string(r.result.type)).c_str());
      if (r.result.area) print_budget("area", *r.result.area, "m2");
      if (r.result.length) print_budget(r.result.area ? "perim" : "length", *r.result.length, "m");
    }
    return ranked.empty() ? 1 : 0;
  } catch (const gridtruth::Error& e) {  // a CRS that cannot be used, a file that cannot be read
    std::fprintf(stderr, "worst_features: %s\n", e.what());
    return 2;
  }
}
