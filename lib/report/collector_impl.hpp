// gridtruth — internal: what ReportCollector gathers while a run streams by (lib/report/collector.cpp), read by
// the picture (svg.cpp) and the HTML tables.
#pragma once

#include <array>
#include <cstddef>
#include <limits>
#include <ostream>
#include <random>
#include <string>
#include <string_view>
#include <vector>

#include "core/compensated_sum.hpp"
#include "gridtruth/report.hpp"
#include "report_text.hpp"

namespace gridtruth {

struct ReportCollector::Impl {
  Auditor auditor;
  ReportOptions options;

  /// A feature drawn one by one: its parts projected and simplified.
  struct Drawn {
    std::string id;
    GeometryType type = GeometryType::point;
    double ppm = detail::nan_v;
    std::vector<Path> parts;  // rings (polygons), lines, or single points, projected and simplified
  };
  std::vector<Drawn> drawn;  // a min-heap on |ppm| once full, so the worst features stay drawn
  std::size_t stored_vertices = 0;
  /// A feature no longer drawn by itself: its centroid in the plane, drawn in a cell of mean ppm.
  struct Centroid {
    double x, y, ppm;
  };
  std::vector<Centroid> aggregated_points;
  std::size_t aggregated = 0;
  detail::Bounds plane;   // of every projected vertex collected
  detail::Bounds source;  // of every input vertex, in the source CRS

  struct Worst {
    std::string id;
    std::string measure;
    double ppm = 0;
    std::array<double, 4> parts_ppm{};  // edges, scale, datum, height
  };
  std::vector<Worst> worst;

  std::vector<double> ppm_sample;
  std::size_t ppm_count = 0;
  std::mt19937_64 rng{20250601};  // fixed seed: the same input gives the same picture
  double ppm_min = std::numeric_limits<double>::infinity(), ppm_max = -ppm_min;

  std::size_t read = 0, ok = 0, invalid = 0, unmeasurable = 0, pass = 0, fail = 0;
  std::size_t polygons = 0, line_features = 0, points = 0;
  detail::CompensatedSum true_length_m, grid_length_m, true_area_m2, grid_area_m2;

  Impl(const Auditor& a, ReportOptions o) : auditor(a.clone()), options(std::move(o)) {}

  /// The statistic the scale field shows: as asked, else areal for polygons, linear otherwise.
  Metric metric() const {
    if (options.field_metric) return *options.field_metric;
    return polygons > 0 ? Metric::area : Metric::length;
  }

  void add(std::string_view id, const Geometry& g, const AuditResult& r);
  std::vector<Worst> worst_sorted() const;
  /// The class step of the colour scale: four classes either side reach the 98th percentile of |ppm|.
  double class_step() const;
  void write_caption_lines(std::vector<std::string>& lines) const;
  void write_svg(std::ostream& o, bool standalone) const;  // lib/report/svg.cpp
  struct SvgWriter;                                         // the picture being written (svg.cpp)

 private:
  void add_ppm(double ppm);
  static bool heap_less(const Drawn& a, const Drawn& b);
  void aggregate(const Drawn& d);
  void store(Drawn d);
  Drawn project_and_simplify(std::string_view id, const Geometry& g, GeometryType type, double ppm);
};

}  // namespace gridtruth
