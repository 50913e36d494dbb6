// gridtruth — the rings of validate() and repair() in a local plane (see validity_rings.hpp).
#include "validity_rings.hpp"

#include <algorithm>
#include <cstdio>
#include <utility>

namespace gridtruth::detail::validity {

std::optional<GnomonicPlane> GnomonicPlane::around(const Geometry& g) {
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

namespace {

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

}  // namespace

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

double wrap180(double lon) {
  double w = std::fmod(lon + 180.0, 360.0);
  if (w < 0) w += 360.0;
  return w - 180.0;
}

}  // namespace gridtruth::detail::validity
