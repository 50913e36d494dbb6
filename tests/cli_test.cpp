// End-to-end tests of `gridtruth audit`: every option, every exit status, every reader, the CSV contract and the
// hostile-input list of issue 3. The executable is run as a user runs it, through the shell.
#include <gmock/gmock.h>
#include <gtest/gtest.h>
#include <stdlib.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <unistd.h>

#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <fstream>
#include <map>
#include <nlohmann/json.hpp>
#include <sstream>
#include <string>
#include <vector>
#include "test_files.hpp"

namespace {
using gridtruth::test_files::ScratchDir;
using gridtruth::test_files::slurp;
using gridtruth::test_files::spit;
using gridtruth::test_files::shell_quote;
using gridtruth::test_files::parse_csv;

using ::testing::HasSubstr;
using ::testing::StartsWith;

#ifdef GRIDTRUTH_CLI
const std::string cli = GRIDTRUTH_CLI;
#else
const std::string cli;
#endif
const std::string source_dir = GRIDTRUTH_SOURCE_DIR;
const std::string demo_geojson = source_dir + "/examples/data/habitat_survey.geojson";
const std::string demo_csv = source_dir + "/examples/data/habitat_survey.csv";

// The column list of issue 3, verbatim.
const std::vector<std::string> contract_columns = {
    "id", "geometry_type", "status", "message", "vertices", "true_length_m", "grid_length_m", "length_error_m",
    "length_error_ppm", "length_from_edges_m", "length_from_scale_m", "length_from_datum_m", "length_from_height_m",
    "true_area_m2", "grid_area_m2", "area_error_m2", "area_error_ppm", "area_from_edges_m2", "area_from_scale_m2",
    "area_from_datum_m2", "area_from_height_m2", "scale_min", "scale_max", "areal_scale_min", "areal_scale_max",
    "angular_distortion_max_deg", "convergence_min_deg", "convergence_max_deg", "bearing_error_max_arcsec",
    "verdict"};





struct CliRun {
  int status = -1;
  std::string out, err;
  std::vector<std::vector<std::string>> rows;  // parsed CSV of `out`, header included

  std::size_t column(const std::string& name) const {
    const auto it = std::find(contract_columns.begin(), contract_columns.end(), name);
    EXPECT_NE(it, contract_columns.end()) << name;
    return static_cast<std::size_t>(it - contract_columns.begin());
  }
  /// The cell of data row `row` (0-based, header excluded).
  std::string cell(std::size_t row, const std::string& name) const {
    if (row + 1 >= rows.size()) return "<no row>";
    const auto& r = rows[row + 1];
    const auto k = column(name);
    return k < r.size() ? r[k] : "<no cell>";
  }
  double number(std::size_t row, const std::string& name) const {
    const std::string c = cell(row, name);
    char* end = nullptr;
    const double v = std::strtod(c.c_str(), &end);
    EXPECT_TRUE(!c.empty() && end && *end == '\0') << name << " of row " << row << " is not a number: '" << c << "'";
    return v;
  }
  std::size_t data_rows() const { return rows.empty() ? 0 : rows.size() - 1; }
  /// The row whose id is `id`.
  std::size_t row_of(const std::string& id) const {
    for (std::size_t k = 1; k < rows.size(); ++k)
      if (!rows[k].empty() && rows[k][0] == id) return k - 1;
    ADD_FAILURE() << "no row with id " << id;
    return rows.size();
  }
};

class CliTest : public ::testing::Test {
 protected:
  void SetUp() override {
    if (cli.empty()) GTEST_SKIP() << "the gridtruth executable was not built";
    ASSERT_FALSE(dir_.empty());
  }

  std::string path(const std::string& name) const { return scratch_.path(name); }

  /// Runs `gridtruth ARGS` (each already a separate argument), with optional standard input.
  CliRun run(const std::vector<std::string>& args, const std::string* stdin_text = nullptr) {
    std::string cmd = shell_quote(cli);
    for (const auto& a : args) cmd += " " + shell_quote(a);
    const std::string in = path("stdin"), out = path("stdout"), err = path("stderr");
    if (stdin_text) spit(in, *stdin_text);
    cmd += " < " + (stdin_text ? shell_quote(in) : std::string("/dev/null"));
    cmd += " > " + shell_quote(out) + " 2> " + shell_quote(err);
    const int raw = std::system(cmd.c_str());
    CliRun r;
    r.status = WIFEXITED(raw) ? WEXITSTATUS(raw) : -1;
    r.out = slurp(out);
    r.err = slurp(err);
    r.rows = parse_csv(r.out);
    // Under the sanitizer preset a report can hide behind an expected exit status of 1: look for it.
    EXPECT_EQ(r.err.find("Sanitizer"), std::string::npos) << r.err;
    EXPECT_EQ(r.err.find("runtime error:"), std::string::npos) << r.err;
    return r;
  }
  CliRun audit(std::vector<std::string> args, const std::string* stdin_text = nullptr) {
    args.insert(args.begin(), "audit");
    return run(args, stdin_text);
  }
  CliRun audit_text(const std::string& file_name, const std::string& text, std::vector<std::string> args) {
    spit(path(file_name), text);
    args.insert(args.begin(), path(file_name));
    return audit(args);
  }

