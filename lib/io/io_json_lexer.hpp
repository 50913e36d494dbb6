// gridtruth — the lexical cutting of JSON texts shared by the GeoJSON and ndjson readers and the parser (internal,
// not installed): strings, escapes and bracket nesting tracked over buffered bytes, without parsing.
#pragma once

#include <algorithm>
#include <cstddef>
#include <string>
#include <string_view>
#include <vector>

#include "io_detail.hpp"

namespace gridtruth::detail {

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
inline constexpr StructuralTable structural{};

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

/// Whether a JSON text nests arrays and objects deeper than `limit` (lexically; a malformed text is measured as far
/// as its brackets go).
bool nested_deeper_than(std::string_view text, std::size_t limit);

/// Cuts one JSON value out of the source (lexically: strings, escapes and bracket nesting). Objects and arrays are
/// scanned over the buffered bytes and appended in bulk, with SIMDJSON_PADDING spare bytes of capacity so the
/// parser can read the text in place. On `unmatched` the text ends with the bracket that did not match; on
/// `end_of_input` it holds the rest of the input. `depth_max` (when given) receives the deepest nesting seen.
Scan scan_value(Source& src, std::string& out, std::size_t* depth_max = nullptr);

/// Reserves room in `text` for `n` more bytes plus SIMDJSON_PADDING spare bytes of capacity, so that simdjson can
/// parse the finished text in place (growing geometrically).
void reserve_padded(std::string& text, std::size_t n);

}  // namespace gridtruth::detail
