// gridtruth — CSV (RFC 4180) reader for features with a WKT geometry column.
//
// The first record is the header. Records end with CRLF or LF; fields in double quotes may hold commas, line
// breaks and doubled quotes (RFC 4180 section 2.5-2.7). A record whose field count differs from the header's, a
// quote left open at the end of the input or an unparseable WKT value gives an invalid feature; the header
// itself must name the geometry column.
#include <cctype>
#include <cmath>
#include <cstdlib>
#include <string>
#include <vector>

#include <nlohmann/json.hpp>

#include "gridtruth/error.hpp"
#include "gridtruth/io.hpp"
#include "io_detail.hpp"

namespace gridtruth {
namespace detail {
namespace {

std::string lower(std::string_view s) {
  std::string out(s);
  for (auto& c : out) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  return out;
}

std::string trim(std::string_view s) {
  std::size_t b = 0, e = s.size();
  while (b < e && std::isspace(static_cast<unsigned char>(s[b]))) ++b;
  while (e > b && std::isspace(static_cast<unsigned char>(s[e - 1]))) --e;
  return std::string(s.substr(b, e - b));
}

}  // namespace

bool read_csv_record(Source& src, CsvRecord& r) {
  r.fields.clear();
  r.error.clear();
  r.damaged = false;
  r.line = src.line();
  r.first_byte = src.offset();
  if (src.peek() < 0) return false;
  std::string field;
  for (;;) {
    int c = src.peek();
    if (c == '"') {  // a quoted field
      const std::size_t opened = src.line();
      std::string raw;  // the bytes after the opening quote, as they are in the input
      src.get();
      bool closed = false;
      for (;;) {
        c = src.get();
        if (c < 0) break;
        raw.push_back(static_cast<char>(c));
        if (c == '"') {
          if (src.peek() == '"') {
            raw.push_back(static_cast<char>(src.get()));
            field.push_back('"');
            continue;
          }
          closed = true;
          break;
        }
        field.push_back(static_cast<char>(c));
      }
      c = src.peek();
      const bool text_after = closed && c >= 0 && c != ',' && c != '\r' && c != '\n';
      const std::size_t newline = raw.find('\n');
      const bool more_lines = newline != std::string::npos &&
                              raw.find_first_not_of(" \t\r\n", newline + 1) != std::string::npos;
      if ((!closed || text_after) && more_lines) {
        // A quote that never closes, or closes with text after it, across a line break: most likely a quote is
        // missing where this one opens, and the quotes of the later records pair up wrongly. The record ends at
        // the end of the quote's first line; the bytes after it are read again as the next records.
        src.unread(std::string_view(raw).substr(newline + 1));
        field.clear();
        for (std::size_t k = 0; k < newline; ++k) {
          if (raw[k] == '"' && k + 1 < newline && raw[k + 1] == '"') ++k;
          if (raw[k] != '\r' || k + 1 != newline) field.push_back(raw[k]);
        }
        if (r.error.empty())
          r.error = "a quote opened on line " + std::to_string(opened) + " is not closed on that line and " +
                    (closed ? "its closing quote is followed by text" : "never closes") +
                    " (unterminated quote, RFC 4180 section 2.7): the record was ended at the end of line " + std::to_string(opened) +
                    " and reading resumed on line " + std::to_string(src.line());
        r.damaged = true;
        r.fields.push_back(std::move(field));
        return true;
      }
      if (!closed) {
        r.error = "the input ends inside a quoted field opened on line " + std::to_string(opened) +
                  " (unterminated quote, RFC 4180 section 2.7)";
        r.damaged = true;
        r.fields.push_back(std::move(field));
        return true;
      }
      if (text_after) {
        if (r.error.empty())
          r.error = "text after the closing quote of field " + std::to_string(r.fields.size() + 1) +
                    " (RFC 4180 section 2.7)";
        while ((c = src.peek()) >= 0 && c != ',' && c != '\r' && c != '\n') field.push_back(static_cast<char>(src.get()));
      }
    } else {
      while ((c = src.peek()) >= 0 && c != ',' && c != '\r' && c != '\n') field.push_back(static_cast<char>(src.get()));
    }
    r.fields.push_back(std::move(field));
    field.clear();
    c = src.get();
    if (c == ',') continue;
    if (c == '\r' && src.peek() == '\n') src.get();
    return true;  // end of line or of input
  }
}

namespace {

class CsvReader final : public FormatReader {
 public:
  CsvReader(Source& src, const ReaderOptions& options) : src_(src), options_(options), problems_(problems) {}

  std::optional<CutFeature> next_raw() override {
    std::optional<InputFeature> f = read();
    if (!f) return std::nullopt;
    CutFeature raw;
    raw.line = f->line;
    raw.read = std::move(f);
    return raw;
  }

