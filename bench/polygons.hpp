// Generated test polygons for the benchmarks: regular n-gons with a chosen edge length, at random places in a
// UTM zone's band (seeded, so every run measures the same shapes).
#pragma once

#include <GeographicLib/PolygonArea.hpp>
#include <gridtruth/geometry.hpp>

#include <cmath>
#include <cstdint>
#include <random>
#include <vector>

namespace gridtruth::bench {

/// A regular polygon of `vertices` vertices and edges of about `edge_m` metres centred at (lon, lat).
inline Geometry regular_polygon(double lon_deg, double lat_deg, double edge_m, int vertices) {
  const double radius_m = edge_m / (2 * std::sin(M_PI / vertices));
  Path ring;
  for (int i = 0; i < vertices; ++i) {
    const double t = 2 * M_PI * i / vertices;
    ring.push_back({lon_deg + radius_m * std::cos(t) / (111320.0 * std::cos(lat_deg * M_PI / 180)),
                    lat_deg + radius_m * std::sin(t) / 110574.0});
  }
  return Geometry::polygon(ring);
}

/// `count` polygons inside UTM zone 15N (96°W–90°W, 40°N–48°N), edges of about edge_m.
inline std::vector<Geometry> polygons(std::size_t count, double edge_m, int vertices, std::uint64_t seed = 42) {
  std::mt19937_64 rng(seed);
  const double margin_deg = edge_m * vertices / (2 * M_PI) / 80000.0;
  std::uniform_real_distribution<double> lon(-96 + margin_deg, -90 - margin_deg), lat(40 + margin_deg, 48 - margin_deg);
  std::vector<Geometry> out;
  out.reserve(count);
  for (std::size_t i = 0; i < count; ++i) out.push_back(regular_polygon(lon(rng), lat(rng), edge_m, vertices));
  return out;
}

/// The bare truth, the yardstick of the benchmarks: GeographicLib's PolygonArea (perimeter and signed area) of
/// every polygon's outer ring on WGS 84; returns the sum of the areas.
inline double bare_truth(const std::vector<Geometry>& polygons) {
  const GeographicLib::Geodesic& geod = GeographicLib::Geodesic::WGS84();
  double sink = 0;
  for (const Geometry& g : polygons) {
    GeographicLib::PolygonArea area(geod);
    for (const Coord& c : g.polygons[0].outer) area.AddPoint(c.y, c.x);
    double perimeter = 0, a = 0;
    area.Compute(false, true, perimeter, a);
    sink += a;
  }
  return sink;
}

}  // namespace gridtruth::bench
