// gridtruth — reading features (GeoJSON, newline-delimited GeoJSON, CSV with WKT) and writing result rows (CSV).
//
// Readers are pull-based: FeatureReader::next() yields one feature at a time (or next_raw() cuts it and parse(),
// on any thread, reads it), so inputs of any size stream through in constant memory (except a GeoJSON document
// that is a single Feature or bare geometry, which is read whole). Every feature found in the input yields exactly
// one InputFeature: a feature that cannot be understood comes back with `error` set and no geometry, never dropped.
// Readers keep going past damage: where a GeoJSON FeatureCollection's brackets or quotes stop matching (a missing
// quote or bracket, a stray "{"), the reader resynchronises at the next plausible feature object (a "{" after a ","
// whose first member is "type", "geometry", "properties", "id" or "bbox" and whose brackets close), and the bytes
// skipped come back as one InputFeature with `error` set, which names the byte range and says that features inside
// it may be lost; a CSV quote left open runs to the end of its line only, and reading goes on with the next record;
// newline-delimited GeoJSON is read line by line anyway. Each such span, and a damaged end of the container
// (truncation after the last complete feature), is listed by FeatureReader::problems().
// Only an input that is unreadable as a whole (empty, not JSON at all, a CSV without its geometry column, a
// directory, a closed standard input) makes next() throw Error(ErrorCode::parse or io), naming the problem.
// JSON nested deeper than max_json_depth levels gives the feature an error instead of being parsed.
// Messages never copy invalid UTF-8 or control characters from the input: such bytes are written as \xNN.
// Byte numbers in messages are 0-based offsets into the input; line numbers are 1-based.
#pragma once

#include <cstddef>
#include <cstdint>
#include <iosfwd>
#include <limits>
#include <memory>
#include <optional>
#include <string>
#include <string_view>
#include <utility>
#include <vector>

#include "gridtruth/geometry.hpp"

namespace gridtruth {

struct AuditResult;  // gridtruth/audit.hpp: the writers take results by reference only

/// Input formats. `automatic` sniffs the first bytes (see sniff_format()).
enum class InputFormat { automatic, geojson, ndjson, csv, gdal };

/// "auto", "geojson", "ndjson", "csv", "gdal" (any vector data source GDAL/OGR opens: Shapefile, GeoPackage,
/// FlatGeobuf, OpenFileGDB, GML, KML, ...; needs a build with GDAL, see built_with_gdal() in cells.hpp).
std::string_view to_string(InputFormat format) noexcept;
/// Parses the names of to_string() (case-insensitive; "geojsonseq" and "jsonl" also mean ndjson, "ogr" gdal).
/// Throws Error(invalid_argument) for any other name.
InputFormat parse_input_format(std::string_view name);

/// Guesses the format from the first bytes of an input (a UTF-8 byte order mark is skipped):
/// a record separator (0x1E) → ndjson; a JSON object followed, on a later line, by another object → ndjson;
/// any other text starting with '{' or '[' → geojson; anything else → csv.
InputFormat sniff_format(std::string_view head) noexcept;

/// How a reader finds ids and geometries.
struct ReaderOptions {
  InputFormat format = InputFormat::automatic;  ///< the input's format; automatic sniffs the first bytes
  std::string id_field;         ///< GeoJSON property or CSV column used as id when a feature has no GeoJSON id
  std::string wkt_field = "wkt";  ///< CSV column that holds the WKT geometry (matched case-insensitively)
  /// GeoJSON property or CSV column holding each feature's ellipsoidal height in metres; empty: none. A feature
  /// whose height is missing, null, not a number or not finite is read with `error` set (it becomes invalid).
  std::string height_field;
  /// Take each feature's ellipsoidal height from its own Z coordinates (GeoJSON altitude, WKT Z, a 3D layer):
  /// the mean Z of its positions as given (ring-closing positions included), in metres. A feature with a position
  /// lacking Z is read with `error` set. Not together with height_field (Error(invalid_argument)).
  bool height_from_z = false;
  /// The layer to read from a GDAL data source with several (a GeoPackage, a file geodatabase); empty: the only
  /// layer (a source with several and no name given is Error(invalid_argument) listing them).
  std::string layer;
};

/// One feature as read.
struct InputFeature {
  std::string id;                      ///< GeoJSON "id", else the id_field value, else `position` as text
  std::size_t position = 0;            ///< 1-based position in the input
  std::size_t line = 0;                ///< line where the feature starts (ndjson, csv; 0 when not tracked)
  std::optional<Geometry> geometry;    ///< absent when the feature has no usable geometry
  std::optional<GeometryType> declared_type;  ///< the geometry type named by the input, when recognised
  std::string error;                   ///< why the feature could not be read; empty when `geometry` is set
  // A geometry without any coordinate (WKT EMPTY, GeoJSON "coordinates": []) comes back as an error
  // ("empty geometry: ...") with `declared_type` set: there is nothing to measure.
  std::optional<double> height_m;  ///< the height_field value or mean Z, metres (absent without either option)
  /// The feature's own attributes as the text of a JSON object: a GeoJSON Feature's "properties", or a CSV
  /// record's other columns (as strings); empty when there are none or they could not be read.
  std::string properties_json;
};

class RawFeature;
namespace detail {
struct CutFeature;  // the reader's working state of a cut feature (lib/io/io_detail.hpp)
/// The working state of a feature cut by FeatureReader::next_raw(), for the library's readers and their tests.
const CutFeature& cut_of(const RawFeature& raw) noexcept;
}  // namespace detail

/// One feature cut out of the input by FeatureReader::next_raw() and not parsed yet; FeatureReader::parse() turns
/// it into the InputFeature that next() would have returned. Cutting is cheap and serial, parsing is the costly
/// part and may run on other threads. Opaque apart from its position and line: what else it holds (the feature's
/// text, or the feature already read) is the reader's working state. Moves only.
class RawFeature {
 public:
  /// 1-based position in the input.
  std::size_t position() const noexcept { return position_; }
  /// Line where the feature starts (0 when not tracked).
  std::size_t line() const noexcept;

