// gridtruth — GeoJSON (RFC 7946) and newline-delimited GeoJSON (one text per line; RFC 8142 record separators
// tolerated) readers.
//
// A FeatureCollection is streamed: the top-level object is scanned lexically and each element of its "features"
// array is cut out (strings, escapes and bracket nesting tracked, scanning the buffered bytes in bulk) and parsed
// on its own, so a malformed feature gives one invalid feature and the others are still read. A Feature or bare
// geometry document is read whole. Cutting (next_raw) and parsing (parse_json_feature) are apart so that parsing
// can run on worker threads.
//
// Parsing uses simdjson's DOM API; the conversion to a feature is one template over two JSON adapters, so that it
// says the same things, in the same order, whichever parser read the text. nlohmann-json parses a text instead
// when its result must be exactly nlohmann's: malformed JSON (its messages and byte offsets are the readers'
// contract), \u escapes (lone surrogates), and a zero with a minus sign (nlohmann reads "-0" as the integer 0).
#include <cmath>
#include <cstdint>
#include <cstdio>
#include <cstring>
#include <memory>
#include <nlohmann/json.hpp>
#include <simdjson.h>
#include <string>
#include <utility>
#include <vector>

#include "gridtruth/error.hpp"
#include "gridtruth/io.hpp"
#include "io_detail.hpp"

