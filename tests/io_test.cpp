// Readers (GeoJSON, newline-delimited GeoJSON, CSV + WKT) and the result CSV writer.
// Reference inputs are taken from the standards they follow; each test names its source.
#include "gridtruth/io.hpp"

#include <gmock/gmock.h>
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <cstdlib>
#include <limits>
#include <random>
#include <sstream>
#include <string>
#include <vector>

#include "gridtruth/audit.hpp"
#include "gridtruth/error.hpp"
#include "test_files.hpp"

namespace gridtruth {
namespace {

using ::testing::HasSubstr;
using gridtruth::test_files::parse_csv;

std::vector<InputFeature> read_all(const std::string& text, ReaderOptions options = {}) {
  std::istringstream in(text);
  FeatureReader reader(in, std::move(options));
  std::vector<InputFeature> out;
  while (auto f = reader.next()) out.push_back(std::move(*f));
  return out;
}

ErrorCode read_error_code(const std::string& text, ReaderOptions options = {}) {
  try {
    read_all(text, std::move(options));
  } catch (const Error& e) {
    return e.code();
  }
  ADD_FAILURE() << "no Error thrown for: " << text;
  return ErrorCode::io;
}

std::string read_error_message(const std::string& text, ReaderOptions options = {}) {
  try {
    read_all(text, std::move(options));
  } catch (const Error& e) {
    return e.what();
  }
  ADD_FAILURE() << "no Error thrown for: " << text;
  return {};
}

// ---------------------------------------------------------------------------------------------------------------
// GeoJSON

// RFC 7946 section 1.5, the example FeatureCollection (verbatim).
const char* rfc7946_example = R"({
       "type": "FeatureCollection",
       "features": [{
           "type": "Feature",
           "geometry": {
               "type": "Point",
               "coordinates": [102.0, 0.5]
           },
           "properties": {
               "prop0": "value0"
           }
       }, {
           "type": "Feature",
           "geometry": {
               "type": "LineString",
               "coordinates": [
                   [102.0, 0.0],
                   [103.0, 1.0],
                   [104.0, 0.0],
                   [105.0, 1.0]
               ]
           },
           "properties": {
               "prop0": "value0",
               "prop1": 0.0
           }
       }, {
           "type": "Feature",
           "geometry": {
               "type": "Polygon",
               "coordinates": [
                   [
                       [100.0, 0.0],
                       [101.0, 0.0],
                       [101.0, 1.0],
                       [100.0, 1.0],
                       [100.0, 0.0]
                   ]
               ]
           },
           "properties": {
               "prop0": "value0",
               "prop1": {
                   "this": "that"
               }
           }
       }]
   })";

TEST(FeatureReaderStdin, UntiesTheStreamItReads) {
  // Regression (issue 17): run_audit reads on a worker thread; a stream tied to the caller's output (std::cin is
  // tied to std::cout by the standard) would flush that output from the reading thread: a data race.
  std::ostringstream sink;
  std::istringstream in("{\"type\":\"FeatureCollection\",\"features\":[]}");
  in.tie(&sink);
  const gridtruth::FeatureReader reader(in);
  EXPECT_EQ(in.tie(), nullptr);
}

TEST(GeoJsonReader, Rfc7946Section1_5ExampleCollection) {
  const auto fs = read_all(rfc7946_example);
  ASSERT_EQ(fs.size(), 3u);
  for (std::size_t k = 0; k < 3; ++k) {
    EXPECT_TRUE(fs[k].error.empty()) << fs[k].error;
    ASSERT_TRUE(fs[k].geometry);
    EXPECT_EQ(fs[k].position, k + 1);
    EXPECT_EQ(fs[k].id, std::to_string(k + 1));  // no "id": the 1-based position
  }
  EXPECT_EQ(fs[0].geometry->type, GeometryType::point);
  EXPECT_EQ(fs[0].geometry->points[0].x, 102.0);
  EXPECT_EQ(fs[0].geometry->points[0].y, 0.5);
  EXPECT_EQ(fs[1].geometry->type, GeometryType::line_string);
  ASSERT_EQ(fs[1].geometry->lines.size(), 1u);
  EXPECT_EQ(fs[1].geometry->lines[0].size(), 4u);
  EXPECT_EQ(fs[1].geometry->lines[0][3].x, 105.0);
  EXPECT_EQ(fs[2].geometry->type, GeometryType::polygon);
  ASSERT_EQ(fs[2].geometry->polygons.size(), 1u);
  EXPECT_EQ(fs[2].geometry->polygons[0].outer.size(), 5u);
  EXPECT_TRUE(fs[2].geometry->polygons[0].holes.empty());
}

TEST(GeoJsonReader, MembersInAnyOrderAndForeignMembers) {
  // RFC 7946 section 6.1 (foreign members) and RFC 8259 section 4 (member order is not significant).
  const auto fs = read_all(
      R"({"features":[{"geometry":{"coordinates":[1,2],"type":"Point"},"type":"Feature","properties":null}],
          "bbox":[1,2,1,2],"name":"x","type":"FeatureCollection"})");
  ASSERT_EQ(fs.size(), 1u);
  ASSERT_TRUE(fs[0].geometry) << fs[0].error;
  EXPECT_EQ(fs[0].geometry->points[0].y, 2);
}

TEST(GeoJsonReader, PolygonWithHoleAndMultiPolygon) {
  // RFC 7946 Appendix A.3 (polygon with a hole) and A.6 (MultiPolygon), coordinates as printed there.
  const auto fs = read_all(R"({"type":"FeatureCollection","features":[
    {"type":"Feature","properties":{},"geometry":{"type":"Polygon","coordinates":[
      [[100.0,0.0],[101.0,0.0],[101.0,1.0],[100.0,1.0],[100.0,0.0]],
      [[100.8,0.8],[100.8,0.2],[100.2,0.2],[100.2,0.8],[100.8,0.8]]]}},
    {"type":"Feature","properties":{},"geometry":{"type":"MultiPolygon","coordinates":[
      [[[102.0,2.0],[103.0,2.0],[103.0,3.0],[102.0,3.0],[102.0,2.0]]],
      [[[100.0,0.0],[101.0,0.0],[101.0,1.0],[100.0,1.0],[100.0,0.0]],
       [[100.2,0.2],[100.2,0.8],[100.8,0.8],[100.8,0.2],[100.2,0.2]]]]}}]})");
  ASSERT_EQ(fs.size(), 2u);
  ASSERT_TRUE(fs[0].geometry);
  ASSERT_EQ(fs[0].geometry->polygons[0].holes.size(), 1u);
  EXPECT_EQ(fs[0].geometry->polygons[0].holes[0][1].y, 0.2);
  ASSERT_TRUE(fs[1].geometry);
  EXPECT_EQ(fs[1].geometry->type, GeometryType::multi_polygon);
  ASSERT_EQ(fs[1].geometry->polygons.size(), 2u);
  EXPECT_EQ(fs[1].geometry->polygons[1].holes.size(), 1u);
}

