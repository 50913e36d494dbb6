// Reference checks of the grid side: projected coordinates, scale factors and the distortion statistics against
// published worked examples, each cross-checked with an independent closed-form implementation (GeographicLib's
// projection classes, which share no code with PROJ), and facts of the trade marked "common practice".
#include <GeographicLib/AlbersEqualArea.hpp>
#include <GeographicLib/LambertConformalConic.hpp>
#include <GeographicLib/TransverseMercatorExact.hpp>
#include <gtest/gtest.h>

#include <cmath>
#include <string>

#include "gridtruth/audit.hpp"
#include "support.hpp"

namespace gridtruth {
namespace {

using test::box;
using test::pi;
using test::Spheroid;

// ---------------------------------------------------------------------------------------------------------------
// Snyder, J.P. (1987) Map Projections: A Working Manual. USGS Professional Paper 1395, ellipsoidal numerical
// examples. All use the Clarke 1866 ellipsoid as Snyder rounds it: a = 6 378 206.4 m, e² = 0.00676866.
// Snyder prints coordinates to 0.1 m and scale factors to 7 decimals. Tolerances: 0.06 m for coordinates (half a
// unit of his last digit, plus 0.01 m for the truncated series of his Transverse Mercator) and 1e-7 for scale
// factors (half a unit of his last digit, plus the ~1e-9 of the numerical differentiation).
// ---------------------------------------------------------------------------------------------------------------
constexpr double snyder_a_m = 6378206.4;
constexpr double snyder_e2 = 0.00676866;
const Spheroid snyder_clarke{snyder_a_m, 1 - std::sqrt(1 - snyder_e2)};
const std::string snyder_geographic = "+proj=longlat +a=6378206.4 +es=0.00676866 +no_defs +type=crs";
constexpr double snyder_xy_tolerance_m = 0.06;
constexpr double snyder_scale_tolerance = 1e-7;
// Angular distortion of a conformal projection from numerically differentiated Tissot axes a and b, each good to
// about 1e-9 relative (the accuracy audit.hpp states): |ω| ≤ 2·1e-9 rad ≈ 1.2e-7°.
constexpr double omega_conformal_tolerance_deg = 1.2e-7;

AuditOptions make_options(const std::string& source, const std::string& target) {
  AuditOptions o;
  o.source_crs = source;
  o.target_crs = target;
  return o;
}

/// y of a point in GeographicLib's conic, shifted so that the origin is at (lon0, lat0) as in Snyder and EPSG.
template <class Conic>
void conic_forward(const Conic& conic, double lon0, double lat0, double lon, double lat, double& x, double& y,
                   double& k) {
  double x0 = 0, y0 = 0, gamma = 0, k0 = 0;
  conic.Forward(lon0, lat0, lon0, x0, y0, gamma, k0);
  conic.Forward(lon0, lat, lon, x, y, gamma, k);
  y -= y0;
}

/// Audits a Point and returns its distortion statistics (fails the test when absent).
Distortion point_distortion(const Auditor& auditor, double lon, double lat) {
  const AuditResult r = auditor.audit(Geometry::point({lon, lat}));
  EXPECT_EQ(r.status, Status::ok) << r.message;
  EXPECT_FALSE(r.length.has_value());
  EXPECT_FALSE(r.area.has_value());
  EXPECT_TRUE(r.distortion.has_value());
  return r.distortion.value_or(Distortion{});
}

// Snyder (1987), Albers Conical Equal-Area, ellipsoidal forward example, pp. 292-293:
// φ1 = 29.5°, φ2 = 45.5°, φ0 = 23°, λ0 = 96°W; point φ = 35°N, λ = 75°W
// → x = 1 885 472.7 m, y = 1 535 925.0 m, k = 0.9915546, h = 1.0085173.
TEST(SnyderAlbers, CoordinatesAndScaleFactorsOfTheWorkedExample) {
  constexpr double x_pub = 1885472.7, y_pub = 1535925.0, k_pub = 0.9915546, h_pub = 1.0085173;
  const std::string target =
      "+proj=aea +lat_1=29.5 +lat_2=45.5 +lat_0=23 +lon_0=-96 +x_0=0 +y_0=0 +a=6378206.4 +es=0.00676866 "
      "+units=m +no_defs +type=crs";

  // Independent closed form first: the published numbers themselves must hold.
  const GeographicLib::AlbersEqualArea aea(snyder_clarke.a_m, snyder_clarke.f, 29.5, 45.5, 1.0);
  double x_gl = 0, y_gl = 0, k_gl = 0;
  conic_forward(aea, -96, 23, -75, 35, x_gl, y_gl, k_gl);
  EXPECT_NEAR(x_gl, x_pub, snyder_xy_tolerance_m);
  EXPECT_NEAR(y_gl, y_pub, snyder_xy_tolerance_m);
  EXPECT_NEAR(k_gl, k_pub, snyder_scale_tolerance);
  EXPECT_NEAR(1 / k_gl, h_pub, snyder_scale_tolerance);  // equal-area: h = 1/k (common practice)

  const Auditor auditor(make_options(snyder_geographic, target));
  const Coord xy = auditor.project(-75, 35);
  EXPECT_NEAR(xy.x, x_pub, snyder_xy_tolerance_m);
  EXPECT_NEAR(xy.y, y_pub, snyder_xy_tolerance_m);
  // Against the exact independent implementation: both are closed forms, so 1 mm.
  EXPECT_NEAR(xy.x, x_gl, 1e-3);
  EXPECT_NEAR(xy.y, y_gl, 1e-3);

  // Scale factors read through a Point feature's distortion statistics: Tissot a = h, b = k for Albers.
  const Distortion d = point_distortion(auditor, -75, 35);
  EXPECT_NEAR(d.scale_min, k_pub, snyder_scale_tolerance);
  EXPECT_NEAR(d.scale_max, h_pub, snyder_scale_tolerance);
  EXPECT_NEAR(d.areal_scale_min, 1.0, 1e-8);  // equal-area
  EXPECT_NEAR(d.areal_scale_max, 1.0, 1e-8);

  const PointFactors f = auditor.factors(-75, 35);
  EXPECT_NEAR(f.parallel_scale, k_pub, snyder_scale_tolerance);
  EXPECT_NEAR(f.meridional_scale, h_pub, snyder_scale_tolerance);
  EXPECT_NEAR(f.tissot_a, h_pub, snyder_scale_tolerance);
  EXPECT_NEAR(f.tissot_b, k_pub, snyder_scale_tolerance);
  EXPECT_NEAR(f.areal_scale, 1.0, 1e-8);
  // ω = 2 asin((a − b)/(a + b)) (Snyder eq. 4-7 family; common practice), from the published h and k.
  const double omega_deg = 2 * std::asin((h_pub - k_pub) / (h_pub + k_pub)) * 180 / pi;
  EXPECT_NEAR(f.angular_distortion_deg, omega_deg, 1e-5);
  EXPECT_NEAR(d.angular_distortion_max_deg, omega_deg, 1e-5);
}

// Snyder (1987), Transverse Mercator, ellipsoidal forward example, pp. 269-270 (from memory):
// Clarke 1866, k0 = 0.9996, φ0 = 0, λ0 = 75°W; point φ = 40°30'N, λ = 73°30'W
// → x = 127 106.5 m, y = 4 484 124.4 m, k = 0.9997989.
// The remembered numbers are cross-checked with GeographicLib::TransverseMercatorExact (exact, independent of
// PROJ) so that a wrong memory cannot make this test pass.
TEST(SnyderTransverseMercator, CoordinatesAndScaleFactorOfTheWorkedExample) {
  constexpr double x_pub = 127106.5, y_pub = 4484124.4, k_pub = 0.9997989;  // from memory
  const std::string target =
      "+proj=tmerc +lat_0=0 +lon_0=-75 +k_0=0.9996 +x_0=0 +y_0=0 +a=6378206.4 +es=0.00676866 +units=m +no_defs "
      "+type=crs";

  const GeographicLib::TransverseMercatorExact tm(snyder_clarke.a_m, snyder_clarke.f, 0.9996);
  double x_gl = 0, y_gl = 0, gamma_gl = 0, k_gl = 0;
  tm.Forward(-75, 40.5, -73.5, x_gl, y_gl, gamma_gl, k_gl);
  EXPECT_NEAR(x_gl, x_pub, snyder_xy_tolerance_m);
  EXPECT_NEAR(y_gl, y_pub, snyder_xy_tolerance_m);
  EXPECT_NEAR(k_gl, k_pub, snyder_scale_tolerance);

  const Auditor auditor(make_options(snyder_geographic, target));
  const Coord xy = auditor.project(-73.5, 40.5);
  EXPECT_NEAR(xy.x, x_pub, snyder_xy_tolerance_m);
  EXPECT_NEAR(xy.y, y_pub, snyder_xy_tolerance_m);
  // PROJ's Poder/Engsager series is accurate to a few nanometres within 1.5° of the central meridian; 1 mm.
  EXPECT_NEAR(xy.x, x_gl, 1e-3);
  EXPECT_NEAR(xy.y, y_gl, 1e-3);

  // Conformal: h = k, Tissot a = b = k.
  const Distortion d = point_distortion(auditor, -73.5, 40.5);
  EXPECT_NEAR(d.scale_min, k_pub, snyder_scale_tolerance);
  EXPECT_NEAR(d.scale_max, k_pub, snyder_scale_tolerance);
  EXPECT_NEAR(d.areal_scale_max, k_gl * k_gl, 2e-9);
  // Conformal: ω = 0 (common practice). ω = 2 asin((a − b)/(a + b)) with a and b each good to about 1e-9 relative
  // (audit.hpp) is at most 2e-9 rad ≈ 1.2e-7°.
  EXPECT_NEAR(d.angular_distortion_max_deg, 0.0, omega_conformal_tolerance_deg);
  EXPECT_NEAR(auditor.factors(-73.5, 40.5).angular_distortion_deg, 0.0, omega_conformal_tolerance_deg);

  const PointFactors f = auditor.factors(-73.5, 40.5);
  EXPECT_NEAR(f.parallel_scale, k_pub, snyder_scale_tolerance);
  EXPECT_NEAR(f.meridional_scale, k_pub, snyder_scale_tolerance);
  EXPECT_NEAR(f.areal_scale, k_gl * k_gl, 2e-9);
  // Meridian convergence in PROJ's sign convention, which is GeographicLib's γ (the bearing of grid north
  // measured clockwise from true north: positive east of the central meridian in the north).
  EXPECT_NEAR(f.convergence_deg, gamma_gl, 1e-6);
  EXPECT_NEAR(d.convergence_min_deg, gamma_gl, 1e-6);
  EXPECT_NEAR(d.convergence_max_deg, gamma_gl, 1e-6);
}

// Snyder (1987), Lambert Conformal Conic, ellipsoidal forward example, p. 296 (from memory):
// Clarke 1866, φ1 = 33°, φ2 = 45°, φ0 = 23°, λ0 = 96°W; point φ = 35°N, λ = 75°W
// → x = 1 894 410.9 m, y = 1 564 649.5 m, k = 0.9970171.
// Cross-checked with GeographicLib::LambertConformalConic (independent of PROJ).
TEST(SnyderLambertConformalConic, CoordinatesAndScaleFactorOfTheWorkedExample) {
  constexpr double x_pub = 1894410.9, y_pub = 1564649.5, k_pub = 0.9970171;  // from memory
  const std::string target =
      "+proj=lcc +lat_1=33 +lat_2=45 +lat_0=23 +lon_0=-96 +x_0=0 +y_0=0 +a=6378206.4 +es=0.00676866 +units=m "
      "+no_defs +type=crs";

  const GeographicLib::LambertConformalConic lcc(snyder_clarke.a_m, snyder_clarke.f, 33, 45, 1.0);
  double x_gl = 0, y_gl = 0, k_gl = 0;
  conic_forward(lcc, -96, 23, -75, 35, x_gl, y_gl, k_gl);
  EXPECT_NEAR(x_gl, x_pub, snyder_xy_tolerance_m);
  EXPECT_NEAR(y_gl, y_pub, snyder_xy_tolerance_m);
  EXPECT_NEAR(k_gl, k_pub, snyder_scale_tolerance);

  const Auditor auditor(make_options(snyder_geographic, target));
  const Coord xy = auditor.project(-75, 35);
  EXPECT_NEAR(xy.x, x_pub, snyder_xy_tolerance_m);
  EXPECT_NEAR(xy.y, y_pub, snyder_xy_tolerance_m);
  EXPECT_NEAR(xy.x, x_gl, 1e-3);
  EXPECT_NEAR(xy.y, y_gl, 1e-3);

  const Distortion d = point_distortion(auditor, -75, 35);
  EXPECT_NEAR(d.scale_min, k_pub, snyder_scale_tolerance);
  EXPECT_NEAR(d.scale_max, k_pub, snyder_scale_tolerance);
  EXPECT_NEAR(d.angular_distortion_max_deg, 0.0, omega_conformal_tolerance_deg);

  const PointFactors f = auditor.factors(-75, 35);
  EXPECT_NEAR(f.parallel_scale, k_pub, snyder_scale_tolerance);
  EXPECT_NEAR(f.meridional_scale, k_pub, snyder_scale_tolerance);
  EXPECT_NEAR(f.angular_distortion_deg, 0.0, omega_conformal_tolerance_deg);
}

// ---------------------------------------------------------------------------------------------------------------
// IOGP Publication 373-7-2, Geomatics Guidance Note 7 part 2: Coordinate Conversions and Transformations including
// Formulas. Worked examples printed to 0.01 m: tolerance one unit of that last digit.
// ---------------------------------------------------------------------------------------------------------------

// IOGP GN 7-2, Lambert Azimuthal Equal Area (EPSG method 9820) example, ETRS89 / LAEA Europe (EPSG:3035):
// φ = 50°N, λ = 5°E → E = 3 962 799.45 m, N = 2 999 718.85 m.
// EPSG:4258 and EPSG:3035 both have their official axes in (latitude, longitude) / (northing, easting) order:
// gridtruth must still take (lon, lat) and give (easting, northing).
TEST(IogpLambertAzimuthalEqualArea, EtrsLaeaEuropeWorkedExample) {
  const Auditor auditor(make_options("EPSG:4258", "EPSG:3035"));
  const Coord en = auditor.project(5, 50);
  EXPECT_NEAR(en.x, 3962799.45, 0.01);
  EXPECT_NEAR(en.y, 2999718.85, 0.01);
  // Equal-area (IOGP GN 7-2 and Snyder ch. 24; common practice): areal scale 1.
  const PointFactors f = auditor.factors(5, 50);
  EXPECT_NEAR(f.areal_scale, 1.0, 1e-8);
  // The azimuthal projection's scale along the radius is 1/k of the scale across it (h·k = 1).
  EXPECT_NEAR(f.tissot_a * f.tissot_b, 1.0, 1e-8);
}

// NAD83 / Great Lakes Albers (EPSG:3174). Defining parameters (from memory; they agree with the EPSG dataset as
// shipped with PROJ 9.1): GRS 1980, φ1 = 42.122774°, φ2 = 49.01518°, φF = 45.568977°, λF = 84.455955°W,
// EF = NF = 1 000 000 m. IOGP GN 7-2 describes the method (EPSG 9822). Checked against the independent
// GeographicLib::AlbersEqualArea at the false origin and across the lakes, to 1 mm (both are closed forms).
TEST(IogpAlbersEqualArea, GreatLakesAlbersAgreesWithIndependentClosedForm) {
  constexpr double lat1 = 42.122774, lat2 = 49.01518, lat0 = 45.568977, lon0 = -84.455955;
  constexpr double false_easting_m = 1000000, false_northing_m = 1000000;
  const Auditor auditor(make_options("EPSG:4269", "EPSG:3174"));

  const Coord origin = auditor.project(lon0, lat0);
  EXPECT_NEAR(origin.x, false_easting_m, 1e-3);
  EXPECT_NEAR(origin.y, false_northing_m, 1e-3);

  const GeographicLib::AlbersEqualArea aea(test::grs80.a_m, test::grs80.f, lat1, lat2, 1.0);
  const Coord points[] = {{-87.6298, 41.8781},  // southern Lake Michigan
                          {-92.1005, 46.7867},  // western Lake Superior
                          {-79.3832, 43.6532},  // Lake Ontario
                          {-76.0, 44.2},        // eastern end
                          {-84.5, 48.9}};       // north of Lake Superior
  for (const Coord& p : points) {
    double x_gl = 0, y_gl = 0, k_gl = 0;
    conic_forward(aea, lon0, lat0, p.x, p.y, x_gl, y_gl, k_gl);
    const Coord xy = auditor.project(p.x, p.y);
    EXPECT_NEAR(xy.x, x_gl + false_easting_m, 1e-3) << p.x << ", " << p.y;
    EXPECT_NEAR(xy.y, y_gl + false_northing_m, 1e-3) << p.x << ", " << p.y;
    const PointFactors f = auditor.factors(p.x, p.y);
    EXPECT_NEAR(f.parallel_scale, k_gl, 1e-8) << p.x << ", " << p.y;
    EXPECT_NEAR(f.meridional_scale, 1 / k_gl, 1e-8) << p.x << ", " << p.y;
    EXPECT_NEAR(f.areal_scale, 1.0, 1e-8) << p.x << ", " << p.y;
  }
}

// ---------------------------------------------------------------------------------------------------------------
// Facts of the trade.
// ---------------------------------------------------------------------------------------------------------------

// Common practice: an equal-area CRS keeps areas; the areal part of the budget from_scale is numerically zero
// (|from_scale| / area < 1e-8) inside its area of use. EPSG:5070 NAD83 / Conus Albers, EPSG:6933 WGS 84 / NSIDC
// EASE-Grid 2.0 Global (Lambert cylindrical equal-area), EPSG:3035 ETRS89-extended / LAEA Europe.
TEST(CommonPracticeEqualArea, FromScaleOfAreaIsNegligible) {
  struct Case {
    const char* source;
    const char* target;
    Path ring;
  };
  const Case cases[] = {
      {"EPSG:4269", "EPSG:5070", box(-98.6, 38.4, 0.25, 0.2)},    // Kansas, ≈ 22 km × 22 km
      {"EPSG:4269", "EPSG:5070", box(-122.5, 47.3, 0.3, 0.2)},    // Puget Sound, far from the central meridian
      {"EPSG:4326", "EPSG:6933", box(-50.0, -10.0, 0.2, 0.2)},    // Brazil
      {"EPSG:4326", "EPSG:6933", box(25.0, 69.0, 0.5, 0.2)},      // Lapland: high latitude
      {"EPSG:4258", "EPSG:3035", box(10.0, 52.0, 0.3, 0.2)},      // Germany
  };
  for (const Case& c : cases) {
    const Auditor auditor(make_options(c.source, c.target));
    const AuditResult r = auditor.audit(Geometry::polygon(c.ring));
    ASSERT_EQ(r.status, Status::ok) << c.target << ": " << r.message;
    ASSERT_TRUE(r.area.has_value());
    EXPECT_LT(std::abs(r.area->from_scale) / r.area->reference, 1e-8)
        << c.target << ": from_scale " << r.area->from_scale << " m² of " << r.area->reference << " m²";
    ASSERT_TRUE(r.distortion.has_value());
    EXPECT_NEAR(r.distortion->areal_scale_min, 1.0, 1e-8) << c.target;
    EXPECT_NEAR(r.distortion->areal_scale_max, 1.0, 1e-8) << c.target;
  }
}

// Common practice: UTM has scale k0 = 0.9996 on its central meridian, so a small feature there is
// (0.9996² − 1)·1e6 = −799.84 ppm in area and −400 ppm in length. A 1 km square centred on the meridian stays
// within 500 m of it, where the scale exceeds k0 by at most x²/(2R²) ≈ 3e-9 (Snyder eq. 8-11, common practice):
// tolerance 0.05 ppm.
TEST(CommonPracticeUtm, CentralMeridianScale) {
  constexpr double k0 = 0.9996;
  const Auditor auditor(make_options("EPSG:4326", "EPSG:32632"));  // WGS 84 / UTM zone 32N, λ0 = 9°E
  const double dlat = 1000.0 / 111200.0;
  const double dlon = 1000.0 / (111320.0 * std::cos(48.0 * pi / 180));
  const AuditResult r = auditor.audit(Geometry::polygon(box(9.0 - dlon / 2, 48.0 - dlat / 2, dlon, dlat)));
  ASSERT_EQ(r.status, Status::ok) << r.message;
  ASSERT_TRUE(r.area.has_value());
  ASSERT_TRUE(r.length.has_value());
  EXPECT_NEAR(r.area->error_ppm, (k0 * k0 - 1) * 1e6, 0.05);
  EXPECT_NEAR(r.length->error_ppm, (k0 - 1) * 1e6, 0.05);
  // The scale part carries it all: no datum, no height, and straight 1 km chords on the meridian.
  EXPECT_NEAR(r.area->from_scale / r.area->reference * 1e6, (k0 * k0 - 1) * 1e6, 0.05);
  EXPECT_EQ(r.area->from_datum, 0.0);
  EXPECT_EQ(r.area->from_height, 0.0);
  ASSERT_TRUE(r.distortion.has_value());
  EXPECT_NEAR(r.distortion->scale_min, k0, 1e-8);
  EXPECT_NEAR(r.distortion->scale_max, k0, 1e-8);

  const PointFactors f = auditor.factors(9.0, 48.0);
  EXPECT_NEAR(f.parallel_scale, k0, 1e-9);
  EXPECT_NEAR(f.meridional_scale, k0, 1e-9);
  EXPECT_NEAR(f.convergence_deg, 0.0, 1e-7);  // on the central meridian
}

// Common practice: Web Mercator (EPSG:3857) overstates areas about fourfold at 60°N. Derived closed form: EPSG:3857
// applies the spherical Mercator with R = a to geodetic latitude, so k = a/(N cos φ), h = a/(M cos φ) and the areal
// scale is a²/(M N cos² φ) (IOGP GN 7-2, Popular Visualisation Pseudo Mercator; derivation, common practice).
TEST(CommonPracticeWebMercator, OverstatesAreaFourfoldAt60North) {
  const Auditor auditor(make_options("EPSG:4326", "EPSG:3857"));
  const double lat = 60.0;
  const double m = test::meridian_radius_m(test::wgs84, lat);
  const double n = test::prime_vertical_radius_m(test::wgs84, lat);
  const double cos_lat = std::cos(lat * pi / 180);
  const double k = test::wgs84.a_m / (n * cos_lat);
  const double h = test::wgs84.a_m / (m * cos_lat);

  const PointFactors f = auditor.factors(10.0, lat);
  EXPECT_NEAR(f.parallel_scale, k, 1e-8 * k);
  EXPECT_NEAR(f.meridional_scale, h, 1e-8 * h);
  EXPECT_NEAR(f.areal_scale, h * k, 1e-8 * h * k);

  // A 200 m square centred on 60°N: G / R is the areal scale at its centre to about (Δφ)²·sec²φ ≈ 1e-9 (the linear
  // variation of the scale across the square averages out).
  const double dlat = 200.0 / 111400.0;
  const double dlon = 200.0 / (111400.0 * cos_lat);
  const AuditResult r = auditor.audit(Geometry::polygon(box(10.0 - dlon / 2, lat - dlat / 2, dlon, dlat)));
  ASSERT_EQ(r.status, Status::ok) << r.message;
  ASSERT_TRUE(r.area.has_value());
  const double ratio = r.area->grid / r.area->reference;
  EXPECT_GT(ratio, 3.9);  // "about fourfold"
  EXPECT_LT(ratio, 4.1);
  EXPECT_NEAR(ratio, h * k, 1e-6 * h * k);
  EXPECT_NEAR(r.area->error_ppm, (h * k - 1) * 1e6, 1.0);
}

}  // namespace
}  // namespace gridtruth
