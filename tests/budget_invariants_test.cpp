// Invariants of the error budget, with random features (seed printed; replay with GRIDTRUTH_TEST_SEED=<seed>),
// cross-checked against independent computations: GeographicLib for the truth and for an exact Transverse
// Mercator, a planar shoelace here for the grid measure, and a finely densified, Richardson-extrapolated image of
// the geodesics for D.
#include <GeographicLib/Geocentric.hpp>
#include <GeographicLib/Geodesic.hpp>
#include <GeographicLib/GeodesicLine.hpp>
#include <GeographicLib/TransverseMercatorExact.hpp>
#include <gmock/gmock.h>
#include <gtest/gtest.h>

#include <algorithm>
#include <array>
#include <cmath>
#include <iostream>
#include <limits>
#include <optional>
#include <random>
#include <string>
#include <thread>
#include <vector>

#include "gridtruth/audit.hpp"
#include "gridtruth/error.hpp"
#include "support.hpp"

namespace gridtruth {
namespace {

using ::testing::HasSubstr;
using test::box;

constexpr double utm32_lon0 = 9.0;
constexpr double utm_k0 = 0.9996;

AuditOptions make_options(const std::string& source, const std::string& target) {
  AuditOptions o;
  o.source_crs = source;
  o.target_crs = target;
  return o;
}

// --- independent grid measures: GeographicLib's exact TM for UTM zone 32N and a centred shoelace -------------

struct PlaneMeasure {
  double length_m = 0;  // perimeter (closed) or polyline length
  double area_m2 = 0;   // unsigned
};

std::vector<Coord> utm32_project(const Path& path) {
  static const GeographicLib::TransverseMercatorExact tm(test::wgs84.a_m, test::wgs84.f, utm_k0);
  std::vector<Coord> xy;
  xy.reserve(path.size());
  for (const Coord& c : path) {
    double x = 0, y = 0;
    tm.Forward(utm32_lon0, c.y, c.x, x, y);
    xy.push_back({x, y});
  }
  return xy;
}

PlaneMeasure plane_measure(const std::vector<Coord>& xy, bool closed) {
  PlaneMeasure m;
  if (xy.empty()) return m;
  const Coord o = xy.front();
  const std::size_t n = xy.size();
  const std::size_t edges = closed ? n : n - 1;
  double twice_area = 0;
  for (std::size_t i = 0; i < edges; ++i) {
    const Coord a{xy[i].x - o.x, xy[i].y - o.y};
    const Coord b{xy[(i + 1) % n].x - o.x, xy[(i + 1) % n].y - o.y};
    m.length_m += std::hypot(b.x - a.x, b.y - a.y);
    twice_area += a.x * b.y - b.x * a.y;
  }
  m.area_m2 = closed ? std::abs(twice_area) / 2 : 0;
  return m;
}

/// The projected images of the ring's geodesic edges, each cut into `pieces` chords (UTM 32N, exact TM).
PlaneMeasure densified_utm32(const Path& ring, int pieces) {
  const GeographicLib::Geodesic& geod = GeographicLib::Geodesic::WGS84();
  Path dense;
  for (std::size_t i = 0; i < ring.size(); ++i) {
    const Coord a = ring[i];
    const Coord b = ring[(i + 1) % ring.size()];
    const GeographicLib::GeodesicLine line = geod.InverseLine(a.y, a.x, b.y, b.x);
    for (int k = 0; k < pieces; ++k) {
      double lat = 0, lon = 0;
      line.Position(line.Distance() * k / pieces, lat, lon);
      dense.push_back({lon, lat});
    }
  }
  return plane_measure(utm32_project(dense), true);
}

/// D by Richardson extrapolation of chord polygons with n and 2n pieces per edge (chord error ∝ 1/n²).
PlaneMeasure densified_reference_utm32(const Path& ring, int pieces) {
  const PlaneMeasure coarse = densified_utm32(ring, pieces);
  const PlaneMeasure fine = densified_utm32(ring, 2 * pieces);
  return {(4 * fine.length_m - coarse.length_m) / 3, (4 * fine.area_m2 - coarse.area_m2) / 3};
}

// --- random features ------------------------------------------------------------------------------------------

/// A random star-shaped ring around (lon, lat): n vertices at increasing azimuths (gaps 0.5-1.5 × 360°/n),
/// distances in [inner, outer]·r. With n ≥ 6 and inner = 0.3 the ring contains the disc of radius
/// 0.3·cos(45°)·r ≈ 0.21·r, so a star of outer = 0.2 around the same centre is a proper hole.
Path random_star(std::mt19937_64& rng, double lon, double lat, double radius_m, double inner = 0.3,
                 double outer = 1.0, int min_vertices = 3) {
  std::uniform_int_distribution<int> count(min_vertices, 12);
  std::uniform_real_distribution<double> unit(0.0, 1.0);
  const int n = count(rng);
  std::vector<double> azimuths;
  for (int i = 0; i < n; ++i) azimuths.push_back(360.0 * (i + 0.5 * unit(rng)) / n);
  Path ring;
  for (const double az : azimuths) {
    double lat2 = 0, lon2 = 0;
    const double d = radius_m * (inner + (outer - inner) * unit(rng));
    GeographicLib::Geodesic::WGS84().Direct(lat, lon, az, d, lat2, lon2);
    ring.push_back({lon2, lat2});
  }
  return ring;
}

/// A random line string of 2-8 vertices, steps of 10 m to 20 km.
Path random_line(std::mt19937_64& rng, double lon, double lat) {
  std::uniform_int_distribution<int> count(2, 8);
  std::uniform_real_distribution<double> azimuth(-180.0, 180.0);
  std::uniform_real_distribution<double> log_step(std::log(10.0), std::log(20000.0));
  Path line{{lon, lat}};
  const int n = count(rng);
  for (int i = 1; i < n; ++i) {
    double lat2 = 0, lon2 = 0;
    GeographicLib::Geodesic::WGS84().Direct(line.back().y, line.back().x, azimuth(rng), std::exp(log_step(rng)),
                                            lat2, lon2);
    line.push_back({lon2, lat2});
  }
  return line;
}

void expect_budgets_equal(const Budget& a, const Budget& b, double relative, const std::string& what) {
  const double tol = relative * std::max(std::abs(a.reference), std::abs(a.grid));
  EXPECT_NEAR(a.reference, b.reference, tol) << what;
  EXPECT_NEAR(a.grid, b.grid, tol) << what;
  EXPECT_NEAR(a.densified_grid, b.densified_grid, tol) << what;
  EXPECT_NEAR(a.ellipsoid_source, b.ellipsoid_source, tol) << what;
  EXPECT_NEAR(a.ellipsoid_target, b.ellipsoid_target, tol) << what;
  EXPECT_NEAR(a.from_edges, b.from_edges, tol) << what;
  EXPECT_NEAR(a.from_scale, b.from_scale, tol) << what;
  EXPECT_NEAR(a.error, b.error, tol) << what;
}

std::string describe_ring(const Path& ring) {
  std::string s;
  for (const Coord& c : ring) s += "(" + std::to_string(c.x) + " " + std::to_string(c.y) + ")";
  return s;
}

// ---------------------------------------------------------------------------------------------------------------

// For random polygons (with and without holes) and lines in UTM zone 32N: the budget identities hold, the truth is
// GeographicLib's, and the grid measure is the straight-chord measure of an independent exact TM.
TEST(BudgetInvariants, RandomFeaturesSatisfyTheIdentitiesAndMatchIndependentMeasures) {
  std::mt19937_64 rng(test::test_seed());
  std::uniform_real_distribution<double> lon_d(6.5, 11.5), lat_d(1.0, 78.0), log_r(std::log(50.0), std::log(3e4));
  std::bernoulli_distribution with_hole(0.4);
  const Auditor auditor(make_options("EPSG:4326", "EPSG:32632"));
  AuditOptions exact_options = make_options("EPSG:4326", "EPSG:32632");
  exact_options.closed_form_short_edges = false;
  const Auditor exact_auditor(exact_options);

  for (int trial = 0; trial < 60; ++trial) {
    const double lon = lon_d(rng), lat = lat_d(rng), radius = std::exp(log_r(rng));
    const bool hole = with_hole(rng);
    const Path outer = random_star(rng, lon, lat, radius, 0.3, 1.0, hole ? 6 : 3);
    std::vector<Path> holes;
    if (hole) holes.push_back(random_star(rng, lon, lat, radius, 0.05, 0.2));
    const std::string what = "trial " + std::to_string(trial) + " " + describe_ring(outer);

    const AuditResult r = auditor.audit(Geometry::polygon(outer, holes));
    ASSERT_EQ(r.status, Status::ok) << what << ": " << r.message;
    ASSERT_TRUE(r.area.has_value()) << what;
    ASSERT_TRUE(r.length.has_value()) << what;
    test::expect_budget_telescopes(*r.area, what + " area");
    test::expect_budget_telescopes(*r.length, what + " length");

    // Truth: outer minus holes (area), all rings (perimeter); GeographicLib directly.
    const test::RingMeasure o = test::geodesic_ring(outer, test::wgs84);
    double area = o.area_m2, perimeter = o.perimeter_m;
    for (const Path& h : holes) {
      const test::RingMeasure hm = test::geodesic_ring(h, test::wgs84);
      area -= hm.area_m2;
      perimeter += hm.perimeter_m;
    }
    // The closed-form short-edge method (the default where it applies) and GeographicLib's inverse problem sum
    // different terms relative to the equator, each with its own round-off: 1e-3 m² is 100 times that round-off
    // for km-size polygons (PolygonArea differs from a quad-precision spherical excess by up to 1.3e-5 m² on a
    // sphere) and 10 times below the 0.01 m² guard of the speed issue. Solving every edge with GeographicLib
    // sums the very terms PolygonArea sums, so it must agree to 1e-10 relative.
    EXPECT_NEAR(r.area->reference, area, 1e-10 * area + 1e-3) << what;
    EXPECT_NEAR(r.length->reference, perimeter, 1e-10 * perimeter) << what;
    const AuditResult exact = exact_auditor.audit(Geometry::polygon(outer, holes));
    ASSERT_EQ(exact.status, Status::ok) << what << ": " << exact.message;
    EXPECT_NEAR(exact.area->reference, area, 1e-10 * area) << what;
    EXPECT_NEAR(exact.length->reference, perimeter, 1e-10 * perimeter) << what;
    // Same datum, no height.
    EXPECT_EQ(r.area->from_datum, 0.0) << what;
    EXPECT_EQ(r.area->from_height, 0.0) << what;

    // Grid: straight chords between independently projected vertices (PROJ's TM and the exact TM agree to
    // nanometres inside the zone, so 1e-9 relative).
    PlaneMeasure g = plane_measure(utm32_project(outer), true);
    for (const Path& h : holes) {
      const PlaneMeasure hm = plane_measure(utm32_project(h), true);
      g.area_m2 -= hm.area_m2;
      g.length_m += hm.length_m;
    }
    EXPECT_NEAR(r.area->grid, g.area_m2, 1e-9 * g.area_m2) << what;
    EXPECT_NEAR(r.length->grid, g.length_m, 1e-9 * g.length_m) << what;
    EXPECT_EQ(r.vertices, outer.size() + (holes.empty() ? 0 : holes[0].size())) << what;
  }

  for (int trial = 0; trial < 40; ++trial) {
    const Path line = random_line(rng, lon_d(rng), lat_d(rng));
    const std::string what = "line " + std::to_string(trial) + " " + describe_ring(line);
    const AuditResult r = auditor.audit(Geometry::line_string(line));
    ASSERT_EQ(r.status, Status::ok) << what << ": " << r.message;
    ASSERT_TRUE(r.length.has_value()) << what;
    EXPECT_FALSE(r.area.has_value()) << what;
    test::expect_budget_telescopes(*r.length, what);
    const double truth = test::geodesic_length(line, test::wgs84);
    EXPECT_NEAR(r.length->reference, truth, 1e-10 * truth + 1e-9) << what;
    const PlaneMeasure g = plane_measure(utm32_project(line), false);
    EXPECT_NEAR(r.length->grid, g.length_m, 1e-9 * g.length_m) << what;
  }
}

// Reversing every ring (and mixing windings of outer ring and hole) changes nothing.
TEST(BudgetInvariants, ReversingRingsChangesNothing) {
  std::mt19937_64 rng(test::test_seed());
  std::uniform_real_distribution<double> lon_d(6.0, 12.0), lat_d(30.0, 70.0), log_r(std::log(200.0), std::log(1e5));
  const Auditor auditor(make_options("EPSG:4326", "EPSG:32632"));
  for (int trial = 0; trial < 30; ++trial) {
    const double lon = lon_d(rng), lat = lat_d(rng), radius = std::exp(log_r(rng));
    const Path outer = random_star(rng, lon, lat, radius, 0.3, 1.0, 6);
    const Path hole = random_star(rng, lon, lat, radius, 0.05, 0.2);
    const Path outer_rev(outer.rbegin(), outer.rend());
    const Path hole_rev(hole.rbegin(), hole.rend());
    const std::string what = "trial " + std::to_string(trial) + " " + describe_ring(outer);

    const AuditResult a = auditor.audit(Geometry::polygon(outer, {hole}));
    for (const Geometry& g : {Geometry::polygon(outer_rev, {hole_rev}), Geometry::polygon(outer_rev, {hole}),
                              Geometry::polygon(outer, {hole_rev})}) {
      const AuditResult b = auditor.audit(g);
      ASSERT_EQ(b.status, Status::ok) << what << ": " << b.message;
      ASSERT_TRUE(a.area && b.area && a.length && b.length) << what;
      EXPECT_GT(b.area->reference, 0.0) << what;
      expect_budgets_equal(*a.area, *b.area, 1e-9, what + " area");
      expect_budgets_equal(*a.length, *b.length, 1e-9, what + " length");
    }
  }
}

// Split along a meridian, the two halves add up to the whole: exactly for the truth (to rounding) because the
// meridian is a geodesic shared by both halves, and to rounding for the grid because the shared chord cancels.
// Perimeters: the halves count the shared edge twice.
TEST(BudgetInvariants, HalvesSplitAlongAMeridianSumToTheWhole) {
  std::mt19937_64 rng(test::test_seed());
  std::uniform_real_distribution<double> lon_d(7.0, 11.0), lat_d(5.0, 75.0), size_d(0.01, 0.8), jitter(-0.3, 0.3);
  const Auditor auditor(make_options("EPSG:4326", "EPSG:32632"));
  for (int trial = 0; trial < 30; ++trial) {
    const double lon_m = lon_d(rng), lat0 = lat_d(rng), size = size_d(rng);
    auto lat_at = [&](double base) { return base + size * 0.3 * jitter(rng); };
    const Coord ws{lon_m - size * (1 + jitter(rng)), lat_at(lat0)};
    const Coord ms{lon_m, lat_at(lat0)};
    const Coord es{lon_m + size * (1 + jitter(rng)), lat_at(lat0)};
    const Coord en{es.x, lat_at(lat0 + size)};
    const Coord mn{lon_m, lat_at(lat0 + size)};
    const Coord wn{ws.x, lat_at(lat0 + size)};
    const Path whole{ws, ms, es, en, mn, wn};
    const Path west{ws, ms, mn, wn};
    const Path east{ms, es, en, mn};
    const std::string what = "trial " + std::to_string(trial) + " " + describe_ring(whole);

    const AuditResult w = auditor.audit(Geometry::polygon(whole));
    const AuditResult a = auditor.audit(Geometry::polygon(west));
    const AuditResult b = auditor.audit(Geometry::polygon(east));
    ASSERT_EQ(w.status, Status::ok) << what << ": " << w.message;
    ASSERT_EQ(a.status, Status::ok) << what << ": " << a.message;
    ASSERT_EQ(b.status, Status::ok) << what << ": " << b.message;
    const double area = w.area->reference;
    EXPECT_NEAR(a.area->reference + b.area->reference, area, 1e-10 * area) << what;
    EXPECT_NEAR(a.area->grid + b.area->grid, w.area->grid, 1e-10 * area) << what;
    // D: the shared edge is densified once in each direction; its images agree to the densify tolerance, so the
    // sum differs by at most tolerance × shared edge length (the strip between two curves within tolerance).
    double shared_m = 0;
    GeographicLib::Geodesic::WGS84().Inverse(ms.y, ms.x, mn.y, mn.x, shared_m);
    EXPECT_NEAR(a.area->densified_grid + b.area->densified_grid, w.area->densified_grid,
                2 * auditor.options().densify_tolerance_m * shared_m + 1e-10 * area)
        << what;
    EXPECT_NEAR(a.length->reference + b.length->reference - 2 * shared_m, w.length->reference,
                1e-9 * w.length->reference)
        << what;
  }
}

// D converges as the densify tolerance shrinks, towards an independent, Richardson-extrapolated image of the
// geodesic edges; G does not depend on the tolerance. A 4° × 5° quadrilateral up to 5° east of the central
// meridian: the images of its edges bow by hundreds of metres, so from_edges is large.
TEST(BudgetInvariants, DensifiedMeasureConvergesAsTheToleranceShrinks) {
  const Path ring = box(10.0, 45.0, 4.0, 5.0);
  const PlaneMeasure d_ref = densified_reference_utm32(ring, 4096);
  const double perimeter_m = d_ref.length_m;
  const double tolerances[] = {1e-2, 1e-3, 1e-4, 1e-5};
  std::vector<AuditResult> results;
  for (const double t : tolerances) {
    AuditOptions o = make_options("EPSG:4326", "EPSG:32632");
    o.densify_tolerance_m = t;
    results.push_back(Auditor(o).audit(Geometry::polygon(ring)));
    ASSERT_EQ(results.back().status, Status::ok) << results.back().message;
    ASSERT_TRUE(results.back().area.has_value());
    ASSERT_TRUE(results.back().length.has_value());
  }
  // The test means something only if the edges really bow: from_edges ≫ the tolerance strip.
  EXPECT_GT(std::abs(results[0].area->from_edges), 100 * tolerances[0] * perimeter_m);

  double previous_gap = std::numeric_limits<double>::infinity();
  const double finest = results.back().area->densified_grid;
  for (std::size_t i = 0; i < results.size(); ++i) {
    const double t = tolerances[i];
    const Budget& area = *results[i].area;
    const Budget& length = *results[i].length;
    // The promise of audit.hpp: D's error is far below tolerance × perimeter (area) and below the tolerance per
    // edge (length: chord and arc differ by 8δ²/(3ℓ) per piece, far less than δ).
    EXPECT_LT(std::abs(area.densified_grid - d_ref.area_m2), t * perimeter_m) << "tolerance " << t;
    EXPECT_LT(std::abs(length.densified_grid - d_ref.length_m), t * 4) << "tolerance " << t;
    EXPECT_NEAR(area.grid, results[0].area->grid, 1e-12 * area.grid) << "tolerance " << t;
    // Monotonically-ish: the gap to the finest D does not grow (rounding slack 1e-11 relative).
    const double gap = std::abs(area.densified_grid - finest);
    EXPECT_LE(gap, previous_gap + 1e-11 * finest) << "tolerance " << t;
    previous_gap = gap;
    if (i > 0) {
      EXPECT_GE(results[i].densified_points, results[i - 1].densified_points) << "tolerance " << t;
    }
  }
  EXPECT_GT(results.back().densified_points, results.front().densified_points);
}

// Bad features come back `invalid` with validate()'s message; nothing throws out of a batch; the batch keeps the
// input order and agrees with one-at-a-time audits; a vertex PROJ cannot project makes the feature `unmeasurable`
// with its ellipsoidal truth still reported.
TEST(BudgetInvariants, BadFeaturesAreReportedNotThrown) {
  const double nan = std::numeric_limits<double>::quiet_NaN();
  const Path degenerate_hole{{9.52, 45.52}, {9.53, 45.52}, {9.53, 45.52}, {9.52, 45.52}};
  // 90° from the central meridian on the equator: the Transverse Mercator is infinite there.
  const Path unprojectable{{-81.0, 0.0}, {-80.5, 0.0}, {-80.5, 0.5}, {-81.0, 0.5}};
  const std::vector<Geometry> batch{
      Geometry::polygon(box(9.0, 45.0, 0.01, 0.01)),                              // 0 ok
      Geometry::polygon({{9.0, 45.0}, {9.01, 45.0}, {9.01, nan}, {9.0, 45.01}}),  // 1 NaN
      Geometry::multi_polygon({Polygon{box(9.0, 45.0, 0.1, 0.1), {}}, Polygon{box(9.2, 45.2, 0.1, 0.1), {}},
                               Polygon{box(9.5, 45.5, 0.1, 0.1), {box(9.51, 45.51, 0.005, 0.005), degenerate_hole}}}),
      Geometry::line_string({{9.0, 45.0}, {9.1, 95.0}}),                           // 3 latitude
      Geometry::multi_polygon({}),                                                 // 4 empty
      Geometry::line_string({{9.0, 45.0}, {9.1, 45.1}}),                           // 5 ok
      Geometry::polygon(unprojectable),                                            // 6 unmeasurable
      Geometry::polygon({{9.0, 45.0}, {9.01, 45.0}, {9.0, 45.0}}),                 // 7 two distinct vertices
  };
  const Auditor auditor(make_options("EPSG:4326", "EPSG:32632"));
  std::vector<AuditResult> results;
  ASSERT_NO_THROW(results = auditor.audit(batch));
  ASSERT_EQ(results.size(), batch.size());

  const Status expected[] = {Status::ok,      Status::invalid, Status::invalid, Status::invalid,
                             Status::invalid, Status::ok,      Status::unmeasurable, Status::invalid};
  for (std::size_t i = 0; i < batch.size(); ++i) {
    EXPECT_EQ(results[i].status, expected[i]) << "feature " << i << ": " << results[i].message;
    EXPECT_EQ(results[i].type, batch[i].type) << "feature " << i;
    EXPECT_EQ(results[i].vertices, batch[i].vertex_count()) << "feature " << i;
    EXPECT_EQ(results[i].verdict, Verdict::none) << "feature " << i;
    const AuditResult single = auditor.audit(batch[i]);
    EXPECT_EQ(single.status, results[i].status) << "feature " << i;
    EXPECT_EQ(single.message, results[i].message) << "feature " << i;
    if (expected[i] == Status::invalid) {
      EXPECT_FALSE(results[i].message.empty()) << "feature " << i;
      EXPECT_THAT(results[i].message, HasSubstr(describe(validate(batch[i])))) << "feature " << i;
    }
  }
  EXPECT_THAT(results[1].message, HasSubstr("vertex 2"));
  EXPECT_THAT(results[2].message, HasSubstr("polygon 2 hole 1: ring has 2 distinct vertices, needs 3"));
  EXPECT_THAT(results[3].message, HasSubstr("latitude 95"));
  EXPECT_THAT(results[7].message, HasSubstr("ring has 2 distinct vertices, needs 3"));

  const AuditResult& far = results[6];
  EXPECT_FALSE(far.message.empty());
  ASSERT_TRUE(far.area.has_value()) << far.message;
  const test::RingMeasure truth = test::geodesic_ring(unprojectable, test::wgs84);
  EXPECT_NEAR(far.area->reference, truth.area_m2, 1e-9 * truth.area_m2);
}

/// The three translations of a "+proj=helmert +x= +y= +z=" step in a PROJ pipeline, when that is the only kind
/// of datum step (no rotations, no scale, no grids); empty otherwise.
std::optional<std::array<double, 3>> translation_only_helmert(const std::string& pipeline) {
  const auto at = pipeline.find("+proj=helmert");
  if (at == std::string::npos || pipeline.find("+proj=helmert", at + 1) != std::string::npos) return std::nullopt;
  for (const char* other : {"+rx=", "+ry=", "+rz=", "+s=", "grids=", "+proj=hgridshift", "+proj=deformation"})
    if (pipeline.find(other) != std::string::npos) return std::nullopt;
  const std::string step = pipeline.substr(at, pipeline.find("+step", at) - at);
  std::array<double, 3> t{0, 0, 0};
  const char* keys[] = {"+x=", "+y=", "+z="};
  for (int i = 0; i < 3; ++i) {
    const auto k = step.find(keys[i]);
    if (k != std::string::npos) t[i] = std::stod(step.substr(k + 3));
  }
  return t;
}

// A datum change between S and P shows up in from_datum: NAD27 (Clarke 1866) into NAD83 / UTM 15N (GRS 1980).
// The same latitudes and longitudes on the two ellipsoids differ by ≈ 2e-5 in area at 45°N (from the radii of
// curvature; common practice), and a datum shift moves the vertices by up to a few hundred metres (the Clarke-to-
// GRS 1980 change of geodetic latitude alone is ≈ Δf·sin 2φ ≈ 240 m), changing the area by ≲ tan φ · 500 m / R
// ≈ 1e-4. When PROJ's choice is a translation-only Helmert (no NADCON grids installed), the vertices are shifted
// independently here (GeographicLib::Geocentric) and E_P must be their GRS 1980 area. WGS 84 into a WGS 84 UTM
// zone: exactly zero.
TEST(BudgetInvariants, FromDatumIsNonzeroAcrossDatumsAndExactlyZeroWithin) {
  const Path ring = box(-93.4, 44.8, 0.2, 0.15);
  const Auditor nad27(make_options("EPSG:4267", "EPSG:26915"));
  const AuditResult r = nad27.audit(Geometry::polygon(ring));
  ASSERT_EQ(r.status, Status::ok) << r.message;
  ASSERT_TRUE(r.area.has_value());
  ASSERT_TRUE(r.length.has_value());
  test::expect_budget_telescopes(*r.area, "NAD27 area");
  test::expect_budget_telescopes(*r.length, "NAD27 length");
  EXPECT_GT(std::abs(r.area->from_datum) / r.area->reference, 1e-6);
  EXPECT_GT(std::abs(r.length->from_datum) / r.length->reference, 1e-6);
  const test::RingMeasure clarke = test::geodesic_ring(ring, test::clarke1866);
  const test::RingMeasure grs = test::geodesic_ring(ring, test::grs80);
  EXPECT_NEAR(r.area->ellipsoid_source, clarke.area_m2, 1e-10 * clarke.area_m2);
  EXPECT_NEAR(r.area->ellipsoid_target, grs.area_m2, 1e-4 * grs.area_m2);

  // The operation applied to this feature (PROJ's choice for its extent), which need not be transform()'s.
  ASSERT_TRUE(r.datum_operation.has_value());
  const DatumOperation& t = nad27.datum_operations().at(*r.datum_operation);
  std::cout << "[ datum    ] " << t.name << ": " << t.proj_string << "\n";
  if (t.is_ballpark) {  // no shift: the same lat/lon on the other ellipsoid
    EXPECT_NEAR(r.area->ellipsoid_target, grs.area_m2, 1e-10 * grs.area_m2);
  } else if (const auto shift = translation_only_helmert(t.proj_string)) {
    const GeographicLib::Geocentric from(test::clarke1866.a_m, test::clarke1866.f);
    const GeographicLib::Geocentric to(test::grs80.a_m, test::grs80.f);
    Path shifted;
    for (const Coord& c : ring) {
      double x = 0, y = 0, z = 0, lat = 0, lon = 0, h = 0;
      from.Forward(c.y, c.x, 0, x, y, z);
      to.Reverse(x + (*shift)[0], y + (*shift)[1], z + (*shift)[2], lat, lon, h);
      shifted.push_back({lon, lat});
    }
    const test::RingMeasure ep = test::geodesic_ring(shifted, test::grs80);
    EXPECT_NEAR(r.area->ellipsoid_target, ep.area_m2, 1e-10 * ep.area_m2);
    EXPECT_NEAR(r.length->ellipsoid_target, ep.perimeter_m, 1e-10 * ep.perimeter_m);
  }

  const Auditor wgs(make_options("EPSG:4326", "EPSG:32615"));
  const AuditResult w = wgs.audit(Geometry::polygon(ring));
  ASSERT_EQ(w.status, Status::ok) << w.message;
  EXPECT_TRUE(wgs.transform().is_identity);
  EXPECT_EQ(w.area->from_datum, 0.0);
  EXPECT_EQ(w.length->from_datum, 0.0);
  EXPECT_EQ(w.area->ellipsoid_target, w.area->ellipsoid_source);
}

// Multi geometries: areas and lengths add over the parts; a MultiPoint has distortion but no measures.
TEST(BudgetInvariants, MultiGeometriesAddTheirParts) {
  const Auditor auditor(make_options("EPSG:4326", "EPSG:32632"));
  const Path p1 = box(8.0, 50.0, 0.1, 0.05), p2 = box(10.5, 52.0, 0.2, 0.1);
  const AuditResult m = auditor.audit(Geometry::multi_polygon({Polygon{p1, {}}, Polygon{p2, {}}}));
  const AuditResult a = auditor.audit(Geometry::polygon(p1));
  const AuditResult b = auditor.audit(Geometry::polygon(p2));
  ASSERT_EQ(m.status, Status::ok) << m.message;
  ASSERT_TRUE(m.area && a.area && b.area);
  EXPECT_NEAR(m.area->reference, a.area->reference + b.area->reference, 1e-10 * m.area->reference);
  EXPECT_NEAR(m.area->grid, a.area->grid + b.area->grid, 1e-10 * m.area->reference);
  EXPECT_NEAR(m.length->reference, a.length->reference + b.length->reference, 1e-10 * m.length->reference);

  const Path l1{{8.0, 50.0}, {8.2, 50.1}}, l2{{9.0, 47.0}, {9.0, 47.3}, {9.4, 47.3}};
  const AuditResult ml = auditor.audit(Geometry::multi_line_string({l1, l2}));
  ASSERT_EQ(ml.status, Status::ok) << ml.message;
  const double truth = test::geodesic_length(l1, test::wgs84) + test::geodesic_length(l2, test::wgs84);
  EXPECT_NEAR(ml.length->reference, truth, 1e-10 * truth);

  const AuditResult mp = auditor.audit(Geometry::multi_point({{8.0, 50.0}, {12.0, 50.0}}));
  ASSERT_EQ(mp.status, Status::ok) << mp.message;
  EXPECT_FALSE(mp.length.has_value());
  EXPECT_FALSE(mp.area.has_value());
  ASSERT_TRUE(mp.distortion.has_value());
  // On the central meridian k = k0; 3° east it is larger (common practice: k grows away from the meridian).
  EXPECT_NEAR(mp.distortion->scale_min, auditor.factors(8.0, 50.0).tissot_b, 1e-9);
  EXPECT_NEAR(mp.distortion->scale_max, auditor.factors(12.0, 50.0).tissot_a, 1e-9);
}

// Verdicts: the UTM central meridian keeps areas to −800 ppm and lengths to −400 ppm (see the reference tests), so
// 0.1 % passes, 100 ppm fails; absolute limits compare |G − R|; features a tolerance does not apply to get none.
TEST(BudgetVerdict, TolerancesDecidePassAndFail) {
  const Path km_square = box(8.9933, 47.9955, 0.0134, 0.0090);  // ≈ 1 km × 1 km on λ0 = 9°E
  auto audit_with = [&](const std::string& specs, const Geometry& g) {
    AuditOptions o = make_options("EPSG:4326", "EPSG:32632");
    o.tolerances = Tolerance::parse_list(specs);
    return Auditor(o).audit(g);
  };
  const Geometry square = Geometry::polygon(km_square);

  const AuditResult pass = audit_with("area=0.1%", square);
  EXPECT_EQ(pass.verdict, Verdict::pass);
  EXPECT_TRUE(pass.failed.empty());

  const AuditResult fail = audit_with("area=0.1%,length=100ppm", square);
  EXPECT_EQ(fail.verdict, Verdict::fail);
  EXPECT_THAT(fail.failed, ::testing::ElementsAre("length<=100ppm"));

  const AuditResult abs_fail = audit_with("area=50m2", square);  // |error| ≈ 800 m² on ≈ 1 km²
  EXPECT_EQ(abs_fail.verdict, Verdict::fail);
  EXPECT_THAT(abs_fail.failed, ::testing::ElementsAre("area<=50m2"));
  EXPECT_EQ(audit_with("area=0.1ha", square).verdict, Verdict::pass);  // 1000 m² > 800 m²

  EXPECT_EQ(audit_with("", square).verdict, Verdict::none);
  EXPECT_EQ(audit_with("area=0.1%", Geometry::point({9.0, 48.0})).verdict, Verdict::none);
  EXPECT_EQ(audit_with("area=0.1%", Geometry::line_string({{9.0, 48.0}, {9.01, 48.0}})).verdict, Verdict::none);
}

// Bearing error: grid bearing of each chord minus the geodesic azimuth at its start. For 1 km edges 2° east of the
// central meridian it is the meridian convergence γ at the start vertex, give or take the arc-to-chord angle
// (≈ 0.3″ here). γ from the independent exact TM.
TEST(BudgetVerdict, BearingErrorIsConvergencePlusArcToChord) {
  const Path ring = box(11.0, 48.0, 0.0134, 0.0090);
  const GeographicLib::TransverseMercatorExact tm(test::wgs84.a_m, test::wgs84.f, utm_k0);
  double gamma_max_arcsec = 0;
  for (const Coord& c : ring) {
    double x = 0, y = 0, gamma = 0, k = 0;
    tm.Forward(utm32_lon0, c.y, c.x, x, y, gamma, k);
    gamma_max_arcsec = std::max(gamma_max_arcsec, std::abs(gamma) * 3600);
  }
  AuditOptions o = make_options("EPSG:4326", "EPSG:32632");
  o.tolerances = Tolerance::parse_list("bearing=20arcsec");
  const AuditResult r = Auditor(o).audit(Geometry::polygon(ring));
  ASSERT_EQ(r.status, Status::ok) << r.message;
  ASSERT_TRUE(r.bearing_error_max_arcsec.has_value());
  EXPECT_NEAR(*r.bearing_error_max_arcsec, gamma_max_arcsec, 1.0);
  EXPECT_EQ(r.verdict, Verdict::fail);  // ≈ 5 350″ ≫ 20″
  EXPECT_THAT(r.failed, ::testing::ElementsAre("bearing<=20arcsec"));
}

// clone() gives an independent auditor that can run on another thread with identical results.
TEST(BudgetInvariants, CloneOnAnotherThreadGivesIdenticalResults) {
  std::mt19937_64 rng(test::test_seed());
  std::uniform_real_distribution<double> lon_d(6.5, 11.5), lat_d(20.0, 70.0), log_r(std::log(100.0), std::log(2e4));
  std::vector<Geometry> features;
  for (int i = 0; i < 40; ++i) features.push_back(Geometry::polygon(random_star(rng, lon_d(rng), lat_d(rng),
                                                                                std::exp(log_r(rng)))));
  const Auditor auditor(make_options("EPSG:4326", "EPSG:32632"));
  const Auditor copy = auditor.clone();
  std::vector<AuditResult> theirs;
  std::thread worker([&] { theirs = copy.audit(features); });
  const std::vector<AuditResult> ours = auditor.audit(features);
  worker.join();
  ASSERT_EQ(ours.size(), theirs.size());
  for (std::size_t i = 0; i < ours.size(); ++i) {
    ASSERT_EQ(ours[i].status, theirs[i].status) << i;
    ASSERT_TRUE(ours[i].area && theirs[i].area) << i;
    EXPECT_EQ(ours[i].area->reference, theirs[i].area->reference) << i;
    EXPECT_EQ(ours[i].area->grid, theirs[i].area->grid) << i;
    EXPECT_EQ(ours[i].area->densified_grid, theirs[i].area->densified_grid) << i;
  }
}

}  // namespace
}  // namespace gridtruth
