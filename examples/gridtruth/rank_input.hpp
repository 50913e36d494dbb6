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

/// How rank and tailor read their input (--format, --wkt-field, --height-field, --height-from-z).
struct ReadingArgs {
  std::string format = "auto";
  std::string wkt_field = "wkt";
  std::string height_field;
  bool height_from_z = false;
};

/// Throws what FeatureReader throws (Error(io), Error(parse), Error(invalid_argument) for a bad format name).
inline LoadedFeatures load_features(const std::string& input, const ReadingArgs& reading) {
  ReaderOptions ro;
  ro.format = parse_input_format(reading.format);
  ro.wkt_field = reading.wkt_field;
  ro.height_field = reading.height_field;
  ro.height_from_z = reading.height_from_z;
  if (input == "-" && standard_input_closed())
    throw Error(ErrorCode::io, "cannot read standard input: it is closed");
  FeatureReader reader(input, ro);
  LoadedFeatures out;
  while (auto f = reader.next()) {
    if (!f->geometry) {
      ++out.unreadable;
      continue;
    }
    out.features.push_back({std::move(*f->geometry), f->height_m});  // a height only with a height option
  }
  return out;
}

/// The options that say how to read the input: --format, --wkt-field, --height-field (its help text followed by
/// `height_note`) and --height-from-z.
inline void add_reading_options(CLI::App* app, ReadingArgs& reading, const std::string& height_note) {
  app->add_option("--format", reading.format, "input format: auto, geojson, ndjson, csv, gdal")->capture_default_str();
  app->add_option("--wkt-field", reading.wkt_field, "CSV column that holds the WKT geometry")->capture_default_str();
  app->add_option("--height-field", reading.height_field,
                  "property or column holding each feature's ellipsoidal height in metres" + height_note);
  app->add_flag("--height-from-z", reading.height_from_z,
                "take each feature's ellipsoidal height from its Z coordinates (the mean of its positions' Z)" +
                    height_note)
      ->excludes(app->get_option("--height-field"));
}

/// A number with a fixed count of decimals for the text reports: fixed_text(), except that an infinite figure
/// (a candidate that cannot measure the features: worst_ppm = inf) reads "inf".
inline std::string fixed(double v, int decimals) {
  if (std::isinf(v)) return v > 0 ? "inf" : "-inf";
  return fixed_text(v, decimals);
}

}  // namespace gridtruth::cli
