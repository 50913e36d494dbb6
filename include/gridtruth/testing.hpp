// gridtruth — GoogleTest matchers and assertions for a pipeline's own unit tests.
//
// Header-only. Requires GoogleTest and GoogleMock (Debian: libgtest-dev, libgmock-dev): include it only in test
// programs that link the CMake target gridtruth::testing (which brings gridtruth::gridtruth and GTest::gmock;
// find_package(gridtruth COMPONENTS testing) makes sure it is there).
//
//   const gridtruth::Auditor auditor(options);          // target CRS under test
//   EXPECT_THAT(parcels, gridtruth::testing::StaysWithin(auditor, "area=0.05%"));
//   EXPECT_THAT(auditor, gridtruth::testing::KeepsScaleWithin({5.0, 45.0, 8.0, 48.0}, "length=1:10000"));
//
// A failure message lists the worst features (or sample points), at most five, with their error in ppm and in
// metres or square metres and the budget parts (edges, scale, datum, height), so a failing CI log explains itself.
#pragma once

#include <gmock/gmock.h>
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <cstddef>
#include <cstdio>
#include <iterator>
#include <limits>
#include <ostream>
#include <sstream>
#include <string>
#include <string_view>
#include <type_traits>
#include <utility>
#include <vector>

#include "gridtruth/audit.hpp"
#include "gridtruth/crs.hpp"
#include "gridtruth/error.hpp"
#include "gridtruth/geometry.hpp"
#include "gridtruth/tolerance.hpp"

namespace gridtruth {

/// GoogleTest printer for a Geometry: its type and vertex count (not its bytes).
inline void PrintTo(const Geometry& geometry, std::ostream* os) {
  *os << to_string(geometry.type) << " with " << geometry.vertex_count() << " vertices";
}

/// GoogleTest printer for an Auditor: source and target CRS.
inline void PrintTo(const Auditor& auditor, std::ostream* os) {
  *os << "Auditor " << auditor.source().definition << " -> " << auditor.target().definition << " ("
      << auditor.target().name << ")";
}

/// GoogleTest matchers and assertions. Matcher factories are CamelCase as GoogleMock's own are (Eq, ElementsAre).
namespace testing {

/// A longitude/latitude box in degrees on the auditor's source CRS. west_deg > east_deg means the box crosses the
/// antimeridian. Latitudes must lie in [-90, 90] with south_deg <= north_deg.
struct LonLatBox {
  double west_deg = 0;   ///< western bound, degrees of longitude
  double south_deg = 0;  ///< southern bound, degrees of latitude in [-90, 90]
  double east_deg = 0;   ///< eastern bound, degrees of longitude (less than west_deg across the antimeridian)
  double north_deg = 0;  ///< northern bound, degrees of latitude in [-90, 90], at least south_deg

