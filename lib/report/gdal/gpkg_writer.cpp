// gridtruth — audit results as a GeoPackage layer written through GDAL/OGR's GPKG driver (see report.hpp).
// Built only with GRIDTRUTH_WITH_GDAL; GDAL is loaded on first use.
#include <strings.h>

#include <cmath>
#include <cstdint>
#include <string>
#include <vector>

#include <nlohmann/json.hpp>

#include "core/gdal/gdal_api.hpp"
#include "gridtruth/error.hpp"
#include "gridtruth/io.hpp"
#include "gridtruth/report.hpp"

namespace gridtruth {

namespace {

using detail::GdalApi;

// ---- Simple-features WKT of a Geometry (OGC 06-103r4), numbers in their shortest round-trip form ------------
void append_position(std::string& w, const Coord& c) {
  const std::string x = format_number(c.x), y = format_number(c.y);
  w += x.empty() ? "nan" : x;  // a non-finite coordinate makes OGR refuse the text: the row says so
  w += ' ';
  w += y.empty() ? "nan" : y;
}
void append_path(std::string& w, const Path& p) {
  w += '(';
  for (std::size_t k = 0; k < p.size(); ++k) {
    if (k) w += ',';
    append_position(w, p[k]);
  }
  w += ')';
}
void append_polygon(std::string& w, const Polygon& p) {
  w += '(';
  append_path(w, p.outer);
  for (const Path& h : p.holes) w += ',', append_path(w, h);
  w += ')';
}
template <class T, class Append>
void append_list(std::string& w, const std::vector<T>& items, Append append) {
  if (items.empty()) {
    w += " EMPTY";
    return;
  }
  w += " (";
  for (std::size_t k = 0; k < items.size(); ++k) {
    if (k) w += ',';
    append(w, items[k]);
  }
  w += ')';
}

std::string to_wkt(const Geometry& g) {
  std::string w;
  switch (g.type) {
    case GeometryType::point:
      w = "POINT";
      if (g.points.empty()) w += " EMPTY";
      else w += " (", append_position(w, g.points[0]), w += ')';
      break;
    case GeometryType::multi_point:
      w = "MULTIPOINT";
      append_list(w, g.points, [](std::string& s, const Coord& c) { s += '(', append_position(s, c), s += ')'; });
      break;
    case GeometryType::line_string:
      w = "LINESTRING";
      if (g.lines.empty()) w += " EMPTY";
      else w += ' ', append_path(w, g.lines[0]);
      break;
    case GeometryType::multi_line_string: w = "MULTILINESTRING", append_list(w, g.lines, append_path); break;
    case GeometryType::polygon:
      w = "POLYGON";
      if (g.polygons.empty()) w += " EMPTY";
      else w += ' ', append_polygon(w, g.polygons[0]);
      break;
    case GeometryType::multi_polygon: w = "MULTIPOLYGON", append_list(w, g.polygons, append_polygon); break;
  }
  return w;
}

OGRFieldType field_type(ColumnKind kind) {
  switch (kind) {
    case ColumnKind::text: return OFTString;
    case ColumnKind::count: return OFTInteger64;
    case ColumnKind::number: break;
  }
  return OFTReal;
}

OGRFieldType field_type(const nlohmann::ordered_json& value) {
  if (value.is_number_integer() || value.is_boolean()) return OFTInteger64;
  if (value.is_number()) return OFTReal;
  return OFTString;
}

/// GDAL's messages are kept for the errors thrown, not printed, while one of these lives.
struct QuietErrors {
  const GdalApi& gdal;
  explicit QuietErrors(const GdalApi& g) : gdal(g) {
    gdal.CPLErrorReset();
    gdal.CPLPushErrorHandler(gdal.CPLQuietErrorHandler);
  }
  ~QuietErrors() { gdal.CPLPopErrorHandler(); }
  QuietErrors(const QuietErrors&) = delete;
  QuietErrors& operator=(const QuietErrors&) = delete;
};

bool same_name(const std::string& a, std::string_view b) {
  return a.size() == b.size() && ::strncasecmp(a.data(), b.data(), a.size()) == 0;
}

}  // namespace

struct ResultGeoPackageWriter::Impl {
  const GdalApi& gdal = GdalApi::get();
  std::string path;
  detail::GdalDataset dataset;
  OGRLayerH layer = nullptr;
  detail::OgrSrs srs;
  bool combined_factor = false;
  bool fields_made = false;  // the audit columns exist (made with the first row)
  std::vector<int> audit_fields;  // field index of each column of result_columns()
  // Input attributes: the JSON key and its field index, in order of first appearance.
  std::vector<std::pair<std::string, int>> input_fields;
  bool in_transaction = false;
  bool finished = false;

