// What every fuzz target asks of an audit result: a result labelled `ok` carries finite figures (a NaN or infinite
// measure labelled ok is the worst defect the tool can have), and any other result says why.
#pragma once

#include <cmath>
#include <cstdlib>
#include <optional>

#include "gridtruth/audit.hpp"

namespace gridtruth::fuzz {

inline void check_budget(const std::optional<Budget>& b) {
  if (!b) return;
  for (double v : {b->reference, b->grid, b->error, b->from_edges, b->from_scale, b->from_datum, b->from_height})
    if (!std::isfinite(v)) std::abort();
}

/// Aborts (a finding) when `r` breaks the invariants above.
inline void check_result(const AuditResult& r) {
  if (r.status == Status::ok) {
    check_budget(r.length);
    check_budget(r.area);
  } else if (r.message.empty()) {
    std::abort();
  }
}

}  // namespace gridtruth::fuzz