TEST(GeoJsonReader, SingleFeatureAndBareGeometryDocuments) {
  // RFC 7946 section 2: a GeoJSON text may be a Feature or a Geometry object.
  auto fs = read_all(R"({"type":"Feature","id":"pond-7","properties":{},
                         "geometry":{"type":"MultiPoint","coordinates":[[100.0,0.0],[101.0,1.0]]}})");
  ASSERT_EQ(fs.size(), 1u);
  EXPECT_EQ(fs[0].id, "pond-7");
  ASSERT_TRUE(fs[0].geometry);
  EXPECT_EQ(fs[0].geometry->points.size(), 2u);

  fs = read_all(R"({"type":"MultiLineString","coordinates":[[[100.0,0.0],[101.0,1.0]],[[102.0,2.0],[103.0,3.0]]]})");
  ASSERT_EQ(fs.size(), 1u);
  ASSERT_TRUE(fs[0].geometry);
  EXPECT_EQ(fs[0].geometry->type, GeometryType::multi_line_string);
  EXPECT_EQ(fs[0].geometry->lines.size(), 2u);
}

TEST(GeoJsonReader, IdPrecedenceFeatureIdThenPropertyThenPosition) {
  // RFC 7946 section 3.2: "id" is a string or a number. The gridtruth contract: GeoJSON id, else the id field,
  // else the 1-based position.
  ReaderOptions o;
  o.id_field = "unit";
  const auto fs = read_all(R"({"type":"FeatureCollection","features":[
    {"type":"Feature","id":42,"properties":{"unit":"A"},"geometry":{"type":"Point","coordinates":[0,0]}},
    {"type":"Feature","properties":{"unit":"B"},"geometry":{"type":"Point","coordinates":[0,0]}},
    {"type":"Feature","properties":{"unit":7.5},"geometry":{"type":"Point","coordinates":[0,0]}},
    {"type":"Feature","properties":{"other":1},"geometry":{"type":"Point","coordinates":[0,0]}},
    {"type":"Feature","id":"x,\"y\"","geometry":{"type":"Point","coordinates":[0,0]},"properties":null}]})",
                           o);
  ASSERT_EQ(fs.size(), 5u);
  EXPECT_EQ(fs[0].id, "42");
  EXPECT_EQ(fs[1].id, "B");
  EXPECT_EQ(fs[2].id, "7.5");
  EXPECT_EQ(fs[3].id, "4");
  EXPECT_EQ(fs[4].id, "x,\"y\"");
}

TEST(GeoJsonReader, ExtraOrdinatesAreDropped) {
  // RFC 7946 section 3.1.1: a position has two or more numbers; the third is an altitude.
  const auto fs = read_all(R"({"type":"LineString","coordinates":[[1,2,300],[3,4,400,5]]})");
  ASSERT_TRUE(fs.at(0).geometry) << fs[0].error;
  EXPECT_EQ(fs[0].geometry->lines[0][1].x, 3);
  EXPECT_EQ(fs[0].geometry->lines[0][1].y, 4);
}

TEST(GeoJsonReader, HostileFeaturesEachGiveOneInvalidFeatureAndTheRestAreRead) {
  // Each bad element is one feature with an error; the good ones around them are still read.
  const std::string good = R"({"type":"Feature","properties":{},"geometry":{"type":"Point","coordinates":[1,2]}})";
  const std::vector<std::pair<std::string, std::string>> bad = {
      {R"({"type":"Feature","properties":{},"geometry":null})", "null geometry"},
      {R"({"type":"Feature","properties":{}})", "no \"geometry\""},
      {R"({"type":"Feature","geometry":{"type":"GeometryCollection","geometries":[]}})", "GeometryCollection"},
      {R"({"type":"Feature","geometry":{"type":"Circle","coordinates":[1,2]}})", "unknown geometry type \"Circle\""},
      {R"({"type":"Feature","geometry":{"type":"Point","coordinates":["1",2]}})", "found a string"},
      {R"({"type":"Feature","geometry":{"type":"Point","coordinates":[null,2]}})", "found null"},
      {R"({"type":"Feature","geometry":{"type":"Point","coordinates":[1]}})", "at least 2 numbers"},
      {R"({"type":"Feature","geometry":{"type":"Point","coordinates":[NaN,2]}})", "malformed JSON at byte"},
      {R"({"type":"Feature","geometry":{"type":"Point","coordinates":[Infinity,2]}})", "malformed JSON"},
      {R"({"type":"Feature","geometry":{"type":"Point"}})", "no \"coordinates\""},
      {R"({"type":"Feature","geometry":{"type":7,"coordinates":[1,2]}})", "not a string"},
      {R"({"type":"Feature","geometry":{"type":"Polygon","coordinates":[[1,2],[3,4]]}})", "coordinates[0][0]"},
      {R"({"type":"Feature","geometry":{"type":"LineString","coordinates":{"a":1}}})", "found an object"},
      {R"({"type":"FeatureCollection","features":[]})", "FeatureCollection where a Feature belongs"},
      {R"("just a string")", "found a string"},
      {R"({"geometry":{"type":"Point","coordinates":[1,2]}})", "no \"type\""},
      {R"({"type":"Feature" "geometry":null})", "malformed JSON"},
  };
  std::string text = R"({"type":"FeatureCollection","features":[)" + good;
  for (const auto& b : bad) text += "," + b.first + "," + good;
  text += "]}";
  const auto fs = read_all(text);
  ASSERT_EQ(fs.size(), 1 + 2 * bad.size());
  for (std::size_t k = 0; k < fs.size(); k += 2) {
    EXPECT_TRUE(fs[k].geometry) << "feature " << k + 1 << ": " << fs[k].error;
    EXPECT_TRUE(fs[k].error.empty());
  }
  for (std::size_t k = 0; k < bad.size(); ++k) {
    const auto& f = fs[2 * k + 1];
    EXPECT_FALSE(f.geometry) << bad[k].first;
    EXPECT_THAT(f.error, HasSubstr(bad[k].second)) << bad[k].first;
    EXPECT_EQ(f.position, 2 * k + 2);
  }
  // The declared type is kept when the type was understood but the coordinates were not.
  EXPECT_EQ(fs[2 * 4 + 1].declared_type, GeometryType::point);
}

