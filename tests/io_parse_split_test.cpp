// The reader's two halves: cutting (FeatureReader::next_raw) and parsing (FeatureReader::parse), and the fast
// JSON path behind parse (simdjson) against the nlohmann-json reading it must reproduce exactly.
#include <gtest/gtest.h>

#include <cstdio>
#include <filesystem>
#include <fstream>
#include <sstream>
#include <string>
#include <thread>
#include <vector>

#include "../lib/io/io_detail.hpp"  // parse_json_feature_reference: the nlohmann-only reading, for comparison
#include "gridtruth/error.hpp"
#include "gridtruth/io.hpp"
#include "test_files.hpp"

namespace {

using gridtruth::FeatureReader;
using gridtruth::InputFeature;
using gridtruth::InputFormat;
using gridtruth::RawFeature;
using gridtruth::ReaderOptions;

/// Everything a feature holds, numbers in hexadecimal floating point so that a difference in the last bit shows.
std::string describe(const InputFeature& f) {
  std::string s = "pos=" + std::to_string(f.position) + " line=" + std::to_string(f.line) + " id=[" + f.id +
                  "] error=[" + f.error + "] declared=" +
                  (f.declared_type ? std::string(to_string(*f.declared_type)) : "-") + " props=[" +
                  f.properties_json + "]";
  char buf[64];
  auto number = [&](double v) {
    std::snprintf(buf, sizeof buf, "%a,", v);
    s += buf;
  };
  s += " height=";
  if (f.height_m) number(*f.height_m);
  if (f.geometry) {
    const auto& g = *f.geometry;
    s += " type=" + std::string(to_string(g.type)) + " points=";
    for (const auto& c : g.points) number(c.x), number(c.y);
    s += " lines=";
    for (const auto& l : g.lines) {
      for (const auto& c : l) number(c.x), number(c.y);
      s += "|";
    }
    s += " polygons=";
    for (const auto& p : g.polygons) {
      for (const auto& c : p.outer) number(c.x), number(c.y);
      for (const auto& h : p.holes) {
        s += "H";
        for (const auto& c : h) number(c.x), number(c.y);
      }
      s += "|";
    }
  }
  return s;
}

enum class Way { next, raw_then_parse, alternating };

/// Every feature of `text` read one way, then "THROW <message>" if the reader threw.
std::vector<std::string> read_all(const std::string& text, ReaderOptions options, Way way) {
  std::istringstream in(text);
  FeatureReader reader(in, options);
  std::vector<std::string> out;
  try {
    for (std::size_t k = 0;; ++k) {
      std::optional<InputFeature> f;
      if (way == Way::next || (way == Way::alternating && k % 2 == 0)) {
        f = reader.next();
      } else if (auto raw = reader.next_raw()) {
        f = reader.parse(std::move(*raw));
      }
      if (!f) break;
      out.push_back(describe(*f));
    }
  } catch (const gridtruth::Error& e) {
    out.push_back(std::string("THROW ") + e.what());
  }
  return out;
}

// Hostile and unusual features: duplicate names, signed zeros, integers beyond 64 bits, escapes (lone surrogates
// among them), control characters, deep nesting, numbers out of range, every geometry type and wrong shapes.
const std::vector<std::string> hostile = {
    R"({"type":"Feature","id":1,"properties":{"b":1,"a":"x","a":2},"geometry":{"type":"Point","coordinates":[1,2]}})",
    R"({"type":"Feature","id":-0,"properties":{"z":-0,"y":-0.0,"x":1e2,"w":1.0,"v":18446744073709551615,)"
    R"("u":18446744073709551616,"t":-9223372036854775809},"geometry":{"type":"Point","coordinates":[-0,-0.0]}})",
    R"({"type":"Feature","id":"\u00e9\ud800","properties":{},"geometry":{"type":"Point","coordinates":[1,2]}})",
    R"({"type":"Feature","id":"\u00e9","properties":{"n\u0000":"\t\"q\\"},"geometry":{"type":"Point","coordinates":[1,2]}})",
    "{\"type\":\"Feature\",\"id\":\"tab\there\",\"geometry\":{\"type\":\"Point\",\"coordinates\":[1,2]}}",
    "{\"type\":\"Feature\",\"id\":\"a\x01\",\"geometry\":{\"type\":\"Point\",\"coordinates\":[1,2]}}",
    "{\"type\":\"Feature\",\"id\":\"bad \xff utf-8\",\"geometry\":{\"type\":\"Point\",\"coordinates\":[1,2]}}",
    R"({"type":"Feature","properties":{"h":12.5,"unit":"A"},"geometry":{"type":"Polygon","coordinates":)"
    R"([[[0,0],[1,0],[1,1],[0,0]],[[0.1,0.1],[0.2,0.1],[0.2,0.2],[0.1,0.1]]]}})",
    R"({"type":"Feature","properties":{"h":"12","unit":7.5},"geometry":{"type":"Point","coordinates":[1,2]}})",
    R"({"type":"Feature","properties":{"h":null,"unit":true},"geometry":{"type":"Point","coordinates":[1,2]}})",
    R"({"type":"Feature","properties":{"h":1e400},"geometry":{"type":"Point","coordinates":[1,2]}})",
    R"({"type":"Feature","properties":{"h":3,"h":-4},"geometry":{"type":"Point","coordinates":[1e-400,2]}})",
    R"({"type":"Feature","properties":[1,2],"geometry":{"type":"Point","coordinates":[1,2]}})",
    R"({"type":"Feature","properties":{"n":{"deep":[1,{"x":null,"y":true,"z":false}]},"s":"\/\b\f\n\r"},)"
    R"("geometry":{"type":"MultiPolygon","coordinates":[[[[0,0],[1,0],[1,1],[0,0]]],[]]}})",
    R"({"type":"Feature","properties":{"big":123456789012345678901234567890,"f":0.30000000000000004,"k":1e22},)"
    R"("geometry":{"type":"MultiLineString","coordinates":[[[0,0],[1,1]],[],[[2,2]]]},"id":3.25})",
    R"({"type":"Feature","id":true,"geometry":{"type":"MultiPoint","coordinates":[]}})",
    R"({"type":"Feature","id":[1],"geometry":{"type":"LineString","coordinates":[[1,2],[3]]}})",
    R"({"type":"Feature","geometry":{"type":"LineString","coordinates":[[1,2],"x"]}})",
    R"({"type":"Feature","geometry":{"type":"Polygon","coordinates":"x"}})",
    R"({"type":"Feature","geometry":{"type":"MultiPolygon","coordinates":[1]}})",
    R"({"type":"Feature","geometry":{"type":"MultiLineString","coordinates":{}}})",
    R"({"type":"Feature","geometry":[1,2]})",
    R"({"type":"Point","coordinates":[1,true]})",
    R"({"type":"Point","coordinates":[[1,2]]})",
    R"({"type":"Feature","id":1,"id":"second","geometry":{"type":"Point","coordinates":[1,2]},)"
    R"("geometry":{"type":"Point","coordinates":[3,4]}})",
    R"({"type":"Feature","geometry":{"type":"Point","coordinates":[1,2]},})",
    R"({"type":"Feature","geometry":{"type":"Point","coordinates":[01,2]}})",
    R"({"type":"Feature","geometry":{"type":"Point","coordinates":[1.,2]}})",
    R"({"type":"Feature","geometry":)" + std::string(1500, '[') + std::string(1500, ']') + "}",
    R"("just a string")",
    "17",
    R"({"type":"FeatureCollection","features":[]})",
};

