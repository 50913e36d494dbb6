// gridtruth — internal: Douglas–Peucker simplification of the report's projected paths, by Boost.Geometry.
#include "simplify.hpp"

// The umbrella header: it registers the cartesian distance strategies simplify() needs.
#include <boost/geometry.hpp>

#include <cmath>
#include <cstddef>

namespace gridtruth::detail {

namespace {

namespace bg = boost::geometry;
using PlanePoint = bg::model::d2::point_xy<double>;
using PlaneLine = bg::model::linestring<PlanePoint>;

/// Appends the simplification of in[first..last] to `out` (without its first vertex when `skip_first`).
void simplify_run(const Path& in, std::size_t first, std::size_t last, double tolerance, bool skip_first,
                  Path& out) {
  PlaneLine line, simple;
  line.reserve(last - first + 1);
  // Centred on the run's first vertex (DEVELOPERS.md rule 8): the distances keep their precision.
  const double ox = in[first].x, oy = in[first].y;
  for (std::size_t k = first; k <= last; ++k) line.emplace_back(in[k].x - ox, in[k].y - oy);
  bg::simplify(line, simple, tolerance);
  // The kept points are input points, in order: written back as given (not un-centred, which could round).
  std::size_t k = 0;
  for (std::size_t i = 0; i < simple.size(); ++i) {
    while (k < line.size() && !(line[k].x() == simple[i].x() && line[k].y() == simple[i].y())) ++k;
    if (k == line.size()) break;  // not reached: simplify keeps input points
    if (i > 0 || !skip_first) out.push_back(in[first + k]);
    ++k;
  }
}

}  // namespace

void simplify(const Path& in, double tolerance, bool ring, Path& out) {
  out.clear();
  const std::size_t n = in.size();
  if (n <= 2 || !(tolerance > 0)) {
    out = in;
    return;
  }
  if (!ring) {
    simplify_run(in, 0, n - 1, tolerance, false, out);
    return;
  }
  // A ring keeps its vertex farthest from the first too, so it never collapses to a segment: the two runs either
  // side of it are simplified apart.
  std::size_t far = 0;
  double best = -1;
  for (std::size_t k = 1; k < n; ++k) {
    const double d = std::hypot(in[k].x - in[0].x, in[k].y - in[0].y);
    if (d > best) best = d, far = k;
  }
  simplify_run(in, 0, far, tolerance, false, out);
  if (far < n - 1) simplify_run(in, far, n - 1, tolerance, true, out);
}

}  // namespace gridtruth::detail
