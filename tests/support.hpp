// Shared helpers for the gridtruth tests: independent measures with GeographicLib, feature builders and seeds.
// Nothing here calls gridtruth's measuring code: these are the independent side of the cross-checks.
#pragma once

#include <GeographicLib/Geodesic.hpp>
#include <GeographicLib/PolygonArea.hpp>
#include <GeographicLib/Rhumb.hpp>
#include <gtest/gtest.h>

#include <algorithm>

#include <cmath>
#include <cstdint>
#include <cstdlib>
#include <iostream>
#include <random>
#include <string>
#include <vector>

#include "gridtruth/audit.hpp"
#include "gridtruth/geometry.hpp"

namespace gridtruth::test {

/// An ellipsoid by a and f, for the independent side of the checks.
struct Spheroid {
  double a_m;
  double f;
};

inline constexpr double pi = 3.14159265358979323846;

// WGS 84 (EPSG:7030): a = 6 378 137 m, 1/f = 298.257223563 (EPSG dataset, ellipsoid 7030).
inline constexpr Spheroid wgs84{6378137.0, 1 / 298.257223563};
// GRS 1980 (EPSG:7019): a = 6 378 137 m, 1/f = 298.257222101 (Moritz, "Geodetic Reference System 1980",
// J. Geodesy 74 (2000) 128-133; EPSG dataset, ellipsoid 7019).
inline constexpr Spheroid grs80{6378137.0, 1 / 298.257222101};
// Clarke 1866 (EPSG:7008), defined by a = 6 378 206.4 m and b = 6 356 583.8 m (EPSG dataset).
inline constexpr Spheroid clarke1866{6378206.4, (6378206.4 - 6356583.8) / 6378206.4};

/// Geodesic perimeter and |area| of one ring (lon, lat order) on an ellipsoid, with GeographicLib directly.
struct RingMeasure {
  double perimeter_m = 0;
  double area_m2 = 0;
};

inline RingMeasure geodesic_ring(const Path& ring, const Spheroid& s) {
  const GeographicLib::Geodesic geod(s.a_m, s.f);
  GeographicLib::PolygonArea poly(geod);
  std::size_t n = ring.size();
  if (n > 1 && ring.front().x == ring.back().x && ring.front().y == ring.back().y) --n;  // closing vertex
  for (std::size_t i = 0; i < n; ++i) poly.AddPoint(ring[i].y, ring[i].x);
  RingMeasure m;
  double area = 0;
  poly.Compute(/*reverse=*/false, /*sign=*/true, m.perimeter_m, area);
  m.area_m2 = std::abs(area);
  return m;
}

/// Rhumb-line (loxodrome) perimeter and |area| of one ring on an ellipsoid, with GeographicLib's PolygonAreaRhumb
/// directly (Karney, "The area of rhumb polygons", Stud. Geophys. Geod. 2024; GeographicLib's Rhumb class).
inline RingMeasure rhumb_ring(const Path& ring, const Spheroid& s) {
  const GeographicLib::Rhumb rhumb(s.a_m, s.f, /*exact=*/true);
  GeographicLib::PolygonAreaRhumb poly(rhumb);
  std::size_t n = ring.size();
  if (n > 1 && ring.front().x == ring.back().x && ring.front().y == ring.back().y) --n;  // closing vertex
  for (std::size_t i = 0; i < n; ++i) poly.AddPoint(ring[i].y, ring[i].x);
  RingMeasure m;
  double area = 0;
  poly.Compute(/*reverse=*/false, /*sign=*/true, m.perimeter_m, area);
  m.area_m2 = std::abs(area);
  return m;
}

/// Snyder's authalic function q(φ) (Snyder 1987, "Map Projections: A Working Manual", USGS PP 1395, eq. 3-12):
///   q = (1 − e²) [sin φ / (1 − e² sin² φ) − 1/(2e) ln((1 − e sin φ)/(1 + e sin φ))],
/// with the logarithm written as the identical 2·atanh(e sin φ) to keep its precision near the equator.
/// The area between the equator and latitude φ over Δλ radians of longitude is (a²/2)·Δλ·q(φ).
inline double authalic_q(const Spheroid& s, double lat_deg) {
  const double e2 = s.f * (2 - s.f);
  const double e = std::sqrt(e2);
  const double sphi = std::sin(lat_deg * pi / 180);
  return (1 - e2) * (sphi / (1 - e2 * sphi * sphi) + std::atanh(e * sphi) / e);
}

/// Area of the quadrangle bounded by two meridians Δλ apart and the parallels φ1 < φ2 (closed form from
/// Snyder 1987 eq. 3-12: (a²/2)·Δλ·[q(φ2) − q(φ1)]).
inline double quadrangle_area_m2(const Spheroid& s, double lat1_deg, double lat2_deg, double dlon_deg) {
  return 0.5 * s.a_m * s.a_m * (dlon_deg * pi / 180) * (authalic_q(s, lat2_deg) - authalic_q(s, lat1_deg));
}

/// Twice the signed area of a planar ring (shoelace, centred on the first vertex), in the ring's unit squared.
inline double shoelace2(const std::vector<Coord>& xy) {
  double twice = 0;
  if (xy.empty()) return 0;
  const Coord o = xy.front();
  for (std::size_t i = 0; i < xy.size(); ++i) {
    const Coord& a = xy[i];
    const Coord& b = xy[(i + 1) % xy.size()];
    twice += (a.x - o.x) * (b.y - o.y) - (b.x - o.x) * (a.y - o.y);
  }
  return twice;
}

/// The telescoping identities of the error budget (DEVELOPERS.md, "The error budget"), to rounding.
inline void expect_budget_telescopes(const Budget& b, const std::string& what) {
  const double scale = std::max({std::abs(b.reference), std::abs(b.grid), std::abs(b.densified_grid)});
  const double rounding = 1e-12 * scale;
  EXPECT_NEAR(b.error, b.grid - b.reference, rounding) << what;
  EXPECT_NEAR(b.error, b.from_edges + b.from_scale + b.from_datum + b.from_height, rounding) << what;
  EXPECT_NEAR(b.from_edges, b.grid - b.densified_grid, rounding) << what;
  EXPECT_NEAR(b.from_scale, b.densified_grid - b.ellipsoid_target, rounding) << what;
  EXPECT_NEAR(b.from_datum, b.ellipsoid_target - b.ellipsoid_source, rounding) << what;
  EXPECT_NEAR(b.from_height, b.ellipsoid_source - b.reference, rounding) << what;
  EXPECT_NEAR(b.error_ppm, 1e6 * b.error / b.reference, 1e-9 * std::abs(b.error_ppm) + 1e-12) << what;
}

/// Geodesic length of a line string.
inline double geodesic_length(const Path& line, const Spheroid& s) {
  const GeographicLib::Geodesic geod(s.a_m, s.f);
  double total = 0;
  for (std::size_t i = 1; i < line.size(); ++i) {
    double s12 = 0;
    geod.Inverse(line[i - 1].y, line[i - 1].x, line[i].y, line[i].x, s12);
    total += s12;
  }
  return total;
}

/// An open lon/lat box ring (counter-clockwise), south-west corner (lon, lat).
inline Path box(double lon_deg, double lat_deg, double dlon_deg, double dlat_deg) {
  return {{lon_deg, lat_deg},
          {lon_deg + dlon_deg, lat_deg},
          {lon_deg + dlon_deg, lat_deg + dlat_deg},
          {lon_deg, lat_deg + dlat_deg}};
}

/// Radii of curvature: meridian M and prime vertical N (Snyder 1987, eqs. 4-18 and 4-20; common practice).
inline double meridian_radius_m(const Spheroid& s, double lat_deg) {
  const double e2 = s.f * (2 - s.f);
  const double sphi = std::sin(lat_deg * pi / 180);
  return s.a_m * (1 - e2) / std::pow(1 - e2 * sphi * sphi, 1.5);
}
inline double prime_vertical_radius_m(const Spheroid& s, double lat_deg) {
  const double e2 = s.f * (2 - s.f);
  const double sphi = std::sin(lat_deg * pi / 180);
  return s.a_m / std::sqrt(1 - e2 * sphi * sphi);
}

/// The seed for randomized tests: GRIDTRUTH_TEST_SEED if set, else a fixed default. Printed and recorded so
/// any failure can be replayed.
inline std::uint64_t test_seed(std::uint64_t default_seed = 20240917ULL) {
  std::uint64_t seed = default_seed;
  if (const char* env = std::getenv("GRIDTRUTH_TEST_SEED"); env != nullptr && *env != '\0')
    seed = std::strtoull(env, nullptr, 10);
  std::cout << "[ seed     ] " << seed << " (replay with GRIDTRUTH_TEST_SEED=" << seed << ")\n";
  ::testing::Test::RecordProperty("seed", std::to_string(seed));
  return seed;
}

/// A random star-shaped ring of n vertices around (lon, lat), edges of about edge_m, by geodesic Direct.
inline Path star_ring(std::mt19937_64& rng, double lon, double lat, double edge_m, int n) {
  std::uniform_real_distribution<double> jitter(0.75, 1.25);
  const double radius = edge_m * n / (2 * pi);
  Path ring;
  for (int k = 0; k < n; ++k) {
    double lat2 = 0, lon2 = 0;
    GeographicLib::Geodesic::WGS84().Direct(lat, lon, 360.0 * k / n, radius * jitter(rng), lat2, lon2);
    ring.push_back({lon2, lat2});
  }
  return ring;
}

}  // namespace gridtruth::test
