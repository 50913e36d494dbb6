// gridtruth — the lexical cutting of JSON texts (see io_json_lexer.hpp).
#include "io_json_lexer.hpp"

#include <simdjson.h>

namespace gridtruth::detail {

bool nested_deeper_than(std::string_view text, std::size_t limit) {
  const std::size_t open = text.find_first_of("{[");
  if (open == std::string_view::npos) return false;
  BracketLexer lexer;
  std::size_t used = 0;
  lexer.feed(text.data() + open, text.size() - open, used);
  return lexer.depth_max > limit;
}

void reserve_padded(std::string& text, std::size_t n) {
  if (text.capacity() < text.size() + n + simdjson::SIMDJSON_PADDING)
    text.reserve(std::max(2 * text.capacity(), text.size() + n + simdjson::SIMDJSON_PADDING));
}

Scan scan_value(Source& src, std::string& out, std::size_t* depth_max) {
  out.clear();
  int c = src.peek();
  if (c == '{' || c == '[') {
    BracketLexer lexer;
    for (;;) {
      const std::string_view buf = src.buffered();
      if (buf.empty()) return Scan::end_of_input;
      std::size_t used = 0;
      const Scan scan = lexer.feed(buf.data(), buf.size(), used);
      reserve_padded(out, used);
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

}  // namespace gridtruth::detail