  [[noreturn]] void fail(const std::string& what) const {
    throw Error(ErrorCode::io, "cannot write the GeoPackage " + path + ": " + what + ": " +
                                   gdal.last_error("GDAL gives no reason"));
  }

  int make_field(const std::string& name, OGRFieldType type) {
    OGRFieldDefnH defn = gdal.OGR_Fld_Create(name.c_str(), type);
    const OGRErr rc = gdal.OGR_L_CreateField(layer, defn, TRUE);
    gdal.OGR_Fld_Destroy(defn);
    if (rc != OGRERR_NONE) fail("field " + name);
    return gdal.OGR_FD_GetFieldCount(gdal.OGR_L_GetLayerDefn(layer)) - 1;
  }

  bool reserved(const std::string& key) const {
    if (same_name(key, "fid") || same_name(key, "geom")) return true;
    for (const ResultColumn& c : result_columns(combined_factor))
      if (same_name(key, c.name)) return true;
    return false;
  }

  /// The field of input attribute `key`, created (typed after `value`) when first seen.
  int input_field(const std::string& key, const nlohmann::ordered_json& value) {
    for (const auto& [name, index] : input_fields)
      if (name == key) return index;
    const std::string field_name = reserved(key) ? "input_" + key : key;
    // Two keys that differ only in case are one SQLite column: the second shares the first's field.
    const int existing = gdal.OGR_FD_GetFieldIndex(gdal.OGR_L_GetLayerDefn(layer), field_name.c_str());
    const int index = existing >= 0 ? existing : make_field(field_name, field_type(value));
    input_fields.emplace_back(key, index);
    return index;
  }