  ~RawFeature();
  /// Moves; the moved-from feature may only be destroyed or assigned to.
  RawFeature(RawFeature&&) noexcept;
  /// Moves; the moved-from feature may only be destroyed or assigned to.
  RawFeature& operator=(RawFeature&&) noexcept;
  RawFeature(const RawFeature&) = delete;
  RawFeature& operator=(const RawFeature&) = delete;

 private:
  friend class FeatureReader;
  friend const detail::CutFeature& detail::cut_of(const RawFeature& raw) noexcept;
  RawFeature(std::size_t position, std::unique_ptr<detail::CutFeature> cut) noexcept;
  std::size_t position_ = 0;
  std::unique_ptr<detail::CutFeature> cut_;
};

/// Arrays and objects nested deeper than this in a JSON feature make it invalid (properties included), so that no
/// input can exhaust the stack of a recursive JSON writer.
inline constexpr std::size_t max_json_depth = 256;

/// A stretch of the input a reader skipped to keep going, or a damaged end of the input.
struct InputProblem {
  std::uint64_t first_byte = 0;  ///< 0-based offset of the first byte skipped
  std::uint64_t end_byte = 0;    ///< one past the last byte skipped; equal to first_byte when nothing was skipped
  std::size_t line = 0;          ///< 1-based line of first_byte
  /// Position of the invalid feature that stands for the span (InputFeature::position); 0 when there is none
  /// (a damaged end after the last complete feature, where no feature can have been lost).
  std::size_t position = 0;
  std::string message;           ///< what was wrong, the same text as the feature's error when there is one
};

/// Pulls features one at a time from a stream or a file.
///
/// Thread-safety: next(), next_raw(), format() and bytes_read() are for one thread at a time. parse() is const and
/// may run on any number of threads at once, also while another thread calls next_raw().
class FeatureReader {
 public:
  /// Reads from `in`, which must outlive the reader. Unties `in` (`in.tie(nullptr)`): run_audit reads on a worker
  /// thread, and a tied stream would flush its tie (std::cin flushes std::cout) from there while the caller writes.
  explicit FeatureReader(std::istream& in, ReaderOptions options = {});
  /// Opens `path` ("-" reads standard input from file descriptor 0 directly, not through std::cin, so nothing is
  /// flushed or shared with std::cout). With format `automatic`, a directory, a file whose first bytes or
  /// extension say GeoPackage/SQLite, Shapefile, FlatGeobuf, GML, KML, GPX, ... or a GDAL data source name
  /// ("/vsizip/...", "PG:...") is read through GDAL (format `gdal`): one layer (ReaderOptions::layer), feature by
  /// feature, the FID as id unless id_field names an attribute, the attributes as properties; a geometry OGR gives
  /// is read by parse_wkt's rules. Throws Error(io) when the file cannot be opened (naming GDAL's reason, or that
  /// this build has no GDAL and which format the file looks like), Error(invalid_argument) for a missing or
  /// ambiguous layer.
  explicit FeatureReader(const std::string& path, ReaderOptions options = {});
  ~FeatureReader();
  /// Moves; the moved-from reader may only be destroyed or assigned to.
  FeatureReader(FeatureReader&&) noexcept;
  /// Moves; the moved-from reader may only be destroyed or assigned to.
  FeatureReader& operator=(FeatureReader&&) noexcept;
  FeatureReader(const FeatureReader&) = delete;
  FeatureReader& operator=(const FeatureReader&) = delete;

