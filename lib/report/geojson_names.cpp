// gridtruth — the names of ResultGeoJsonWriter's coordinate choices (report.hpp).
#include <string>

#include "gridtruth/error.hpp"
#include "gridtruth/report.hpp"

namespace gridtruth {

std::string_view to_string(GeoJsonCoordinates coordinates) noexcept {
  switch (coordinates) {
    case GeoJsonCoordinates::wgs84: return "wgs84";
    case GeoJsonCoordinates::source: return "source";
  }
  return "";
}

GeoJsonCoordinates parse_geojson_coordinates(std::string_view name) {
  for (GeoJsonCoordinates c : {GeoJsonCoordinates::wgs84, GeoJsonCoordinates::source}) {
    if (name == to_string(c)) return c;
  }
  throw Error(ErrorCode::invalid_argument,
              "unknown GeoJSON coordinates '" + std::string(name) + "': use wgs84 or source");
}

}  // namespace gridtruth
