// gridtruth — the feature reader facade: opening, format sniffing, numbering.
#include <sys/stat.h>
#include <unistd.h>

#include <cctype>
#include <cerrno>
#include <charconv>
#include <algorithm>
#include <cmath>
#include <cstring>
#include <fstream>
#include <istream>
#include <sstream>
#include <streambuf>
#include <utility>
#include <vector>

#include <sys/stat.h>
#include <unistd.h>

#include "gridtruth/error.hpp"
#include "gridtruth/io.hpp"
#include "io_detail.hpp"

namespace gridtruth {
namespace detail {

namespace {
constexpr std::size_t chunk_bytes = 1 << 16;
}

bool is_json_space(int c) noexcept { return c == ' ' || c == '\t' || c == '\n' || c == '\r'; }

bool Source::fill() {
  if (at_end_) return false;
  if (pos_ == buf_.size()) {
    buf_.clear();
    pos_ = 0;
  }
  const std::size_t old = buf_.size();
  buf_.resize(old + chunk_bytes);
  in_->read(buf_.data() + old, static_cast<std::streamsize>(chunk_bytes));
  const auto got = static_cast<std::size_t>(in_->gcount());
  buf_.resize(old + got);
  if (got == 0 && in_->bad()) {
    const int error = errno;
    at_end_ = true;
    throw Error(ErrorCode::io, std::string("cannot read the input: ") +
                                   (error != 0 ? std::strerror(error) : "the stream reports a read error"));
  }
  if (got == 0) {
    at_end_ = true;
    return false;
  }
  return true;
}

std::string_view Source::look_ahead(std::size_t n) {
  if (pos_ > 0 && buf_.size() - pos_ < n) {  // compact so that the look-ahead is contiguous
    buf_.erase(0, pos_);
    pos_ = 0;
  }
  while (buf_.size() - pos_ < n && fill()) {
  }
  return std::string_view(buf_).substr(pos_, std::min(n, buf_.size() - pos_));
}

void Source::skip_bom() {
  if (look_ahead(3) == "\xEF\xBB\xBF") {
    pos_ += 3;
    offset_ += 3;
  }
}

}  // namespace detail

std::string_view to_string(InputFormat format) noexcept {
  switch (format) {
    case InputFormat::automatic: return "auto";
    case InputFormat::geojson: return "geojson";
    case InputFormat::ndjson: return "ndjson";
    case InputFormat::csv: return "csv";
    case InputFormat::gdal: return "gdal";
  }
  return "auto";
}

InputFormat parse_input_format(std::string_view name) {
  std::string lower(name);
  for (auto& c : lower) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  if (lower == "auto") return InputFormat::automatic;
  if (lower == "geojson" || lower == "json") return InputFormat::geojson;
  if (lower == "ndjson" || lower == "geojsonseq" || lower == "geojsonl" || lower == "jsonl")
    return InputFormat::ndjson;
  if (lower == "csv") return InputFormat::csv;
  if (lower == "gdal" || lower == "ogr") return InputFormat::gdal;
  throw Error(ErrorCode::invalid_argument,
              "unknown input format \"" + std::string(name) + "\" (expected auto, geojson, ndjson, csv or gdal)");
}

InputFormat sniff_format(std::string_view head) noexcept {
  if (head.substr(0, 3) == "\xEF\xBB\xBF") head.remove_prefix(3);
  std::size_t i = 0;
  while (i < head.size() && detail::is_json_space(static_cast<unsigned char>(head[i]))) ++i;
  if (i == head.size()) return InputFormat::geojson;  // empty or blank: the JSON reader reports it
  if (head[i] == '\x1E') return InputFormat::ndjson;
  if (head[i] == '[') return InputFormat::geojson;
  if (head[i] != '{') return InputFormat::csv;
  // Find the end of the first JSON object (lexically), then see whether another object starts on a later line.
  int depth = 0;
  bool in_string = false;
  for (; i < head.size(); ++i) {
    const char c = head[i];
    if (in_string) {
      if (c == '\\') ++i;
      else if (c == '"') in_string = false;
      continue;
    }
    if (c == '"') in_string = true;
    else if (c == '{' || c == '[') ++depth;
    else if (c == '}' || c == ']') {
      if (--depth == 0) break;
    }
  }
  if (i >= head.size()) return InputFormat::geojson;  // one object longer than the look-ahead
  bool newline = false;
  for (++i; i < head.size(); ++i) {
    const char c = head[i];
    if (c == '\n') newline = true;
    else if (c == '\x1E') return InputFormat::ndjson;
    else if (!detail::is_json_space(static_cast<unsigned char>(c))) return (c == '{' && newline) ? InputFormat::ndjson
                                                                                                 : InputFormat::geojson;
  }
  return InputFormat::geojson;
}

namespace {

/// Standard input read straight from file descriptor 0, never through std::cin: std::cin is tied to std::cout, so
/// every read of it flushes std::cout, and run_audit reads on a pipeline thread while the caller's sink writes
/// std::cout on another one -- a data race that duplicated, tore and lost rows of `gridtruth audit -` (issue 17).
class StdinBuffer final : public std::streambuf {
 public:
  StdinBuffer() : buffer_(1 << 16) {}