  ScratchDir scratch_{"cli"};
  const std::string& dir_ = scratch_.dir();
};

/// One line on standard error, starting "gridtruth: ", nothing on standard output: the exit-2 contract.
void expect_unusable(const CliRun& r, const std::string& reason) {
  EXPECT_EQ(r.status, 2) << r.err;
  EXPECT_THAT(r.err, StartsWith("gridtruth: "));
  EXPECT_EQ(std::count(r.err.begin(), r.err.end(), '\n'), 1) << r.err;
  EXPECT_THAT(r.err, HasSubstr(reason));
  EXPECT_EQ(r.out, "");
}

std::string feature(const std::string& id, const std::string& geometry) {
  return R"({"type":"Feature","id":")" + id + R"(","properties":{},"geometry":)" + geometry + "}";
}

std::string collection(const std::vector<std::string>& features) {
  std::string s = R"({"type":"FeatureCollection","features":[)";
  for (std::size_t k = 0; k < features.size(); ++k) s += (k ? ",\n" : "\n") + features[k];
  return s + "\n]}\n";
}

// A 2 km × 1.5 km square near 95.4°W 44.1°N, inside UTM zone 15N (common practice: a parcel-sized feature).
const std::string small_square =
    R"({"type":"Polygon","coordinates":[[[-95.40,44.10],[-95.375,44.10],[-95.375,44.1135],[-95.40,44.1135],[-95.40,44.10]]]})";

// ---------------------------------------------------------------------------------------------------------------
// Help, version and exit status 2

TEST_F(CliTest, HelpDocumentsEveryOptionTheCautionAndExamples) {
  const CliRun r = run({"audit", "--help"});
  EXPECT_EQ(r.status, 0);
  for (const char* option : {"INPUT", "--crs", "--source-crs", "--height", "--tolerance", "--densify-tolerance",
                             "--id-field", "--wkt-field", "--out", "--summary", "--units", "--format", "--threads"})
    EXPECT_THAT(r.out, HasSubstr(option));
  for (const auto& c : contract_columns) EXPECT_THAT(r.out, HasSubstr(c));
  EXPECT_THAT(r.out, HasSubstr("support, and do not replace, licensed survey practice and local codes"));
  EXPECT_THAT(r.out, HasSubstr("Examples:"));
  EXPECT_THAT(r.out, HasSubstr("Exit status:"));

  const CliRun top = run({"--help"});
  EXPECT_EQ(top.status, 0);
  EXPECT_THAT(top.out, HasSubstr("audit"));
  EXPECT_THAT(top.out, HasSubstr("licensed survey practice"));

  const CliRun version = run({"--version"});
  EXPECT_EQ(version.status, 0);
  EXPECT_THAT(version.out, StartsWith("gridtruth "));
}

TEST_F(CliTest, BadOptionsExitTwoWithOneLine) {
  expect_unusable(run({}), "subcommand");
  expect_unusable(run({"survey"}), "survey");
  expect_unusable(audit({demo_geojson}), "--crs");
  expect_unusable(audit({demo_geojson, "--crs", "EPSG:32615", "--colour", "red"}), "--colour");
  expect_unusable(audit({demo_geojson, "--crs", "EPSG:32615", "--tolerance", "area=lots"}), "area=lots");
  expect_unusable(audit({demo_geojson, "--crs", "EPSG:32615", "--tolerance", "volume=1%"}), "volume");
  expect_unusable(audit({demo_geojson, "--crs", "EPSG:32615", "--units", "furlong"}), "furlong");
  expect_unusable(audit({demo_geojson, "--crs", "EPSG:32615", "--format", "shapefile"}), "shapefile");
  expect_unusable(audit({demo_geojson, "--crs", "EPSG:32615", "--height", "nan"}), "--height");
  expect_unusable(audit({demo_geojson, "--crs", "EPSG:32615", "--height", "tall"}), "--height");
  expect_unusable(audit({demo_geojson, "--crs", "EPSG:32615", "--densify-tolerance", "0"}), "--densify-tolerance");
  expect_unusable(audit({demo_geojson, "--crs", "EPSG:32615", "--densify-tolerance", "-1"}), "--densify-tolerance");
}

TEST_F(CliTest, UnknownOrUnsuitableCrsExitsTwo) {
  expect_unusable(audit({demo_geojson, "--crs", "EPSG:99999999"}), "EPSG:99999999");
  expect_unusable(audit({demo_geojson, "--crs", "not a crs at all"}), "not a crs at all");
  // A geographic CRS has no grid to audit (DESIGN.md: the target is a projected CRS).
  expect_unusable(audit({demo_geojson, "--crs", "EPSG:4326"}), "EPSG:4326");
  expect_unusable(audit({demo_geojson, "--crs", "EPSG:32615", "--source-crs", "EPSG:bogus"}), "EPSG:bogus");
}

TEST_F(CliTest, UnreadableInputExitsTwoAndWritesNothing) {
  const std::string out = path("rows.csv");
  expect_unusable(audit({path("missing.geojson"), "--crs", "EPSG:32615", "--out", out}), "missing.geojson");
  EXPECT_FALSE(std::ifstream(out).good());

  expect_unusable(audit_text("empty.geojson", "", {"--crs", "EPSG:32615", "--format", "geojson"}), "empty");
  expect_unusable(audit_text("garbage.json", "this is not JSON", {"--crs", "EPSG:32615", "--format", "geojson"}),
                  "byte 0");
  // Brackets that do not match inside the "features" array no longer stop the run (issue 17 item 4): see
  // DamagedInputKeepsGoingAndSaysWhatWasSkipped. Damage with not one feature in it still exits 2, writing nothing.
  expect_unusable(audit_text("trailing.geojson", R"({"type":"FeatureCollection","features":[]} trailing)",
                             {"--crs", "EPSG:32615", "--out", out}),
                  "no feature could be read");
  EXPECT_FALSE(std::ifstream(out).good());
  // RFC 7946 section 3.3: a FeatureCollection has a "features" array.
  expect_unusable(audit_text("nofeatures.geojson", R"({"type":"FeatureCollection"})", {"--crs", "EPSG:32615"}),
                  "features");
  expect_unusable(audit_text("nowkt.csv", "id,geom\n1,POINT(1 2)\n", {"--crs", "EPSG:32615"}), "wkt");
  expect_unusable(audit_text("noid.csv", "id,wkt\n1,POINT(1 2)\n", {"--crs", "EPSG:32615", "--id-field", "name"}),
                  "name");
  const std::string empty_stdin;
  expect_unusable(audit({"-", "--crs", "EPSG:32615"}, &empty_stdin), "standard input");
}

TEST_F(CliTest, UnwritableOutputExitsTwo) {
  expect_unusable(audit({demo_geojson, "--crs", "EPSG:32615", "--out", path("no/such/dir/rows.csv")}), "rows.csv");
  expect_unusable(audit({demo_geojson, "--crs", "EPSG:32615", "--out", path("rows.csv"), "--summary",
                         path("no/such/dir/summary.json")}),
                  "summary.json");
  EXPECT_FALSE(std::ifstream(path("rows.csv")).good());
}

// ---------------------------------------------------------------------------------------------------------------
// Exit status 0 and 1

TEST_F(CliTest, ExitZeroWhenEveryFeatureIsOkAndWithinTolerance) {
  // UTM's scale factor is within 0.9996 and about 1.001 inside a zone at these latitudes (Snyder 1987, ch. 8),
  // so a parcel's area is within 0.25 % of the truth.
  CliRun r = audit_text("ok.geojson", collection({feature("P", small_square)}),
                     {"--crs", "EPSG:32615", "--tolerance", "area=0.25%"});
  EXPECT_EQ(r.status, 0) << r.err;
  EXPECT_EQ(r.cell(0, "status"), "ok");
  EXPECT_EQ(r.cell(0, "verdict"), "pass");
  // No tolerance: no verdict, still 0.
  r = audit_text("ok.geojson", collection({feature("P", small_square)}), {"--crs", "EPSG:32615"});
  EXPECT_EQ(r.status, 0) << r.err;
  EXPECT_EQ(r.cell(0, "verdict"), "");
}

TEST_F(CliTest, ExitOneForAFailedToleranceAnInvalidOrAnUnmeasurableFeature) {
  // Fail: near the central meridian UTM shrinks areas by about 800 ppm (k0 = 0.9996, Snyder 1987, ch. 8).
  const std::string near_cm =
      R"({"type":"Polygon","coordinates":[[[-93.01,45.0],[-92.99,45.0],[-92.99,45.01],[-93.01,45.01],[-93.01,45.0]]]})";
  CliRun r = audit_text("fail.geojson", collection({feature("F", near_cm)}),
                     {"--crs", "EPSG:32615", "--tolerance", "area=100ppm"});
  EXPECT_EQ(r.status, 1) << r.err;
  EXPECT_EQ(r.cell(0, "status"), "ok");
  EXPECT_EQ(r.cell(0, "verdict"), "fail");
  EXPECT_THAT(r.cell(0, "message"), HasSubstr("area"));
  EXPECT_LT(r.number(0, "area_error_ppm"), -700);
  EXPECT_GT(r.number(0, "area_error_ppm"), -900);

  // Invalid: a latitude beyond 90°.
  r = audit_text("invalid.geojson",
                 collection({feature("ok", small_square), feature("bad", R"({"type":"Point","coordinates":[-93,91]})")}),
                 {"--crs", "EPSG:32615"});
  EXPECT_EQ(r.status, 1);
  EXPECT_EQ(r.cell(0, "status"), "ok");
  EXPECT_EQ(r.cell(1, "status"), "invalid");
  EXPECT_THAT(r.cell(1, "message"), HasSubstr("latitude"));

  // Unmeasurable: the transverse Mercator is infinite 90° from its central meridian on the equator
  // (Snyder 1987, ch. 8); UTM zone 15N's central meridian is 93°W, so 3°W on the equator cannot be projected.
  r = audit_text("unmeasurable.geojson", collection({feature("far", R"({"type":"Point","coordinates":[-3,0]})")}),
                 {"--crs", "EPSG:32615"});
  EXPECT_EQ(r.status, 1);
  EXPECT_EQ(r.cell(0, "status"), "unmeasurable");
  EXPECT_NE(r.cell(0, "message"), "");
}

TEST_F(CliTest, EmptyCollectionIsNotAFailure) {
  const CliRun r = audit_text("none.geojson", collection({}), {"--crs", "EPSG:32615"});
  EXPECT_EQ(r.status, 0) << r.err;
  ASSERT_EQ(r.rows.size(), 1u);
  EXPECT_EQ(r.rows[0], contract_columns);
  EXPECT_THAT(r.err, HasSubstr("0 read"));
}

// ---------------------------------------------------------------------------------------------------------------
// The CSV contract

TEST_F(CliTest, CsvHeaderRowsAndEmptyCellsFollowTheContract) {
  const CliRun r = audit({demo_geojson, "--crs", "EPSG:32615", "--tolerance", "area=0.1%,length=1:10000"});
  EXPECT_EQ(r.status, 1);  // the demo holds an invalid feature on purpose
  ASSERT_FALSE(r.rows.empty());
  EXPECT_EQ(r.rows[0], contract_columns);
  // RFC 4180 section 2.1: every record ends with CRLF.
  std::size_t lf = 0, crlf = 0;
  for (std::size_t k = 0; k < r.out.size(); ++k)
    if (r.out[k] == '\n') {
      ++lf;
      if (k > 0 && r.out[k - 1] == '\r') ++crlf;
    }
  EXPECT_EQ(lf, crlf);
  // One row per input feature, in input order (the demo's ids as written in the file).
  const std::vector<std::string> ids = {"HU-01", "HU-02", "HU-03", "HU-04", "HU-05", "HU-06",
                                        "HU-07", "PL-01", "PL-02", "SM-01", "SM-02", "SM-03"};
  ASSERT_EQ(r.data_rows(), ids.size());
  for (std::size_t k = 0; k < ids.size(); ++k) {
    EXPECT_EQ(r.cell(k, "id"), ids[k]);
    EXPECT_EQ(r.rows[k + 1].size(), contract_columns.size()) << ids[k];
  }
  const std::vector<std::string> length_cols = {"true_length_m", "grid_length_m", "length_error_m",
                                                "length_error_ppm", "length_from_edges_m", "length_from_scale_m",
                                                "length_from_datum_m", "length_from_height_m"};
  const std::vector<std::string> area_cols = {"true_area_m2", "grid_area_m2", "area_error_m2", "area_error_ppm",
                                              "area_from_edges_m2", "area_from_scale_m2", "area_from_datum_m2",
                                              "area_from_height_m2"};
  for (std::size_t k = 0; k < ids.size(); ++k) {
    const std::string type = r.cell(k, "geometry_type");
    const std::string status = r.cell(k, "status");
    if (status == "invalid") {
      for (std::size_t c = 5; c < contract_columns.size(); ++c) EXPECT_EQ(r.rows[k + 1][c], "") << ids[k];
      continue;
    }
    ASSERT_EQ(status, "ok") << ids[k];
    const bool point = type == "Point" || type == "MultiPoint";
    const bool line = type == "LineString" || type == "MultiLineString";
    for (const auto& c : length_cols) EXPECT_EQ(r.cell(k, c).empty(), point) << ids[k] << " " << c;
    for (const auto& c : area_cols) EXPECT_EQ(r.cell(k, c).empty(), point || line) << ids[k] << " " << c;
    // Issue 3: a point gets its distortion statistics.
    for (const char* c : {"scale_min", "scale_max", "areal_scale_min", "areal_scale_max"})
      EXPECT_GT(r.number(k, c), 0.99) << ids[k];
    if (point) EXPECT_EQ(r.cell(k, "verdict"), "") << "no tolerance applies to a point";
    else EXPECT_THAT(r.cell(k, "verdict"), ::testing::AnyOf("pass", "fail"));
  }
  const std::size_t hu07 = r.row_of("HU-07");
  EXPECT_EQ(r.cell(hu07, "status"), "invalid");
  EXPECT_THAT(r.cell(hu07, "message"), HasSubstr("distinct"));
}

TEST_F(CliTest, EachFigureIsRoundedToATenthOfItsBoundAndNoFurther) {
  // Issue 14: no round-off noise (e.g. -1.02e-12) past a figure's bound. The rounded CSV against the same run in
  // full (--all-digits, with the bounds): every rounded figure lies within half its printed quantum, which is at
  // most a tenth of its bound, of the full value (common practice: quote a figure to about a tenth of its
  // uncertainty); a figure smaller than that reads 0.
  const CliRun rounded = audit({demo_geojson, "--crs", "EPSG:32615", "--height", "250", "--bounds"});
  const CliRun full = audit({demo_geojson, "--crs", "EPSG:32615", "--height", "250", "--bounds", "--all-digits"});
  ASSERT_EQ(rounded.rows.size(), full.rows.size());
  const auto& header = full.rows.at(0);
  auto index = [&](const std::string& name) {
    const auto it = std::find(header.begin(), header.end(), name);
    EXPECT_NE(it, header.end()) << name;
    return static_cast<std::size_t>(it - header.begin());
  };
  std::size_t checked = 0, zeroed = 0;
  for (std::size_t row = 1; row < full.rows.size(); ++row) {
    for (const std::string m : {"length", "area"}) {
      const std::string u = m == "length" ? "_m" : "_m2";
      const std::pair<std::string, std::string> figures[] = {
          {"true_" + m + u, "true_" + m + "_bound" + u},   {"grid_" + m + u, "grid_" + m + "_bound" + u},
          {m + "_error" + u, m + "_error_bound" + u},      {m + "_from_edges" + u, m + "_from_edges_bound" + u},
          {m + "_from_scale" + u, m + "_from_scale_bound" + u}, {m + "_from_height" + u, m + "_from_height_bound" + u}};
      for (const auto& [figure, bound_name] : figures) {
        const std::string& text = rounded.rows[row][index(figure)];
        const std::string& exact = full.rows[row][index(figure)];
        EXPECT_EQ(text.empty(), exact.empty()) << figure;
        if (exact.empty()) continue;
        const double bound = std::stod(full.rows[row][index(bound_name)]);
        ASSERT_GT(bound, 0) << figure;
        const double value = std::stod(text), full_value = std::stod(exact);
        const std::size_t dot = text.find('.');
        const int decimals = dot == std::string::npos ? 0 : static_cast<int>(text.size() - dot - 1);
        const double quantum = std::pow(10.0, -decimals);
        EXPECT_LE(std::fabs(value - full_value), 0.5 * quantum * (1 + 1e-9) + 1e-15 * std::fabs(full_value))
            << figure << " " << text << " vs " << exact;
        EXPECT_LE(std::fabs(value - full_value), bound / 20 + 1e-15 * std::fabs(full_value)) << figure;
        EXPECT_EQ(text.find_first_of("eE"), std::string::npos) << figure << " " << text;  // no noise exponent
        if (std::fabs(full_value) < bound / 20 && text == "0") ++zeroed;
        ++checked;
      }
    }
  }
  EXPECT_GT(checked, 50u);
  EXPECT_GT(zeroed, 0u);  // some figure of the demo lies under a twentieth of its bound and prints 0
}

TEST_F(CliTest, NumbersObeyTheBudgetIdentities) {
  // DESIGN.md: error = G − R = from_edges + from_scale + from_datum + from_height; ppm = 10⁶ (G − R) / R.
  // In full (--all-digits): the identities of the doubles themselves, not of their rounded prints.
  const CliRun r = audit({demo_geojson, "--crs", "EPSG:32615", "--height", "250", "--all-digits"});
  for (std::size_t k = 0; k < r.data_rows(); ++k) {
    if (r.cell(k, "status") != "ok") continue;
    for (const std::string m : {"length", "area"}) {
      const std::string u = m == "length" ? "_m" : "_m2";
      if (r.cell(k, "true_" + m + u).empty()) continue;
      const double R = r.number(k, "true_" + m + u), G = r.number(k, "grid_" + m + u);
      const double e = r.number(k, m + "_error" + u);
      EXPECT_NEAR(e, G - R, 1e-9 * std::fabs(R)) << r.cell(k, "id");
      EXPECT_NEAR(r.number(k, m + "_error_ppm"), 1e6 * (G - R) / R, 1e-6) << r.cell(k, "id");
      const double parts = r.number(k, m + "_from_edges" + u) + r.number(k, m + "_from_scale" + u) +
                           r.number(k, m + "_from_datum" + u) + r.number(k, m + "_from_height" + u);
      EXPECT_NEAR(parts, e, 1e-9 * std::fabs(R) + 1e-9) << r.cell(k, "id");
    }
  }
}

TEST_F(CliTest, QuotingOfIdsAndMessages) {
  // RFC 4180 sections 2.6 and 2.7: fields with commas, quotes or line breaks are quoted, quotes doubled.
  const std::string text = collection({
      R"({"type":"Feature","id":"lot 4, \"north\"","properties":{},"geometry":)" + small_square + "}",
      R"({"type":"Feature","id":"two\nlines","properties":{},"geometry":{"type":"Point","coordinates":["x",1]}})",
  });
  const CliRun r = audit_text("quotes.geojson", text, {"--crs", "EPSG:32615"});
  EXPECT_THAT(r.out, HasSubstr("\"lot 4, \"\"north\"\"\""));
  ASSERT_EQ(r.data_rows(), 2u);
  EXPECT_EQ(r.cell(0, "id"), "lot 4, \"north\"");
  EXPECT_EQ(r.cell(1, "id"), "two\nlines");
  EXPECT_EQ(r.cell(1, "status"), "invalid");
  EXPECT_EQ(r.cell(1, "geometry_type"), "Point");
  EXPECT_THAT(r.cell(1, "message"), HasSubstr("string"));
}

