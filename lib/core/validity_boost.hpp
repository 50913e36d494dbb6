// gridtruth — internal: the Boost.Geometry models of validate() and repair() (lib/core/validity.cpp,
// lib/core/validity_repair.cpp).
#pragma once

// The whole library: the geographic strategies are registered by its umbrella header.
#include <boost/geometry.hpp>

#include "gridtruth/geometry.hpp"

namespace gridtruth::detail::validity {

namespace bg = boost::geometry;

using PlanePoint = bg::model::d2::point_xy<double>;
using GeoPoint = bg::model::point<double, 2, bg::cs::geographic<bg::degree>>;
template <class P>
using BPolygon = bg::model::polygon<P, false, true>;  // counter-clockwise outer rings, closed
template <class P>
using BMulti = bg::model::multi_polygon<BPolygon<P>>;

template <class P>
P to_boost(const Coord& c) {
  return P(c.x, c.y);
}
template <class P>
Coord from_boost(const P& p) {
  return {bg::get<0>(p), bg::get<1>(p)};
}

}  // namespace gridtruth::detail::validity
