// gridtruth — GDAL's C API, loaded on first use (see gdal_api.hpp).
#include "gdal_api.hpp"

#include <dlfcn.h>

#include "gridtruth/error.hpp"

#ifndef GRIDTRUTH_GDAL_SONAME
#define GRIDTRUTH_GDAL_SONAME "libgdal.so"
#endif

namespace gridtruth::detail {

namespace {

GdalApi load() {
  void* library = dlopen(GRIDTRUTH_GDAL_SONAME, RTLD_NOW | RTLD_LOCAL);
  if (!library)
    throw Error(ErrorCode::io, std::string("cannot load GDAL (") + GRIDTRUTH_GDAL_SONAME + "): " + dlerror());
  GdalApi g;
#define GRIDTRUTH_GDAL_RESOLVE(name)                                                                    \
  g.name = reinterpret_cast<decltype(&::name)>(dlsym(library, #name));                                  \
  if (!g.name) throw Error(ErrorCode::io, std::string("GDAL (") + GRIDTRUTH_GDAL_SONAME + ") lacks " #name);
  GRIDTRUTH_GDAL_FUNCTIONS(GRIDTRUTH_GDAL_RESOLVE)
#undef GRIDTRUTH_GDAL_RESOLVE
  g.GDALAllRegister();
  return g;
}

}  // namespace

const GdalApi& GdalApi::get() {
  static const GdalApi gdal = load();  // thread-safe initialisation; the library stays loaded
  return gdal;
}

std::string GdalApi::last_error(const std::string& fallback) const {
  const char* message = CPLGetLastErrorMsg();
  return message && *message ? std::string(message) : fallback;
}

std::string crs_definition(OGRSpatialReferenceH srs) {
  if (!srs) return {};
  const GdalApi& gdal = GdalApi::get();
  const char* authority = gdal.OSRGetAuthorityName(srs, nullptr);
  const char* code = gdal.OSRGetAuthorityCode(srs, nullptr);
  if (authority && code && std::string(authority) == "EPSG") return std::string("EPSG:") + code;
  std::string wkt;
  char* text = nullptr;
  const char* options[] = {"FORMAT=WKT2_2019", nullptr};
  if (gdal.OSRExportToWktEx(srs, &text, options) == OGRERR_NONE && text) wkt = text;
  gdal.VSIFree(text);  // CPLFree
  return wkt;
}

}  // namespace gridtruth::detail