  /// The box of a CRS's area of use (e.g. `LonLatBox::of(*auditor.target().area_of_use)`).
  static LonLatBox of(const AreaOfUse& area) {
    return LonLatBox{area.west_deg, area.south_deg, area.east_deg, area.north_deg};
  }
};

namespace detail {

inline std::string format(const char* spec, double value) {
  char buffer[64];
  std::snprintf(buffer, sizeof buffer, spec, value);
  return buffer;
}

inline std::string join_tolerances(const std::vector<Tolerance>& tolerances) {
  std::string out;
  for (const Tolerance& t : tolerances) out += (out.empty() ? "" : ",") + t.to_string();
  return out;
}

inline std::string crs_label(const Auditor& auditor) {
  const CrsInfo& t = auditor.target();
  return t.definition + (t.name.empty() || t.name == t.definition ? "" : " (" + t.name + ")");
}

/// The observed value a tolerance limits, as the library's verdict reads it; NaN when it does not apply.
inline double observed(const AuditResult& r, const Tolerance& t, bool& applies) {
  applies = false;
  if (t.metric == Metric::bearing) {
    if (!r.bearing_error_max_arcsec) return std::numeric_limits<double>::quiet_NaN();
    applies = true;
    return *r.bearing_error_max_arcsec;
  }
  const auto& b = t.metric == Metric::area ? r.area : r.length;
  if (!b) return std::numeric_limits<double>::quiet_NaN();
  applies = true;
  return t.kind == Tolerance::Kind::relative_ppm ? b->error_ppm : b->error;
}

/// One feature measured against the tolerances.
struct FeatureCheck {
  std::string label;     ///< "[3]" or the caller's id
  AuditResult result;
  bool applies = false;  ///< at least one tolerance applies to it (always true for a non-ok status)
  double excess = 0;     ///< largest |observed| / limit over the tolerances; +inf when not measured or NaN
  std::vector<std::string> failed;  ///< canonical text of the tolerances it fails
};

inline FeatureCheck check_feature(const Auditor& auditor, std::string label, const Geometry& geometry,
                                  const std::vector<Tolerance>& tolerances) {
  FeatureCheck c;
  c.label = std::move(label);
  c.result = auditor.audit(geometry);
  if (c.result.status != Status::ok) {
    c.applies = true;
    c.excess = std::numeric_limits<double>::infinity();
    c.failed.push_back("status " + std::string(to_string(c.result.status)));
    return c;
  }
  for (const Tolerance& t : tolerances) {
    bool applies = false;
    const double value = observed(c.result, t, applies);
    if (!applies) continue;
    c.applies = true;
    const double ratio = std::fabs(value) / t.value;
    if (!(std::fabs(value) <= t.value)) c.failed.push_back(t.to_string());
    c.excess = std::isnan(ratio) ? std::numeric_limits<double>::infinity() : std::max(c.excess, ratio);
  }
  return c;
}

inline std::string describe_budget(std::string_view what, const Budget& b, std::string_view unit) {
  std::string s(what);
  s += " " + format("%+.2f", b.error_ppm) + " ppm (" + format("%+.6g", b.error) + " " + std::string(unit) +
       " of " + format("%.10g", b.reference) + " " + std::string(unit) + "; edges " +
       format("%+.4g", b.from_edges) + ", scale " + format("%+.4g", b.from_scale) + ", datum " +
       format("%+.4g", b.from_datum) + ", height " + format("%+.4g", b.from_height) + " " + std::string(unit) +
       ")";
  return s;
}

/// One line for one feature: its figures for every metric the tolerances name, then what it fails.
inline std::string describe_feature(const FeatureCheck& c, const std::vector<Tolerance>& tolerances) {
  const AuditResult& r = c.result;
  std::string line = c.label + " " + std::string(to_string(r.type)) + ": ";
  if (r.status != Status::ok) {
    return line + std::string(to_string(r.status)) + (r.message.empty() ? "" : " (" + r.message + ")");
  }
  bool area = false, length = false, bearing = false;
  for (const Tolerance& t : tolerances) {
    area = area || t.metric == Metric::area;
    length = length || t.metric == Metric::length;
    bearing = bearing || t.metric == Metric::bearing;
  }
  std::vector<std::string> parts;
  if (area && r.area) parts.push_back(describe_budget("area", *r.area, "m2"));
  if (length && r.length) parts.push_back(describe_budget("length", *r.length, "m"));
  if (bearing && r.bearing_error_max_arcsec) {
    parts.push_back("bearing error " + format("%.3f", *r.bearing_error_max_arcsec) + " arcsec");
  }
  if (parts.empty()) parts.push_back("no tolerance applies");
  for (std::size_t i = 0; i < parts.size(); ++i) line += (i ? "; " : "") + parts[i];
  if (!c.failed.empty()) {
    line += " -- exceeds ";
    for (std::size_t i = 0; i < c.failed.size(); ++i) line += (i ? ", " : "") + c.failed[i];
  }
  return line;
}

/// Largest number of features or points a message lists.
inline constexpr std::size_t max_listed = 5;

/// Checks labelled features against tolerances; true when every feature is measured and within them.
/// Fails (with the reason) for an empty collection or when no tolerance applies to any feature, so that a test
/// cannot pass by checking nothing.
inline bool check_features(const Auditor& auditor, const std::vector<std::pair<std::string, const Geometry*>>& features,
                           const std::vector<Tolerance>& tolerances, std::ostream& out) {
  const std::string within = join_tolerances(tolerances) + " on the grid of " + crs_label(auditor);
  if (features.empty()) {
    out << "there are no features to check against " << within;
    return false;
  }
  std::vector<FeatureCheck> checks;
  checks.reserve(features.size());
  bool any_applies = false;
  for (const auto& [label, geometry] : features) {
    checks.push_back(check_feature(auditor, label, *geometry, tolerances));
    any_applies = any_applies || checks.back().applies;
  }
  if (!any_applies) {
    out << "no tolerance of " << join_tolerances(tolerances) << " applies to any of the " << features.size()
        << " feature(s) (e.g. an area tolerance for lines or points)";
    return false;
  }
  std::vector<const FeatureCheck*> order;
  for (const FeatureCheck& c : checks) order.push_back(&c);
  std::stable_sort(order.begin(), order.end(),
                   [](const FeatureCheck* a, const FeatureCheck* b) { return a->excess > b->excess; });
  const auto failing = static_cast<std::size_t>(
      std::count_if(checks.begin(), checks.end(), [](const FeatureCheck& c) { return !c.failed.empty(); }));
  if (failing == 0) {
    const FeatureCheck& worst = *order.front();
    out << "all " << checks.size() << " feature(s) stay within " << within << "; the closest to a limit is "
        << describe_feature(worst, tolerances) << " (" << format("%.1f", 100 * worst.excess)
        << " % of its limit)";
    return true;
  }
  out << failing << " of " << checks.size() << " feature(s) exceed " << within << "; worst first:";
  std::size_t listed = 0;
  for (const FeatureCheck* c : order) {
    if (c->failed.empty() || listed == max_listed) continue;
    out << "\n  " << describe_feature(*c, tolerances);
    ++listed;
  }
  if (failing > listed) out << "\n  ... and " << failing - listed << " more";
  return false;
}

template <typename T, typename = void>
struct is_range : std::false_type {};
template <typename T>
struct is_range<T, std::void_t<decltype(std::begin(std::declval<const T&>())),
                               decltype(std::end(std::declval<const T&>()))>> : std::true_type {};

template <typename T>
struct is_labelled : std::false_type {};
template <typename K>
struct is_labelled<std::pair<K, Geometry>> : std::true_type {};
template <typename K>
struct is_labelled<std::pair<const K, Geometry>> : std::true_type {};

/// Labels the features of a Geometry, a range of Geometry ("[i]", 0-based), or a range of (id, Geometry) pairs
/// such as std::map<std::string, Geometry> (the id, streamed).
template <typename T>
std::vector<std::pair<std::string, const Geometry*>> label_features(const T& value) {
  std::vector<std::pair<std::string, const Geometry*>> out;
  if constexpr (std::is_same_v<T, Geometry>) {
    out.emplace_back("[0]", &value);
  } else {
    static_assert(is_range<T>::value, "StaysWithin takes a Geometry, a range of Geometry or of (id, Geometry)");
    using Element = std::decay_t<decltype(*std::begin(value))>;
    std::size_t i = 0;
    for (const auto& element : value) {
      if constexpr (std::is_same_v<Element, Geometry>) {
        out.emplace_back("[" + std::to_string(i) + "]", &element);
      } else {
        static_assert(is_labelled<Element>::value,
                      "StaysWithin takes a Geometry, a range of Geometry or of (id, Geometry)");
        std::ostringstream id;
        id << element.first;
        out.emplace_back(id.str(), &element.second);
      }
      ++i;
    }
  }
  return out;
}

/// The polymorphic matcher behind StaysWithin().
class StaysWithinMatcher {
 public:
  StaysWithinMatcher(const Auditor& auditor, std::vector<Tolerance> tolerances)
      : auditor_(&auditor), tolerances_(std::move(tolerances)) {
    if (tolerances_.empty()) {
      throw Error(ErrorCode::invalid_argument, "StaysWithin needs at least one tolerance (e.g. \"area=0.05%\")");
    }
  }

