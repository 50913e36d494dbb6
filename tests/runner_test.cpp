// Streaming runner: order, completeness and determinism across thread counts.
#include "gridtruth/runner.hpp"

#include <gtest/gtest.h>

#include <cmath>
#include <random>
#include <sstream>
#include <stdexcept>
#include <streambuf>
#include <string>
#include <vector>

#include "gridtruth/error.hpp"

namespace {

using gridtruth::AuditOptions;
using gridtruth::Auditor;
using gridtruth::AuditResult;
using gridtruth::FeatureReader;
using gridtruth::InputFeature;
using gridtruth::RunOptions;

// Newline-delimited GeoJSON (RFC 8142 without separators) of n small squares near 45°N 93°W; every 7th feature
// carries a malformed geometry, every 11th a null geometry.
std::string make_ndjson(std::size_t n, std::uint64_t seed) {
  std::mt19937_64 rng(seed);
  std::uniform_real_distribution<double> lon(-96.0, -90.0), lat(40.0, 48.0), size(0.001, 0.05);
  std::ostringstream out;
  out.precision(17);
  for (std::size_t i = 1; i <= n; ++i) {
    out << R"({"type":"Feature","id":"f)" << i << R"(","properties":{},"geometry":)";
    if (i % 7 == 0) {
      out << R"({"type":"Polygon","coordinates":[[[1,2],[3,4]]]})";
    } else if (i % 11 == 0) {
      out << "null";
    } else {
      const double x = lon(rng), y = lat(rng), d = size(rng);
      out << R"({"type":"Polygon","coordinates":[[[)" << x << ',' << y << "],[" << x + d << ',' << y << "],["
          << x + d << ',' << y + d << "],[" << x << ',' << y + d << "],[" << x << ',' << y << "]]]}";
    }
    out << "}\n";
  }
  return out.str();
}

struct Row {
  std::string id;
  gridtruth::Status status;
  double area;
  std::string message;
};

std::vector<Row> run(const std::string& text, unsigned threads, std::size_t batch) {
  AuditOptions options;
  options.target_crs = "EPSG:26915";
  const Auditor auditor(options);
  std::istringstream in(text);
  FeatureReader reader(in, {gridtruth::InputFormat::ndjson});
  std::vector<Row> rows;
  RunOptions run_options;
  run_options.threads = threads;
  run_options.batch_features = batch;
  const std::size_t n = gridtruth::run_audit(reader, auditor, run_options,
                                             [&](const InputFeature& f, const AuditResult& r) {
                                               rows.push_back({f.id, r.status, r.area ? r.area->grid : NAN,
                                                               r.message});
                                             });
  EXPECT_EQ(n, rows.size());
  return rows;
}

TEST(Runner, EveryFeatureYieldsOneRowInInputOrder) {
  const std::uint64_t seed = 20261201;
  RecordProperty("seed", std::to_string(seed));
  const std::string text = make_ndjson(1000, seed);
  const std::vector<Row> rows = run(text, 2, 16);
  ASSERT_EQ(rows.size(), 1000U);
  for (std::size_t i = 0; i < rows.size(); ++i) {
    const std::size_t position = i + 1;
    EXPECT_EQ(rows[i].id, "f" + std::to_string(position));
    if (position % 7 == 0 || position % 11 == 0) {
      EXPECT_EQ(rows[i].status, gridtruth::Status::invalid) << rows[i].id;
      EXPECT_FALSE(rows[i].message.empty()) << rows[i].id;
    } else {
      EXPECT_EQ(rows[i].status, gridtruth::Status::ok) << rows[i].id << ": " << rows[i].message;
    }
  }
}

TEST(Runner, ResultsDoNotDependOnThreadsOrBatchSize) {
  const std::uint64_t seed = 7;
  RecordProperty("seed", std::to_string(seed));
  const std::string text = make_ndjson(300, seed);
  const std::vector<Row> one = run(text, 1, 1000);
  for (const auto& [threads, batch] : std::vector<std::pair<unsigned, std::size_t>>{{2, 1}, {2, 7}, {4, 64}}) {
    const std::vector<Row> other = run(text, threads, batch);
    ASSERT_EQ(other.size(), one.size());
    for (std::size_t i = 0; i < one.size(); ++i) {
      EXPECT_EQ(other[i].id, one[i].id);
      EXPECT_EQ(other[i].status, one[i].status);
      // Bit-identical: the same code on the same input, whatever thread ran it.
      if (!std::isnan(one[i].area)) EXPECT_EQ(other[i].area, one[i].area) << one[i].id;
    }
  }
}

/// Serves `text` up to `fail_at` bytes, then fails as a broken disk or pipe does (the istream sets badbit).
class FailingBuffer : public std::streambuf {
 public:
  FailingBuffer(std::string text, std::size_t fail_at) : text_(std::move(text)), fail_at_(fail_at) {
    setg(text_.data(), text_.data(), text_.data() + fail_at_);
  }

 protected:
  int_type underflow() override { throw std::runtime_error("read error"); }

