// Readers keep going past damage (issue 17 item 4): where they resume, what they say was skipped, and the
// spreadsheet-safe CSV cells and printable messages of the writers.
#include <gmock/gmock.h>
#include <gtest/gtest.h>

#include <sstream>
#include <string>
#include <vector>

#include "gridtruth/crs.hpp"
#include "gridtruth/error.hpp"
#include "gridtruth/io.hpp"

namespace {
using namespace gridtruth;
using ::testing::HasSubstr;

struct ReadBack {
  std::vector<InputFeature> features;
  std::vector<InputProblem> problems;
};

ReadBack read_back(const std::string& text, ReaderOptions options = {}) {
  std::istringstream in(text);
  FeatureReader reader(in, std::move(options));
  ReadBack r;
  while (auto f = reader.next()) r.features.push_back(std::move(*f));
  r.problems = reader.problems();
  return r;
}

const std::string point = R"({"type":"Point","coordinates":[1,2]})";
std::string feature(const std::string& id) {
  return R"({"type":"Feature","id":")" + id + R"(","properties":{"name":"n)" + id + R"("},"geometry":)" + point + "}";
}

TEST(ReaderResync, MissingQuoteInFeatureTwoOfFourLosesOnlyFeatureTwo) {
  std::string text = R"({"type":"FeatureCollection","features":[)" + feature("1") + "," + feature("2") + "," +
                     feature("3") + "," + feature("4") + "]}";
  const std::size_t second = text.find(R"({"type":"Feature","id":"2")");
  const std::size_t third = text.find(R"({"type":"Feature","id":"3")");
  text.erase(text.find(R"("n2")") + 3, 1);  // the closing quote of "n2" (RFC 8259 section 7: strings are quoted)
  const ReadBack r = read_back(text);
  ASSERT_EQ(r.features.size(), 4u);
  EXPECT_EQ(r.features[0].id, "1");
  EXPECT_FALSE(r.features[1].geometry);
  EXPECT_THAT(r.features[1].error, HasSubstr("may be lost"));
  EXPECT_EQ(r.features[2].id, "3");
  EXPECT_TRUE(r.features[2].geometry);
  EXPECT_EQ(r.features[3].id, "4");
  ASSERT_EQ(r.problems.size(), 1u);
  EXPECT_EQ(r.problems[0].first_byte, second);
  EXPECT_EQ(r.problems[0].end_byte, third - 1);  // the "," before feature 3 belongs to the span
  EXPECT_EQ(r.problems[0].position, 2u);
  // The bytes of the span are named in the row (0-based offsets).
  EXPECT_THAT(r.features[1].error, HasSubstr("bytes " + std::to_string(second) + " to " + std::to_string(third - 1)));
}

TEST(ReaderResync, UnmatchedBracketNamesItsByteAndTheCollectionStillCloses) {
  // Byte numbers are 0-based offsets: the "}" below is the 23rd byte, offset 22 (kept from the container test).
  const std::string unmatched = R"({"features":[{"a":[1,2}]})";
  ASSERT_EQ(unmatched.find('}'), 22u);
  const ReadBack r = read_back(unmatched);
  ASSERT_EQ(r.features.size(), 1u);
  EXPECT_THAT(r.features[0].error, HasSubstr("unmatched \"}\" at byte 22"));
  ASSERT_EQ(r.problems.size(), 1u);
  EXPECT_EQ(r.problems[0].end_byte, unmatched.rfind(']'));  // the final "]}" closes the array and the object
}

TEST(ReaderResync, TextBetweenOrAfterFeaturesIsADamagedSpanOrEnd) {
  ReadBack r = read_back(R"({"type":"FeatureCollection","features":[)" + feature("1") + " x," + feature("2") + "]}");
  ASSERT_EQ(r.features.size(), 3u);
  EXPECT_EQ(r.features[0].id, "1");
  EXPECT_THAT(r.features[1].error, HasSubstr("between features"));
  EXPECT_EQ(r.features[2].id, "2");
  r = read_back(R"({"type":"FeatureCollection","features":[)" + feature("1") + "]} trailing");
  ASSERT_EQ(r.features.size(), 1u);
  ASSERT_EQ(r.problems.size(), 1u);
  EXPECT_EQ(r.problems[0].position, 0u);  // no row: nothing after the last feature can be a lost feature
  EXPECT_EQ(r.problems[0].first_byte, r.problems[0].end_byte);
  r = read_back(R"({"type":"FeatureCollection","features":[)" + feature("1"));
  ASSERT_EQ(r.features.size(), 1u);
  ASSERT_EQ(r.problems.size(), 1u);
  EXPECT_THAT(r.problems[0].message, HasSubstr("truncated"));
}

TEST(ReaderResync, NestingIsCappedOnEveryPath) {
  auto nested = [](std::size_t depth) {
    return R"({"type":"Feature","properties":{"p":)" + std::string(depth, '[') + std::string(depth, ']') +
           R"(},"geometry":)" + point + "}";
  };
  // 250 array levels inside properties (252 in all) are read; 300 are refused, on the fast path, on the path
  // with a \u escape (nlohmann-json) and in a collection (the cutter), each with a message naming the nesting.
  EXPECT_TRUE(read_back(nested(250), {InputFormat::ndjson}).features.at(0).geometry);
  for (const std::string& text :
       {nested(300), nested(300).insert(1, R"("x":"\u00e9",)"), nested(75000)}) {
    const ReadBack r = read_back(text + "\n" + feature("after") + "\n", {InputFormat::ndjson});
    ASSERT_EQ(r.features.size(), 2u);
    EXPECT_THAT(r.features[0].error, HasSubstr("nested more than 256 levels"));
    EXPECT_TRUE(r.features[1].geometry);
  }
  const ReadBack c = read_back(R"({"type":"FeatureCollection","features":[)" + nested(75000) + "]}");
  ASSERT_EQ(c.features.size(), 1u);
  EXPECT_THAT(c.features[0].error, HasSubstr("levels deep"));
}

TEST(ReaderResync, CsvQuoteLeftOpenEndsItsRecordAtItsLine) {
  const ReadBack r = read_back(
      "id,wkt\n"
      "1,\"POINT (1 2)\"\n"
      "2,\"POINT (3 4)\n"  // closing quote missing (RFC 4180 section 2.7)
      "3,\"POINT (5 6)\"\n"
      "4,\"POINT (7 8)\"\n",
      {InputFormat::csv});
  ASSERT_EQ(r.features.size(), 4u);
  EXPECT_TRUE(r.features[0].geometry);
  EXPECT_THAT(r.features[1].error, HasSubstr("line 3"));
  EXPECT_THAT(r.features[1].error, HasSubstr("reading resumed on line 4"));
  ASSERT_TRUE(r.features[2].geometry);
  EXPECT_EQ(r.features[2].id, "3");
  EXPECT_EQ(r.features[2].geometry->points.at(0).x, 5);
  ASSERT_TRUE(r.features[3].geometry);
  EXPECT_EQ(r.features[3].line, 5u);
  ASSERT_EQ(r.problems.size(), 1u);
  EXPECT_EQ(r.problems[0].position, 2u);
}

TEST(ReaderMessages, InvalidUtf8AndLibraryPrefixesNeverReachAMessage) {
  // RFC 3629 section 3: 0xFF never appears in UTF-8; \xNN stands for it.
  const ReadBack r = read_back("{\"type\":\"Feature\",\"properties\":{},\"geometry\":{\"type\":\"\xFF\",\"coordinates\":[1,2]}}",
                               {InputFormat::ndjson});
  ASSERT_EQ(r.features.size(), 1u);
  EXPECT_EQ(r.features[0].error.find('\xFF'), std::string::npos);
  EXPECT_THAT(r.features[0].error, HasSubstr("\\xFF"));
  EXPECT_EQ(r.features[0].error.find("[json.exception"), std::string::npos);
}

TEST(ReaderMessages, ADirectoryIsNamedAsOne) {
  try {
    FeatureReader reader(std::string("/tmp"));
    reader.next();
    ADD_FAILURE() << "a directory was read";
  } catch (const Error& e) {
    EXPECT_THAT(e.what(), HasSubstr("is a directory"));
  }
}

TEST(CsvField, FormulaCellsGetALeadingQuoteAndNumbersStayNumbers) {
  // OWASP "CSV Injection" (owasp.org/www-community/attacks/CSV_Injection): cells starting with =, +, -, @, tab or
  // CR are prefixed with a single quote; RFC 4180 section 2.6 quoting applies after that.
  EXPECT_EQ(csv_field("=1+2"), "'=1+2");
  EXPECT_EQ(csv_field("@SUM(A1)"), "'@SUM(A1)");
  EXPECT_EQ(csv_field("+proj=utm"), "'+proj=utm");
  EXPECT_EQ(csv_field("-x"), "'-x");
  EXPECT_EQ(csv_field("\tx"), "'\tx");
  EXPECT_EQ(csv_field("=HYPERLINK(\"a\",\"b\")"), "\"'=HYPERLINK(\"\"a\"\",\"\"b\"\")\"");
  EXPECT_EQ(csv_field("-12.5"), "-12.5");
  EXPECT_EQ(csv_field("+3e2"), "+3e2");
  EXPECT_EQ(csv_field("-inf"), "'-inf");
  EXPECT_EQ(csv_field("a=b"), "a=b");
  EXPECT_EQ(csv_field("a,b"), "\"a,b\"");
}

TEST(CrsFileAccess, DataDirectoriesOnlyRefusesFilesElsewhere) {
  // The library default is PROJ's own behaviour; the setting is process-wide (crs.hpp).
  EXPECT_EQ(crs_file_access(), CrsFileAccess::any);
  set_crs_file_access(CrsFileAccess::data_directories);
  // /etc/passwd exists and is readable but is no init file of PROJ's data directories.
  EXPECT_THROW(describe_crs("+init=/etc/passwd:root"), Error);
  EXPECT_NO_THROW(describe_crs("EPSG:32615"));  // the database still opens
  set_crs_file_access(CrsFileAccess::any);
}

}  // namespace
