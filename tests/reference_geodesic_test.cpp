// Reference checks of the truth side: geodesic lengths, polygon areas and perimeters on the ellipsoid, the
// closed-form area of the whole ellipsoid, and the lift to the ground at a constant height.
#include <GeographicLib/Geodesic.hpp>
#include <gtest/gtest.h>

#include <cmath>
#include <string>
#include <vector>

#include "gridtruth/audit.hpp"
#include "support.hpp"

namespace gridtruth {
namespace {

using test::box;
using test::pi;
using test::Spheroid;

AuditOptions make_options(const std::string& source, const std::string& target) {
  AuditOptions o;
  o.source_crs = source;
  o.target_crs = target;
  return o;
}

/// Area of the whole ellipsoid, 2πa²q_p = 4πR_q² (Snyder 1987, USGS PP 1395, eqs. 3-12 and 3-13, p. 16 —
/// page from memory), with q_p = 1 − ((1 − e²)/(2e)) ln((1 − e)/(1 + e)).
double ellipsoid_area_m2(const Spheroid& s) {
  const double e2 = s.f * (2 - s.f);
  const double e = std::sqrt(e2);
  const double qp = 1 - (1 - e2) / (2 * e) * std::log((1 - e) / (1 + e));
  return 2 * pi * s.a_m * s.a_m * qp;
}

/// Twelve geodesic polygons tiling the whole ellipsoid: in each hemisphere, six lunes from the equator to the pole
/// between irregular meridians (the equator and the meridians are geodesics, so the tiling is exact).
std::vector<Geometry> globe_tiles() {
  const double lons[] = {0, 37, 100, 170, 222, 300, 360};
  std::vector<Geometry> tiles;
  for (const double pole : {90.0, -90.0})
    for (int i = 0; i < 6; ++i)
      tiles.push_back(Geometry::polygon({{lons[i], 0}, {lons[i + 1], 0}, {lons[i + 1], pole}, {lons[i], pole}}));
  return tiles;
}

// ---------------------------------------------------------------------------------------------------------------
// Karney, C.F.F. (2013) Algorithms for geodesics. J. Geodesy 87(1): 43-55, WGS 84.
// The lengths s12 below are from memory; each is cross-checked with GeographicLib::Geodesic directly (within the
// rounding of the printed value) so a wrong memory cannot make the test pass. Budget::reference must match
// GeographicLib to 1e-6 m (the requirement; GeographicLib itself is accurate to 15 nm).
// ---------------------------------------------------------------------------------------------------------------

// Table 3, the short inverse problem: φ1 = −30.12345°, φ2 = −30.12344°, λ12 = 0.00005° → s12 = 4.944208 m.
TEST(KarneyGeodesics, ShortInverseProblemAsATwoVertexLine) {
  constexpr double s12_pub = 4.944208;  // m, printed to 1e-6 m (from memory)
  constexpr double lon1 = 3.0;          // λ12 is all that matters; put the line inside UTM zone 31S
  double s12_gl = 0;
  GeographicLib::Geodesic::WGS84().Inverse(-30.12345, lon1, -30.12344, lon1 + 0.00005, s12_gl);
  EXPECT_NEAR(s12_gl, s12_pub, 0.5e-6);

  const Auditor auditor(make_options("EPSG:4326", "EPSG:32731"));
  const AuditResult r = auditor.audit(Geometry::line_string({{lon1, -30.12345}, {lon1 + 0.00005, -30.12344}}));
  ASSERT_EQ(r.status, Status::ok) << r.message;
  ASSERT_TRUE(r.length.has_value());
  EXPECT_FALSE(r.area.has_value());
  EXPECT_NEAR(r.length->reference, s12_gl, 1e-6);
  EXPECT_NEAR(r.length->reference, s12_pub, 0.5e-6 + 1e-6);
  EXPECT_EQ(r.vertices, 2u);
}

// Tables 4-6, the nearly antipodal inverse problem: φ1 = −30°, φ2 = 29.9°, λ12 = 179.8°
// → s12 = 19 989 832.827 61 m (from memory; printed to 1e-5 m).
TEST(KarneyGeodesics, NearlyAntipodalInverseProblemAsATwoVertexLine) {
  constexpr double s12_pub = 19989832.82761;
  double s12_gl = 0;
  GeographicLib::Geodesic::WGS84().Inverse(-30, 0, 29.9, 179.8, s12_gl);
  EXPECT_NEAR(s12_gl, s12_pub, 0.5e-5);

  // The grid side of a half-world line is not the point here: the truth is reported whatever the status.
  const Auditor auditor(make_options("EPSG:4326", "EPSG:3857"));
  const AuditResult r = auditor.audit(Geometry::line_string({{0, -30}, {179.8, 29.9}}));
  ASSERT_NE(r.status, Status::invalid) << r.message;
  ASSERT_TRUE(r.length.has_value()) << r.message;
  EXPECT_NEAR(r.length->reference, s12_gl, 1e-6);
  EXPECT_NEAR(r.length->reference, s12_pub, 0.5e-5 + 1e-6);
}

// ---------------------------------------------------------------------------------------------------------------
// GeographicLib documentation, Planimeter utility, example "Antarctica" (18 vertices, WGS 84; the vertices are
// from memory, printed there as latitude longitude): perimeter 16 831 067.893 m, area 13 662 703 680 020.1 m².
// A ring that encloses the South Pole; audited against the Antarctic Polar Stereographic grid (EPSG:3031).
// ---------------------------------------------------------------------------------------------------------------
Path antarctica_ring() {
  const double lat_lon[18][2] = {{-63.1, -58},  {-72.9, -74},  {-71.9, -102}, {-74.9, -102}, {-74.3, -131},
                                 {-77.5, -163}, {-77.4, 163},  {-71.7, 172},  {-65.9, 140},  {-65.7, 113},
                                 {-66.6, 88},   {-66.9, 59},   {-69.8, 25},   {-70.0, -4},   {-71.0, -14},
                                 {-77.3, -33},  {-77.9, -46},  {-74.7, -61}};
  Path ring;
  for (const auto& v : lat_lon) ring.push_back({v[1], v[0]});
  return ring;
}

TEST(GeographicLibPlanimeter, AntarcticaPolygonAroundTheSouthPole) {
  constexpr double perimeter_pub = 16831067.893;     // m, printed to 1e-3 m
  constexpr double area_pub = 13662703680020.1;      // m², printed to 0.1 m²
  const Path ring = antarctica_ring();
  // The remembered vertices must reproduce the published figures with GeographicLib itself.
  const test::RingMeasure gl = test::geodesic_ring(ring, test::wgs84);
  ASSERT_NEAR(gl.perimeter_m, perimeter_pub, 0.5e-3);
  ASSERT_NEAR(gl.area_m2, area_pub, 0.05);

  const Auditor auditor(make_options("EPSG:4326", "EPSG:3031"));
  Path reversed(ring.rbegin(), ring.rend());
  Path closed = ring;
  closed.push_back(ring.front());
  for (const Path& r_ring : {ring, reversed, closed}) {
    const AuditResult r = auditor.audit(Geometry::polygon(r_ring));
    ASSERT_EQ(r.status, Status::ok) << r.message;
    ASSERT_TRUE(r.area.has_value());
    ASSERT_TRUE(r.length.has_value());
    // One unit of the last printed digit (the implementation's own error is ~1e-3 m²).
    EXPECT_NEAR(r.area->reference, area_pub, 0.1);
    EXPECT_NEAR(r.length->reference, perimeter_pub, 1e-3);
    // Polar stereographic true at 71°S: k = (1 + sin|φ|)/(1 + sin 71°) on the sphere (common practice) ranges
    // 0.97-1.03 between 63°S and the pole, so the grid area is within 6 % of the truth.
    EXPECT_LT(std::abs(r.area->error_ppm), 6e4);
  }
}

// ---------------------------------------------------------------------------------------------------------------
// Closed-form ellipsoid facts.
// ---------------------------------------------------------------------------------------------------------------

// The twelve tiles of the globe sum to 2πa²q_p (Snyder eqs. 3-12, 3-13). GeographicLib's area error is about
// 0.1 m² per edge (Karney 2013, sec. 6; from memory): tolerance 1 m² per edge (48 edges), i.e. 1e-13 relative.
TEST(ClosedForm, WholeWgs84EllipsoidIsTheSumOfTilesCoveringIt) {
  const double expected = ellipsoid_area_m2(test::wgs84);
  // The closed form against the usual figure for the WGS 84 surface, 510 065 621.7 km² (from memory).
  EXPECT_NEAR(expected / 1e6, 510065621.7, 0.1);
  const Auditor auditor(make_options("EPSG:4326", "EPSG:6933"));
  const std::vector<AuditResult> results = auditor.audit(globe_tiles());
  ASSERT_EQ(results.size(), 12u);
  double total = 0;
  for (const AuditResult& r : results) {
    ASSERT_NE(r.status, Status::invalid) << r.message;
    ASSERT_TRUE(r.area.has_value()) << r.message;
    total += r.area->reference;
  }
  EXPECT_NEAR(total, expected, 48 * 1.0);
}

// Moritz, H. (2000) Geodetic Reference System 1980, J. Geodesy 74: 128-133 (Bulletin Géodésique 54 (1980)),
// derived geometric constants: radius of the sphere of the same surface R2 = 6 371 007.1810 m.
// Investigated discrepancy: the exact closed form 2πa²q_p with a = 6 378 137 m, 1/f = 298.257222101 gives
// R2 = 6 371 007.180 88 m (checked at 40 digits), 0.12 mm below the printed figure, which is therefore not the
// correctly rounded value of its own definition (recomputations print 6 371 007.1809 m). So: the library is held
// to the exact closed form to rounding, and the printed figure is checked at the precision it actually carries,
// 2 units of its last digit (0.2 mm).
TEST(ClosedForm, Grs80AuthalicRadius) {
  constexpr double r2_pub = 6371007.1810;
  constexpr double r2_pub_precision_m = 2e-4;
  const double exact_area = ellipsoid_area_m2(test::grs80);
  EXPECT_NEAR(std::sqrt(exact_area / (4 * pi)), r2_pub, r2_pub_precision_m);

  const Auditor auditor(make_options("+proj=longlat +ellps=GRS80 +no_defs +type=crs",
                                     "+proj=cea +lat_ts=0 +lon_0=0 +ellps=GRS80 +units=m +no_defs +type=crs"));
  EXPECT_DOUBLE_EQ(auditor.source().ellipsoid.a_m, test::grs80.a_m);
  EXPECT_NEAR(auditor.source().ellipsoid.f, test::grs80.f, 1e-15);
  double total = 0;
  for (const AuditResult& r : auditor.audit(globe_tiles())) {
    ASSERT_TRUE(r.area.has_value()) << r.message;
    total += r.area->reference;
  }
  EXPECT_NEAR(total, exact_area, 48 * 1.0);  // 1 m² per edge, as for WGS 84 above
  EXPECT_NEAR(std::sqrt(total / (4 * pi)), r2_pub, r2_pub_precision_m);
}

// The truth is measured on the source CRS's own ellipsoid: a polygon given in NAD27 (Clarke 1866) has its
// ellipsoidal area on Clarke 1866, not on WGS 84. Independent: GeographicLib on Clarke 1866 (a, b from EPSG 7008).
TEST(ClosedForm, TruthUsesTheSourceEllipsoid) {
  const Path ring = box(-93.4, 44.8, 0.3, 0.2);
  const Auditor auditor(make_options("EPSG:4267", "EPSG:26915"));
  const AuditResult r = auditor.audit(Geometry::polygon(ring));
  ASSERT_TRUE(r.area.has_value()) << r.message;
  ASSERT_TRUE(r.length.has_value()) << r.message;
  const test::RingMeasure clarke = test::geodesic_ring(ring, test::clarke1866);
  const test::RingMeasure wgs = test::geodesic_ring(ring, test::wgs84);
  EXPECT_NEAR(r.area->ellipsoid_source, clarke.area_m2, 1e-9 * clarke.area_m2);
  EXPECT_NEAR(r.area->reference, clarke.area_m2, 1e-9 * clarke.area_m2);
  EXPECT_NEAR(r.length->reference, clarke.perimeter_m, 1e-9 * clarke.perimeter_m);
  // Clarke 1866 and WGS 84 differ by far more than the tolerance above here (≈ 2e-5 relative).
  EXPECT_GT(std::abs(clarke.area_m2 - wgs.area_m2), 100 * 1e-9 * clarke.area_m2);
}

// ---------------------------------------------------------------------------------------------------------------
// Ground lift at a constant ellipsoidal height h: R = E_S·(1 + h/R_G) for lengths and E_S·(1 + h/R_G)² for areas,
// with the Gaussian mean radius R_G = √(M·N) at the feature's mean latitude (common practice; the elevation factor
// R_G/(R_G + h) of surveying). M and N are computed here independently (Snyder eqs. 4-18, 4-20).
// ---------------------------------------------------------------------------------------------------------------
TEST(GroundLift, GaussianMeanRadiusIsSqrtOfMTimesN) {
  const Ellipsoid wgs84{"WGS 84", test::wgs84.a_m, test::wgs84.f};
  for (const double lat : {0.0, 15.0, 46.0, -33.5, 60.0, 89.0}) {
    const double expected =
        std::sqrt(test::meridian_radius_m(test::wgs84, lat) * test::prime_vertical_radius_m(test::wgs84, lat));
    EXPECT_NEAR(gaussian_mean_radius_m(wgs84, lat), expected, 1e-6) << lat;
  }
  // Sphere: R_G = R everywhere.
  EXPECT_NEAR(gaussian_mean_radius_m(Ellipsoid{"sphere", 6371000.0, 0.0}, 37.0), 6371000.0, 1e-6);
  // Equator: M = a(1 − e²), N = a, so R_G = a·√(1 − e²) (closed form).
  const double e2 = test::wgs84.f * (2 - test::wgs84.f);
  EXPECT_NEAR(gaussian_mean_radius_m(wgs84, 0.0), test::wgs84.a_m * std::sqrt(1 - e2), 1e-6);
}

TEST(GroundLift, ConstantHeightScalesLengthOnceAndAreaTwice) {
  constexpr double height_m = 1500.0;
  constexpr double lat0 = 46.0;
  // Open ring symmetric about lat0, so any sensible "mean latitude" of the feature is lat0 (±1e-9°).
  const Path ring = box(9.2, lat0 - 0.05, 0.1, 0.1);
  AuditOptions o = make_options("EPSG:4326", "EPSG:32632");
  o.height_m = height_m;
  const Auditor lifted(o);
  const AuditResult r = lifted.audit(Geometry::polygon(ring));
  ASSERT_EQ(r.status, Status::ok) << r.message;
  ASSERT_TRUE(r.area.has_value());
  ASSERT_TRUE(r.length.has_value());

  const double rg = std::sqrt(test::meridian_radius_m(test::wgs84, lat0) *
                              test::prime_vertical_radius_m(test::wgs84, lat0));
  const double lift = 1 + height_m / rg;
  const test::RingMeasure es = test::geodesic_ring(ring, test::wgs84);
  // Tolerance 1e-10 relative: an R_G wrong by a latitude error of 0.01° moves R by < 3e-10; using a instead of
  // R_G would move it by 1.8e-7.
  EXPECT_NEAR(r.length->ellipsoid_source, es.perimeter_m, 1e-12 * es.perimeter_m);
  EXPECT_NEAR(r.area->ellipsoid_source, es.area_m2, 1e-12 * es.area_m2);
  EXPECT_NEAR(r.length->reference, es.perimeter_m * lift, 1e-10 * es.perimeter_m);
  EXPECT_NEAR(r.area->reference, es.area_m2 * lift * lift, 1e-10 * es.area_m2);
  EXPECT_NEAR(r.length->from_height, es.perimeter_m - es.perimeter_m * lift, 1e-10 * es.perimeter_m);
  EXPECT_NEAR(r.area->from_height, es.area_m2 - es.area_m2 * lift * lift, 1e-10 * es.area_m2);
  EXPECT_LT(r.area->from_height, 0.0);  // the ground is larger than the ellipsoid: the grid understates it

  // Same feature without height: the grid measure does not change, only R (and hence the error) does.
  const Auditor flat(make_options("EPSG:4326", "EPSG:32632"));
  const AuditResult f = flat.audit(Geometry::polygon(ring));
  ASSERT_TRUE(f.area.has_value());
  EXPECT_EQ(f.area->from_height, 0.0);
  EXPECT_EQ(f.length->from_height, 0.0);
  EXPECT_DOUBLE_EQ(f.area->grid, r.area->grid);
  EXPECT_DOUBLE_EQ(f.area->reference, f.area->ellipsoid_source);
  EXPECT_NEAR(r.area->error - f.area->error, r.area->from_height, 1e-9 * es.area_m2);
  // The elevation factor of surveying: grid distance = ellipsoid distance × k; ground × R_G/(R_G + h).
  EXPECT_NEAR(r.length->reference * rg / (rg + height_m), es.perimeter_m, 1e-10 * es.perimeter_m);
}

}  // namespace
}  // namespace gridtruth