 private:
  std::string text_;
  std::size_t fail_at_;
};

TEST(Runner, UnreadableContainerThrowsAfterTheFeaturesBeforeIt) {
  // A FeatureCollection whose input fails to read part-way (damage inside it no longer throws, issue 17 item 4):
  // the features cut before the fault are delivered in order, then the reader's Error(io) reaches the caller.
  std::string text = R"({"type":"FeatureCollection","features":[)";
  std::vector<std::size_t> ends;
  for (int k = 0; k < 2000; ++k) {
    text += std::string(k ? "," : "") +
            R"({"type":"Feature","properties":{},"geometry":{"type":"Point","coordinates":[-93,45]}})";
    ends.push_back(text.size());
  }
  text += "]}";
  const std::size_t fail_at = 70000;  // beyond the reader's first 64 KiB chunk
  std::vector<std::string> expected;
  for (std::size_t k = 0; k < ends.size() && ends[k] <= fail_at; ++k) expected.push_back(std::to_string(k + 1));
  AuditOptions options;
  options.target_crs = "EPSG:26915";
  const Auditor auditor(options);
  FailingBuffer buffer(text, fail_at);
  std::istream in(&buffer);
  FeatureReader reader(in, {gridtruth::InputFormat::geojson});
  std::vector<std::string> seen;
  RunOptions run_options;
  run_options.threads = 2;
  run_options.batch_features = 1;
  EXPECT_THROW(gridtruth::run_audit(reader, auditor, run_options,
                                    [&](const InputFeature& f, const AuditResult& r) {
                                      EXPECT_EQ(r.status, gridtruth::Status::ok);
                                      seen.push_back(f.id);
                                    }),
               gridtruth::Error);
  // Every feature delivered is one cut before the fault, in order (the runner may drop the batch in flight).
  ASSERT_FALSE(seen.empty());
  ASSERT_LE(seen.size(), expected.size());
  EXPECT_EQ(seen, std::vector<std::string>(expected.begin(), expected.begin() + seen.size()));
}

TEST(Runner, FeaturesParsedOnTheWorkersAreThoseNextGivesInOrder) {
  // Parsing runs on the workers now: with many threads and tiny batches the sink must still see every feature,
  // in input order, exactly as FeatureReader::next() reads it (GeoJSON FeatureCollection, bad features included).
  const std::uint64_t seed = 99;
  RecordProperty("seed", std::to_string(seed));
  std::string text = R"({"type":"FeatureCollection","features":[)";
  std::istringstream lines(make_ndjson(400, seed));
  std::string line;
  for (bool first = true; std::getline(lines, line); first = false) text += (first ? "" : ",\n") + line;
  text += R"(,{"type":"Feature","geometry":{"type":"Point","coordinates":[NaN,1]}}]})";
  std::vector<InputFeature> expected;
  {
    std::istringstream in(text);
    FeatureReader reader(in, {gridtruth::InputFormat::geojson});
    while (auto f = reader.next()) expected.push_back(std::move(*f));
  }
  ASSERT_EQ(expected.size(), 401U);
  AuditOptions options;
  options.target_crs = "EPSG:26915";
  const Auditor auditor(options);
  for (const auto& [threads, batch] : std::vector<std::pair<unsigned, std::size_t>>{{8, 1}, {8, 3}, {3, 50}}) {
    std::istringstream in(text);
    FeatureReader reader(in, {gridtruth::InputFormat::geojson});
    RunOptions run_options;
    run_options.threads = threads;
    run_options.batch_features = batch;
    std::size_t k = 0;
    const std::size_t n = gridtruth::run_audit(reader, auditor, run_options,
                                               [&](const InputFeature& f, const AuditResult& r) {
                                                 ASSERT_LT(k, expected.size());
                                                 const InputFeature& e = expected[k++];
                                                 EXPECT_EQ(f.position, e.position);
                                                 EXPECT_EQ(f.id, e.id);
                                                 EXPECT_EQ(f.line, e.line);
                                                 EXPECT_EQ(f.error, e.error);
                                                 EXPECT_EQ(f.geometry.has_value(), e.geometry.has_value());
                                                 if (!e.geometry) EXPECT_EQ(r.message, e.error);
                                               });
    EXPECT_EQ(n, expected.size()) << threads << " threads, batches of " << batch;
    EXPECT_EQ(k, expected.size());
  }
}

TEST(Runner, InMemoryFeaturesGiveTheStreamingResultsOnAnyThreadCount) {
  const std::uint64_t seed = 16;
  RecordProperty("seed", std::to_string(seed));
  const std::string text = make_ndjson(200, seed);
  const std::vector<Row> streamed = run(text, 2, 16);
  std::istringstream in(text);
  FeatureReader reader(in, {gridtruth::InputFormat::ndjson});
  std::vector<InputFeature> features;
  while (auto f = reader.next()) features.push_back(std::move(*f));
  AuditOptions options;
  options.target_crs = "EPSG:26915";
  const Auditor auditor(options);
  for (const auto& [threads, batch] : std::vector<std::pair<unsigned, std::size_t>>{{1, 256}, {2, 1}, {3, 7}}) {
    const std::vector<AuditResult> results = gridtruth::audit_features(features, auditor, RunOptions{threads, batch});
    ASSERT_EQ(results.size(), streamed.size());
    for (std::size_t i = 0; i < results.size(); ++i) {
      EXPECT_EQ(results[i].status, streamed[i].status) << streamed[i].id;
      EXPECT_EQ(results[i].message, streamed[i].message) << streamed[i].id;
      if (!std::isnan(streamed[i].area)) EXPECT_EQ(results[i].area->grid, streamed[i].area) << streamed[i].id;
    }
  }
}

}  // namespace
