// gridtruth — the names of ResultGeoJsonWriter's coordinate choices (report.hpp).
#include <array>

#include "core/enum_names.hpp"
#include "gridtruth/report.hpp"

namespace gridtruth {

namespace {
constexpr std::array<detail::EnumName<GeoJsonCoordinates>, 2> kNames = {
    {{GeoJsonCoordinates::wgs84, "wgs84"}, {GeoJsonCoordinates::source, "source"}}};
}  // namespace

std::string_view to_string(GeoJsonCoordinates coordinates) noexcept { return detail::name_of(kNames, coordinates); }

GeoJsonCoordinates parse_geojson_coordinates(std::string_view name) {
  return detail::value_named(kNames, name, "GeoJSON coordinates");
}

}  // namespace gridtruth