TEST(GeoJsonReader, ByteOffsetOfMalformedJsonPointsIntoTheInput) {
  const std::string text = R"({"type":"FeatureCollection","features":[{"type":"Point","coordinates":[NaN,2]}]})";
  const auto fs = read_all(text);
  ASSERT_EQ(fs.size(), 1u);
  const auto at = text.find("NaN");
  // nlohmann-json reports the byte where it stopped reading; it lies on the bad literal.
  const auto pos = fs[0].error.find("at byte ");
  ASSERT_NE(pos, std::string::npos) << fs[0].error;
  const auto byte = std::stoul(fs[0].error.substr(pos + 8));
  EXPECT_GE(byte, at);
  EXPECT_LE(byte, at + 3);
}

TEST(GeoJsonReader, TruncatedCollectionYieldsTheCompleteFeaturesThenOneTruncatedFeature) {
  std::string text = rfc7946_example;
  text.resize(text.find("[100.0, 1.0]"));  // cut inside the third feature
  const auto fs = read_all(text);
  ASSERT_EQ(fs.size(), 3u);
  EXPECT_TRUE(fs[0].geometry);
  EXPECT_TRUE(fs[1].geometry);
  EXPECT_FALSE(fs[2].geometry);
  EXPECT_THAT(fs[2].error, HasSubstr("truncated"));
}

TEST(GeoJsonReader, UnreadableContainersThrowParseErrorsNamingTheByte) {
  EXPECT_EQ(read_error_code(""), ErrorCode::parse);
  EXPECT_EQ(read_error_code("   \n"), ErrorCode::parse);
  EXPECT_EQ(read_error_code("[1,2,3]"), ErrorCode::parse);  // RFC 7946 section 2: a GeoJSON text is an object
  EXPECT_EQ(read_error_code(R"({"type":"FeatureCollection"})"), ErrorCode::parse);
  EXPECT_EQ(read_error_code(R"({"type":"FeatureCollection","features":7})"), ErrorCode::parse);
  EXPECT_EQ(read_error_code(R"({"type":"Feature","geometry":)"), ErrorCode::parse);  // truncated single feature
  EXPECT_THAT(read_error_message("\xEF\xBB\xBF{\"type\": }x"), HasSubstr("byte"));
  // Unmatched brackets, text between features and text after the collection no longer throw once the
  // "features" array is open (issue 17 item 4): see DamagedCollectionsKeepGoing.
}

TEST(GeoJsonReader, EmptyCollectionHasNoFeatures) {
  EXPECT_TRUE(read_all(R"({"type":"FeatureCollection","features":[]})").empty());
}

TEST(GeoJsonReader, DeeplyNestedArraysDoNotCrash) {
  // Hostile nesting: 100 000 levels; the lexical scanner keeps its own stack.
  std::string text = R"({"type":"FeatureCollection","features":[{"type":"Feature","geometry":)";
  text += std::string(100000, '[') + std::string(100000, ']') + "}]}";
  const auto fs = read_all(text);
  ASSERT_EQ(fs.size(), 1u);
  EXPECT_FALSE(fs[0].geometry);
}

TEST(GeoJsonReader, HugeCoordinateArrayIsRead) {
  std::string text = R"({"type":"LineString","coordinates":[)";
  const int n = 200000;
  for (int k = 0; k < n; ++k) text += (k ? ",[" : "[") + std::to_string(k * 1e-5) + ",45]";
  text += "]}";
  const auto fs = read_all(text);
  ASSERT_TRUE(fs.at(0).geometry);
  EXPECT_EQ(fs[0].geometry->lines[0].size(), static_cast<std::size_t>(n));
}

// ---------------------------------------------------------------------------------------------------------------
// Newline-delimited GeoJSON

TEST(NdjsonReader, OneFeaturePerLineWithBlankLinesAndCrlf) {
  ReaderOptions o;
  o.format = InputFormat::ndjson;
  const auto fs = read_all(
      "{\"type\":\"Feature\",\"id\":\"a\",\"geometry\":{\"type\":\"Point\",\"coordinates\":[1,2]}}\r\n"
      "\n"
      "{\"type\":\"Feature\",\"geometry\":{\"type\":\"Point\",\"coordinates\":[3,4]}}\n"
      "{\"type\":\"Feature\",\"geometry\":{\"type\":\"Point\",\"coordinates\":[3,\n",  // truncated last text
      o);
  ASSERT_EQ(fs.size(), 3u);
  EXPECT_EQ(fs[0].id, "a");
  EXPECT_EQ(fs[0].line, 1u);
  EXPECT_EQ(fs[1].id, "2");
  EXPECT_EQ(fs[1].line, 3u);
  ASSERT_TRUE(fs[1].geometry);
  EXPECT_EQ(fs[1].geometry->points[0].x, 3);
  EXPECT_FALSE(fs[2].geometry);
  EXPECT_THAT(fs[2].error, HasSubstr("line 4"));
}

TEST(NdjsonReader, Rfc8142RecordSeparators) {
  // RFC 8142 section 2: each GeoJSON text is preceded by RS (0x1E) and followed by LF; texts may span lines
  // (RFC 7464 section 2.1).
  const std::string rs = "\x1E";
  const auto fs = read_all(rs + R"({"type":"Point","coordinates":[1,2]})" + "\n" + rs +
                           "{\"type\":\"Feature\",\n\"geometry\":{\"type\":\"Point\",\"coordinates\":[5,6]}}\n");
  ASSERT_EQ(fs.size(), 2u);
  ASSERT_TRUE(fs[0].geometry) << fs[0].error;
  ASSERT_TRUE(fs[1].geometry) << fs[1].error;
  EXPECT_EQ(fs[1].geometry->points[0].y, 6);
}

