// gridtruth — GeoJSON (RFC 7946) and newline-delimited GeoJSON (one text per line; RFC 8142 record separators
// tolerated) readers.
//
// A FeatureCollection is streamed: the top-level object is scanned lexically and each element of its "features"
// array is cut out (strings, escapes and bracket nesting tracked) and parsed on its own with nlohmann-json, so a
// malformed feature gives one invalid feature and the others are still read. A Feature or bare geometry document
// is read whole.
#include <cstdint>
#include <cstdio>
#include <nlohmann/json.hpp>
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

std::string json_type_name(const json& j) {
  switch (j.type()) {
    case json::value_t::null: return "null";
    case json::value_t::boolean: return "a boolean";
    case json::value_t::string: return "a string";
    case json::value_t::array: return "an array";
    case json::value_t::object: return "an object";
    case json::value_t::binary: return "binary data";
    case json::value_t::discarded: return "nothing";
    default: return "a number";
  }
}

/// Thrown inside the conversion of one feature; becomes the feature's error.
struct FeatureProblem {
  std::string message;
};

[[noreturn]] void problem(std::string message) { throw FeatureProblem{std::move(message)}; }

Coord position(const json& j, const std::string& where) {
  if (!j.is_array()) problem(where + ": a position is an array of numbers (RFC 7946 section 3.1.1), found " +
                             json_type_name(j));
  if (j.size() < 2) problem(where + ": a position needs at least 2 numbers (RFC 7946 section 3.1.1), found " +
                            std::to_string(j.size()));
  for (std::size_t k = 0; k < 2; ++k) {
    if (!j[k].is_number())
      problem(where + "[" + std::to_string(k) + "]: expected a number, found " + json_type_name(j[k]));
  }
  return Coord{j[0].get<double>(), j[1].get<double>()};
}

Path positions(const json& j, const std::string& where) {
  if (!j.is_array()) problem(where + ": expected an array of positions, found " + json_type_name(j));
  Path p;
  p.reserve(j.size());
  for (std::size_t k = 0; k < j.size(); ++k) p.push_back(position(j[k], where + "[" + std::to_string(k) + "]"));
  return p;
}

