// gridtruth — pictures for reports: a self-contained SVG (and an HTML page wrapping it) of an audit, and a
// GeoJSON writer that carries every result column into the features' properties.
//
// The picture, in the target CRS's plane: the features filled by their error in ppm (area for polygons, length for
// lines) on a diverging scale centred on zero; under them the projection's scale field as isolines in ppm with the
// line of true scale (scale = 1) drawn heavy and dashed, and the target CRS's area of use outlined; axes and a scale
// bar in the CRS's unit. Beside it: the legend, a histogram of per-feature ppm with the tolerances marked, stacked
// bars of the budget parts of the worst features; under it a caption naming everything the figures depend on.
// The SVG uses no script, no external font, image or style sheet: any renderer draws it offline.
#pragma once

#include <cstddef>
#include <iosfwd>
#include <memory>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "gridtruth/audit.hpp"
#include "gridtruth/geometry.hpp"
#include "gridtruth/tolerance.hpp"

namespace gridtruth {

/// How a report is drawn. Units are in the member names.
struct ReportOptions {
  std::string input_name;  ///< what the caption calls the input (a file name), may be empty
  /// The scale field drawn under the features: Metric::area → areal scale a·b, Metric::length → linear scale k
  /// along the parallels (the scale factor quoted for cylindrical and conic projections, Snyder 1987; equal to the
  /// scale in every direction for a conformal projection). Absent: area when any polygon was collected, else
  /// length.
  std::optional<Metric> field_metric;
  std::string date;  ///< the date in the caption; empty: today's date (UTC, YYYY-MM-DD)
  // Units of the caption's totals (the figures themselves are in ppm and in the CRS's unit).
  std::string length_unit = "m";  ///< symbol of the totals' length unit
  std::string area_unit = "m2";   ///< symbol of the totals' area unit
  double length_unit_m = 1;       ///< metres per length unit
  double area_unit_m2 = 1;        ///< square metres per area unit
  std::size_t max_drawn_features = 3000;    ///< features drawn one by one (the worst by |ppm| are kept)
  std::size_t max_stored_vertices = 300000;  ///< projected vertices kept for drawing, all features together
  std::size_t max_aggregated_points = 20000; ///< further features kept as centroids, drawn as cells of mean ppm
  std::size_t histogram_sample = 50000;      ///< ppm values kept for the histogram (a uniform sample beyond)
  std::size_t worst_count = 10;              ///< features in the stacked bars of budget parts
  int field_samples = 48;                    ///< sample points of the scale field per side of the extent (≥ 4)
  /// The caution line printed in the caption.
  std::string caution =
      "Caution: these figures support, and do not replace, licensed survey practice and local codes.";
};

/// Collects audited features and draws the report. Memory stays bounded whatever the number of features: the
/// geometry of at most max_drawn_features features (simplified below a pixel, at most max_stored_vertices vertices
/// in all), the centroids of at most max_aggregated_points others, a sample of histogram_sample ppm values and the
/// worst_count worst budgets.
///
/// Not thread-safe: one thread adds at a time (the sink of run_audit() qualifies). The collector keeps its own
/// clone of the auditor, so the caller's auditor stays free for other use.
class ReportCollector {
 public:
  /// Clones `auditor` (Error(no_transformation) in the rare case PROJ cannot copy its objects) and samples the
  /// target's scale field when the report is drawn.
  ReportCollector(const Auditor& auditor, ReportOptions options = {});
  ~ReportCollector();
  /// Moves; the moved-from collector may only be destroyed or assigned to.
  ReportCollector(ReportCollector&&) noexcept;
  /// Moves; the moved-from collector may only be destroyed or assigned to.
  ReportCollector& operator=(ReportCollector&&) noexcept;
  ReportCollector(const ReportCollector&) = delete;
  ReportCollector& operator=(const ReportCollector&) = delete;

  /// One audited feature, with its geometry in the auditor's source CRS.
  void add(std::string_view id, const Geometry& geometry, const AuditResult& result);
  /// One feature that could not be read (counted as invalid, not drawn).
  void add_unread(std::string_view id);

