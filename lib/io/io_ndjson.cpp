// gridtruth — newline-delimited GeoJSON reader: one JSON text a line, RFC 8142 record separators tolerated. Each
// text is cut here and parsed by parse_json_feature (io_geojson_parse.cpp), maybe on a worker thread.
#include <cstring>
#include <memory>
#include <string>

#include "gridtruth/io.hpp"
#include "io_detail.hpp"
#include "io_json_lexer.hpp"

namespace gridtruth {
namespace detail {
namespace {

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
      reserve_padded(text, n);
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

std::unique_ptr<FormatReader> make_ndjson_reader(Source& source, const ReaderOptions& options) {
  return std::make_unique<NdjsonReader>(source, options);
}

}  // namespace detail
}  // namespace gridtruth