Polygon polygon(const json& j, const std::string& where) {
  if (!j.is_array()) problem(where + ": expected an array of rings, found " + json_type_name(j));
  Polygon poly;
  for (std::size_t k = 0; k < j.size(); ++k) {
    Path ring = positions(j[k], where + "[" + std::to_string(k) + "]");
    if (k == 0) poly.outer = std::move(ring);
    else poly.holes.push_back(std::move(ring));
  }
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

/// Converts a GeoJSON geometry object. `declared` is set as soon as the type is known.
Geometry geometry(const json& j, std::optional<GeometryType>& declared) {
  if (!j.is_object()) problem("geometry: expected a GeoJSON geometry object, found " + json_type_name(j));
  const auto t = j.find("type");
  if (t == j.end()) problem("geometry has no \"type\" member (RFC 7946 section 3.1)");
  if (!t->is_string()) problem("geometry \"type\" is " + json_type_name(*t) + ", not a string");
  const auto name = t->get<std::string>();
  if (name == "GeometryCollection")
    problem("GeometryCollection is not supported: give each member as a feature of its own");
  const auto type = geometry_type_named(name);
  if (!type) problem("unknown geometry type \"" + name + "\"");
  declared = type;
  const auto c = j.find("coordinates");
  if (c == j.end()) problem(name + " has no \"coordinates\" member (RFC 7946 section 3.1)");
  const json& coords = *c;
  Geometry g;
  g.type = *type;
  const std::string where = "coordinates";
  switch (*type) {
    case GeometryType::point:
      // RFC 7946 section 3.1 lets processors read an empty "coordinates" array as an empty geometry.
      if (coords.is_array() && coords.empty()) break;
      g.points.push_back(position(coords, where));
      break;
    case GeometryType::multi_point: g.points = positions(coords, where); break;
    case GeometryType::line_string:
      if (coords.is_array() && coords.empty()) break;
      g.lines.push_back(positions(coords, where));
      break;
    case GeometryType::multi_line_string:
      if (!coords.is_array()) problem(where + ": expected an array of line strings, found " + json_type_name(coords));
      for (std::size_t k = 0; k < coords.size(); ++k)
        g.lines.push_back(positions(coords[k], where + "[" + std::to_string(k) + "]"));
      break;
    case GeometryType::polygon:
      if (coords.is_array() && coords.empty()) break;
      g.polygons.push_back(polygon(coords, where));
      break;
    case GeometryType::multi_polygon:
      if (!coords.is_array()) problem(where + ": expected an array of polygons, found " + json_type_name(coords));
      for (std::size_t k = 0; k < coords.size(); ++k)
        g.polygons.push_back(polygon(coords[k], where + "[" + std::to_string(k) + "]"));
      break;
  }
  return g;
}

std::string id_text(const json& j) {
  if (j.is_string()) return j.get<std::string>();
  if (j.is_number_unsigned()) return std::to_string(j.get<std::uint64_t>());
  if (j.is_number_integer()) return std::to_string(j.get<std::int64_t>());
  if (j.is_number_float()) return format_number(j.get<double>());
  if (j.is_boolean()) return j.get<bool>() ? "true" : "false";
  return {};
}

/// Fills `f` from one parsed GeoJSON object (a Feature or a bare geometry).
void feature_from_json(const json& j, const ReaderOptions& options, InputFeature& f) {
  try {
    if (!j.is_object()) problem("expected a GeoJSON Feature object, found " + json_type_name(j));
    const auto t = j.find("type");
    if (t == j.end()) problem("object has no \"type\" member (RFC 7946 section 3)");
    if (!t->is_string()) problem("\"type\" is " + json_type_name(*t) + ", not a string");
    const auto name = t->get<std::string>();
    if (name == "Feature") {
      if (const auto props = j.find("properties"); props != j.end() && props->is_object()) {
        f.properties_json = props->dump();
      }
      if (const auto id = j.find("id"); id != j.end()) f.id = id_text(*id);
      if (f.id.empty() && !options.id_field.empty()) {
        const auto props = j.find("properties");
        if (props != j.end() && props->is_object()) {
          if (const auto v = props->find(options.id_field); v != props->end()) f.id = id_text(*v);
        }
      }
      const auto g = j.find("geometry");
      if (g == j.end()) problem("Feature has no \"geometry\" member (RFC 7946 section 3.2)");
      if (g->is_null()) problem("Feature has a null geometry (an unlocated feature, RFC 7946 section 3.2)");
      f.geometry = geometry(*g, f.declared_type);
      if (!options.height_field.empty()) {
        const auto props = j.find("properties");
        const json* v = nullptr;
        if (props != j.end() && props->is_object()) {
          if (const auto found = props->find(options.height_field); found != props->end()) v = &*found;
        }
        if (!v || v->is_null()) problem("height property \"" + options.height_field + "\" is missing or null");
        if (!v->is_number()) {
          problem("height property \"" + options.height_field + "\" is " + json_type_name(*v) + ", not a number");
        }
        f.height_m = v->get<double>();
      }
    } else if (name == "FeatureCollection") {
      problem("a FeatureCollection where a Feature belongs");
    } else {
      if (!options.height_field.empty()) {
        problem("a bare geometry has no properties, so no height property \"" + options.height_field + "\"");
      }
      f.geometry = geometry(j, f.declared_type);
    }
  } catch (const FeatureProblem& p) {
    f.geometry.reset();
    f.error = p.message;
  } catch (const json::exception& e) {  // a number out of range for get<>, and the like
    f.geometry.reset();
    f.error = e.what();
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

/// Parses one JSON text that starts at byte `base` of the input and fills `f` from it.
/// (`base` absent: the text was rebuilt, so byte offsets would not be the input's.)
void feature_from_text(const std::string& text, std::optional<std::uint64_t> base, const ReaderOptions& options,
                       InputFeature& f) {
  json j;
  try {
    j = json::parse(text);
  } catch (const json::parse_error& e) {
    f.error = base ? "malformed JSON at byte " + std::to_string(*base + (e.byte > 0 ? e.byte - 1 : 0)) + ": "
                   : std::string("malformed JSON: ");
    f.error += parse_error_text(e);
    return;
  } catch (const json::exception& e) {
    f.error = std::string("malformed JSON: ") + e.what();
    return;
  }
  feature_from_json(j, options, f);
}

enum class Scan { complete, end_of_input };

/// Cuts one JSON value out of the source (lexically: strings, escapes and bracket nesting). Throws Error(parse)
/// when brackets do not match.
Scan scan_value(Source& src, std::string& out) {
  out.clear();
  std::vector<char> stack;
  int c = src.peek();
  if (c == '{' || c == '[') {
    bool in_string = false;
    while ((c = src.get()) >= 0) {
      out.push_back(static_cast<char>(c));
      if (in_string) {
        if (c == '\\') {
          const int e = src.get();
          if (e < 0) return Scan::end_of_input;
          out.push_back(static_cast<char>(e));
        } else if (c == '"') {
          in_string = false;
        }
      } else if (c == '"') {
        in_string = true;
      } else if (c == '{' || c == '[') {
        stack.push_back(c == '{' ? '}' : ']');
      } else if (c == '}' || c == ']') {
        if (stack.empty() || stack.back() != c)
          throw Error(ErrorCode::parse, "unmatched \"" + std::string(1, static_cast<char>(c)) + "\" at byte " +
                                            std::to_string(src.offset() - 1) + " (line " +
                                            std::to_string(src.line()) + ")");
        stack.pop_back();
        if (stack.empty()) return Scan::complete;
      }
    }
    return Scan::end_of_input;
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
  GeoJsonReader(Source& src, const ReaderOptions& options) : src_(src), options_(options) {}

  std::optional<InputFeature> next() override {
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
    if (c < 0) container_error(src_, "empty input");
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
      if (scan_value(src_, value) != Scan::complete)
        container_error(src_, "the input ends inside the value of \"" + key + "\" (truncated?)");
      if (key == "type") {
        try {
          const auto t = json::parse(value);
          if (t.is_string()) type_ = t.get<std::string>();
        } catch (const json::exception&) {
          // reported when the object is parsed as a whole
        }
      }
      if (key == "features" && (!type_ || *type_ == "FeatureCollection") && !streamed_)
        container_error(src_, "\"features\" is not an array (RFC 7946 section 3.3)");
      members_.emplace_back(key_text, std::move(value));
      (void)at;
      after_member();
      if (state_ != State::members) return;
    }
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
    InputFeature f;
    f.line = 1;
    feature_from_text(text, std::nullopt, options_, f);
    single_ = std::move(f);
    state_ = State::single;
  }

  std::optional<InputFeature> next_feature() {
    skip_space(src_);
    int c = src_.peek();
    if (!first_element_) {
      if (c == ',') {
        src_.get();
        skip_space(src_);
        c = src_.peek();
      } else if (c != ']') {
        if (c < 0) container_error(src_, "the input ends inside the \"features\" array (truncated?)");
        container_error(src_, "expected \",\" or \"]\" between features, found " + describe_byte(c));
      }
    }
    if (c == ']' ) {
      src_.get();
      state_ = State::members;
      after_member();
      if (state_ == State::members) read_members();
      if (state_ == State::single) {  // cannot happen once streamed, but keep the state machine honest
        state_ = State::done;
        return single_;
      }
      return std::nullopt;
    }
    if (c < 0) container_error(src_, "the input ends inside the \"features\" array (truncated?)");
    first_element_ = false;
    InputFeature f;
    f.line = src_.line();
    const auto at = src_.offset();
    if (scan_value(src_, element_) == Scan::end_of_input) {
      f.error = "the input ends inside this feature, which starts at byte " + std::to_string(at) +
                " (truncated file?)";
      state_ = State::done;
      return f;
    }
    feature_from_text(element_, at, options_, f);
    return f;
  }

  Source& src_;
  const ReaderOptions& options_;
  State state_ = State::start;
  std::optional<std::string> type_;
  std::vector<std::pair<std::string, std::string>> members_;
  std::string element_;
  std::optional<InputFeature> single_;
  bool streamed_ = false;
  bool first_element_ = true;
  bool expect_member_ = false;
};

class NdjsonReader final : public FormatReader {
 public:
  NdjsonReader(Source& src, const ReaderOptions& options) : src_(src), options_(options) {
    src_.skip_bom();
  }

  std::optional<InputFeature> next() override {
    for (;;) {
      // Skip blank space between texts (blank lines are not features).
      while (is_json_space(src_.peek())) src_.get();
      int c = src_.peek();
      if (c < 0) return std::nullopt;
      InputFeature f;
      f.line = src_.line();
      std::uint64_t at = src_.offset();
      text_.clear();
      if (c == 0x1E) {  // RFC 8142 / RFC 7464: RS, then a JSON text, up to the next RS
        src_.get();
        at = src_.offset();
        f.line = src_.line();
        while ((c = src_.peek()) >= 0 && c != 0x1E) text_.push_back(static_cast<char>(src_.get()));
      } else {
        while ((c = src_.get()) >= 0 && c != '\n') text_.push_back(static_cast<char>(c));
      }
      if (text_.find_first_not_of(" \t\r\n") == std::string::npos) continue;  // an empty record
      feature_from_text(text_, at, options_, f);
      if (!f.error.empty() && f.error.rfind("malformed JSON", 0) == 0)
        f.error = "line " + std::to_string(f.line) + ": " + f.error;
      return f;
    }
  }

 private:
  Source& src_;
  const ReaderOptions& options_;
  std::string text_;
};

}  // namespace

std::unique_ptr<FormatReader> make_geojson_reader(Source& source, const ReaderOptions& options) {
  return std::make_unique<GeoJsonReader>(source, options);
}

std::unique_ptr<FormatReader> make_ndjson_reader(Source& source, const ReaderOptions& options) {
  return std::make_unique<NdjsonReader>(source, options);
}

}  // namespace detail
}  // namespace gridtruth