// ---------------------------------------------------------------------------------------------------------------
// Readers: GeoJSON, newline-delimited GeoJSON, CSV + WKT, standard input

std::string demo_as_ndjson(const std::string& geojson, bool record_separators) {
  const auto doc = nlohmann::json::parse(geojson);
  std::string out;
  for (const auto& f : doc["features"]) out += (record_separators ? "\x1E" : "") + f.dump() + "\n";
  return out;
}

TEST_F(CliTest, EveryReaderGivesTheSameRowsForTheSameFeatures) {
  const std::vector<std::string> common = {"--crs", "EPSG:32615", "--tolerance", "area=0.1%"};
  auto with = [&](std::vector<std::string> first) {
    first.insert(first.end(), common.begin(), common.end());
    return first;
  };
  const CliRun geojson = audit(with({demo_geojson}));
  ASSERT_EQ(geojson.data_rows(), 12u);
  const std::string nd = demo_as_ndjson(slurp(demo_geojson), false);
  const std::string rs = demo_as_ndjson(slurp(demo_geojson), true);
  const CliRun ndjson = audit_text("demo.ndjson", nd, with({"--format", "ndjson"}));
  const CliRun sniffed_nd = audit_text("demo.txt", nd, with({}));
  const CliRun seq = audit_text("demo.geojsons", rs, with({}));  // RFC 8142 record separators
  const CliRun csv = audit(with({demo_csv, "--id-field", "unit_id"}));
  const std::string csv_text = slurp(demo_csv);
  const std::string geojson_text = slurp(demo_geojson);
  const CliRun csv_stdin = audit(with({"-", "--id-field", "unit_id"}), &csv_text);
  const CliRun geojson_stdin = audit(with({"-"}), &geojson_text);
  const CliRun nd_stdin = audit(with({"-", "--format", "ndjson"}), &nd);
  for (const CliRun* r : {&ndjson, &sniffed_nd, &seq, &csv, &csv_stdin, &geojson_stdin, &nd_stdin}) {
    EXPECT_EQ(r->status, geojson.status) << r->err;
    EXPECT_EQ(r->rows, geojson.rows) << r->err;
  }
  EXPECT_THAT(ndjson.err, HasSubstr("(ndjson)"));
  EXPECT_THAT(sniffed_nd.err, HasSubstr("(ndjson)"));
  EXPECT_THAT(csv.err, HasSubstr("(csv)"));
  EXPECT_THAT(geojson_stdin.err, HasSubstr("standard input (geojson)"));
}

TEST_F(CliTest, IdFieldAndWktField) {
  // The contract: GeoJSON feature id, else the --id-field property, else the 1-based position.
  const std::string text = collection({
      R"({"type":"Feature","id":"given","properties":{"tag":"T1"},"geometry":)" + small_square + "}",
      R"({"type":"Feature","properties":{"tag":"T2"},"geometry":)" + small_square + "}",
      R"({"type":"Feature","properties":{},"geometry":)" + small_square + "}",
  });
  CliRun r = audit_text("ids.geojson", text, {"--crs", "EPSG:32615", "--id-field", "tag"});
  ASSERT_EQ(r.data_rows(), 3u);
  EXPECT_EQ(r.cell(0, "id"), "given");
  EXPECT_EQ(r.cell(1, "id"), "T2");
  EXPECT_EQ(r.cell(2, "id"), "3");
  r = audit_text("ids.geojson", text, {"--crs", "EPSG:32615"});
  EXPECT_EQ(r.cell(1, "id"), "2");

  const std::string csv = "Name,Shape\r\nalpha,\"POLYGON ((-95.40 44.10, -95.375 44.10, -95.375 44.1135, "
                          "-95.40 44.1135, -95.40 44.10))\"\r\nbeta,POINT (-93.5 44.2)\r\n";
  r = audit_text("shapes.csv", csv, {"--crs", "EPSG:32615", "--wkt-field", "shape", "--id-field", "name"});
  EXPECT_EQ(r.status, 0) << r.err;
  ASSERT_EQ(r.data_rows(), 2u);
  EXPECT_EQ(r.cell(0, "id"), "alpha");
  EXPECT_EQ(r.cell(0, "geometry_type"), "Polygon");
  EXPECT_EQ(r.cell(1, "id"), "beta");
  // The same polygon read from GeoJSON and from WKT gives the same numbers.
  const CliRun g = audit_text("one.geojson", collection({feature("alpha", small_square)}), {"--crs", "EPSG:32615"});
  EXPECT_EQ(g.rows.at(1), r.rows.at(1));
}

// ---------------------------------------------------------------------------------------------------------------
// Options that change the numbers

TEST_F(CliTest, OutWritesTheFileAndNothingToStandardOutput) {
  const CliRun r = audit({demo_geojson, "--crs", "EPSG:32615", "--out", path("rows.csv")});
  EXPECT_EQ(r.status, 1);
  EXPECT_EQ(r.out, "");
  const CliRun s = audit({demo_geojson, "--crs", "EPSG:32615"});
  EXPECT_EQ(slurp(path("rows.csv")), s.out);
  // Standard error holds the summary, never a CSV row, and no progress line when it is not a terminal.
  EXPECT_THAT(r.err, HasSubstr("12 read, 11 ok, 1 invalid, 0 unmeasurable"));
  EXPECT_EQ(r.err.find('\r'), std::string::npos);
  EXPECT_THAT(r.err, HasSubstr("licensed survey practice and local codes"));
}

