// gridtruth audit — what a run was asked for (AuditArgs, AuditPlan) and where its results go (AuditOutputs: the CSV
// rows with their extra columns, the summary, the picture, the GeoJSON and the GeoPackage).
#pragma once

#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "audit_summary.hpp"
#include "output_file.hpp"
#include "gridtruth/audit.hpp"
#include "gridtruth/io.hpp"
#include "gridtruth/report.hpp"

namespace gridtruth::cli {

/// The audit command's options as given.
struct AuditArgs {
  std::string input;
  std::string target_crs;
  std::string source_crs;  // empty: the input's own CRS, else EPSG:4326
  std::string layer;
  std::string area_of_use_margin = "5";
  std::string datum_op;  // empty: PROJ's choice per feature
  double height_m = 0;
  std::string height_field;
  std::string edges;
  std::string tolerance;
  double densify_tolerance_m = 0.001;
  std::string id_field;
  std::string wkt_field = "wkt";
  std::string out;
  std::string summary;
  std::string report;
  std::string geojson;
  std::string geojson_crs = "wgs84";
  std::string gpkg;
  std::string units = "metric";
  std::string keep_fields;  // "a,b" or "all"
  std::string format = "auto";
  unsigned threads = 0;
  bool repair = false;
  bool bounds = false;
  bool height_from_z = false;
  bool all_digits = false;
};

/// What the options ask for, checked before anything is read.
struct AuditPlan {
  AuditOptions options;
  ReaderOptions reader_options;
  SummaryUnits units;
  bool report_html = false;   // --report names an .html (or .htm) file, else an .svg one
  bool with_heights = false;  // --height or --height-field: the rows carry combined_factor
};

class ExtraColumns;

/// The audit's outputs: the CSV rows, and the summary, picture, GeoJSON and GeoPackage the options ask for. The
/// files are opened when the first feature has been read, so that an unreadable input leaves nothing behind; each
/// is written under a temporary name and renamed into place once all are complete (output_file.hpp). Write
/// errors are cli::OutputError.
class AuditOutputs {
 public:
  AuditOutputs(const AuditArgs& args, const AuditPlan& plan, const Auditor& auditor, const std::string& input_name);
  ~AuditOutputs();

  bool opened() const { return writer_.has_value(); }
  const AuditSummary& summary() const { return summary_; }

  /// Opens every file and writes the CSV header; `first`: the first feature read (--keep-fields all), or null.
  void open(const InputFeature* first);
  /// One feature that was read (its geometry is set) and its result.
  void add(const InputFeature& feature, const AuditResult& result);
  /// One feature that could not be read: an invalid row naming the reason.
  void add_unread(const InputFeature& feature);
  /// Completes every file, then renames them into place: none is, unless all could be completed.
  void finish(const AuditSummary::Context& context);

 private:
  const AuditArgs& args_;
  const AuditPlan& plan_;
  AuditSummary summary_;
  std::optional<ReportCollector> report_;
  std::unique_ptr<OutputFile> out_file_, summary_file_, report_file_, geojson_file_, gpkg_file_;
  std::optional<ResultCsvWriter> writer_;
  std::optional<ResultGeoJsonWriter> geojson_;
  std::optional<ResultGeoPackageWriter> gpkg_;
  std::unique_ptr<ExtraColumns> extra_;
};

}  // namespace gridtruth::cli
