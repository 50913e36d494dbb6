// Writes N generated polygons as a GeoJSON FeatureCollection or newline-delimited GeoJSON, for the command
// benchmarks.   make_features COUNT EDGE_M VERTICES (geojson|ndjson) OUT
#include <cstdio>
#include <cstdlib>
#include <string>

#include "polygons.hpp"

int main(int argc, char** argv) {
  if (argc != 6) {
    std::fprintf(stderr, "usage: make_features COUNT EDGE_M VERTICES geojson|ndjson OUT\n");
    return 2;
  }
  const std::size_t count = std::strtoull(argv[1], nullptr, 10);
  const double edge_m = std::strtod(argv[2], nullptr);
  const int vertices = std::atoi(argv[3]);
  const bool collection = std::string(argv[4]) == "geojson";
  std::FILE* out = std::fopen(argv[5], "w");
  if (!out) return 2;
  if (collection) std::fputs("{\"type\":\"FeatureCollection\",\"features\":[\n", out);
  constexpr std::size_t chunk = 10000;  // generate in chunks so memory stays small for 10⁶ features
  for (std::size_t start = 0; start < count; start += chunk) {
    const std::size_t n = std::min(chunk, count - start);
    const auto polys = gridtruth::bench::polygons(n, edge_m, vertices, 42 + start);
    for (std::size_t i = 0; i < n; ++i) {
      const std::size_t id = start + i + 1;
      std::fprintf(out, "%s{\"type\":\"Feature\",\"id\":%zu,\"properties\":{},\"geometry\":{\"type\":\"Polygon\","
                   "\"coordinates\":[[", collection && id > 1 ? "," : "", id);
      const auto& ring = polys[i].polygons[0].outer;
      for (std::size_t k = 0; k <= ring.size(); ++k) {
        const auto& c = ring[k % ring.size()];
        std::fprintf(out, "%s[%.10f,%.10f]", k ? "," : "", c.x, c.y);
      }
      std::fputs("]]}}\n", out);
    }
  }
  if (collection) std::fputs("]}\n", out);
  return std::fclose(out) == 0 ? 0 : 2;
}
