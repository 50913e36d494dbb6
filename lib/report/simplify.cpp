// gridtruth — internal: Douglas–Peucker simplification of the report's projected paths.
#include "simplify.hpp"

#include <cmath>
#include <utility>
#include <vector>

namespace gridtruth::detail {

void simplify(const Path& in, double tolerance, bool ring, Path& out) {
  out.clear();
  const std::size_t n = in.size();
  if (n <= 2 || !(tolerance > 0)) {
    out = in;
    return;
  }
  std::vector<char> keep(n, 0);
  keep[0] = keep[n - 1] = 1;
  // A ring keeps its farthest vertex from the first too, so it never collapses to a segment.
  std::vector<std::pair<std::size_t, std::size_t>> stack;
  if (ring) {
    std::size_t far = 0;
    double best = -1;
    for (std::size_t k = 1; k < n; ++k) {
      const double d = std::hypot(in[k].x - in[0].x, in[k].y - in[0].y);
      if (d > best) best = d, far = k;
    }
    keep[far] = 1;
    stack.push_back({0, far});
    stack.push_back({far, n - 1});
  } else {
    stack.push_back({0, n - 1});
  }
  while (!stack.empty()) {
    const auto [a, b] = stack.back();
    stack.pop_back();
    if (b <= a + 1) continue;
    // Centred coordinates before the cross product (DEVELOPERS.md rule 8).
    const double ax = in[a].x, ay = in[a].y;
    const double dx = in[b].x - ax, dy = in[b].y - ay, len = std::hypot(dx, dy);
    std::size_t far = a;
    double best = -1;
    for (std::size_t k = a + 1; k < b; ++k) {
      const double px_ = in[k].x - ax, py_ = in[k].y - ay;
      const double d = len > 0 ? std::fabs(px_ * dy - py_ * dx) / len : std::hypot(px_, py_);
      if (d > best) best = d, far = k;
    }
    if (best > tolerance) {
      keep[far] = 1;
      stack.push_back({a, far});
      stack.push_back({far, b});
    }
  }
  for (std::size_t k = 0; k < n; ++k)
    if (keep[k]) out.push_back(in[k]);
}

}  // namespace gridtruth::detail