TEST_F(CliTest, ProgressLineOnlyOnATerminalAndOnlyAfterASecond) {
  // Issue 3: a progress line on standard error for inputs that take more than a second, not when standard
  // error is not a terminal. script(1) (util-linux) gives the command a terminal.
  if (std::system("command -v script > /dev/null 2>&1") != 0) GTEST_SKIP() << "script(1) is not installed";
  std::string big;
  for (int k = 0; k < 150000; ++k) {
    const double lon = -95.9 + (k % 580) * 0.01, lat = 30 + (k / 580) * 0.07;
    big += R"({"type":"Polygon","coordinates":[[[)" + std::to_string(lon) + "," + std::to_string(lat) + "],[" +
           std::to_string(lon + 0.01) + "," + std::to_string(lat) + "],[" + std::to_string(lon + 0.01) + "," +
           std::to_string(lat + 0.01) + "],[" + std::to_string(lon) + "," + std::to_string(lat) + "]]]}\n";
  }
  spit(path("big.ndjson"), big);
  const std::string command = shell_quote(cli) + " audit " + shell_quote(path("big.ndjson")) +
                              " --crs EPSG:32615 --threads 1 --out " + shell_quote(path("big.csv"));
  const auto start = std::chrono::steady_clock::now();
  const int raw = std::system(("script -qec " + shell_quote(command) + " /dev/null > " +
                               shell_quote(path("tty.txt")) + " 2>&1")
                                  .c_str());
  const double seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
  ASSERT_TRUE(WIFEXITED(raw));
  EXPECT_EQ(WEXITSTATUS(raw), 0);
  const std::string tty = slurp(path("tty.txt"));
  EXPECT_THAT(tty, HasSubstr("150000 read"));
  if (seconds > 2) EXPECT_THAT(tty, HasSubstr("features audited in")) << "took " << seconds << " s";
  // The same run without a terminal: no progress line.
  const CliRun plain = audit({path("big.ndjson"), "--crs", "EPSG:32615", "--threads", "1", "--out", path("big.csv")});
  EXPECT_EQ(plain.err.find("features audited in"), std::string::npos);
  EXPECT_EQ(plain.err.find('\r'), std::string::npos);
}

TEST_F(CliTest, ThreadsKeepInputOrderAndResults) {
  // Audits are independent per feature (DESIGN.md), so the rows cannot depend on the number of workers.
  const CliRun one = audit({demo_geojson, "--crs", "EPSG:32615", "--threads", "1"});
  const CliRun two = audit({demo_geojson, "--crs", "EPSG:32615", "--threads", "2"});
  EXPECT_EQ(one.status, 1);
  EXPECT_EQ(one.out, two.out);
  EXPECT_EQ(one.data_rows(), 12u);
  expect_unusable(audit({demo_geojson, "--crs", "EPSG:32615", "--threads", "many"}), "--threads");
}

TEST_F(CliTest, StandardInputToStandardOutputLosesNoRowAtAnyThreadCount) {
  // Regression (issue 17, 2026-12-02): std::cin was tied to std::cout, so the reader thread flushed std::cout while
  // the writer wrote it; `cat x.ndjson | gridtruth audit -` gave 100 248 rows for 10^5 features, duplicated, torn
  // and missing ones, with exit status 0. Every feature read yields exactly one row, in input order (DESIGN.md).
  constexpr int features = 100000;
  std::string text;
  text.reserve(features * 200);
  for (int k = 0; k < features; ++k) {
    const double lon = -95.5 + 0.9 * (k % 1000) / 1000.0, lat = 44.0 + 0.9 * (k / 1000) / 100.0;
    char line[300];
    std::snprintf(line, sizeof line,
                  R"({"type":"Feature","id":"f%d","properties":{},"geometry":{"type":"Polygon","coordinates":)"
                  R"([[[%.6f,%.6f],[%.6f,%.6f],[%.6f,%.6f],[%.6f,%.6f],[%.6f,%.6f]]]}})"
                  "\n",
                  k, lon, lat, lon + 0.001, lat, lon + 0.001, lat + 0.001, lon, lat + 0.001, lon, lat);
    text += line;
  }
  spit(path("in.ndjson"), text);
  std::string first_output;
  for (const char* threads : {"1", "2", "4"}) {
    SCOPED_TRACE(std::string("--threads ") + threads);
    // A pipe in and standard output out, as a user's shell pipeline has them.
    const std::string cmd = "cat " + shell_quote(path("in.ndjson")) + " | " + shell_quote(cli) +
                            " audit - --crs EPSG:32615 --threads " + threads + " > " + shell_quote(path("out.csv")) +
                            " 2> " + shell_quote(path("err.txt"));
    const int raw = std::system(cmd.c_str());
    ASSERT_TRUE(WIFEXITED(raw));
    EXPECT_EQ(WEXITSTATUS(raw), 0) << slurp(path("err.txt"));
    const std::string out = slurp(path("out.csv"));
    const auto rows = parse_csv(out);
    ASSERT_EQ(rows.size(), static_cast<std::size_t>(features) + 1);
    int wrong_id = 0, torn = 0;
    for (int k = 0; k < features; ++k) {
      const auto& row = rows[static_cast<std::size_t>(k) + 1];
      if (row.size() != rows[0].size()) ++torn;
      if (row.empty() || row[0] != "f" + std::to_string(k)) ++wrong_id;
    }
    EXPECT_EQ(torn, 0);
    EXPECT_EQ(wrong_id, 0);
    if (first_output.empty()) first_output = out;
    else EXPECT_TRUE(out == first_output) << "rows differ from those of one thread";
  }
}

TEST_F(CliTest, HeightLiftsTheTruthByTheGaussianRadius) {
  // DESIGN.md / common practice: area × (1 + h/R_G)², with R_G = √(M·N) between 6.33e6 m and 6.40e6 m on
  // WGS 84 at any latitude.
  const std::string one = collection({feature("P", small_square)});
  const CliRun flat = audit_text("h.geojson", one, {"--crs", "EPSG:32615"});
  const CliRun high = audit_text("h.geojson", one, {"--crs", "EPSG:32615", "--height", "1000"});
  const double ratio = high.number(0, "true_area_m2") / flat.number(0, "true_area_m2");
  EXPECT_GT(ratio, std::pow(1 + 1000 / 6.40e6, 2));
  EXPECT_LT(ratio, std::pow(1 + 1000 / 6.33e6, 2));
  EXPECT_EQ(high.cell(0, "grid_area_m2"), flat.cell(0, "grid_area_m2"));  // the grid does not change
  EXPECT_NE(high.number(0, "area_from_height_m2"), 0);
  EXPECT_EQ(flat.number(0, "area_from_height_m2"), 0);
}

TEST_F(CliTest, DensifyToleranceChangesOnlyTheEdgePart) {
  // DESIGN.md: G (straight chords) does not depend on densification; D does, within the tolerance.
  const std::string one = collection({feature("P", small_square)});
  const CliRun fine = audit_text("d.geojson", one, {"--crs", "EPSG:32615", "--densify-tolerance", "0.0001"});
  const CliRun coarse = audit_text("d.geojson", one, {"--crs", "EPSG:32615", "--densify-tolerance", "0.5"});
  EXPECT_EQ(fine.status, 0);
  EXPECT_EQ(coarse.status, 0);
  EXPECT_EQ(fine.cell(0, "grid_area_m2"), coarse.cell(0, "grid_area_m2"));
  EXPECT_EQ(fine.cell(0, "true_area_m2"), coarse.cell(0, "true_area_m2"));
  // The edge part is at most the tolerance times the perimeter (7 km).
  EXPECT_NEAR(fine.number(0, "area_from_edges_m2"), coarse.number(0, "area_from_edges_m2"), 0.5 * 7000);
}

TEST_F(CliTest, SourceCrsAndTheDatumTransformationAreReported) {
  const std::string one = collection({feature("P", small_square)});
  // NAD83 coordinates onto a WGS 84 grid: a datum transformation is involved.
  const CliRun r = audit_text("s.geojson", one,
                           {"--crs", "EPSG:32615", "--source-crs", "EPSG:4269", "--summary", path("s.json")});
  EXPECT_NE(r.status, 2) << r.err;
  const auto j = nlohmann::json::parse(slurp(path("s.json")));
  EXPECT_EQ(j["source_crs"]["definition"], "EPSG:4269");
  EXPECT_THAT(j["source_crs"]["name"].get<std::string>(), HasSubstr("NAD83"));
  EXPECT_THAT(j["target_crs"]["name"].get<std::string>(), HasSubstr("UTM zone 15N"));
  EXPECT_FALSE(j["datum_transformation"]["is_identity"].get<bool>());
  EXPECT_FALSE(j["datum_transformation"]["name"].get<std::string>().empty());
  EXPECT_TRUE(j["datum_transformation"].contains("accuracy_m"));
  EXPECT_THAT(r.err, HasSubstr("datum transformation: "));
  EXPECT_THAT(r.err, HasSubstr("NAD83"));
}

