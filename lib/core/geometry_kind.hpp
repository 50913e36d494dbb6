// Internal: what kind of measure a geometry type has (areal: polygons; linear: lines), in one place.
#pragma once

#include "gridtruth/geometry.hpp"

namespace gridtruth::detail {

inline bool is_linear(GeometryType t) noexcept {
  return t == GeometryType::line_string || t == GeometryType::multi_line_string;
}
inline bool is_areal(GeometryType t) noexcept {
  return t == GeometryType::polygon || t == GeometryType::multi_polygon;
}

}  // namespace gridtruth::detail
