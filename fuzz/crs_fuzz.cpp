// libFuzzer entry point: arbitrary bytes as a CRS definition (EPSG code, WKT, PROJJSON, PROJ string), through
// what the library does with such a string: describe_crs(), an Auditor with it as the target and as the source,
// and, when one can be built, the audit of a small square at the centre of the CRS's area of use.
// Allowed outcomes: gridtruth::Error from set-up; results from audit() (it never throws). A result labelled
// `ok` must carry finite figures. Anything else (a crash, a sanitizer report, another exception) is a finding.
//
// PROJ runs with networking off (detail::make_context). Definitions that name files are skipped: PROJ opens the
// path given by +init=, +nadgrids=, +grids=, +geoidgrids= and the like (and a FIFO there blocks forever), so a
// fuzzer could make it read or hang on any file of the machine. That is the job of the CLI's CRS trust rule, not
// of this target; fuzz/run.sh also gives each input a short timeout.
#include <algorithm>
#include <cctype>
#include <cmath>
#include <cstddef>
#include <cstdint>
#include <cstdlib>
#include <optional>
#include <string>

#include "gridtruth/audit.hpp"
#include "gridtruth/crs.hpp"
#include "gridtruth/error.hpp"
#include "gridtruth/geometry.hpp"
#include "audit_invariants.hpp"

namespace {

bool names_a_file(std::string text) {
  std::transform(text.begin(), text.end(), text.begin(), [](unsigned char c) { return std::tolower(c); });
  for (const char* word : {"init", "grids", "grid=", "file", "model", "tinshift", "@"})
    if (text.find(word) != std::string::npos) return true;
  return false;
}

void audit_with(const gridtruth::AuditOptions& options, gridtruth::Coord centre) {
  std::optional<gridtruth::Auditor> auditor;
  try {
    auditor.emplace(options);
  } catch (const gridtruth::Error&) {
    return;
  }
  constexpr double half_deg = 0.01;
  const auto square = gridtruth::Geometry::polygon({{centre.x - half_deg, centre.y - half_deg},
                                                    {centre.x + half_deg, centre.y - half_deg},
                                                    {centre.x + half_deg, centre.y + half_deg},
                                                    {centre.x - half_deg, centre.y + half_deg}});
  gridtruth::fuzz::check_result(auditor->audit(square));
}

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const std::string text(reinterpret_cast<const char*>(data), size);
  if (text.find('\0') != std::string::npos || names_a_file(text)) return 0;
  gridtruth::CrsInfo info;
  try {
    info = gridtruth::describe_crs(text);
  } catch (const gridtruth::Error&) {
    return 0;
  }
  gridtruth::Coord centre{0, 0};
  if (info.area_of_use) {
    const auto& a = *info.area_of_use;
    if (!(a.west_deg > a.east_deg))  // an area across the antimeridian keeps the default centre
      centre = {(a.west_deg + a.east_deg) / 2, (a.south_deg + a.north_deg) / 2};
    centre.y = std::clamp(centre.y, -89.0, 89.0);
  }
  gridtruth::AuditOptions as_target;
  as_target.target_crs = text;
  audit_with(as_target, centre);
  gridtruth::AuditOptions as_source;
  as_source.source_crs = text;
  as_source.target_crs = "EPSG:3857";
  if (info.kind == gridtruth::CrsKind::geographic) audit_with(as_source, centre);
  return 0;
}