TEST_F(CliTest, SummaryJsonMatchesTheRows) {
  const CliRun r = audit({demo_geojson, "--crs", "EPSG:32615", "--tolerance", "area=0.1%", "--summary", path("s.json")});
  const auto j = nlohmann::json::parse(slurp(path("s.json")));
  std::map<std::string, int> count;
  double true_area = 0, grid_area = 0, true_length = 0;
  std::vector<std::pair<double, std::string>> by_ppm;
  for (std::size_t k = 0; k < r.data_rows(); ++k) {
    ++count[r.cell(k, "status")];
    ++count[r.cell(k, "verdict")];
    if (r.cell(k, "status") != "ok") continue;
    const std::string type = r.cell(k, "geometry_type");
    if (type == "Polygon" || type == "MultiPolygon") {
      true_area += r.number(k, "true_area_m2");
      grid_area += r.number(k, "grid_area_m2");
      by_ppm.emplace_back(std::fabs(r.number(k, "area_error_ppm")), r.cell(k, "id"));
    } else if (type == "LineString" || type == "MultiLineString") {
      true_length += r.number(k, "true_length_m");
      by_ppm.emplace_back(std::fabs(r.number(k, "length_error_ppm")), r.cell(k, "id"));
    }
  }
  EXPECT_EQ(j["counts"]["read"], r.data_rows());
  EXPECT_EQ(j["counts"]["ok"], count["ok"]);
  EXPECT_EQ(j["counts"]["invalid"], count["invalid"]);
  EXPECT_EQ(j["counts"]["unmeasurable"], count["unmeasurable"]);
  EXPECT_EQ(j["counts"]["pass"], count["pass"]);
  EXPECT_EQ(j["counts"]["fail"], count["fail"]);
  EXPECT_EQ(j["exit_status"], r.status);
  EXPECT_NEAR(j["totals"]["true_area"].get<double>(), true_area, 1e-6 * true_area);
  EXPECT_NEAR(j["totals"]["grid_area"].get<double>(), grid_area, 1e-6 * grid_area);
  EXPECT_NEAR(j["totals"]["true_length"].get<double>(), true_length, 1e-6 * true_length);
  std::sort(by_ppm.rbegin(), by_ppm.rend());
  const auto& worst = j["worst_features"];
  ASSERT_EQ(worst.size(), std::min<std::size_t>(10, by_ppm.size()));
  for (std::size_t k = 0; k < worst.size(); ++k) EXPECT_EQ(worst[k]["id"], by_ppm[k].second);
  EXPECT_EQ(j["source_crs"]["id"], "EPSG:4326");
  EXPECT_EQ(j["target_crs"]["id"], "EPSG:32615");
  EXPECT_TRUE(j["datum_transformation"]["is_identity"].get<bool>());
  EXPECT_EQ(j["options"]["tolerances"][0], "area<=1000ppm");
  EXPECT_THAT(j["caution"].get<std::string>(), HasSubstr("licensed survey practice"));
}

TEST_F(CliTest, UnitsConvertTheSummaryTotals) {
  // Hectare = 10 000 m² (SI); international acre = 43 560 ft² with the foot 0.3048 m = 4 046.856 422 4 m²;
  // US survey acre = 4 046.872 609 874 m², foot 1200/3937 m (NIST; 85 FR 62698, 2020).
  const auto total = [&](const std::string& units) {
    audit({demo_geojson, "--crs", "EPSG:32615", "--units", units, "--summary", path(units + ".json")});
    return nlohmann::json::parse(slurp(path(units + ".json")));
  };
  const auto m = total("metric"), ha = total("hectare"), ac = total("acre"), us = total("us-survey-acre");
  const double area_m2 = m["totals"]["true_area"].get<double>();
  const double length_m = m["totals"]["true_length"].get<double>();
  EXPECT_EQ(m["units"]["area_unit"], "m2");
  EXPECT_NEAR(ha["totals"]["true_area"].get<double>(), area_m2 / 1e4, 1e-9 * area_m2);
  EXPECT_NEAR(ac["totals"]["true_area"].get<double>(), area_m2 / 4046.8564224, 1e-9 * area_m2);
  EXPECT_NEAR(us["totals"]["true_area"].get<double>(), area_m2 / 4046.872609874, 1e-9 * area_m2);
  EXPECT_NEAR(ac["totals"]["true_length"].get<double>(), length_m / 0.3048, 1e-9 * length_m);
  EXPECT_NEAR(us["totals"]["true_length"].get<double>(), length_m * 3937 / 1200, 1e-9 * length_m);
  EXPECT_EQ(ha["totals"]["area_error_ppm"], m["totals"]["area_error_ppm"]);  // ppm has no unit
  // The CSV's SI columns stay as they are whatever --units says; the unit's columns follow them (issue 14: six
  // for acres, checked against the SI ones in KeptFieldsAndUnitColumnsFollowTheAuditColumns).
  const CliRun a = audit({demo_geojson, "--crs", "EPSG:32615", "--units", "acre"});
  const CliRun b = audit({demo_geojson, "--crs", "EPSG:32615"});
  ASSERT_EQ(a.rows.size(), b.rows.size());
  for (std::size_t k = 0; k < a.rows.size(); ++k) {
    ASSERT_EQ(a.rows[k].size(), b.rows[k].size() + 6) << k;
    EXPECT_EQ(std::vector<std::string>(a.rows[k].begin(), a.rows[k].begin() + b.rows[k].size()), b.rows[k]) << k;
  }
  EXPECT_THAT(a.err, HasSubstr(" ac"));
}

// ---------------------------------------------------------------------------------------------------------------
// Hostile input (issue 3): one row per feature, the bad ones invalid with a message naming the problem, the good
// ones still audited.

TEST_F(CliTest, HostileGeoJsonFeatures) {
  std::string huge = R"({"type":"LineString","coordinates":[)";
  for (int k = 0; k < 50000; ++k) huge += (k ? ",[" : "[") + std::to_string(-95.0 + k * 1e-5) + ",44.5]";
  huge += "]}";
  const std::vector<std::pair<std::string, std::string>> bad = {
      {R"({"type":"Point","coordinates":[NaN,1]})", "malformed JSON"},
      {R"({"type":"Point","coordinates":[Infinity,1]})", "malformed JSON"},
      {R"({"type":"Point","coordinates":[1,2,]})", "malformed JSON"},  // RFC 8259: no trailing comma
      {"null", "null geometry"},
      {R"({"type":"GeometryCollection","geometries":[]})", "GeometryCollection"},
      {R"({"type":"Hexagon","coordinates":[1,2]})", "unknown geometry type"},
      {R"({"type":"Point","coordinates":["-93","44"]})", "string"},
      {R"({"type":"Point","coordinates":[null,44]})", "null"},
      {R"({"type":"Point","coordinates":[-93,95]})", "latitude"},
      {R"({"type":"Point","coordinates":[600,44]})", "longitude"},
      {R"({"type":"Polygon","coordinates":[[[-93,44],[-92.9,44],[-93,44],[-93,44]]]})", "distinct"},
      {R"({"type":"Polygon","coordinates":[]})", "empty"},
      {R"({"type":"LineString","coordinates":[]})", "empty"},
  };
  std::vector<std::string> features = {feature("good-first", small_square)};
  for (std::size_t k = 0; k < bad.size(); ++k) features.push_back(feature("bad-" + std::to_string(k), bad[k].first));
  // A self-intersecting (bow-tie) ring is invalid (OGC 06-103r4 6.1.11.1: rings are simple; issue 17, where it
  // was `ok` with a true area of 0); it must still give exactly one row.
  features.push_back(feature(
      "bowtie", R"({"type":"Polygon","coordinates":[[[-93,44],[-92.9,44.1],[-92.9,44],[-93,44.1],[-93,44]]]})"));
  features.push_back(feature("huge", huge));
  features.push_back(feature("good-last", small_square));
  const CliRun r = audit_text("hostile.geojson", collection(features), {"--crs", "EPSG:32615"});
  EXPECT_EQ(r.status, 1) << r.err;
  ASSERT_EQ(r.data_rows(), features.size()) << r.err;
  EXPECT_EQ(r.cell(0, "status"), "ok");
  for (std::size_t k = 0; k < bad.size(); ++k) {
    // A feature whose JSON cannot be parsed has no readable id: its 1-based position stands in.
    const bool unparsed = bad[k].second == "malformed JSON";
    EXPECT_EQ(r.cell(k + 1, "id"), unparsed ? std::to_string(k + 2) : "bad-" + std::to_string(k));
    EXPECT_EQ(r.cell(k + 1, "status"), "invalid") << bad[k].first;
    EXPECT_THAT(r.cell(k + 1, "message"), HasSubstr(bad[k].second)) << bad[k].first;
  }
  const std::size_t n = features.size();
  EXPECT_EQ(r.cell(n - 3, "id"), "bowtie");
  EXPECT_EQ(r.cell(n - 3, "status"), "invalid");
  EXPECT_THAT(r.cell(n - 3, "message"), HasSubstr("crosses itself"));
  EXPECT_EQ(r.cell(n - 2, "status"), "ok");
  EXPECT_EQ(r.cell(n - 2, "vertices"), "50000");
  EXPECT_EQ(r.cell(n - 1, "status"), "ok");
  EXPECT_THAT(r.err, HasSubstr(std::to_string(bad.size() + 1) + " invalid"));  // the bad ones and the bowtie
}

TEST_F(CliTest, TruncatedFilesKeepTheCompleteFeatures) {
  // GeoJSON cut inside its third feature: two rows ok, the third invalid and named as truncated.
  std::string text = collection({feature("a", small_square), feature("b", small_square), feature("c", small_square)});
  text.resize(text.rfind("-95.375"));
  CliRun r = audit_text("cut.geojson", text, {"--crs", "EPSG:32615"});
  EXPECT_EQ(r.status, 1) << r.err;
  ASSERT_EQ(r.data_rows(), 3u);
  EXPECT_EQ(r.cell(0, "status"), "ok");
  EXPECT_EQ(r.cell(1, "status"), "ok");
  EXPECT_EQ(r.cell(2, "status"), "invalid");
  EXPECT_THAT(r.cell(2, "message"), HasSubstr("truncated"));

  // Newline-delimited: the last line cut short (RFC 7464 section 2.3 speaks of truncated texts).
  std::string nd = demo_as_ndjson(slurp(demo_geojson), false);
  nd.resize(nd.size() - 20);
  r = audit_text("cut.ndjson", nd, {"--crs", "EPSG:32615"});
  ASSERT_EQ(r.data_rows(), 12u);
  EXPECT_EQ(r.cell(11, "status"), "invalid");
  EXPECT_THAT(r.cell(11, "message"), HasSubstr("line 12"));

  // CSV cut inside a quoted WKT value (RFC 4180 section 2.7).
  std::string csv = slurp(demo_csv);
  csv.resize(csv.size() - 20);
  r = audit_text("cut.csv", csv, {"--crs", "EPSG:32615", "--id-field", "unit_id"});
  ASSERT_EQ(r.data_rows(), 12u);
  EXPECT_EQ(r.cell(11, "status"), "invalid");
  EXPECT_EQ(r.cell(10, "status"), "ok");
}

