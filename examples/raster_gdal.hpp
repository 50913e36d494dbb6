// gridtruth cells — class rasters read through GDAL (built only with GRIDTRUTH_WITH_GDAL).
#pragma once

#include <cstdint>
#include <optional>
#include <string>

#include "gridtruth/cells.hpp"

namespace gridtruth::cli {

/// What a raster file says about itself: its grid (CRS, geotransform, size) and band 1's nodata code, if any.
struct RasterHeader {
  GridSpec grid;
  std::optional<std::uint32_t> nodata;
};

/// Opens any raster GDAL reads (GeoTIFF, ASCII grid, ...). The CRS is the file's own ("EPSG:n" when it names an
/// EPSG code, else its WKT); a rotated geotransform is refused. Throws Error(io) when GDAL cannot open the file,
/// Error(parse) when it has no CRS or georeferencing (give the grid options then), or a rotated geotransform.
RasterHeader read_raster_header(const std::string& path);

/// Streams band 1 in strips of whole rows into `acc`. The band must hold whole numbers in [0, 65535] (Byte,
/// UInt16, or wider integer types whose values fit); any other value is Error(parse) naming the row.
/// The raster's size must equal the grid's (Error(invalid_argument) otherwise).
void add_raster_classes(const std::string& path, const GridSpec& grid, ClassAreaAccumulator& acc);

}  // namespace gridtruth::cli