namespace gridtruth {
namespace detail {
namespace {

using nlohmann::json;

/// The JSON value kinds the messages name.
enum class Kind { null, boolean, string, array, object, number, other };

std::string kind_name(Kind k) {
  switch (k) {
    case Kind::null: return "null";
    case Kind::boolean: return "a boolean";
    case Kind::string: return "a string";
    case Kind::array: return "an array";
    case Kind::object: return "an object";
    case Kind::number: return "a number";
    case Kind::other: return "nothing";
  }
  return "nothing";
}

/// Thrown inside the conversion of one feature; becomes the feature's error.
struct FeatureProblem {
  std::string message;
};

/// Thrown by the simdjson adapter where only nlohmann's reading gives nlohmann's result (see the file comment).
struct NeedsReference {};

[[noreturn]] void problem(std::string message) { throw FeatureProblem{std::move(message)}; }


/// A message of nlohmann-json without its "[json.exception.KIND.N] " prefix.
std::string json_message(const std::exception& e) {
  std::string what = e.what();
  if (what.rfind("[json.exception.", 0) == 0) {
    const auto bracket = what.find("] ");
    if (bracket != std::string::npos) what.erase(0, bracket + 2);
  }
  return what;
}

/// Whether a JSON text nests arrays and objects deeper than `limit` (lexically; a malformed text is measured as far
/// as its brackets go).
bool nested_deeper_than(std::string_view text, std::size_t limit);

// ---- The two adapters: the same questions asked of an nlohmann value and of a simdjson DOM element ------------

struct NlohmannJson {
  using Value = const json*;
  static Kind kind(Value v) {
    switch (v->type()) {
      case json::value_t::null: return Kind::null;
      case json::value_t::boolean: return Kind::boolean;
      case json::value_t::string: return Kind::string;
      case json::value_t::array: return Kind::array;
      case json::value_t::object: return Kind::object;
      case json::value_t::number_integer:
      case json::value_t::number_unsigned:
      case json::value_t::number_float: return Kind::number;
      default: return Kind::other;
    }
  }
  static std::optional<Value> member(Value object, std::string_view key) {
    const auto it = object->find(key);
    if (it == object->end()) return std::nullopt;
    return &*it;
  }
  static std::size_t size(Value array) { return array->size(); }
  template <class F>
  static void each(Value array, F&& f) {
    for (std::size_t k = 0; k < array->size(); ++k) f(k, &(*array)[k]);
  }
  static double number(Value v) { return v->get<double>(); }
  static std::string string(Value v) { return v->get<std::string>(); }
  static std::string id_text(Value v) {
    if (v->is_string()) return v->get<std::string>();
    if (v->is_number_unsigned()) return std::to_string(v->get<std::uint64_t>());
    if (v->is_number_integer()) return std::to_string(v->get<std::int64_t>());
    if (v->is_number_float()) return format_number(v->get<double>());
    if (v->is_boolean()) return v->get<bool>() ? "true" : "false";
    return {};
  }
  static std::string dump(Value object) { return object->dump(); }
};

struct SimdJson {
  using Value = simdjson::dom::element;
  static Kind kind(Value v) {
    switch (v.type()) {
      case simdjson::dom::element_type::NULL_VALUE: return Kind::null;
      case simdjson::dom::element_type::BOOL: return Kind::boolean;
      case simdjson::dom::element_type::STRING: return Kind::string;
      case simdjson::dom::element_type::ARRAY: return Kind::array;
      case simdjson::dom::element_type::OBJECT: return Kind::object;
      default: return Kind::number;
    }
  }
  /// The last member of that name, as nlohmann keeps it (RFC 8259 section 4 leaves duplicate names open).
  static std::optional<Value> member(Value object, std::string_view key) {
    std::optional<Value> found;
    for (const auto field : simdjson::dom::object(object)) {
      if (field.key == key) found = field.value;
    }
    return found;
  }
  static std::size_t size(Value array) { return simdjson::dom::array(array).size(); }
  template <class F>
  static void each(Value array, F&& f) {
    std::size_t k = 0;
    for (const Value v : simdjson::dom::array(array)) f(k++, v);
  }
  static double number(Value v) {
    switch (v.type()) {
      case simdjson::dom::element_type::INT64: return static_cast<double>(int64_t(v));
      case simdjson::dom::element_type::UINT64: return static_cast<double>(uint64_t(v));
      default: {
        const double d = double(v);
        if (d == 0 && std::signbit(d)) throw NeedsReference{};  // "-0" (integer 0) or "-0.0" (-0.0)?
        return d;
      }
    }
  }
  static std::string string(Value v) { return std::string(std::string_view(v)); }
  static std::string id_text(Value v) {
    switch (v.type()) {
      case simdjson::dom::element_type::STRING: return string(v);
      case simdjson::dom::element_type::UINT64: return std::to_string(uint64_t(v));
      case simdjson::dom::element_type::INT64: return std::to_string(int64_t(v));
      case simdjson::dom::element_type::DOUBLE: return format_number(double(v));
      case simdjson::dom::element_type::BOOL: return bool(v) ? "true" : "false";
      default: return {};
    }
  }
  static json to_nlohmann(Value v) {
    switch (v.type()) {
      case simdjson::dom::element_type::OBJECT: {
        json j = json::object();
        for (const auto field : simdjson::dom::object(v)) j[std::string(field.key)] = to_nlohmann(field.value);
        return j;
      }
      case simdjson::dom::element_type::ARRAY: {
        json j = json::array();
        for (const Value e : simdjson::dom::array(v)) j.push_back(to_nlohmann(e));
        return j;
      }
      case simdjson::dom::element_type::STRING: return json(std::string_view(v));
      case simdjson::dom::element_type::INT64: {
        const int64_t i = int64_t(v);
        if (i >= 0) return json(static_cast<std::uint64_t>(i));  // nlohmann keeps non-negative integers unsigned
        return json(i);
      }
      case simdjson::dom::element_type::UINT64: return json(uint64_t(v));
      case simdjson::dom::element_type::DOUBLE: return json(number(v));
      case simdjson::dom::element_type::BOOL: return json(bool(v));
      default: return json(nullptr);
    }
  }
  /// nlohmann's text of the object (members sorted by name, duplicates resolved as nlohmann does), built from the
  /// DOM; an empty object needs no detour.
  static std::string dump(Value object) {
    if (simdjson::dom::object(object).size() == 0) return "{}";
    return to_nlohmann(object).dump();
  }
};

// ---- The conversion, once for both adapters ---------------------------------------------------------------------

/// Where a value sits below "coordinates" (a chain of array indices), spelt out only for a message: building
/// the text for every position would cost more than reading it.
struct Where {
  const Where* parent = nullptr;
  std::size_t index = 0;
  std::string text() const {
    return parent ? parent->text() + "[" + std::to_string(index) + "]" : std::string("coordinates");
  }
};

template <class A>
Coord position(typename A::Value j, const Where& where, ZTally* z) {
  if (A::kind(j) != Kind::array)
    problem(where.text() + ": a position is an array of numbers (RFC 7946 section 3.1.1), found " +
            kind_name(A::kind(j)));
  const std::size_t n = A::size(j);
  if (n < 2) problem(where.text() + ": a position needs at least 2 numbers (RFC 7946 section 3.1.1), found " +
                     std::to_string(n));
  double xyz[3] = {0, 0, 0};
  const std::size_t wanted = z ? 3 : 2;  // the third number (RFC 7946 section 3.1.1: altitude) only for a height
  A::each(j, [&](std::size_t k, typename A::Value v) {
    if (k >= wanted) return;
    if (A::kind(v) != Kind::number)
      problem(where.text() + "[" + std::to_string(k) + "]: expected a number, found " + kind_name(A::kind(v)));
    xyz[k] = A::number(v);
  });
  if (z) {
    if (n >= 3) z->add(xyz[2]);
    else z->none();
  }
  return Coord{xyz[0], xyz[1]};
}

template <class A>
Path positions(typename A::Value j, const Where& where, ZTally* z) {
  if (A::kind(j) != Kind::array)
    problem(where.text() + ": expected an array of positions, found " + kind_name(A::kind(j)));
  Path p;
  p.reserve(A::size(j));
  A::each(j, [&](std::size_t k, typename A::Value v) { p.push_back(position<A>(v, Where{&where, k}, z)); });
  return p;
}

template <class A>
Polygon polygon(typename A::Value j, const Where& where, ZTally* z) {
  if (A::kind(j) != Kind::array)
    problem(where.text() + ": expected an array of rings, found " + kind_name(A::kind(j)));
  Polygon poly;
  A::each(j, [&](std::size_t k, typename A::Value v) {
    Path ring = positions<A>(v, Where{&where, k}, z);
    if (k == 0) poly.outer = std::move(ring);
    else poly.holes.push_back(std::move(ring));
  });
  return poly;
}

std::optional<GeometryType> geometry_type_named(const std::string& t) {
  if (t == "Point") return GeometryType::point;
  if (t == "LineString") return GeometryType::line_string;
  if (t == "Polygon") return GeometryType::polygon;
  if (t == "MultiPoint") return GeometryType::multi_point;
  if (t == "MultiLineString") return GeometryType::multi_line_string;
  if (t == "MultiPolygon") return GeometryType::multi_polygon;
  return std::nullopt;
}

/// Converts a GeoJSON geometry object. `declared` is set as soon as the type is known. With `z`, tallies the
/// positions' altitudes.
template <class A>
Geometry geometry(typename A::Value j, std::optional<GeometryType>& declared, ZTally* z) {
  if (A::kind(j) != Kind::object)
    problem("geometry: expected a GeoJSON geometry object, found " + kind_name(A::kind(j)));
  const auto t = A::member(j, "type");
  if (!t) problem("geometry has no \"type\" member (RFC 7946 section 3.1)");
  if (A::kind(*t) != Kind::string) problem("geometry \"type\" is " + kind_name(A::kind(*t)) + ", not a string");
  const auto name = A::string(*t);
  if (name == "GeometryCollection")
    problem("GeometryCollection is not supported: give each member as a feature of its own");
  const auto type = geometry_type_named(name);
  if (!type) problem("unknown geometry type \"" + name + "\"");
  declared = type;
  const auto c = A::member(j, "coordinates");
  if (!c) problem(name + " has no \"coordinates\" member (RFC 7946 section 3.1)");
  const auto coords = *c;
  const bool empty_array = A::kind(coords) == Kind::array && A::size(coords) == 0;
  Geometry g;
  g.type = *type;
  const Where where;
  switch (*type) {
    case GeometryType::point:
      // RFC 7946 section 3.1 lets processors read an empty "coordinates" array as an empty geometry.
      if (empty_array) break;
      g.points.push_back(position<A>(coords, where, z));
      break;
    case GeometryType::multi_point: g.points = positions<A>(coords, where, z); break;
    case GeometryType::line_string:
      if (empty_array) break;
      g.lines.push_back(positions<A>(coords, where, z));
      break;
    case GeometryType::multi_line_string:
      if (A::kind(coords) != Kind::array)
        problem(where.text() + ": expected an array of line strings, found " + kind_name(A::kind(coords)));
      A::each(coords, [&](std::size_t k, typename A::Value v) {
        g.lines.push_back(positions<A>(v, Where{&where, k}, z));
      });
      break;
    case GeometryType::polygon:
      if (empty_array) break;
      g.polygons.push_back(polygon<A>(coords, where, z));
      break;
    case GeometryType::multi_polygon:
      if (A::kind(coords) != Kind::array)
        problem(where.text() + ": expected an array of polygons, found " + kind_name(A::kind(coords)));
      A::each(coords, [&](std::size_t k, typename A::Value v) {
        g.polygons.push_back(polygon<A>(v, Where{&where, k}, z));
      });
      break;
  }
  return g;
}

/// The height from the tallied altitudes, or a FeatureProblem saying why there is none.
inline double height_or_problem(const ZTally& z) {
  std::string error;
  const auto h = height_from_tally(z, error);
  if (!h) problem(error);
  return *h;
}

/// Fills `f` from one parsed GeoJSON value (a Feature or a bare geometry). NeedsReference passes through.
template <class A>
void feature_from_value(typename A::Value j, const ReaderOptions& options, InputFeature& f) {
  try {
    if (A::kind(j) != Kind::object) problem("expected a GeoJSON Feature object, found " + kind_name(A::kind(j)));
    const auto t = A::member(j, "type");
    if (!t) problem("object has no \"type\" member (RFC 7946 section 3)");
    if (A::kind(*t) != Kind::string) problem("\"type\" is " + kind_name(A::kind(*t)) + ", not a string");
    const auto name = A::string(*t);
    if (name == "Feature") {
      // "properties" counts when it is an object (null and anything else: no properties).
      const auto props = A::member(j, "properties");
      const bool has_props = props && A::kind(*props) == Kind::object;
      if (has_props) f.properties_json = A::dump(*props);
      if (const auto id = A::member(j, "id")) f.id = A::id_text(*id);
      if (f.id.empty() && !options.id_field.empty() && has_props) {
        if (const auto v = A::member(*props, options.id_field)) f.id = A::id_text(*v);
      }
      const auto g = A::member(j, "geometry");
      if (!g) problem("Feature has no \"geometry\" member (RFC 7946 section 3.2)");
      if (A::kind(*g) == Kind::null)
        problem("Feature has a null geometry (an unlocated feature, RFC 7946 section 3.2)");
      ZTally z;
      f.geometry = geometry<A>(*g, f.declared_type, options.height_from_z ? &z : nullptr);
      if (options.height_from_z) f.height_m = height_or_problem(z);
      if (!options.height_field.empty()) {
        const auto v = has_props ? A::member(*props, options.height_field) : std::nullopt;
        if (!v || A::kind(*v) == Kind::null)
          problem("height property \"" + options.height_field + "\" is missing or null");
        if (A::kind(*v) != Kind::number) {
          problem("height property \"" + options.height_field + "\" is " + kind_name(A::kind(*v)) +
                  ", not a number");
        }
        f.height_m = A::number(*v);
      }
    } else if (name == "FeatureCollection") {
      problem("a FeatureCollection where a Feature belongs");
    } else {
      if (!options.height_field.empty()) {
        problem("a bare geometry has no properties, so no height property \"" + options.height_field + "\"");
      }
      ZTally z;
      f.geometry = geometry<A>(j, f.declared_type, options.height_from_z ? &z : nullptr);
      if (options.height_from_z) f.height_m = height_or_problem(z);
    }
  } catch (const FeatureProblem& p) {
    f.geometry.reset();
    f.error = p.message;
  } catch (const json::exception& e) {  // a number out of range for get<>, and the like
    f.geometry.reset();
    f.error = "a value of the feature cannot be read: " + json_message(e);
  }
}

/// nlohmann's message without its "[json.exception...] parse error at line L, column C: " prefix.
std::string parse_error_text(const json::parse_error& e) {
  std::string what = e.what();
  const auto column = what.find("column ");
  if (column != std::string::npos) {
    const auto colon = what.find(": ", column);
    if (colon != std::string::npos) return what.substr(colon + 2);
  }
  const auto bracket = what.find("] ");
  return bracket == std::string::npos ? what : what.substr(bracket + 2);
}

/// Parses one JSON text with nlohmann-json and fills `f` from it. `base`: the byte of the input where the text
/// starts (absent: the text was rebuilt, so byte offsets would not be the input's).
void feature_from_text_reference(std::string_view text, std::optional<std::uint64_t> base,
                                 const ReaderOptions& options, InputFeature& f) {
  // Deep texts never reach nlohmann-json, whose dump() recurses (simdjson refuses them too: see make_parser).
  if (nested_deeper_than(text, max_json_depth)) {
    f.error = "arrays and objects are nested more than " + std::to_string(max_json_depth) +
              " levels deep, more than this reader accepts";
    return;
  }
  json j;
  try {
    j = json::parse(text);
  } catch (const json::parse_error& e) {
    f.error = base ? "malformed JSON at byte " + std::to_string(*base + (e.byte > 0 ? e.byte - 1 : 0)) + ": "
                   : std::string("malformed JSON: ");
    f.error += parse_error_text(e);
    return;
  } catch (const json::exception& e) {
    f.error = "malformed JSON: " + json_message(e);
    return;
  }
  feature_from_value<NlohmannJson>(&j, options, f);
}

/// Whether the text holds a backslash-u escape (or what looks like one: an escaped backslash before a "u").
bool has_unicode_escape(std::string_view text) {
  const char* p = text.data();
  const char* const end = p + text.size();
  while ((p = static_cast<const char*>(std::memchr(p, '\\', static_cast<std::size_t>(end - p)))) != nullptr) {
    if (++p < end && *p == 'u') return true;
  }
  return false;
}

/// Texts above this size are parsed by a parser of their own, so that a worker does not keep a huge buffer.
constexpr std::size_t large_text_bytes = std::size_t{1} << 20;

/// A simdjson parser that fails (DEPTH_ERROR) on texts nested deeper than max_json_depth, which then go to the
/// reference path and its message.
std::unique_ptr<simdjson::dom::parser> make_parser() {
  auto parser = std::make_unique<simdjson::dom::parser>();
  if (parser->allocate(simdjson::SIMDJSON_PADDING, max_json_depth) != simdjson::SUCCESS) throw std::bad_alloc();
  return parser;
}

/// Parses with simdjson and fills `f`; false (and `f` untouched) when nlohmann must read the text instead.
bool feature_from_text_fast(const std::string& text, const ReaderOptions& options, InputFeature& f) {
  if (has_unicode_escape(text)) return false;
  thread_local std::unique_ptr<simdjson::dom::parser> shared_parser = make_parser();
  std::unique_ptr<simdjson::dom::parser> own_parser;
  simdjson::dom::parser* parser = shared_parser.get();
  if (text.size() > large_text_bytes) {
    own_parser = make_parser();
    parser = own_parser.get();
  }
  // simdjson reads up to SIMDJSON_PADDING bytes past the end: a string with that much spare capacity is used in
  // place, any other is copied.
  const bool padded = text.capacity() - text.size() >= simdjson::SIMDJSON_PADDING;
  simdjson::dom::element root;
  // A large text is parsed into a document of its own, and its parser (an index of every structural character,
  // 4 bytes each: 24 bytes per position) is released before the geometry is built from the document.
  simdjson::dom::document own_document;
  if (own_parser) {
    if (own_parser->parse_into_document(own_document, text.data(), text.size(), !padded).get(root) !=
        simdjson::SUCCESS)
      return false;
    own_parser.reset();
  } else if (parser->parse(text.data(), text.size(), !padded).get(root) != simdjson::SUCCESS) {
    return false;
  }
  InputFeature g;
  g.line = f.line;
  try {
    feature_from_value<SimdJson>(root, options, g);
  } catch (const NeedsReference&) {
    return false;
  }
  f = std::move(g);
  return true;
}

void finish_json_feature(const CutFeature& raw, InputFeature& f) {
  if (raw.line_in_messages && !f.error.empty() && f.error.rfind("malformed JSON", 0) == 0)
    f.error = "line " + std::to_string(f.line) + ": " + f.error;
}

enum class Scan { complete, end_of_input, unmatched };

/// Bytes that matter outside strings when cutting an object or array: quotes and brackets.
struct StructuralTable {
  bool flag[256] = {};
  constexpr StructuralTable() {
    flag[static_cast<unsigned char>('"')] = flag[static_cast<unsigned char>('{')] = true;
    flag[static_cast<unsigned char>('[')] = flag[static_cast<unsigned char>('}')] = true;
    flag[static_cast<unsigned char>(']')] = true;
  }
};
constexpr StructuralTable structural{};

/// The lexical state of an object or array being cut: strings, escapes and bracket nesting, fed in chunks.
struct BracketLexer {
  std::vector<char> stack;  // the closing bracket each open one expects
  std::size_t depth_max = 0;
  bool in_string = false;
  bool escaped = false;  // the previous chunk ended on a backslash inside a string

