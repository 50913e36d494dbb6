#include "core/enum_names.hpp"
#include "gridtruth/crs.hpp"

#include <array>
#include <fcntl.h>
#include <limits.h>
#include <sys/stat.h>
#include <unistd.h>

#include <algorithm>
#include <atomic>
#include <cstdio>
#include <cstdlib>
#include <vector>
#include <cctype>
#include <cmath>

#include "gridtruth/error.hpp"
#include "proj_handles.hpp"

namespace gridtruth {
namespace detail {

namespace {

std::atomic<CrsFileAccess> file_access{CrsFileAccess::any};

// ---- A PROJ file API that opens only regular files inside PROJ's data directories -------------------------------

/// The data directories, resolved (symbolic links, ".."), each ending in "/". Read once: PROJ reads its
/// environment once too.
const std::vector<std::string>& data_directories() {
  static const std::vector<std::string> dirs = [] {
    std::vector<std::string> out;
    std::string paths = proj_info().searchpath ? proj_info().searchpath : "";
    Context ctx(proj_context_create());
    if (ctx) {
      if (const char* user = proj_context_get_user_writable_directory(ctx.get(), 0)) paths += std::string(":") + user;
    }
    std::size_t start = 0;
    while (start <= paths.size()) {
      std::size_t end = paths.find_first_of(":;", start);
      if (end == std::string::npos) end = paths.size();
      const std::string dir = paths.substr(start, end - start);
      char resolved[PATH_MAX];
      if (!dir.empty() && ::realpath(dir.c_str(), resolved) != nullptr) {
        std::string r = resolved;
        if (r.back() != '/') r += '/';
        out.push_back(r);
      }
      start = end + 1;
    }
    return out;
  }();
  return dirs;
}

/// Whether `filename` resolves to a regular file inside a data directory.
bool allowed_file(const char* filename) {
  char resolved[PATH_MAX];
  if (filename == nullptr || ::realpath(filename, resolved) == nullptr) return false;
  const std::string path = resolved;
  bool inside = false;
  for (const std::string& dir : data_directories()) inside = inside || path.compare(0, dir.size(), dir) == 0;
  struct stat st {};
  return inside && ::stat(resolved, &st) == 0 && S_ISREG(st.st_mode);
}

PROJ_FILE_HANDLE* restricted_open(PJ_CONTEXT*, const char* filename, PROJ_OPEN_ACCESS access, void*) {
  if (access != PROJ_OPEN_ACCESS_READ_ONLY || !allowed_file(filename)) return nullptr;
  // O_NONBLOCK: even a FIFO swapped in after the check cannot block the open; fstat then refuses it.
  const int fd = ::open(filename, O_RDONLY | O_NONBLOCK | O_CLOEXEC);
  if (fd < 0) return nullptr;
  struct stat st {};
  if (::fstat(fd, &st) != 0 || !S_ISREG(st.st_mode)) {
    ::close(fd);
    return nullptr;
  }
  ::fcntl(fd, F_SETFL, ::fcntl(fd, F_GETFL) & ~O_NONBLOCK);
  FILE* file = ::fdopen(fd, "rb");
  if (file == nullptr) ::close(fd);
  return reinterpret_cast<PROJ_FILE_HANDLE*>(file);
}
std::size_t restricted_read(PJ_CONTEXT*, PROJ_FILE_HANDLE* h, void* buffer, std::size_t n, void*) {
  return std::fread(buffer, 1, n, reinterpret_cast<FILE*>(h));
}
std::size_t restricted_write(PJ_CONTEXT*, PROJ_FILE_HANDLE*, const void*, std::size_t, void*) { return 0; }
int restricted_seek(PJ_CONTEXT*, PROJ_FILE_HANDLE* h, long long offset, int whence, void*) {
  return ::fseeko(reinterpret_cast<FILE*>(h), static_cast<off_t>(offset), whence) == 0;
}
unsigned long long restricted_tell(PJ_CONTEXT*, PROJ_FILE_HANDLE* h, void*) {
  return static_cast<unsigned long long>(::ftello(reinterpret_cast<FILE*>(h)));
}
void restricted_close(PJ_CONTEXT*, PROJ_FILE_HANDLE* h, void*) { std::fclose(reinterpret_cast<FILE*>(h)); }
int restricted_exists(PJ_CONTEXT*, const char* filename, void*) { return allowed_file(filename); }
int restricted_refuse_path(PJ_CONTEXT*, const char*, void*) { return 0; }
int restricted_rename(PJ_CONTEXT*, const char*, const char*, void*) { return 0; }

const PROJ_FILE_API restricted_file_api = {1,
                                           restricted_open,
                                           restricted_read,
                                           restricted_write,
                                           restricted_seek,
                                           restricted_tell,
                                           restricted_close,
                                           restricted_exists,
                                           restricted_refuse_path,
                                           restricted_refuse_path,
                                           restricted_rename};

}  // namespace

Context make_context() {
  Context ctx(proj_context_create());
  if (!ctx) throw Error(ErrorCode::unknown_crs, "cannot create a PROJ context");
  proj_log_level(ctx.get(), PJ_LOG_NONE);
  proj_context_set_enable_network(ctx.get(), 0);
  if (file_access.load() == CrsFileAccess::data_directories &&
      !proj_context_set_fileapi(ctx.get(), &restricted_file_api, nullptr))
    throw Error(ErrorCode::unknown_crs, "cannot restrict the files PROJ may open");
  return ctx;
}

std::string last_error(PJ_CONTEXT* ctx) {
  const int err = proj_context_errno(ctx);
  if (err == 0) return {};
  const char* text = proj_context_errno_string(ctx, err);
  // PROJ's text for a code it has no words for ("Unknown error (code 4096)") names nothing: say what is known.
  if (text == nullptr || std::string(text).rfind("Unknown error", 0) == 0) {
    if (err == PROJ_ERR_OTHER) return "PROJ gave no reason";
    if (err >= PROJ_ERR_INVALID_OP && err < PROJ_ERR_COORD_TRANSFM)
      return "PROJ cannot build this operation (error " + std::to_string(err) + ")";
    return "PROJ error " + std::to_string(err);
  }
  return text;
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

void set_crs_file_access(CrsFileAccess access) noexcept { detail::file_access.store(access); }
CrsFileAccess crs_file_access() noexcept { return detail::file_access.load(); }

bool same_crs(const std::string& a, const std::string& b) {
  detail::Context ctx = detail::make_context();
  const detail::Pj pa = detail::resolve_crs(ctx.get(), a);
  const detail::Pj pb = detail::resolve_crs(ctx.get(), b);
  return proj_is_equivalent_to_with_ctx(ctx.get(), pa.get(), pb.get(),
                                        PJ_COMP_EQUIVALENT_EXCEPT_AXIS_ORDER_GEOGCRS) != 0;
}

namespace {
constexpr std::array<detail::EnumName<CrsKind>, 4> kCrsKindNames = {
    {{CrsKind::geographic, "geographic"},
     {CrsKind::projected, "projected"},
     {CrsKind::geocentric, "geocentric"},
     {CrsKind::other, "other"}}};
}  // namespace

std::string_view to_string(CrsKind kind) noexcept {
  return detail::name_of(kCrsKindNames, kind);
}

namespace {
constexpr std::array<detail::EnumName<CrsFileAccess>, 2> kCrsFileAccessNames = {
    {{CrsFileAccess::any, "any"},
     {CrsFileAccess::data_directories, "data_directories"}}};
}  // namespace

std::string_view to_string(CrsFileAccess access) noexcept {
  return detail::name_of(kCrsFileAccessNames, access);
}

}  // namespace gridtruth
