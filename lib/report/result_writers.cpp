// gridtruth — the audit's results as GeoJSON features (ResultGeoJsonWriter, RFC 7946), and the GeoPackage
// writer's stand-in for builds without GDAL (the real one is lib/report/gdal/gpkg_writer.cpp).
#include <algorithm>
#include <cmath>
#include <cstdint>
#include <cstdlib>
#include <memory>
#include <nlohmann/json.hpp>
#include <ostream>
#include <sstream>
#include <string>
#include <vector>

#include "core/proj_handles.hpp"
#include "gridtruth/crs.hpp"
#include "gridtruth/error.hpp"
#include "gridtruth/io.hpp"
#include "gridtruth/report.hpp"

namespace gridtruth {
// GeoJSON

namespace {

/// Splits one RFC 4180 record (as ResultCsvWriter writes it, without its line ending) into fields.
void write_position(std::ostream& o, const Coord& c) {
  const std::string x = format_number(c.x), y = format_number(c.y);
  o << '[' << (x.empty() ? "null" : x) << ',' << (y.empty() ? "null" : y) << ']';
}
/// A JSON array of the items, each written by `write`.
template <class T, class Write>
void write_array(std::ostream& o, const std::vector<T>& items, Write write) {
  o << '[';
  for (std::size_t k = 0; k < items.size(); ++k) {
    if (k) o << ',';
    write(o, items[k]);
  }
  o << ']';
}
void write_path(std::ostream& o, const Path& p) { write_array(o, p, write_position); }
void write_polygon(std::ostream& o, const Polygon& p) {
  o << '[';
  write_path(o, p.outer);
  for (const Path& h : p.holes) o << ',', write_path(o, h);
  o << ']';
}

void write_geometry(std::ostream& o, const Geometry& g) {
  o << "{\"type\":\"" << to_string(g.type) << "\",\"coordinates\":";
  switch (g.type) {
    case GeometryType::point:
      if (g.points.empty()) o << "[]";
      else write_position(o, g.points[0]);
      break;
    case GeometryType::multi_point: write_path(o, g.points); break;
    case GeometryType::line_string:
      if (g.lines.empty()) o << "[]";
      else write_path(o, g.lines[0]);
      break;
    case GeometryType::multi_line_string: write_array(o, g.lines, write_path); break;
    case GeometryType::polygon:
      if (g.polygons.empty()) o << "[]";
      else write_polygon(o, g.polygons[0]);
      break;
    case GeometryType::multi_polygon: write_array(o, g.polygons, write_polygon); break;
  }
  o << '}';
}

}  // namespace

struct ResultGeoJsonWriter::Transform {
  detail::Context context = detail::make_context();
  detail::Pj operation;