  /// Scans data[0, n) from this state; `used` is the bytes taken (through the closing or the unmatched bracket
  /// when the scan stops there). The first byte fed must open the value.
  Scan feed(const char* data, std::size_t n, std::size_t& used) {
    std::size_t i = 0;
    if (escaped && n > 0) {
      i = 1;
      escaped = false;
    }
    while (i < n) {
      if (in_string) {
        // Jump to the next quote or backslash.
        while (i < n && data[i] != '"' && data[i] != '\\') ++i;
        if (i == n) break;
        if (data[i] == '\\') {
          if (i + 1 == n) {
            escaped = true;
            i = n;
            break;
          }
          i += 2;
          continue;
        }
        in_string = false;
        ++i;
        continue;
      }
      while (i < n && !structural.flag[static_cast<unsigned char>(data[i])]) ++i;
      if (i == n) break;
      const char b = data[i++];
      if (b == '"') {
        in_string = true;
      } else if (b == '{' || b == '[') {
        stack.push_back(b == '{' ? '}' : ']');
        depth_max = std::max(depth_max, stack.size());
      } else if (stack.empty() || stack.back() != b) {
        used = i;
        return Scan::unmatched;
      } else {
        stack.pop_back();
        if (stack.empty()) {
          used = i;
          return Scan::complete;
        }
      }
    }
    used = i;
    return Scan::end_of_input;
  }
};

bool nested_deeper_than(std::string_view text, std::size_t limit) {
  const std::size_t open = text.find_first_of("{[");
  if (open == std::string_view::npos) return false;
  BracketLexer lexer;
  std::size_t used = 0;
  lexer.feed(text.data() + open, text.size() - open, used);
  return lexer.depth_max > limit;
}

/// Cuts one JSON value out of the source (lexically: strings, escapes and bracket nesting). Objects and arrays are
/// scanned over the buffered bytes and appended in bulk, with SIMDJSON_PADDING spare bytes of capacity so the
/// parser can read the text in place. On `unmatched` the text ends with the bracket that did not match; on
/// `end_of_input` it holds the rest of the input. `depth_max` (when given) receives the deepest nesting seen.
Scan scan_value(Source& src, std::string& out, std::size_t* depth_max = nullptr) {
  out.clear();
  int c = src.peek();
  if (c == '{' || c == '[') {
    BracketLexer lexer;
    for (;;) {
      const std::string_view buf = src.buffered();
      if (buf.empty()) return Scan::end_of_input;
      std::size_t used = 0;
      const Scan scan = lexer.feed(buf.data(), buf.size(), used);
      if (out.capacity() < out.size() + used + simdjson::SIMDJSON_PADDING)
        out.reserve(std::max(2 * out.capacity(), out.size() + used + simdjson::SIMDJSON_PADDING));
      out.append(buf.data(), used);
      src.consume(used);
      if (depth_max) *depth_max = lexer.depth_max;
      if (scan != Scan::end_of_input) return scan;
    }
  }
  if (c == '"') {
    out.push_back(static_cast<char>(src.get()));
    while ((c = src.get()) >= 0) {
      out.push_back(static_cast<char>(c));
      if (c == '\\') {
        const int e = src.get();
        if (e < 0) return Scan::end_of_input;
        out.push_back(static_cast<char>(e));
      } else if (c == '"') {
        return Scan::complete;
      }
    }
    return Scan::end_of_input;
  }
  // A scalar: up to the next structural character or space.
  while ((c = src.peek()) >= 0 && c != ',' && c != '}' && c != ']' && !is_json_space(c))
    out.push_back(static_cast<char>(src.get()));
  return c < 0 ? Scan::end_of_input : Scan::complete;
}

/// Where, at or after `from`, a feature object plausibly starts in `text`: a "{" after a "," (spaces between),
/// whose first member is one a GeoJSON Feature has, and whose brackets close (or are still open at the end of
/// `text`, which may continue) followed by "," or "]". npos when there is none.
std::size_t next_feature_start(std::string_view text, std::size_t from) {
  static constexpr std::string_view members[] = {"\"type\"", "\"geometry\"", "\"properties\"", "\"id\"",
                                                 "\"bbox\""};
  for (std::size_t i = text.find('{', from); i != std::string_view::npos; i = text.find('{', i + 1)) {
    std::size_t before = i;
    while (before > 0 && is_json_space(static_cast<unsigned char>(text[before - 1]))) --before;
    if (before == 0 || text[before - 1] != ',') continue;
    std::size_t k = i + 1;
    while (k < text.size() && is_json_space(static_cast<unsigned char>(text[k]))) ++k;
    bool member = false;
    for (const std::string_view m : members) member = member || text.substr(k, m.size()) == m;
    if (!member) continue;
    BracketLexer lexer;
    std::size_t used = 0;
    const Scan scan = lexer.feed(text.data() + i, text.size() - i, used);
    if (scan == Scan::unmatched) continue;
    if (scan == Scan::end_of_input) return i;
    k = i + used;
    while (k < text.size() && is_json_space(static_cast<unsigned char>(text[k]))) ++k;
    if (k == text.size() || text[k] == ',' || text[k] == ']') return i;
  }
  return std::string_view::npos;
}

void skip_space(Source& src) {
  while (is_json_space(src.peek())) src.get();
}

[[noreturn]] void container_error(Source& src, const std::string& what) {
  throw Error(ErrorCode::parse, "GeoJSON: " + what + " at byte " + std::to_string(src.offset()) + " (line " +
                                    std::to_string(src.line()) + ")");
}

std::string describe_byte(int c) {
  if (c < 0) return "the end of the input";
  if (c >= 0x20 && c < 0x7F) return std::string("\"") + static_cast<char>(c) + "\"";
  char buf[16];
  std::snprintf(buf, sizeof buf, "0x%02X", c);
  return std::string("byte ") + buf;
}

class GeoJsonReader final : public FormatReader {
 public:
  GeoJsonReader(Source& src, const ReaderOptions& options)
      : src_(src), options_(options), problems_(problems) {}

