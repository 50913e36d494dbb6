// libFuzzer entry point: arbitrary bytes as simple-features WKT, then every parsed geometry through validation
// and a full audit against UTM zone 15N. Allowed outcomes: gridtruth::Error(parse) from the parser; a result from
// the audit (it never throws for a bad feature). A result labelled `ok` must carry finite figures: a measure that
// is NaN or infinite but labelled ok is the worst defect the tool can have. Anything else (a crash, a sanitizer
// report, another exception, a broken invariant) is a finding.
#include <cmath>
#include <cstddef>
#include <cstdint>
#include <cstdlib>
#include <optional>
#include <string_view>

#include "gridtruth/audit.hpp"
#include "gridtruth/error.hpp"
#include "gridtruth/geometry.hpp"
#include "gridtruth/io.hpp"
#include "audit_invariants.hpp"

namespace {

const gridtruth::Auditor& auditor() {
  static const gridtruth::Auditor a = [] {
    gridtruth::AuditOptions options;
    options.target_crs = "EPSG:32615";
    options.tolerances = gridtruth::Tolerance::parse_list("area=0.05%,length=1:2000");
    return gridtruth::Auditor(options);
  }();
  return a;
}

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const std::string_view text(reinterpret_cast<const char*>(data), size);
  std::optional<gridtruth::Geometry> geometry;
  try {
    geometry = gridtruth::parse_wkt(text);
  } catch (const gridtruth::Error& e) {
    if (e.code() != gridtruth::ErrorCode::parse) std::abort();
    return 0;
  }
  (void)gridtruth::validate(*geometry);
  gridtruth::fuzz::check_result(auditor().audit(*geometry));
  return 0;
}
