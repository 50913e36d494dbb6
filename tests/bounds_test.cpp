// Budget::*_bound (every figure's bound) against higher-precision references on randomized features: the truth
// against GeographicLib's GeodesicExact (Karney 2013, J. Geodesy 87:43, sect. 9: elliptic integrals, an independent
// method), G against the same shoelace and chord sums in long double from the same projected vertices, D against a
// quadrature refined 1000× further (densify tolerance 1 µm instead of 1 mm; D at 1 mm and at 1 cm to 10 m against
// it). Each bound must hold; where the observed error stands clear of the reference's own, how far above it each
// bound is gets printed and capped (issue 15 targets 100×, not met: see the end of the first test). Seeds are printed.
#include <GeographicLib/Geodesic.hpp>
#include <GeographicLib/PolygonArea.hpp>
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <iostream>
#include <random>
#include <string>
#include <tuple>
#include <vector>

#include "gridtruth/audit.hpp"
#include "gridtruth/io.hpp"
#include <limits>
#include "support.hpp"

namespace gridtruth {
namespace {

AuditOptions options_for(const std::string& target, bool closed_form, double densify_m) {
  AuditOptions o;
  o.source_crs = "EPSG:4326";
  o.target_crs = target;
  o.closed_form_short_edges = closed_form;
  o.densify_tolerance_m = densify_m;
  o.area_of_use_margin_deg = 400;  // these checks are about the measures, wherever the feature lies
  return o;
}

Path star(std::mt19937_64& rng, double lon, double lat, double edge_m, int n) {
  return test::star_ring(rng, lon, lat, edge_m, n);
}

/// Perimeter (length) and |area| of the ring by GeographicLib's PolygonArea: with `exact`, GeodesicExact (elliptic
/// integrals), else Geodesic (series, accurate to round-off for WGS 84; Karney 2013 sect. 9). The closed-form path
/// is checked against the series, which is more accurate in area for small rings than GeodesicExact (whose S12
/// carries round-off of order u·a² per edge, mm², as observed here).
void exact_truth(const Path& ring, bool closed, bool exact, double& length_m, double& area_m2) {
  auto run = [&](auto& p) {
    for (const Coord& c : ring) p.AddPoint(c.y, c.x);
    p.Compute(false, true, length_m, area_m2);
  };
  if (exact) {
    GeographicLib::PolygonAreaExact p(GeographicLib::GeodesicExact::WGS84(), !closed);
    run(p);
  } else {
    GeographicLib::PolygonArea p(GeographicLib::Geodesic::WGS84(), !closed);
    run(p);
  }
  area_m2 = std::fabs(area_m2);
}

/// G from the projected vertices, in long double (64-bit significand on x86-64; the same sums, not centred).
void long_double_grid(const Auditor& a, const Path& ring, bool closed, long double& length, long double& area) {
  std::vector<long double> x, y;
  for (const Coord& c : ring) {
    const Coord p = a.project(c.x, c.y);
    x.push_back(p.x);
    y.push_back(p.y);
  }
  const std::size_t n = ring.size();
  length = 0;
  area = 0;
  for (std::size_t i = 0; i < (closed ? n : n - 1); ++i) {
    const std::size_t j = (i + 1) % n;
    length += std::sqrt((x[j] - x[i]) * (x[j] - x[i]) + (y[j] - y[i]) * (y[j] - y[i]));
    area += (x[i] - x[0]) * (y[j] - y[0]) - (x[j] - x[0]) * (y[i] - y[0]);
  }
  area = std::fabs(area / 2);
}

/// The vertices' projection term of G's bound as audit.hpp states it (Budget::grid_bound): every vertex moved by
/// ≤ ε = max(10 nm, 8 u · largest coordinate); length 2ε per edge, area ε·perimeter + max(π, n)·ε². D's bound holds it
/// too, and no reference from the same projected vertices can observe it.
struct ProjectionTerm {
  double length = 0, area = 0;
};
ProjectionTerm projection_term(const Auditor& a, const Path& ring, bool closed, double grid_length) {
  double largest = 0;
  for (const Coord& c : ring) {
    const Coord p = a.project(c.x, c.y);
    largest = std::max({largest, std::fabs(p.x), std::fabs(p.y)});
  }
  const double eps = std::max(1e-8, 8 * std::numeric_limits<double>::epsilon() / 2 * largest);
  const double n = double(ring.size());
  return {2 * eps * (closed ? n : n - 1), eps * grid_length + std::max(3.141592653589793, n) * eps * eps};
}

struct Region {
  std::string target;
  double lon0, lon1, lat0, lat1;
};

/// Largest bound/observed ratio where the observed error is non-zero and clear of the reference's own error.
struct Tightness {
  double worst = 0;
  int counted = 0;
  void add(double bound, double observed, double floor) {
    if (!(observed > floor) || observed == 0) return;
    worst = std::max(worst, bound / observed);
    ++counted;
  }
};

TEST(Bounds, HoldAgainstHigherPrecisionReferencesAndAreNotVacuous) {
  std::mt19937_64 rng(test::test_seed(1515));
  // Transverse Mercator, Mercator, polar stereographic (UPS), equidistant cylindrical, LAEA, Albers, LCC.
  const std::vector<Region> regions = {
      {"EPSG:32615", -96, -90, 25, 60},
      {"EPSG:3395", -120, 60, -70, 70},
      {"EPSG:32661", -180, 180, 70, 86},
      {"EPSG:4087", -170, 170, -60, 60},  // clear of the antimeridian, where the image tears
      {"+proj=laea +lat_0=45 +lon_0=10 +datum=WGS84 +units=m +type=crs", -10, 30, 30, 65},
      {"+proj=aea +lat_0=40 +lon_0=-96 +lat_1=29.5 +lat_2=45.5 +datum=WGS84 +units=m +type=crs", -120, -70, 25, 50},
      {"+proj=lcc +lat_0=40 +lon_0=-96 +lat_1=33 +lat_2=45 +datum=WGS84 +units=m +type=crs", -120, -70, 25, 50}};
  Tightness g_area, g_length, d_area, d_length;
  int checked = 0;
  for (const Region& region : regions) {
    const Auditor quick(options_for(region.target, true, 1e-3));
    const Auditor solved(options_for(region.target, false, 1e-3));
    const Auditor refined(options_for(region.target, false, 1e-6));
    // Coarser densify tolerances, whose D errors stand clear of the nodes' noise (at 1 mm they mostly do not).
    std::vector<Auditor> coarse;
    for (const double tolerance_m : {0.01, 0.1, 1.0, 10.0}) coarse.emplace_back(options_for(region.target, true, tolerance_m));
    std::uniform_real_distribution<double> lon(region.lon0, region.lon1), lat(region.lat0, region.lat1);
    std::uniform_real_distribution<double> log_edge(std::log(10.0), std::log(2e5));
    std::uniform_int_distribution<int> vertices(4, 16);
    for (int f = 0; f < 40; ++f) {
      const Path ring = star(rng, lon(rng), lat(rng), std::exp(log_edge(rng)), vertices(rng));
      const std::string what = region.target + " ring of " + std::to_string(ring.size()) + " at (" +
                               std::to_string(ring[0].x) + ", " + std::to_string(ring[0].y) + ")";
      for (const bool closed : {true, false}) {
        const Geometry g = closed ? Geometry::polygon(ring) : Geometry::line_string(ring);
        const AuditResult ref = refined.audit(g);
        ASSERT_EQ(ref.status, Status::ok) << what << ": " << ref.message;
        long double ld_length = 0, ld_area = 0;
        long_double_grid(quick, ring, closed, ld_length, ld_area);
        const ProjectionTerm ref_term = projection_term(refined, ring, closed, ref.length->grid);
        for (const Auditor& a : coarse) {
          const AuditResult r = a.audit(g);
          ASSERT_EQ(r.status, Status::ok) << what << ": " << r.message;
          const double d_obs = std::fabs(r.length->densified_grid - ref.length->densified_grid);
          EXPECT_LE(d_obs, r.length->densified_grid_bound + ref.length->densified_grid_bound)
              << what << " at " << a.options().densify_tolerance_m << " m";
          const ProjectionTerm term = projection_term(a, ring, closed, r.length->grid);
          d_length.add(r.length->densified_grid_bound - term.length, d_obs,
                       10 * (ref.length->densified_grid_bound - ref_term.length));
          if (!closed) continue;
          const double da_obs = std::fabs(r.area->densified_grid - ref.area->densified_grid);
          EXPECT_LE(da_obs, r.area->densified_grid_bound + ref.area->densified_grid_bound)
              << what << " at " << a.options().densify_tolerance_m << " m";
          d_area.add(r.area->densified_grid_bound - term.area, da_obs,
                     10 * (ref.area->densified_grid_bound - ref_term.area));
        }
        for (const Auditor* a : {&quick, &solved}) {
          // The GeographicLib-solved truth against GeodesicExact (an independent method), the closed form against
          // GeographicLib's series (the reference of its tested bound).
          double exact_length = 0, exact_area = 0;
          exact_truth(ring, closed, a == &solved, exact_length, exact_area);
          const AuditResult r = a->audit(g);
          ASSERT_EQ(r.status, Status::ok) << what << ": " << r.message;
          const Budget& l = *r.length;
          // Truth: R (no height: R = E_S = E_P, one datum).
          EXPECT_LE(std::fabs(l.reference - exact_length), l.reference_bound) << what;
          EXPECT_LE(std::fabs(l.ellipsoid_target - exact_length), l.ellipsoid_target_bound) << what;
          // G: the long-double sums of the same vertices.
          const double g_obs = std::fabs(l.grid - double(ld_length));
          EXPECT_LE(g_obs, l.grid_bound) << what;
          // D: the refined quadrature, whose own bound is added.
          const double d_obs = std::fabs(l.densified_grid - ref.length->densified_grid);
          EXPECT_LE(d_obs, l.densified_grid_bound + ref.length->densified_grid_bound) << what;
          // Parts: against the same references (E_S = E_P = exact truth here).
          EXPECT_LE(std::fabs(l.error - (double(ld_length) - exact_length)), l.error_bound) << what;
          EXPECT_LE(std::fabs(l.from_edges - (double(ld_length) - ref.length->densified_grid)),
                    l.from_edges_bound + ref.length->densified_grid_bound) << what;
          EXPECT_LE(std::fabs(l.from_scale - (ref.length->densified_grid - exact_length)),
                    l.from_scale_bound + ref.length->densified_grid_bound) << what;
          EXPECT_EQ(l.from_datum_bound, l.ellipsoid_source_bound + l.ellipsoid_target_bound) << what;
          const ProjectionTerm quick_term = projection_term(*a, ring, closed, l.grid);
          if (a == &quick) {
            g_length.add(l.grid_bound, g_obs, 0);
            // D's bound less the vertices' projection term (which both runs share and the difference cannot see)
            // against the observed difference, where that is clear of the refined run's own such bound.
            d_length.add(l.densified_grid_bound - quick_term.length, d_obs,
                         10 * (ref.length->densified_grid_bound - ref_term.length));
          }
          if (!closed) continue;
          const Budget& s = *r.area;
          EXPECT_LE(std::fabs(s.reference - exact_area), s.reference_bound) << what;
          const double ga_obs = std::fabs(s.grid - double(ld_area));
          EXPECT_LE(ga_obs, s.grid_bound) << what;
          const double da_obs = std::fabs(s.densified_grid - ref.area->densified_grid);
          EXPECT_LE(da_obs, s.densified_grid_bound + ref.area->densified_grid_bound) << what;
          EXPECT_LE(std::fabs(s.error - (double(ld_area) - exact_area)), s.error_bound) << what;
          EXPECT_LE(std::fabs(s.from_edges - (double(ld_area) - ref.area->densified_grid)),
                    s.from_edges_bound + ref.area->densified_grid_bound) << what;
          EXPECT_LE(std::fabs(s.from_scale - (ref.area->densified_grid - exact_area)),
                    s.from_scale_bound + ref.area->densified_grid_bound) << what;
          if (a == &quick) {
            g_area.add(s.grid_bound, ga_obs, 0);
            d_area.add(s.densified_grid_bound - quick_term.area, da_obs,
                       10 * (ref.area->densified_grid_bound - ref_term.area));
          }
          ++checked;
        }
      }
    }
  }
  std::cout << "bound/observed, worst: G length " << g_length.worst << " (" << g_length.counted << "), G area "
            << g_area.worst << " (" << g_area.counted << "), D length " << d_length.worst << " ("
            << d_length.counted << "), D area " << d_area.worst << " (" << d_area.counted << ")\n";
  EXPECT_GT(checked, 300);
  // Not vacuous: D's bound less the vertices' projection term against the observed error wherever that is clear
  // of the refined run's own such bound. At 1 mm D's method errors are below the nodes' noise and rarely clear of
  // it: the coarser tolerances (1 cm to 10 m) are what is counted. Issue 15 targets 100×; measured over seeds
  // 1515 and 1 to 9: worst 173× to 4.8e3× in length and 4.1e3× to 2.6e4× in area, median far lower. The target is
  // not met: the quadrature's bound sums absolute values of extrapolated coefficients with a safety factor of 10
  // (edge_quadrature.hpp), and a parabola edge's bound comes from a-priori sizes of the terms its three points
  // cannot see (lib/audit/grid.cpp), with a factor 4. What is asserted is 10⁵× (a bound that far above would be
  // useless). G's bound is not checked so: it is dominated by the projection's assumed accuracy (10 nm per vertex),
  // which a reference from the same projected vertices cannot observe; its round-off part is what the long-double
  // sums check (the assertions above).
  EXPECT_GT(d_length.counted + d_area.counted, 10);
  for (const Tightness* t : {&d_length, &d_area}) EXPECT_LE(t->worst, 1e5);
}

TEST(Bounds, ProjectionNoiseWithinTheAssumedAccuracy) {
  // The bounds assume every projected point within ε = max(10 nm, 8 ulp) of the exact projection (Budget::grid_bound,
  // the quadrature's nodes). PROJ's output jitters from point to point by a few nm (measured: fourth differences at
  // 1 m spacing up to 16 × 5 nm in LAEA): a jitter of at most ε keeps every fourth difference within 16ε, while the
  // smooth part's is ~(1 m)⁴/R³, nil (common practice: differences of a smooth function at a small step).
  const std::vector<Region> regions = {
      {"EPSG:32615", -96, -90, 25, 60},
      {"EPSG:3395", -120, 60, -70, 70},
      {"EPSG:32661", -180, 180, 70, 86},
      {"EPSG:4087", -170, 170, -60, 60},
      {"+proj=laea +lat_0=45 +lon_0=10 +datum=WGS84 +units=m +type=crs", -10, 30, 30, 65},
      {"+proj=aea +lat_0=40 +lon_0=-96 +lat_1=29.5 +lat_2=45.5 +datum=WGS84 +units=m +type=crs", -120, -70, 25, 50},
      {"+proj=lcc +lat_0=40 +lon_0=-96 +lat_1=33 +lat_2=45 +datum=WGS84 +units=m +type=crs", -120, -70, 25, 50}};
  std::mt19937_64 rng(test::test_seed(1516));
  for (const Region& region : regions) {
    const Auditor a(options_for(region.target, true, 1e-3));
    std::uniform_real_distribution<double> lon(region.lon0, region.lon1), lat(region.lat0, region.lat1);
    double worst = 0, allowed = 0;
    for (int k = 0; k < 1000; ++k) {
      const double lon0 = lon(rng), lat0 = lat(rng), h = 1e-5;  // about 1 m
      double x[5], y[5], largest = 0;
      for (int i = 0; i < 5; ++i) {
        const Coord p = a.project(lon0 + 0.7 * h * i, lat0 + h * i);
        x[i] = p.x;
        y[i] = p.y;
        largest = std::max({largest, std::fabs(p.x), std::fabs(p.y)});
      }
      const double d4 = std::max(std::fabs(x[0] - 4 * x[1] + 6 * x[2] - 4 * x[3] + x[4]),
                                 std::fabs(y[0] - 4 * y[1] + 6 * y[2] - 4 * y[3] + y[4]));
      const double eps = std::max(1e-8, 8 * std::numeric_limits<double>::epsilon() / 2 * largest);
      worst = std::max(worst, d4 / 16);
      allowed = std::max(allowed, eps);
      EXPECT_LE(d4, 16 * eps) << region.target << " at (" << lon0 << ", " << lat0 << ")";
    }
    std::cout << region.target << ": jitter ≥ " << worst << " m (assumed ≤ " << allowed << " m)\n";
  }
}

TEST(Bounds, StraightEdgesTruthHoldsAgainstAFinerRefinement) {
  // Edges straight in UTM 15N's plane (EPSG:32615), audited against WGS 84 / World Mercator (the same datum: E_S =
  // E_P = R): the truth is a refinement of each edge on the ellipsoid to the densify tolerance; its bound must hold
  // against the same refinement 100× finer (10 µm; finer, the geodesic triangles' areas, differences of S12 of
  // order 1e12 m², are below their round-off on pieces of metres) at 1 mm, 1 cm and 1 m.
  std::mt19937_64 rng(test::test_seed(1517));
  auto options = [](double densify_m) {
    AuditOptions o = options_for("EPSG:3395", false, densify_m);
    o.edges = EdgeSpec::parse("straight-in=EPSG:32615");
    return o;
  };
  const Auditor refined(options(1e-5));
  std::vector<Auditor> auditors;
  for (const double densify_m : {1e-3, 1e-2, 1.0}) auditors.emplace_back(options(densify_m));
  std::uniform_real_distribution<double> lon(-97, -87), lat(25, 60), log_edge(std::log(1e3), std::log(1e5));
  std::uniform_int_distribution<int> vertices(4, 10);
  Tightness length_tightness, area_tightness;
  for (int f = 0; f < 12; ++f) {
    const Path ring = star(rng, lon(rng), lat(rng), std::exp(log_edge(rng)), vertices(rng));
    const std::string what = "ring of " + std::to_string(ring.size()) + " at (" + std::to_string(ring[0].x) + ", " +
                             std::to_string(ring[0].y) + ")";
    const AuditResult ref = refined.audit(Geometry::polygon(ring));
    ASSERT_EQ(ref.status, Status::ok) << what << ": " << ref.message;
    ASSERT_TRUE(std::isfinite(ref.length->ellipsoid_source_bound) && std::isfinite(ref.area->reference_bound))
        << what;
    for (const Auditor& a : auditors) {
      const AuditResult r = a.audit(Geometry::polygon(ring));
      ASSERT_EQ(r.status, Status::ok) << what << ": " << r.message;
      const std::string at = what + " at " + std::to_string(a.options().densify_tolerance_m) + " m";
      for (const auto& [budget, ref_budget, tightness] :
           {std::make_tuple(&*r.length, &*ref.length, &length_tightness),
            std::make_tuple(&*r.area, &*ref.area, &area_tightness)}) {
        ASSERT_TRUE(std::isfinite(budget->ellipsoid_source_bound)) << at;
        const double observed = std::fabs(budget->ellipsoid_source - ref_budget->ellipsoid_source);
        EXPECT_LE(observed, budget->ellipsoid_source_bound + ref_budget->ellipsoid_source_bound) << at;
        EXPECT_LE(std::fabs(budget->reference - ref_budget->reference),
                  budget->reference_bound + ref_budget->reference_bound) << at;
        EXPECT_EQ(budget->ellipsoid_target_bound, budget->ellipsoid_source_bound) << at;  // one datum
        tightness->add(budget->ellipsoid_source_bound, observed, 10 * ref_budget->ellipsoid_source_bound);
      }
    }
  }
  // The bound is dominated by GeographicLib's stated accuracy per inverse (15 nm, 0.1 m²) times the pieces, far
  // above the refinement's own error: printed, not asserted.
  std::cout << "straight edges, bound/observed, worst: length " << length_tightness.worst << " ("
            << length_tightness.counted << "), area " << area_tightness.worst << " (" << area_tightness.counted
            << ")\n";
}

TEST(Bounds, DatumPartCarriesTheTransformationsStatedAccuracy) {
  // WGS 84 → NAD83 / UTM 15N: PROJ picks "NAD83 to WGS 84 (1)" (EPSG:1188), accuracy 4 m in the EPSG dataset (from
  // memory; read from PROJ here). Worst case, every vertex moved by ≤ σ: length ≤ 2σ per edge, area ≤ σ·P + nσ²
  // (n ≥ π vertices here; the Steiner bound σ·P + πσ², common practice).
  AuditOptions o = options_for("EPSG:26915", true, 1e-3);
  const Auditor a(o);
  ASSERT_TRUE(a.transform().accuracy_m.has_value());
  const double sigma = *a.transform().accuracy_m;
  EXPECT_GT(sigma, 0);
  const Path ring = {{-93.0, 45.0}, {-92.99, 45.0}, {-92.99, 45.01}, {-93.0, 45.01}};
  const AuditResult r = a.audit(Geometry::polygon(ring));
  ASSERT_EQ(r.status, Status::ok) << r.message;
  const double p = r.length->ellipsoid_source;
  const double length_numeric = r.length->ellipsoid_source_bound + r.length->ellipsoid_target_bound;
  EXPECT_NEAR(r.length->from_datum_bound - length_numeric, 2 * sigma * 4, 1e-9);
  const double area_numeric = r.area->ellipsoid_source_bound + r.area->ellipsoid_target_bound;
  EXPECT_NEAR(r.area->from_datum_bound - area_numeric, sigma * p + 4 * sigma * sigma, 1e-6);
  EXPECT_GE(r.area->error_bound, sigma * p);  // the error carries it too
  EXPECT_LT(r.area->from_edges_bound, 1);     // the grid's own parts do not
  // The same datum: no datum term, only the numerical bounds.
  const AuditResult same = Auditor(options_for("EPSG:32615", true, 1e-3)).audit(Geometry::polygon(ring));
  EXPECT_LT(same.area->from_datum_bound, 1);
}

TEST(Bounds, ColumnsAfterEveryOtherOnlyWhenAsked) {
  EXPECT_EQ(result_columns(false, true).size(), result_columns(false).size() + 14);
  EXPECT_EQ(result_columns(true, true).size(), result_columns(true).size() + 14);
  EXPECT_EQ(result_columns(true, true)[result_columns(true).size()].name, "true_length_bound_m");
  EXPECT_EQ(result_columns(false, true).back().name, "area_from_height_bound_m2");
  AuditResult r;
  r.type = GeometryType::line_string;
  Budget b;
  b.reference_bound = 1.5e-9;
  b.from_datum_bound = std::numeric_limits<double>::quiet_NaN();  // a ballpark: empty cell
  r.length = b;
  const ResultRow row = result_row("L", r, false, true);
  const auto& columns = result_columns(false, true);
  ASSERT_EQ(row.size, columns.size());
  const std::size_t k = result_columns(false).size();
  EXPECT_EQ(row.cells[k].number, 1.5e-9);
  EXPECT_TRUE(std::isnan(row.cells[k + 5].number));  // length_from_datum_bound_m
  EXPECT_TRUE(std::isnan(row.cells[k + 7].number));  // true_area_bound_m2: a line has no area
}

}  // namespace
}  // namespace gridtruth
