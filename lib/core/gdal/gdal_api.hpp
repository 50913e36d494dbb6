// gridtruth — GDAL's C API, loaded on first use (internal; built only with GRIDTRUTH_WITH_GDAL).
//
// GDAL is loaded when a raster or a vector data source is first opened (dlopen), not linked: libgdal pulls in
// about a hundred shared libraries whose loading would cost every run of every command about 0.1 s. Its C
// functions are resolved by name into a table of pointers typed after GDAL's own headers. GRIDTRUTH_GDAL_SONAME
// names the library found at build time.
#pragma once

#include <gdal.h>
#include <cpl_conv.h>
#include <cpl_error.h>
#include <ogr_api.h>
#include <ogr_srs_api.h>

#include <memory>
#include <string>

namespace gridtruth::detail {

#define GRIDTRUTH_GDAL_FUNCTIONS(X)                                                                              \
  X(GDALAllRegister) X(CPLPushErrorHandler) X(CPLQuietErrorHandler) X(CPLPopErrorHandler) X(CPLGetLastErrorMsg) \
  X(CPLErrorReset) X(GDALOpen) X(GDALOpenEx) X(GDALClose) X(GDALGetDriverByName) X(GDALCreate)                   \
  X(GDALGetDatasetDriver) X(GDALGetDriverShortName) X(GDALGetRasterCount) X(GDALGetGeoTransform)                 \
  X(GDALGetRasterXSize) X(GDALGetRasterYSize) X(GDALGetSpatialRef) X(GDALGetRasterNoDataValue)                   \
  X(GDALGetRasterBand) X(GDALGetRasterDataType) X(GDALDataTypeIsFloating) X(GDALDataTypeIsComplex)               \
  X(GDALGetDataTypeName) X(GDALGetBlockSize) X(GDALRasterIO) X(GDALDatasetGetLayerCount) X(GDALDatasetGetLayer)  \
  X(GDALDatasetGetLayerByName) X(GDALDatasetCreateLayer) X(GDALDatasetStartTransaction)                          \
  X(GDALDatasetCommitTransaction) X(OGR_L_GetName) X(OGR_L_GetSpatialRef) X(OGR_L_ResetReading)                  \
  X(OGR_L_GetNextFeature) X(OGR_L_GetLayerDefn) X(OGR_L_CreateField) X(OGR_L_CreateFeature)                      \
  X(OGR_L_GetFeatureCount) X(OGR_FD_GetFieldCount) X(OGR_FD_GetFieldDefn) X(OGR_Fld_GetNameRef)                  \
  X(OGR_Fld_GetType) X(OGR_Fld_Create) X(OGR_Fld_Destroy) X(OGR_F_Create) X(OGR_F_Destroy) X(OGR_F_GetFID)       \
  X(OGR_F_GetGeometryRef) X(OGR_F_SetGeometryDirectly) X(OGR_F_GetFieldCount) X(OGR_F_IsFieldSetAndNotNull)      \
  X(OGR_F_GetFieldAsString) X(OGR_F_GetFieldAsDouble) X(OGR_F_GetFieldAsInteger64) X(OGR_F_SetFieldString)       \
  X(OGR_F_SetFieldDouble) X(OGR_F_SetFieldInteger64) X(OGR_F_SetFieldNull) X(OGR_G_ExportToIsoWkt)              \
  X(OGR_G_CreateFromWkt) X(OGR_G_DestroyGeometry) X(OSRGetAuthorityName) X(OSRGetAuthorityCode)                   \
  X(OSRExportToWktEx) X(OSRNewSpatialReference) X(OSRSetFromUserInput) X(OSRRelease)      \
  X(OSRSetAxisMappingStrategy) X(VSIFree) X(OGR_FD_GetFieldIndex) X(CPLGetLastErrorType)

/// GDAL's C functions, resolved on first use.
struct GdalApi {
#define GRIDTRUTH_GDAL_MEMBER(name) decltype(&::name) name = nullptr;
  GRIDTRUTH_GDAL_FUNCTIONS(GRIDTRUTH_GDAL_MEMBER)
#undef GRIDTRUTH_GDAL_MEMBER

  /// The loaded table (loads GDAL the first time; thread-safe). Throws Error(io) when the library or a function
  /// is missing.
  static const GdalApi& get();

  /// GDAL's last error message, or `fallback` when it has none.
  std::string last_error(const std::string& fallback) const;
};

/// Closes a GDAL dataset (raster or vector).
struct GdalDatasetCloser {
  void operator()(void* ds) const noexcept { GdalApi::get().GDALClose(ds); }
};
using GdalDataset = std::unique_ptr<void, GdalDatasetCloser>;

/// Releases an OGR feature.
struct OgrFeatureCloser {
  void operator()(OGRFeatureH f) const noexcept { GdalApi::get().OGR_F_Destroy(f); }
};
using OgrFeature = std::unique_ptr<std::remove_pointer_t<OGRFeatureH>, OgrFeatureCloser>;

/// Releases a spatial reference.
struct OgrSrsCloser {
  void operator()(OGRSpatialReferenceH s) const noexcept { GdalApi::get().OSRRelease(s); }
};
using OgrSrs = std::unique_ptr<std::remove_pointer_t<OGRSpatialReferenceH>, OgrSrsCloser>;

/// The CRS a GDAL spatial reference names: "EPSG:n" when it is (or identifies as) an EPSG CRS, else its WKT2;
/// empty for a null reference.
std::string crs_definition(OGRSpatialReferenceH srs);

}  // namespace gridtruth::detail
