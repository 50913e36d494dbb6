// Writes one polygon feature whose outer ring has N vertices, as a GeoJSON FeatureCollection, for the memory
// benchmark (peak RSS per input byte, bench/run.sh).   make_ring VERTICES OUT [RADIUS_M]
// The ring is a smooth seven-armed star around 93°W 45°N (UTM zone 15N), of radius RADIUS_M (default 40 km) ± 20 %
// (perimeter 348 km at 40 km), so its edges are short and it never crosses itself: 0.35 m on average for 10⁶
// vertices and 3.5 m for 10⁵ at 40 km (measured in closed form, lib/audit/short_geodesics.hpp), 4.4 cm for 10⁶ at 5 km
// (below the closed form's 0.1 m: solved by GeographicLib edge by edge).
#include <cmath>
#include <cstdio>
#include <cstdlib>

int main(int argc, char** argv) {
  if (argc != 3 && argc != 4) {
    std::fprintf(stderr, "usage: make_ring VERTICES OUT [RADIUS_M]\n");
    return 2;
  }
  const long vertices = std::strtol(argv[1], nullptr, 10);
  if (vertices < 3) return 2;
  std::FILE* out = std::fopen(argv[2], "w");
  if (!out) return 2;
  constexpr double lon0_deg = -93, lat0_deg = 45;
  const double radius_m = argc == 4 ? std::strtod(argv[3], nullptr) : 40000;
  if (!(radius_m > 0 && radius_m < 300000)) return 2;
  const double m_per_deg_lat = 111132.0, m_per_deg_lon = 111320.0 * std::cos(lat0_deg * M_PI / 180);
  std::fputs("{\"type\":\"FeatureCollection\",\"features\":[\n{\"type\":\"Feature\",\"id\":\"ring\",\"properties\":{},"
             "\"geometry\":{\"type\":\"Polygon\",\"coordinates\":[[", out);
  for (long k = 0; k <= vertices; ++k) {
    const double t = 2 * M_PI * static_cast<double>(k % vertices) / static_cast<double>(vertices);
    const double r_m = radius_m * (1 + 0.2 * std::cos(7 * t));
    std::fprintf(out, "%s[%.9f,%.9f]", k ? "," : "", lon0_deg + r_m * std::cos(t) / m_per_deg_lon,
                 lat0_deg + r_m * std::sin(t) / m_per_deg_lat);
  }
  std::fputs("]]}}\n]}\n", out);
  return std::fclose(out) == 0 ? 0 : 2;
}