  /// The next feature, or nothing at the end of the input. Throws Error(parse) when the container is unreadable
  /// (the first call may also throw for an empty input or a CSV header without the geometry column).
  std::optional<InputFeature> next();

  /// The next feature's text, cut out of the input without parsing it, or nothing at the end of the input.
  /// parse(*next_raw()) is the feature next() would have returned; the two may be mixed. Throws as next() does
  /// (a malformed feature inside a readable container is no throw: parse() gives it its error).
  /// CSV records (and GDAL features) are read whole here, so only JSON inputs gain from parsing elsewhere.
  std::optional<RawFeature> next_raw();
  /// Parses a feature cut by next_raw() of this reader (consuming its text). Never throws for bad feature content
  /// (the InputFeature carries the error); thread-safe (see the class comment). Cost: about 1 µs per kilobyte of
  /// GeoJSON; features with Unicode escapes, signed zeros or malformed JSON take a slower exact path.
  /// A moved-from RawFeature is a caller's error: Error(invalid_argument).
  InputFeature parse(RawFeature raw) const;

  /// Every span skipped and every damaged end met so far, in input order (for summaries; see the file comment).
  /// Same thread rule as next().
  const std::vector<InputProblem>& problems() const noexcept;

  /// The format in use (sniffed on the first call to next() when `automatic`; `automatic` until then).
  InputFormat format() const noexcept;
  /// The CRS the input names for itself, as a definition PROJ accepts: a GDAL layer's spatial reference ("EPSG:n"
  /// when it names an EPSG code, else its WKT2; a shapefile's .prj), or a GeoJSON document's "crs" member of type
  /// "name" (the 2008 GeoJSON specification, section 3.1; RFC 7946 dropped it but converters still write it),
  /// e.g. "urn:ogc:def:crs:EPSG::26915". Empty when the input names none. May read ahead to the first feature
  /// (a "crs" member after the "features" array is not seen); throws as next() does.
  std::string declared_crs();
  /// Bytes consumed so far (for progress reports).
  std::uint64_t bytes_read() const noexcept;

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

/// Parses simple-features WKT (ISO 19125-1 / OGC 06-103r4): POINT, LINESTRING, POLYGON, MULTIPOINT (with or
/// without parentheses around each point), MULTILINESTRING, MULTIPOLYGON, keywords in any case, EMPTY, and Z, M or
/// ZM coordinates (the third and fourth ordinates are dropped). Coordinates are taken as (longitude, latitude).
/// Throws Error(parse) naming the problem and its 1-based character position (GEOMETRYCOLLECTION included:
/// it is not supported).
Geometry parse_wkt(std::string_view text);

/// Formats a number with the fewest digits that read back to the same double (plain decimal notation from 1e-5
/// to 1e15, exponent notation outside); empty for NaN and infinities.
std::string format_number(double value);
/// Formats a figure known to within `bound` (≥ 0): rounded to the decimal place of a tenth of the bound's leading
/// digit (bound 2.3e-9 → 10 decimals, 0.04 → 3, 7 → 1; never coarser than units), trailing zeros dropped, so a
/// value smaller than the bound reads "0" instead of round-off noise such as -1.02e-12. A bound that is zero,
/// NaN or infinite, or asks for more digits than a double holds, gives format_number(value).
std::string format_number(double value, double bound);
/// Formats a bound: rounded up (never down) to two significant digits, e.g. 1.234e-9 → "1.3e-09", 0.0411 →
/// "0.042", 1234 → "1300"; empty for NaN and infinities.
std::string format_bound(double bound);

/// Quotes one CSV text field as RFC 4180 section 2 says: fields holding a comma, a double quote, CR or LF are
/// enclosed in double quotes and inner quotes doubled. A text that a spreadsheet would take for a formula (its first
/// character is =, +, -, @, a tab or a CR; OWASP "CSV Injection") is first given a leading single quote, unless the
/// whole text is a decimal number such as "-12.5" or "+3e2" (a number cell cannot be a formula and stays a number).
/// Any other field is written as is.
std::string csv_field(std::string_view text);

/// What a result column holds: text (id, names, message), a count (vertices) or a number (m, m², ppm, scales,
/// degrees, arcseconds: the unit is in the column's name).
enum class ColumnKind { text, count, number };
/// "text", "count" or "number"; never throws.
std::string_view to_string(ColumnKind kind) noexcept;

/// One column of the result table (ResultCsvWriter's columns, in order).
struct ResultColumn {
  std::string_view name;  ///< e.g. "true_area_m2"
  ColumnKind kind;        ///< what the column holds
};

/// The result table's columns in order: the CSV header of `gridtruth audit`, plus a last `combined_factor` when
/// asked for, then (with `bounds`) the 14 bound columns `true_length_bound_m`, `grid_length_bound_m`,
/// `length_error_bound_m`, `length_from_{edges,scale,datum,height}_bound_m` and the same for area (`*_m2`):
/// Budget's *_bound, empty where no bound can be given. One table for every writer of results (CSV, the Python
/// binding).
const std::vector<ResultColumn>& result_columns(bool combined_factor = false, bool bounds = false);

/// One cell of a result row. Text columns use `text` (which points into the id, the result or static names, so
/// the row must not outlive them); count and number columns use `number`, NaN when the value does not apply (a
/// point's length, a line's area, an unread feature's vertices).
struct ResultCell {
  std::string_view text;  ///< text columns
  double number = 0;      ///< count and number columns; NaN: empty
  /// The number's bound (Budget's *_bound, error and datum parts without the datum accuracy): the CSV writes the
  /// number as format_number(number, bound). NaN: none known, format_number(number).
  double bound = std::numeric_limits<double>::quiet_NaN();
  bool is_bound = false;  ///< the number is itself a bound column: written as format_bound()
};

/// The cells of one row, column by column as result_columns(combined_factor) lists them.
struct ResultRow {
  static constexpr std::size_t max_columns = 45;  ///< columns with combined_factor and the bounds
  ResultCell cells[max_columns];                  ///< the first `size` are set
  std::size_t size = 0;                           ///< result_columns(combined_factor).size()
};

/// The row of an audited feature (`id` as given). Its message cell is AuditResult::message (which names the
/// failed tolerances, "exceeds area<=500ppm", after any warning).
ResultRow result_row(std::string_view id, const AuditResult& result, bool combined_factor = false,
                     bool bounds = false);
/// The row of a feature that could not be read: status `invalid`, the message, the geometry type when known, every
/// other cell empty.
ResultRow unread_row(std::string_view id, std::string_view message, std::optional<GeometryType> type = std::nullopt,
                     bool combined_factor = false, bool bounds = false);

/// Writes audit results as CSV rows (RFC 4180), one per feature, with the columns of result_columns().
/// Numbers use format_number(value, bound) where the figure's bound is known (ResultCell::bound; bounds
/// themselves format_bound()), format_number(value) elsewhere, or every number in full with with_all_digits(); a
/// value that does not apply (a point's length, a line's area, NaN) is an empty cell. Lines end with CRLF (RFC 4180 section 2.1) unless another ending is given.
class ResultCsvWriter {
 public:
  /// Writes to `out`, which must outlive the writer, ending lines with `line_ending` (CRLF by default).
  explicit ResultCsvWriter(std::ostream& out, std::string line_ending = "\r\n");
  /// The column names, in order (the names of result_columns()).
  static const std::vector<std::string>& columns();
  /// Adds a last column `combined_factor` (AuditResult::combined_factor), for audits with heights.
  void with_combined_factor(bool on) noexcept { combined_factor_ = on; }
  /// Adds the 14 bound columns after every other (result_columns()'s `bounds`).
  void with_bounds(bool on) noexcept { bounds_ = on; }
  /// Writes every number with format_number(value): the shortest text that reads back to the same double.
  void with_all_digits(bool on) noexcept { all_digits_ = on; }
  /// Adds columns after the table's (after combined_factor too): `names` in the header (quoted as csv_field()
  /// says), and in each row the texts of extra_cells(), an empty cell for each one missing. Before write_header().
  void with_extra_columns(std::vector<std::string> names) { extra_columns_ = std::move(names); }
  /// The cells of the extra columns for the rows written next, already formatted; the caller sets them before
  /// each write_row() or write_unread_row() (they are quoted as csv_field() says).
  std::vector<std::string>& extra_cells() noexcept { return extra_cells_; }
  /// Writes the header row: the names of columns(), in order, then the extra columns.
  void write_header();
  /// One audited feature.
  void write_row(std::string_view id, const AuditResult& result);
  /// One feature that could not be read: status `invalid`, the message, the geometry type when known.
  void write_unread_row(std::string_view id, std::string_view message,
                        std::optional<GeometryType> type = std::nullopt);

 private:
  std::ostream* out_;
  std::string line_ending_;
  bool combined_factor_ = false;
  bool bounds_ = false;
  bool all_digits_ = false;
  std::vector<std::string> extra_columns_, extra_cells_;
  std::string line_;  // the row being built, kept so that its buffer is reused
};

}  // namespace gridtruth
