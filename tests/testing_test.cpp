// Tests of the GoogleTest matchers in gridtruth/testing.hpp, both ways: a passing case and a failing case whose
// failure message is checked.
//
// Expected figures come from the definition of UTM (scale factor 0.9996 on the central meridian; NGA.SIG.0012_2.0.0
// "Universal Grids and Grid Reference Systems", section on UTM) and from GeographicLib's own transverse Mercator
// (Karney 2011, "Transverse Mercator with an accuracy of a few nanometers"), which is independent of PROJ.
#include "gridtruth/testing.hpp"

#include <GeographicLib/TransverseMercator.hpp>
#include <gtest/gtest-spi.h>
#include <gmock/gmock.h>
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <map>
#include <memory>
#include <string>
#include <vector>

#include "gridtruth/audit.hpp"
#include "gridtruth/error.hpp"

namespace {

using gridtruth::Auditor;
using gridtruth::Geometry;
using gridtruth::testing::KeepsScaleWithin;
using gridtruth::testing::LonLatBox;
using gridtruth::testing::StaysWithin;
using ::testing::HasSubstr;
using ::testing::Not;

constexpr double k0_utm = 0.9996;              // UTM central scale factor (NGA.SIG.0012)
constexpr double central_meridian_31_deg = 3;  // UTM zone 31: 0°E to 6°E
constexpr double lat_test_deg = 45;

// Auditors are expensive to build; one per target CRS for the whole program (used by one thread).
const Auditor& utm31() {
  static const Auditor auditor([] {
    gridtruth::AuditOptions o;
    o.target_crs = "EPSG:32631";  // WGS 84 / UTM zone 31N
    o.tolerances = gridtruth::Tolerance::parse_list("area=0.05%");
    return o;
  }());
  return auditor;
}

// A 0.01° × 0.01° square centred on (lon, lat).
Geometry square(double lon_deg, double lat_deg) {
  const double h = 0.005;
  return Geometry::polygon({{lon_deg - h, lat_deg - h},
                            {lon_deg + h, lat_deg - h},
                            {lon_deg + h, lat_deg + h},
                            {lon_deg - h, lat_deg + h}});
}

// Areal scale − 1 of UTM at a point, in ppm, from GeographicLib's transverse Mercator (conformal: areal scale = k²).
double utm_areal_ppm(double lon_deg, double lat_deg, double lon0_deg) {
  double x = 0, y = 0, gamma = 0, k = 0;
  GeographicLib::TransverseMercator::UTM().Forward(lon0_deg, lat_deg, lon_deg, x, y, gamma, k);
  return (k * k - 1) * 1e6;
}

// Linear scale − 1 of UTM at a point, in ppm (GeographicLib).
double utm_linear_ppm(double lon_deg, double lat_deg, double lon0_deg) {
  double x = 0, y = 0, gamma = 0, k = 0;
  GeographicLib::TransverseMercator::UTM().Forward(lon0_deg, lat_deg, lon_deg, x, y, gamma, k);
  return (k - 1) * 1e6;
}

// Offsets from the central meridian of zone 31, chosen so that |area error| differs by more than a few ppm
// between any two squares and lies at least 20 ppm from the 500 ppm limit used below.
const std::vector<double> offsets_deg = {0.0, 0.5, -0.8, 1.2, 2.0, 2.5, -3.0, 3.1};

std::vector<Geometry> squares_across_zone() {
  std::vector<Geometry> out;
  for (double d : offsets_deg) out.push_back(square(central_meridian_31_deg + d, lat_test_deg));
  return out;
}

std::string explain(const ::testing::PolymorphicMatcher<gridtruth::testing::detail::StaysWithinMatcher>& m,
                    const std::vector<Geometry>& features, bool& matched) {
  ::testing::StringMatchResultListener listener;
  matched = ::testing::ExplainMatchResult(m, features, &listener);
  return listener.str();
}

TEST(StaysWithin, PassesWhenEveryFeatureIsWithinTheTolerance) {
  // The largest areal scale deviation in the band is k0² − 1 = −799.84 ppm on the central meridian: within 0.1 %.
  const auto features = squares_across_zone();
  EXPECT_THAT(features, StaysWithin(utm31(), "area=0.1%"));
  bool matched = false;
  const std::string why = explain(StaysWithin(utm31(), "area=0.1%"), features, matched);
  EXPECT_TRUE(matched);
  EXPECT_THAT(why, HasSubstr("all 8 feature(s) stay within area<=1000ppm"));
  EXPECT_THAT(why, HasSubstr("closest to a limit is [0] Polygon"));  // the square on the central meridian
}

TEST(StaysWithin, FailsAndListsTheFiveWorstFeaturesWorstFirst) {
  const auto features = squares_across_zone();
  // Expected outcome from GeographicLib's transverse Mercator at each square's centre.
  std::vector<std::pair<double, std::size_t>> failing;  // (|ppm|, index)
  for (std::size_t i = 0; i < offsets_deg.size(); ++i) {
    const double ppm = utm_areal_ppm(central_meridian_31_deg + offsets_deg[i], lat_test_deg, central_meridian_31_deg);
    ASSERT_GT(std::fabs(std::fabs(ppm) - 500), 20) << "square " << i << " too close to the limit to be a clear case";
    if (std::fabs(ppm) > 500) failing.emplace_back(std::fabs(ppm), i);
  }
  std::sort(failing.rbegin(), failing.rend());
  ASSERT_EQ(failing.size(), 6u);  // offsets 0, 0.5, -0.8, 1.2, -3, 3.1 (a precondition on the chosen offsets)
  for (std::size_t j = 1; j < failing.size(); ++j) ASSERT_GT(failing[j - 1].first - failing[j].first, 3);

  bool matched = true;
  const std::string why = explain(StaysWithin(utm31(), "area=0.05%"), features, matched);
  EXPECT_FALSE(matched);
  EXPECT_THAT(why, HasSubstr("6 of 8 feature(s) exceed area<=500ppm on the grid of EPSG:32631 (WGS 84 / UTM zone 31N)"));
  EXPECT_THAT(why, HasSubstr("... and 1 more"));
  // The five worst, in order, each on its own line with the budget parts.
  std::size_t position = 0;
  for (std::size_t j = 0; j < 5; ++j) {
    const std::string label = "\n  [" + std::to_string(failing[j].second) + "] Polygon: area ";
    const std::size_t at = why.find(label);
    ASSERT_NE(at, std::string::npos) << "missing " << label << " in:\n" << why;
    EXPECT_GT(at, position) << "feature " << failing[j].second << " out of order in:\n" << why;
    position = at;
  }
  // The sixth worst and the passing squares are not listed.
  EXPECT_THAT(why, Not(HasSubstr("[" + std::to_string(failing[5].second) + "]")));
  EXPECT_THAT(why, Not(HasSubstr("[4]")));
  EXPECT_THAT(why, Not(HasSubstr("[5]")));
  for (const char* part : {"edges ", "scale ", "datum ", "height ", " ppm", " m2", "-- exceeds area<=500ppm"}) {
    EXPECT_THAT(why, HasSubstr(part));
  }
  // The listed figures are the auditor's own, e.g. the central-meridian square's error in ppm.
  const auto r = utm31().audit(features[0]);
  char ppm[32];
  std::snprintf(ppm, sizeof ppm, "area %+.2f ppm", r.area->error_ppm);
  EXPECT_THAT(why, HasSubstr(std::string("[0] Polygon: ") + ppm));
  // ... which is near the areal scale on the central meridian, k0² − 1.
  EXPECT_NEAR(r.area->error_ppm, (k0_utm * k0_utm - 1) * 1e6, 1.0);
}

// EXPECT_NONFATAL_FAILURE cannot see local variables: the statement calls these.
void expect_parcels_within_half_permille() {
  EXPECT_THAT(squares_across_zone(), StaysWithin(utm31(), "area=0.05%"));
}
void expect_one_parcel_within_half_permille() {
  EXPECT_THAT(square(central_meridian_31_deg, lat_test_deg), StaysWithin(utm31(), "area=0.05%"));
}

TEST(StaysWithin, FailureReportedByExpectThatExplainsItself) {
  EXPECT_NONFATAL_FAILURE(expect_parcels_within_half_permille(),
                          "Expected: every feature stays within area<=500ppm on the grid of EPSG:32631");
  EXPECT_NONFATAL_FAILURE(expect_parcels_within_half_permille(), "6 of 8 feature(s) exceed area<=500ppm");
  EXPECT_NONFATAL_FAILURE(expect_one_parcel_within_half_permille(), "1 of 1 feature(s) exceed area<=500ppm");
  EXPECT_NONFATAL_FAILURE(expect_one_parcel_within_half_permille(), "[0] Polygon: area -79");
}

TEST(StaysWithin, SingleGeometryBothWays) {
  const Geometry on_meridian = square(central_meridian_31_deg, lat_test_deg);      // about −800 ppm
  const Geometry off_meridian = square(central_meridian_31_deg + 2.0, lat_test_deg);  // about −190 ppm
  EXPECT_GT(std::fabs(utm_areal_ppm(3.0, lat_test_deg, 3.0)), 500);
  EXPECT_LT(std::fabs(utm_areal_ppm(5.0, lat_test_deg, 3.0)), 480);
  EXPECT_THAT(off_meridian, StaysWithin(utm31(), "area=0.05%"));
  EXPECT_THAT(on_meridian, Not(StaysWithin(utm31(), "area=0.05%")));
  // Length: k0 − 1 = −400 ppm on the central meridian, so 1:2000 (500 ppm) holds and 1:5000 (200 ppm) does not.
  EXPECT_THAT(on_meridian, StaysWithin(utm31(), "length=1:2000"));
  EXPECT_THAT(on_meridian, Not(StaysWithin(utm31(), "length=1:5000")));
}

TEST(StaysWithin, UsesTheAuditorsOwnTolerancesWhenGivenNone) {
  // utm31() was built with area=0.05%.
  EXPECT_THAT(square(5.0, lat_test_deg), StaysWithin(utm31()));
  EXPECT_THAT(square(3.0, lat_test_deg), Not(StaysWithin(utm31())));
}

TEST(StaysWithin, NamesFeaturesByIdForKeyedCollections) {
  const std::map<std::string, Geometry> parcels = {{"parcel-17", square(3.0, lat_test_deg)},
                                                   {"parcel-18", square(5.0, lat_test_deg)}};
  ::testing::StringMatchResultListener listener;
  EXPECT_FALSE(::testing::ExplainMatchResult(StaysWithin(utm31(), "area=0.05%"), parcels, &listener));
  EXPECT_THAT(listener.str(), HasSubstr("\n  parcel-17 Polygon: area "));
  EXPECT_THAT(listener.str(), Not(HasSubstr("parcel-18")));
  const std::vector<std::pair<std::string, Geometry>> listed = {{"north", square(5.0, lat_test_deg)}};
  EXPECT_THAT(listed, StaysWithin(utm31(), "area=0.05%"));
}

TEST(StaysWithin, NeverPassesByCheckingNothing) {
  ::testing::StringMatchResultListener empty;
  EXPECT_FALSE(::testing::ExplainMatchResult(StaysWithin(utm31(), "area=1%"), std::vector<Geometry>{}, &empty));
  EXPECT_THAT(empty.str(), HasSubstr("no features"));

  // An area tolerance does not apply to lines.
  const std::vector<Geometry> lines = {Geometry::line_string({{3.0, 45.0}, {3.1, 45.1}})};
  ::testing::StringMatchResultListener none;
  EXPECT_FALSE(::testing::ExplainMatchResult(StaysWithin(utm31(), "area=1%"), lines, &none));
  EXPECT_THAT(none.str(), HasSubstr("no tolerance of area<=10000ppm applies"));
  EXPECT_THAT(lines, StaysWithin(utm31(), "area=1%,length=1%"));  // the length tolerance applies
}

TEST(StaysWithin, AnInvalidFeatureFailsWithItsReason) {
  const std::vector<Geometry> features = {square(5.0, lat_test_deg),
                                          Geometry::polygon({{3.0, 45.0}, {3.1, 95.0}, {3.2, 45.0}})};
  ::testing::StringMatchResultListener listener;
  EXPECT_FALSE(::testing::ExplainMatchResult(StaysWithin(utm31(), "area=1%"), features, &listener));
  EXPECT_THAT(listener.str(), HasSubstr("1 of 2 feature(s) exceed"));
  EXPECT_THAT(listener.str(), HasSubstr("[1] Polygon: invalid ("));
  EXPECT_THAT(listener.str(), Not(HasSubstr("[0]")));
}

TEST(StaysWithin, RejectsMalformedOrMissingTolerances) {
  EXPECT_THROW(StaysWithin(utm31(), "area=lots"), gridtruth::Error);
  EXPECT_THROW(StaysWithin(utm31(), ""), gridtruth::Error);
}

TEST(StaysWithinAssertion, BothWays) {
  const auto features = squares_across_zone();
  EXPECT_TRUE(gridtruth::testing::stays_within(utm31(), features, "area=0.1%"));
  const ::testing::AssertionResult r = gridtruth::testing::stays_within(utm31(), features, "area=0.05%");
  EXPECT_FALSE(r);
  EXPECT_THAT(r.message(), HasSubstr("6 of 8 feature(s) exceed area<=500ppm"));
  EXPECT_THAT(r.message(), HasSubstr("scale "));
}

// ---- KeepsScaleWithin -------------------------------------------------------------------------------------------

// Zone 31 from 1.5°E to 4.5°E (the central meridian 3°E is a sample column with 11 samples per side), 40°N–50°N.
// The scale is smallest on the central meridian, k0 = 0.9996 (−400 ppm linear, k0² − 1 = −799.84 ppm areal), and
// largest at the east and west edges, where it stays below 1 (about −200 ppm); so −400 ppm bounds the linear
// deviation and −799.84 ppm the areal one.
const LonLatBox zone31_band{1.5, 40.0, 4.5, 50.0};

TEST(KeepsScaleWithin, PassesAndFailsAroundTheCentralScaleFactor) {
  ASSERT_LT(std::fabs(utm_linear_ppm(1.5, 40.0, 3.0)), 250);  // the edges are far from the bound (precondition)
  ASSERT_LT(std::fabs(utm_linear_ppm(4.5, 50.0, 3.0)), 300);
  EXPECT_THAT(utm31(), KeepsScaleWithin(zone31_band, "length=1:2400"));  // 416.7 ppm ≥ 400
  EXPECT_THAT(utm31(), KeepsScaleWithin(zone31_band, "area=0.08%"));     // 800 ppm ≥ 799.84
  EXPECT_THAT(utm31(), Not(KeepsScaleWithin(zone31_band, "length=1:2600")));  // 384.6 ppm < 400
  EXPECT_THAT(utm31(), Not(KeepsScaleWithin(zone31_band, "area=0.0799%")));   // 799 ppm < 799.84
}

// Every number that follows `prefix` in `text`.
std::vector<double> numbers_after(const std::string& text, const std::string& prefix) {
  std::vector<double> out;
  for (std::size_t at = text.find(prefix); at != std::string::npos; at = text.find(prefix, at + 1)) {
    out.push_back(std::strtod(text.c_str() + at + prefix.size(), nullptr));
  }
  return out;
}

TEST(KeepsScaleWithin, FailureListsTheWorstPoints) {
  ::testing::StringMatchResultListener listener;
  EXPECT_FALSE(::testing::ExplainMatchResult(KeepsScaleWithin(zone31_band, "area=0.0799%"), utm31(), &listener));
  const std::string why = listener.str();
  // Only the central-meridian column exceeds 799 ppm (0.3° away the deviation is already ~16 ppm smaller).
  EXPECT_THAT(why, HasSubstr("11 of 121 points exceed area<=799ppm (areal scale) of EPSG:32631"));
  EXPECT_THAT(why, HasSubstr("... and 6 more"));
  EXPECT_EQ(numbers_after(why, "\n  (").size(), 5u) << why;
  for (double lon : numbers_after(why, "\n  (")) EXPECT_DOUBLE_EQ(lon, central_meridian_31_deg);
  const std::vector<double> areal_ppm = numbers_after(why, ": areal scale ");
  ASSERT_EQ(areal_ppm.size(), 5u) << why;
  for (double ppm : areal_ppm) EXPECT_NEAR(ppm, (k0_utm * k0_utm - 1) * 1e6, 0.05);  // −799.84

  ::testing::StringMatchResultListener length;
  EXPECT_FALSE(::testing::ExplainMatchResult(KeepsScaleWithin(zone31_band, "length=1:2600"), utm31(), &length));
  const std::vector<double> linear_ppm = numbers_after(length.str(), ": linear scale ");
  ASSERT_EQ(linear_ppm.size(), 5u) << length.str();
  for (double ppm : linear_ppm) EXPECT_NEAR(ppm, (k0_utm - 1) * 1e6, 0.05);  // −400
  EXPECT_THAT(length.str(), HasSubstr("Tissot a 0.9996"));
}

TEST(KeepsScaleWithin, HandlesABoxAcrossTheAntimeridian) {
  gridtruth::AuditOptions o;
  o.target_crs = "EPSG:32601";  // UTM zone 1N, central meridian 177°W
  const Auditor zone1(o);
  // 179°E to 178°W is 1° to 4° west of the central meridian: at 60°N–62°N the linear scale lies between about
  // −365 ppm and +210 ppm (GeographicLib, checked here). Sampled the long way round (179°E westward to 178°W)
  // the box would reach far outside the zone and fail.
  const LonLatBox box{179.0, 60.0, -178.0, 62.0};
  for (double lon : {179.0, -178.0}) {
    for (double lat : {60.0, 62.0}) {
      ASSERT_LT(std::fabs(utm_linear_ppm(lon, lat, -177.0)), 380.0);
    }
  }
  EXPECT_THAT(zone1, KeepsScaleWithin(box, "length=1:2500"));  // 400 ppm
  EXPECT_THAT(zone1, Not(KeepsScaleWithin(box, "length=1:5000")));  // 200 ppm
}

TEST(KeepsScaleWithin, NeedsAGeographicSourceCrs) {
  gridtruth::AuditOptions o;
  o.source_crs = "EPSG:32631";  // projected: its coordinates are not longitudes and latitudes
  o.target_crs = "EPSG:32631";
  const Auditor projected_source(o);
  ::testing::StringMatchResultListener listener;
  EXPECT_FALSE(::testing::ExplainMatchResult(KeepsScaleWithin(zone31_band, "area=1%"), projected_source, &listener));
  EXPECT_THAT(listener.str(), HasSubstr("source CRS EPSG:32631 is not geographic"));
}

TEST(KeepsScaleWithinAssertion, BothWaysAndArguments) {
  EXPECT_TRUE(gridtruth::testing::keeps_scale_within(utm31(), zone31_band, "length=1:2400"));
  const ::testing::AssertionResult r = gridtruth::testing::keeps_scale_within(utm31(), zone31_band, "length=1:2600");
  EXPECT_FALSE(r);
  EXPECT_THAT(r.message(), HasSubstr("exceed length<=384.6"));
  EXPECT_THROW(KeepsScaleWithin(zone31_band, "area=50m2"), gridtruth::Error);        // absolute: no meaning here
  EXPECT_THROW(KeepsScaleWithin(zone31_band, "bearing=5arcsec"), gridtruth::Error);  // not a scale
  EXPECT_THROW(KeepsScaleWithin(zone31_band, "area=1%", 1), gridtruth::Error);
  EXPECT_THROW(KeepsScaleWithin(LonLatBox{0, 50, 1, 40}, "area=1%"), gridtruth::Error);  // south > north
}

}  // namespace