 protected:
  int_type underflow() override {
    if (gptr() < egptr()) return traits_type::to_int_type(*gptr());
    ssize_t got;
    do {
      got = ::read(STDIN_FILENO, buffer_.data(), buffer_.size());
    } while (got < 0 && errno == EINTR);
    if (got <= 0) return traits_type::eof();  // end of input, or an error (the reader reports what it got)
    setg(buffer_.data(), buffer_.data(), buffer_.data() + got);
    return traits_type::to_int_type(*gptr());
  }

 private:
  std::vector<char> buffer_;
};

struct StdinStream final : std::istream {
  StdinStream() : std::istream(nullptr) { rdbuf(&buffer); }
  StdinBuffer buffer;
};

}  // namespace

struct FeatureReader::Impl {
  std::unique_ptr<std::istream> file;
  detail::Source source;
  ReaderOptions options;
  InputFormat format = InputFormat::automatic;
  std::unique_ptr<detail::FormatReader> reader;
  std::size_t count = 0;
  bool done = false;

  Impl(std::istream& in, ReaderOptions o, std::unique_ptr<std::istream> f = nullptr)
      : file(std::move(f)), source(in), options(std::move(o)) {
    if (options.height_from_z && !options.height_field.empty())
      throw Error(ErrorCode::invalid_argument, "a feature's height comes either from the field \"" +
                                                   options.height_field + "\" or from its Z coordinates, not both");
  }
  /// Sniffs the format and makes its reader, once.
  void open_reader();
  /// The next feature cut by the format's reader, numbered (`position`), or nothing at the end.
  std::optional<std::pair<std::size_t, detail::CutFeature>> next_cut();
  /// The InputFeature of a cut feature at `position` (FeatureReader::parse()).
  InputFeature parse(detail::CutFeature& cut, std::size_t position) const;
};

RawFeature::RawFeature(std::size_t position, std::unique_ptr<detail::CutFeature> cut) noexcept
    : position_(position), cut_(std::move(cut)) {}
RawFeature::~RawFeature() = default;
RawFeature::RawFeature(RawFeature&&) noexcept = default;
RawFeature& RawFeature::operator=(RawFeature&&) noexcept = default;
std::size_t RawFeature::line() const noexcept { return cut_ ? cut_->line : 0; }

const detail::CutFeature& detail::cut_of(const RawFeature& raw) noexcept { return *raw.cut_; }

FeatureReader::FeatureReader(std::istream& in, ReaderOptions options)
    : impl_(std::make_unique<Impl>(in, std::move(options))) {
  in.tie(nullptr);  // a tied stream would be flushed from the reading thread (see StdinBuffer)
}

namespace {
std::unique_ptr<std::ifstream> open_file(const std::string& path) {
  struct stat st {};
  if (::stat(path.c_str(), &st) == 0 && S_ISDIR(st.st_mode))
    throw Error(ErrorCode::io, "cannot read " + detail::printable_text(path) + ": it is a directory, not a file");
  auto file = std::make_unique<std::ifstream>(path, std::ios::binary);
  if (!*file) throw Error(ErrorCode::io, "cannot open " + detail::printable_text(path) + ": " + std::strerror(errno));
  return file;
}
}  // namespace

namespace detail {

std::string ogr_source_kind(const std::string& path, InputFormat format) {
  if (path == "-" || format == InputFormat::geojson || format == InputFormat::ndjson || format == InputFormat::csv)
    return {};
  if (format == InputFormat::gdal) return "GDAL data source";
  struct stat st {};
  if (::stat(path.c_str(), &st) != 0) {
    // Not a file: a GDAL data source name ("/vsizip/a.zip/b.shp", "PG:dbname=...") goes to GDAL, anything else
    // to the native reader, which says the file cannot be opened.
    if (path.rfind("/vsi", 0) == 0 || (path.find(':') != std::string::npos && path.find(':') > 1))
      return "GDAL data source name";
    return {};
  }
  if (S_ISDIR(st.st_mode)) return "directory (e.g. an OpenFileGDB .gdb or a folder of shapefiles)";
  char head[16] = {};
  std::size_t got = 0;
  if (std::ifstream in(path, std::ios::binary); in) {
    in.read(head, sizeof head);
    got = static_cast<std::size_t>(in.gcount());
  }
  const std::string_view bytes(head, got);
  // The SQLite file header string (sqlite.org/fileformat.html, section 1.3); a GeoPackage is an SQLite file.
  if (bytes.substr(0, 16) == std::string_view("SQLite format 3\0", 16)) return "GeoPackage or SQLite";
  // File code 9994, big-endian (ESRI Shapefile Technical Description, July 1998, table 1).
  if (bytes.substr(0, 4) == std::string_view("\0\0\x27\x0A", 4)) return "Shapefile";
  if (bytes.substr(0, 3) == "fgb") return "FlatGeobuf";
  if (bytes.substr(0, 4) == "PK\x03\x04") return "ZIP archive (e.g. KMZ)";
  std::string ext;
  if (const auto dot = path.rfind('.'); dot != std::string::npos && path.find('/', dot) == std::string::npos)
    ext = path.substr(dot + 1);
  for (auto& c : ext) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  for (const char* known : {"shp", "dbf", "gpkg", "sqlite", "fgb", "gml", "kml", "kmz", "gpx", "gdb", "tab", "mif",
                            "dxf", "xlsx", "ods", "parquet", "arrow", "osm", "pbf", "svg", "gmt", "vrt"})
    if (ext == known) return ext + " file";
  std::size_t i = bytes.substr(0, 3) == "\xEF\xBB\xBF" ? 3 : 0;
  while (i < bytes.size() && is_json_space(static_cast<unsigned char>(bytes[i]))) ++i;
  if (i < bytes.size() && bytes[i] == '<') return "XML document (GML, KML, GPX, ...)";
  return {};
}


}  // namespace detail

FeatureReader::FeatureReader(const std::string& path, ReaderOptions options) {
  if (const std::string kind = detail::ogr_source_kind(path, options.format); !kind.empty()) {
#ifdef GRIDTRUTH_WITH_GDAL
    auto none = std::make_unique<std::istringstream>();
    std::istream& stream = *none;
    impl_ = std::make_unique<Impl>(stream, std::move(options), std::move(none));
    impl_->reader = detail::make_ogr_reader(path, impl_->options);
    impl_->format = InputFormat::gdal;
    return;
#else
    throw Error(ErrorCode::io, path + " looks like a " + kind +
                                   ", which this build of gridtruth reads only through GDAL: install Debian's "
                                   "libgdal-dev and configure again (GRIDTRUTH_WITH_GDAL)");
#endif
  }
  if (path == "-") {
    struct stat st {};
    if (::fstat(STDIN_FILENO, &st) != 0)
      throw Error(ErrorCode::io, "cannot read standard input: it is closed (" + std::string(std::strerror(errno)) +
                                     ")");
    if (S_ISDIR(st.st_mode)) throw Error(ErrorCode::io, "cannot read standard input: it is a directory");
    auto in = std::make_unique<StdinStream>();
    std::istream& stream = *in;
    impl_ = std::make_unique<Impl>(stream, std::move(options), std::move(in));
  } else {
    auto file = open_file(path);
    std::istream& in = *file;
    impl_ = std::make_unique<Impl>(in, std::move(options), std::move(file));
  }
}

FeatureReader::~FeatureReader() = default;
FeatureReader::FeatureReader(FeatureReader&&) noexcept = default;
FeatureReader& FeatureReader::operator=(FeatureReader&&) noexcept = default;

void FeatureReader::Impl::open_reader() {
  if (reader) return;
  format = options.format;
  if (format == InputFormat::automatic) format = sniff_format(source.look_ahead(1 << 16));
  switch (format) {
    case InputFormat::ndjson: reader = detail::make_ndjson_reader(source, options); break;
    case InputFormat::csv: reader = detail::make_csv_reader(source, options); break;
    default: reader = detail::make_geojson_reader(source, options); break;
  }
}

std::string FeatureReader::declared_crs() {
  impl_->open_reader();
  return impl_->reader->declared_crs();
}

std::optional<std::pair<std::size_t, detail::CutFeature>> FeatureReader::Impl::next_cut() {
  if (done) return std::nullopt;
  open_reader();
  std::optional<detail::CutFeature> cut;
  try {
    cut = reader->next_raw();
  } catch (const Error& e) {
    done = true;
    throw Error(e.code(), detail::printable_text(e.what()));
  } catch (...) {
    done = true;
    throw;
  }
  if (!cut) {
    done = true;
    return std::nullopt;
  }
  const std::size_t position = ++count;
  auto& problems = reader->problems;
  if (!problems.empty() && problems.back().position == detail::FormatReader::row_pending)
    problems.back().position = position;
  return std::make_pair(position, std::move(*cut));
}

std::optional<RawFeature> FeatureReader::next_raw() {
  auto cut = impl_->next_cut();
  if (!cut) return std::nullopt;
  return RawFeature(cut->first, std::make_unique<detail::CutFeature>(std::move(cut->second)));
}

InputFeature FeatureReader::parse(RawFeature raw) const {
  if (!raw.cut_) throw Error(ErrorCode::invalid_argument, "FeatureReader::parse: a moved-from RawFeature");
  return impl_->parse(*raw.cut_, raw.position_);
}

InputFeature FeatureReader::Impl::parse(detail::CutFeature& cut, std::size_t position) const {
  InputFeature feature;
  if (cut.read) {
    feature = std::move(*cut.read);
  } else {
    feature.line = cut.line;
    detail::parse_json_feature(cut, options, feature);
  }
  feature.position = position;
  if (feature.id.empty()) feature.id = std::to_string(feature.position);
  feature.error = detail::printable_text(feature.error);
  if (!feature.geometry && feature.error.empty()) feature.error = "no geometry";
  if (feature.geometry && feature.geometry->vertex_count() == 0) {  // WKT EMPTY, GeoJSON "coordinates": []
    feature.error = "empty geometry: " + std::string(to_string(feature.geometry->type)) + " with no coordinates";
    feature.declared_type = feature.geometry->type;
    feature.geometry.reset();
  }
  return feature;
}

std::optional<InputFeature> FeatureReader::next() {
  auto cut = impl_->next_cut();  // no RawFeature (and its allocation) on the serial path
  if (!cut) return std::nullopt;
  return impl_->parse(cut->second, cut->first);
}

namespace detail {

void append_number(std::string& out, double value) {
  if (!std::isfinite(value)) return;
  if (value == 0) {  // also for -0: a signed zero means nothing here
    out += '0';
    return;
  }
  char buf[64];
  // Without a precision, to_chars writes the shortest text that reads back to the same double; plain decimals
  // in the range where they stay short enough to read.
  const double magnitude = std::fabs(value);
  const auto format = (magnitude >= 1e-5 && magnitude < 1e15) ? std::chars_format::fixed : std::chars_format::general;
  const auto [end, ec] = std::to_chars(buf, buf + sizeof buf, value, format);
  if (ec != std::errc()) return;
  out.append(buf, end);
}

void append_number(std::string& out, double value, double bound) {
  if (!std::isfinite(value)) return;
  if (!(bound > 0) || !std::isfinite(bound)) return append_number(out, value);
  // A tenth of the bound's leading digit, never coarser than units.
  const int decimals = std::max(0, 1 - static_cast<int>(std::floor(std::log10(bound))));
  const double magnitude = std::fabs(value);
  const int whole_digits = magnitude >= 1 ? static_cast<int>(std::floor(std::log10(magnitude))) + 1 : 0;
  if (whole_digits + decimals > 17 || magnitude >= 1e15) return append_number(out, value);
  char buf[64];
  const auto [end, ec] = std::to_chars(buf, buf + sizeof buf, value, std::chars_format::fixed, decimals);
  if (ec != std::errc()) return append_number(out, value);
  std::string_view text(buf, static_cast<std::size_t>(end - buf));
  if (text.find('.') != std::string_view::npos) {
    while (text.back() == '0') text.remove_suffix(1);
    if (text.back() == '.') text.remove_suffix(1);
  }
  if (text == "-0") text = "0";
  out.append(text);
}

void append_bound(std::string& out, double bound) {
  if (!std::isfinite(bound)) return;
  if (bound <= 0) {
    out += '0';
    return;
  }
  const int e = static_cast<int>(std::floor(std::log10(bound)));
  // Two significant digits, rounded up: the printed decimal is never below the bound.
  double scaled = std::ceil(bound / std::pow(10.0, e - 1) * (1 - 4e-16));
  int exponent = e - 1;
  if (scaled * std::pow(10.0, exponent) < bound) scaled += 1;  // the division rounded down
  if (scaled >= 100) scaled = std::ceil(scaled / 10), exponent += 1;
  char buf[64];
  const double value = scaled * std::pow(10.0, exponent);
  const bool plain = value >= 1e-5 && value < 1e15;
  const auto [end, ec] = plain ? std::to_chars(buf, buf + sizeof buf, value, std::chars_format::fixed,
                                               std::max(0, -exponent))
                               : std::to_chars(buf, buf + sizeof buf, value, std::chars_format::scientific, 1);
  if (ec == std::errc()) out.append(buf, end);
}

}  // namespace detail

std::string format_number(double value) {
  std::string text;
  detail::append_number(text, value);
  return text;
}

std::string format_number(double value, double bound) {
  std::string text;
  detail::append_number(text, value, bound);
  return text;
}

std::string format_bound(double bound) {
  std::string text;
  detail::append_bound(text, bound);
  return text;
}

namespace detail {

std::string printable_text(std::string_view text) {
  std::string out;
  out.reserve(text.size());
  const auto* p = reinterpret_cast<const unsigned char*>(text.data());
  const std::size_t n = text.size();
  auto escape = [&out](unsigned char c) {
    static const char digits[] = "0123456789ABCDEF";
    out += "\\x";
    out += digits[c >> 4];
    out += digits[c & 15];
  };
  for (std::size_t i = 0; i < n;) {
    const unsigned char c = p[i];
    if (c < 0x80) {
      if (c < 0x20 || c == 0x7F) escape(c);
      else out += static_cast<char>(c);
      ++i;
      continue;
    }
    // The length of a well-formed sequence starting here (RFC 3629 section 4), 0 when ill-formed.
    std::size_t len = 0;
    if (c >= 0xC2 && c <= 0xDF) len = 2;
    else if (c >= 0xE0 && c <= 0xEF) len = 3;
    else if (c >= 0xF0 && c <= 0xF4) len = 4;
    bool ok = len > 0 && i + len <= n;
    for (std::size_t k = 1; ok && k < len; ++k) ok = (p[i + k] & 0xC0) == 0x80;
    if (ok && len == 3) ok = !(c == 0xE0 && p[i + 1] < 0xA0) && !(c == 0xED && p[i + 1] > 0x9F);
    if (ok && len == 4) ok = !(c == 0xF0 && p[i + 1] < 0x90) && !(c == 0xF4 && p[i + 1] > 0x8F);
    if (!ok) {
      escape(c);
      ++i;
      continue;
    }
    out.append(text.data() + i, len);
    i += len;
  }
  return out;
}

bool spreadsheet_formula_start(std::string_view text) {
  if (text.empty()) return false;
  const char c = text.front();
  if (c != '=' && c != '+' && c != '-' && c != '@' && c != '\t' && c != '\r') return false;
  // A whole decimal number ("-12.5", "+3e2") stays a number: a spreadsheet reads it as one, never as a formula.
  if (c == '+' || c == '-') {
    double value = 0;
    const char* first = text.data() + 1;  // from_chars takes no '+'; the sign is checked here
    const char* last = text.data() + text.size();
    if (first < last && (*first == '.' || std::isdigit(static_cast<unsigned char>(*first)))) {
      const auto [end, ec] = std::from_chars(first, last, value);
      if (ec == std::errc() && end == last) return false;
    }
  }
  return true;
}

}  // namespace detail

std::string csv_field(std::string_view text) {
  const bool formula = detail::spreadsheet_formula_start(text);
  if (!formula && text.find_first_of(",\"\r\n") == std::string_view::npos) return std::string(text);
  std::string inner;
  if (formula) inner = "'";
  inner += text;
  if (inner.find_first_of(",\"\r\n") == std::string::npos) return inner;
  std::string out;
  out.reserve(inner.size() + 2);
  out.push_back('"');
  for (const char c : inner) {
    if (c == '"') out.push_back('"');
    out.push_back(c);
  }
  out.push_back('"');
  return out;
}

const std::vector<InputProblem>& FeatureReader::problems() const noexcept {
  static const std::vector<InputProblem> none;
  return impl_->reader ? impl_->reader->problems : none;
}

InputFormat FeatureReader::format() const noexcept { return impl_->format; }
std::uint64_t FeatureReader::bytes_read() const noexcept { return impl_->source.offset(); }

}  // namespace gridtruth