TEST_F(CliTest, HostileCsvRows) {
  const std::string csv =
      "id,wkt\n"
      "ok1,\"POINT (-93.5 44)\"\n"
      "commas,POLYGON((-93 44, -92.9 44, -92.9 44.1, -93 44))\n"  // RFC 4180 section 2.6: must be quoted
      "nan,\"POINT (NaN 44)\"\n"
      "gc,\"GEOMETRYCOLLECTION (POINT (1 2))\"\n"
      "empty,\"POLYGON EMPTY\"\n"
      "zm,\"LINESTRING ZM (-93 44 10 1, -92.9 44.1 12 2)\"\n"
      "blank,\n"
      "garbage,\"POINT (1 2\"\n"
      "ok2,\"POINT (-92 45)\"\n";
  const CliRun r = audit_text("hostile.csv", csv, {"--crs", "EPSG:32615", "--id-field", "id"});
  EXPECT_EQ(r.status, 1);
  ASSERT_EQ(r.data_rows(), 9u);
  const std::map<std::string, std::pair<std::string, std::string>> expected = {
      {"ok1", {"ok", ""}},
      {"commas", {"invalid", "fields"}},
      {"nan", {"invalid", "not a number"}},
      {"gc", {"invalid", "GEOMETRYCOLLECTION"}},
      {"empty", {"invalid", "empty"}},
      {"zm", {"ok", ""}},  // Z and M ordinates are dropped
      {"blank", {"invalid", "empty geometry"}},
      {"garbage", {"invalid", "WKT"}},
      {"ok2", {"ok", ""}},
  };
  for (const auto& [id, want] : expected) {
    const auto k = r.row_of(id);
    EXPECT_EQ(r.cell(k, "status"), want.first) << id;
    if (!want.second.empty()) EXPECT_THAT(r.cell(k, "message"), HasSubstr(want.second)) << id;
  }
}

}  // namespace

// ---- Issue 5 on the command line: edge models, projected input, per-feature heights, the combined factor ----

TEST_F(CliTest, EdgesOptionChangesTheTruthAndIsReported) {
  // A 1°×1° quadrangle at the equator: joined by rhumb lines (meridians and parallels) its area has the closed
  // form (a²/2)·Δλ·[q(φ2) − q(φ1)] = 12 308 463 893.975 m² on WGS 84 (Snyder 1987, USGS PP 1395, eq. 3-12);
  // joined by geodesics it encloses about 26 ppm more (the geodesic along a parallel bulges poleward).
  const std::string quad = R"({"type":"Polygon","coordinates":[[[0,0],[1,0],[1,1],[0,1],[0,0]]]})";
  const std::string one = collection({feature("Q", quad)});
  const CliRun rhumb = audit_text("q.geojson", one, {"--crs", "EPSG:6933", "--edges", "rhumb",
                                                     "--summary", path("q.json")});
  const CliRun geodesic = audit_text("q.geojson", one, {"--crs", "EPSG:6933"});
  EXPECT_EQ(rhumb.status, 0) << rhumb.err;
  EXPECT_NEAR(rhumb.number(0, "true_area_m2"), 12308463893.975, 0.01);
  const double ppm = 1e6 * (geodesic.number(0, "true_area_m2") / rhumb.number(0, "true_area_m2") - 1);
  EXPECT_NEAR(ppm, 26, 1.5);
  // EPSG:6933 is cylindrical equal-area: meridians and parallels are straight, so rhumb edges have no edge part.
  EXPECT_NEAR(rhumb.number(0, "area_from_edges_m2"), 0, 1e-3);
  EXPECT_THAT(rhumb.err, HasSubstr("edges:        rhumb"));
  EXPECT_THAT(geodesic.err, HasSubstr("edges:        geodesic"));
  EXPECT_EQ(nlohmann::json::parse(slurp(path("q.json")))["edges"], "rhumb");
  expect_unusable(audit_text("q.geojson", one, {"--crs", "EPSG:6933", "--edges", "loxodrome-ish"}),
                  "unknown edge model");
  expect_unusable(audit_text("q.geojson", one, {"--crs", "EPSG:6933", "--edges", "straight-in=EPSG:4326"}),
                  "not one");
}

TEST_F(CliTest, ProjectedSourceHasStraightEdgesInItsOwnPlane) {
  // A 1 km square digitised in UTM 15N (metres) and audited in the same CRS: the grid area is the plane's own
  // shoelace, 1 000 000 m², and the edges are the chords themselves (from_edges = 0). Common practice.
  const std::string csv = "name,wkt\nsq,\"POLYGON((500000 4900000,501000 4900000,501000 4901000,"
                          "500000 4901000,500000 4900000))\"\n";
  const CliRun r = audit_text("p.csv", csv, {"--source-crs", "EPSG:32615", "--crs", "EPSG:32615",
                                             "--id-field", "name"});
  EXPECT_EQ(r.status, 0) << r.err;
  EXPECT_NEAR(r.number(0, "grid_area_m2"), 1e6, 1e-6);
  EXPECT_EQ(r.number(0, "area_from_edges_m2"), 0);
  // On the central meridian UTM's scale is 0.9996: the grid is ≈ −800 ppm in area (common practice).
  EXPECT_NEAR(r.number(0, "area_error_ppm"), -800, 1.5);
  EXPECT_THAT(r.err, HasSubstr("edges:        straight-in=EPSG:32615"));
}

TEST_F(CliTest, HeightFieldGivesEachFeatureItsOwnHeightAndTheCombinedFactor) {
  // Two copies of a short north-south line on UTM 15N's central meridian (scale 0.9996), at 0 m and 1000 m.
  // Combined factor = k × R_G/(R_G + h) (common practice); R_G = √(M N) on WGS 84 at 45°N, computed here.
  const std::string line = R"({"type":"LineString","coordinates":[[-93,45],[-93,45.01]]})";
  auto with_h = [&](const std::string& id, const std::string& h) {
    return R"({"type":"Feature","id":")" + id + R"(","properties":{"h":)" + h + R"(},"geometry":)" + line + "}";
  };
  const std::string text = collection({with_h("low", "0"), with_h("high", "1000"), with_h("bad", "\"tall\""),
                                       R"({"type":"Feature","id":"none","properties":{},"geometry":)" + line + "}"});
  const CliRun r = audit_text("h.geojson", text, {"--crs", "EPSG:32615", "--height-field", "h"});
  EXPECT_EQ(r.status, 1) << r.err;  // two features lack a usable height: invalid
  ASSERT_EQ(r.data_rows(), 4U);
  ASSERT_EQ(r.rows[0].back(), "combined_factor");
  const double a = 6378137, f = 1 / 298.257223563, e2 = f * (2 - f), s = std::sin(45.005 * M_PI / 180);
  const double w2 = 1 - e2 * s * s, m = a * (1 - e2) / (w2 * std::sqrt(w2)), n = a / std::sqrt(w2);
  const double radius = std::sqrt(m * n);
  const double low = std::stod(r.rows[r.row_of("low") + 1].back());
  const double high = std::stod(r.rows[r.row_of("high") + 1].back());
  EXPECT_NEAR(low, 0.9996, 2e-9);  // k on the central meridian; the line hugs it
  EXPECT_NEAR(high, 0.9996 * radius / (radius + 1000), 2e-9);
  EXPECT_NEAR(1e6 * (1 - high / low), 157, 1);  // the elevation factor at 1000 m: about 157 ppm
  EXPECT_EQ(r.cell(r.row_of("bad"), "status"), "invalid");
  EXPECT_THAT(r.cell(r.row_of("bad"), "message"), HasSubstr("not a number"));
  EXPECT_EQ(r.cell(r.row_of("none"), "status"), "invalid");
  EXPECT_THAT(r.cell(r.row_of("none"), "message"), HasSubstr("missing"));
  // Without heights there is no combined_factor column (the issue-3 contract holds as it was).
  const CliRun plain = audit_text("p.geojson", collection({feature("x", line)}), {"--crs", "EPSG:32615"});
  EXPECT_EQ(plain.rows[0].size(), contract_columns.size());
  expect_unusable(audit_text("p.geojson", collection({feature("x", line)}),
                             {"--crs", "EPSG:32615", "--height", "5", "--height-field", "h"}),
                  "excludes");
}

// ---------------------------------------------------------------------------------------------------------------
// Issue 17: damaged inputs, outputs that would destroy inputs, write faults, hostile CRS strings and cells