// ---------------------------------------------------------------------------------------------------------------
// Sniffing

TEST(SniffFormat, RecognisesEachFormat) {
  EXPECT_EQ(sniff_format("{\"type\":\"FeatureCollection\",\n\"features\":[]}"), InputFormat::geojson);
  EXPECT_EQ(sniff_format("{\"type\":\"Feature\"}\n{\"type\":\"Feature\"}\n"), InputFormat::ndjson);
  EXPECT_EQ(sniff_format("\x1E{\"type\":\"Feature\"}\n"), InputFormat::ndjson);
  EXPECT_EQ(sniff_format("\xEF\xBB\xBF  {\"a\":\"}{\"}"), InputFormat::geojson);
  EXPECT_EQ(sniff_format("id,wkt\n1,POINT(1 2)\n"), InputFormat::csv);
  EXPECT_EQ(sniff_format("\"wkt\"\n\"POINT(1 2)\"\n"), InputFormat::csv);
  EXPECT_EQ(sniff_format("{\"type\":\"Feature\""), InputFormat::geojson);  // longer than the look-ahead
}

TEST(SniffFormat, ReaderSniffsAndReportsTheFormat) {
  std::istringstream in("wkt\nPOINT (1 2)\n");
  FeatureReader reader(in);
  EXPECT_EQ(reader.format(), InputFormat::automatic);
  const auto f = reader.next();
  EXPECT_EQ(reader.format(), InputFormat::csv);
  ASSERT_TRUE(f && f->geometry);
  EXPECT_EQ(f->geometry->points[0].y, 2);
  EXPECT_GT(reader.bytes_read(), 0u);
}

TEST(InputFormatNames, RoundTripAndRejectUnknown) {
  for (auto f : {InputFormat::automatic, InputFormat::geojson, InputFormat::ndjson, InputFormat::csv})
    EXPECT_EQ(parse_input_format(to_string(f)), f);
  EXPECT_EQ(parse_input_format("GeoJSONSeq"), InputFormat::ndjson);
  try {
    parse_input_format("shp");
    FAIL() << "no error";
  } catch (const Error& e) {
    EXPECT_EQ(e.code(), ErrorCode::invalid_argument);
  }
}

// ---------------------------------------------------------------------------------------------------------------
// WKT

TEST(Wkt, OgcSimpleFeaturesExamples) {
  // OGC 06-103r4 (Simple Feature Access part 1) section 7.2.5, Table 7: examples of WKT.
  Geometry g = parse_wkt("Point (10 10)");
  EXPECT_EQ(g.type, GeometryType::point);
  EXPECT_EQ(g.points.at(0).x, 10);

  g = parse_wkt("LineString ( 10.05 10.28 , 20.95 20.89 )");
  ASSERT_EQ(g.lines.size(), 1u);
  EXPECT_EQ(g.lines[0][1].y, 20.89);

  g = parse_wkt("Polygon( ( 10 10, 10 20, 20 20, 20 15, 10 10) )");
  ASSERT_EQ(g.polygons.size(), 1u);
  EXPECT_EQ(g.polygons[0].outer.size(), 5u);

  g = parse_wkt("MultiPoint ((10 10), (20 20))");
  EXPECT_EQ(g.type, GeometryType::multi_point);
  ASSERT_EQ(g.points.size(), 2u);
  EXPECT_EQ(g.points[1].x, 20);

  g = parse_wkt("MultiLineString ( ( 10.05 10.28 , 20.95 20.89 ),( 20.95 20.89, 31.92 21.45) )");
  ASSERT_EQ(g.lines.size(), 2u);
  EXPECT_EQ(g.lines[1][1].x, 31.92);

  g = parse_wkt("MultiPolygon ( ((10 10, 10 20, 20 20, 20 15 , 10 10), (50 40, 50 50, 60 50, 60 40, 50 40) ), "
                "((60 60, 70 70, 80 60, 60 60 ) ) )");
  ASSERT_EQ(g.polygons.size(), 2u);
  EXPECT_EQ(g.polygons[0].holes.size(), 1u);
  EXPECT_EQ(g.polygons[1].outer.size(), 4u);

  g = parse_wkt("Point Z (10 10 5)");
  EXPECT_EQ(g.points.at(0).y, 10);
  g = parse_wkt("Point ZM (10 10 5 40)");
  EXPECT_EQ(g.points.at(0).x, 10);
  g = parse_wkt("Point M (10 10 40)");
  EXPECT_EQ(g.points.at(0).y, 10);
}

TEST(Wkt, CommonVariants) {
  // Common practice: unparenthesised MULTIPOINT members, glued dimension tags, untagged 3D, any case, exponents.
  Geometry g = parse_wkt("MULTIPOINT (1 2, 3 4)");
  ASSERT_EQ(g.points.size(), 2u);
  EXPECT_EQ(g.points[1].y, 4);
  g = parse_wkt("pointz(1 2 3)");
  EXPECT_EQ(g.points.at(0).x, 1);
  g = parse_wkt("LINESTRING(1 2 3, 4 5 6)");
  EXPECT_EQ(g.lines.at(0)[1].y, 5);
  g = parse_wkt("  point(-1.5e1 +2.5E-1)  ");
  EXPECT_EQ(g.points.at(0).x, -15);
  EXPECT_EQ(g.points.at(0).y, 0.25);
  g = parse_wkt("POINT(.5 1.)");
  EXPECT_EQ(g.points.at(0).x, 0.5);
}

TEST(Wkt, EmptyGeometries) {
  // OGC 06-103r4 section 7.2: the EMPTY keyword.
  EXPECT_TRUE(parse_wkt("POINT EMPTY").points.empty());
  EXPECT_TRUE(parse_wkt("LINESTRING EMPTY").lines.empty());
  EXPECT_TRUE(parse_wkt("POLYGON Z EMPTY").polygons.empty());
  EXPECT_TRUE(parse_wkt("MULTIPOLYGON EMPTY").polygons.empty());
  const Geometry g = parse_wkt("MULTIPOLYGON (EMPTY, ((0 0, 1 0, 1 1, 0 0)))");
  ASSERT_EQ(g.polygons.size(), 2u);
  EXPECT_TRUE(g.polygons[0].outer.empty());
  EXPECT_EQ(g.polygons[1].outer.size(), 4u);
}

