// gridtruth — internal: simplification of the report's projected paths (lib/report/simplify.cpp).
#pragma once

#include "gridtruth/geometry.hpp"

namespace gridtruth::detail {

/// Douglas–Peucker simplification of a path in the plane (Douglas & Peucker 1973; Boost.Geometry's simplify),
/// tolerance in plane units.
/// A ring keeps its vertex farthest from the first as well, so it never collapses to a segment. `out` is
/// overwritten; a path of 2 vertices or fewer, or a tolerance that is not positive, is copied whole.
void simplify(const Path& in, double tolerance, bool ring, Path& out);

}  // namespace gridtruth::detail
