// gridtruth — vector data sources read through GDAL/OGR (Shapefile, GeoPackage, FlatGeobuf, OpenFileGDB, GML,
// KML and any other source OGR opens by name). Built only with GRIDTRUTH_WITH_GDAL; GDAL is loaded on first use.
//
// One layer is read feature by feature (bounded memory, input order). Each geometry is exported by OGR as ISO
// WKT and read by gridtruth's own WKT parser, so every format is checked by the same rules and a geometry OGR
// cannot give becomes an invalid row naming the feature's FID. Attributes become the feature's properties.
#include <sys/stat.h>

#include <cmath>
#include <string>
#include <utility>
#include <vector>

#include <nlohmann/json.hpp>

#include "core/gdal/gdal_api.hpp"
#include "gridtruth/error.hpp"
#include "io/io_detail.hpp"

namespace gridtruth::detail {

namespace {

class OgrReader final : public FormatReader {
 public:
  OgrReader(const std::string& path, const ReaderOptions& options) : options_(options), gdal_(GdalApi::get()) {
    gdal_.CPLErrorReset();
    gdal_.CPLPushErrorHandler(gdal_.CPLQuietErrorHandler);
    dataset_.reset(gdal_.GDALOpenEx(path.c_str(), GDAL_OF_VECTOR | GDAL_OF_READONLY, nullptr, nullptr, nullptr));
    gdal_.CPLPopErrorHandler();
    if (!dataset_) {
      struct stat st {};
      if (::stat(path.c_str(), &st) == 0 && S_ISDIR(st.st_mode))
        throw Error(ErrorCode::io, "cannot read " + path + ": it is a directory, and not one GDAL reads as vector "
                                   "data (as it would an OpenFileGDB .gdb folder or a folder of shapefiles)");
      throw Error(ErrorCode::io, "GDAL cannot open " + path + " as vector data: " +
                                     gdal_.last_error("not a format GDAL reads"));
    }
    const int layers = gdal_.GDALDatasetGetLayerCount(dataset_.get());
    auto layer_names = [&] {
      std::string names;
      for (int k = 0; k < layers; ++k)
        names += std::string(k ? ", " : "") + gdal_.OGR_L_GetName(gdal_.GDALDatasetGetLayer(dataset_.get(), k));
      return names;
    };
    if (!options.layer.empty()) {
      layer_ = gdal_.GDALDatasetGetLayerByName(dataset_.get(), options.layer.c_str());
      if (!layer_)
        throw Error(ErrorCode::invalid_argument, path + " has no layer \"" + options.layer + "\" (its layers: " +
                                                     (layers ? layer_names() : std::string("none")) + ")");
    } else if (layers == 0) {
      throw Error(ErrorCode::parse, path + " has no vector layer");
    } else if (layers > 1) {
      throw Error(ErrorCode::invalid_argument, path + " has " + std::to_string(layers) +
                                                   " layers; name one with --layer (its layers: " + layer_names() +
                                                   ")");
    } else {
      layer_ = gdal_.GDALDatasetGetLayer(dataset_.get(), 0);
    }
    layer_name_ = gdal_.OGR_L_GetName(layer_);
    crs_ = crs_definition(gdal_.OGR_L_GetSpatialRef(layer_));
    gdal_.OGR_L_ResetReading(layer_);
  }

  std::optional<CutFeature> next_raw() override {
    OgrFeature feature(gdal_.OGR_L_GetNextFeature(layer_));
    if (!feature) return std::nullopt;
    CutFeature raw;
    raw.read = read(feature.get());
    return raw;
  }

  std::string declared_crs() override { return crs_; }

 private:
  InputFeature read(OGRFeatureH f) const {
    InputFeature out;
    const GIntBig fid = gdal_.OGR_F_GetFID(f);
    const std::string where = fid == OGRNullFID ? std::string("a feature without FID")
                                                : "FID " + std::to_string(static_cast<long long>(fid));
    if (fid != OGRNullFID) out.id = std::to_string(static_cast<long long>(fid));
    nlohmann::ordered_json properties = nlohmann::ordered_json::object();
    OGRFeatureDefnH defn = gdal_.OGR_L_GetLayerDefn(layer_);
    const int fields = gdal_.OGR_FD_GetFieldCount(defn);
    std::optional<double> height;
    bool height_seen = false;
    for (int k = 0; k < fields; ++k) {
      OGRFieldDefnH field = gdal_.OGR_FD_GetFieldDefn(defn, k);
      const std::string name = gdal_.OGR_Fld_GetNameRef(field);
      auto& value = properties[name];
      if (!gdal_.OGR_F_IsFieldSetAndNotNull(f, k)) {
        value = nullptr;
      } else {
        switch (gdal_.OGR_Fld_GetType(field)) {
          case OFTInteger:
          case OFTInteger64: value = static_cast<std::int64_t>(gdal_.OGR_F_GetFieldAsInteger64(f, k)); break;
          case OFTReal: value = gdal_.OGR_F_GetFieldAsDouble(f, k); break;
          default: value = std::string(gdal_.OGR_F_GetFieldAsString(f, k)); break;
        }
      }
      if (!options_.id_field.empty() && name == options_.id_field && !value.is_null())
        out.id = value.is_string() ? value.get<std::string>() : value.dump();
      if (!options_.height_field.empty() && name == options_.height_field) {
        height_seen = true;
        if (value.is_number() && std::isfinite(value.get<double>())) height = value.get<double>();
      }
    }
    out.properties_json =
        properties.dump(-1, ' ', false, nlohmann::ordered_json::error_handler_t::replace);
    if (!options_.height_field.empty()) {
      if (!height) {
        out.error = where + ": " +
                    (height_seen ? "height field \"" + options_.height_field + "\" is empty or not a finite number"
                                 : "layer " + layer_name_ + " has no field \"" + options_.height_field + "\"");
        return out;
      }
      out.height_m = height;
    }
    OGRGeometryH geometry = gdal_.OGR_F_GetGeometryRef(f);
    if (!geometry) {
      out.error = where + ": no geometry";
      return out;
    }
    char* wkt = nullptr;
    if (gdal_.OGR_G_ExportToIsoWkt(geometry, &wkt) != OGRERR_NONE || !wkt) {
      gdal_.VSIFree(wkt);
      out.error = where + ": GDAL cannot give its geometry as WKT";
      return out;
    }
    Geometry g;
    std::string error;
    ZTally z;
    const bool ok = parse_wkt(wkt, g, out.declared_type, error, options_.height_from_z ? &z : nullptr);
    gdal_.VSIFree(wkt);
    if (!ok) {
      out.error = where + ": " + error;
      return out;
    }
    if (options_.height_from_z) {
      out.height_m = height_from_tally(z, error);
      if (!out.height_m) {
        out.error = where + ": " + error;
        return out;
      }
    }
    out.geometry = std::move(g);
    return out;
  }

  ReaderOptions options_;
  const GdalApi& gdal_;
  GdalDataset dataset_;
  OGRLayerH layer_ = nullptr;
  std::string layer_name_;
  std::string crs_;
};

}  // namespace

std::unique_ptr<FormatReader> make_ogr_reader(const std::string& path, const ReaderOptions& options) {
  return std::make_unique<OgrReader>(path, options);
}

}  // namespace gridtruth::detail
