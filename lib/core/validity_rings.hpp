// gridtruth — internal: the rings of validate() and repair() in a local plane (lib/core/validity_rings.cpp): the
// gnomonic plane, rings with their vertices as given, the self-crossing search, the messages' wording.
#pragma once

#include <cmath>
#include <cstddef>
#include <optional>
#include <string>
#include <vector>

#include "gridtruth/geometry.hpp"

namespace gridtruth::detail::validity {

inline constexpr double kDegToRad = 3.14159265358979323846 / 180;
// Mean radius R1 of GRS 80 (Moritz 2000, "Geodetic Reference System 1980", J. Geodesy 74: R1 = 6 371 008.8 m):
// only sets the plane's scale, so that its coordinates are close to metres.
inline constexpr double kRadius_m = 6371008.8;
// Two projected vertices closer than this (metres) are one vertex: far below any surveyed distance and far
// above the round-off of the plane's coordinates (≈ 1e-9 m at 10⁷ m).
inline constexpr double kSameVertex_m = 1e-8;
// Largest angle between a vertex and the plane's centre: the gnomonic plane holds a hemisphere, and within 60°
// its scale (sec² c ≤ 4) keeps the predicates' round-off small.
inline constexpr double kCosPlaneReach = 0.5;

struct Vec3 {
  double x = 0, y = 0, z = 0;
};
inline double dot(const Vec3& a, const Vec3& b) { return a.x * b.x + a.y * b.y + a.z * b.z; }
inline Vec3 cross(const Vec3& a, const Vec3& b) {
  return {a.y * b.z - a.z * b.y, a.z * b.x - a.x * b.z, a.x * b.y - a.y * b.x};
}
inline Vec3 scaled(const Vec3& a, double s) { return {a.x * s, a.y * s, a.z * s}; }
inline Vec3 unit_vector(const Coord& c) {
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
  static std::optional<GnomonicPlane> around(const Geometry& g);
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

template <class ToPoint>
std::vector<std::vector<Ring>> feature_rings(const Geometry& g, ToPoint&& to_point, double same) {
  std::vector<std::vector<Ring>> parts(g.polygons.size());
  for_each_ring(g, [&](std::size_t p, std::size_t, const Path& ring) { parts[p].push_back(make_ring(ring, to_point, same)); });
  return parts;
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
std::optional<Crossing> first_self_crossing(const std::vector<Coord>& v);

/// "(lon, lat)" with 9 decimals, for messages.
std::string lonlat_text(const Coord& c);
/// "outer ring", "hole 2", "polygon 1 hole 0" (indices 0-based; `ring` 0 is the outer ring).
std::string ring_name(bool multi, std::size_t part, std::size_t ring);
/// "the polygon" or "polygon 1".
std::string part_name(bool multi, std::size_t part);
void add(std::vector<Problem>& problems, Problem::Code code, std::string message, std::optional<Coord> at);
/// The longitude in [-180, 180).
double wrap180(double lon);

}  // namespace gridtruth::detail::validity