  void write(const ResultRow& row, const Geometry* geometry, std::string_view properties_json) {
    nlohmann::ordered_json properties;
    if (!properties_json.empty()) properties = nlohmann::ordered_json::parse(properties_json, nullptr, false);
    if (!properties.is_object()) properties = nlohmann::ordered_json::object();
    std::vector<std::pair<int, const nlohmann::ordered_json*>> values;
    for (const auto& [key, value] : properties.items()) values.emplace_back(input_field(key, value), &value);
    if (!fields_made) {  // after the first row's attributes, so that the input's own fields come first
      for (const ResultColumn& c : result_columns(combined_factor))
        audit_fields.push_back(make_field(std::string(c.name), field_type(c.kind)));
      fields_made = true;
    }
    detail::OgrFeature feature(gdal.OGR_F_Create(gdal.OGR_L_GetLayerDefn(layer)));
    if (!feature) fail("cannot make a feature");
    OGRFeatureH f = feature.get();
    for (const auto& [index, value] : values) {
      if (value->is_null()) gdal.OGR_F_SetFieldNull(f, index);
      else if (value->is_string()) gdal.OGR_F_SetFieldString(f, index, value->get_ref<const std::string&>().c_str());
      else if (value->is_boolean()) gdal.OGR_F_SetFieldInteger64(f, index, value->get<bool>() ? 1 : 0);
      else if (value->is_number_integer() && gdal.OGR_Fld_GetType(gdal.OGR_FD_GetFieldDefn(
                                                 gdal.OGR_L_GetLayerDefn(layer), index)) == OFTInteger64)
        gdal.OGR_F_SetFieldInteger64(f, index, value->get<std::int64_t>());
      else if (value->is_number()) gdal.OGR_F_SetFieldDouble(f, index, value->get<double>());
      else gdal.OGR_F_SetFieldString(f, index, value->dump().c_str());
    }
    const auto& columns = result_columns(combined_factor);
    for (std::size_t k = 0; k < row.size && k < columns.size(); ++k) {
      const ResultCell& cell = row.cells[k];
      const int index = audit_fields[k];
      if (columns[k].kind == ColumnKind::text) {
        gdal.OGR_F_SetFieldString(f, index, std::string(cell.text).c_str());
      } else if (!std::isfinite(cell.number)) {
        gdal.OGR_F_SetFieldNull(f, index);
      } else if (columns[k].kind == ColumnKind::count) {
        gdal.OGR_F_SetFieldInteger64(f, index, static_cast<GIntBig>(cell.number));
      } else {
        gdal.OGR_F_SetFieldDouble(f, index, cell.number);
      }
    }
    if (geometry) {
      const std::string wkt = to_wkt(*geometry);
      char* text = const_cast<char*>(wkt.c_str());
      OGRGeometryH g = nullptr;
      if (gdal.OGR_G_CreateFromWkt(&text, srs.get(), &g) != OGRERR_NONE || !g)
        fail("OGR refuses the geometry of feature " + std::string(row.cells[0].text));
      gdal.OGR_F_SetGeometryDirectly(f, g);
    }
    if (gdal.OGR_L_CreateFeature(layer, f) != OGRERR_NONE) fail("feature " + std::string(row.cells[0].text));
  }
};

ResultGeoPackageWriter::ResultGeoPackageWriter(const std::string& path, const std::string& source_crs,
                                               const std::string& layer_name)
    : impl_(std::make_unique<Impl>()) {
  Impl& s = *impl_;
  const GdalApi& gdal = s.gdal;
  s.path = path;
  const QuietErrors quiet(gdal);
  s.srs.reset(gdal.OSRNewSpatialReference(nullptr));
  if (!s.srs || gdal.OSRSetFromUserInput(s.srs.get(), source_crs.c_str()) != OGRERR_NONE)
    throw Error(ErrorCode::unknown_crs, "GDAL cannot read the CRS " + source_crs + " for the GeoPackage " + path +
                                            ": " + gdal.last_error("not a CRS definition it knows"));
  gdal.OSRSetAxisMappingStrategy(s.srs.get(), OAMS_TRADITIONAL_GIS_ORDER);
  GDALDriverH driver = gdal.GDALGetDriverByName("GPKG");
  if (!driver) throw Error(ErrorCode::io, "cannot write " + path + ": this GDAL has no GPKG driver");
  s.dataset.reset(gdal.GDALCreate(driver, path.c_str(), 0, 0, 0, GDT_Unknown, nullptr));
  if (!s.dataset) s.fail("GDAL cannot create it");
  const char* layer_options[] = {"FID=fid", "GEOMETRY_NAME=geom", nullptr};
  s.layer = gdal.GDALDatasetCreateLayer(s.dataset.get(), layer_name.c_str(), s.srs.get(), wkbUnknown,
                                        const_cast<char**>(layer_options));
  if (!s.layer) s.fail("layer " + layer_name);
  // One transaction for every row: SQLite otherwise syncs the file once per feature.
  s.in_transaction = gdal.GDALDatasetStartTransaction(s.dataset.get(), FALSE) == OGRERR_NONE;
}

ResultGeoPackageWriter::~ResultGeoPackageWriter() {
  if (impl_ && impl_->dataset) {  // unfinished: closed as it is (the caller removes the file)
    const QuietErrors quiet(impl_->gdal);
    impl_->dataset.reset();
  }
}

void ResultGeoPackageWriter::with_combined_factor(bool on) noexcept {
  if (!impl_->fields_made) impl_->combined_factor = on;
}

void ResultGeoPackageWriter::write_feature(std::string_view id, const Geometry& geometry, const AuditResult& result,
                                           std::string_view input_properties_json) {
  const QuietErrors quiet(impl_->gdal);
  impl_->write(result_row(id, result, impl_->combined_factor), &geometry, input_properties_json);
}

void ResultGeoPackageWriter::write_unread(std::string_view id, std::string_view message,
                                          std::optional<GeometryType> type, std::string_view input_properties_json) {
  const QuietErrors quiet(impl_->gdal);
  impl_->write(unread_row(id, message, type, impl_->combined_factor), nullptr, input_properties_json);
}

void ResultGeoPackageWriter::finish() {
  Impl& s = *impl_;
  if (s.finished) return;
  s.finished = true;
  const GdalApi& gdal = s.gdal;
  const QuietErrors quiet(gdal);
  if (!s.fields_made) {  // no row: the layer still has every column
    for (const ResultColumn& c : result_columns(s.combined_factor)) s.make_field(std::string(c.name), field_type(c.kind));
    s.fields_made = true;
  }
  if (s.in_transaction && gdal.GDALDatasetCommitTransaction(s.dataset.get()) != OGRERR_NONE)
    s.fail("the rows could not be committed");
  s.in_transaction = false;
  s.dataset.reset();  // GDALClose writes what is left
  if (std::string(gdal.CPLGetLastErrorMsg()).size() > 0 && gdal.CPLGetLastErrorType() >= CE_Failure)
    s.fail("closing it failed");
}

}  // namespace gridtruth
