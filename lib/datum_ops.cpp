// The candidate datum operations and PROJ's per-point choice among them (internal; see datum_ops.hpp).
#include "datum_ops.hpp"

#include <algorithm>
#include <cmath>
#include <cstring>
#include <sstream>

#include "gridtruth/error.hpp"

namespace gridtruth::detail {
namespace {

struct ListDeleter {
  void operator()(PJ_OBJ_LIST* list) const noexcept { proj_list_destroy(list); }
};
using List = std::unique_ptr<PJ_OBJ_LIST, ListDeleter>;

List operations_between(PJ_CONTEXT* c, const PJ* from, const PJ* to, PROJ_GRID_AVAILABILITY_USE use) {
  // The factory settings proj_create_crs_to_crs uses without network: candidates whose area of use meets the
  // CRSs' at all; `use` decides whether candidates lacking a grid are kept (listed) or dropped (applicable).
  PJ_OPERATION_FACTORY_CONTEXT* factory = proj_create_operation_factory_context(c, nullptr);
  if (!factory) return nullptr;
  proj_operation_factory_context_set_grid_availability_use(c, factory, use);
  proj_operation_factory_context_set_spatial_criterion(c, factory, PROJ_SPATIAL_CRITERION_PARTIAL_INTERSECTION);
  List list(proj_create_operations(c, from, to, factory));
  proj_operation_factory_context_destroy(factory);
  return list;
}

DatumOperation describe_operation(PJ_CONTEXT* c, const PJ* op) {
  DatumOperation d;
  if (const char* name = proj_get_name(op)) d.name = name;
  const double accuracy = proj_coordoperation_get_accuracy(c, op);
  if (accuracy >= 0) d.accuracy_m = accuracy;
  d.is_ballpark = proj_coordoperation_has_ballpark_transformation(c, op) != 0;
  const int grids = proj_coordoperation_get_grid_used_count(c, op);
  for (int k = 0; k < grids; ++k) {
    const char* short_name = nullptr;
    int available = 0;
    if (proj_coordoperation_get_grid_used(c, op, k, &short_name, nullptr, nullptr, nullptr, nullptr, nullptr,
                                          &available) &&
        !available) {
      d.missing_grids.emplace_back(short_name ? short_name : "?");
    }
  }
  d.grids_available = d.missing_grids.empty();
  double west = 0, south = 0, east = 0, north = 0;
  const char* area_name = nullptr;
  if (proj_get_area_of_use(c, op, &west, &south, &east, &north, &area_name) && west > -1000) {
    d.area = AreaOfUse{area_name ? area_name : "", west, south, east, north};
  }
  return d;
}

std::string accuracy_text(const DatumOperation& d) {
  if (d.is_ballpark) return "ballpark";
  if (!d.accuracy_m) return "accuracy unknown";
  std::ostringstream s;
  s << *d.accuracy_m << " m";
  return s.str();
}

bool overlaps(const std::optional<AreaOfUse>& a, const std::optional<AreaOfUse>& b) {
  if (!a || !b) return true;
  // Boxes across ±180° (west above east) are taken as the whole band of longitudes: a warning errs on saying more.
  const bool lon_ok = a->west_deg > a->east_deg || b->west_deg > b->east_deg ||
                      (a->west_deg <= b->east_deg && b->west_deg <= a->east_deg);
  return lon_ok && a->south_deg <= b->north_deg && b->south_deg <= a->north_deg;
}

// Degrees² the two boxes share (a box across ±180° or absent counts as the whole band of longitudes).
double shared_size(const std::optional<AreaOfUse>& a, const std::optional<AreaOfUse>& b) {
  auto west = [](const std::optional<AreaOfUse>& x) { return !x || x->west_deg > x->east_deg ? -180 : x->west_deg; };
  auto east = [](const std::optional<AreaOfUse>& x) { return !x || x->west_deg > x->east_deg ? 180 : x->east_deg; };
  const double width = std::min(east(a), east(b)) - std::max(west(a), west(b));
  const double height = std::min(a ? a->north_deg : 90, b ? b->north_deg : 90) -
                        std::max(a ? a->south_deg : -90, b ? b->south_deg : -90);
  return width > 0 && height > 0 ? width * height : 0;
}

}  // namespace

DatumCandidates::DatumCandidates(PJ_CONTEXT* c, const PJ* src_geog, const PJ* tgt) : ctx_(make_context()) {
  PJ_CONTEXT* own = ctx_.get();
  Pj from(proj_clone(own, src_geog)), to(proj_clone(own, tgt));
  if (!from || !to) throw Error(ErrorCode::no_transformation, "cannot copy the CRSs: " + last_error(c));
  if (Pj cs{proj_crs_get_coordinate_system(own, from.get())}) {
    const char* direction = nullptr;
    if (proj_cs_get_axis_info(own, cs.get(), 0, nullptr, nullptr, &direction, nullptr, nullptr, nullptr,
                              nullptr) &&
        direction) {
      latitude_first_ = std::strcmp(direction, "north") == 0 || std::strcmp(direction, "south") == 0;
    }
  }
  List all = operations_between(own, from.get(), to.get(), PROJ_GRID_AVAILABILITY_KNOWN_AVAILABLE);
  const int all_count = all ? proj_list_get_count(all.get()) : 0;
  for (int i = 0; i < all_count; ++i) {
    Pj op(proj_list_get(own, all.get(), i));
    if (op) operations_.push_back(describe_operation(own, op.get()));
  }
  pipelines_.assign(operations_.size(), "");
  List usable = operations_between(own, from.get(), to.get(), PROJ_GRID_AVAILABILITY_DISCARD_OPERATION_IF_MISSING_GRID);
  const int usable_count = usable ? proj_list_get_count(usable.get()) : 0;
  bool any = false;
  for (int i = 0; i < usable_count; ++i) {
    Pj op(proj_list_get(own, usable.get(), i));
    Pj normalized(op ? proj_normalize_for_visualization(own, op.get()) : nullptr);
    const char* def = normalized ? proj_as_proj_string(own, normalized.get(), PJ_PROJ_5, nullptr) : nullptr;
    std::size_t index = operations_.size() + usable_count;  // none: PROJ lists it, it cannot be applied
    if (op && def && proj_coordoperation_is_instantiable(own, op.get())) {
      const char* name = proj_get_name(op.get());
      const auto same = std::find_if(operations_.begin(), operations_.end(), [&](const DatumOperation& d) {
        return name && d.name == name;
      });
      index = static_cast<std::size_t>(same - operations_.begin());
      if (same == operations_.end()) {
        operations_.push_back(describe_operation(own, op.get()));
        pipelines_.emplace_back();
      }
      operations_[index].usable = true;
      operations_[index].proj_string = def;
      pipelines_[index] = def;
      if (!any) first_usable_ = index;
      any = true;
    }
    usable_to_index_.push_back(index);
  }
  if (!any) throw Error(ErrorCode::no_transformation, "PROJ has no usable operation between the CRSs");
  usable_ = usable.release();
  // The first proj_get_suggested_operation prepares PROJ's list; do it now, under no lock contention.
  (void)choose(0, 0);
}

DatumCandidates::~DatumCandidates() {
  if (usable_) proj_list_destroy(usable_);
}

std::optional<std::size_t> DatumCandidates::choose(double lon_deg, double lat_deg) const {
  if (!std::isfinite(lon_deg) || !std::isfinite(lat_deg)) return std::nullopt;
  const PJ_COORD at = latitude_first_ ? proj_coord(lat_deg, lon_deg, 0, 0) : proj_coord(lon_deg, lat_deg, 0, 0);
  int chosen = -1;
  {
    std::lock_guard<std::mutex> lock(mutex_);
    chosen = proj_get_suggested_operation(ctx_.get(), usable_, PJ_FWD, at);
  }
  if (chosen < 0 || static_cast<std::size_t>(chosen) >= usable_to_index_.size()) return std::nullopt;
  const std::size_t index = usable_to_index_[static_cast<std::size_t>(chosen)];
  if (index >= operations_.size()) return std::nullopt;
  return index;
}

std::size_t DatumCandidates::find(const std::string& auth_code) const {
  const std::size_t colon = auth_code.find(':');
  const std::string auth = auth_code.substr(0, colon), code = auth_code.substr(colon + 1);
  std::string name;
  {
    std::lock_guard<std::mutex> lock(mutex_);
    Pj op(proj_create_from_database(ctx_.get(), auth.c_str(), code.c_str(), PJ_CATEGORY_COORDINATE_OPERATION, 0,
                                    nullptr));
    if (!op) {
      throw Error(ErrorCode::invalid_argument, "datum operation '" + auth_code + "' is not in PROJ's database");
    }
    if (const char* n = proj_get_name(op.get())) name = n;
  }
  auto contains = [&name](const std::string& candidate) {
    std::size_t start = 0;
    while (start <= candidate.size()) {
      const std::size_t end = std::min(candidate.find(" + ", start), candidate.size());
      const std::string step = candidate.substr(start, end - start);
      if (step == name || step == "Inverse of " + name) return true;
      start = end + 3;
    }
    return false;
  };
  std::ostringstream names;
  for (std::size_t i = 0; i < operations_.size(); ++i) {
    const DatumOperation& d = operations_[i];
    if (!contains(d.name)) {
      names << (names.tellp() > 0 ? "; " : "") << d.name;
      continue;
    }
    if (d.usable) return i;
    std::string grids;
    for (const std::string& g : d.missing_grids) grids += (grids.empty() ? "" : ", ") + g;
    throw Error(ErrorCode::no_transformation, "datum operation '" + auth_code + "' (" + name + ") needs grid " +
                                                  grids + ", which is not installed (projsync --file NAME)");
  }
  throw Error(ErrorCode::no_transformation, "datum operation '" + auth_code + "' (" + name +
                                                ") does not transform between the source and target CRSs; "
                                                "the candidates are: " + names.str());
}

std::vector<std::string> DatumCandidates::warnings(const std::vector<std::size_t>& used) const {
  std::vector<std::string> out;
  for (const std::size_t u : used) {
    if (u >= operations_.size()) continue;
    const DatumOperation& applied = operations_[u];
    const bool poor = applied.is_ballpark || !applied.accuracy_m || *applied.accuracy_m > 1;
    if (!poor) continue;
    // The better candidate lacking a grid that covers most of the applied one's area (then the most accurate).
    const DatumOperation* better = nullptr;
    double better_shared = 0;
    std::size_t others = 0;
    for (const DatumOperation& d : operations_) {
      if (d.grids_available || d.is_ballpark || !d.accuracy_m || !overlaps(d.area, applied.area)) continue;
      if (applied.accuracy_m && !applied.is_ballpark && !(*d.accuracy_m < *applied.accuracy_m)) continue;
      ++others;
      const double shared = shared_size(d.area, applied.area);
      if (!better || shared > better_shared || (shared == better_shared && *d.accuracy_m < *better->accuracy_m)) {
        better = &d;
        better_shared = shared;
      }
    }
    if (!better) continue;
    std::string grids, fetch;
    for (const std::string& g : better->missing_grids) {
      grids += (grids.empty() ? "" : ", ") + g;
      fetch += (fetch.empty() ? "" : "; ") + ("projsync --file " + g);
    }
    std::ostringstream s;
    s << "datum operation '" << applied.name << "' (" << accuracy_text(applied) << ") was applied where '"
      << better->name << "' (" << accuracy_text(*better) << ") needs grid " << grids << ", not installed";
    if (others > 1) s << " (" << others - 1 << " more better candidates lack grids)";
    s << ": install it with `" << fetch << "` or let PROJ fetch grids (PROJ_NETWORK=ON); gridtruth never downloads";
    out.push_back(s.str());
  }
  return out;
}

}  // namespace gridtruth::detail
