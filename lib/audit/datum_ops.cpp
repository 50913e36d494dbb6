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
  from_.reset(proj_clone(own, src_geog));
  to_.reset(proj_clone(own, tgt));
  if (!from_ || !to_) throw Error(ErrorCode::no_transformation, "cannot copy the CRSs: " + last_error(c));
  const PJ* from = from_.get();
  const PJ* to = to_.get();
  List all = operations_between(own, from, to, PROJ_GRID_AVAILABILITY_KNOWN_AVAILABLE);
  const int all_count = all ? proj_list_get_count(all.get()) : 0;
  for (int i = 0; i < all_count; ++i) {
    Pj op(proj_list_get(own, all.get(), i));
    if (op) operations_.push_back(describe_operation(own, op.get()));
  }
  pipelines_.assign(operations_.size(), "");
  List usable = operations_between(own, from, to, PROJ_GRID_AVAILABILITY_DISCARD_OPERATION_IF_MISSING_GRID);
  const int usable_count = usable ? proj_list_get_count(usable.get()) : 0;
  bool any = false;
  for (int i = 0; i < usable_count; ++i) {
    Pj op(proj_list_get(own, usable.get(), i));
    Pj normalized(op ? proj_normalize_for_visualization(own, op.get()) : nullptr);
    const char* def = normalized ? proj_as_proj_string(own, normalized.get(), PJ_PROJ_5, nullptr) : nullptr;
    if (op && def && proj_coordoperation_is_instantiable(own, op.get())) {
      const char* name = proj_get_name(op.get());
      const auto same = std::find_if(operations_.begin(), operations_.end(), [&](const DatumOperation& d) {
        return name && d.name == name;
      });
      const auto index = static_cast<std::size_t>(same - operations_.begin());
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
  }
  if (!any) throw Error(ErrorCode::no_transformation, "PROJ has no usable operation between the CRSs");
}

DatumCandidates::~DatumCandidates() = default;

std::optional<std::size_t> DatumCandidates::choose(double west_deg, double south_deg, double east_deg,
                                                   double north_deg) const {
  if (!(std::isfinite(west_deg) && std::isfinite(south_deg) && std::isfinite(east_deg) && std::isfinite(north_deg)))
    return std::nullopt;
  // PROJ's choice depends on which candidates' areas meet the box (they are kept), how much of the box each
  // covers (they are sorted by it) and which hold its centre (proj_trans takes the most accurate of those). When
  // every candidate holds the whole box or none of it, that is all one pattern: cache it. A box partly inside
  // some candidate's area goes to PROJ itself (about 30 ms).
  std::string key;
  bool partial = false;
  for (std::size_t i = 0; i < operations_.size(); ++i) {
    const std::optional<AreaOfUse>& a = operations_[i].area;
    if (!operations_[i].usable) continue;
    if (!a || a->west_deg > a->east_deg) {  // no area: everywhere; across ±180°: left to PROJ
      key += a ? '?' : 'i';
      partial = partial || a;
      continue;
    }
    const bool inside = west_deg >= a->west_deg && east_deg <= a->east_deg && south_deg >= a->south_deg &&
                        north_deg <= a->north_deg;
    const bool apart = east_deg < a->west_deg || west_deg > a->east_deg || north_deg < a->south_deg ||
                       south_deg > a->north_deg;
    key += inside ? 'i' : apart ? 'o' : 'p';
    partial = partial || (!inside && !apart);
  }
  std::lock_guard<std::mutex> lock(mutex_);
  if (!partial) {
    const auto hit = cache_.find(key);
    if (hit != cache_.end()) return hit->second;
  }
  const std::optional<std::size_t> chosen = ask_proj(west_deg, south_deg, east_deg, north_deg);
  if (!partial) cache_.emplace(key, chosen);
  return chosen;
}

std::optional<std::size_t> DatumCandidates::ask_proj(double west_deg, double south_deg, double east_deg,
                                                     double north_deg) const {
  PJ_CONTEXT* own = ctx_.get();
  PJ_AREA* area = proj_area_create();
  if (!area) return std::nullopt;
  constexpr double pad_deg = 1e-9;  // a point is a box PROJ accepts
  proj_area_set_bbox(area, west_deg - pad_deg, south_deg - pad_deg, east_deg + pad_deg, north_deg + pad_deg);
  Pj raw(proj_create_crs_to_crs_from_pj(own, from_.get(), to_.get(), area, nullptr));
  proj_area_destroy(area);
  Pj op(raw ? proj_normalize_for_visualization(own, raw.get()) : nullptr);
  if (!op) return std::nullopt;
  proj_trans(op.get(), PJ_FWD, proj_coord((west_deg + east_deg) / 2, (south_deg + north_deg) / 2, 0, 0));
  Pj used(proj_trans_get_last_used_operation(op.get()));
  const char* used_name = proj_get_name(used ? used.get() : op.get());
  if (!used_name) return std::nullopt;
  std::string name = used_name;
  // Normalising for longitude-latitude order adds this step to the name; the candidates are listed without it.
  const std::string swap = "axis order change (2D) + ";
  if (name.compare(0, swap.size(), swap) == 0) name.erase(0, swap.size());
  for (std::size_t i = 0; i < operations_.size(); ++i) {
    if (operations_[i].usable && operations_[i].name == name) return i;
  }
  return std::nullopt;
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
