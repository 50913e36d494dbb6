// The names of the public enums: to_string() gives the documented name of every enumerator, parse_*() reads each
// name back, and an unknown name is Error(invalid_argument). The expected names are those the headers document
// (and, for the CLI's options, the spellings the command's help lists).
#include <gtest/gtest.h>

#include <string>
#include <utility>
#include <vector>

#include "gridtruth/audit.hpp"
#include "gridtruth/cells.hpp"
#include "gridtruth/crs.hpp"
#include "gridtruth/error.hpp"
#include "gridtruth/geometry.hpp"
#include "gridtruth/io.hpp"
#include "gridtruth/rank.hpp"
#include "gridtruth/report.hpp"
#include "gridtruth/tailor.hpp"
#include "gridtruth/tolerance.hpp"

namespace {

using namespace gridtruth;

/// Checks to_string() against `names` and, when given, parse() of each name back to its enumerator.
template <typename Enum, typename Parse>
void expect_names(const std::vector<std::pair<Enum, std::string>>& names, Parse parse) {
  for (const auto& [value, name] : names) {
    EXPECT_EQ(std::string(to_string(value)), name);
    EXPECT_EQ(parse(name), value) << name;
  }
}

template <typename Enum>
void expect_names(const std::vector<std::pair<Enum, std::string>>& names) {
  for (const auto& [value, name] : names) EXPECT_EQ(std::string(to_string(value)), name);
}

bool invalid_argument(void (*f)()) {
  try {
    f();
  } catch (const Error& e) {
    return e.code() == ErrorCode::invalid_argument;
  }
  return false;
}

TEST(Names, EnumsUsersGiveAsTextReadBack) {
  expect_names<InputFormat>({{InputFormat::automatic, "auto"},
                             {InputFormat::geojson, "geojson"},
                             {InputFormat::ndjson, "ndjson"},
                             {InputFormat::csv, "csv"},
                             {InputFormat::gdal, "gdal"}},
                            parse_input_format);
  expect_names<RankMetric>({{RankMetric::area, "area"},
                            {RankMetric::length, "length"},
                            {RankMetric::shape, "shape"},
                            {RankMetric::bearing, "bearing"}},
                           parse_rank_metric);
  expect_names<ProjectionFamily>({{ProjectionFamily::albers, "albers"},
                                  {ProjectionFamily::lambert_conic, "lambert-conic"},
                                  {ProjectionFamily::transverse_mercator, "transverse-mercator"},
                                  {ProjectionFamily::azimuthal_equal_area, "azimuthal-equal-area"},
                                  {ProjectionFamily::oblique_mercator, "oblique-mercator"}},
                                 parse_projection_family);
  expect_names<Metric>({{Metric::area, "area"}, {Metric::length, "length"}, {Metric::bearing, "bearing"}},
                       parse_metric);
  expect_names<RawCodeType>({{RawCodeType::uint8, "uint8"}, {RawCodeType::uint16, "uint16"}}, parse_raw_code_type);
  expect_names<GeoJsonCoordinates>({{GeoJsonCoordinates::wgs84, "wgs84"}, {GeoJsonCoordinates::source, "source"}},
                                   parse_geojson_coordinates);
}

TEST(Names, UnknownNamesAreInvalidArguments) {
  EXPECT_TRUE(invalid_argument([] { parse_input_format("shapefile-ish"); }));
  EXPECT_TRUE(invalid_argument([] { parse_rank_metric("volume"); }));
  EXPECT_TRUE(invalid_argument([] { parse_projection_family("mercator"); }));
  EXPECT_TRUE(invalid_argument([] { parse_metric("shape"); }));  // a ranking metric, not a tolerance's
  EXPECT_TRUE(invalid_argument([] { parse_raw_code_type("int16"); }));
  EXPECT_TRUE(invalid_argument([] { parse_geojson_coordinates("EPSG:4326"); }));
}

TEST(Names, EveryOtherEnumHasItsName) {
  expect_names<GeometryType>({{GeometryType::point, "Point"},
                              {GeometryType::line_string, "LineString"},
                              {GeometryType::polygon, "Polygon"},
                              {GeometryType::multi_point, "MultiPoint"},
                              {GeometryType::multi_line_string, "MultiLineString"},
                              {GeometryType::multi_polygon, "MultiPolygon"}});
  expect_names<Problem::Code>({{Problem::Code::non_finite, "non_finite"},
                               {Problem::Code::too_few_vertices, "too_few_vertices"},
                               {Problem::Code::self_intersection, "self_intersection"},
                               {Problem::Code::parts_overlap, "parts_overlap"}});
  expect_names<CrsKind>({{CrsKind::geographic, "geographic"},
                         {CrsKind::projected, "projected"},
                         {CrsKind::geocentric, "geocentric"},
                         {CrsKind::other, "other"}});
  expect_names<CrsFileAccess>({{CrsFileAccess::any, "any"}, {CrsFileAccess::data_directories, "data_directories"}});
  expect_names<EdgeModel>({{EdgeModel::geodesic, "geodesic"}, {EdgeModel::rhumb, "rhumb"},
                           {EdgeModel::straight, "straight"}});
  expect_names<Status>({{Status::ok, "ok"}, {Status::invalid, "invalid"}, {Status::unmeasurable, "unmeasurable"}});
  expect_names<Tolerance::Kind>({{Tolerance::Kind::relative_ppm, "relative_ppm"},
                                 {Tolerance::Kind::absolute, "absolute"}});
  expect_names<Verdict>({{Verdict::none, ""}, {Verdict::pass, "pass"}, {Verdict::fail, "fail"}});
  expect_names<ColumnKind>({{ColumnKind::text, "text"}, {ColumnKind::count, "count"},
                            {ColumnKind::number, "number"}});
  expect_names<ErrorCode>({{ErrorCode::unknown_crs, "unknown_crs"}, {ErrorCode::invalid_argument, "invalid_argument"}});
}

// Every Problem::Code has a distinct, non-empty name (a new enumerator without a name would give "").
TEST(Names, ProblemCodesAreDistinct) {
  std::vector<std::string> seen;
  for (int c = static_cast<int>(Problem::Code::non_finite); c <= static_cast<int>(Problem::Code::parts_overlap); ++c) {
    const std::string name(to_string(static_cast<Problem::Code>(c)));
    EXPECT_FALSE(name.empty()) << c;
    for (const std::string& other : seen) EXPECT_NE(name, other);
    seen.push_back(name);
  }
  EXPECT_EQ(seen.size(), 13u);
}

// Edge specifications and tolerances are values with a CRS or a number in them: they keep their static parse()
// and member to_string(), which read each other back.
TEST(Names, EdgeSpecAndToleranceReadBack) {
  const EdgeSpec straight = EdgeSpec::parse("straight-in=EPSG:26915");
  EXPECT_EQ(straight.model, EdgeModel::straight);
  EXPECT_EQ(EdgeSpec::parse(straight.to_string()).crs, "EPSG:26915");
  const Tolerance t = Tolerance::parse("length=1:10000");
  EXPECT_EQ(to_string(t.metric), "length");
  EXPECT_EQ(to_string(t.kind), "relative_ppm");
  EXPECT_DOUBLE_EQ(Tolerance::parse(t.to_string()).value, 100.0);  // 1:10000 = 100 ppm
}

}  // namespace
