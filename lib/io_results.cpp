// gridtruth — writing audit results as CSV (RFC 4180), numbers in their shortest round-trip form.
#include <charconv>
#include <cmath>
#include <ostream>
#include <string>

#include "gridtruth/io.hpp"
#include "io_detail.hpp"

namespace gridtruth {

ResultCsvWriter::ResultCsvWriter(std::ostream& out, std::string line_ending)
    : out_(&out), line_ending_(std::move(line_ending)) {}

const std::vector<std::string>& ResultCsvWriter::columns() {
  static const std::vector<std::string> names = {
      "id", "geometry_type", "status", "message", "vertices",
      "true_length_m", "grid_length_m", "length_error_m", "length_error_ppm", "length_from_edges_m",
      "length_from_scale_m", "length_from_datum_m", "length_from_height_m",
      "true_area_m2", "grid_area_m2", "area_error_m2", "area_error_ppm", "area_from_edges_m2", "area_from_scale_m2",
      "area_from_datum_m2", "area_from_height_m2",
      "scale_min", "scale_max", "areal_scale_min", "areal_scale_max", "angular_distortion_max_deg",
      "convergence_min_deg", "convergence_max_deg", "bearing_error_max_arcsec", "verdict"};
  return names;
}

void ResultCsvWriter::write_header() {
  const auto& names = columns();
  for (std::size_t k = 0; k < names.size(); ++k) {
    if (k) *out_ << ',';
    *out_ << names[k];
  }
  if (combined_factor_) *out_ << ",combined_factor";
  *out_ << line_ending_;
}

namespace {

/// csv_field(text) appended to `line`.
void append_csv_field(std::string& line, std::string_view text) {
  if (text.find_first_of(",\"\r\n") == std::string_view::npos && !detail::spreadsheet_formula_start(text))
    line.append(text);
  else line += csv_field(text);
}

void append_budget(std::string& line, const std::optional<Budget>& b) {
  const double* values[8] = {};
  if (b) {
    values[0] = &b->reference;
    values[1] = &b->grid;
    values[2] = &b->error;
    values[3] = &b->error_ppm;
    values[4] = &b->from_edges;
    values[5] = &b->from_scale;
    values[6] = &b->from_datum;
    values[7] = &b->from_height;
  }
  for (const double* v : values) {
    line += ',';
    if (v) detail::append_number(line, *v);
  }
}

}  // namespace

void ResultCsvWriter::write_row(std::string_view id, const AuditResult& r) {
  // One line built in one buffer (numbers appended in place), kept between rows: a row costs well under 1 µs.
  std::string& line = line_;
  line.clear();
  append_csv_field(line, id);
  line += ',';
  line += to_string(r.type);
  line += ',';
  line += to_string(r.status);
  line += ',';
  append_csv_field(line, r.message);
  line += ',';
  char digits[24];
  line.append(digits, std::to_chars(digits, digits + sizeof digits, r.vertices).ptr);
  append_budget(line, r.length);
  append_budget(line, r.area);
  const Distortion* d = r.distortion ? &*r.distortion : nullptr;
  const double distortion[7] = {
      d ? d->scale_min : NAN,       d ? d->scale_max : NAN,           d ? d->areal_scale_min : NAN,
      d ? d->areal_scale_max : NAN, d ? d->angular_distortion_max_deg : NAN, d ? d->convergence_min_deg : NAN,
      d ? d->convergence_max_deg : NAN};
  for (const double v : distortion) {
    line += ',';
    detail::append_number(line, v);
  }
  line += ',';
  if (r.bearing_error_max_arcsec) detail::append_number(line, *r.bearing_error_max_arcsec);
  line += ',';
  line += to_string(r.verdict);
  if (combined_factor_) {
    line += ',';
    if (r.combined_factor) detail::append_number(line, *r.combined_factor);
  }
  line += line_ending_;
  out_->write(line.data(), static_cast<std::streamsize>(line.size()));
}

void ResultCsvWriter::write_unread_row(std::string_view id, std::string_view message,
                                       std::optional<GeometryType> type) {
  std::string line = csv_field(id);
  line += ',';
  if (type) line += to_string(*type);
  line += ",invalid,";
  line += csv_field(message);
  line += ',';  // vertices: unknown
  // 8 length + 8 area + 7 distortion + bearing + verdict columns, all empty.
  line.append(8 + 8 + 7 + 1 + 1 + (combined_factor_ ? 1 : 0), ',');
  line += line_ending_;
  *out_ << line;
}

}  // namespace gridtruth