TEST(Wkt, MalformedTextIsRejectedWithAPosition) {
  const std::vector<std::pair<std::string, std::string>> cases = {
      {"", "expected a geometry type keyword at character 1"},
      {"GEOMETRYCOLLECTION (POINT (1 2))", "GEOMETRYCOLLECTION is not supported"},
      {"CIRCULARSTRING (0 0, 1 1, 2 0)", "not supported"},
      {"TRIANGLE ((0 0, 1 0, 0 1, 0 0))", "not supported"},
      {"BLOB (1 2)", "unknown geometry type \"BLOB\""},
      {"POINT (1)", "expected a number, found \")\""},
      {"POINT (NaN 2)", "not a number: \"NaN\""},
      {"POINT (inf 2)", "not a number: \"inf\""},
      {"POINT (1e999 2)", "number out of range"},
      {"POINT (1 2", "text ends where \")\" belongs"},
      {"POINT (1 2) x", "unexpected \"x\" after the geometry at character 13"},
      {"POINT Z (1 2)", "2 ordinates where the dimension says 3"},
      {"POINT (1 2 3 4 5)", "more than 4 ordinates"},
      {"POLYGON (0 0, 1 0, 1 1, 0 0)", "expected \"(\""},
      {"LINESTRING (1 2,, 3 4)", "expected a number"},
      {"POINT (1e 2)", "malformed exponent"},
      {"MULTIPOINT (EMPTY)", "EMPTY point"},
      {"SRID=4326;POINT(1 2)", "unknown geometry type \"SRID\""},
  };
  for (const auto& [text, expected] : cases) {
    try {
      parse_wkt(text);
      ADD_FAILURE() << "accepted: " << text;
    } catch (const Error& e) {
      EXPECT_EQ(e.code(), ErrorCode::parse);
      EXPECT_THAT(e.what(), HasSubstr(expected)) << text;
    }
  }
}

TEST(Wkt, RandomBytesNeverCrash) {
  // Robustness: random printable strings built from WKT's alphabet either parse or throw Error.
  std::mt19937 rng(12345);
  const std::string alphabet = "POINTLESGYMUZE()(), 0123456789.-+eE";
  for (int k = 0; k < 20000; ++k) {
    std::string s;
    const int n = static_cast<int>(rng() % 40);
    for (int i = 0; i < n; ++i) s += alphabet[rng() % alphabet.size()];
    try {
      parse_wkt(s);
    } catch (const Error& e) {
      EXPECT_EQ(e.code(), ErrorCode::parse);
    }
  }
}

// ---------------------------------------------------------------------------------------------------------------
// CSV + WKT

TEST(CsvReader, Rfc4180QuotingAndLineBreaks) {
  // RFC 4180 section 2.5-2.7: quoted fields hold commas, CRLF and doubled quotes.
  ReaderOptions o;
  o.id_field = "name";
  const auto fs = read_all(
      "name,WKT,note\r\n"
      "\"b\"\"bb\",\"POLYGON ((0 0, 1 0, 1 1, 0 0))\",\"line\r\nbreak\"\r\n"
      "plain,POINT(3 4),x\r\n"
      "\"a,b\",\"MULTIPOINT ((1 2), (3 4))\",\r\n",
      o);
  ASSERT_EQ(fs.size(), 3u);
  EXPECT_EQ(fs[0].id, "b\"bb");
  ASSERT_TRUE(fs[0].geometry) << fs[0].error;
  EXPECT_EQ(fs[0].geometry->polygons.at(0).outer.size(), 4u);
  EXPECT_EQ(fs[1].id, "plain");
  EXPECT_EQ(fs[1].line, 4u);  // the quoted line break moved it down a line
  ASSERT_TRUE(fs[1].geometry);
  EXPECT_EQ(fs[2].id, "a,b");
  ASSERT_TRUE(fs[2].geometry) << fs[2].error;
}

TEST(CsvReader, BadRowsGiveInvalidFeaturesAndTheOthersAreRead) {
  const auto fs = read_all(
      "id,wkt\n"
      "1,POINT(1 2)\n"
      "2,POLYGON((0 0, 1 0, 1 1, 0 0))\n"          // unquoted commas: wrong field count
      "3,POINT(NaN 1)\n"
      "4,\n"                                         // empty geometry cell
      "5,\"GEOMETRYCOLLECTION(POINT(1 2))\"\n"
      "6,\"POINT(1 2)\"x\n"                          // text after a closing quote
      "7,POINT(5 6)\n"
      "8,\"POINT(1 2)\n");                           // unterminated quote at the end
  ASSERT_EQ(fs.size(), 8u);
  EXPECT_TRUE(fs[0].geometry);
  EXPECT_THAT(fs[1].error, HasSubstr("the record has 5 fields where the header has 2"));
  EXPECT_THAT(fs[1].error, HasSubstr("line 3"));
  EXPECT_THAT(fs[2].error, HasSubstr("not a number"));
  EXPECT_EQ(fs[2].declared_type, GeometryType::point);
  EXPECT_THAT(fs[3].error, HasSubstr("empty geometry cell"));
  EXPECT_THAT(fs[4].error, HasSubstr("GEOMETRYCOLLECTION"));
  EXPECT_THAT(fs[5].error, HasSubstr("after the closing quote"));
  ASSERT_TRUE(fs[6].geometry);
  EXPECT_EQ(fs[6].geometry->points[0].x, 5);
  EXPECT_THAT(fs[7].error, HasSubstr("unterminated quote"));
  for (std::size_t k = 0; k < fs.size(); ++k) EXPECT_EQ(fs[k].id, std::to_string(k + 1));
}

TEST(CsvReader, HeaderProblemsAreContainerErrors) {
  EXPECT_EQ(read_error_code("", {InputFormat::csv, "", "wkt"}), ErrorCode::parse);
  EXPECT_THAT(read_error_message("id,geom\n1,POINT(1 2)\n", {InputFormat::csv, "", "wkt"}),
              HasSubstr("no geometry column \"wkt\" (columns: id, geom)"));
  EXPECT_EQ(read_error_code("id,wkt\n1,POINT(1 2)\n", {InputFormat::csv, "name", "wkt"}),
            ErrorCode::invalid_argument);
  // A different geometry column, matched case-insensitively, with a UTF-8 byte order mark.
  const auto fs = read_all("\xEF\xBB\xBFGeom,ID\nPOINT(1 2),p1\n", {InputFormat::csv, "id", "geom"});
  ASSERT_EQ(fs.size(), 1u);
  EXPECT_EQ(fs[0].id, "p1");
  EXPECT_TRUE(fs[0].geometry);
}

