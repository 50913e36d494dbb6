// gridtruth Python binding — Python geometry objects to gridtruth::Geometry.
#pragma once

#include <pybind11/pybind11.h>

#include <optional>
#include <string_view>
#include <vector>

#include "gridtruth/io.hpp"

namespace gridtruth::python {

/// Parses well-known binary (ISO 19125-1 / OGC 06-103r4 §8.2, either byte order; ISO Z/M/ZM type codes 1001…3006
/// and the EWKB flag bits GEOS writes, whose third and fourth ordinates are dropped and SRID skipped). Throws
/// Error(parse) naming the problem and its 0-based byte offset; GeometryCollection is not supported. An empty point
/// (NaN coordinates, as GEOS writes it) and empty parts come back empty: validate() names them.
Geometry parse_wkb(std::string_view bytes);

/// One Python object as a feature to audit: WKB (bytes, bytearray, memoryview), WKT (str), a shapely 1.x geometry
/// read straight from GEOS (see shapely_geos_geometry()), an object with `wkb` (other shapely geometries), or a
/// GeoJSON-like mapping / object with `__geo_interface__`. Never throws for bad content: the feature comes back with
/// `error` set (None: "the feature has no geometry"). Needs the GIL.
InputFeature feature_of(pybind11::handle object);

/// feature_of() of every object of a sequence, in order. The shapely 1.x geometries among them are read from GEOS
/// with the GIL released, on up to `threads` threads (0: every hardware thread), while the objects are held; the
/// features are the same as feature_of()'s, coordinate for coordinate. Needs the GIL (released meanwhile).
std::vector<InputFeature> features_of_objects(const pybind11::iterable& objects, unsigned threads);

/// True when shapely geometries can be read straight from GEOS: this module was built with GEOS and the imported
/// shapely is 1.x using the very libgeos_c loaded by this module (its GEOSversion is at our address). False for
/// shapely 2, a shapely with its own copy of GEOS (pip wheels), or when shapely is not imported. Needs the GIL.
bool shapely_geos_linked();

/// The GEOS geometry (a GEOSGeometry*) of a shapely 1.x geometry when shapely_geos_linked(), else nullptr. It lives
/// as long as the object is held and not changed (shapely 1.8's deprecated in-place setters replace it). Needs the GIL.
const void* shapely_geos_geometry(pybind11::handle object);

/// The coordinates of a GEOS Point, LineString, LinearRing (as a LineString), Polygon or Multi-*: x and y as GEOS
/// stores them, the same doubles as its WKB (Z dropped), empty parts as parse_wkb() gives them. nullopt for what it
/// does not take (an empty geometry, a GeometryCollection, a GEOS error): read the object with feature_of()'s other
/// routes. Needs no GIL; thread-safe for distinct or unchanging geometries (one GEOS context per thread).
std::optional<Geometry> geos_geometry(const void* geos_geometry);

}  // namespace gridtruth::python
