#include "gridtruth/crs.hpp"

#include <algorithm>
#include <cctype>
#include <cmath>

#include "gridtruth/error.hpp"
#include "proj_handles.hpp"

namespace gridtruth {
namespace detail {

Context make_context() {
  Context ctx(proj_context_create());
  if (!ctx) throw Error(ErrorCode::unknown_crs, "cannot create a PROJ context");
  proj_log_level(ctx.get(), PJ_LOG_NONE);
  proj_context_set_enable_network(ctx.get(), 0);
  return ctx;
}

std::string last_error(PJ_CONTEXT* ctx) {
  const int err = proj_context_errno(ctx);
  if (err == 0) return {};
  const char* text = proj_context_errno_string(ctx, err);
  return text ? text : "PROJ error " + std::to_string(err);
}

namespace {

std::string trim(const std::string& s) {
  const auto first = std::find_if_not(s.begin(), s.end(), [](unsigned char c) { return std::isspace(c); });
  const auto last = std::find_if_not(s.rbegin(), s.rend(), [](unsigned char c) { return std::isspace(c); }).base();
  return first < last ? std::string(first, last) : std::string();
}

bool is_crs_type(PJ_TYPE type) {
  switch (type) {
    case PJ_TYPE_GEOGRAPHIC_2D_CRS:
    case PJ_TYPE_GEOGRAPHIC_3D_CRS:
    case PJ_TYPE_GEOGRAPHIC_CRS:
    case PJ_TYPE_GEODETIC_CRS:
    case PJ_TYPE_GEOCENTRIC_CRS:
    case PJ_TYPE_PROJECTED_CRS:
    case PJ_TYPE_COMPOUND_CRS:
    case PJ_TYPE_BOUND_CRS:
    case PJ_TYPE_VERTICAL_CRS:
    case PJ_TYPE_ENGINEERING_CRS:
    case PJ_TYPE_TEMPORAL_CRS:
    case PJ_TYPE_OTHER_CRS:
      return true;
    default:
      return false;
  }
}

std::string shorten(const std::string& s) {
  constexpr std::size_t limit = 120;
  return s.size() <= limit ? s : s.substr(0, limit) + "...";
}

}  // namespace

Pj resolve_crs(PJ_CONTEXT* ctx, const std::string& definition) {
  std::string text = trim(definition);
  if (text.empty()) throw Error(ErrorCode::unknown_crs, "empty CRS definition");
  if (text[0] == '+' && text.find("+type=crs") == std::string::npos) text += " +type=crs";
  Pj crs(proj_create(ctx, text.c_str()));
  if (!crs) {
    const std::string why = last_error(ctx);
    throw Error(ErrorCode::unknown_crs,
                "unknown CRS '" + shorten(definition) + "'" + (why.empty() ? "" : ": " + why));
  }
  if (!is_crs_type(proj_get_type(crs.get()))) {
    throw Error(ErrorCode::unknown_crs,
                "'" + shorten(definition) + "' is a coordinate operation, not a coordinate reference system");
  }
  return crs;
}

Pj horizontal_crs(PJ_CONTEXT* ctx, const PJ* crs) {
  Pj current(proj_clone(ctx, crs));
  for (int guard = 0; guard < 4 && current; ++guard) {
    const PJ_TYPE type = proj_get_type(current.get());
    if (type == PJ_TYPE_COMPOUND_CRS) {
      current.reset(proj_crs_get_sub_crs(ctx, current.get(), 0));
    } else if (type == PJ_TYPE_BOUND_CRS) {
      current.reset(proj_get_source_crs(ctx, current.get()));
    } else {
      break;
    }
  }
  return current;
}

CrsInfo describe(PJ_CONTEXT* ctx, const PJ* crs, const std::string& definition) {
  CrsInfo info;
  info.definition = definition;
  Pj horizontal = horizontal_crs(ctx, crs);
  if (!horizontal) throw Error(ErrorCode::unsupported_crs, "'" + shorten(definition) + "' has no horizontal CRS");
  const PJ* h = horizontal.get();
  if (const char* name = proj_get_name(crs)) info.name = name;
  if (const char* auth = proj_get_id_auth_name(crs, 0)) {
    if (const char* code = proj_get_id_code(crs, 0)) info.id = std::string(auth) + ":" + code;
  }
  switch (proj_get_type(h)) {
    case PJ_TYPE_GEOGRAPHIC_2D_CRS:
    case PJ_TYPE_GEOGRAPHIC_3D_CRS:
    case PJ_TYPE_GEOGRAPHIC_CRS:
      info.kind = CrsKind::geographic;
      break;
    case PJ_TYPE_PROJECTED_CRS:
      info.kind = CrsKind::projected;
      break;
    case PJ_TYPE_GEOCENTRIC_CRS:
      info.kind = CrsKind::geocentric;
      break;
    default:
      info.kind = CrsKind::other;
  }
  if (Pj ellipsoid{proj_get_ellipsoid(ctx, h)}) {
    double a = 0, b = 0, inv_f = 0;
    int b_computed = 0;
    if (proj_ellipsoid_get_parameters(ctx, ellipsoid.get(), &a, &b, &b_computed, &inv_f)) {
      info.ellipsoid.a_m = a;
      info.ellipsoid.f = inv_f > 0 && std::isfinite(inv_f) ? 1.0 / inv_f : (a > 0 ? (a - b) / a : 0.0);
    }
    if (const char* name = proj_get_name(ellipsoid.get())) info.ellipsoid.name = name;
  }
  if (Pj geodetic{proj_crs_get_geodetic_crs(ctx, h)}) {
    if (const char* name = proj_get_name(geodetic.get())) info.base_geographic_name = name;
    Pj datum(proj_crs_get_datum_forced(ctx, geodetic.get()));
    if (datum) {
      if (const char* name = proj_get_name(datum.get())) info.datum_name = name;
    }
  }
  if (info.kind == CrsKind::projected) {
    if (Pj cs{proj_crs_get_coordinate_system(ctx, h)}) {
      double factor = 1;
      const char* unit_name = nullptr;
      if (proj_cs_get_axis_count(ctx, cs.get()) > 0 &&
          proj_cs_get_axis_info(ctx, cs.get(), 0, nullptr, nullptr, nullptr, &factor, &unit_name, nullptr,
                                nullptr)) {
        info.linear_unit_m = factor;
        if (unit_name) info.linear_unit_name = unit_name;
      }
    }
  }
  double west = 0, south = 0, east = 0, north = 0;
  const char* area_name = nullptr;
  if (proj_get_area_of_use(ctx, crs, &west, &south, &east, &north, &area_name) && west > -1000) {
    info.area_of_use = AreaOfUse{area_name ? area_name : "", west, south, east, north};
  }
  return info;
}

}  // namespace detail

CrsInfo describe_crs(const std::string& definition) {
  detail::Context ctx = detail::make_context();
  detail::Pj crs = detail::resolve_crs(ctx.get(), definition);
  return detail::describe(ctx.get(), crs.get(), definition);
}

bool same_crs(const std::string& a, const std::string& b) {
  detail::Context ctx = detail::make_context();
  const detail::Pj pa = detail::resolve_crs(ctx.get(), a);
  const detail::Pj pb = detail::resolve_crs(ctx.get(), b);
  return proj_is_equivalent_to_with_ctx(ctx.get(), pa.get(), pb.get(),
                                        PJ_COMP_EQUIVALENT_EXCEPT_AXIS_ORDER_GEOGCRS) != 0;
}

}  // namespace gridtruth
