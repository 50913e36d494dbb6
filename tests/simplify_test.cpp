// The report's path simplification (lib/report/simplify.hpp): Douglas–Peucker (Douglas & Peucker 1973, The
// Canadian Cartographer 10(2):112-122) by Boost.Geometry. Checked against the algorithm's defining property: the
// result is a subsequence of the input keeping both ends, and every dropped vertex lies within the tolerance of the
// kept segment that replaces it.
#include "../lib/report/simplify.hpp"

#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <iostream>
#include <random>

namespace gridtruth::detail {
namespace {

double distance_to_segment(const Coord& p, const Coord& a, const Coord& b) {
  const double dx = b.x - a.x, dy = b.y - a.y, len2 = dx * dx + dy * dy;
  const double t = len2 > 0 ? std::clamp(((p.x - a.x) * dx + (p.y - a.y) * dy) / len2, 0.0, 1.0) : 0.0;
  return std::hypot(p.x - (a.x + t * dx), p.y - (a.y + t * dy));
}

/// The indices of `out` in `in` (a subsequence), or an empty vector when it is not one.
std::vector<std::size_t> kept_indices(const Path& in, const Path& out) {
  std::vector<std::size_t> idx;
  std::size_t k = 0;
  for (const Coord& c : out) {
    while (k < in.size() && !(in[k].x == c.x && in[k].y == c.y)) ++k;
    if (k == in.size()) return {};
    idx.push_back(k++);
  }
  return idx;
}

TEST(Simplify, EveryDroppedVertexWithinTheToleranceOfItsSegment) {
  const unsigned seed = 20261204;
  std::cout << "seed " << seed << "\n";
  std::mt19937 rng(seed);
  std::normal_distribution<double> step(0, 50);
  for (int trial = 0; trial < 200; ++trial) {
    Path in;
    Coord c{500000, 4500000};
    for (int k = 0; k < 300; ++k) {
      c.x += 40 + step(rng);
      c.y += step(rng);
      in.push_back(c);
    }
    const double tolerance = 5.0 + trial;
    Path out;
    simplify(in, tolerance, false, out);
    const auto idx = kept_indices(in, out);
    ASSERT_EQ(idx.size(), out.size()) << "not a subsequence of the input";
    ASSERT_GE(idx.size(), 2u);
    EXPECT_EQ(idx.front(), 0u);
    EXPECT_EQ(idx.back(), in.size() - 1);
    for (std::size_t s = 0; s + 1 < idx.size(); ++s)
      for (std::size_t k = idx[s] + 1; k < idx[s + 1]; ++k)
        EXPECT_LE(distance_to_segment(in[k], in[idx[s]], in[idx[s + 1]]), tolerance * (1 + 1e-12)) << trial;
    EXPECT_LT(out.size(), in.size());  // a tolerance of metres over a random walk drops something
  }
}

TEST(Simplify, CollinearPointsGoASpikeAboveTheToleranceStays) {
  Path line;
  for (int k = 0; k <= 10; ++k) line.push_back({100.0 * k, 0});
  Path out;
  simplify(line, 1.0, false, out);
  ASSERT_EQ(out.size(), 2u);
  EXPECT_EQ(out[1].x, 1000);
  // A spike of 3 (> 1) at x = 500 stays; then (400, 0) is 3·400/500.009 = 2.4 from the chord (0,0)-(500,3), so it
  // stays too (and (600, 0) likewise), while (100..300, 0) lie on the chord (0,0)-(400,0): 0, 400, 500, 600, 1000
  // (worked by hand). A spike of 0.5 (< 1) goes, and with it every interior point.
  line[5].y = 3;
  simplify(line, 1.0, false, out);
  ASSERT_EQ(out.size(), 5u);
  EXPECT_EQ(out[1].x, 400);
  EXPECT_EQ(out[2].y, 3);
  line[5].y = 0.5;
  simplify(line, 1.0, false, out);
  EXPECT_EQ(out.size(), 2u);
}

TEST(Simplify, ARingKeepsItsFarthestVertexAndNeverCollapses) {
  // A closed square with a dense edge: its corners stay, the collinear points go; the vertex farthest from the
  // first (the opposite corner) is kept even with a tolerance larger than the square.
  Path ring = {{0, 0}, {10, 0}, {20, 0}, {30, 0}, {30, 30}, {0, 30}, {0, 0}};
  Path out;
  simplify(ring, 0.5, true, out);
  EXPECT_EQ(out.size(), 5u);  // four corners and the closing vertex
  simplify(ring, 1000, true, out);
  ASSERT_GE(out.size(), 3u);
  EXPECT_TRUE(std::any_of(out.begin(), out.end(), [](const Coord& c) { return c.x == 30 && c.y == 30; }));
}

}  // namespace
}  // namespace gridtruth::detail
