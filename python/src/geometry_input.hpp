// gridtruth Python binding — Python geometry objects to gridtruth::Geometry.
#pragma once

#include <pybind11/pybind11.h>

#include <string_view>

#include "gridtruth/io.hpp"

namespace gridtruth::python {

/// Parses well-known binary (ISO 19125-1 / OGC 06-103r4 §8.2, either byte order; ISO Z/M/ZM type codes 1001…3006
/// and the EWKB flag bits GEOS writes, whose third and fourth ordinates are dropped and SRID skipped). Throws
/// Error(parse) naming the problem and its 0-based byte offset; GeometryCollection is not supported. An empty point
/// (NaN coordinates, as GEOS writes it) and empty parts come back empty: validate() names them.
Geometry parse_wkb(std::string_view bytes);

/// One Python object as a feature to audit: WKB (bytes, bytearray, memoryview), WKT (str), an object with `wkb`
/// (shapely geometries), or a GeoJSON-like mapping / object with `__geo_interface__`. Never throws for bad content:
/// the feature comes back with `error` set (None: "the feature has no geometry"). Needs the GIL.
InputFeature feature_of(pybind11::handle object);

}  // namespace gridtruth::python