  std::string declared_crs() override {
    if (state_ == State::start) start();
    if (state_ == State::members) read_members();
    return crs_;
  }

  std::optional<CutFeature> next_raw() override {
    if (state_ == State::start) start();
    if (state_ == State::members) read_members();
    if (state_ == State::features) return next_feature();
    if (state_ == State::single) {
      state_ = State::done;
      return single_;
    }
    return std::nullopt;
  }

 private:
  enum class State { start, members, features, single, done };

  void start() {
    src_.skip_bom();
    skip_space(src_);
    const int c = src_.peek();
    if (c < 0) container_error(src_, src_.offset() == 0 ? "the input is empty" : "the input holds only white space");
    if (c == '[') container_error(src_, "a GeoJSON text is an object (RFC 7946 section 2), found an array");
    if (c != '{') container_error(src_, "not JSON: expected \"{\", found " + describe_byte(c));
    src_.get();
    state_ = State::members;
  }

  /// Reads top-level members until the "features" array opens (→ features) or the object ends (→ single/done).
  void read_members() {
    std::string key_text, value;
    for (;;) {
      skip_space(src_);
      int c = src_.peek();
      if (c == '}' && !expect_member_) {
        src_.get();
        finish_object();
        return;
      }
      if (c != '"') {
        if (c < 0) container_error(src_, "the input ends inside the top-level object (truncated?)");
        container_error(src_, "expected a member name, found " + describe_byte(c));
      }
      if (scan_value(src_, key_text) != Scan::complete)
        container_error(src_, "the input ends inside a member name (truncated?)");
      expect_member_ = false;
      std::string key;
      try {
        key = json::parse(key_text).get<std::string>();
      } catch (const json::exception&) {
        container_error(src_, "malformed member name");
      }
      skip_space(src_);
      if (src_.get() != ':') container_error(src_, "expected \":\" after member name \"" + key + "\"");
      skip_space(src_);
      c = src_.peek();
      if (c < 0) container_error(src_, "the input ends after member name \"" + key + "\" (truncated?)");
      if (key == "features" && c == '[' && (!type_ || *type_ == "FeatureCollection") && !streamed_) {
        src_.get();
        streamed_ = true;
        first_element_ = true;
        state_ = State::features;
        return;
      }
      const auto at = src_.offset();
      const Scan scan = scan_value(src_, value);
      if (scan == Scan::unmatched)
        container_error(src_, "unmatched \"" + value.substr(value.size() - 1) + "\" at byte " +
                                  std::to_string(src_.offset() - 1) + " in the value of \"" + key + "\"");
      if (scan != Scan::complete)
        container_error(src_, "the input ends inside the value of \"" + key + "\" (truncated?)");
      if (key == "type") {
        try {
          const auto t = json::parse(value);
          if (t.is_string()) type_ = t.get<std::string>();
        } catch (const json::exception&) {
          // reported when the object is parsed as a whole
        }
      }
      if (key == "crs") crs_ = named_crs(value);
      if (key == "features" && (!type_ || *type_ == "FeatureCollection") && !streamed_)
        container_error(src_, "\"features\" is not an array (RFC 7946 section 3.3)");
      members_.emplace_back(key_text, std::move(value));
      (void)at;
      after_member();
      if (state_ != State::members) return;
    }
  }