  /// Writes the SVG document (with its XML declaration).
  void write_svg(std::ostream& out) const;
  /// Writes an HTML page with the same SVG inline and the summary tables (counts, totals, worst features).
  void write_html(std::ostream& out) const;

  /// The scale field in force (see ReportOptions::field_metric).
  Metric field_metric() const;
  /// The isolines where the scale field equals `scale` (1: the lines of true scale), as polylines in the target
  /// CRS's plane (easting, northing in its linear unit), traced by marching squares over the sample grid of the
  /// field (the grid covers the features' extent in the source CRS with a margin of a quarter of each span, at
  /// least 0.05 units). Each crossing is found on its grid edge by regula falsi on the field itself (to ~1e-9 of
  /// the edge) and then projected, so the line lies where the scale is `scale`, not where a straight line between
  /// two samples would put it.
  /// Empty when nothing was collected, the level does not occur, or the field is flat (varies by less than 0.1 ppm
  /// over the extent, as an equal-area projection's areal scale does: its isolines would trace rounding noise).
  std::vector<Path> isolines(double scale) const;

  std::size_t features() const noexcept;  ///< features added (read or not)
  std::size_t drawn() const noexcept;     ///< features drawn one by one
  std::size_t aggregated() const noexcept;  ///< features drawn only within aggregated cells

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

/// The coordinates ResultGeoJsonWriter writes.
enum class GeoJsonCoordinates {
  /// Longitude and latitude on WGS 84, in degrees, as RFC 7946 section 4 requires: a source CRS that is not
  /// WGS 84 longitude/latitude is transformed by PROJ (its default operation, chosen per vertex among those whose
  /// area of use holds it; its accuracy is PROJ's, e.g. about 2 m from NAD83 with no grid).
  wgs84,
  /// The coordinates as read, in the source CRS, named by a "crs" member of type "name" (GeoJSON 2008
  /// specification, section 3.1.1, which RFC 7946 dropped but GDAL and other GIS software still read):
  /// "urn:ogc:def:crs:EPSG::n" for an EPSG CRS, else the definition as given.
  source,
};
/// "wgs84" or "source"; never throws.
std::string_view to_string(GeoJsonCoordinates coordinates) noexcept;
/// Parses the names of to_string(); throws Error(invalid_argument) otherwise.
GeoJsonCoordinates parse_geojson_coordinates(std::string_view name);

struct ResultRow;  // gridtruth/io.hpp

/// Writes the input features as one GeoJSON FeatureCollection (RFC 7946), streaming: the coordinates as
/// GeoJsonCoordinates says, and as properties every column ResultCsvWriter writes for the feature, under the same
/// names: numbers as JSON numbers holding the doubles in full (as the GeoPackage; the CSV rounds each figure to its
/// bound), empty cells as null, text as strings. The input's own attributes
/// (InputFeature::properties_json) come first; one whose name is also a column's is kept as "input_<name>".
/// A feature with a vertex PROJ cannot transform gets a null geometry and the property "geometry_note" saying so.
class ResultGeoJsonWriter {
 public:
  /// Writes to `out`, which must outlive the writer, the coordinates as read (no CRS named, no transformation:
  /// RFC 7946 only when the input is WGS 84 longitude/latitude).
  explicit ResultGeoJsonWriter(std::ostream& out);
  /// Writes to `out` features whose geometries are in `source_crs` (any definition describe_crs() takes), with
  /// the coordinates `coordinates` asks for. Throws Error(unknown_crs) for a CRS PROJ cannot resolve,
  /// Error(no_transformation) when PROJ has no operation to WGS 84.
  ResultGeoJsonWriter(std::ostream& out, const std::string& source_crs,
                      GeoJsonCoordinates coordinates = GeoJsonCoordinates::wgs84);
  /// Adds the `combined_factor` property, as ResultCsvWriter::with_combined_factor().
  void with_combined_factor(bool on) noexcept { combined_factor_ = on; }
  /// Adds the 14 bound properties (Budget::*_bound, named as result_columns()'s `bounds`; null where a bound does
  /// not apply or cannot be given), after every other audit property, as ResultCsvWriter::with_bounds().
  void with_bounds(bool on) noexcept { bounds_ = on; }
  /// One audited feature.
  void write_feature(std::string_view id, const Geometry& geometry, const AuditResult& result,
                     std::string_view input_properties_json = {});
  /// One feature that could not be read: null geometry, the columns of ResultCsvWriter::write_unread_row().
  void write_unread(std::string_view id, std::string_view message, std::optional<GeometryType> type = std::nullopt,
                    std::string_view input_properties_json = {});
  /// Closes the collection (also written, if not yet, by the destructor).
  void finish();
  ~ResultGeoJsonWriter();
  ResultGeoJsonWriter(const ResultGeoJsonWriter&) = delete;
  ResultGeoJsonWriter& operator=(const ResultGeoJsonWriter&) = delete;

