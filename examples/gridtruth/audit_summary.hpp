// gridtruth command — the run summary of `gridtruth audit`: counts, totals in the chosen units, worst features.
#pragma once

#include <cstddef>
#include <map>
#include <optional>
#include <sstream>
#include <string>
#include <string_view>
#include <vector>

#include <nlohmann/json.hpp>

#include "gridtruth/audit.hpp"
#include "gridtruth/io.hpp"
#include "gridtruth/statistics.hpp"

namespace gridtruth::cli {

/// Units of the summary's totals (the CSV stays in metres and square metres).
struct SummaryUnits {
  std::string name;         ///< as given to --units
  std::string length_unit;  ///< symbol, e.g. "m", "ft", "ftUS"
  std::string area_unit;    ///< symbol, e.g. "m2", "ha", "ac"
  double length_m = 1;      ///< metres per length unit
  double area_m2 = 1;       ///< square metres per area unit
};

/// The names --units accepts: metric, hectare, acre, us-survey-acre.
const std::vector<std::string>& summary_unit_names();
/// Throws Error(invalid_argument) for a name not in summary_unit_names().
SummaryUnits summary_units(std::string_view name);

/// Accumulates the summary of a run feature by feature (constant memory).
class AuditSummary {
 public:
  static constexpr std::size_t worst_count = 10;

  void add(const InputFeature& feature, const AuditResult& result);
  void add_unread(const InputFeature& feature);

  /// The counts, totals and worst features (the library's accumulator, as the report uses).
  const RunStatistics& statistics() const noexcept { return stats_; }
  std::size_t read() const { return stats_.read(); }

  /// 0, 1 as `gridtruth audit` exits for this run (2 is decided before any feature is read).
  int exit_status() const { return (stats_.invalid() + stats_.unmeasurable() + stats_.fail()) > 0 ? 1 : 0; }

  /// Facts about the run that the summary reports besides the counts.
  struct Context {
    std::string input;
    InputFormat format = InputFormat::automatic;
    const Auditor* auditor = nullptr;
    SummaryUnits units;
    /// Spans the reader skipped and damaged ends of the input (FeatureReader::problems()); null: none.
    const std::vector<InputProblem>* input_problems = nullptr;
  };
  /// exit_status(), and 1 when the reader had to skip or met a damaged end even if every row is fine.
  int exit_status(const Context& context) const {
    return (context.input_problems && !context.input_problems->empty()) ? 1 : exit_status();
  }
  nlohmann::ordered_json to_json(const Context& context) const;
  std::string to_text(const Context& context) const;

 private:
  std::vector<std::string> datum_warnings(const Auditor& auditor) const;
  void add_auditor_json(nlohmann::ordered_json& j, const Auditor& a) const;
  void add_auditor_text(std::ostringstream& s, const Auditor& a) const;
  RunStatistics stats_{worst_count};
  std::size_t outside_area_of_use_ = 0;           // measured with the "lie outside the area of use" warning
  std::size_t look_projected_ = 0;                // invalid because geographic input looked projected
};

}  // namespace gridtruth::cli