TEST_F(CliTest, DamagedInputKeepsGoingAndSaysWhatWasSkipped) {
  // Regression (issue 17 item 4): a missing quote in feature 2 of 4 dropped features 2-4 ("truncated file?"), and a
  // missing bracket in feature 1 aborted with no row. Now the span is one invalid row naming its bytes, the later
  // features are audited, the summary lists the span, and the exit status is 1 (a partial run), not 2.
  const std::vector<std::string> four = {feature("a", small_square), feature("b", small_square),
                                         feature("c", small_square), feature("d", small_square)};
  std::string text = collection(four);
  const std::size_t b_at = text.find(R"({"type":"Feature","id":"b")");
  const std::size_t c_at = text.find(R"({"type":"Feature","id":"c")");
  text.erase(text.find(R"("b")") + 2, 1);  // "b" loses its closing quote (RFC 8259 section 7: strings are quoted)
  const std::string summary = path("summary.json");
  CliRun r = audit_text("quote.geojson", text, {"--crs", "EPSG:32615", "--summary", summary});
  EXPECT_EQ(r.status, 1) << r.err;
  ASSERT_EQ(r.data_rows(), 4u) << r.out << r.err;
  EXPECT_EQ(r.cell(0, "id"), "a");
  EXPECT_EQ(r.cell(1, "status"), "invalid");
  EXPECT_THAT(r.cell(1, "message"), HasSubstr("bytes " + std::to_string(b_at) + " to " + std::to_string(c_at - 1)));
  EXPECT_THAT(r.cell(1, "message"), HasSubstr("may be lost"));
  EXPECT_EQ(r.cell(2, "id"), "c");
  EXPECT_EQ(r.cell(2, "status"), "ok");
  EXPECT_EQ(r.cell(3, "id"), "d");
  EXPECT_EQ(r.cell(3, "status"), "ok");
  EXPECT_THAT(r.err, HasSubstr("bytes skipped"));
  const auto j = nlohmann::json::parse(slurp(summary));
  ASSERT_EQ(j["input_problems"]["spans"].size(), 1u);
  EXPECT_EQ(j["input_problems"]["spans"][0]["first_byte"], b_at);
  EXPECT_EQ(j["input_problems"]["spans"][0]["feature_position"], 2);
  EXPECT_EQ(j["exit_status"], 1);

  // A missing closing bracket in feature 1 (and a stray "{" in another file): feature 2 is still audited.
  for (const std::string& damage : {std::string("missing"), std::string("stray")}) {
    std::string t = collection({feature("a", small_square), feature("b", small_square)});
    if (damage == "missing") t.erase(t.find(",\n" + feature("b", small_square)) - 1, 1);
    else t.insert(t.find(R"("properties")"), "{");
    r = audit_text(damage + ".geojson", t, {"--crs", "EPSG:32615"});
    EXPECT_EQ(r.status, 1) << damage << r.err;
    // The stray "{" opens an object of its own that the resynchronisation finds ({"properties":...,"geometry":...}
    // after a ","): it is one more invalid row (no "type"), so nothing of feature a goes unmentioned.
    const std::size_t rows = damage == "stray" ? 3 : 2;
    ASSERT_EQ(r.data_rows(), rows) << damage << r.out << r.err;
    for (std::size_t k = 0; k + 1 < rows; ++k) EXPECT_EQ(r.cell(k, "status"), "invalid") << damage;
    EXPECT_EQ(r.cell(rows - 1, "id"), "b") << damage;
    EXPECT_EQ(r.cell(rows - 1, "status"), "ok") << damage;
  }

  // The unmatched bracket of the old container test: named by its 0-based byte, one invalid row, exit 1.
  const std::string mismatch = R"({"type":"FeatureCollection","features":[{"a":[1,2}]})";
  r = audit_text("mismatch.geojson", mismatch, {"--crs", "EPSG:32615"});
  EXPECT_EQ(r.status, 1) << r.err;
  ASSERT_EQ(r.data_rows(), 1u);
  EXPECT_THAT(r.cell(0, "message"), HasSubstr("byte " + std::to_string(mismatch.find("2}") + 1)));

  // Properties nested 75 000 deep crashed the JSON writer: now one invalid row naming the nesting.
  const std::string deep = R"({"type":"Feature","properties":{"p":)" + std::string(75000, '[') +
                           std::string(75000, ']') + R"(},"geometry":)" + small_square + "}\n";
  r = audit_text("deep.ndjson", deep + feature("after", small_square) + "\n",
                 {"--crs", "EPSG:32615", "--format", "ndjson", "--geojson", path("deep_out.geojson")});
  EXPECT_EQ(r.status, 1) << r.err;
  ASSERT_EQ(r.data_rows(), 2u) << r.err;
  EXPECT_THAT(r.cell(0, "message"), HasSubstr("nested more than 256 levels"));
  EXPECT_EQ(r.cell(1, "status"), "ok");
}

TEST_F(CliTest, UnreadableInputsAreNamed) {
  // Regression (issue 17 item 4): a directory and a closed standard input said "empty input at byte 0".
  CliRun r = audit({dir_, "--crs", "EPSG:32615"});
  expect_unusable(r, "is a directory");
  const std::string cmd = shell_quote(cli) + " audit - --crs EPSG:32615 <&- 2>" + shell_quote(path("err"));
  const int raw = std::system(cmd.c_str());
  EXPECT_EQ(WIFEXITED(raw) ? WEXITSTATUS(raw) : -1, 2);
  EXPECT_THAT(slurp(path("err")), HasSubstr("standard input: it is closed"));
  // Invalid UTF-8 from the input is never copied into a message (RFC 3629 section 3): written as \xNN.
  r = audit_text("utf8.geojson",
                 collection({R"({"type":"Feature","id":"u","properties":{},"geometry":{"type":"Po)"
                             "\xFF\xFE"
                             R"(int","coordinates":[1,2]}})"}),
                 {"--crs", "EPSG:32615"});
  EXPECT_EQ(r.status, 1);
  EXPECT_THAT(r.cell(0, "message"), HasSubstr("Po\\xFF"));
  EXPECT_EQ(r.out.find('\xFF'), std::string::npos);
  // No raw library prefix in any message.
  EXPECT_EQ(r.out.find("[json.exception"), std::string::npos);
}

TEST_F(CliTest, OutputNamingAnInputIsRefused) {
  // Regression (issue 17 item 1): `--out` naming the input destroyed it. Same file id (st_dev, st_ino): the path
  // itself, a hard link and a spelling through "." all count; the input is left as it was, exit 2.
  const std::string input = path("in.geojson");
  const std::string text = collection({feature("a", small_square)});
  spit(input, text);
  ASSERT_EQ(link(input.c_str(), path("link.geojson").c_str()), 0);
  for (const std::string& out : {input, path("link.geojson"), dir_ + "/./in.geojson"}) {
    for (const char* option : {"--out", "--summary", "--geojson"}) {
      expect_unusable(audit({input, "--crs", "EPSG:32615", option, out}), "destroy the input");
      EXPECT_EQ(slurp(input), text) << option << " " << out;
    }
  }
  CliRun other = run({"rank", input, "--out", input});
  EXPECT_EQ(other.status, 2);
  EXPECT_THAT(other.err, HasSubstr("destroy the input"));
  EXPECT_EQ(slurp(input), text);
  other = run({"cells", "--grid-crs", "EPSG:4326", "--origin", "0,1", "--pixel", "1,-1", "--size", "1,1",
               "--classes", input, "--classes-format", "raw", "--out", input});
  EXPECT_EQ(other.status, 2);
  EXPECT_THAT(other.err, HasSubstr("destroy the input"));
  EXPECT_EQ(slurp(input), text);
  // Standard output redirected onto the input file (tailor writes only there).
  const std::string cmd = shell_quote(cli) + " tailor " + shell_quote(input) +
                          " --family albers 1<>" + shell_quote(input) + " 2>" + shell_quote(path("err"));
  const int raw = std::system(cmd.c_str());
  EXPECT_EQ(WIFEXITED(raw) ? WEXITSTATUS(raw) : -1, 2);
  EXPECT_THAT(slurp(path("err")), HasSubstr("destroy the input"));
  EXPECT_EQ(slurp(input), text);
}

TEST_F(CliTest, WriteFaultsNameTheCauseAndLeaveNoFile) {
  // Regression (issue 17 item 5): /dev/full (Linux: every write fails with ENOSPC) gave no cause; a fault or a
  // signal left a file that looked complete.
  const std::string input = path("in.geojson");
  spit(input, collection({feature("a", small_square)}));
  expect_unusable(audit({input, "--crs", "EPSG:32615", "--out", "/dev/full"}), "no space left on device");
  expect_unusable(audit({input, "--crs", "EPSG:32615", "--summary", "/dev/full", "--out", path("rows.csv")}),
                  "no space left on device");
  EXPECT_FALSE(std::ifstream(path("rows.csv")).good());  // nothing renamed into place when one output fails
  const std::string cmd = shell_quote(cli) + " audit " + shell_quote(input) + " --crs EPSG:32615 >/dev/full 2>" +
                          shell_quote(path("err"));
  const int raw = std::system(cmd.c_str());
  EXPECT_EQ(WIFEXITED(raw) ? WEXITSTATUS(raw) : -1, 2);
  EXPECT_THAT(slurp(path("err")), HasSubstr("no space left on device"));
  // No temporary file is left behind in the output's directory.
  const std::string listing = path("listing");
  std::system(("ls -A " + shell_quote(dir_) + " > " + shell_quote(listing)).c_str());
  EXPECT_EQ(slurp(listing).find(".gridtruth-"), std::string::npos) << slurp(listing);

  // SIGTERM during a run: the old file stays as it was and no temporary file is left (the signal is re-raised).
  const std::string big = path("big.ndjson");
  {
    std::ofstream o(big, std::ios::binary);
    for (int k = 0; k < 200000; ++k) o << feature("f" + std::to_string(k), small_square) << "\n";
  }
  const std::string out = path("old.csv");
  spit(out, "old content\n");
  const std::string run_cmd = shell_quote(cli) + " audit " + shell_quote(big) + " --crs EPSG:32615 --threads 1 --out " +
                              shell_quote(out) + " 2>/dev/null & pid=$!; sleep 1; kill -TERM $pid; wait $pid; echo $? > " +
                              shell_quote(path("status"));
  std::system(run_cmd.c_str());
  EXPECT_EQ(slurp(path("status")), "143\n");  // 128 + SIGTERM (15): killed by the signal, as POSIX shells report
  EXPECT_EQ(slurp(out), "old content\n");
  std::system(("ls -A " + shell_quote(dir_) + " > " + shell_quote(listing)).c_str());
  EXPECT_EQ(slurp(listing).find(".gridtruth-"), std::string::npos) << slurp(listing);
}

TEST_F(CliTest, UntrustedCrsStringsOpenOnlyProjDataFiles) {
  // Regression (issue 17 item 6): +nadgrids= or +init= naming a FIFO hung for ever. Without --trusted-crs PROJ
  // opens no file outside its data directories; `timeout` turns a hang into a failure of this test.
  const std::string fifo = path("fifo");
  ASSERT_EQ(mkfifo(fifo.c_str(), 0600), 0);
  const std::string input = path("in.geojson");
  spit(input, collection({feature("a", small_square)}));
  for (const std::string& crs : {"+proj=tmerc +lon_0=-95 +init=" + fifo + ":x",
                                 "+proj=longlat +ellps=clrk66 +nadgrids=" + fifo}) {
    const bool source = crs.find("longlat") != std::string::npos;
    const std::string cmd = "timeout 30 " + shell_quote(cli) + " audit " + shell_quote(input) +
                            (source ? " --crs EPSG:32615 --source-crs " : " --crs ") + shell_quote(crs) +
                            " >/dev/null 2>" + shell_quote(path("err"));
    const int raw = std::system(cmd.c_str());
    EXPECT_EQ(WIFEXITED(raw) ? WEXITSTATUS(raw) : -1, 2) << crs << slurp(path("err"));
  }
}

