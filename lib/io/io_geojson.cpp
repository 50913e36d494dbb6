// gridtruth — GeoJSON (RFC 7946) reader: a FeatureCollection is streamed, a Feature or XCollection is streamed: the top-level object is scanned lexically and each element of its "features"
// array is cut out (strings, escapes and bracket nesting tracked, scanning the buffered bytes in bulk) and parsed
// on its own, so a malformed feature gives one invalid feature and the others are still read. A Feature or bare
// geometry document is read whole. Cutting (next_raw) and parsing (parse_json_feature) are apart so that parsing
// can run on worker threads.
//
// The features are parsed by parse_json_feature (io_geojson_parse.cpp); the lexical cutting is in io_json_lexer.*.
#include <algorithm>
#include <cstdint>
#include <cstdio>
#include <memory>
#include <nlohmann/json.hpp>
#include <string>
#include <utility>
#include <vector>

#include "gridtruth/error.hpp"
#include "gridtruth/io.hpp"
#include "io_detail.hpp"
#include "io_json_lexer.hpp"

namespace gridtruth {
namespace detail {
namespace {

using nlohmann::json;


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

}  // namespace

std::unique_ptr<FormatReader> make_geojson_reader(Source& source, const ReaderOptions& options) {
  return std::make_unique<GeoJsonReader>(source, options);
}

}  // namespace detail
}  // namespace gridtruth
