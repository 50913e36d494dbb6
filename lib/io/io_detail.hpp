// gridtruth — internals shared by the readers (not installed).
#pragma once

#include <cstddef>
#include <cstdint>
#include <cstring>
#include <istream>
#include <memory>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "gridtruth/geometry.hpp"
#include "gridtruth/io.hpp"

namespace gridtruth::detail {

/// A byte source over an istream with look-ahead (for sniffing), a byte offset and a line counter.
class Source {
 public:
  explicit Source(std::istream& in) : in_(&in) {}

  /// Next byte (0..255) without consuming it, or -1 at the end.
  int peek() {
    if (pos_ == buf_.size() && !fill()) return -1;
    return static_cast<unsigned char>(buf_[pos_]);
  }
  /// Consumes and returns the next byte, or -1 at the end.
  int get() {
    if (pos_ == buf_.size() && !fill()) return -1;
    const auto c = static_cast<unsigned char>(buf_[pos_++]);
    ++offset_;
    if (c == '\n') ++line_;
    return c;
  }
  /// The buffered bytes from the next one on, refilled when none are left; empty only at the end of the input.
  /// Valid until the next call of any member. Scanning these and then consume() is the fast way through the input.
  std::string_view buffered() {
    if (pos_ == buf_.size() && !fill()) return {};
    return std::string_view(buf_).substr(pos_);
  }
  /// Consumes the next n bytes of buffered() (n ≤ its size), counting the line breaks in them.
  void consume(std::size_t n) {
    const char* p = buf_.data() + pos_;
    const char* const end = p + n;
    while ((p = static_cast<const char*>(std::memchr(p, '\n', static_cast<std::size_t>(end - p)))) != nullptr) {
      ++line_;
      ++p;
    }
    pos_ += n;
    offset_ += n;
  }
  /// Up to n bytes ahead without consuming them (fewer at the end of the input).
  std::string_view look_ahead(std::size_t n);
  /// Puts `text` back in front of the unread bytes, as if it had not been consumed (offset and line go back too):
  /// a reader that cut too far resumes inside what it cut.
  void unread(std::string_view text) {
    buf_.replace(0, pos_, text);
    pos_ = 0;
    offset_ -= text.size();
    for (const char c : text) line_ -= c == '\n';
  }
  /// Skips a UTF-8 byte order mark if the input starts with one.
  void skip_bom();

  /// Bytes consumed so far (0-based offset of the next byte).
  std::uint64_t offset() const noexcept { return offset_; }
  /// 1-based line of the next byte.
  std::size_t line() const noexcept { return line_; }

 private:
  bool fill();

  std::istream* in_;
  std::string buf_;
  std::size_t pos_ = 0;
  std::uint64_t offset_ = 0;
  std::size_t line_ = 1;
  bool at_end_ = false;
};

/// What a format's reader cuts out of the input for one feature (the payload of a RawFeature): either the feature's
/// JSON text, parsed later (maybe on another thread), or the feature already read.
struct CutFeature {
  std::size_t line = 0;      ///< line where the feature starts (0 when not tracked)
  std::string text;          ///< the feature's JSON text (GeoJSON, ndjson); empty when `read` holds the feature
  std::optional<std::uint64_t> byte;  ///< 0-based offset of `text` in the input; absent when the text was rebuilt
  bool line_in_messages = false;      ///< malformed-JSON messages start with "line N: " (ndjson)
  std::optional<InputFeature> read;   ///< the feature, already read (CSV records, a truncated last feature)
};

/// One format's reader. Implementations cut the next feature (CutFeature::text, or CutFeature::read for formats
/// parsed as they are cut); the facade numbers the features.
class FormatReader {
 public:
  virtual ~FormatReader() = default;
  virtual std::optional<CutFeature> next_raw() = 0;

