// gridtruth — internal: the topology checks of validate() (lib/core/validity.cpp).
#pragma once

#include <vector>

#include "gridtruth/geometry.hpp"

namespace gridtruth::detail {

/// Appends the topology problems of a polygon or multi-polygon whose vertices are all plausible (finite, in
/// range) and whose rings have at least 3 distinct vertices; does nothing for other geometry types.
void check_topology(const Geometry& geometry, std::vector<Problem>& problems);

}  // namespace gridtruth::detail