 private:
  std::optional<InputFeature> read() {
    if (!header_read_) read_header();
    CsvRecord r;
    for (;;) {
      if (!read_csv_record(src_, r)) return std::nullopt;
      if (r.fields.size() == 1 && r.fields[0].empty() && r.error.empty()) continue;  // a blank line
      break;
    }
    InputFeature f;
    f.line = r.line;
    if (id_column_ && *id_column_ < r.fields.size()) f.id = r.fields[*id_column_];
    if (!r.error.empty()) {
      f.error = "line " + std::to_string(r.line) + ": " + r.error;
      if (r.damaged) {  // a quote open to the end of its line or of the input
        InputProblem p;
        p.first_byte = r.first_byte;
        p.end_byte = src_.offset();
        p.line = r.line;
        p.position = FormatReader::row_pending;
        p.message = f.error + " (bytes " + std::to_string(p.first_byte) + " to " + std::to_string(p.end_byte) +
                    " skipped)";
        f.error = p.message;
        problems_.push_back(std::move(p));
      }
      return f;
    }
    if (r.fields.size() != columns_) {
      f.error = "line " + std::to_string(r.line) + ": the record has " + std::to_string(r.fields.size()) +
                " fields where the header has " + std::to_string(columns_) +
                " (a value holding commas must be in double quotes, RFC 4180 section 2.6)";
      return f;
    }
    // The record's other columns, kept also when its geometry or height is unusable (the invalid row keeps them).
    nlohmann::ordered_json properties = nlohmann::ordered_json::object();
    for (std::size_t k = 0; k < header_.size() && k < r.fields.size(); ++k) {
      if (k != wkt_column_) properties[header_[k]] = r.fields[k];
    }
    f.properties_json = properties.dump(-1, ' ', false, nlohmann::ordered_json::error_handler_t::replace);
    const std::string& wkt = r.fields[wkt_column_];
    if (trim(wkt).empty()) {
      f.error = "line " + std::to_string(r.line) + ": empty geometry cell";
      return f;
    }
    Geometry g;
    std::string error;
    ZTally z;
    if (!parse_wkt(wkt, g, f.declared_type, error, options_.height_from_z ? &z : nullptr)) {
      f.error = "line " + std::to_string(r.line) + ": " + error;
      return f;
    }
    if (options_.height_from_z) {
      f.height_m = height_from_tally(z, error);
      if (!f.height_m) {
        f.error = "line " + std::to_string(r.line) + ": " + error;
        return f;
      }
    }
    if (height_column_) {
      const std::string cell = trim(r.fields[*height_column_]);
      char* end = nullptr;
      const double h = cell.empty() ? NAN : std::strtod(cell.c_str(), &end);
      if (cell.empty() || end != cell.c_str() + cell.size() || !std::isfinite(h)) {
        f.error = "line " + std::to_string(r.line) + ": height column \"" + options_.height_field + "\" holds \"" +
                  cell + "\", not a finite number of metres";
        return f;
      }
      f.height_m = h;
    }
    f.geometry = std::move(g);
    return f;
  }

  void read_header() {
    header_read_ = true;
    src_.skip_bom();
    CsvRecord h;
    if (!read_csv_record(src_, h))
      throw Error(ErrorCode::parse, "CSV: the input is empty (a header line naming the columns is needed)");
    if (!h.error.empty()) throw Error(ErrorCode::parse, "CSV header (line 1): " + h.error);
    columns_ = h.fields.size();
    header_ = h.fields;
    const std::string want = lower(trim(options_.wkt_field));
    const std::string want_id = lower(trim(options_.id_field));
    const std::string want_height = lower(trim(options_.height_field));
    std::optional<std::size_t> wkt;
    std::string names;
    for (std::size_t k = 0; k < h.fields.size(); ++k) {
      const std::string name = lower(trim(h.fields[k]));
      if (!wkt && name == want) wkt = k;
      if (!id_column_ && !want_id.empty() && name == want_id) id_column_ = k;
      if (!height_column_ && !want_height.empty() && name == want_height) height_column_ = k;
      if (k) names += ", ";
      names += h.fields[k];
    }
    if (!wkt)
      throw Error(ErrorCode::parse, "CSV header (line 1) has no geometry column \"" + options_.wkt_field +
                                        "\" (columns: " + names + ")");
    if (!want_id.empty() && !id_column_)
      throw Error(ErrorCode::invalid_argument, "CSV header (line 1) has no id column \"" + options_.id_field +
                                                   "\" (columns: " + names + ")");
    if (!want_height.empty() && !height_column_)
      throw Error(ErrorCode::invalid_argument, "CSV header (line 1) has no height column \"" +
                                                   options_.height_field + "\" (columns: " + names + ")");
    wkt_column_ = *wkt;
  }

  Source& src_;
  const ReaderOptions& options_;
  std::vector<InputProblem>& problems_;
  bool header_read_ = false;
  std::size_t columns_ = 0;
  std::size_t wkt_column_ = 0;
  std::optional<std::size_t> id_column_;
  std::optional<std::size_t> height_column_;
  std::vector<std::string> header_;
};

}  // namespace

std::unique_ptr<FormatReader> make_csv_reader(Source& source, const ReaderOptions& options) {
  return std::make_unique<CsvReader>(source, options);
}

}  // namespace detail
}  // namespace gridtruth
