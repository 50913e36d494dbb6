// gridtruth — parsing one GeoJSON Feature (or bare geometry) text cut by the GeoJSON or ndjson reader.
//
// Parsing uses simdjson's DOM API; the conversion to a feature is one template over two JSON adapters, so that it
// says the same things, in the same order, whichever parser read the text. nlohmann-json parses a text instead
// when its result must be exactly nlohmann's: malformed JSON (its messages and byte offsets are the readers'
// contract), \u escapes (lone surrogates), and a zero with a minus sign (nlohmann reads "-0" as the integer 0).
#include <cmath>
#include <cstdint>
#include <cstring>
#include <memory>
#include <nlohmann/json.hpp>
#include <simdjson.h>
#include <string>
#include <utility>

#include "gridtruth/io.hpp"
#include "io_detail.hpp"
#include "io_json_lexer.hpp"

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

}  // namespace

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