  template <typename T>
  bool MatchAndExplain(const T& value, ::testing::MatchResultListener* listener) const {
    std::ostringstream out;
    const bool ok = check_features(*auditor_, label_features(value), tolerances_, out);
    *listener << out.str();
    return ok;
  }
  void DescribeTo(std::ostream* os) const {
    *os << "every feature stays within " << join_tolerances(tolerances_) << " on the grid of "
        << crs_label(*auditor_);
  }
  void DescribeNegationTo(std::ostream* os) const {
    *os << "some feature exceeds " << join_tolerances(tolerances_) << " on the grid of " << crs_label(*auditor_)
        << " (or cannot be measured)";
  }

 private:
  const Auditor* auditor_;
  std::vector<Tolerance> tolerances_;
};

/// One sample point of a region check.
struct PointCheck {
  double lon_deg = 0, lat_deg = 0;
  PointFactors factors;
  double deviation_ppm = 0;  ///< the deviation the bound limits (signed); NaN when the projection fails
};

/// Samples the box on a samples_per_side × samples_per_side grid (edges included) and checks the bound:
/// a relative area tolerance limits the areal scale, |a·b − 1|; a relative length tolerance limits the linear
/// scale in every direction, max(|a − 1|, |b − 1|) (a, b: Tissot's semi-axes). Returns true when every point is
/// projected and within the bound.
inline bool check_region(const Auditor& auditor, const LonLatBox& box, const Tolerance& bound, int samples_per_side,
                         std::ostream& out) {
  if (auditor.source().kind != CrsKind::geographic) {
    out << "the auditor's source CRS " << auditor.source().definition
        << " is not geographic: build the auditor with a geographic source_crs to check a longitude/latitude box";
    return false;
  }
  const double east = box.east_deg < box.west_deg ? box.east_deg + 360 : box.east_deg;
  const int n = samples_per_side;
  std::vector<PointCheck> points;
  points.reserve(static_cast<std::size_t>(n) * static_cast<std::size_t>(n));
  for (int j = 0; j < n; ++j) {
    const double lat = box.south_deg + (box.north_deg - box.south_deg) * j / (n - 1);
    for (int i = 0; i < n; ++i) {
      double lon = box.west_deg + (east - box.west_deg) * i / (n - 1);
      if (lon > 180) lon -= 360;
      PointCheck p;
      p.lon_deg = lon;
      p.lat_deg = lat;
      p.factors = auditor.factors(lon, lat);
      if (bound.metric == Metric::area) {
        p.deviation_ppm = (p.factors.areal_scale - 1) * 1e6;
      } else {
        const double da = p.factors.tissot_a - 1, db = p.factors.tissot_b - 1;
        p.deviation_ppm = (std::fabs(da) >= std::fabs(db) ? da : db) * 1e6;
      }
      points.push_back(p);
    }
  }
  const auto magnitude = [](const PointCheck& p) {
    return std::isnan(p.deviation_ppm) ? std::numeric_limits<double>::infinity() : std::fabs(p.deviation_ppm);
  };
  std::stable_sort(points.begin(), points.end(),
                   [&](const PointCheck& a, const PointCheck& b) { return magnitude(a) > magnitude(b); });
  const std::string what = bound.metric == Metric::area ? "areal scale" : "linear scale";
  const std::string region = "the box lon [" + format("%.6g", box.west_deg) + ", " + format("%.6g", box.east_deg) +
                             "], lat [" + format("%.6g", box.south_deg) + ", " + format("%.6g", box.north_deg) +
                             "] (" + std::to_string(points.size()) + " points)";
  const auto describe_point = [&](const PointCheck& p) {
    std::string s = "(" + format("%.6f", p.lon_deg) + ", " + format("%.6f", p.lat_deg) + "): ";
    if (std::isnan(p.deviation_ppm)) return s + "the projection fails";
    return s + what + " " + format("%+.2f", p.deviation_ppm) + " ppm (Tissot a " +
           format("%.9f", p.factors.tissot_a) + ", b " + format("%.9f", p.factors.tissot_b) + ", areal scale " +
           format("%.9f", p.factors.areal_scale) + ", angular distortion " +
           format("%.4g", p.factors.angular_distortion_deg * 3600) + " arcsec)";
  };
  const auto failing = static_cast<std::size_t>(
      std::count_if(points.begin(), points.end(), [&](const PointCheck& p) { return !(magnitude(p) <= bound.value); }));
  if (failing == 0) {
    out << "the " << what << " of " << crs_label(auditor) << " stays within " << format("%.6g", bound.value)
        << " ppm over " << region << "; the largest is at " << describe_point(points.front());
    return true;
  }
  out << failing << " of " << points.size() << " points exceed " << bound.to_string() << " (" << what << ") of "
      << crs_label(auditor) << " over " << region << "; worst first:";
  for (std::size_t k = 0; k < std::min(failing, max_listed); ++k) out << "\n  " << describe_point(points[k]);
  if (failing > max_listed) out << "\n  ... and " << failing - max_listed << " more";
  return false;
}

inline Tolerance parse_region_bound(std::string_view bound) {
  const Tolerance t = Tolerance::parse(bound);
  if (t.metric == Metric::bearing || t.kind != Tolerance::Kind::relative_ppm) {
    throw Error(ErrorCode::invalid_argument,
                "a region bound is a relative area or length tolerance (e.g. \"area=0.05%\", \"length=1:10000\"), "
                "not '" + std::string(bound) + "'");
  }
  return t;
}

inline void check_region_arguments(const LonLatBox& box, int samples_per_side) {
  if (samples_per_side < 2) throw Error(ErrorCode::invalid_argument, "a region needs at least 2 samples per side");
  if (!(box.south_deg >= -90 && box.south_deg <= box.north_deg && box.north_deg <= 90) ||
      !std::isfinite(box.west_deg) || !std::isfinite(box.east_deg)) {
    throw Error(ErrorCode::invalid_argument, "invalid longitude/latitude box");
  }
}

/// The polymorphic matcher behind KeepsScaleWithin().
class KeepsScaleWithinMatcher {
 public:
  KeepsScaleWithinMatcher(LonLatBox box, Tolerance bound, int samples_per_side)
      : box_(box), bound_(bound), samples_per_side_(samples_per_side) {
    check_region_arguments(box_, samples_per_side_);
  }