TEST(Reader, EmptyGeometriesComeBackAsErrorsWithTheirType) {
  // OGC 06-103r4 EMPTY and RFC 7946 section 3.1 empty "coordinates": nothing to measure.
  auto fs = read_all("wkt\nPOLYGON EMPTY\n\"MULTIPOINT EMPTY\"\n");
  ASSERT_EQ(fs.size(), 2u);
  EXPECT_FALSE(fs[0].geometry);
  EXPECT_THAT(fs[0].error, HasSubstr("empty geometry"));
  EXPECT_EQ(fs[0].declared_type, GeometryType::polygon);
  EXPECT_EQ(fs[1].declared_type, GeometryType::multi_point);
  fs = read_all(R"({"type":"LineString","coordinates":[]})");
  ASSERT_EQ(fs.size(), 1u);
  EXPECT_THAT(fs[0].error, HasSubstr("empty geometry"));
  EXPECT_EQ(fs[0].declared_type, GeometryType::line_string);
}

TEST(CsvReader, HeaderOnlyHasNoFeatures) { EXPECT_TRUE(read_all("id,wkt\r\n").empty()); }

// ---------------------------------------------------------------------------------------------------------------
// Writing

TEST(FormatNumber, ShortestRoundTrip) {
  // C++17 [charconv.to.chars]: without a precision, the shortest representation that reads back exactly.
  EXPECT_EQ(format_number(0.1), "0.1");
  EXPECT_EQ(format_number(-2.5), "-2.5");
  EXPECT_EQ(format_number(0.0), "0");
  EXPECT_EQ(format_number(5e6), "5000000");        // plain decimals from 1e-5 to 1e15
  EXPECT_EQ(format_number(0.000125), "0.000125");
  EXPECT_EQ(format_number(1.5e-7), "1.5e-07");     // exponent notation outside
  EXPECT_EQ(format_number(2e20), "2e+20");
  EXPECT_EQ(format_number(std::numeric_limits<double>::quiet_NaN()), "");
  EXPECT_EQ(format_number(std::numeric_limits<double>::infinity()), "");
  std::mt19937_64 rng(7);
  std::uniform_real_distribution<double> u(-1e12, 1e12);
  for (int k = 0; k < 10000; ++k) {
    const double v = u(rng) * std::pow(10.0, static_cast<int>(rng() % 40) - 20);
    const std::string s = format_number(v);
    EXPECT_EQ(std::strtod(s.c_str(), nullptr), v) << s;
  }
}

TEST(CsvField, Rfc4180Section2Quoting) {
  EXPECT_EQ(csv_field("abc"), "abc");
  EXPECT_EQ(csv_field(""), "");
  EXPECT_EQ(csv_field("a,b"), "\"a,b\"");               // section 2.6
  EXPECT_EQ(csv_field("b\"bb"), "\"b\"\"bb\"");         // section 2.7
  EXPECT_EQ(csv_field("line\r\nbreak"), "\"line\r\nbreak\"");  // section 2.6
  EXPECT_EQ(csv_field("lf\nonly"), "\"lf\nonly\"");
}

TEST(ResultCsvWriter, ColumnsAreTheContractedListInOrder) {
  // The column list of issue 3 (the CSV contract), verbatim.
  const std::vector<std::string> expected = {
      "id", "geometry_type", "status", "message", "vertices", "true_length_m", "grid_length_m", "length_error_m",
      "length_error_ppm", "length_from_edges_m", "length_from_scale_m", "length_from_datum_m",
      "length_from_height_m", "true_area_m2", "grid_area_m2", "area_error_m2", "area_error_ppm",
      "area_from_edges_m2", "area_from_scale_m2", "area_from_datum_m2", "area_from_height_m2", "scale_min",
      "scale_max", "areal_scale_min", "areal_scale_max", "angular_distortion_max_deg", "convergence_min_deg",
      "convergence_max_deg", "bearing_error_max_arcsec", "verdict"};
  EXPECT_EQ(ResultCsvWriter::columns(), expected);
  std::ostringstream out;
  ResultCsvWriter w(out);
  w.write_header();
  // Parsing the record back with the library's own reader would be circular: the tests' own RFC 4180 reader.
  const auto rows = parse_csv(out.str());
  ASSERT_EQ(rows.size(), 1u);
  EXPECT_EQ(rows[0], expected);
  EXPECT_EQ(out.str().substr(out.str().size() - 2), "\r\n");  // RFC 4180 section 2.1
}

