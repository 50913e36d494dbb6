// gridtruth — polygon topology: the OGC checks of validate() (see geometry.hpp), with Boost.Geometry.
//
// Assertions checked (OGC 06-103r4, OpenGIS Implementation Standard for Geographic information — Simple feature
// access — Part 1: Common architecture, version 1.2.1, 6.1.11.1 Polygon and 6.1.13.1 MultiPolygon): rings are
// simple (no self-crossing, no self-touching, no spike); the rings of a polygon meet at most at single points; the
// holes lie inside the outer ring and not inside each other; the interior is connected; the interiors of a
// multi-polygon's parts are disjoint.
//
// The rings in a local plane and their self-crossings: validity_rings.*; repair(): validity_repair.cpp.
#include "validity.hpp"

#include <algorithm>
#include <array>
#include <optional>
#include <string>
#include <utility>
#include <vector>

#include "validity_boost.hpp"
#include "validity_rings.hpp"

namespace gridtruth {

namespace {

using namespace detail::validity;

// A Boost ring of our ring, oriented as BPolygon wants (outer counter-clockwise, holes clockwise); says whether it
// had to be reversed.
template <class P>
bool fill_ring(const Ring& ring, bool outer, typename BPolygon<P>::ring_type& out) {
  out.clear();
  for (const Coord& c : ring.pts) out.push_back(to_boost<P>(c));
  if (!ring.pts.empty()) out.push_back(to_boost<P>(ring.pts.front()));
  const double area = bg::area(out);
  const bool reverse = outer ? area < 0 : area > 0;
  if (reverse) std::reverse(out.begin(), out.end());
  return reverse;
}

// The index as given of the vertex where Boost's segment s of a (possibly reversed) closed ring starts.
std::size_t given_segment(const Ring& ring, bool reversed, long s) {
  const std::size_t n = ring.pts.size();
  const std::size_t k = static_cast<std::size_t>(s) % n;
  return ring.origin[reversed ? (2 * n - k - 1) % n : k];
}

// Records the first failure Boost's is_valid reports, with its data (a turn for self-intersections, the apex for
// spikes). Repeated vertices are allowed (they are removed before, and tolerated by validate()).
template <class P>
struct FailureVisitor {
  bg::validity_failure_type failure = bg::no_failure;
  std::optional<Coord> at;
  std::array<bg::segment_identifier, 2> segments;
  bool has_segments = false;