 private:
  void write_properties(std::string_view id, const ResultRow& row, std::string_view input_properties_json,
                        const char* geometry_note = nullptr);
  struct Transform;
  std::unique_ptr<Transform> transform_;  // source CRS → WGS 84 longitude/latitude; null: coordinates as read
  std::ostream* out_;
  bool combined_factor_ = false;
  bool bounds_ = false;
  bool first_ = true;
  bool finished_ = false;
};

/// Writes audited features as one layer of a new GeoPackage (OGC 12-128r18) through GDAL's GPKG driver, for GIS
/// software: each feature's geometry as read, in the source CRS (the layer's spatial reference, x = longitude or
/// easting whatever the CRS's official axis order); the input's attributes (InputFeature::properties_json) as
/// fields, created as they first appear (JSON integers as Integer64, other numbers as Real, booleans as Integer,
/// strings as String, arrays and objects as their JSON text), before the audit columns; then every column of
/// result_columns() under the same names: numbers as Real, counts as Integer64, text as String, values that do not
/// apply (NaN) as NULL. An input attribute whose name is an audit column's, or the layer's "fid" or "geom" column
/// (compared case-insensitively, as SQLite does), is kept as "input_<name>". A feature that could not be read is a
/// row with a NULL geometry. All rows are written in one transaction, committed by finish().
/// Needs a build with GDAL (built_with_gdal() in cells.hpp); otherwise the constructor throws Error(io).
/// Not thread-safe: one thread writes.
class ResultGeoPackageWriter {
 public:
  /// Creates the GeoPackage `path` (which must not exist) with one layer `layer_name` whose spatial reference is
  /// `source_crs` (any definition GDAL's OSRSetFromUserInput takes: "EPSG:n", WKT, PROJJSON, a PROJ string).
  /// Throws Error(io) naming the path and GDAL's reason, Error(unknown_crs) when GDAL cannot read the CRS.
  ResultGeoPackageWriter(const std::string& path, const std::string& source_crs,
                         const std::string& layer_name = "audit");
  ~ResultGeoPackageWriter();
  ResultGeoPackageWriter(const ResultGeoPackageWriter&) = delete;
  ResultGeoPackageWriter& operator=(const ResultGeoPackageWriter&) = delete;
  /// Adds the `combined_factor` column, as ResultCsvWriter::with_combined_factor(); before the first row only.
  void with_combined_factor(bool on) noexcept;
  /// One audited feature, geometry in the source CRS. Throws Error(io) when GDAL cannot write the row.
  void write_feature(std::string_view id, const Geometry& geometry, const AuditResult& result,
                     std::string_view input_properties_json = {});
  /// One feature that could not be read: NULL geometry, the cells of unread_row().
  void write_unread(std::string_view id, std::string_view message, std::optional<GeometryType> type = std::nullopt,
                    std::string_view input_properties_json = {});
  /// Commits the rows and closes the file (a layer without rows is still created). Throws Error(io) naming
  /// GDAL's reason. The destructor closes an unfinished file as it is (the caller should remove it).
  void finish();

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

}  // namespace gridtruth
