// Internal: RAII ownership of PROJ objects and CRS resolution shared by crs.cpp and the auditor (lib/audit/auditor.cpp).
#pragma once

#include <proj.h>

#include <memory>
#include <string>

#include "gridtruth/crs.hpp"

namespace gridtruth::detail {

struct ContextDeleter {
  void operator()(PJ_CONTEXT* ctx) const noexcept { proj_context_destroy(ctx); }
};
struct PjDeleter {
  void operator()(PJ* pj) const noexcept { proj_destroy(pj); }
};
using Context = std::unique_ptr<PJ_CONTEXT, ContextDeleter>;
using Pj = std::unique_ptr<PJ, PjDeleter>;

/// A fresh PROJ context that logs nothing and never touches the network.
Context make_context();

/// The last PROJ error of the context as text ("" when none).
std::string last_error(PJ_CONTEXT* ctx);

/// Makes a CRS of any definition PROJ accepts; a PROJ string without "+type=crs" gets it appended.
/// Throws Error(unknown_crs) naming the definition.
Pj resolve_crs(PJ_CONTEXT* ctx, const std::string& definition);

/// The horizontal CRS (the first component of a compound CRS, the base of a bound CRS), not owned by the caller
/// when it is `crs` itself: returns a new object always.
Pj horizontal_crs(PJ_CONTEXT* ctx, const PJ* crs);

/// Describes a resolved CRS.
CrsInfo describe(PJ_CONTEXT* ctx, const PJ* crs, const std::string& definition);

}  // namespace gridtruth::detail