  /// Spans skipped and damaged ends (FeatureReader::problems()). A reader that returns a feature standing for the
  /// span it just recorded sets `position` to row_pending; the facade puts the feature's position there.
  std::vector<InputProblem> problems;
  static constexpr std::size_t row_pending = static_cast<std::size_t>(-1);
  /// The CRS the input names for itself (see FeatureReader::declared_crs()); may read ahead (not past the first
  /// feature). Empty when it names none.
  virtual std::string declared_crs() { return {}; }
};

/// The text with every byte that is not part of valid UTF-8, and every control character, written as \xNN: safe
/// to put in a message, a CSV cell or a JSON string.
std::string printable_text(std::string_view text);

/// Whether a spreadsheet would take this text cell for a formula (see csv_field()).
bool spreadsheet_formula_start(std::string_view text);

/// Parses a JSON feature cut by the GeoJSON or ndjson reader into `f` (which holds the line already): simdjson
/// first, nlohmann-json where the exact nlohmann result needs it (malformed JSON, \u escapes, signed zeros).
/// Thread-safe. Fills everything but `position` (and `id` when the input gives none).
void parse_json_feature(const CutFeature& raw, const ReaderOptions& options, InputFeature& f);
/// The same with nlohmann-json only (the reference the fast path must agree with; for tests).
void parse_json_feature_reference(const CutFeature& raw, const ReaderOptions& options, InputFeature& f);

std::unique_ptr<FormatReader> make_geojson_reader(Source& source, const ReaderOptions& options);
std::unique_ptr<FormatReader> make_ndjson_reader(Source& source, const ReaderOptions& options);
std::unique_ptr<FormatReader> make_csv_reader(Source& source, const ReaderOptions& options);

/// One RFC 4180 record as read_csv_record() gives it.
struct CsvRecord {
  std::vector<std::string> fields;
  std::size_t line = 0;          ///< 1-based line where the record starts
  std::uint64_t first_byte = 0;  ///< 0-based offset of its first byte
  std::string error;             ///< a malformed record (still one record)
  bool damaged = false;          ///< an open quote was cut at the end of its line or of the input; `error` says so
};

/// Reads one RFC 4180 record (the one CSV reader: features, and the class counts of lib/cells/). Returns false at
/// the end of the input. A quote still open at the end of the input that spans lines ends the record at the end
/// of the quote's first line, and the bytes after it go back to the source to be read as the next records.
bool read_csv_record(Source& src, CsvRecord& r);
/// What kind of GDAL/OGR data source `path` is ("GeoPackage or SQLite", "Shapefile", ...), judged by
/// `format`, the path's kind (a directory), its first bytes and its extension; empty when it is one of the text
/// formats gridtruth reads itself (GeoJSON, ndjson, CSV) or cannot be opened at all.
std::string ogr_source_kind(const std::string& path, InputFormat format);
/// Reads one layer of a GDAL vector data source (lib/gdal/vector_reader.cpp; only with GRIDTRUTH_WITH_GDAL).
std::unique_ptr<FormatReader> make_ogr_reader(const std::string& path, const ReaderOptions& options);

/// The Z ordinates (third ordinate of a position, not an M) a parser met, for ReaderOptions::height_from_z.
struct ZTally {
  double sum = 0;             ///< sum of the Z values
  std::size_t with_z = 0;     ///< positions that have a Z
  std::size_t without_z = 0;  ///< positions that have none
  void add(double z) noexcept { sum += z, ++with_z; }
  void none() noexcept { ++without_z; }
};

/// The feature's height from its Z ordinates (ReaderOptions::height_from_z): the mean Z when every position has
/// one and the mean is finite; otherwise nullopt with `error` saying why.
std::optional<double> height_from_tally(const ZTally& z, std::string& error);

/// Non-throwing WKT parser behind parse_wkt(). On failure returns false with `error` set; `declared` is the
/// geometry type named by the keyword when it was recognised (also on failure). With `z`, tallies each position's
/// Z ordinate (a 3-ordinate position without a dimension keyword is X Y Z; "M" positions have no Z).
bool parse_wkt(std::string_view text, Geometry& geometry, std::optional<GeometryType>& declared,
               std::string& error, ZTally* z = nullptr);

bool is_json_space(int c) noexcept;

/// Appends format_number(value) to `out` (nothing for NaN and infinities) without a string of its own.
void append_number(std::string& out, double value);
/// Appends format_number(value, bound) to `out`.
void append_number(std::string& out, double value, double bound);
/// Appends format_bound(bound) to `out`.
void append_bound(std::string& out, double bound);

}  // namespace gridtruth::detail
