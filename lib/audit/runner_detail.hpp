// Internal: what the runners (lib/audit/runner.cpp) and the Python binding (python/src/module.cpp, which has lib/
// on its private include path) share about features that could not be read.
#pragma once

#include "gridtruth/audit.hpp"
#include "gridtruth/io.hpp"

namespace gridtruth::detail {

/// The result given to a feature the reader could not understand (no geometry): `invalid`, with the reader's
/// message ("the feature has no geometry" when it gave none) and the declared geometry type when known.
AuditResult unread_result(const InputFeature& feature);

}  // namespace gridtruth::detail
