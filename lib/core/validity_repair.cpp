// gridtruth — repair() (see geometry.hpp): the even-odd rule in the feature's gnomonic plane, with Boost.Geometry's
// set operations.
#include <cmath>
#include <cstddef>
#include <optional>
#include <string>
#include <utility>
#include <vector>

// Boost.Geometry's init_rescale_policy leaves its `factor` unset when both operands of a set operation are empty
// (union_ of no holes with an empty ring region) and copies it into a policy that then goes unused; GCC 12 warns
// of it (-Wmaybe-uninitialized at rescale_policy.hpp:46) once the set operations sit in a file of their own. The
// warning is about Boost's code, reached as before the split, so it is silenced for Boost's headers only.
#if defined(__GNUC__) && !defined(__clang__)
#pragma GCC diagnostic push
#pragma GCC diagnostic ignored "-Wmaybe-uninitialized"
#endif
#include "validity_boost.hpp"
#if defined(__GNUC__) && !defined(__clang__)
#pragma GCC diagnostic pop
#endif
#include "validity_rings.hpp"

namespace gridtruth {

namespace {

using namespace detail::validity;

// A ring cut at its self-crossings into simple loops; spikes cut off.
std::vector<std::vector<Coord>> simple_loops(std::vector<Coord> ring) {
  std::vector<std::vector<Coord>> done, todo{std::move(ring)};
  auto tidy = [](std::vector<Coord>& v) {
    std::vector<Coord> out;
    for (const Coord& c : v) {
      if (out.empty() || std::fabs(c.x - out.back().x) > kSameVertex_m || std::fabs(c.y - out.back().y) > kSameVertex_m)
        out.push_back(c);
    }
    while (out.size() > 1 && std::fabs(out.front().x - out.back().x) <= kSameVertex_m &&
           std::fabs(out.front().y - out.back().y) <= kSameVertex_m)
      out.pop_back();
    v = std::move(out);
  };
  std::size_t budget = 64 + 16 * todo.front().size();  // each step removes a vertex or splits: bounded anyway
  while (!todo.empty() && budget-- > 0) {
    std::vector<Coord> v = std::move(todo.back());
    todo.pop_back();
    tidy(v);
    if (v.size() < 3) continue;
    const std::optional<Crossing> c = first_self_crossing(v);
    if (!c) {
      done.push_back(std::move(v));
      continue;
    }
    if (c->spike) {
      v.erase(v.begin() + static_cast<std::ptrdiff_t>(c->apex));
      todo.push_back(std::move(v));
      continue;
    }
    // Loop A: vertices 0..a, the crossing, b+1..n-1; loop B: the crossing, a+1..b.
    std::vector<Coord> first(v.begin(), v.begin() + static_cast<std::ptrdiff_t>(c->a + 1));
    first.push_back(c->at);
    first.insert(first.end(), v.begin() + static_cast<std::ptrdiff_t>(c->b + 1), v.end());
    std::vector<Coord> second{c->at};
    second.insert(second.end(), v.begin() + static_cast<std::ptrdiff_t>(c->a + 1),
                  v.begin() + static_cast<std::ptrdiff_t>(c->b + 1));
    todo.push_back(std::move(first));
    todo.push_back(std::move(second));
  }
  return done;
}

using PlaneMulti = BMulti<PlanePoint>;

// The even-odd union of a ring's loops: the symmetric difference of the regions they bound.
PlaneMulti ring_region(const Ring& ring) {
  PlaneMulti region;
  for (const std::vector<Coord>& loop : simple_loops(ring.pts)) {
    BPolygon<PlanePoint> poly;
    for (const Coord& c : loop) poly.outer().push_back(to_boost<PlanePoint>(c));
    poly.outer().push_back(to_boost<PlanePoint>(loop.front()));
    bg::correct(poly);
    if (!(bg::area(poly) > 0)) continue;
    PlaneMulti next;
    bg::sym_difference(region, poly, next);
    region = std::move(next);
  }
  return region;
}

}  // namespace

Repair repair(const Geometry& g) {
  Repair out;
  out.geometry = g;
  if (g.type != GeometryType::polygon && g.type != GeometryType::multi_polygon) {
    out.note = "only polygons and multi-polygons are repaired";
    return out;
  }
  const std::optional<GnomonicPlane> plane = GnomonicPlane::around(g);
  if (!plane) {
    out.note = "not repaired: the feature is too large for one local plane (a vertex lies more than 60° from its "
               "centre)";
    return out;
  }
  const auto parts = feature_rings(g, [&](const Coord& c) { return plane->forward(c); }, kSameVertex_m);
  PlaneMulti total;
  for (const std::vector<Ring>& part : parts) {
    const PlaneMulti outer = ring_region(part.front());
    PlaneMulti holes;
    for (std::size_t h = 1; h < part.size(); ++h) {
      PlaneMulti merged;
      bg::union_(holes, ring_region(part[h]), merged);
      holes = std::move(merged);
    }
    PlaneMulti region, merged;
    bg::difference(outer, holes, region);
    bg::union_(total, region, merged);
    total = std::move(merged);
  }
  if (total.empty()) {
    out.note = "not repaired: nothing is left (the rings enclose no area)";
    return out;
  }
  auto to_path = [&](const typename BPolygon<PlanePoint>::ring_type& ring) {
    Path path;
    path.reserve(ring.size());
    for (const PlanePoint& p : ring) path.push_back(plane->inverse(from_boost<PlanePoint>(p)));
    return path;
  };
  std::vector<Polygon> polygons;
  for (const BPolygon<PlanePoint>& poly : total) {
    Polygon p{to_path(poly.outer()), {}};
    for (const auto& inner : poly.inners()) p.holes.push_back(to_path(inner));
    polygons.push_back(std::move(p));
  }
  const std::size_t count = polygons.size();
  out.geometry = count == 1 ? Geometry::polygon(std::move(polygons[0].outer), std::move(polygons[0].holes))
                            : Geometry::multi_polygon(std::move(polygons));
  out.repaired = true;
  out.note = "repaired by the even-odd rule (self-crossing rings cut into loops, holes subtracted, parts united) "
             "into " + std::to_string(count) + (count == 1 ? " polygon" : " polygons");
  return out;
}

}  // namespace gridtruth
