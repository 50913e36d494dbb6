// A unit test of a projection choice, as a pipeline would keep it next to its code: "our parcels in the Red River
// valley keep their areas within 0.05 % in the CRS we ship (UTM zone 14N), and UTM zone 15N is no good for them".
// Build with GoogleTest and GoogleMock (gtest_main) and gridtruth.
#include <gridtruth/audit.hpp>
#include <gridtruth/testing.hpp>

#include <gmock/gmock.h>
#include <gtest/gtest.h>

#include <vector>

namespace {

using gridtruth::testing::KeepsScaleWithin;
using gridtruth::testing::StaysWithin;

// The parcels the pipeline handles (invented), in (longitude, latitude) degrees on WGS 84.
std::vector<gridtruth::Geometry> parcels() {
  return {
      gridtruth::Geometry::polygon({{-97.20, 46.80}, {-97.17, 46.80}, {-97.17, 46.82}, {-97.20, 46.82}}),
      gridtruth::Geometry::polygon({{-96.60, 45.60}, {-96.55, 45.60}, {-96.55, 45.63}, {-96.60, 45.63}}),
      gridtruth::Geometry::polygon({{-96.45, 47.90}, {-96.40, 47.91}, {-96.42, 47.95}}),
  };
}

gridtruth::Auditor auditor_for(const char* target_crs) {
  gridtruth::AuditOptions options;
  options.target_crs = target_crs;
  return gridtruth::Auditor(options);
}

// The choice: UTM zone 14N (central meridian 99°W). The parcels lie 1.8° to 2.6° east of its central meridian,
// where the scale factor is close to 1 (it is 0.9996 on the central meridian and grows eastwards).
TEST(ProjectionChoice, ParcelsKeepTheirAreasInTheShippedCrs) {
  const gridtruth::Auditor shipped = auditor_for("EPSG:32614");  // WGS 84 / UTM zone 14N
  EXPECT_THAT(parcels(), StaysWithin(shipped, "area=0.05%"));
  // The whole service area, 97.3°W to 96.2°W and 45.5°N to 48°N, not just today's parcels.
  EXPECT_THAT(shipped, KeepsScaleWithin({-97.3, 45.5, -96.2, 48.0}, "area=0.05%"));
}

// The alternative someone might switch to, because the rest of the state uses it: UTM zone 15N (central meridian
// 93°W). The parcels lie 3.4° to 4.2° west of it, outside its zone, where it inflates areas by more than 0.1 %.
TEST(ProjectionChoice, TheNeighbouringZoneIsRejected) {
  const gridtruth::Auditor neighbour = auditor_for("EPSG:32615");
  EXPECT_THAT(parcels(), ::testing::Not(StaysWithin(neighbour, "area=0.05%")));
}

}  // namespace