std::string ndjson_of(const std::vector<std::string>& texts) {
  std::string s;
  for (const auto& t : texts) s += t + "\n";
  return s;
}

std::string collection_of(const std::vector<std::string>& texts) {
  std::string s = "{\"type\":\"FeatureCollection\",\"features\":[\n";
  for (std::size_t k = 0; k < texts.size(); ++k) s += (k ? ",\n" : "") + texts[k];
  return s + "\n]}\n";
}

std::vector<std::string> kept_fuzz_inputs() {
  std::vector<std::string> texts;
  for (const auto& file : gridtruth::test_files::kept_fuzz_inputs(GRIDTRUTH_SOURCE_DIR))
    texts.push_back(gridtruth::test_files::slurp(file.string()));
  return texts;
}

std::vector<ReaderOptions> option_sets() {
  std::vector<ReaderOptions> sets;
  for (auto format : {InputFormat::automatic, InputFormat::geojson, InputFormat::ndjson, InputFormat::csv}) {
    sets.push_back({format, "", "wkt", ""});
    sets.push_back({format, "unit", "wkt", "h"});
  }
  return sets;
}

TEST(RawFeatures, NextRawThenParseGivesWhatNextGives) {
  std::vector<std::string> inputs = kept_fuzz_inputs();
  ASSERT_FALSE(inputs.empty()) << "the fuzzing seeds are missing";
  inputs.push_back(ndjson_of(hostile));
  inputs.push_back(collection_of(hostile));
  inputs.push_back("\x1E" + hostile[0] + "\n\x1E" + hostile[7] + "\n");
  std::string truncated = collection_of(hostile);
  truncated.resize(truncated.size() / 2);
  inputs.push_back(truncated);
  inputs.push_back("id,wkt,h\n1,POINT(1 2),3\n2,\"LINESTRING(0 0,1 1)\",x\n3,POLYGON((0 0,1 0,1 1,0 0)),4\n");
  std::size_t features = 0;
  for (const auto& text : inputs) {
    for (const auto& options : option_sets()) {
      const auto expected = read_all(text, options, Way::next);
      features += expected.size();
      EXPECT_EQ(read_all(text, options, Way::raw_then_parse), expected) << text.substr(0, 200);
      EXPECT_EQ(read_all(text, options, Way::alternating), expected) << text.substr(0, 200);
    }
  }
  EXPECT_GT(features, 500u);  // the inputs really hold features
}

