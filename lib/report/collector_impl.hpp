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

#include "gridtruth/report.hpp"
#include "gridtruth/statistics.hpp"
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


  std::vector<double> ppm_sample;
  std::size_t ppm_count = 0;
  std::mt19937_64 rng{20250601};  // fixed seed: the same input gives the same picture
  double ppm_min = std::numeric_limits<double>::infinity(), ppm_max = -ppm_min;

  RunStatistics stats;  // counts, totals, the worst features (the same accumulator as the command's summary)

  Impl(const Auditor& a, ReportOptions o)
      : auditor(a.clone()), options(std::move(o)), stats(options.worst_count) {}

  /// The statistic the scale field shows: as asked, else areal for polygons, linear otherwise.
  Metric metric() const {
    if (options.field_metric) return *options.field_metric;
    return stats.area_features() > 0 ? Metric::area : Metric::length;
  }

  void add(std::string_view id, const Geometry& g, const AuditResult& r);
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
