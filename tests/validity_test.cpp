// Polygon topology in validate() and repair().
//
// Expected verdicts follow the assertions of OGC 06-103r4 (OpenGIS Implementation Standard for Geographic
// information — Simple feature access — Part 1: Common architecture, version 1.2.1, 2011), 6.1.11.1 (Polygon:
// a) topologically closed; b) the boundary is a set of linear rings; c) rings do not cross and touch at most at a
// point; d) no cut lines, spikes or punctures; e) the interior is connected) and 6.1.13.1 (MultiPolygon: the
// interiors of two parts do not intersect; their boundaries touch at most at a finite number of points).
// The invalid and valid planar cases were cross-checked with Debian's python3-shapely 1.8.5 (GEOS)
// explain_validity(), run by tests/tools/validity_shapely.py; its output is quoted beside each case.
#include "gridtruth/geometry.hpp"

#include <gmock/gmock.h>
#include <gtest/gtest.h>

#include <GeographicLib/Geodesic.hpp>
#include <GeographicLib/PolygonArea.hpp>

#include <cmath>
#include <string>
#include <vector>

namespace gridtruth {
namespace {

using ::testing::HasSubstr;

Path box(double w, double s, double e, double n) { return {{w, s}, {e, s}, {e, n}, {w, n}, {w, s}}; }

// The box 10..10.01 E, 45..45.01 N with vertices at the middle of its south and north edges. Holes touch it at
// those vertices: touching on a vertex holds whatever the edges mean, touching in the middle of an edge does not
// (the geodesic between two points of a parallel bows poleward of it: ~1 cm for this 0.8 km edge).
Path shell_with_midpoints() {
  return {{10, 45}, {10.005, 45}, {10.01, 45}, {10.01, 45.01}, {10.005, 45.01}, {10, 45.01}, {10, 45}};
}

// The one problem of a geometry expected to have exactly one.
Problem only_problem(const Geometry& g) {
  const std::vector<Problem> problems = validate(g);
  EXPECT_EQ(problems.size(), 1u) << describe(problems);
  return problems.empty() ? Problem{Problem::Code::empty, "none", std::nullopt} : problems.front();
}

void expect_at(const Problem& p, double lon, double lat, double tol_deg) {
  ASSERT_TRUE(p.at.has_value()) << p.message;
  EXPECT_NEAR(p.at->x, lon, tol_deg) << p.message;
  EXPECT_NEAR(p.at->y, lat, tol_deg) << p.message;
}

// |area| of a polygon with holes on WGS 84 with GeographicLib's PolygonArea (Karney 2013), the independent side.
double geodesic_area_m2(const Geometry& g) {
  const GeographicLib::Geodesic& wgs84 = GeographicLib::Geodesic::WGS84();
  auto ring_area = [&](const Path& ring) {
    GeographicLib::PolygonArea poly(wgs84);
    for (std::size_t i = 0; i + 1 < ring.size() || (i < ring.size() && (ring[i].x != ring[0].x ||
                                                                          ring[i].y != ring[0].y)); ++i) {
      poly.AddPoint(ring[i].y, ring[i].x);
    }
    double perimeter = 0, area = 0;
    poly.Compute(false, true, perimeter, area);
    return std::fabs(area);
  };
  double total = 0;
  for (const Polygon& p : g.polygons) {
    total += ring_area(p.outer);
    for (const Path& h : p.holes) total -= ring_area(h);
  }
  return total;
}

// ---- invalid features: kind and location --------------------------------------------------------------------

TEST(Validity, BowtieIsASelfIntersectionAtTheCrossing) {
  // shapely: "Self-intersection[10.005 45.005]". On the sphere the diagonals' great circles cross on the meridian
  // 10.005 by symmetry, within 1e-6° of the planar point (the arcs bow by ~(1.1 km)²/(8R) ≈ 0.02 m).
  const Problem p = only_problem(Geometry::polygon({{10, 45}, {10.01, 45.01}, {10.01, 45}, {10, 45.01}, {10, 45}}));
  EXPECT_EQ(p.code, Problem::Code::self_intersection);
  EXPECT_THAT(p.message, HasSubstr("outer ring"));
  EXPECT_THAT(p.message, HasSubstr("segment 0 meets segment 2"));
  expect_at(p, 10.005, 45.005, 1e-6);
  EXPECT_NEAR(p.at->x, 10.005, 1e-9);
}

TEST(Validity, HoleOutsideTheShellIsNamed) {
  // shapely: "Hole lies outside shell[10.02 45.002]"
  const Problem p = only_problem(Geometry::polygon(box(10, 45, 10.01, 45.01), {box(10.02, 45.002, 10.024, 45.006)}));
  EXPECT_EQ(p.code, Problem::Code::hole_outside);
  EXPECT_THAT(p.message, HasSubstr("hole 0"));
  ASSERT_TRUE(p.at.has_value());
}

TEST(Validity, HoleCrossingTheShellIsARingCrossing) {
  // shapely: "Self-intersection[10.01 45.002]" — the hole's south edge crosses the shell's east edge.
  const Problem p = only_problem(Geometry::polygon(box(10, 45, 10.01, 45.01), {box(10.005, 45.002, 10.015, 45.006)}));
  EXPECT_EQ(p.code, Problem::Code::rings_cross);
  EXPECT_THAT(p.message, HasSubstr("outer ring segment 1"));
  EXPECT_THAT(p.message, HasSubstr("hole 0 segment"));
  ASSERT_TRUE(p.at.has_value());
  EXPECT_NEAR(p.at->x, 10.01, 1e-9);  // on the meridian 10.01, the shell's east edge
  EXPECT_TRUE(std::fabs(p.at->y - 45.002) < 1e-6 || std::fabs(p.at->y - 45.006) < 1e-6) << p.message;
}

TEST(Validity, NestedHolesAreNamed) {
  // shapely: "Holes are nested[10.004 45.004]"
  const Problem p = only_problem(Geometry::polygon(
      box(10, 45, 10.01, 45.01), {box(10.001, 45.001, 10.009, 45.009), box(10.004, 45.004, 10.006, 45.006)}));
  EXPECT_EQ(p.code, Problem::Code::nested_holes);
  EXPECT_THAT(p.message, HasSubstr("hole 1 lies inside hole 0"));
  expect_at(p, 10.004, 45.004, 1e-9);
}

TEST(Validity, OverlappingPartsOfAMultiPolygon) {
  // shapely: "Self-intersection[10.01 45.005]"
  const Problem p = only_problem(Geometry::multi_polygon(
      {Polygon{box(10, 45, 10.01, 45.01), {}}, Polygon{box(10.005, 45.005, 10.015, 45.015), {}}}));
  EXPECT_EQ(p.code, Problem::Code::parts_overlap);
  EXPECT_THAT(p.message, HasSubstr("polygon 0 and polygon 1"));
  ASSERT_TRUE(p.at.has_value());
}

TEST(Validity, PartInsideAnotherPart) {
  // shapely: "Nested shells[10.002 45.002]"
  const Problem p = only_problem(Geometry::multi_polygon(
      {Polygon{box(10, 45, 10.01, 45.01), {}}, Polygon{box(10.002, 45.002, 10.004, 45.004), {}}}));
  EXPECT_EQ(p.code, Problem::Code::parts_overlap);
  EXPECT_THAT(p.message, HasSubstr("polygon 1 lies inside polygon 0"));
  expect_at(p, 10.002, 45.002, 1e-9);
}

TEST(Validity, SpikeIsNamedAtItsApex) {
  // shapely: "Ring Self-intersection[10.005 45.01]" (GEOS names the spike's base; OGC 6.1.11.1 d forbids spikes).
  const Problem p = only_problem(Geometry::polygon(
      {{10, 45}, {10.01, 45}, {10.01, 45.01}, {10.005, 45.01}, {10.005, 45.02}, {10.005, 45.01}, {10, 45.01}, {10, 45}}));
  EXPECT_EQ(p.code, Problem::Code::spike);
  EXPECT_THAT(p.message, HasSubstr("vertex 4"));
  expect_at(p, 10.005, 45.02, 1e-9);
}

TEST(Validity, HolesCuttingTheInteriorApart) {
  // shapely: "Interior is disconnected[10.005 45.01]" — a hole touching the shell at two of its vertices.
  const Problem p = only_problem(Geometry::polygon(
      shell_with_midpoints(), {{{10.005, 45}, {10.006, 45.005}, {10.005, 45.01}, {10.004, 45.005}, {10.005, 45}}}));
  EXPECT_EQ(p.code, Problem::Code::disconnected_interior);
}

TEST(Validity, SelfTouchingRingIsNotSimple) {
  // OGC 6.1.11.1 b: the boundary consists of linear rings, which are simple (6.1.7.1): a ring through the same
  // vertex twice is not (an "inverted" shell).
  const Problem p = only_problem(Geometry::polygon(
      {{10, 45}, {10.01, 45}, {10.005, 45.005}, {10.01, 45.01}, {10, 45.01}, {10.005, 45.005}, {10, 45}}));
  EXPECT_EQ(p.code, Problem::Code::self_intersection);
  expect_at(p, 10.005, 45.005, 1e-9);
}

TEST(Validity, ProblemsOfLargeFeaturesAreFoundOnTheEllipsoid) {
  // A bowtie 100° wide does not fit one local plane: it is checked with Boost.Geometry's geographic strategies.
  const std::vector<Problem> bowtie = validate(Geometry::polygon({{-50, 0}, {50, 40}, {50, 0}, {-50, 40}, {-50, 0}}));
  ASSERT_EQ(bowtie.size(), 1u) << describe(bowtie);
  EXPECT_EQ(bowtie[0].code, Problem::Code::self_intersection);
  // Two overlapping continental parts.
  const std::vector<Problem> overlap = validate(Geometry::multi_polygon(
      {Polygon{box(-60, 0, 40, 40), {}}, Polygon{box(0, 10, 60, 50), {}}}));
  ASSERT_EQ(overlap.size(), 1u) << describe(overlap);
  EXPECT_EQ(overlap[0].code, Problem::Code::parts_overlap);
}

TEST(Validity, LinesAndPointsHaveNoTopologyChecks) {
  // OGC 6.1.7: a LineString may be non-simple and is still valid.
  EXPECT_TRUE(validate(Geometry::line_string({{0, 0}, {1, 1}, {1, 0}, {0, 1}})).empty());
}

// ---- legitimate features stay valid --------------------------------------------------------------------------

TEST(Validity, LegitimateFeaturesStayValid) {
  struct Case {
    const char* name;
    Geometry g;
  };
  Path nearly_collinear{{10, 45}};  // 1 000 vertices along the south edge, each 1e-9° (0.1 mm) off the line
  for (int i = 1; i < 1000; ++i) nearly_collinear.push_back({10 + 0.01 * i / 1000, 45 + (i % 2 ? 1e-9 : 0)});
  for (const Coord& c : Path{{10.01, 45}, {10.01, 45.01}, {10, 45.01}, {10, 45}}) nearly_collinear.push_back(c);
  Path circle_pole, circle_south;
  for (int i = 0; i < 360; i += 10) circle_pole.push_back({static_cast<double>(i), 80});
  for (int i = 0; i < 360; i += 10) circle_south.push_back({static_cast<double>(-i), -89.99});
  const std::vector<Case> cases{
      // shapely: "Valid Geometry"
      {"hole touching the shell at one point (OGC 6.1.11.1 c)",
       Geometry::polygon(shell_with_midpoints(), {{{10.005, 45}, {10.006, 45.005}, {10.004, 45.005}, {10.005, 45}}})},
      {"nearly collinear vertices", Geometry::polygon(nearly_collinear)},
      // shapely: "Valid Geometry"
      {"repeated consecutive vertices",
       Geometry::polygon({{10, 45}, {10, 45}, {10.01, 45}, {10.01, 45.01}, {10.01, 45.01}, {10, 45.01}, {10, 45}})},
      {"open ring", Geometry::polygon({{10, 45}, {10.01, 45}, {10.01, 45.01}, {10, 45.01}})},
      {"clockwise ring with a counter-clockwise hole",
       Geometry::polygon({{10, 45}, {10, 45.01}, {10.01, 45.01}, {10.01, 45}, {10, 45}},
                         {box(10.002, 45.002, 10.004, 45.004)})},
      {"across the antimeridian", Geometry::polygon({{179.99, -16}, {-179.99, -16}, {-179.99, -15.99}, {179.99, -15.99}})},
      {"across the antimeridian, longitudes past 180",
       Geometry::polygon({{179.99, -16}, {180.01, -16}, {180.01, -15.99}, {179.99, -15.99}})},
      {"around the north pole", Geometry::polygon(circle_pole)},
      // Two corners at the pole are one point (OGC 6.1.11.1 compares points, not their coordinates).
      {"lune from the equator to the pole, 37° wide", Geometry::polygon({{0, 0}, {37, 0}, {37, 90}, {0, 90}})},
      {"lune from the equator to the pole, 78° wide", Geometry::polygon({{222, 0}, {300, 0}, {300, -90}, {222, -90}})},
      {"around the south pole, clockwise", Geometry::polygon(circle_south)},
      {"1 m square", Geometry::polygon(box(10, 45, 10 + 1.0 / 78847, 45 + 1.0 / 111132))},
      {"continental (fits the plane)", Geometry::polygon(box(-125, 25, -67, 49), {box(-100, 35, -95, 40)})},
      // 130° wide: beyond the local plane. Its geodesic edges bow poleward: at 65°E the north edge lies at 22.6°S
      // and the south edge at 63.3°S (vertex latitude tan φ0 = tan φ1 / cos(Δλ/2), a closed form of the great
      // circle, common practice); the hole 35–50°S is well inside.
      {"continental (beyond the plane)", Geometry::polygon(box(0, -40, 130, -10), {box(60, -50, 70, -35)})},
      {"multi-polygon of parts touching at a corner (OGC 6.1.13.1)",
       Geometry::multi_polygon({Polygon{box(10, 45, 10.01, 45.01), {}}, Polygon{box(10.01, 45.01, 10.02, 45.02), {}}})},
  };
  for (const Case& c : cases) EXPECT_TRUE(validate(c.g).empty()) << c.name << ": " << describe(validate(c.g));
}

// ---- repair ------------------------------------------------------------------------------------------------

TEST(Repair, BowtieBecomesItsTwoTriangles) {
  // The even-odd rule: the two lobes, each a triangle with apex at the crossing. Expected area: the two triangles'
  // geodesic areas by GeographicLib (Karney 2013), crossing at (10.005, ≈45.005).
  const Repair r = repair(Geometry::polygon({{10, 45}, {10.01, 45.01}, {10.01, 45}, {10, 45.01}, {10, 45}}));
  ASSERT_TRUE(r.repaired) << r.note;
  EXPECT_THAT(r.note, HasSubstr("even-odd"));
  ASSERT_EQ(r.geometry.type, GeometryType::multi_polygon);
  ASSERT_EQ(r.geometry.polygons.size(), 2u);
  EXPECT_TRUE(validate(r.geometry).empty()) << describe(validate(r.geometry));
  const Problem crossing = only_problem(Geometry::polygon({{10, 45}, {10.01, 45.01}, {10.01, 45}, {10, 45.01}}));
  ASSERT_TRUE(crossing.at.has_value());
  const Coord x = *crossing.at;
  const double expected = geodesic_area_m2(Geometry::polygon({{10, 45}, x, {10, 45.01}, {10, 45}})) +
                          geodesic_area_m2(Geometry::polygon({{10.01, 45.01}, x, {10.01, 45}, {10.01, 45.01}}));
  EXPECT_NEAR(geodesic_area_m2(r.geometry), expected, 1e-6 * expected);
}

TEST(Repair, HoleOutsideIsDroppedAndOverlapsCountOnce) {
  const Repair outside = repair(Geometry::polygon(box(10, 45, 10.01, 45.01), {box(10.02, 45.002, 10.024, 45.006)}));
  ASSERT_TRUE(outside.repaired) << outside.note;
  ASSERT_EQ(outside.geometry.polygons.size(), 1u);
  EXPECT_TRUE(outside.geometry.polygons[0].holes.empty());
  EXPECT_NEAR(geodesic_area_m2(outside.geometry), geodesic_area_m2(Geometry::polygon(box(10, 45, 10.01, 45.01))), 1e-3);

  // Two overlapping squares: the union, an L-shaped octagon of area A + B − overlap (inclusion–exclusion).
  const Repair overlap = repair(Geometry::multi_polygon(
      {Polygon{box(10, 45, 10.01, 45.01), {}}, Polygon{box(10.005, 45.005, 10.015, 45.015), {}}}));
  ASSERT_TRUE(overlap.repaired) << overlap.note;
  ASSERT_EQ(overlap.geometry.polygons.size(), 1u);
  EXPECT_TRUE(validate(overlap.geometry).empty()) << describe(validate(overlap.geometry));
  const double expected = geodesic_area_m2(Geometry::polygon(box(10, 45, 10.01, 45.01))) +
                          geodesic_area_m2(Geometry::polygon(box(10.005, 45.005, 10.015, 45.015))) -
                          geodesic_area_m2(Geometry::polygon(box(10.005, 45.005, 10.01, 45.01)));
  // The union's two new vertices lie where great circles cross, within ~1e-7° of the parallels' corners: a few m².
  EXPECT_NEAR(geodesic_area_m2(overlap.geometry), expected, 1e-5 * expected);
}

TEST(Repair, SpikeIsCutOff) {
  const Repair r = repair(Geometry::polygon(
      {{10, 45}, {10.01, 45}, {10.01, 45.01}, {10.005, 45.01}, {10.005, 45.02}, {10.005, 45.01}, {10, 45.01}, {10, 45}}));
  ASSERT_TRUE(r.repaired) << r.note;
  EXPECT_TRUE(validate(r.geometry).empty()) << describe(validate(r.geometry));
  const Geometry without_spike =
      Geometry::polygon({{10, 45}, {10.01, 45}, {10.01, 45.01}, {10.005, 45.01}, {10, 45.01}, {10, 45}});
  EXPECT_NEAR(geodesic_area_m2(r.geometry), geodesic_area_m2(without_spike), 1e-3);
}

TEST(Repair, TooLargeOrNotAPolygonIsNotRepaired) {
  EXPECT_FALSE(repair(Geometry::polygon({{-50, 0}, {50, 40}, {50, 0}, {-50, 40}, {-50, 0}})).repaired);
  EXPECT_FALSE(repair(Geometry::line_string({{0, 0}, {1, 1}})).repaired);
}

}  // namespace
}  // namespace gridtruth
