// Tolerance specifications: parsing, unit conversion, canonical text and clear errors.
#include "gridtruth/tolerance.hpp"

#include <gmock/gmock.h>
#include <gtest/gtest.h>

#include <string>

#include "gridtruth/error.hpp"

namespace gridtruth {
namespace {

using ::testing::HasSubstr;

// Expects parse(spec) to throw Error(invalid_argument) whose message names the spec and contains `reason`.
void expect_rejected(const std::string& spec, const std::string& reason) {
  try {
    (void)Tolerance::parse(spec);
    ADD_FAILURE() << "'" << spec << "' was accepted";
  } catch (const Error& e) {
    EXPECT_EQ(e.code(), ErrorCode::invalid_argument) << spec;
    EXPECT_THAT(e.what(), HasSubstr("'" + spec + "'")) << spec;
    EXPECT_THAT(e.what(), HasSubstr(reason)) << spec;
  }
}

TEST(ToleranceParse, RelativeForms) {
  // 0.1 % = 1000 ppm; 1:10000 = 100 ppm (1e6 / 1e4).
  const Tolerance pct = Tolerance::parse("area=0.1%");
  EXPECT_EQ(pct.metric, Metric::area);
  EXPECT_EQ(pct.kind, Tolerance::Kind::relative_ppm);
  EXPECT_DOUBLE_EQ(pct.value, 1000.0);

  const Tolerance ppm = Tolerance::parse("length=100ppm");
  EXPECT_EQ(ppm.metric, Metric::length);
  EXPECT_EQ(ppm.kind, Tolerance::Kind::relative_ppm);
  EXPECT_DOUBLE_EQ(ppm.value, 100.0);

  const Tolerance ratio = Tolerance::parse("length=1:10000");
  EXPECT_EQ(ratio.metric, Metric::length);
  EXPECT_EQ(ratio.kind, Tolerance::Kind::relative_ppm);
  EXPECT_DOUBLE_EQ(ratio.value, 100.0);

  EXPECT_DOUBLE_EQ(Tolerance::parse("area=1:5000").value, 200.0);
  EXPECT_DOUBLE_EQ(Tolerance::parse("area=2.5%").value, 25000.0);
}

TEST(ToleranceParse, AbsoluteForms) {
  const Tolerance m2 = Tolerance::parse("area=50m2");
  EXPECT_EQ(m2.metric, Metric::area);
  EXPECT_EQ(m2.kind, Tolerance::Kind::absolute);
  EXPECT_DOUBLE_EQ(m2.value, 50.0);

  // 1 ha = 10 000 m².
  const Tolerance ha = Tolerance::parse("area=2ha");
  EXPECT_EQ(ha.kind, Tolerance::Kind::absolute);
  EXPECT_DOUBLE_EQ(ha.value, 20000.0);

  const Tolerance m = Tolerance::parse("length=0.05m");
  EXPECT_EQ(m.metric, Metric::length);
  EXPECT_EQ(m.kind, Tolerance::Kind::absolute);
  EXPECT_DOUBLE_EQ(m.value, 0.05);

  const Tolerance arcsec = Tolerance::parse("bearing=20arcsec");
  EXPECT_EQ(arcsec.metric, Metric::bearing);
  EXPECT_EQ(arcsec.kind, Tolerance::Kind::absolute);
  EXPECT_DOUBLE_EQ(arcsec.value, 20.0);

  EXPECT_DOUBLE_EQ(Tolerance::parse("length=5cm").value, 0.05);
  EXPECT_DOUBLE_EQ(Tolerance::parse("length=12mm").value, 0.012);
  EXPECT_DOUBLE_EQ(Tolerance::parse("area=1.5km2").value, 1.5e6);
}

TEST(ToleranceParse, WhitespaceAndCaseAreTolerated) {
  const Tolerance t = Tolerance::parse("  Area = 0.1 % ");
  EXPECT_EQ(t.metric, Metric::area);
  EXPECT_DOUBLE_EQ(t.value, 1000.0);
  EXPECT_DOUBLE_EQ(Tolerance::parse("LENGTH=100PPM").value, 100.0);
  EXPECT_DOUBLE_EQ(Tolerance::parse("area=2HA").value, 20000.0);
}

TEST(ToleranceParse, BadSpecsThrowWithAReason) {
  expect_rejected("", "empty");
  expect_rejected("area", "metric=value");
  expect_rejected("volume=1%", "unknown metric 'volume'");
  expect_rejected("area=", "missing value");
  expect_rejected("area=0.1", "missing unit");
  expect_rejected("area=abc%", "must start with a number");
  expect_rejected("area=5furlongs", "unknown unit 'furlongs'");
  expect_rejected("area=5m", "unit 'm' measures length, not area");
  expect_rejected("length=5m2", "unit 'm2' measures area, not length");
  expect_rejected("length=2ha", "measures area, not length");
  expect_rejected("bearing=5%", "bearing tolerance is absolute");
  expect_rejected("bearing=1:1000", "bearing tolerance is absolute");
  expect_rejected("bearing=5m", "measures length, not bearing");
  expect_rejected("area=0%", "greater than zero");
  expect_rejected("area=-1%", "greater than zero");
  expect_rejected("length=1:0", "positive");
  expect_rejected("length=1:-5", "positive");
  expect_rejected("length=2:10000", "1:N");
  expect_rejected("length=1:abc", "1:N");
  expect_rejected("area=inf%", "must start with a number");
  expect_rejected("area=nan%", "must start with a number");
  expect_rejected("area=1e999%", "out of range");
}

TEST(ToleranceToString, CanonicalText) {
  EXPECT_EQ(Tolerance::parse("area=0.1%").to_string(), "area<=1000ppm");
  EXPECT_EQ(Tolerance::parse("length=1:10000").to_string(), "length<=100ppm");
  EXPECT_EQ(Tolerance::parse("length=0.05m").to_string(), "length<=0.05m");
  EXPECT_EQ(Tolerance::parse("area=2ha").to_string(), "area<=20000m2");
  EXPECT_EQ(Tolerance::parse("bearing=20arcsec").to_string(), "bearing<=20arcsec");
  EXPECT_EQ(Tolerance::parse("length=1:3").to_string(), "length<=333333.3333333333ppm");
}

TEST(ToleranceToString, RatiosAreEchoedAsRatios) {
  // A closure quoted as 1:N (common practice in surveying) is shown as given; 1:20000 is 50 ppm (1e6 / 2e4).
  const Tolerance t = Tolerance::parse("length=1:20000");
  EXPECT_EQ(t.as_given(), "length<=1:20000");
  EXPECT_EQ(t.ratio_n, 20000.0);
  const Tolerance back = Tolerance::parse(t.as_given());
  EXPECT_EQ(back.value, 50.0);
  EXPECT_EQ(back.as_given(), "length<=1:20000");
  EXPECT_EQ(Tolerance::parse("area=1:2500.5").as_given(), "area<=1:2500.5");
  // Any other form is the canonical text.
  EXPECT_EQ(Tolerance::parse("area=0.1%").as_given(), "area<=1000ppm");
  EXPECT_EQ(Tolerance::parse("length=0.05m").as_given(), "length<=0.05m");
}

TEST(ToleranceToString, CanonicalTextParsesBackToTheSameTolerance) {
  for (const char* spec : {"area=0.1%", "length=100ppm", "length=1:10000", "area=50m2", "area=2ha",
                           "length=0.05m", "bearing=20arcsec", "length=1:3", "area=1e-9m2", "length=1e30m"}) {
    const Tolerance t = Tolerance::parse(spec);
    const Tolerance back = Tolerance::parse(t.to_string());
    EXPECT_EQ(back.metric, t.metric) << spec;
    EXPECT_EQ(back.kind, t.kind) << spec;
    EXPECT_EQ(back.value, t.value) << spec << " -> " << t.to_string();
  }
}

TEST(ToleranceParseList, CommaSeparated) {
  EXPECT_TRUE(Tolerance::parse_list("").empty());
  EXPECT_TRUE(Tolerance::parse_list("   ").empty());
  const auto list = Tolerance::parse_list("area=0.1%, length=0.05m,bearing=20arcsec");
  ASSERT_EQ(list.size(), 3u);
  EXPECT_EQ(list[0].metric, Metric::area);
  EXPECT_EQ(list[1].metric, Metric::length);
  EXPECT_EQ(list[1].kind, Tolerance::Kind::absolute);
  EXPECT_EQ(list[2].metric, Metric::bearing);
}

TEST(ToleranceParseList, BadItemsThrow) {
  EXPECT_THROW(Tolerance::parse_list("area=0.1%,,length=1m"), Error);
  EXPECT_THROW(Tolerance::parse_list("area=0.1%,"), Error);
  try {
    (void)Tolerance::parse_list("area=0.1%,length=5furlongs");
    ADD_FAILURE() << "accepted";
  } catch (const Error& e) {
    EXPECT_EQ(e.code(), ErrorCode::invalid_argument);
    EXPECT_THAT(e.what(), HasSubstr("length=5furlongs"));
  }
}

TEST(Verdict, Names) {
  EXPECT_EQ(to_string(Verdict::none), "");
  EXPECT_EQ(to_string(Verdict::pass), "pass");
  EXPECT_EQ(to_string(Verdict::fail), "fail");
}

}  // namespace
}  // namespace gridtruth