TEST(ResultCsvWriter, RowsHaveEmptyCellsWhereAValueDoesNotApply) {
  AuditResult line;
  line.type = GeometryType::line_string;
  line.vertices = 3;
  line.message = "note, with \"quotes\"";
  Budget b;
  b.reference = 1000.125;
  b.grid = 1000.5;
  b.error = 0.375;
  b.error_ppm = 374.953;
  b.from_edges = 0.001;
  b.from_scale = 0.374;
  line.length = b;
  line.distortion = Distortion{0.9996, 1.0004, 0.9992, 1.0008, 0.02, -1.5, 1.25};
  line.bearing_error_max_arcsec = 12.5;
  line.verdict = Verdict::fail;

  AuditResult point;
  point.type = GeometryType::point;
  point.vertices = 1;
  point.distortion = Distortion{0.9996, 0.9996, 0.9992, 0.9992, 0, 0.5, 0.5};

  AuditResult unmeasurable;
  unmeasurable.type = GeometryType::polygon;
  unmeasurable.status = Status::unmeasurable;
  Budget a;
  a.reference = 5e6;
  a.grid = std::numeric_limits<double>::quiet_NaN();
  a.error = a.error_ppm = a.grid;
  unmeasurable.area = a;

  std::ostringstream out;
  ResultCsvWriter w(out, "\n");
  w.write_row("L-1", line);
  w.write_row("P,1", point);
  w.write_row("U", unmeasurable);
  w.write_unread_row("X", "bad\nthing", GeometryType::polygon);
  w.write_unread_row("Y", "worse");

  // The tests' own RFC 4180 reader: the message of X holds a line break inside quotes.
  const auto records = parse_csv(out.str());
  ASSERT_EQ(records.size(), 5u);
  const auto& cols = ResultCsvWriter::columns();
  auto cell = [&](std::size_t row, const std::string& name) {
    const auto& fields = records[row];
    EXPECT_EQ(fields.size(), cols.size()) << "record " << row;
    const auto k = static_cast<std::size_t>(std::find(cols.begin(), cols.end(), name) - cols.begin());
    return k < fields.size() ? fields[k] : std::string("<missing>");
  };
  EXPECT_EQ(cell(0, "id"), "L-1");
  EXPECT_EQ(cell(0, "geometry_type"), "LineString");
  EXPECT_EQ(cell(0, "status"), "ok");
  EXPECT_EQ(cell(0, "message"), "note, with \"quotes\"");
  EXPECT_EQ(cell(0, "vertices"), "3");
  EXPECT_EQ(cell(0, "true_length_m"), "1000.125");
  EXPECT_EQ(cell(0, "grid_length_m"), "1000.5");
  EXPECT_EQ(cell(0, "length_error_ppm"), "374.953");
  EXPECT_EQ(cell(0, "length_from_datum_m"), "0");
  EXPECT_EQ(cell(0, "true_area_m2"), "");
  EXPECT_EQ(cell(0, "area_from_height_m2"), "");
  EXPECT_EQ(cell(0, "scale_min"), "0.9996");
  EXPECT_EQ(cell(0, "convergence_min_deg"), "-1.5");
  EXPECT_EQ(cell(0, "bearing_error_max_arcsec"), "12.5");
  EXPECT_EQ(cell(0, "verdict"), "fail");

  EXPECT_EQ(cell(1, "id"), "P,1");
  EXPECT_EQ(cell(1, "true_length_m"), "");
  EXPECT_EQ(cell(1, "true_area_m2"), "");
  EXPECT_EQ(cell(1, "areal_scale_max"), "0.9992");
  EXPECT_EQ(cell(1, "bearing_error_max_arcsec"), "");
  EXPECT_EQ(cell(1, "verdict"), "");

  EXPECT_EQ(cell(2, "status"), "unmeasurable");
  EXPECT_EQ(cell(2, "true_area_m2"), "5000000");
  EXPECT_EQ(cell(2, "grid_area_m2"), "");  // NaN → empty
  EXPECT_EQ(cell(2, "area_error_ppm"), "");
  EXPECT_EQ(cell(2, "scale_max"), "");

  EXPECT_EQ(cell(3, "geometry_type"), "Polygon");
  EXPECT_EQ(cell(3, "status"), "invalid");
  EXPECT_EQ(cell(3, "message"), "bad\nthing");
  EXPECT_EQ(cell(3, "vertices"), "");
  EXPECT_EQ(cell(4, "geometry_type"), "");
  EXPECT_EQ(cell(4, "verdict"), "");
}

TEST(ResultTable, CellsAreWhatTheWriterPrints) {
  AuditResult r;
  r.type = GeometryType::polygon;
  r.vertices = 5;
  r.message = "outside the area of use";
  Budget b;
  b.reference = 12345.678;
  b.grid = 12346.1;
  b.error = b.grid - b.reference;
  b.error_ppm = 1e6 * b.error / b.reference;
  r.area = b;
  r.length = b;
  r.verdict = Verdict::fail;
  r.failed = {"area<=10ppm", "length<=20ppm"};

  for (const bool factor : {false, true}) {
    r.combined_factor = 0.99987;
    const ResultRow row = result_row("A,1", r, factor);
    const auto& columns = result_columns(factor);
    ASSERT_EQ(row.size, columns.size());
    EXPECT_EQ(columns.back().name, factor ? "combined_factor" : "verdict");
    std::ostringstream out;
    ResultCsvWriter w(out);
    w.with_combined_factor(factor);
    w.write_row("A,1", r);
    const auto records = parse_csv(out.str());
    ASSERT_EQ(records.size(), 1u);
    ASSERT_EQ(records[0].size(), columns.size());
    for (std::size_t k = 0; k < row.size; ++k) {
      const std::string expected = columns[k].kind == ColumnKind::text ? std::string(row.cells[k].text)
                                                                        : format_number(row.cells[k].number);
      EXPECT_EQ(records[0][k], expected) << columns[k].name;
    }
  }
  const ResultRow unread = unread_row("X", "bad", GeometryType::line_string);
  EXPECT_EQ(unread.cells[1].text, "LineString");
  EXPECT_EQ(unread.cells[2].text, "invalid");
  EXPECT_EQ(unread.cells[3].text, "bad");
  EXPECT_TRUE(std::isnan(unread.cells[4].number));  // vertices unknown
}

// ---- ReaderOptions::height_from_z -------------------------------------------------------------------------------
// RFC 7946 section 3.1.1: a position's optional third number is its altitude (height above the WGS 84 ellipsoid);
// ISO 19125-1 / OGC 06-103r4 section 7 (WKT): "Z" positions carry X Y Z, "M" ones X Y M, "ZM" ones X Y Z M. The
// height is the arithmetic mean of the positions' Z as given (closing positions included), worked by hand here.

ReaderOptions z_heights(InputFormat format = InputFormat::automatic) {
  ReaderOptions o;
  o.format = format;
  o.height_from_z = true;
  return o;
}

TEST(HeightFromZ, GeoJsonAltitudesGiveTheMeanOfThePositions) {
  const auto fs = read_all(R"({"type":"FeatureCollection","features":[
    {"type":"Feature","properties":{},"geometry":{"type":"Polygon","coordinates":
      [[[10,50,100],[10.01,50,110],[10.01,50.01,130],[10,50,100]]]}},
    {"type":"Feature","properties":{},"geometry":{"type":"LineString","coordinates":[[1,2,300],[3,4,400,5]]}},
    {"type":"Point","coordinates":[1,2,-42.5]}]})", z_heights());
  ASSERT_EQ(fs.size(), 3u);
  for (const auto& f : fs) ASSERT_TRUE(f.geometry) << f.error;
  ASSERT_TRUE(fs[0].height_m);
  EXPECT_DOUBLE_EQ(*fs[0].height_m, (100.0 + 110 + 130 + 100) / 4);
  EXPECT_DOUBLE_EQ(*fs[1].height_m, 350.0);  // the fourth number (a measure) is not a height
  EXPECT_DOUBLE_EQ(*fs[2].height_m, -42.5);
  EXPECT_EQ(fs[0].geometry->polygons[0].outer[1].x, 10.01);  // the plane coordinates are read as always
}

