// gridtruth audit — the outputs of a run (audit_run.hpp): files opened on the first feature, rows written as the
// features come, everything renamed into place at the end.
#include <algorithm>
#include <memory>
#include <nlohmann/json.hpp>
#include <string>
#include <utility>
#include <vector>

#include "audit_run.hpp"
#include "commands.hpp"
#include "gridtruth/error.hpp"

namespace gridtruth::cli {

namespace {

/// The GeoPackage layer's name: the file's name without its directory and extension ("audit" if that is empty).
std::string gpkg_layer_name(const std::string& path) {
  std::string name = path.substr(path.rfind('/') == std::string::npos ? 0 : path.rfind('/') + 1);
  if (const auto dot = name.rfind('.'); dot != std::string::npos && dot > 0) name.erase(dot);
  return name.empty() ? std::string("audit") : name;
}

/// The GeoPackage (GDAL) and the GeoJSON transformation (PROJ): their errors are an output's, not the input's.
template <typename Write>
void as_output_error(Write write) {
  try {
    write();
  } catch (const Error& e) {
    throw OutputError(e.what());
  }
}

/// The audit's outputs: the CSV rows, and the summary, picture, GeoJSON and GeoPackage the options ask for. The
/// files are opened when the first feature has been read, so that an unreadable input leaves nothing behind; each
/// is written under a temporary name and renamed into place once all are complete (output_file.hpp). Write
/// errors are OutputError.

}  // namespace

/// The CSV's columns after the audit table's: the lengths and areas in the --units unit, then the input
/// attributes --keep-fields names (a name an audit column has is kept as input_<name>, as --geojson does).
class ExtraColumns {
 public:
  /// `keep`: "" (none), "all" (the attributes of `first`, the first feature read) or comma-separated names.
  ExtraColumns(const SummaryUnits& units, const std::string& keep, const InputFeature* first,
               bool combined_factor, bool all_digits)
      : all_digits_(all_digits) {
    auto suffix = [](const std::string& symbol) {
      if (symbol == "ac") return std::string("ac");
      if (symbol == "acUS") return std::string("us_ac");
      if (symbol == "ftUS") return std::string("us_ft");
      return symbol;  // "ha", "ft"
    };
    if (units.length_m != 1) {
      length_m_ = units.length_m;
      for (const char* base : {"true_length_", "grid_length_", "length_error_"})
        names_.push_back(base + suffix(units.length_unit));
    }
    if (units.area_m2 != 1) {
      area_m2_ = units.area_m2;
      for (const char* base : {"true_area_", "grid_area_", "area_error_"}) names_.push_back(base + suffix(units.area_unit));
    }
    std::vector<std::string> fields;
    if (keep == "all") {
      if (first && !first->properties_json.empty()) {
        const auto properties = nlohmann::ordered_json::parse(first->properties_json, nullptr, false);
        if (properties.is_object())
          for (const auto& item : properties.items()) fields.push_back(item.key());
      }
    } else {
      for (std::size_t start = 0; start <= keep.size() && !keep.empty();) {
        const std::size_t comma = std::min(keep.find(',', start), keep.size());
        if (comma > start) fields.push_back(keep.substr(start, comma - start));
        start = comma + 1;
      }
    }
    const auto& columns = result_columns(combined_factor);
    for (const std::string& field : fields) {
      bool clash = std::find(names_.begin(), names_.end(), field) != names_.end();
      for (const ResultColumn& c : columns) clash = clash || c.name == field;
      keys_.push_back(field);
      names_.push_back(clash ? "input_" + field : field);
    }
  }
  const std::vector<std::string>& names() const { return names_; }

  /// The extra cells of one row (`result` null: a feature that could not be read).
  void cells(const InputFeature& feature, const AuditResult* result, std::vector<std::string>& out) const {
    out.clear();
    auto budget = [&](const std::optional<Budget>& b, double unit) {
      if (!b) return out.resize(out.size() + 3);
      // Rounded as the SI columns are: each to a tenth of its bound (in the unit), unless --all-digits.
      for (const auto& [v, bound] : {std::pair{b->reference, b->reference_bound}, std::pair{b->grid, b->grid_bound},
                                     std::pair{b->error, b->error_computation_bound}})
        out.push_back(all_digits_ ? format_number(v / unit) : format_number(v / unit, bound / unit));
    };
    if (length_m_) budget(result ? result->length : std::nullopt, length_m_);
    if (area_m2_) budget(result ? result->area : std::nullopt, area_m2_);
    if (keys_.empty()) return;
    const auto properties = feature.properties_json.empty()
                                ? nlohmann::ordered_json()
                                : nlohmann::ordered_json::parse(feature.properties_json, nullptr, false);
    for (const std::string& key : keys_) {
      const auto found = properties.is_object() ? properties.find(key) : properties.end();
      if (!properties.is_object() || found == properties.end() || found->is_null()) out.emplace_back();
      else if (found->is_string()) out.push_back(found->get<std::string>());
      else if (found->is_number_float()) out.push_back(format_number(found->get<double>()));
      else out.push_back(found->dump());
    }
  }

