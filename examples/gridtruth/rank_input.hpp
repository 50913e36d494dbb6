// gridtruth command — reading a whole input for `rank` and `tailor` (they need every feature at once), and what
// else the two commands share.
#pragma once

#include <CLI/CLI.hpp>

#include <cmath>
#include <cstdio>
#include <string>
#include <utility>
#include <vector>

#include "gridtruth/geometry.hpp"
#include "commands.hpp"
#include "gridtruth/error.hpp"
#include "gridtruth/io.hpp"
#include "gridtruth/rank.hpp"
#include "gridtruth/text.hpp"

namespace gridtruth::cli {

/// Every feature's geometry and height (with a height field); features the reader could not understand are counted
/// and left out.
struct LoadedFeatures {
  std::vector<RankFeature> features;
  std::size_t unreadable = 0;
};

/// Throws what FeatureReader throws (Error(io), Error(parse), Error(invalid_argument) for a bad format name).
inline LoadedFeatures load_features(const std::string& input, const std::string& format,
                                    const std::string& wkt_field, const std::string& height_field) {
  ReaderOptions ro;
  ro.format = parse_input_format(format);
  ro.wkt_field = wkt_field;
  ro.height_field = height_field;
  if (input == "-" && standard_input_closed())
    throw Error(ErrorCode::io, "cannot read standard input: it is closed");
  FeatureReader reader(input, ro);
  LoadedFeatures out;
  while (auto f = reader.next()) {
    if (!f->geometry) {
      ++out.unreadable;
      continue;
    }
    out.features.push_back({std::move(*f->geometry), f->height_m});  // a height only with a height field
  }
  return out;
}

/// The options that say how to read the input: --format, --wkt-field and --height-field (its help text followed
/// by `height_note`).
inline void add_reading_options(CLI::App* app, std::string& format, std::string& wkt_field,
                                std::string& height_field, const std::string& height_note) {
  app->add_option("--format", format, "input format: auto, geojson, ndjson, csv")->capture_default_str();
  app->add_option("--wkt-field", wkt_field, "CSV column that holds the WKT geometry")->capture_default_str();
  app->add_option("--height-field", height_field,
                  "property or column holding each feature's ellipsoidal height in metres" + height_note);
}

/// A number with a fixed count of decimals for the text reports: fixed_text(), except that an infinite figure
/// (a candidate that cannot measure the features: worst_ppm = inf) reads "inf".
inline std::string fixed(double v, int decimals) {
  if (std::isinf(v)) return v > 0 ? "inf" : "-inf";
  return fixed_text(v, decimals);
}

}  // namespace gridtruth::cli