TEST(HeightFromZ, PositionsWithoutAltitudeMakeThatFeatureInvalidAndTheNextIsRead) {
  const auto fs = read_all(R"({"type":"FeatureCollection","features":[
    {"type":"Feature","id":"mixed","properties":{},"geometry":{"type":"LineString","coordinates":[[1,2,3],[3,4],[5,6]]}},
    {"type":"Feature","id":"flat","properties":{},"geometry":{"type":"LineString","coordinates":[[1,2],[3,4]]}},
    {"type":"Feature","id":"ok","properties":{},"geometry":{"type":"LineString","coordinates":[[1,2,7],[3,4,9]]}}]})",
                           z_heights());
  ASSERT_EQ(fs.size(), 3u);
  EXPECT_FALSE(fs[0].geometry);
  EXPECT_THAT(fs[0].error, HasSubstr("2 of 3 positions have no Z"));
  EXPECT_FALSE(fs[1].geometry);
  EXPECT_THAT(fs[1].error, HasSubstr("no position has a Z"));
  ASSERT_TRUE(fs[2].geometry) << fs[2].error;
  EXPECT_DOUBLE_EQ(*fs[2].height_m, 8.0);
  // Without the option the same input has no height at all.
  EXPECT_FALSE(read_all(R"({"type":"Point","coordinates":[1,2,3]})").at(0).height_m);
}

TEST(HeightFromZ, WktDimensionsZAndZmCarryAHeightMDoesNot) {
  const auto fs = read_all("id,wkt\n"
                           "z,\"POLYGON Z ((10 50 20, 10.01 50 22, 10.01 50.01 27, 10 50 20))\"\n"
                           "zm,\"LINESTRING ZM (1 2 10 999, 3 4 30 999)\"\n"
                           "glued,\"POINTZ (1 2 5)\"\n"
                           "bare3,\"LINESTRING (1 2 4, 3 4 8)\"\n"
                           "m,\"LINESTRING M (1 2 10, 3 4 30)\"\n"
                           "flat,\"LINESTRING (1 2, 3 4)\"\n",
                           z_heights(InputFormat::csv));
  ASSERT_EQ(fs.size(), 6u);
  for (std::size_t k = 0; k < 4; ++k) {
    ASSERT_TRUE(fs[k].geometry) << fs[k].id << ": " << fs[k].error;
    ASSERT_TRUE(fs[k].height_m) << fs[k].id;
  }
  EXPECT_DOUBLE_EQ(*fs[0].height_m, (20.0 + 22 + 27 + 20) / 4);
  EXPECT_DOUBLE_EQ(*fs[1].height_m, 20.0);
  EXPECT_DOUBLE_EQ(*fs[2].height_m, 5.0);
  EXPECT_DOUBLE_EQ(*fs[3].height_m, 6.0);  // three ordinates without a keyword: X Y Z (common practice)
  for (std::size_t k = 4; k < 6; ++k) {
    EXPECT_FALSE(fs[k].geometry) << fs[k].id;
    EXPECT_THAT(fs[k].error, HasSubstr("line " + std::to_string(k + 2) + ": no position has a Z")) << fs[k].id;
  }
}

TEST(HeightFromZ, NotTogetherWithAHeightField) {
  ReaderOptions o = z_heights();
  o.height_field = "elev";
  EXPECT_EQ(read_error_code(R"({"type":"Point","coordinates":[1,2,3]})", o), ErrorCode::invalid_argument);
  EXPECT_THAT(read_error_message(R"({"type":"Point","coordinates":[1,2,3]})", o), HasSubstr("not both"));
}

// ---- format_number(value, bound), format_bound ------------------------------------------------------------------
// Worked by hand: the decimal place is that of a tenth of the bound's leading digit (common practice: quote a
// figure to about a tenth of its uncertainty), never coarser than units; a bound is rounded up to 2 digits.

TEST(NumberText, AFigureIsRoundedToATenthOfItsBound) {
  EXPECT_EQ(format_number(-1.02e-12, 2.3e-9), "0");  // noise under the bound
  EXPECT_EQ(format_number(3.5e-8, 2.3e-9), "0.000000035");
  EXPECT_EQ(format_number(1234.56789123456, 1e-6), "1234.5678912");
  EXPECT_EQ(format_number(1234.56789123456, 9.9e-7), "1234.56789123");
  EXPECT_EQ(format_number(1.5, 0.04), "1.5");  // trailing zeros dropped
  EXPECT_EQ(format_number(-2.0004, 0.04), "-2");
  EXPECT_EQ(format_number(123456.789, 7), "123456.8");
  EXPECT_EQ(format_number(123456.789, 700), "123457");  // never coarser than units
  EXPECT_EQ(format_number(0.1, 1e-30), "0.1");           // more digits than a double holds: in full
  EXPECT_EQ(format_number(0.1, std::numeric_limits<double>::quiet_NaN()), "0.1");
  EXPECT_EQ(format_number(0.1, 0), "0.1");
  EXPECT_EQ(format_number(std::numeric_limits<double>::quiet_NaN(), 1), "");
}

TEST(NumberText, ABoundIsRoundedUpToTwoDigits) {
  EXPECT_EQ(format_bound(1.234e-9), "1.3e-09");
  EXPECT_EQ(format_bound(0.0411), "0.042");
  EXPECT_EQ(format_bound(0.042), "0.042");
  EXPECT_EQ(format_bound(1234), "1300");
  EXPECT_EQ(format_bound(99.5), "100");
  EXPECT_EQ(format_bound(0), "0");
  EXPECT_EQ(format_bound(std::numeric_limits<double>::quiet_NaN()), "");
  // Never below the bound, over many magnitudes (the printed decimal read back).
  std::mt19937_64 rng(1414);
  std::uniform_real_distribution<double> exponent(-15, 12);
  for (int k = 0; k < 2000; ++k) {
    const double b = std::pow(10.0, exponent(rng));
    const std::string text = format_bound(b);
    EXPECT_GE(std::stod(text), b) << text;
    EXPECT_LE(std::stod(text), b * 1.1 + 1e-300) << text;
  }
}

}  // namespace
}  // namespace gridtruth