  bool MatchAndExplain(const Auditor& auditor, ::testing::MatchResultListener* listener) const {
    std::ostringstream out;
    const bool ok = check_region(auditor, box_, bound_, samples_per_side_, out);
    *listener << out.str();
    return ok;
  }
  void DescribeTo(std::ostream* os) const {
    *os << "keeps the " << (bound_.metric == Metric::area ? "areal" : "linear") << " scale within "
        << bound_.to_string() << " of 1 over the box";
  }
  void DescribeNegationTo(std::ostream* os) const {
    *os << "exceeds " << bound_.to_string() << " somewhere in the box";
  }

 private:
  LonLatBox box_;
  Tolerance bound_;
  int samples_per_side_;
};

}  // namespace detail

/// Matches a Geometry, a range of Geometry (e.g. std::vector<Geometry>; features are named "[i]", 0-based), or a
/// range of (id, Geometry) pairs (e.g. std::map<std::string, Geometry>; features are named by id) whose every
/// feature is measured (status ok) and within every tolerance that applies to it on the auditor's grid.
///
/// `tolerances` uses Tolerance::parse_list() syntax ("area=0.05%", "length=1:10000,bearing=20arcsec", ...); a
/// limit is met when |error_ppm| (relative) or |error| (absolute) is at most the limit, as in Auditor's verdict.
/// The auditor's own tolerances are ignored. The match fails for an empty collection, for a feature with status
/// invalid or unmeasurable, and when no tolerance applies to any feature.
/// Throws Error(invalid_argument) for a malformed or empty `tolerances`.
/// The auditor must outlive the matcher; matching audits each feature once (one thread at a time, as Auditor).
inline ::testing::PolymorphicMatcher<detail::StaysWithinMatcher> StaysWithin(const Auditor& auditor,
                                                                              std::string_view tolerances) {
  return ::testing::MakePolymorphicMatcher(detail::StaysWithinMatcher(auditor, Tolerance::parse_list(tolerances)));
}

/// As StaysWithin(auditor, tolerances), with the tolerances the auditor was built with (AuditOptions::tolerances).
inline ::testing::PolymorphicMatcher<detail::StaysWithinMatcher> StaysWithin(const Auditor& auditor) {
  return ::testing::MakePolymorphicMatcher(detail::StaysWithinMatcher(auditor, auditor.options().tolerances));
}

/// Matches an Auditor whose target projection keeps a scale within a relative bound of 1 everywhere in a box.
///
/// The box is sampled on a samples_per_side × samples_per_side grid including its edges and corners (default 11 ×
/// 11); at each point Auditor::factors() gives Tissot's semi-axes a, b (relative error about 1e-9). "area=…"
/// limits |a·b − 1| (areal scale); "length=…" limits max(|a − 1|, |b − 1|) (the scale in every direction), both
/// in ppm, e.g. "area=0.05%" (500 ppm) or "length=1:10000" (100 ppm). A point where the projection fails does not
/// match, and so does an auditor whose source CRS is not geographic. Sampling checks the grid points only: extremes between them are missed, so choose samples_per_side so
/// that the scale varies little between neighbours, and include the places where the extremes lie (a transverse
/// Mercator's central meridian, a conic's standard parallels and edges).
/// Throws Error(invalid_argument) for an absolute or bearing bound, a malformed box or fewer than 2 samples per side.
inline ::testing::PolymorphicMatcher<detail::KeepsScaleWithinMatcher> KeepsScaleWithin(const LonLatBox& box,
                                                                                        std::string_view bound,
                                                                                        int samples_per_side = 11) {
  return ::testing::MakePolymorphicMatcher(
      detail::KeepsScaleWithinMatcher(box, detail::parse_region_bound(bound), samples_per_side));
}

/// Assertion form of StaysWithin(): `EXPECT_TRUE(gridtruth::testing::stays_within(auditor, features, "area=0.05%"))`.
/// The failure message is the matcher's explanation. Same arguments, rules and exceptions as StaysWithin().
template <typename Features>
::testing::AssertionResult stays_within(const Auditor& auditor, const Features& features,
                                        std::string_view tolerances) {
  const std::vector<Tolerance> parsed = Tolerance::parse_list(tolerances);
  if (parsed.empty()) {
    throw Error(ErrorCode::invalid_argument, "stays_within needs at least one tolerance (e.g. \"area=0.05%\")");
  }
  std::ostringstream out;
  const bool ok = detail::check_features(auditor, detail::label_features(features), parsed, out);
  return (ok ? ::testing::AssertionSuccess() : ::testing::AssertionFailure()) << out.str();
}

/// Assertion form of KeepsScaleWithin():
/// `EXPECT_TRUE(gridtruth::testing::keeps_scale_within(auditor, box, "length=1:10000"))`.
inline ::testing::AssertionResult keeps_scale_within(const Auditor& auditor, const LonLatBox& box,
                                                     std::string_view bound, int samples_per_side = 11) {
  detail::check_region_arguments(box, samples_per_side);
  std::ostringstream out;
  const bool ok = detail::check_region(auditor, box, detail::parse_region_bound(bound), samples_per_side, out);
  return (ok ? ::testing::AssertionSuccess() : ::testing::AssertionFailure()) << out.str();
}

}  // namespace testing
}  // namespace gridtruth