  bool record(bg::validity_failure_type f) {
    if (f == bg::no_failure || f == bg::failure_duplicate_points) return true;
    failure = f;
    return false;
  }
  template <bg::validity_failure_type F>
  bool apply() {
    return record(F);
  }
  template <bg::validity_failure_type F, class Data>
  bool apply(const Data& data) {
    if constexpr (F == bg::failure_self_intersections) {
      if (!data.empty()) {
        const auto& turn = data.front();
        at = from_boost<P>(turn.point);
        segments = {turn.operations[0].seg_id, turn.operations[1].seg_id};
        has_segments = true;
      }
    }
    return record(F);
  }
  template <bg::validity_failure_type F, class Data1, class Data2>
  bool apply(const Data1&, const Data2& data2) {
    if constexpr (F == bg::failure_spikes) at = from_boost<P>(data2);
    return record(F);
  }
};

template <class P>
struct BoostFeature {
  BMulti<P> multi;
  std::vector<std::vector<bool>> reversed;
};

template <class P>
BoostFeature<P> to_boost_feature(const std::vector<std::vector<Ring>>& parts) {
  BoostFeature<P> f;
  f.multi.resize(parts.size());
  f.reversed.resize(parts.size());
  for (std::size_t p = 0; p < parts.size(); ++p) {
    f.multi[p].inners().resize(parts[p].size() - 1);
    for (std::size_t r = 0; r < parts[p].size(); ++r) {
      auto& out = r == 0 ? f.multi[p].outer() : f.multi[p].inners()[r - 1];
      f.reversed[p].push_back(fill_ring<P>(parts[p][r], r == 0, out));
    }
  }
  return f;
}

// The first vertex of ring `inner_ring` that lies strictly inside (`strict`) or outside (`!strict`, not even on
// the boundary) the region bounded by ring `outer_ring` alone; index as given.
template <class P>
std::optional<std::size_t> vertex_relative_to(const Ring& ring, const typename BPolygon<P>::ring_type& boost_ring,
                                              const typename BPolygon<P>::ring_type& region_ring, bool inside,
                                              bool region_is_outer) {
  BPolygon<P> region;
  region.outer() = region_ring;
  if (!region_is_outer) std::reverse(region.outer().begin(), region.outer().end());  // a hole as an outer ring
  for (std::size_t k = 0; k + 1 < boost_ring.size(); ++k) {
    const bool hit = inside ? bg::within(boost_ring[k], region) : !bg::covered_by(boost_ring[k], region);
    if (hit) {
      const Coord c = from_boost<P>(boost_ring[k]);
      for (std::size_t i = 0; i < ring.pts.size(); ++i) {
        if (ring.pts[i].x == c.x && ring.pts[i].y == c.y) return ring.origin[i];
      }
      return ring.origin[0];
    }
  }
  return std::nullopt;
}
// The messages about the failure Boost's is_valid found: which rings, segments and vertices, as given.
template <class P, class ToLonLat>
struct FailureReport {
  using Code = Problem::Code;
  const std::vector<std::vector<Ring>>& parts;
  const BoostFeature<P>& f;
  bool multi;
  const ToLonLat& to_lonlat;
  std::vector<Problem>& problems;

  Coord lonlat_of_vertex(std::size_t p, std::size_t r, std::size_t given) const {
    for (std::size_t i = 0; i < parts[p][r].pts.size(); ++i) {
      if (parts[p][r].origin[i] == given) return to_lonlat(parts[p][r].pts[i]);
    }
    return to_lonlat(parts[p][r].pts.front());
  }
  const auto& ring_of(std::size_t p, std::size_t r) const {
    return r == 0 ? f.multi[p].outer() : f.multi[p].inners()[r - 1];
  }

