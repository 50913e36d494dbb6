// gridtruth — tolerances and verdicts.
#pragma once

#include <string>
#include <string_view>
#include <vector>

namespace gridtruth {

/// What a tolerance limits.
enum class Metric { area, length, bearing };
/// "area", "length" or "bearing" (as Tolerance::parse() spells them); never throws.
std::string_view to_string(Metric metric) noexcept;
/// Parses the names of to_string(); throws Error(invalid_argument) otherwise.
Metric parse_metric(std::string_view name);

/// One tolerance. Relative tolerances are stored in ppm (0.1 % → 1000 ppm; 1:10000 → 100 ppm);
/// absolute ones in metres (length), square metres (area) or arcseconds (bearing).
struct Tolerance {
  /// Whether the limit is relative to the reference (ppm) or absolute (m, m², arcsec); to_string(Kind) names it.
  enum class Kind { relative_ppm, absolute };
  Metric metric = Metric::area;    ///< what is limited: area, length (perimeter for polygons) or bearing error
  Kind kind = Kind::relative_ppm;  ///< relative (|error_ppm| ≤ value) or absolute (|error| ≤ value); bearing: absolute
  double value = 0;  ///< ppm, m, m² or arcsec as above; always > 0
  double ratio_n = 0;  ///< N when the tolerance was given as the ratio 1:N (value = 1e6 / N ppm), else 0

  /// Parses "area=0.1%", "length=100ppm", "length=1:10000", "area=50m2", "length=0.05m", "bearing=20arcsec".
  /// Also accepted: "ha" for areas (hectares, converted to m²). Throws Error(invalid_argument) with the reason.
  static Tolerance parse(std::string_view spec);
  /// Comma-separated list of parse() specs; an empty string gives no tolerances.
  static std::vector<Tolerance> parse_list(std::string_view specs);

  /// Canonical text, e.g. "area<=1000ppm", "length<=0.05m", "bearing<=20arcsec".
  std::string to_string() const;
  /// The text for people, in the form given: a ratio stays a ratio ("length<=1:20000", as surveyors quote
  /// closures), anything else is to_string(). parse() reads it back.
  std::string as_given() const;
};

/// "relative_ppm" or "absolute" (spelled as the enumerator); never throws.
std::string_view to_string(Tolerance::Kind kind) noexcept;

/// The outcome of comparing a feature against the tolerances that apply to it.
enum class Verdict { none, pass, fail };
/// The verdict's name: "" (none), "pass" or "fail"; never throws.
std::string_view to_string(Verdict v) noexcept;

}  // namespace gridtruth