TEST_F(CliTest, CellsThatLookLikeFormulasAreNeutralised) {
  // OWASP "CSV Injection": a text cell starting with = + - @ (or a tab or CR) gets a leading single quote; whole
  // numbers such as a negative id stay numbers.
  const std::string csv = "id,name,wkt\n"
                          "=HYPERLINK(\"x\"),a,\"POINT (-93.5 44)\"\n"
                          "-12.5,b,\"POINT (-93.5 44)\"\n"
                          "@SUM(A1),c,\"POINT (-93.5 44)\"\n"
                          "+1+1,d,\"POINT (-93.5 44)\"\n";
  const CliRun r = audit_text("formula.csv", csv, {"--crs", "EPSG:32615", "--id-field", "id"});
  ASSERT_EQ(r.data_rows(), 4u) << r.err;
  EXPECT_EQ(r.cell(0, "id"), "'=HYPERLINK(\"x\")");
  EXPECT_EQ(r.cell(1, "id"), "-12.5");
  EXPECT_EQ(r.cell(2, "id"), "'@SUM(A1)");
  EXPECT_EQ(r.cell(3, "id"), "'+1+1");
}

// ---------------------------------------------------------------------------------------------------------------
// Issue 17: invalid topology and degenerate CRSs are never `ok`.

TEST_F(CliTest, BowtieIsInvalidAndRepairIsOptIn) {
  const std::string bowtie =
      R"({"type":"Polygon","coordinates":[[[-95.40,44.10],[-95.375,44.1135],[-95.375,44.10],[-95.40,44.1135],[-95.40,44.10]]]})";
  const std::string input = collection({feature("bowtie", bowtie), feature("square", small_square)});
  const CliRun plain = audit_text("b.geojson", input, {"--crs", "EPSG:32615"});
  EXPECT_EQ(plain.status, 1) << plain.err;
  EXPECT_EQ(plain.cell(0, "status"), "invalid");
  EXPECT_THAT(plain.cell(0, "message"), HasSubstr("crosses itself"));
  EXPECT_EQ(plain.cell(1, "status"), "ok");
  const CliRun fixed = audit_text("b.geojson", input, {"--crs", "EPSG:32615", "--repair"});
  EXPECT_EQ(fixed.status, 0) << fixed.err;
  EXPECT_EQ(fixed.cell(0, "status"), "ok");
  EXPECT_THAT(fixed.cell(0, "message"), StartsWith("repaired by the even-odd rule"));
  EXPECT_THAT(fixed.cell(0, "message"), HasSubstr("crosses itself"));  // what was wrong
  // The two lobes: together half the square's area (two triangles on the diagonals; planar geometry, common
  // practice), to 1e-3 relative (the lobes' geodesic edges differ from the square's halves by far less).
  EXPECT_NEAR(fixed.number(0, "true_area_m2"), 0.5 * fixed.number(1, "true_area_m2"),
              1e-3 * fixed.number(1, "true_area_m2"));
}

TEST_F(CliTest, DegenerateTargetCrsIsRefused) {
  // Before issue 17: grid area 0, −10⁶ ppm and convergence −180°, all `ok`, exit 0.
  for (const std::string crs : {"+proj=tmerc +lon_0=1e308", "+proj=tmerc +x_0=1e300"}) {
    const CliRun r = audit_text("p.geojson", collection({feature("P", small_square)}), {"--crs", crs});
    expect_unusable(r, crs);
    EXPECT_THAT(r.err, HasSubstr("degenerate")) << crs;
  }
}

TEST_F(CliTest, AreaOfUseMarginIsAnOption) {
  // EPSG:32615's area of use is "Between 96°W and 90°W, northern hemisphere between equator and 84°N" (the EPSG
  // Geodetic Parameter Dataset, as PROJ's database holds it). A square near 110°W lies 14° beyond it; the closing
  // vertex repeats the first, so 4 distinct vertices.
  const std::string far_square =
      R"({"type":"Polygon","coordinates":[[[-110.0,44.10],[-109.975,44.10],[-109.975,44.1135],[-110.0,44.1135],[-110.0,44.10]]]})";
  const std::string input = collection({feature("far", far_square)});
  const CliRun standard = audit_text("f.geojson", input, {"--crs", "EPSG:32615"});
  EXPECT_EQ(standard.cell(0, "status"), "unmeasurable");
  EXPECT_THAT(standard.cell(0, "message"), HasSubstr("more than the margin of 5"));
  for (const char* margin : {"20", "off"}) {
    SCOPED_TRACE(margin);
    const CliRun wide = audit_text("f.geojson", input, {"--crs", "EPSG:32615", "--area-of-use-margin", margin});
    EXPECT_EQ(wide.cell(0, "status"), "ok");
    EXPECT_THAT(wide.cell(0, "message"), StartsWith("warning: 4 of 4 vertices lie outside the area of use"));
  }
  expect_unusable(audit_text("f.geojson", input, {"--crs", "EPSG:32615", "--area-of-use-margin", "-1"}),
                  "--area-of-use-margin");
  expect_unusable(audit_text("f.geojson", input, {"--crs", "EPSG:32615", "--area-of-use-margin", "wide"}),
                  "--area-of-use-margin");
}

TEST_F(CliTest, KeptFieldsAndUnitColumnsFollowTheAuditColumns) {
  // Issue 14: --keep-fields adds input attributes after the audit columns (a clash keeps the input's as
  // input_<name>, a missing attribute is an empty cell); --units adds the lengths and areas in that unit.
  // Acre = 43 560 ft²: the international acre is 4 046.856 422 4 m², the US survey acre 4 046.872 609 874 252 m²
  // (NIST Handbook 44, appendix C; NIST SP 811, 2008, appendix B.8); the international foot 0.3048 m, the
  // US survey foot 1200/3937 m (same sources).
  spit(path("plots.csv"),
       "id,name,status,wkt\n"
       "A-1,south field,leased,\"POLYGON ((370000 4885000,372000 4885000,372000 4886500,370000 4886500,370000 "
       "4885000))\"\n"
       "A-2,,public,\"LINESTRING (370000 4880000,371500 4881200)\"\n");
  struct Case {
    const char* units;
    const char* area_suffix;
    const char* length_suffix;  // "" when the length unit is the metre
    double area_m2, length_m;
  };
  for (const Case& c : {Case{"acre", "ac", "ft", 4046.8564224, 0.3048},
                        Case{"us-survey-acre", "us_ac", "us_ft", 4046.872609874252, 1200.0 / 3937.0},
                        Case{"hectare", "ha", "", 1e4, 1}}) {
    SCOPED_TRACE(c.units);
    const CliRun r = audit({path("plots.csv"), "--source-crs", "EPSG:26915", "--crs", "EPSG:32615", "--id-field",
                            "id", "--units", c.units, "--keep-fields", "name,status,owner", "--tolerance",
                            "length=1:20000", "--all-digits"});
    ASSERT_EQ(r.rows.size(), 3u) << r.err;
    const auto& header = r.rows[0];
    // The audit table first, unchanged.
    ASSERT_GT(header.size(), contract_columns.size());
    EXPECT_EQ(std::vector<std::string>(header.begin(), header.begin() + contract_columns.size()), contract_columns);
    std::vector<std::string> expected_tail;
    if (*c.length_suffix)
      for (const char* base : {"true_length_", "grid_length_", "length_error_"})
        expected_tail.push_back(base + std::string(c.length_suffix));
    for (const char* base : {"true_area_", "grid_area_", "area_error_"})
      expected_tail.push_back(base + std::string(c.area_suffix));
    for (const char* name : {"name", "input_status", "owner"}) expected_tail.push_back(name);
    EXPECT_EQ(std::vector<std::string>(header.begin() + contract_columns.size(), header.end()), expected_tail);
    auto col = [&](std::size_t row, const std::string& name) {
      for (std::size_t k = 0; k < header.size(); ++k)
        if (header[k] == name) return r.rows[row][k];
      ADD_FAILURE() << "no column " << name;
      return std::string();
    };
    for (std::size_t row = 1; row <= 2; ++row) {
      for (const char* what : {"true", "grid"}) {
        const std::string si = col(row, std::string(what) + "_area_m2");
        const std::string unit = col(row, std::string(what) + "_area_" + c.area_suffix);
        EXPECT_EQ(si.empty(), unit.empty());
        if (!si.empty()) EXPECT_NEAR(std::stod(unit), std::stod(si) / c.area_m2, 1e-12 * std::stod(si) / c.area_m2);
        if (*c.length_suffix) {
          const std::string m = col(row, std::string(what) + "_length_m");
          EXPECT_NEAR(std::stod(col(row, std::string(what) + "_length_" + c.length_suffix)),
                      std::stod(m) / c.length_m, 1e-12 * std::stod(m) / c.length_m);
        }
      }
    }
    EXPECT_EQ(col(1, "name"), "south field");
    EXPECT_EQ(col(2, "name"), "");
    EXPECT_EQ(col(1, "input_status"), "leased");
    EXPECT_EQ(col(1, "status"), "ok");
    EXPECT_EQ(col(1, "owner"), "");  // not an attribute of the input: empty
    // 7 001 m of perimeter on a grid of scale 0.9998: -195 ppm, beyond 1:20000 (50 ppm); the ratio is echoed.
    EXPECT_THAT(col(1, "message"), HasSubstr("exceeds length<=1:20000"));
    EXPECT_THAT(r.err, HasSubstr("tolerances:   length<=1:20000"));
  }
  // 'all': every attribute of the first feature.
  const CliRun all = audit({path("plots.csv"), "--source-crs", "EPSG:26915", "--crs", "EPSG:32615", "--keep-fields",
                            "all"});
  ASSERT_EQ(all.rows.size(), 3u) << all.err;
  EXPECT_EQ(std::vector<std::string>(all.rows[0].begin() + contract_columns.size(), all.rows[0].end()),
            (std::vector<std::string>{"input_id", "name", "input_status"}));
  EXPECT_EQ(all.rows[2].back(), "public");
}
