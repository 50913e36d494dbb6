// The closed-form short-edge method (AuditOptions::closed_form_short_edges, lib/audit/short_geodesics.hpp) against
// GeographicLib 2.1 (Karney, "Algorithms for geodesics", J. Geodesy 87, 2013; PolygonArea), over randomized
// polygons at every edge length and latitude band where it applies, and the screened distortion statistics
// against the factors at every vertex (Auditor::factors). Seeds are printed (GRIDTRUTH_TEST_SEED replays one).
#include <GeographicLib/Geodesic.hpp>
#include <gtest/gtest.h>

#include <cmath>
#include <random>
#include <string>
#include <vector>

#include "gridtruth/audit.hpp"
#include "support.hpp"

namespace gridtruth {
namespace {

AuditOptions options_for(const std::string& target, bool closed_form) {
  AuditOptions o;
  o.source_crs = "EPSG:4326";
  o.target_crs = target;
  o.closed_form_short_edges = closed_form;
  o.area_of_use_margin_deg = 400;  // these checks are about the measures, wherever the feature lies
  return o;
}

Path star(std::mt19937_64& rng, double lon, double lat, double edge_m, int n) {
  return test::star_ring(rng, lon, lat, edge_m, n);
}

std::string where(const Path& ring) {
  return "ring of " + std::to_string(ring.size()) + " vertices at (" + std::to_string(ring[0].x) + ", " +
         std::to_string(ring[0].y) + ")";
}

// Issue guard: the truth within 1e-9 relative (or 0.01 m²) of GeographicLib's PolygonArea; measured here: areas
// within 4e-4 m² (the round-off of equator-referenced area sums in doubles), lengths within 2e-9 relative at 0.1 m
// edges and 1e-12 at kilometres. The bound asserted is 1e-9 relative + 1e-3 m² (areas), 1e-9 relative + 1 nm
// (lengths).
TEST(ShortEdgeTruth, AgreesWithPolygonAreaAtEveryEdgeLengthAndLatitude) {
  const std::uint64_t seed = test::test_seed();
  std::mt19937_64 rng(seed);
  std::uniform_real_distribution<double> lon_d(-180, 180);
  std::uniform_int_distribution<int> n_d(3, 40);
  int differs = 0, total = 0;
  for (double edge_m : {0.2, 1.0, 10.0, 100.0, 1000.0, 3500.0}) {
    for (double lat : {-84.0, -60.0, -30.0, -5.0, 0.0, 20.0, 45.0, 70.0, 84.0}) {
      for (int rep = 0; rep < 6; ++rep) {
        const double lon = rep == 0 ? 179.999 : lon_d(rng);  // some cross the antimeridian
        Path ring = star(rng, lon, lat, edge_m, n_d(rng));
        // The grid: an azimuthal equidistant projection centred on the feature (no tear anywhere near it).
        const std::string target = "+proj=aeqd +lat_0=" + std::to_string(lat) + " +lon_0=" + std::to_string(lon) +
                                   " +ellps=WGS84 +units=m +type=crs";
        const Auditor fast(options_for(target, true));
        const Auditor exact(options_for(target, false));
        if (rep % 2 == 1) ring = Path(ring.rbegin(), ring.rend());
        const std::string what = where(ring) + " edge " + std::to_string(edge_m) + " m";
        const test::RingMeasure truth = test::geodesic_ring(ring, test::wgs84);
        const AuditResult r = fast.audit(Geometry::polygon(ring));
        ASSERT_EQ(r.status, Status::ok) << what << ": " << r.message;
        EXPECT_NEAR(r.area->reference, truth.area_m2, 1e-9 * truth.area_m2 + 1e-3) << what;
        EXPECT_NEAR(r.length->reference, truth.perimeter_m, 1e-9 * truth.perimeter_m + 1e-9) << what;
        const AuditResult x = exact.audit(Geometry::polygon(ring));
        ASSERT_EQ(x.status, Status::ok) << what << ": " << x.message;
        // The grid side follows the same edges: D agrees far inside the densify tolerance (1 mm × perimeter).
        EXPECT_NEAR(r.area->densified_grid, x.area->densified_grid, 1e-9 * x.area->densified_grid + 1e-3) << what;
        EXPECT_NEAR(r.length->densified_grid, x.length->densified_grid, 1e-9 * x.length->densified_grid + 1e-9)
            << what;
        EXPECT_NEAR(*r.bearing_error_max_arcsec, *x.bearing_error_max_arcsec, 0.01) << what;
        differs += r.area->reference != x.area->reference;
        ++total;
      }
    }
  }
  // The two methods round differently: were the closed form not taken, every area would be bit-identical.
  EXPECT_GT(differs, total / 2) << "seed " << seed;
}

// Open paths: lengths as GeographicLib's sum of inverse distances.
TEST(ShortEdgeTruth, LineLengthsAgreeWithGeographicLib) {
  std::mt19937_64 rng(test::test_seed());
  std::uniform_real_distribution<double> lon_d(-180, 180), lat_d(-84.9, 84.9), azi_d(-180, 180), log_s(std::log(0.2), std::log(4900.0));
  const Auditor fast(options_for("EPSG:3395", true));
  for (int trial = 0; trial < 200; ++trial) {
    Path line{{lon_d(rng), lat_d(rng)}};
    for (int k = 0; k < 20; ++k) {
      double lat2 = 0, lon2 = 0;
      GeographicLib::Geodesic::WGS84().Direct(line.back().y, line.back().x, azi_d(rng), std::exp(log_s(rng)), lat2, lon2);
      if (std::fabs(lat2) > 84.9) break;
      line.push_back({lon2, lat2});
    }
    if (line.size() < 2) continue;
    const double truth = test::geodesic_length(line, test::wgs84);
    const AuditResult r = fast.audit(Geometry::line_string(line));
    ASSERT_EQ(r.status, Status::ok) << where(line) << ": " << r.message;
    EXPECT_NEAR(r.length->reference, truth, 1e-9 * truth + 1e-9) << where(line);
  }
}

// A ring around the pole at 84° with 4000 vertices (edges of about 1.05 km): the short-edge sums, reduced like
// PolygonArea's (an odd number of prime-meridian crossings: the ring encircles the pole), give its area.
TEST(ShortEdgeTruth, RingAroundThePoleWithShortEdges) {
  Path ring;
  for (int k = 0; k < 4000; ++k) ring.push_back({-180 + 360.0 * k / 4000, 84.0});
  const test::RingMeasure truth = test::geodesic_ring(ring, test::wgs84);
  const Auditor fast(options_for("EPSG:3413", true));
  const AuditResult r = fast.audit(Geometry::polygon(ring));
  ASSERT_EQ(r.status, Status::ok) << r.message;
  EXPECT_NEAR(r.area->reference, truth.area_m2, 1e-9 * truth.area_m2);
  EXPECT_NEAR(r.length->reference, truth.perimeter_m, 1e-9 * truth.perimeter_m);
}

// Other ellipsoids: the method takes a and f from the CRS (Clarke 1866, NAD27; Snyder 1987 table 1).
TEST(ShortEdgeTruth, OtherEllipsoid) {
  std::mt19937_64 rng(test::test_seed());
  AuditOptions o = options_for("EPSG:26715", true);  // NAD27 / UTM zone 15N
  o.source_crs = "EPSG:4267";
  const Auditor fast(o);
  for (int trial = 0; trial < 40; ++trial) {
    const Path ring = star(rng, -93 + trial * 0.05, 30 + trial * 0.4, 50 + 100 * trial, 12);
    // Vertices from a WGS84 Direct are merely coordinates here; the truth is on Clarke 1866.
    const test::RingMeasure truth = test::geodesic_ring(ring, test::clarke1866);
    const AuditResult r = fast.audit(Geometry::polygon(ring));
    ASSERT_EQ(r.status, Status::ok) << r.message;
    EXPECT_NEAR(r.area->reference, truth.area_m2, 1e-9 * truth.area_m2 + 1e-3) << where(ring);
    EXPECT_NEAR(r.length->reference, truth.perimeter_m, 1e-9 * truth.perimeter_m + 1e-9) << where(ring);
  }
}

// Across a datum change (NAD27 to NAD83, EPSG:4267 to EPSG:26915) the closed form also measures E_P on the
// target's ellipsoid (GRS 80) from the transformed vertices: it must agree with the inverse-problem path there too.
TEST(ShortEdgeTruth, TargetEllipsoidAfterADatumChange) {
  std::mt19937_64 rng(test::test_seed());
  AuditOptions o = options_for("EPSG:26915", true);
  o.source_crs = "EPSG:4267";
  const Auditor fast(o);
  o.closed_form_short_edges = false;
  const Auditor exact(o);
  std::uniform_real_distribution<double> lon_d(-96, -90), lat_d(30, 48), log_edge(std::log(1.0), std::log(4000.0));
  for (int trial = 0; trial < 30; ++trial) {
    const Path ring = star(rng, lon_d(rng), lat_d(rng), std::exp(log_edge(rng)), 5 + trial);
    const AuditResult r = fast.audit(Geometry::polygon(ring));
    const AuditResult x = exact.audit(Geometry::polygon(ring));
    ASSERT_EQ(r.status, Status::ok) << where(ring) << ": " << r.message;
    ASSERT_EQ(x.status, Status::ok) << where(ring) << ": " << x.message;
    ASSERT_NE(r.area->from_datum, 0.0) << where(ring);  // a datum change indeed
    EXPECT_NEAR(r.area->ellipsoid_target, x.area->ellipsoid_target, 1e-9 * x.area->ellipsoid_target + 1e-3)
        << where(ring);
    EXPECT_NEAR(r.length->ellipsoid_target, x.length->ellipsoid_target,
                1e-9 * x.length->ellipsoid_target + 1e-9) << where(ring);
    EXPECT_NEAR(r.area->densified_grid, x.area->densified_grid, 1e-9 * x.area->densified_grid + 1e-3)
        << where(ring);
  }
}

// The screened distortion statistics equal the extremes of the factors at every vertex (on features whose edges
// need no densification, the vertices are all the points): scales to the 1e-9 relative accuracy of the central
// differences, angles to 1e-7°. Conformal, equal-area and neither, near and far from their standard lines.
TEST(DistortionScreening, EqualsTheExtremesOverEveryVertex) {
  std::mt19937_64 rng(test::test_seed());
  struct Case {
    const char* crs;
    double lon0, lon1, lat0, lat1;
  };
  const Case cases[] = {{"EPSG:32632", 3.5, 14.5, 1, 80},      // transverse Mercator
                        {"EPSG:3034", -10, 30, 35, 70},        // Lambert conformal conic
                        {"EPSG:3035", -10, 30, 35, 70},        // Lambert azimuthal equal-area
                        {"EPSG:5070", -120, -75, 25, 49},      // Albers equal-area conic
                        {"EPSG:3413", -180, 180, 62, 84},      // polar stereographic
                        {"ESRI:54008", -170, 170, -60, 60},    // sinusoidal: equal-area, not conformal
                        {"ESRI:54003", -170, 170, -70, 70},    // Miller cylindrical: neither
                        {"EPSG:4087", -170, 170, -80, 80}};    // equidistant cylindrical
  std::uniform_int_distribution<int> n_d(12, 60);
  std::uniform_real_distribution<double> log_edge(std::log(20.0), std::log(1000.0));
  for (const Case& c : cases) {
    std::uniform_real_distribution<double> lon_d(c.lon0, c.lon1), lat_d(c.lat0, c.lat1);
    const Auditor auditor(options_for(c.crs, true));
    int screened = 0;
    for (int trial = 0; trial < 40; ++trial) {
      // Rings, and lines wandering at random (straight runs included: the model must cope with collinear points).
      const bool line = trial % 2 == 1;
      Path ring;
      if (line) {
        std::uniform_real_distribution<double> turn(-30, 30);
        const double step = std::exp(log_edge(rng));
        double azimuth = 360 * std::uniform_real_distribution<double>(0, 1)(rng);
        ring.push_back({lon_d(rng), lat_d(rng)});
        for (int k = n_d(rng); k > 1; --k) {
          double lat2 = 0, lon2 = 0;
          GeographicLib::Geodesic::WGS84().Direct(ring.back().y, ring.back().x, azimuth, step, lat2, lon2);
          ring.push_back({lon2, lat2});
          if (trial % 4 == 1) azimuth += turn(rng);  // the other lines keep one azimuth: nearly collinear vertices
        }
      } else {
        ring = star(rng, lon_d(rng), lat_d(rng), std::exp(log_edge(rng)), n_d(rng));
      }
      const std::string what = std::string(c.crs) + (line ? " line " : " ") + where(ring);
      const AuditResult r = auditor.audit(line ? Geometry::line_string(ring) : Geometry::polygon(ring));
      ASSERT_EQ(r.status, Status::ok) << what << ": " << r.message;
      // An edge that was refined adds points beyond the vertices: compare only where the vertices are all.
      if (r.densified_points != (line ? ring.size() - 1 : ring.size())) continue;
      ++screened;
      double b = 1e300, a = -1e300, s_lo = 1e300, s_hi = -1e300, w = -1e300, g_lo = 1e300, g_hi = -1e300;
      for (const Coord& v : ring) {
        const PointFactors f = auditor.factors(v.x, v.y);
        b = std::min(b, f.tissot_b), a = std::max(a, f.tissot_a);
        s_lo = std::min(s_lo, f.areal_scale), s_hi = std::max(s_hi, f.areal_scale);
        w = std::max(w, f.angular_distortion_deg);
        g_lo = std::min(g_lo, f.convergence_deg), g_hi = std::max(g_hi, f.convergence_deg);
      }
      ASSERT_TRUE(r.distortion.has_value()) << what;
      const Distortion& d = *r.distortion;
      EXPECT_NEAR(d.scale_min, b, 1e-9 * b) << what;
      EXPECT_NEAR(d.scale_max, a, 1e-9 * a) << what;
      EXPECT_NEAR(d.areal_scale_min, s_lo, 1e-9 * s_lo) << what;
      EXPECT_NEAR(d.areal_scale_max, s_hi, 1e-9 * s_hi) << what;
      EXPECT_NEAR(d.angular_distortion_max_deg, w, 1e-7) << what;
      EXPECT_NEAR(d.convergence_min_deg, g_lo, 1e-7) << what;
      EXPECT_NEAR(d.convergence_max_deg, g_hi, 1e-7) << what;
    }
    EXPECT_GE(screened, 10) << c.crs << ": too few features without densification to check the screening";
  }
}

}  // namespace
}  // namespace gridtruth
