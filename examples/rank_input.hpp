// gridtruth command — reading a whole input for `rank` and `tailor` (they need every feature at once).
#pragma once

#include <string>
#include <utility>
#include <vector>

#include "gridtruth/geometry.hpp"
#include "gridtruth/io.hpp"

namespace gridtruth::cli {

/// Every feature's geometry and height; features the reader could not understand are counted and left out.
struct LoadedFeatures {
  std::vector<Geometry> geometries;
  std::vector<double> heights_m;  ///< empty without a height field
  std::size_t unreadable = 0;
};

/// Throws what FeatureReader throws (Error(io), Error(parse), Error(invalid_argument) for a bad format name).
inline LoadedFeatures load_features(const std::string& input, const std::string& format,
                                    const std::string& wkt_field, const std::string& height_field) {
  ReaderOptions ro;
  ro.format = parse_input_format(format);
  ro.wkt_field = wkt_field;
  ro.height_field = height_field;
  FeatureReader reader(input, ro);
  LoadedFeatures out;
  while (auto f = reader.next()) {
    if (!f->geometry) {
      ++out.unreadable;
      continue;
    }
    out.geometries.push_back(std::move(*f->geometry));
    if (!height_field.empty()) out.heights_m.push_back(f->height_m.value_or(0.0));
  }
  return out;
}

}  // namespace gridtruth::cli
