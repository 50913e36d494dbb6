// Degenerate target CRSs are refused at set-up; legitimate ones are not; repaired features say so (issue 17).
#include <gmock/gmock.h>
#include <gtest/gtest.h>

#include <string>

#include "gridtruth/audit.hpp"
#include "gridtruth/error.hpp"

namespace gridtruth {
namespace {

using ::testing::HasSubstr;

AuditOptions to(const std::string& crs) {
  AuditOptions o;
  o.target_crs = crs;
  return o;
}

// Before issue 17 each of these gave grid measures of 0 (or nonsense) with status `ok`.
TEST(TargetCheck, DegenerateProjectionsAreRefusedNamingTheCrs) {
  // (PROJ itself rejects some absurd values, e.g. +lat_0=1e300: those never reach the check.)
  for (const std::string crs : {"+proj=tmerc +lon_0=1e308", "+proj=tmerc +x_0=1e300", "+proj=tmerc +y_0=1e300",
                                "+proj=tmerc +k_0=1e-300", "+proj=laea +lon_0=1e308", "+proj=tmerc +lon_0=1e20"}) {
    try {
      const Auditor auditor(to(crs));
      ADD_FAILURE() << crs << " was accepted";
    } catch (const Error& e) {
      EXPECT_EQ(e.code(), ErrorCode::unsupported_crs) << crs;
      EXPECT_THAT(e.what(), HasSubstr(crs));
      EXPECT_THAT(e.what(), HasSubstr("degenerate"));
    }
  }
}

// Well-formed projections, each used within its domain (common practice), must not be refused: UTM and a
// transverse Mercator far from Greenwich, polar stereographic, Web Mercator, world equal-area CRSs, azimuthal,
// conic and interrupted or pseudo-cylindrical projections, with and without an area of use, in feet too.
TEST(TargetCheck, LegitimateProjectionsAreAccepted) {
  for (const std::string crs :
       {"EPSG:32615", "EPSG:32760", "EPSG:3031", "EPSG:3413", "EPSG:3857", "EPSG:6933", "EPSG:8857", "EPSG:2263",
        "EPSG:27700", "+proj=utm +zone=60 +datum=WGS84", "+proj=tmerc +lon_0=100 +k_0=0.9996",
        "+proj=gnom +lat_0=90 +lon_0=0", "+proj=ortho +lat_0=45 +lon_0=10", "+proj=aeqd +lat_0=-90",
        "+proj=laea +lat_0=52 +lon_0=10", "+proj=lcc +lat_1=33 +lat_2=45 +lon_0=-96", "+proj=robin",
        "+proj=moll +lon_0=170", "+proj=igh", "+proj=sinu"}) {
    EXPECT_NO_THROW({ const Auditor auditor(to(crs)); }) << crs;
  }
}

TEST(TargetCheck, RepairIsOptInAndSaysSo) {
  const Geometry bowtie = Geometry::polygon({{-95.40, 44.10}, {-95.375, 44.1135}, {-95.375, 44.10}, {-95.40, 44.1135}});
  AuditOptions o = to("EPSG:32615");
  const AuditResult plain = Auditor(o).audit(bowtie);
  EXPECT_EQ(plain.status, Status::invalid);
  EXPECT_THAT(plain.message, HasSubstr("crosses itself"));
  o.repair = true;
  const AuditResult fixed = Auditor(o).audit(bowtie);
  ASSERT_EQ(fixed.status, Status::ok) << fixed.message;
  EXPECT_THAT(fixed.message, HasSubstr("repaired by the even-odd rule"));
  ASSERT_TRUE(fixed.area.has_value());
  EXPECT_GT(fixed.area->reference, 0);
  // A problem repair() does not mend (too few vertices) keeps the feature invalid.
  EXPECT_EQ(Auditor(o).audit(Geometry::polygon({{-95.4, 44.1}, {-95.3, 44.1}})).status, Status::invalid);
}

}  // namespace
}  // namespace gridtruth
