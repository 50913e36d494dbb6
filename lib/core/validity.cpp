// gridtruth — polygon topology: the OGC checks of validate() and repair() (see geometry.hpp).
//
// Assertions checked (OGC 06-103r4, OpenGIS Implementation Standard for Geographic information — Simple feature
// access — Part 1: Common architecture, version 1.2.1, 6.1.11.1 Polygon and 6.1.13.1 MultiPolygon): rings are
// simple (no self-crossing, no self-touching, no spike); the rings of a polygon meet at most at single points; the
// holes lie inside the outer ring and not inside each other; the interior is connected; the interiors of a
// multi-polygon's parts are disjoint.
#include "validity.hpp"

#include <algorithm>
#include <array>
#include <cmath>
#include <cstdio>
#include <optional>
#include <string>
#include <utility>
#include <vector>

// The whole library: the geographic strategies are registered by its umbrella header.
#include <boost/geometry.hpp>

namespace bg = boost::geometry;

namespace gridtruth {

namespace {

constexpr double kDegToRad = 3.14159265358979323846 / 180;
// Mean radius R1 of GRS 80 (Moritz 2000, "Geodetic Reference System 1980", J. Geodesy 74: R1 = 6 371 008.8 m):
// only sets the plane's scale, so that its coordinates are close to metres.
constexpr double kRadius_m = 6371008.8;
// Two projected vertices closer than this (metres) are one vertex: far below any surveyed distance and far
// above the round-off of the plane's coordinates (≈ 1e-9 m at 10⁷ m).
constexpr double kSameVertex_m = 1e-8;
// Largest angle between a vertex and the plane's centre: the gnomonic plane holds a hemisphere, and within 60°
// its scale (sec² c ≤ 4) keeps the predicates' round-off small.
const double kCosPlaneReach = 0.5;

struct Vec3 {
  double x = 0, y = 0, z = 0;
};
double dot(const Vec3& a, const Vec3& b) { return a.x * b.x + a.y * b.y + a.z * b.z; }
Vec3 cross(const Vec3& a, const Vec3& b) {
  return {a.y * b.z - a.z * b.y, a.z * b.x - a.x * b.z, a.x * b.y - a.y * b.x};
}
Vec3 scaled(const Vec3& a, double s) { return {a.x * s, a.y * s, a.z * s}; }
Vec3 unit_vector(const Coord& c) {
  const double lon = c.x * kDegToRad, lat = c.y * kDegToRad;
  const double cos_lat = std::cos(lat);
  return {cos_lat * std::cos(lon), cos_lat * std::sin(lon), std::sin(lat)};
}

template <class F>
void for_each_ring(const Geometry& g, F&& f) {
  for (std::size_t p = 0; p < g.polygons.size(); ++p) {
    f(p, 0, g.polygons[p].outer);
    for (std::size_t h = 0; h < g.polygons[p].holes.size(); ++h) f(p, h + 1, g.polygons[p].holes[h]);
  }
}

// The spherical gnomonic projection centred at unit vector c (Snyder 1987, "Map Projections — A Working Manual",
// USGS PP 1395, eqs. 22-4, 22-5 in vector form): x = R (p·e)/(p·c), y = R (p·n)/(p·c). Great circles are straight
// lines in it, so great-circle edges are exactly the segments between the projected vertices.
class GnomonicPlane {
 public:
  /// The plane centred on the mean direction of the polygons' vertices, or none when a vertex lies more than 60°
  /// from it (or the directions cancel).
  static std::optional<GnomonicPlane> around(const Geometry& g) {
    Vec3 sum;
    std::size_t count = 0;
    for_each_ring(g, [&](std::size_t, std::size_t, const Path& ring) {
      for (const Coord& c : ring) {
        const Vec3 u = unit_vector(c);
        sum = {sum.x + u.x, sum.y + u.y, sum.z + u.z};
        ++count;
      }
    });
    const double norm = std::sqrt(dot(sum, sum));
    if (count == 0 || !(norm > 1e-6 * static_cast<double>(count))) return std::nullopt;
    GnomonicPlane plane;
    plane.c_ = scaled(sum, 1 / norm);
    bool fits = true;
    for_each_ring(g, [&](std::size_t, std::size_t, const Path& ring) {
      for (const Coord& c : ring) fits = fits && dot(unit_vector(c), plane.c_) >= kCosPlaneReach;
    });
    if (!fits) return std::nullopt;
    const Vec3 east{-plane.c_.y, plane.c_.x, 0};
    const double east_norm = std::sqrt(dot(east, east));
    plane.e_ = east_norm > 1e-12 ? scaled(east, 1 / east_norm) : Vec3{0, 1, 0};  // at a pole any east will do
    plane.n_ = cross(plane.c_, plane.e_);
    return plane;
  }
  Coord forward(const Coord& lonlat) const {
    const Vec3 p = unit_vector(lonlat);
    const double d = dot(p, c_);
    return {kRadius_m * dot(p, e_) / d, kRadius_m * dot(p, n_) / d};
  }
  Coord inverse(const Coord& xy) const {
    const double u = xy.x / kRadius_m, v = xy.y / kRadius_m;
    const Vec3 p{c_.x + u * e_.x + v * n_.x, c_.y + u * e_.y + v * n_.y, c_.z + u * e_.z + v * n_.z};
    return {std::atan2(p.y, p.x) / kDegToRad, std::atan2(p.z, std::hypot(p.x, p.y)) / kDegToRad};
  }