  /// The CRS a top-level "crs" member names: {"type": "name", "properties": {"name": "urn:ogc:def:crs:..."}}
  /// (GeoJSON 2008 specification, section 3.1.1); a "link" CRS (section 3.1.2) or anything else names none here.
  static std::string named_crs(const std::string& value) {
    try {
      const auto j = json::parse(value);
      if (j.is_object() && j.value("type", "") == "name" && j.contains("properties") &&
          j["properties"].is_object() && j["properties"].contains("name") && j["properties"]["name"].is_string())
        return j["properties"]["name"].get<std::string>();
    } catch (const json::exception&) {
      // a malformed member is no CRS; the features are still read
    }
    return {};
  }

  void after_member() {
    skip_space(src_);
    const int c = src_.get();
    if (c == ',') {
      expect_member_ = true;
      return;
    }
    if (c == '}') {
      finish_object();
      return;
    }
    container_error(src_, "expected \",\" or \"}\" in the top-level object, found " + describe_byte(c));
  }

  void finish_object() {
    skip_space(src_);
    if (src_.peek() >= 0) container_error(src_, "unexpected text after the GeoJSON object");
    if (streamed_) {
      state_ = State::done;
      return;
    }
    if (type_ && *type_ == "FeatureCollection")
      container_error(src_, "FeatureCollection without a \"features\" array (RFC 7946 section 3.3)");
    // A Feature or a bare geometry: rebuild the object and parse it whole.
    std::string text = "{";
    for (std::size_t k = 0; k < members_.size(); ++k) {
      if (k) text += ',';
      text += members_[k].first;
      text += ':';
      text += members_[k].second;
    }
    text += '}';
    members_.clear();
    CutFeature f;
    f.line = 1;
    f.text = std::move(text);
    single_ = std::move(f);
    state_ = State::single;
  }

