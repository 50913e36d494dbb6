// Feature model and validation: every problem is listed, none is thrown, messages name where it is.
#include "gridtruth/geometry.hpp"

#include <gmock/gmock.h>
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <limits>
#include <string>
#include <vector>

namespace gridtruth {
namespace {

using ::testing::HasSubstr;

constexpr double nan_value = std::numeric_limits<double>::quiet_NaN();
constexpr double inf_value = std::numeric_limits<double>::infinity();

Path square(double lon0, double lat0, double size_deg, bool closed = true) {
  Path p{{lon0, lat0}, {lon0 + size_deg, lat0}, {lon0 + size_deg, lat0 + size_deg}, {lon0, lat0 + size_deg}};
  if (closed) p.push_back(p.front());
  return p;
}

std::size_t count_code(const std::vector<Problem>& problems, Problem::Code code) {
  return static_cast<std::size_t>(
      std::count_if(problems.begin(), problems.end(), [code](const Problem& p) { return p.code == code; }));
}

TEST(GeometryType, NamesAreGeoJsonSpellings) {
  EXPECT_EQ(to_string(GeometryType::point), "Point");
  EXPECT_EQ(to_string(GeometryType::line_string), "LineString");
  EXPECT_EQ(to_string(GeometryType::polygon), "Polygon");
  EXPECT_EQ(to_string(GeometryType::multi_point), "MultiPoint");
  EXPECT_EQ(to_string(GeometryType::multi_line_string), "MultiLineString");
  EXPECT_EQ(to_string(GeometryType::multi_polygon), "MultiPolygon");
}

TEST(GeometryFactory, EachFactorySetsTypeAndTheRightMember) {
  const Geometry pt = Geometry::point({7.5, 47.25});
  EXPECT_EQ(pt.type, GeometryType::point);
  ASSERT_EQ(pt.points.size(), 1u);
  EXPECT_EQ(pt.points[0].x, 7.5);
  EXPECT_EQ(pt.points[0].y, 47.25);
  EXPECT_TRUE(pt.lines.empty());
  EXPECT_TRUE(pt.polygons.empty());

  const Geometry line = Geometry::line_string({{0, 0}, {1, 1}, {2, 0}});
  EXPECT_EQ(line.type, GeometryType::line_string);
  ASSERT_EQ(line.lines.size(), 1u);
  EXPECT_EQ(line.lines[0].size(), 3u);

  const Geometry poly = Geometry::polygon(square(0, 0, 2), {square(0.5, 0.5, 0.5)});
  EXPECT_EQ(poly.type, GeometryType::polygon);
  ASSERT_EQ(poly.polygons.size(), 1u);
  EXPECT_EQ(poly.polygons[0].outer.size(), 5u);
  ASSERT_EQ(poly.polygons[0].holes.size(), 1u);

  const Geometry mpoly = Geometry::multi_polygon({Polygon{square(0, 0, 1), {}}, Polygon{square(5, 5, 1), {}}});
  EXPECT_EQ(mpoly.type, GeometryType::multi_polygon);
  EXPECT_EQ(mpoly.polygons.size(), 2u);

  const Geometry mline = Geometry::multi_line_string({{{0, 0}, {1, 0}}, {{2, 0}, {3, 0}, {4, 0}}});
  EXPECT_EQ(mline.type, GeometryType::multi_line_string);
  EXPECT_EQ(mline.lines.size(), 2u);

  const Geometry mpt = Geometry::multi_point({{0, 0}, {1, 1}, {2, 2}});
  EXPECT_EQ(mpt.type, GeometryType::multi_point);
  EXPECT_EQ(mpt.points.size(), 3u);
}

TEST(GeometryVertexCount, CountsVerticesAsGivenIncludingClosingVertices) {
  EXPECT_EQ(Geometry::point({1, 2}).vertex_count(), 1u);
  EXPECT_EQ(Geometry::multi_point({{0, 0}, {1, 1}, {2, 2}}).vertex_count(), 3u);
  EXPECT_EQ(Geometry::line_string({{0, 0}, {1, 1}, {2, 0}}).vertex_count(), 3u);
  EXPECT_EQ(Geometry::multi_line_string({{{0, 0}, {1, 0}}, {{2, 0}, {3, 0}, {4, 0}}}).vertex_count(), 5u);
  // 5 (closed outer) + 4 (open hole)
  EXPECT_EQ(Geometry::polygon(square(0, 0, 2), {square(0.5, 0.5, 0.5, false)}).vertex_count(), 9u);
  EXPECT_EQ(Geometry::multi_polygon({Polygon{square(0, 0, 1), {square(0.2, 0.2, 0.1)}},
                                     Polygon{square(5, 5, 1, false), {}}})
                .vertex_count(),
            14u);
  EXPECT_EQ(Geometry::multi_polygon({}).vertex_count(), 0u);
}

TEST(Validate, ValidGeometriesHaveNoProblems) {
  EXPECT_TRUE(validate(Geometry::point({179.9, -89.9})).empty());
  EXPECT_TRUE(validate(Geometry::point({-540, 90})).empty());  // the limits themselves are allowed
  EXPECT_TRUE(validate(Geometry::line_string({{0, 0}, {0, 0}, {1, 1}})).empty());
  EXPECT_TRUE(validate(Geometry::polygon(square(10, 50, 1))).empty());
  EXPECT_TRUE(validate(Geometry::polygon(square(10, 50, 1, false))).empty());  // unclosed: closed implicitly
  EXPECT_TRUE(validate(Geometry::polygon(square(10, 50, 1), {square(10.2, 50.2, 0.2)})).empty());
  // Crossing the antimeridian with longitudes beyond 180 is a wrapped longitude, not an error.
  EXPECT_TRUE(validate(Geometry::polygon({{179, 0}, {181, 0}, {181, 1}, {179, 1}})).empty());
  // A triangle with repeated consecutive vertices and a closing vertex is still a triangle.
  EXPECT_TRUE(validate(Geometry::polygon({{0, 0}, {0, 0}, {1, 0}, {1, 0}, {1, 1}, {0, 0}})).empty());
  EXPECT_TRUE(describe(validate(Geometry::polygon(square(0, 0, 1)))).empty());
}

TEST(Validate, NonFiniteCoordinatesNameTheVertex) {
  const auto problems = validate(Geometry::line_string({{0, 0}, {nan_value, 1}, {2, inf_value}, {3, 3}}));
  ASSERT_EQ(count_code(problems, Problem::Code::non_finite), 2u) << describe(problems);
  EXPECT_THAT(problems[0].message, HasSubstr("vertex 1"));
  EXPECT_THAT(problems[0].message, HasSubstr("non-finite"));
  EXPECT_THAT(problems[1].message, HasSubstr("vertex 2"));
  EXPECT_EQ(count_code(problems, Problem::Code::too_few_vertices), 0u);
}

TEST(Validate, LatitudeAndLongitudeRanges) {
  const auto lat = validate(Geometry::point({10, 90.0001}));
  ASSERT_EQ(lat.size(), 1u);
  EXPECT_EQ(lat[0].code, Problem::Code::latitude_range);
  EXPECT_THAT(lat[0].message, HasSubstr("latitude 90.0001"));
  EXPECT_THAT(lat[0].message, HasSubstr("point"));

  const auto lon = validate(Geometry::point({-540.5, 10}));
  ASSERT_EQ(lon.size(), 1u);
  EXPECT_EQ(lon[0].code, Problem::Code::longitude_range);
  EXPECT_THAT(lon[0].message, HasSubstr("longitude -540.5"));

  // Swapped axes (latitude given as longitude) are caught when the "latitude" exceeds 90.
  const auto swapped = validate(Geometry::point({45, 120}));
  ASSERT_EQ(swapped.size(), 1u);
  EXPECT_EQ(swapped[0].code, Problem::Code::latitude_range);

  // Both out of range at one vertex: two problems.
  const auto both = validate(Geometry::point({600, -95}));
  EXPECT_EQ(count_code(both, Problem::Code::latitude_range), 1u);
  EXPECT_EQ(count_code(both, Problem::Code::longitude_range), 1u);

  // A NaN latitude with an absurd longitude: both reported.
  const auto mixed = validate(Geometry::point({1000, nan_value}));
  EXPECT_EQ(count_code(mixed, Problem::Code::non_finite), 1u);
  EXPECT_EQ(count_code(mixed, Problem::Code::longitude_range), 1u);
}

TEST(Validate, RingWithTooFewDistinctVerticesInAMultiPolygonHole) {
  // Polygon 2, hole 1 has only two distinct vertices once the repeats and the closing vertex are ignored.
  const Path degenerate_hole{{5.2, 5.2}, {5.3, 5.2}, {5.3, 5.2}, {5.2, 5.2}};
  const Geometry g = Geometry::multi_polygon({
      Polygon{square(0, 0, 1), {}},
      Polygon{square(2, 2, 1), {}},
      Polygon{square(5, 5, 1), {square(5.6, 5.6, 0.1), degenerate_hole}},
  });
  const auto problems = validate(g);
  ASSERT_EQ(problems.size(), 1u) << describe(problems);
  EXPECT_EQ(problems[0].code, Problem::Code::too_few_vertices);
  EXPECT_EQ(problems[0].message, "polygon 2 hole 1: ring has 2 distinct vertices, needs 3");
}

TEST(Validate, RingDistinctCountIgnoresRepeatsAndClosingVertex) {
  // Four vertices given, but only two distinct: A B B A.
  const auto p1 = validate(Geometry::polygon({{0, 0}, {1, 1}, {1, 1}, {0, 0}}));
  ASSERT_EQ(p1.size(), 1u);
  EXPECT_EQ(p1[0].code, Problem::Code::too_few_vertices);
  EXPECT_THAT(p1[0].message, HasSubstr("outer ring"));
  EXPECT_THAT(p1[0].message, HasSubstr("2 distinct vertices"));
  // A single vertex repeated.
  const auto p2 = validate(Geometry::polygon({{3, 3}, {3, 3}, {3, 3}}));
  ASSERT_EQ(p2.size(), 1u);
  EXPECT_THAT(p2[0].message, HasSubstr("1 distinct vertex,"));
  // Three distinct vertices, unclosed: valid.
  EXPECT_TRUE(validate(Geometry::polygon({{0, 0}, {1, 0}, {0, 1}})).empty());
}

TEST(Validate, LineNeedsTwoDistinctVertices) {
  const auto one = validate(Geometry::line_string({{4, 4}, {4, 4}}));
  ASSERT_EQ(one.size(), 1u);
  EXPECT_EQ(one[0].code, Problem::Code::too_few_vertices);
  EXPECT_EQ(one[0].message, "line has 1 distinct vertex, needs 2");

  const auto multi = validate(Geometry::multi_line_string({{{0, 0}, {1, 0}}, {{2, 2}}}));
  ASSERT_EQ(multi.size(), 1u);
  EXPECT_EQ(multi[0].message, "line 1: line has 1 distinct vertex, needs 2");
}

TEST(Validate, EmptyPartsAndEmptyGeometries) {
  const auto empty_outer = validate(Geometry::polygon({}));
  ASSERT_EQ(empty_outer.size(), 1u);
  EXPECT_EQ(empty_outer[0].code, Problem::Code::empty);
  EXPECT_THAT(empty_outer[0].message, HasSubstr("outer ring"));

  const auto empty_hole = validate(Geometry::polygon(square(0, 0, 1), {Path{}}));
  ASSERT_EQ(empty_hole.size(), 1u);
  EXPECT_EQ(empty_hole[0].code, Problem::Code::empty);
  EXPECT_EQ(empty_hole[0].message, "hole 0: ring is empty");

  const auto empty_line = validate(Geometry::multi_line_string({{{0, 0}, {1, 1}}, Path{}}));
  ASSERT_EQ(empty_line.size(), 1u);
  EXPECT_EQ(empty_line[0].code, Problem::Code::empty);
  EXPECT_THAT(empty_line[0].message, HasSubstr("line 1"));

  for (const Geometry& g : {Geometry::multi_polygon({}), Geometry::multi_line_string({}), Geometry::multi_point({})}) {
    const auto problems = validate(g);
    ASSERT_EQ(problems.size(), 1u) << to_string(g.type);
    EXPECT_EQ(problems[0].code, Problem::Code::empty);
    EXPECT_THAT(problems[0].message, HasSubstr(std::string(to_string(g.type))));
  }
}

TEST(Validate, WrongPartCountsForSingleGeometries) {
  Geometry two_points = Geometry::point({0, 0});
  two_points.points.push_back({1, 1});
  const auto p = validate(two_points);
  ASSERT_EQ(p.size(), 1u);
  EXPECT_EQ(p[0].code, Problem::Code::wrong_part_count);
  EXPECT_EQ(p[0].message, "Point has 2 points, needs exactly 1");

  Geometry no_point;
  no_point.type = GeometryType::point;
  const auto p0 = validate(no_point);
  ASSERT_EQ(p0.size(), 1u);
  EXPECT_EQ(p0[0].code, Problem::Code::wrong_part_count);

  Geometry two_lines = Geometry::line_string({{0, 0}, {1, 1}});
  two_lines.lines.push_back({{5, 5}});
  const auto l = validate(two_lines);
  // The count and the degenerate second line are both reported.
  EXPECT_EQ(count_code(l, Problem::Code::wrong_part_count), 1u);
  EXPECT_EQ(count_code(l, Problem::Code::too_few_vertices), 1u);
  EXPECT_THAT(describe(l), HasSubstr("line 1: line has 1 distinct vertex"));

  Geometry no_polygon;
  no_polygon.type = GeometryType::polygon;
  const auto n = validate(no_polygon);
  ASSERT_EQ(n.size(), 1u);
  EXPECT_EQ(n[0].code, Problem::Code::wrong_part_count);
  EXPECT_THAT(n[0].message, HasSubstr("Polygon has 0 polygons"));
}

TEST(Validate, ListsEveryProblemWithoutStoppingAtTheFirst) {
  const Geometry g = Geometry::multi_polygon({
      Polygon{{{0, 0}, {1, 0}, {nan_value, 1}, {0, 0}}, {}},                     // polygon 0: NaN at vertex 2
      Polygon{{{0, 95}, {1, 0}, {1, 1}}, {Path{}, {{2, 2}, {2, 2}}}},             // lat, empty hole, 1 vertex
      Polygon{{{1000, 0}, {1, 0}, {1, 1}}, {}},                                   // longitude
  });
  const auto problems = validate(g);
  EXPECT_EQ(problems.size(), 5u) << describe(problems);
  EXPECT_EQ(count_code(problems, Problem::Code::non_finite), 1u);
  EXPECT_EQ(count_code(problems, Problem::Code::latitude_range), 1u);
  EXPECT_EQ(count_code(problems, Problem::Code::empty), 1u);
  EXPECT_EQ(count_code(problems, Problem::Code::too_few_vertices), 1u);
  EXPECT_EQ(count_code(problems, Problem::Code::longitude_range), 1u);
  const std::string text = describe(problems);
  EXPECT_THAT(text, HasSubstr("polygon 0 outer ring vertex 2: non-finite"));
  EXPECT_THAT(text, HasSubstr("polygon 1 outer ring vertex 0: latitude 95"));
  EXPECT_THAT(text, HasSubstr("polygon 1 hole 0: ring is empty"));
  EXPECT_THAT(text, HasSubstr("polygon 1 hole 1: ring has 1 distinct vertex, needs 3"));
  EXPECT_THAT(text, HasSubstr("polygon 2 outer ring vertex 0: longitude 1000"));
  // describe() joins with "; " in the order found.
  EXPECT_EQ(std::count(text.begin(), text.end(), ';'), 4);
  EXPECT_EQ(text.find("polygon 0"), 0u);
}

TEST(Validate, MultiPointNamesEachPoint) {
  const auto problems = validate(Geometry::multi_point({{0, 0}, {1, 1}, {2, -91}}));
  ASSERT_EQ(problems.size(), 1u);
  EXPECT_THAT(problems[0].message, HasSubstr("point 2: latitude -91"));
}

TEST(Describe, EmptyListGivesEmptyText) { EXPECT_EQ(describe({}), ""); }

}  // namespace
}  // namespace gridtruth