TEST(RawFeatures, FastParsingAgreesWithTheNlohmannReadingOnEveryFeature) {
  std::vector<std::string> inputs = kept_fuzz_inputs();
  inputs.push_back(ndjson_of(hostile));
  inputs.push_back(collection_of(hostile));
  std::size_t compared = 0;
  for (const auto& text : inputs) {
    for (const auto& options : option_sets()) {
      if (options.format == InputFormat::csv) continue;
      std::istringstream in(text);
      FeatureReader reader(in, options);
      try {
        while (auto raw = reader.next_raw()) {
          const gridtruth::detail::CutFeature& cut = gridtruth::detail::cut_of(*raw);
          if (cut.read) continue;  // read whole by the cutter: nothing to parse
          InputFeature fast, reference;
          fast.line = reference.line = raw->line();
          gridtruth::detail::parse_json_feature(cut, options, fast);
          gridtruth::detail::parse_json_feature_reference(cut, options, reference);
          EXPECT_EQ(describe(fast), describe(reference)) << cut.text.substr(0, 300);
          ++compared;
        }
      } catch (const gridtruth::Error&) {
        // an unreadable container: what was cut before it has been compared
      }
    }
  }
  EXPECT_GT(compared, 200u);
}

TEST(RawFeatures, ParseIsThreadSafe) {
  // Four threads parse interleaved shares of one input's raw features while the reader keeps cutting; the
  // result must equal the serial reading.
  std::string text;
  for (int k = 0; k < 50; ++k) text += ndjson_of(hostile);
  ReaderOptions options;
  options.format = InputFormat::ndjson;
  options.id_field = "unit";
  const auto expected = read_all(text, options, Way::next);
  std::istringstream in(text);
  FeatureReader reader(in, options);
  std::vector<RawFeature> raws;
  while (auto raw = reader.next_raw()) raws.push_back(std::move(*raw));
  ASSERT_EQ(raws.size(), expected.size());
  std::vector<std::string> got(raws.size());
  std::vector<std::thread> threads;
  for (std::size_t t = 0; t < 4; ++t) {
    threads.emplace_back([&, t] {
      for (std::size_t k = t; k < raws.size(); k += 4) got[k] = describe(reader.parse(std::move(raws[k])));
    });
  }
  for (auto& th : threads) th.join();
  EXPECT_EQ(got, expected);
}

TEST(RawFeatures, RawFeaturesAreNumberedAndKeepTheirLineAndByte) {
  // RFC 8142 section 2: RS (0x1E) before each text; the text's byte is the one after RS.
  const std::string text = "\n" + hostile[0] + "\n\n\x1E" + hostile[7] + "\n";
  std::istringstream in(text);
  FeatureReader reader(in, {InputFormat::ndjson});
  auto a = reader.next_raw();
  auto b = reader.next_raw();
  ASSERT_TRUE(a && b);
  EXPECT_FALSE(reader.next_raw());
  EXPECT_EQ(a->position(), 1u);
  EXPECT_EQ(a->line(), 2u);
  EXPECT_EQ(gridtruth::detail::cut_of(*a).byte, 1u);
  EXPECT_EQ(gridtruth::detail::cut_of(*a).text, hostile[0]);
  EXPECT_EQ(b->position(), 2u);
  EXPECT_EQ(b->line(), 4u);
  EXPECT_EQ(gridtruth::detail::cut_of(*b).byte, text.find('\x1E') + 1);
  EXPECT_EQ(gridtruth::detail::cut_of(*b).text, hostile[7] + "\n");  // up to the next RS or the end (RFC 7464 section 2.1)
}

}  // namespace