  std::optional<CutFeature> next_feature() {
    skip_space(src_);
    int c = src_.peek();
    if (!first_element_) {
      if (c == ',') {
        src_.get();
        skip_space(src_);
        c = src_.peek();
      } else if (c != ']') {
        if (c < 0) return damaged_end("the input ends inside the \"features\" array after its last complete "
                                      "feature (truncated file?)");
        std::string consumed;
        const std::string reason = "expected \",\" or \"]\" between features, found " + describe_byte(c);
        return resynchronise(src_.offset(), src_.line(), consumed, reason, Scan::unmatched);
      }
    }
    if (c == ']') {
      src_.get();
      try {
        state_ = State::members;
        after_member();
        if (state_ == State::members) read_members();
      } catch (const Error& e) {  // the features are read: damage after them loses none
        return damaged_end(std::string(e.what()) + ", after the \"features\" array");
      }
      if (state_ == State::single) {  // cannot happen once streamed, but keep the state machine honest
        state_ = State::done;
        return single_;
      }
      return std::nullopt;
    }
    if (c < 0) return damaged_end("the input ends inside the \"features\" array (truncated file?)");
    first_element_ = false;
    CutFeature f;
    f.line = src_.line();
    const auto at = src_.offset();
    std::size_t depth = 0;
    const Scan scan = scan_value(src_, f.text, &depth);
    if (scan == Scan::end_of_input) {
      return resynchronise(at, f.line, f.text,
                           "the input ends inside this feature, which starts at byte " + std::to_string(at) +
                               " (truncated file?)",
                           scan);
    }
    if (scan == Scan::unmatched) {
      const std::uint64_t bad = at + f.text.size() - 1;
      return resynchronise(at, f.line, f.text,
                           "unmatched \"" + f.text.substr(f.text.size() - 1) + "\" at byte " +
                               std::to_string(bad) + " in the feature that starts at byte " + std::to_string(at),
                           scan);
    }
    if (depth > max_json_depth) {
      InputFeature deep;
      deep.line = f.line;
      deep.error = "the feature at byte " + std::to_string(at) + " nests arrays and objects " + std::to_string(depth) +
                   " levels deep, more than the " + std::to_string(max_json_depth) + " this reader accepts";
      f.text.clear();
      f.read = std::move(deep);
      return f;
    }
    f.byte = at;
    return f;
  }