 private:
  std::vector<std::string> names_, keys_;
  double length_m_ = 0, area_m2_ = 0;  // 0: no such columns
  bool all_digits_ = false;
};

AuditOutputs::AuditOutputs(const AuditArgs& args, const AuditPlan& plan, const Auditor& auditor, const std::string& input_name)
    : args_(args), plan_(plan) {
  if (args.report.empty()) return;
  ReportOptions report_options;
  report_options.input_name = input_name;
  report_options.length_unit = plan.units.length_unit;
  report_options.area_unit = plan.units.area_unit;
  report_options.length_unit_m = plan.units.length_m;
  report_options.area_unit_m2 = plan.units.area_m2;
  report_options.caution = caution_text;
  report_.emplace(auditor, report_options);
}

AuditOutputs::~AuditOutputs() = default;

void AuditOutputs::open(const InputFeature* first) {
  out_file_ = std::make_unique<OutputFile>(args_.out);
  if (!args_.summary.empty()) summary_file_ = std::make_unique<OutputFile>(args_.summary);
  // The picture and the GeoJSON: opened now too, so that an unwritable path stops the run before any work.
  if (!args_.report.empty()) report_file_ = std::make_unique<OutputFile>(args_.report);
  if (!args_.geojson.empty()) {
    geojson_file_ = std::make_unique<OutputFile>(args_.geojson);
    as_output_error([&] {
      geojson_.emplace(geojson_file_->stream(), plan_.options.source_crs,
                       parse_geojson_coordinates(args_.geojson_crs));
    });
    geojson_->with_combined_factor(plan_.with_heights);
    geojson_->with_bounds(args_.bounds);
  }
  if (!args_.gpkg.empty()) {
    gpkg_file_ = OutputFile::for_named_writer(args_.gpkg, ".gpkg");
    as_output_error([&] {
      gpkg_.emplace(gpkg_file_->temp_path(), plan_.options.source_crs, gpkg_layer_name(args_.gpkg));
      gpkg_->with_combined_factor(plan_.with_heights);
    });
  }
  writer_.emplace(out_file_->stream());
  writer_->with_combined_factor(plan_.with_heights);
  writer_->with_all_digits(args_.all_digits);
  writer_->with_bounds(args_.bounds);
  extra_ = std::make_unique<ExtraColumns>(plan_.units, args_.keep_fields, first, plan_.with_heights, args_.all_digits);
  writer_->with_extra_columns(extra_->names());
  writer_->write_header();
}

void AuditOutputs::add(const InputFeature& feature, const AuditResult& result) {
  // One result for every output: its message already names the failed tolerances (the library sets it).
  extra_->cells(feature, &result, writer_->extra_cells());
  writer_->write_row(feature.id, result);
  if (gpkg_)
    as_output_error([&] { gpkg_->write_feature(feature.id, *feature.geometry, result, feature.properties_json); });
  summary_.add(feature, result);
  if (report_) report_->add(feature.id, *feature.geometry, result);
  if (geojson_) geojson_->write_feature(feature.id, *feature.geometry, result, feature.properties_json);
}

void AuditOutputs::add_unread(const InputFeature& feature) {
  extra_->cells(feature, nullptr, writer_->extra_cells());
  writer_->write_unread_row(feature.id, feature.error, feature.declared_type);
  summary_.add_unread(feature);
  if (report_) report_->add_unread(feature.id);
  if (geojson_) geojson_->write_unread(feature.id, feature.error, feature.declared_type, feature.properties_json);
  if (gpkg_)
    as_output_error([&] {
      gpkg_->write_unread(feature.id, feature.error, feature.declared_type, feature.properties_json);
    });
}

void AuditOutputs::finish(const AuditSummary::Context& context) {
  if (geojson_) geojson_->finish();
  if (gpkg_) as_output_error([&] { gpkg_->finish(); });
  if (report_) {
    if (plan_.report_html) report_->write_html(report_file_->stream());
    else report_->write_svg(report_file_->stream());
  }
  if (summary_file_) summary_file_->stream() << summary_.to_json(context).dump(2) << "\n";
  for (auto* file : {&out_file_, &geojson_file_, &gpkg_file_, &report_file_, &summary_file_})
    if (*file) (*file)->finish();
  for (auto* file : {&out_file_, &geojson_file_, &gpkg_file_, &report_file_, &summary_file_})
    if (*file) (*file)->commit();
}

}  // namespace gridtruth::cli