 private:
  Vec3 c_, e_, n_;
};

// A ring as checked: distinct consecutive vertices, open (the closing vertex dropped).
struct Ring {
  std::vector<Coord> pts;
  std::vector<std::size_t> origin;  // origin[k]: the index as given of the vertex where segment k starts
};

template <class ToPoint>
Ring make_ring(const Path& path, ToPoint&& to_point, double same) {
  Ring r;
  r.pts.reserve(path.size());
  r.origin.reserve(path.size());
  auto near = [same](const Coord& a, const Coord& b) {
    return std::fabs(a.x - b.x) <= same && std::fabs(a.y - b.y) <= same;
  };
  for (std::size_t i = 0; i < path.size(); ++i) {
    const Coord q = to_point(path[i]);
    if (!r.pts.empty() && near(q, r.pts.back())) {
      r.origin.back() = i;  // a repeated vertex: the segment starts at its last copy
      continue;
    }
    r.pts.push_back(q);
    r.origin.push_back(i);
  }
  while (r.pts.size() > 1 && near(r.pts.front(), r.pts.back())) {
    r.pts.pop_back();
    r.origin.pop_back();
  }
  return r;
}

double orient(const Coord& p, const Coord& q, const Coord& r) {
  return (q.x - p.x) * (r.y - p.y) - (q.y - p.y) * (r.x - p.x);
}

bool in_box(const Coord& p, const Coord& s0, const Coord& s1) {
  return std::min(s0.x, s1.x) <= p.x && p.x <= std::max(s0.x, s1.x) && std::min(s0.y, s1.y) <= p.y &&
         p.y <= std::max(s0.y, s1.y);
}

// Where two segments that share no vertex meet (touching included), if they do.
std::optional<Coord> segments_meet(const Coord& a0, const Coord& a1, const Coord& b0, const Coord& b1) {
  const double o1 = orient(a0, a1, b0), o2 = orient(a0, a1, b1);
  const double o3 = orient(b0, b1, a0), o4 = orient(b0, b1, a1);
  if (o1 == 0 && o2 == 0) {  // collinear: they meet where one holds an end of the other
    for (const Coord& p : {b0, b1}) {
      if (in_box(p, a0, a1)) return p;
    }
    for (const Coord& p : {a0, a1}) {
      if (in_box(p, b0, b1)) return p;
    }
    return std::nullopt;
  }
  if ((o1 > 0 && o2 > 0) || (o1 < 0 && o2 < 0) || (o3 > 0 && o4 > 0) || (o3 < 0 && o4 < 0)) return std::nullopt;
  const double t = o1 / (o1 - o2);
  return Coord{b0.x + t * (b1.x - b0.x), b0.y + t * (b1.y - b0.y)};
}

// A ring's first defect: segments a < b meeting at `at`, or a spike (the ring turning back at vertex `apex`).
struct Crossing {
  std::size_t a = 0, b = 0;
  Coord at;
  bool spike = false;
  std::size_t apex = 0;
};

// A spike first (the ring turning back at a vertex: the angle between its two segments below 1e-12 rad), then a
// sweep over the segments sorted by their smallest x, each tested against the later ones whose x-range overlaps
// its own (O(n log n) for ordinary rings); adjacent segments meet only at their shared vertex.
std::optional<Crossing> first_self_crossing(const std::vector<Coord>& v) {
  const std::size_t n = v.size();
  if (n < 3) return std::nullopt;
  for (std::size_t s = 0; s < n; ++s) {
    const Coord& shared = v[s];
    const Coord& before = v[(s + n - 1) % n];
    const Coord& after = v[(s + 1) % n];
    const double ux = before.x - shared.x, uy = before.y - shared.y;
    const double wx = after.x - shared.x, wy = after.y - shared.y;
    const double cross_uw = ux * wy - uy * wx, dot_uw = ux * wx + uy * wy;
    if (dot_uw > 0 && std::fabs(cross_uw) <= 1e-12 * std::hypot(ux, uy) * std::hypot(wx, wy)) {
      return Crossing{(s + n - 1) % n, s, shared, true, s};
    }
  }
  struct Seg {
    double x_min, x_max, y_min, y_max;
    std::size_t k;
  };
  std::vector<Seg> segs(n);
  for (std::size_t k = 0; k < n; ++k) {
    const Coord& p = v[k];
    const Coord& q = v[(k + 1) % n];
    segs[k] = {std::min(p.x, q.x), std::max(p.x, q.x), std::min(p.y, q.y), std::max(p.y, q.y), k};
  }
  std::sort(segs.begin(), segs.end(), [](const Seg& s, const Seg& t) { return s.x_min < t.x_min; });
  for (std::size_t i = 0; i < n; ++i) {
    for (std::size_t j = i + 1; j < n && segs[j].x_min <= segs[i].x_max; ++j) {
      if (segs[j].y_min > segs[i].y_max || segs[i].y_min > segs[j].y_max) continue;
      const std::size_t a = std::min(segs[i].k, segs[j].k), b = std::max(segs[i].k, segs[j].k);
      if (b == a + 1 || (a == 0 && b == n - 1)) continue;  // adjacent: no spike, so they share only the vertex
      if (const auto at = segments_meet(v[a], v[(a + 1) % n], v[b], v[(b + 1) % n])) {
        return Crossing{a, b, *at, false, 0};
      }
    }
  }
  return std::nullopt;
}

std::string lonlat_text(const Coord& c) {
  char buf[64];
  std::snprintf(buf, sizeof buf, "(%.9f, %.9f)", c.x, c.y);
  return buf;
}

std::string ring_name(bool multi, std::size_t part, std::size_t ring) {
  std::string where = multi ? "polygon " + std::to_string(part) + " " : "";
  return where + (ring == 0 ? "outer ring" : "hole " + std::to_string(ring - 1));
}
std::string part_name(bool multi, std::size_t part) {
  return multi ? "polygon " + std::to_string(part) : "the polygon";
}

void add(std::vector<Problem>& problems, Problem::Code code, std::string message, std::optional<Coord> at) {
  problems.push_back(Problem{code, std::move(message), at});
}

// ---- Boost.Geometry: relations between the rings -----------------------------------------------------------------

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

template <class P, class ToLonLat>
void boost_check(const std::vector<std::vector<Ring>>& parts, bool multi, ToLonLat&& to_lonlat,
                 std::vector<Problem>& problems) {
  const BoostFeature<P> f = to_boost_feature<P>(parts);
  FailureVisitor<P> visitor;
  if (bg::is_valid(f.multi, visitor, bg::default_strategy())) return;
  using Code = Problem::Code;
  auto lonlat_of_vertex = [&](std::size_t p, std::size_t r, std::size_t given) -> Coord {
    for (std::size_t i = 0; i < parts[p][r].pts.size(); ++i) {
      if (parts[p][r].origin[i] == given) return to_lonlat(parts[p][r].pts[i]);
    }
    return to_lonlat(parts[p][r].pts.front());
  };
  auto ring_of = [&](std::size_t p, std::size_t r) -> const auto& {
    return r == 0 ? f.multi[p].outer() : f.multi[p].inners()[r - 1];
  };
  switch (visitor.failure) {
    case bg::failure_self_intersections: {
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
      return;
    }
    case bg::failure_spikes: {
      const std::optional<Coord> at = visitor.at ? std::optional<Coord>(to_lonlat(*visitor.at)) : std::nullopt;
      add(problems, Code::spike, "a ring turns back on itself (spike)" + (at ? " at " + lonlat_text(*at) : ""), at);
      return;
    }
    case bg::failure_wrong_orientation:
      add(problems, Code::self_intersection, "a ring crosses itself (its lobes cancel: no orientation)", std::nullopt);
      return;
    case bg::failure_interior_rings_outside:
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
      return;
    case bg::failure_nested_interior_rings:
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
      return;
    case bg::failure_disconnected_interior:
      for (std::size_t p = 0; p < parts.size(); ++p) {
        bg::validity_failure_type why = bg::no_failure;
        if (!bg::is_valid(f.multi[p], why) && why == bg::failure_disconnected_interior) {
          add(problems, Code::disconnected_interior, part_name(multi, p) + ": its holes cut the interior into pieces",
              std::nullopt);
          return;
        }
      }
      add(problems, Code::disconnected_interior, "holes cut the interior into pieces", std::nullopt);
      return;
    case bg::failure_intersecting_interiors:
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
      return;
    default:
      add(problems, Code::self_intersection,
          std::string("invalid polygon topology: ") + bg::validity_failure_type_message(visitor.failure),
          std::nullopt);
      return;
  }
}

template <class ToPoint>
std::vector<std::vector<Ring>> feature_rings(const Geometry& g, ToPoint&& to_point, double same) {
  std::vector<std::vector<Ring>> parts(g.polygons.size());
  for_each_ring(g, [&](std::size_t p, std::size_t, const Path& ring) { parts[p].push_back(make_ring(ring, to_point, same)); });
  return parts;
}

double wrap180(double lon) {
  double w = std::fmod(lon + 180.0, 360.0);
  if (w < 0) w += 360.0;
  return w - 180.0;
}

// ---- repair -----------------------------------------------------------------------------------------------------

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