  /// The container ends badly after its last complete feature: recorded, no feature (none can be lost).
  std::optional<CutFeature> damaged_end(std::string message) {
    InputProblem p;
    p.first_byte = p.end_byte = src_.offset();
    p.line = src_.line();
    p.message = std::move(message);
    problems_.push_back(std::move(p));
    state_ = State::done;
    return std::nullopt;
  }

  /// The features array lost its way at byte `at` (line `line`); `consumed` holds the bytes cut from there on.
  /// Finds the next plausible feature start (next_feature_start) in them or further on, puts the bytes from there
  /// back into the source and returns one invalid feature standing for the span skipped. Without a later feature,
  /// the span runs to a final "]}" that closes the array and the object, or else to the end of the input.
  std::optional<CutFeature> resynchronise(std::uint64_t at, std::size_t line, std::string& consumed,
                                          const std::string& reason, Scan scan) {
    std::size_t found = next_feature_start(consumed, 1);
    if (found == std::string::npos && scan != Scan::end_of_input) {
      // Read on until a feature starts or the input ends (the search re-checks a short overlap each time).
      for (;;) {
        const std::string_view buf = src_.buffered();
        if (buf.empty()) break;
        const std::size_t from = consumed.size() > 16 ? consumed.size() - 16 : 1;
        consumed.append(buf.data(), buf.size());
        src_.consume(buf.size());
        found = next_feature_start(consumed, std::max<std::size_t>(from, 1));
        if (found != std::string::npos) break;
      }
    }
    std::uint64_t end = at + consumed.size();
    bool closes = false;
    if (found != std::string::npos) {
      src_.unread(std::string_view(consumed).substr(found));  // the feature reads as the next element
      end = at + found;
      first_element_ = true;
    } else {
      // A last "]" followed by "}" and nothing else closes the array and the object: the span ends before it.
      std::size_t k = consumed.size();
      while (k > 0 && is_json_space(static_cast<unsigned char>(consumed[k - 1]))) --k;
      if (k > 0 && consumed[k - 1] == '}') {
        --k;
        while (k > 0 && is_json_space(static_cast<unsigned char>(consumed[k - 1]))) --k;
        if (k > 0 && consumed[k - 1] == ']') {
          closes = true;
          end = at + (k - 1);
        }
      }
      state_ = State::done;
    }
    InputProblem p;
    p.first_byte = at;
    p.end_byte = end;
    p.line = line;
    p.position = FormatReader::row_pending;
    p.message = reason + "; bytes " + std::to_string(at) + " to " + std::to_string(end) + " (" +
                std::to_string(end - at) + " bytes) were skipped";
    if (found != std::string::npos) p.message += " and reading resumed at the feature at byte " + std::to_string(end);
    else if (!closes) p.message += " up to the end of the input, where no later feature could be found";
    p.message += "; features inside them may be lost";
    InputFeature skipped;
    skipped.line = line;
    skipped.error = p.message;
    problems_.push_back(std::move(p));
    CutFeature f;
    f.line = line;
    f.read = std::move(skipped);
    return f;
  }

