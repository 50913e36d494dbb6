// gridtruth — writing audit results as CSV (RFC 4180), each figure to the precision its bound supports.
#include <array>
#include <charconv>
#include <cmath>
#include <ostream>
#include <string>
#include <utility>

#include "core/enum_names.hpp"
#include "gridtruth/audit.hpp"
#include "gridtruth/io.hpp"
#include "io_detail.hpp"

namespace gridtruth {

ResultCsvWriter::ResultCsvWriter(std::ostream& out, std::string line_ending)
    : out_(&out), line_ending_(std::move(line_ending)) {}

namespace {

constexpr ResultColumn text_column(std::string_view name) { return {name, ColumnKind::text}; }
constexpr ResultColumn number_column(std::string_view name) { return {name, ColumnKind::number}; }

}  // namespace

const std::vector<ResultColumn>& result_columns(bool combined_factor, bool bounds) {
  static const std::vector<ResultColumn> base = {
      text_column("id"), text_column("geometry_type"), text_column("status"), text_column("message"),
      {"vertices", ColumnKind::count},
      number_column("true_length_m"), number_column("grid_length_m"), number_column("length_error_m"),
      number_column("length_error_ppm"), number_column("length_from_edges_m"), number_column("length_from_scale_m"),
      number_column("length_from_datum_m"), number_column("length_from_height_m"),
      number_column("true_area_m2"), number_column("grid_area_m2"), number_column("area_error_m2"),
      number_column("area_error_ppm"), number_column("area_from_edges_m2"), number_column("area_from_scale_m2"),
      number_column("area_from_datum_m2"), number_column("area_from_height_m2"),
      number_column("scale_min"), number_column("scale_max"), number_column("areal_scale_min"),
      number_column("areal_scale_max"), number_column("angular_distortion_max_deg"),
      number_column("convergence_min_deg"), number_column("convergence_max_deg"),
      number_column("bearing_error_max_arcsec"), text_column("verdict")};
  static const std::vector<ResultColumn> with_factor = [] {
    std::vector<ResultColumn> c = base;
    c.push_back(number_column("combined_factor"));
    return c;
  }();
  // The bound of each reported figure (Budget::*_bound), after every other column.
  static constexpr ResultColumn bound_columns[] = {
      number_column("true_length_bound_m"), number_column("grid_length_bound_m"),
      number_column("length_error_bound_m"), number_column("length_from_edges_bound_m"),
      number_column("length_from_scale_bound_m"), number_column("length_from_datum_bound_m"),
      number_column("length_from_height_bound_m"), number_column("true_area_bound_m2"),
      number_column("grid_area_bound_m2"), number_column("area_error_bound_m2"),
      number_column("area_from_edges_bound_m2"), number_column("area_from_scale_bound_m2"),
      number_column("area_from_datum_bound_m2"), number_column("area_from_height_bound_m2")};
  auto with_bounds = [](std::vector<ResultColumn> c) {
    c.insert(c.end(), std::begin(bound_columns), std::end(bound_columns));
    return c;
  };
  static const std::vector<ResultColumn> base_bounds = with_bounds(base), factor_bounds = with_bounds(with_factor);
  if (bounds) return combined_factor ? factor_bounds : base_bounds;
  return combined_factor ? with_factor : base;
}

namespace {

/// csv_field(text) appended to `line`.
void append_csv_field(std::string& line, std::string_view text) {
  if (text.find_first_of(",\"\r\n") == std::string_view::npos && !detail::spreadsheet_formula_start(text))
    line.append(text);
  else line += csv_field(text);
}

/// Appends the 8 cells of a budget (empty when absent), each with the bound of its computation.
void add_budget(ResultRow& row, const std::optional<Budget>& b) {
  if (!b) {
    for (int k = 0; k < 8; ++k) row.cells[row.size++].number = NAN;
    return;
  }
  const double ppm_bound = b->reference != 0 ? 1e6 * b->error_computation_bound / std::fabs(b->reference) : NAN;
  const std::pair<double, double> cells[8] = {
      {b->reference, b->reference_bound},   {b->grid, b->grid_bound},
      {b->error, b->error_computation_bound}, {b->error_ppm, ppm_bound},
      {b->from_edges, b->from_edges_bound}, {b->from_scale, b->from_scale_bound},
      {b->from_datum, b->from_datum_computation_bound}, {b->from_height, b->from_height_bound}};
  for (const auto& [value, bound] : cells) {
    ResultCell& cell = row.cells[row.size++];
    cell.number = value;
    cell.bound = bound;
  }
}

/// Appends the 7 bound cells of a budget (empty when absent).
void add_budget_bounds(ResultRow& row, const std::optional<Budget>& b) {
  const double values[7] = {b ? b->reference_bound : NAN,  b ? b->grid_bound : NAN,
                            b ? b->error_bound : NAN,      b ? b->from_edges_bound : NAN,
                            b ? b->from_scale_bound : NAN, b ? b->from_datum_bound : NAN,
                            b ? b->from_height_bound : NAN};
  for (const double v : values) {
    ResultCell& cell = row.cells[row.size++];
    cell.number = v;
    cell.is_bound = true;
  }
}

}  // namespace

ResultRow result_row(std::string_view id, const AuditResult& r, bool combined_factor, bool bounds) {
  ResultRow row;
  row.cells[row.size++].text = id;
  row.cells[row.size++].text = to_string(r.type);
  row.cells[row.size++].text = to_string(r.status);
  row.cells[row.size++].text = r.message;
  row.cells[row.size++].number = static_cast<double>(r.vertices);
  add_budget(row, r.length);
  add_budget(row, r.area);
  const Distortion* d = r.distortion ? &*r.distortion : nullptr;
  const double distortion[7] = {
      d ? d->scale_min : NAN,       d ? d->scale_max : NAN,           d ? d->areal_scale_min : NAN,
      d ? d->areal_scale_max : NAN, d ? d->angular_distortion_max_deg : NAN, d ? d->convergence_min_deg : NAN,
      d ? d->convergence_max_deg : NAN};
  // Their bounds for the rounding: the scale factors to 1e-8 relative and ω to 1.2e-7° (the numerically
  // differentiated Tissot axes, each good to about 1e-9 relative, audit.hpp; tested at 1e-8 and 1.2e-7° in
  // tests/reference_projection_test.cpp). The convergence's accuracy is not stated: written in full.
  for (std::size_t k = 0; k < 7; ++k) {
    ResultCell& cell = row.cells[row.size++];
    cell.number = distortion[k];
    if (k < 4) cell.bound = 1e-8 * std::fabs(distortion[k]);
    else if (k == 4) cell.bound = 1.2e-7;
  }
  row.cells[row.size++].number = r.bearing_error_max_arcsec ? *r.bearing_error_max_arcsec : NAN;
  row.cells[row.size++].text = to_string(r.verdict);
  if (combined_factor) row.cells[row.size++].number = r.combined_factor ? *r.combined_factor : NAN;
  if (bounds) {
    add_budget_bounds(row, r.length);
    add_budget_bounds(row, r.area);
  }
  return row;
}

ResultRow unread_row(std::string_view id, std::string_view message, std::optional<GeometryType> type,
                     bool combined_factor, bool bounds) {
  ResultRow row;
  const auto& columns = result_columns(combined_factor, bounds);
  row.size = columns.size();
  for (std::size_t k = 0; k < row.size; ++k) {
    if (columns[k].kind != ColumnKind::text) row.cells[k].number = NAN;
  }
  row.cells[0].text = id;
  if (type) row.cells[1].text = to_string(*type);
  row.cells[2].text = to_string(Status::invalid);
  row.cells[3].text = message;
  return row;
}

const std::vector<std::string>& ResultCsvWriter::columns() {
  static const std::vector<std::string> names = [] {
    std::vector<std::string> n;
    for (const ResultColumn& c : result_columns()) n.emplace_back(c.name);
    return n;
  }();
  return names;
}

void ResultCsvWriter::write_header() {
  const auto& columns = result_columns(combined_factor_, bounds_);
  for (std::size_t k = 0; k < columns.size(); ++k) {
    if (k) *out_ << ',';
    *out_ << columns[k].name;
  }
  for (const std::string& name : extra_columns_) *out_ << ',' << csv_field(name);
  *out_ << line_ending_;
}

namespace {

/// Writes one row as a CSV line: the table's cells (`columns` say their kinds), then the extra cells. `line` is the
/// writer's buffer: one line built in one buffer (numbers appended in place), kept between rows, so a row costs well
/// under 1 µs.
void write_cells(std::ostream& out, std::string& line, const ResultRow& row, const std::vector<ResultColumn>& columns,
                 bool all_digits, std::size_t extra_columns, const std::vector<std::string>& extra_cells,
                 const std::string& line_ending) {
  line.clear();
  for (std::size_t k = 0; k < row.size; ++k) {
    if (k) line += ',';
    const ResultCell& cell = row.cells[k];
    switch (columns[k].kind) {
      case ColumnKind::text:
        append_csv_field(line, cell.text);
        break;
      case ColumnKind::count:
        if (std::isfinite(cell.number)) {
          char digits[24];
          line.append(digits,
                      std::to_chars(digits, digits + sizeof digits, static_cast<unsigned long long>(cell.number)).ptr);
        }
        break;
      case ColumnKind::number:
        if (all_digits) detail::append_number(line, cell.number);
        else if (cell.is_bound) detail::append_bound(line, cell.number);
        else detail::append_number(line, cell.number, cell.bound);
        break;
    }
  }
  for (std::size_t k = 0; k < extra_columns; ++k) {
    line += ',';
    if (k < extra_cells.size()) append_csv_field(line, extra_cells[k]);
  }
  line += line_ending;
  out.write(line.data(), static_cast<std::streamsize>(line.size()));
}

}  // namespace

void ResultCsvWriter::write_row(std::string_view id, const AuditResult& r) {
  write_cells(*out_, line_, result_row(id, r, combined_factor_, bounds_), result_columns(combined_factor_, bounds_),
              all_digits_, extra_columns_.size(), extra_cells_, line_ending_);
}

void ResultCsvWriter::write_unread_row(std::string_view id, std::string_view message,
                                       std::optional<GeometryType> type) {
  write_cells(*out_, line_, unread_row(id, message, type, combined_factor_, bounds_),
              result_columns(combined_factor_, bounds_), all_digits_, extra_columns_.size(), extra_cells_,
              line_ending_);
}

namespace {
constexpr std::array<detail::EnumName<ColumnKind>, 3> kColumnKindNames = {
    {{ColumnKind::text, "text"},
     {ColumnKind::count, "count"},
     {ColumnKind::number, "number"}}};
}  // namespace

std::string_view to_string(ColumnKind kind) noexcept {
  return detail::name_of(kColumnKindNames, kind);
}

}  // namespace gridtruth