  /// The geometry with every vertex in WGS 84 longitude/latitude; false when PROJ cannot transform one.
  bool apply(Geometry& g) {
    auto one = [&](Coord& c) {
      PJ_COORD p = proj_coord(c.x, c.y, 0, 0);
      p = proj_trans(operation.get(), PJ_FWD, p);
      if (!std::isfinite(p.xy.x) || !std::isfinite(p.xy.y)) return false;
      c = {p.xy.x, p.xy.y};
      return true;
    };
    auto path = [&](Path& ps) {
      for (Coord& c : ps)
        if (!one(c)) return false;
      return true;
    };
    if (!path(g.points)) return false;
    for (Path& l : g.lines)
      if (!path(l)) return false;
    for (Polygon& p : g.polygons) {
      if (!path(p.outer)) return false;
      for (Path& h : p.holes)
        if (!path(h)) return false;
    }
    return true;
  }
};

ResultGeoJsonWriter::ResultGeoJsonWriter(std::ostream& out) : out_(&out) {
  *out_ << "{\"type\":\"FeatureCollection\",\"features\":[";
}

ResultGeoJsonWriter::ResultGeoJsonWriter(std::ostream& out, const std::string& source_crs,
                                         GeoJsonCoordinates coordinates)
    : out_(&out) {
  // WGS 84 longitude/latitude already (EPSG:4326 and OGC:CRS84 differ only in axis order, which gridtruth's
  // coordinates do not follow: x is always the longitude): nothing to transform, nothing to name.
  const bool wgs84 = same_crs(source_crs, "EPSG:4326");
  std::string crs_member;
  if (!wgs84 && coordinates == GeoJsonCoordinates::source) {
    const CrsInfo info = describe_crs(source_crs);
    std::string name = source_crs;
    if (info.id.rfind("EPSG:", 0) == 0) name = "urn:ogc:def:crs:EPSG::" + info.id.substr(5);
    crs_member = ",\"crs\":{\"type\":\"name\",\"properties\":{\"name\":" + nlohmann::json(name).dump() + "}}";
  } else if (!wgs84) {
    auto t = std::make_unique<Transform>();
    PJ_CONTEXT* c = t->context.get();
    detail::Pj from = detail::resolve_crs(c, source_crs);
    detail::Pj to = detail::resolve_crs(c, "EPSG:4326");
    detail::Pj raw(proj_create_crs_to_crs_from_pj(c, from.get(), to.get(), nullptr, nullptr));
    if (raw) t->operation.reset(proj_normalize_for_visualization(c, raw.get()));
    if (!t->operation)
      throw Error(ErrorCode::no_transformation,
                  "cannot transform " + source_crs + " to WGS 84 for GeoJSON: " + detail::last_error(c));
    transform_ = std::move(t);
  }
  *out_ << "{\"type\":\"FeatureCollection\"" << crs_member << ",\"features\":[";
}

ResultGeoJsonWriter::~ResultGeoJsonWriter() {
  try {
    finish();
  } catch (...) {  // a destructor must not throw; the stream's state tells the caller
  }
}

void ResultGeoJsonWriter::finish() {
  if (finished_) return;
  finished_ = true;
  *out_ << "\n]}\n";
}

void ResultGeoJsonWriter::write_properties(std::string_view id, const ResultRow& row,
                                           std::string_view input_properties_json, const char* geometry_note) {
  // The result table's cells as they are (doubles in full, as the GeoPackage holds them; the CSV is the table
  // rounded for reading), after the input's own attributes (renamed input_<name> where they clash).
  const auto& columns = result_columns(combined_factor_, bounds_);
  nlohmann::ordered_json props = nlohmann::ordered_json::object();
  if (!input_properties_json.empty()) {
    const auto input = nlohmann::ordered_json::parse(input_properties_json, nullptr, false);
    if (input.is_object()) {
      for (const auto& [key, value] : input.items()) {
        const bool clash = std::any_of(columns.begin(), columns.end(), [&](const ResultColumn& c) { return c.name == key; });
        props[clash ? "input_" + key : key] = value;
      }
    }
  }
  for (std::size_t k = 0; k < columns.size() && k < row.size; ++k) {
    const std::string name(columns[k].name);
    const ResultCell& cell = row.cells[k];
    if (columns[k].kind == ColumnKind::text) props[name] = std::string(cell.text);
    else if (!std::isfinite(cell.number)) props[name] = nullptr;
    else if (columns[k].kind == ColumnKind::count) props[name] = static_cast<std::uint64_t>(cell.number);
    else props[name] = cell.number;
  }
  if (geometry_note) props["geometry_note"] = geometry_note;
  *out_ << (first_ ? "\n" : ",\n") << "{\"type\":\"Feature\",\"id\":" << nlohmann::json(std::string(id)).dump()
        << ",\"properties\":" << props.dump() << ",\"geometry\":";
  first_ = false;
}

void ResultGeoJsonWriter::write_feature(std::string_view id, const Geometry& geometry, const AuditResult& result,
                                        std::string_view input_properties_json) {
  const ResultRow row = result_row(id, result, combined_factor_, bounds_);
  if (!transform_) {
    write_properties(id, row, input_properties_json);
    write_geometry(*out_, geometry);
  } else if (Geometry lonlat = geometry; transform_->apply(lonlat)) {
    write_properties(id, row, input_properties_json);
    write_geometry(*out_, lonlat);
  } else {
    write_properties(id, row, input_properties_json,
                     "a vertex could not be transformed to WGS 84 longitude/latitude (RFC 7946)");
    *out_ << "null";
  }
  *out_ << '}';
}

void ResultGeoJsonWriter::write_unread(std::string_view id, std::string_view message,
                                       std::optional<GeometryType> type, std::string_view input_properties_json) {
  write_properties(id, unread_row(id, message, type, combined_factor_, bounds_), input_properties_json);
  *out_ << "null}";
}

#ifndef GRIDTRUTH_WITH_GDAL
// Without GDAL (lib/gdal/gpkg_writer.cpp is not built): the writer exists, and says why it cannot work.
struct ResultGeoPackageWriter::Impl {};
ResultGeoPackageWriter::ResultGeoPackageWriter(const std::string& path, const std::string&, const std::string&) {
  throw Error(ErrorCode::io, "cannot write the GeoPackage " + path +
                                 ": this build of gridtruth has no GDAL (install Debian's libgdal-dev and configure "
                                 "again, GRIDTRUTH_WITH_GDAL)");
}
ResultGeoPackageWriter::~ResultGeoPackageWriter() = default;
void ResultGeoPackageWriter::with_combined_factor(bool) noexcept {}
void ResultGeoPackageWriter::write_feature(std::string_view, const Geometry&, const AuditResult&, std::string_view) {}
void ResultGeoPackageWriter::write_unread(std::string_view, std::string_view, std::optional<GeometryType>,
                                          std::string_view) {}
void ResultGeoPackageWriter::finish() {}
#endif

}  // namespace gridtruth