  void self_intersections(const FailureVisitor<P>& visitor) const {
    const std::optional<Coord> at = visitor.at ? std::optional<Coord>(to_lonlat(*visitor.at)) : std::nullopt;
    const std::string where = at ? " at " + lonlat_text(*at) : "";
    if (!visitor.has_segments) {
      add(problems, Code::rings_cross, "rings cross or overlap" + where, at);
      return;
    }
    std::array<std::size_t, 2> part{}, ring{}, seg{};
    for (int i = 0; i < 2; ++i) {
      const bg::segment_identifier& id = visitor.segments[i];
      part[i] = id.multi_index < 0 ? 0 : static_cast<std::size_t>(id.multi_index);
      ring[i] = static_cast<std::size_t>(id.ring_index + 1);
      seg[i] = given_segment(parts[part[i]][ring[i]], f.reversed[part[i]][ring[i]], id.segment_index);
    }
    const std::string a = ring_name(multi, part[0], ring[0]) + " segment " + std::to_string(seg[0]);
    const std::string b = ring_name(multi, part[1], ring[1]) + " segment " + std::to_string(seg[1]);
    if (part[0] != part[1]) {
      add(problems, Code::parts_overlap,
          part_name(true, part[0]) + " and " + part_name(true, part[1]) + " overlap (their area would be counted "
          "twice): " + a + " crosses " + b + where, at);
    } else if (ring[0] != ring[1]) {
      add(problems, Code::rings_cross, "rings cross: " + a + " crosses " + b + where, at);
    } else {
      add(problems, Code::self_intersection, "the ring crosses itself: " + a + " meets segment " +
          std::to_string(seg[1]) + where, at);
    }
  }
  void hole_outside() const {
    for (std::size_t p = 0; p < parts.size(); ++p) {
      for (std::size_t r = 1; r < parts[p].size(); ++r) {
        if (auto k = vertex_relative_to<P>(parts[p][r], ring_of(p, r), ring_of(p, 0), false, true)) {
          const Coord at = lonlat_of_vertex(p, r, *k);
          add(problems, Code::hole_outside, ring_name(multi, p, r) + ": vertex " + std::to_string(*k) + " " +
              lonlat_text(at) + " lies outside the outer ring", at);
          return;
        }
      }
    }
    add(problems, Code::hole_outside, "a hole lies outside its outer ring", std::nullopt);
  }
  void nested_holes() const {
    for (std::size_t p = 0; p < parts.size(); ++p) {
      for (std::size_t r = 1; r < parts[p].size(); ++r) {
        for (std::size_t q = 1; q < parts[p].size(); ++q) {
          if (q == r) continue;
          if (auto k = vertex_relative_to<P>(parts[p][r], ring_of(p, r), ring_of(p, q), true, false)) {
            const Coord at = lonlat_of_vertex(p, r, *k);
            add(problems, Code::nested_holes, ring_name(multi, p, r) + " lies inside hole " +
                std::to_string(q - 1) + " (vertex " + std::to_string(*k) + " at " + lonlat_text(at) + ")", at);
            return;
          }
        }
      }
    }
    add(problems, Code::nested_holes, "a hole lies inside another hole", std::nullopt);
  }
  void disconnected_interior() const {
    for (std::size_t p = 0; p < parts.size(); ++p) {
      bg::validity_failure_type why = bg::no_failure;
      if (!bg::is_valid(f.multi[p], why) && why == bg::failure_disconnected_interior) {
        add(problems, Code::disconnected_interior, part_name(multi, p) + ": its holes cut the interior into pieces",
            std::nullopt);
        return;
      }
    }
    add(problems, Code::disconnected_interior, "holes cut the interior into pieces", std::nullopt);
  }
  void intersecting_interiors() const {
    for (std::size_t p = 0; p < parts.size(); ++p) {
      for (std::size_t q = 0; q < parts.size(); ++q) {
        if (q == p) continue;
        if (auto k = vertex_relative_to<P>(parts[p][0], ring_of(p, 0), ring_of(q, 0), true, true)) {
          const Coord at = lonlat_of_vertex(p, 0, *k);
          add(problems, Code::parts_overlap, part_name(true, p) + " lies inside " + part_name(true, q) +
              " (their area would be counted twice; vertex " + std::to_string(*k) + " at " + lonlat_text(at) + ")",
              at);
          return;
        }
      }
    }
    add(problems, Code::parts_overlap, "the polygons overlap (their area would be counted twice)", std::nullopt);
  }
};

template <class P, class ToLonLat>
void boost_check(const std::vector<std::vector<Ring>>& parts, bool multi, const ToLonLat& to_lonlat,
                 std::vector<Problem>& problems) {
  const BoostFeature<P> f = to_boost_feature<P>(parts);
  FailureVisitor<P> visitor;
  if (bg::is_valid(f.multi, visitor, bg::default_strategy())) return;
  using Code = Problem::Code;
  const FailureReport<P, ToLonLat> report{parts, f, multi, to_lonlat, problems};
  switch (visitor.failure) {
    case bg::failure_self_intersections: report.self_intersections(visitor); return;
    case bg::failure_spikes: {
      const std::optional<Coord> at = visitor.at ? std::optional<Coord>(to_lonlat(*visitor.at)) : std::nullopt;
      add(problems, Code::spike, "a ring turns back on itself (spike)" + (at ? " at " + lonlat_text(*at) : ""), at);
      return;
    }
    case bg::failure_wrong_orientation:
      add(problems, Code::self_intersection, "a ring crosses itself (its lobes cancel: no orientation)", std::nullopt);
      return;
    case bg::failure_interior_rings_outside: report.hole_outside(); return;
    case bg::failure_nested_interior_rings: report.nested_holes(); return;
    case bg::failure_disconnected_interior: report.disconnected_interior(); return;
    case bg::failure_intersecting_interiors: report.intersecting_interiors(); return;
    default:
      add(problems, Code::self_intersection,
          std::string("invalid polygon topology: ") + bg::validity_failure_type_message(visitor.failure),
          std::nullopt);
      return;
  }
}

}  // namespace

std::string_view to_string(Problem::Code code) noexcept {
  switch (code) {
    case Problem::Code::non_finite: return "non_finite";
    case Problem::Code::latitude_range: return "latitude_range";
    case Problem::Code::longitude_range: return "longitude_range";
    case Problem::Code::empty: return "empty";
    case Problem::Code::too_few_vertices: return "too_few_vertices";
    case Problem::Code::wrong_part_count: return "wrong_part_count";
    case Problem::Code::self_intersection: return "self_intersection";
    case Problem::Code::spike: return "spike";
    case Problem::Code::rings_cross: return "rings_cross";
    case Problem::Code::hole_outside: return "hole_outside";
    case Problem::Code::nested_holes: return "nested_holes";
    case Problem::Code::disconnected_interior: return "disconnected_interior";
    case Problem::Code::parts_overlap: return "parts_overlap";
  }
  return "";
}

bool is_topology(Problem::Code code) noexcept {
  switch (code) {
    case Problem::Code::self_intersection:
    case Problem::Code::spike:
    case Problem::Code::rings_cross:
    case Problem::Code::hole_outside:
    case Problem::Code::nested_holes:
    case Problem::Code::disconnected_interior:
    case Problem::Code::parts_overlap:
      return true;
    default:
      return false;
  }
}

namespace detail {

void check_topology(const Geometry& g, std::vector<Problem>& problems) {
  if (g.type != GeometryType::polygon && g.type != GeometryType::multi_polygon) return;
  const bool multi = g.type == GeometryType::multi_polygon;
  if (const std::optional<GnomonicPlane> plane = GnomonicPlane::around(g)) {
    const auto parts = feature_rings(g, [&](const Coord& c) { return plane->forward(c); }, kSameVertex_m);
    auto to_lonlat = [&](const Coord& xy) { return plane->inverse(xy); };
    bool simple = true;
    for (std::size_t p = 0; p < parts.size(); ++p) {
      for (std::size_t r = 0; r < parts[p].size(); ++r) {
        const Ring& ring = parts[p][r];
        const std::optional<Crossing> c = first_self_crossing(ring.pts);
        if (!c) continue;
        simple = false;
        const Coord at = to_lonlat(c->at);
        if (c->spike) {
          add(problems, Problem::Code::spike, ring_name(multi, p, r) + ": spike at vertex " +
              std::to_string(ring.origin[c->apex]) + " " + lonlat_text(at) + " (the ring turns back on itself)", at);
        } else {
          add(problems, Problem::Code::self_intersection, ring_name(multi, p, r) + ": the ring crosses itself: "
              "segment " + std::to_string(ring.origin[c->a]) + " meets segment " + std::to_string(ring.origin[c->b]) +
              " at " + lonlat_text(at), at);
        }
      }
    }
    // One simple ring is a valid polygon (the common case: no Boost call); rings that cross themselves make the
    // relations between rings meaningless.
    if (!simple || (parts.size() == 1 && parts[0].size() == 1)) return;
    boost_check<PlanePoint>(parts, multi, to_lonlat, problems);
    return;
  }
  // Too large for one plane: Boost.Geometry on the WGS 84 ellipsoid, edges as geodesics.
  // Longitudes in [-180, 180); at a pole every longitude is one point (so a tile's two polar corners are one).
  const auto parts = feature_rings(
      g, [](const Coord& c) { return Coord{std::fabs(c.y) >= 90 ? 0.0 : wrap180(c.x), c.y}; }, 0.0);
  boost_check<GeoPoint>(parts, multi, [](const Coord& c) { return c; }, problems);
}

}  // namespace detail

}  // namespace gridtruth
