// gridtruth — internal: the projection's scale (areal or linear) sampled over the features' extent in the source
// CRS, and its isolines (lib/report/scale_field.cpp), for the report's map.
#pragma once

#include <limits>
#include <utility>
#include <vector>

#include "gridtruth/audit.hpp"
#include "gridtruth/geometry.hpp"
#include "gridtruth/tolerance.hpp"
#include "report_text.hpp"

namespace gridtruth::detail {

class ScaleField {
 public:
  /// A field that varies by less than this (0.1 ppm) is flat: an equal-area projection's areal scale, which the
  /// factors reproduce to about 1e-9; contouring it would trace rounding noise.
  static constexpr double flat_field = 1e-7;

  /// Samples `metric`'s scale (areal scale a·b, else the scale along the parallels) on a samples × samples grid
  /// over `source` (the features' box in the source CRS) with a margin of a quarter of its size; an empty box gives
  /// an empty field. `auditor` must outlive the field.
  ScaleField(const Auditor& auditor, Metric metric, const Bounds& source, int samples);

  /// The sampled values' range (lo > hi when none is finite).
  double lo() const noexcept { return lo_; }
  double hi() const noexcept { return hi_; }
  bool has_values() const noexcept { return hi_ >= lo_; }
  bool flat() const noexcept { return has_values() && hi_ - lo_ < flat_field; }

  /// Marching squares (Lorensen & Cline 1987, in two dimensions) over the sample grid; saddles are resolved by
  /// the mean of the four corners. Returns the isolines of `level` as polylines in the target CRS's plane.
  std::vector<Path> trace(double level) const;

 private:
  double value(double x, double y) const;
  double at(int i, int j) const { return value_[static_cast<std::size_t>(j) * n_ + i]; }
  /// The cell edges the level crosses, as pairs of edge keys: horizontal edge (i,j)-(i+1,j) → 2·(j·n+i);
  /// vertical edge (i,j)-(i,j+1) → 2·(j·n+i)+1.
  std::vector<std::pair<long, long>> crossed_edges(double level) const;
  /// Where the level crosses the edge `key`, projected to the plane.
  Coord crossing(long key, double level) const;

  const Auditor* auditor_;
  Metric metric_;
  int n_ = 0;
  double x0_ = 0, y0_ = 0, dx_ = 0, dy_ = 0;
  std::vector<double> value_;  // n × n, row j (y) major
  double lo_ = std::numeric_limits<double>::infinity(), hi_ = -std::numeric_limits<double>::infinity();
};

}  // namespace gridtruth::detail
