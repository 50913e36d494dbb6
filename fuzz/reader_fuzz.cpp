// libFuzzer entry point: feeds arbitrary bytes to every reader and to the WKT parser.
// Allowed outcomes: features (each with a geometry or an error, never both missing), or gridtruth::Error.
// Anything else (a crash, a sanitizer report, another exception, a broken invariant) is a finding.
#include <cstddef>
#include <cstdint>
#include <cstdlib>
#include <sstream>
#include <string>

#include "gridtruth/error.hpp"
#include "gridtruth/io.hpp"

namespace {

void read_everything(const std::string& text, gridtruth::InputFormat format, const char* id_field) {
  std::istringstream in(text);
  gridtruth::ReaderOptions options;
  options.format = format;
  options.id_field = id_field;
  gridtruth::FeatureReader reader(in, options);
  std::size_t count = 0;
  try {
    while (auto f = reader.next()) {
      ++count;
      if (f->position != count) std::abort();
      if (f->id.empty()) std::abort();
      if (f->geometry.has_value() == !f->error.empty()) std::abort();  // exactly one of geometry and error
      if (f->geometry) (void)gridtruth::validate(*f->geometry);
    }
  } catch (const gridtruth::Error&) {
  }
}

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const std::string text(reinterpret_cast<const char*>(data), size);
  read_everything(text, gridtruth::InputFormat::automatic, "");
  read_everything(text, gridtruth::InputFormat::geojson, "id");
  read_everything(text, gridtruth::InputFormat::ndjson, "");
  read_everything(text, gridtruth::InputFormat::csv, "");
  try {
    (void)gridtruth::parse_wkt(text);
  } catch (const gridtruth::Error&) {
  }
  return 0;
}