  Source& src_;
  const ReaderOptions& options_;
  State state_ = State::start;
  std::optional<std::string> type_;
  std::string crs_;  // the top-level "crs" member's name (2008 GeoJSON), empty when none
  std::vector<std::pair<std::string, std::string>> members_;
  std::optional<CutFeature> single_;
  std::vector<InputProblem>& problems_;
  bool streamed_ = false;
  bool first_element_ = true;
  bool expect_member_ = false;
};

class NdjsonReader final : public FormatReader {
 public:
  NdjsonReader(Source& src, const ReaderOptions& options) : src_(src), options_(options) {
    src_.skip_bom();
  }

  std::optional<CutFeature> next_raw() override {
    for (;;) {
      // Skip blank space between texts (blank lines are not features).
      while (is_json_space(src_.peek())) src_.get();
      const int c = src_.peek();
      if (c < 0) return std::nullopt;
      CutFeature f;
      f.line_in_messages = true;
      f.line = src_.line();
      std::uint64_t at = src_.offset();
      if (c == 0x1E) {  // RFC 8142 / RFC 7464: RS, then a JSON text, up to the next RS (not consumed)
        src_.get();
        at = src_.offset();
        f.line = src_.line();
        cut_until(f.text, '\x1E', false);
      } else {  // one line; its LF is consumed, not kept
        cut_until(f.text, '\n', true);
      }
      if (f.text.find_first_not_of(" \t\r\n") == std::string::npos) continue;  // an empty record
      f.byte = at;
      return f;
    }
  }

 private:
  /// Appends the bytes up to `stop` (or the end of the input) to `text`, a buffer at a time; consumes `stop` too
  /// when `consume_stop`. Leaves SIMDJSON_PADDING spare bytes of capacity (see scan_value).
  void cut_until(std::string& text, char stop, bool consume_stop) {
    for (;;) {
      const std::string_view buf = src_.buffered();
      if (buf.empty()) return;
      const void* hit = std::memchr(buf.data(), stop, buf.size());
      const std::size_t n = hit ? static_cast<std::size_t>(static_cast<const char*>(hit) - buf.data()) : buf.size();
      if (text.capacity() < text.size() + n + simdjson::SIMDJSON_PADDING)
        text.reserve(std::max(2 * text.capacity(), text.size() + n + simdjson::SIMDJSON_PADDING));
      text.append(buf.data(), n);
      if (hit) {
        src_.consume(consume_stop ? n + 1 : n);
        return;
      }
      src_.consume(n);
    }
  }

  Source& src_;
  const ReaderOptions& options_;
};

}  // namespace

std::unique_ptr<FormatReader> make_geojson_reader(Source& source, const ReaderOptions& options) {
  return std::make_unique<GeoJsonReader>(source, options);
}

std::unique_ptr<FormatReader> make_ndjson_reader(Source& source, const ReaderOptions& options) {
  return std::make_unique<NdjsonReader>(source, options);
}

void parse_json_feature(const CutFeature& raw, const ReaderOptions& options, InputFeature& f) {
  if (!feature_from_text_fast(raw.text, options, f)) feature_from_text_reference(raw.text, raw.byte, options, f);
  finish_json_feature(raw, f);
}

void parse_json_feature_reference(const CutFeature& raw, const ReaderOptions& options, InputFeature& f) {
  feature_from_text_reference(raw.text, raw.byte, options, f);
  finish_json_feature(raw, f);
}

}  // namespace detail
}  // namespace gridtruth
