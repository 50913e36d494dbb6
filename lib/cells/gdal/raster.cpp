// gridtruth — class rasters read through GDAL (built only with GRIDTRUTH_WITH_GDAL; GDAL loaded on first use).
#include <algorithm>
#include <cmath>
#include <vector>

#include "core/gdal/gdal_api.hpp"
#include "gridtruth/cells.hpp"
#include "gridtruth/error.hpp"

namespace gridtruth {

bool built_with_gdal() noexcept { return true; }

namespace {

using detail::GdalApi;
using Dataset = detail::GdalDataset;

Dataset open_raster(const std::string& path) {
  const GdalApi& gdal = GdalApi::get();
  gdal.CPLPushErrorHandler(gdal.CPLQuietErrorHandler);
  Dataset ds(gdal.GDALOpen(path.c_str(), GA_ReadOnly));
  gdal.CPLPopErrorHandler();
  if (!ds) throw Error(ErrorCode::io, "GDAL cannot open " + path);
  if (gdal.GDALGetRasterCount(ds.get()) < 1) throw Error(ErrorCode::parse, path + " has no raster band");
  return ds;
}

}  // namespace

ClassRasterHeader read_class_raster_header(const std::string& path) {
  const Dataset ds = open_raster(path);
  const GdalApi& gdal = GdalApi::get();
  ClassRasterHeader h;
  double gt[6];
  if (gdal.GDALGetGeoTransform(ds.get(), gt) != CE_None)
    throw Error(ErrorCode::parse, path + " has no geotransform; give --origin and --pixel");
  if (gt[2] != 0 || gt[4] != 0) throw Error(ErrorCode::parse, path + " has a rotated geotransform");
  h.grid.origin_x = gt[0];
  h.grid.pixel_x = gt[1];
  h.grid.origin_y = gt[3];
  h.grid.pixel_y = gt[5];
  h.grid.cols = static_cast<std::size_t>(gdal.GDALGetRasterXSize(ds.get()));
  h.grid.rows = static_cast<std::size_t>(gdal.GDALGetRasterYSize(ds.get()));
  h.grid.crs = detail::crs_definition(gdal.GDALGetSpatialRef(ds.get()));
  int has_nodata = 0;
  const double nodata = gdal.GDALGetRasterNoDataValue(gdal.GDALGetRasterBand(ds.get(), 1), &has_nodata);
  if (has_nodata && nodata >= 0 && nodata <= 65535 && nodata == std::floor(nodata))
    h.nodata = static_cast<std::uint32_t>(nodata);
  return h;
}

void add_class_raster(const std::string& path, const GridSpec& grid, ClassAreaAccumulator& acc) {
  const Dataset ds = open_raster(path);
  const GdalApi& gdal = GdalApi::get();
  const auto cols = static_cast<std::size_t>(gdal.GDALGetRasterXSize(ds.get()));
  const auto rows = static_cast<std::size_t>(gdal.GDALGetRasterYSize(ds.get()));
  if (cols != grid.cols || rows != grid.rows)
    throw Error(ErrorCode::invalid_argument, path + " is " + std::to_string(cols) + " x " + std::to_string(rows) +
                                                 " cells, the grid " + std::to_string(grid.cols) + " x " +
                                                 std::to_string(grid.rows));
  GDALRasterBandH band = gdal.GDALGetRasterBand(ds.get(), 1);
  const GDALDataType type = gdal.GDALGetRasterDataType(band);
  if (gdal.GDALDataTypeIsFloating(type) || gdal.GDALDataTypeIsComplex(type))
    throw Error(ErrorCode::parse, path + " holds " + gdal.GDALGetDataTypeName(type) + " values, not class codes");
  int block_x = 0, block_y = 0;
  gdal.GDALGetBlockSize(band, &block_x, &block_y);
  // Strips of whole rows, a multiple of the file's block height, about 4 Mi cells at most.
  std::size_t strip_rows = std::max<std::size_t>(1, static_cast<std::size_t>(block_y));
  while (strip_rows * 2 * cols <= (std::size_t{1} << 22) && strip_rows * 2 <= rows) strip_rows *= 2;
  std::vector<std::int32_t> values;
  std::vector<std::uint16_t> codes;
  for (std::size_t r = 0; r < rows; r += strip_rows) {
    const std::size_t n = std::min(strip_rows, rows - r);
    values.resize(n * cols);
    if (gdal.GDALRasterIO(band, GF_Read, 0, static_cast<int>(r), static_cast<int>(cols), static_cast<int>(n),
                     values.data(), static_cast<int>(cols), static_cast<int>(n), GDT_Int32, 0, 0) != CE_None)
      throw Error(ErrorCode::io, "GDAL cannot read rows " + std::to_string(r) + " to " + std::to_string(r + n - 1) +
                                     " of " + path);
    codes.resize(values.size());
    for (std::size_t k = 0; k < values.size(); ++k) {
      if (values[k] < 0 || values[k] > 65535)
        throw Error(ErrorCode::parse, path + " row " + std::to_string(r + k / cols) + ": value " +
                                          std::to_string(values[k]) + " is not a class code in [0, 65535]");
      codes[k] = static_cast<std::uint16_t>(values[k]);
    }
    acc.add_strip(r, codes);
  }
}

}  // namespace gridtruth
