// gridtruth — the statistics of a run, accumulated feature by feature: counts, totals, the worst features. One
// accumulator for every consumer of a run (the command's summary, the report, the Python layer's tables).
#pragma once

#include <array>
#include <cstddef>
#include <map>
#include <string>
#include <string_view>
#include <vector>

#include "gridtruth/audit.hpp"
#include "gridtruth/compensated_sum.hpp"
#include "gridtruth/geometry.hpp"

namespace gridtruth {

/// One feature of the worst list: its error and budget parts, by the measure it is judged by (area for polygons,
/// length for lines).
struct WorstFeature {
  std::string id;                           ///< the feature's id as given
  std::size_t position = 0;                 ///< 1-based position in the input (ties are broken by it)
  GeometryType type = GeometryType::point;  ///< its geometry type
  std::string measure;                      ///< "area" or "length"
  double error_ppm = 0;                     ///< Budget::error_ppm
  double error = 0;                         ///< Budget::error, m or m²
  std::array<double, 4> parts_ppm{};        ///< from_edges, from_scale, from_datum, from_height in ppm of R
  Verdict verdict = Verdict::none;          ///< its tolerance verdict
};

/// Counts, totals and the worst features of a run. Constant memory (the worst list is kept to worst_count).
/// Not thread-safe: one thread adds at a time (the sink of run_audit() qualifies).
class RunStatistics {
 public:
  /// Keeps the `worst_count` worst features.
  explicit RunStatistics(std::size_t worst_count = 10) : worst_count_(worst_count) {}

  /// An audited feature (its id and 1-based position in the input).
  void add(std::string_view id, std::size_t position, const AuditResult& result);
  /// A feature that could not be read: counted as read and invalid.
  void add_unread();

  std::size_t read() const noexcept { return read_; }                  ///< features read (every row)
  std::size_t ok() const noexcept { return ok_; }                      ///< Status::ok
  std::size_t invalid() const noexcept { return invalid_; }            ///< Status::invalid, unread ones included
  std::size_t unmeasurable() const noexcept { return unmeasurable_; }  ///< Status::unmeasurable
  std::size_t pass() const noexcept { return pass_; }                  ///< Verdict::pass
  std::size_t fail() const noexcept { return fail_; }                  ///< Verdict::fail
  /// Measured (ok) polygons with an area.
  std::size_t area_features() const noexcept { return area_features_; }
  /// Measured (ok) lines with a length.
  std::size_t length_features() const noexcept { return length_features_; }
  /// Measured (ok) points and multi-points.
  std::size_t point_features() const noexcept { return point_features_; }
  /// Sum of R over the measured lines (polygon perimeters are not included), compensated (Neumaier 1974).
  double true_length_m() const noexcept { return true_length_m_.value(); }
  /// Sum of G over the measured lines.
  double grid_length_m() const noexcept { return grid_length_m_.value(); }
  /// Sum of R over the measured polygons.
  double true_area_m2() const noexcept { return true_area_m2_.value(); }
  /// Sum of G over the measured polygons.
  double grid_area_m2() const noexcept { return grid_area_m2_.value(); }
  /// Features measured with each datum operation (AuditResult::datum_operation → count).
  const std::map<std::size_t, std::size_t>& datum_use() const noexcept { return datum_use_; }
  /// The worst features by |error_ppm|, worst first, ties by position; at most worst_count.
  std::vector<WorstFeature> worst() const;

 private:
  std::size_t worst_count_;
  std::size_t read_ = 0, ok_ = 0, invalid_ = 0, unmeasurable_ = 0, pass_ = 0, fail_ = 0;
  std::size_t area_features_ = 0, length_features_ = 0, point_features_ = 0;
  CompensatedSum true_length_m_, grid_length_m_, true_area_m2_, grid_area_m2_;
  std::map<std::size_t, std::size_t> datum_use_;
  std::vector<WorstFeature> worst_;
};

}  // namespace gridtruth
