// Auditor: its public methods, and Auditor::Impl's set-up (the CRSs, the projection, the edge model, the datum
// transformation), its clones and the conversions of single points.
#include <array>
#include <algorithm>
#include <cctype>
#include <cmath>
#include <utility>

#include "core/enum_names.hpp"
#include "gridtruth/error.hpp"
#include "auditor_impl.hpp"
#include "target_check.hpp"

namespace gridtruth {

using detail::finite;
using detail::kNaN;
using detail::Pj;

namespace {
constexpr std::array<detail::EnumName<Status>, 3> kStatusNames = {
    {{Status::ok, "ok"},
     {Status::invalid, "invalid"},
     {Status::unmeasurable, "unmeasurable"}}};
}  // namespace

std::string_view to_string(Status s) noexcept {
  return detail::name_of(kStatusNames, s);
}

double gaussian_mean_radius_m(const Ellipsoid& ellipsoid, double lat_deg) noexcept {
  const double e2 = ellipsoid.f * (2 - ellipsoid.f);
  const double s = std::sin(lat_deg * M_PI / 180);
  const double w2 = 1 - e2 * s * s;
  const double m = ellipsoid.a_m * (1 - e2) / (w2 * std::sqrt(w2));  // meridian radius of curvature
  const double n = ellipsoid.a_m / std::sqrt(w2);                      // prime-vertical radius of curvature
  return std::sqrt(m * n);
}


namespace {

Pj normalized_operation(PJ_CONTEXT* c, const PJ* from, const PJ* to, const std::string& what) {
  Pj raw(proj_create_crs_to_crs_from_pj(c, from, to, nullptr, nullptr));
  Pj op(raw ? proj_normalize_for_visualization(c, raw.get()) : nullptr);
  if (!op) throw Error(ErrorCode::no_transformation, "cannot build " + what + ": " + detail::last_error(c));
  return op;
}

/// "EPSG:1173" (an authority and a code, no spaces, no '+', not a JSON or WKT text) rather than a pipeline.
bool is_database_code(const std::string& text) {
  const std::size_t colon = text.find(':');
  return colon != std::string::npos && colon > 0 && colon + 1 < text.size() &&
         text.find_first_of(" +={[\n") == std::string::npos;
}

Pj pinned_pipeline(PJ_CONTEXT* c, const std::string& definition) {
  Pj op(proj_create(c, definition.c_str()));
  if (!op || proj_is_crs(op.get())) {
    throw Error(ErrorCode::invalid_argument, "--datum-op '" + definition + "' is not a PROJ operation" +
                                                 (op ? std::string(" (it is a CRS)") : ": " + detail::last_error(c)));
  }
  if (proj_angular_input(op.get(), PJ_FWD)) {
    throw Error(ErrorCode::invalid_argument, "--datum-op: the pipeline takes radians; start it with "
                                             "+step +proj=unitconvert +xy_in=deg +xy_out=rad (as projinfo prints it)");
  }
  return op;
}

Pj clone_into(PJ_CONTEXT* c, const Pj& op) {
  if (!op) return nullptr;
  Pj copy(proj_clone(c, op.get()));
  if (!copy) throw Error(ErrorCode::no_transformation, "cannot clone a PROJ operation");
  return copy;
}

}  // namespace

/// The PROJ objects the set-up works with, held while it runs.
struct Auditor::Impl::CrsHandles {
  Pj src, tgt;      // the source and target CRSs as given
  Pj src_h, tgt_h;  // their horizontal parts
  Pj src_geog;      // the geographic CRS the truth lives on: the source itself, or a projected source's base
  Pj geog_p;        // the target's base geographic CRS
  Pj edge_h;        // straight edges: the horizontal part of the CRS they are straight in; else null
};

Auditor::Impl::Impl(const AuditOptions& o) : options(o), ctx(detail::make_context()) {
  check_options(o);
  CrsHandles h;
  set_up_crss(h);
  set_up_projection(h);
  set_up_edges(h);
  set_up_datum(h);
}

void Auditor::Impl::check_options(const AuditOptions& o) {
  if (o.target_crs.empty()) throw Error(ErrorCode::invalid_argument, "no target CRS given");
  if (!(o.densify_tolerance_m > 0) || !std::isfinite(o.densify_tolerance_m)) {
    throw Error(ErrorCode::invalid_argument, "densify tolerance must be a positive number of metres");
  }
  if (!std::isfinite(o.height_m) || o.height_m < -10000 || o.height_m > 100000) {
    throw Error(ErrorCode::invalid_argument, "height must be between -10000 m and 100000 m");
  }
  if (!(o.area_of_use_margin_deg >= 0)) {
    throw Error(ErrorCode::invalid_argument, "the area-of-use margin must be zero or more degrees");
  }
}

void Auditor::Impl::set_up_crss(CrsHandles& h) {
  const AuditOptions& o = options;
  PJ_CONTEXT* c = ctx.get();
  h.src = detail::resolve_crs(c, o.source_crs);
  source = detail::describe(c, h.src.get(), o.source_crs);
  if (source.kind != CrsKind::geographic && source.kind != CrsKind::projected) {
    throw Error(ErrorCode::unsupported_crs, "source CRS '" + o.source_crs + "' (" + source.name +
                                                ") is neither geographic nor projected");
  }
  h.tgt = detail::resolve_crs(c, o.target_crs);
  target = detail::describe(c, h.tgt.get(), o.target_crs);
  if (target.kind != CrsKind::projected) {
    throw Error(ErrorCode::unsupported_crs,
                "target CRS '" + o.target_crs + "' (" + target.name + ") is not a projected CRS");
  }
  unit_m = target.linear_unit_m;
  tolerance_units = o.densify_tolerance_m / unit_m;
  geod_s = GeographicLib::Geodesic(source.ellipsoid.a_m, source.ellipsoid.f);
  geod_p = GeographicLib::Geodesic(target.ellipsoid.a_m, target.ellipsoid.f);
  if (o.closed_form_short_edges) {
    short_s.emplace(source.ellipsoid.a_m, source.ellipsoid.f);
    short_p.emplace(target.ellipsoid.a_m, target.ellipsoid.f);
  }
}

void Auditor::Impl::set_up_projection(CrsHandles& h) {
  const AuditOptions& o = options;
  PJ_CONTEXT* c = ctx.get();
  h.tgt_h = detail::horizontal_crs(c, h.tgt.get());
  h.src_h = detail::horizontal_crs(c, h.src.get());
  // The geographic CRS the truth lives on: the source itself, or a projected source's base geographic CRS.
  h.src_geog = source.kind == CrsKind::projected ? Pj(proj_crs_get_geodetic_crs(c, h.src_h.get()))
                                                 : Pj(proj_clone(c, h.src.get()));
  if (!h.src_geog) throw Error(ErrorCode::unsupported_crs, "source CRS '" + o.source_crs + "' has no geodetic CRS");
  if (source.kind == CrsKind::projected) {
    op_source = normalized_operation(c, h.src_h.get(), h.src_geog.get(), "the inverse projection of the source CRS");
    source_is_target = proj_is_equivalent_to_with_ctx(c, h.src_h.get(), h.tgt.get(), PJ_COMP_EQUIVALENT) != 0;
  }
  h.geog_p = Pj(proj_crs_get_geodetic_crs(c, h.tgt_h.get()));
  if (!h.geog_p) throw Error(ErrorCode::unsupported_crs, "target CRS '" + o.target_crs + "' has no geodetic CRS");
  op_proj = normalized_operation(c, h.geog_p.get(), h.tgt_h.get(), "the projection of '" + o.target_crs + "'");
  if (const char* pipeline = proj_as_proj_string(c, op_proj.get(), PJ_PROJ_5, nullptr)) {
    op_fast.reset(proj_create(c, pipeline));
  }
  if (!op_fast) op_fast.reset(proj_clone(c, op_proj.get()));
  detail::check_target_projection(c, h.tgt_h.get(), op_fast.get(), target,
                                  [this](double lon, double lat) { return factors_p(lon, lat); });
}

void Auditor::Impl::set_up_edges(CrsHandles& h) {
  // The edge model, and for straight edges the plane they are straight in.
  const AuditOptions& o = options;
  PJ_CONTEXT* c = ctx.get();
  edges = o.edges ? *o.edges
                  : (source.kind == CrsKind::projected ? EdgeSpec{EdgeModel::straight, o.source_crs} : EdgeSpec{});
  if (edges.model == EdgeModel::rhumb) {
    rhumb_s.emplace(source.ellipsoid.a_m, source.ellipsoid.f, true);
    rhumb_p.emplace(target.ellipsoid.a_m, target.ellipsoid.f, true);
  }
  if (edges.model != EdgeModel::straight) return;
  Pj edge_crs = detail::resolve_crs(c, edges.crs);
  const CrsInfo edge_info = detail::describe(c, edge_crs.get(), edges.crs);
  if (edge_info.kind != CrsKind::projected) {
    throw Error(ErrorCode::unsupported_crs, "edges can only be straight in a projected CRS; '" + edges.crs +
                                                "' (" + edge_info.name + ") is not one");
  }
  h.edge_h = detail::horizontal_crs(c, edge_crs.get());
  edge_crs_is_target = proj_is_equivalent_to_with_ctx(c, h.edge_h.get(), h.tgt_h.get(), PJ_COMP_EQUIVALENT) != 0;
  op_s_to_c = normalized_operation(c, h.src_geog.get(), h.edge_h.get(), "the operation to the edge CRS");
  op_c_to_s = normalized_operation(c, h.edge_h.get(), h.src_geog.get(), "the operation from the edge CRS");
}

void Auditor::Impl::set_up_datum(CrsHandles& h) {
  const AuditOptions& o = options;
  PJ_CONTEXT* c = ctx.get();
  const bool target_is_bound = proj_get_type(h.tgt.get()) == PJ_TYPE_BOUND_CRS;
  const bool same = !target_is_bound &&
                    proj_is_equivalent_to_with_ctx(c, h.src_geog.get(), h.geog_p.get(),
                                                   PJ_COMP_EQUIVALENT_EXCEPT_AXIS_ORDER_GEOGCRS);
  if (same) {
    transform.name = "none (source CRS is the target's base geographic CRS)";
    transform.accuracy_m = 0.0;
    transform.is_identity = true;
    return;
  }
  if (h.edge_h) {
    op_c_to_p = normalized_operation(c, h.edge_h.get(), h.geog_p.get(), "the operation from the edge CRS");
  }
  datum_shift = true;
  if (!o.datum_operation.empty() && is_database_code(o.datum_operation)) {
    candidates = std::make_shared<const detail::DatumCandidates>(c, h.src_geog.get(), h.tgt.get());
    pinned = candidates->find(o.datum_operation);
  } else if (!o.datum_operation.empty()) {
    op_pinned = pinned_pipeline(c, o.datum_operation);
  } else {
    candidates = std::make_shared<const detail::DatumCandidates>(c, h.src_geog.get(), h.tgt.get());
  }
  if (op_pinned) {
    transform.name = "pinned pipeline";
    transform.proj_string = o.datum_operation;
    check_pinned_pipeline(c, h.src_geog.get(), h.tgt.get());
    return;
  }
  const std::size_t shown = pinned ? *pinned : candidates->first_usable();
  const DatumOperation& d = candidates->operations()[shown];
  transform.name = d.name;
  transform.accuracy_m = d.accuracy_m;
  transform.is_ballpark = d.is_ballpark;
  transform.proj_string = candidates->pipeline(shown);
}

PJ* Auditor::Impl::datum_op(const AreaOfUse& box, std::optional<std::size_t>& index) const {
  index.reset();
  if (op_pinned) return op_pinned.get();
  if (!candidates) return nullptr;
  index = pinned ? pinned : candidates->choose(box.west_deg, box.south_deg, box.east_deg, box.north_deg);
  if (!index) index = candidates->first_usable();  // no candidate's area covers the point
  auto cached = op_cache.find(*index);
  if (cached == op_cache.end()) {
    Pj op(proj_create(ctx.get(), candidates->pipeline(*index).c_str()));
    if (!op) {
      throw Error(ErrorCode::no_transformation,
                  "cannot instantiate '" + candidates->operations()[*index].name + "': " + detail::last_error(ctx.get()));
    }
    cached = op_cache.emplace(*index, std::move(op)).first;
  }
  return cached->second.get();
}

void Auditor::Impl::check_pinned_pipeline(PJ_CONTEXT* c, const PJ* src_geog, const PJ* tgt) const {
  // A pipeline has no CRSs to compare: it must land where PROJ's own choice lands, within 1 km (datum shifts
  // between the same region's datums are below that; a pipeline to another CRS or in other units is not), at
  // the centre of the target's area of use.
  const AreaOfUse aou = target.area_of_use.value_or(AreaOfUse{});
  const Coord centre{aou.west_deg <= aou.east_deg ? (aou.west_deg + aou.east_deg) / 2
                                                  : std::remainder((aou.west_deg + aou.east_deg + 360) / 2, 360.0),
                     (aou.south_deg + aou.north_deg) / 2};
  const detail::DatumCandidates reference(c, src_geog, tgt);
  const std::optional<std::size_t> i = reference.choose(centre.x, centre.y, centre.x, centre.y);
  Pj expected(proj_create(c, reference.pipeline(i ? *i : reference.first_usable()).c_str()));
  const PJ_COORD want = proj_trans(expected.get(), PJ_FWD, proj_coord(centre.x, centre.y, 0, 0));
  const PJ_COORD got = proj_trans(op_pinned.get(), PJ_FWD, proj_coord(centre.x, centre.y, 0, 0));
  const double apart_m = std::hypot(got.xy.x - want.xy.x, got.xy.y - want.xy.y) * unit_m;
  if (!(apart_m <= 1000)) {
    throw Error(ErrorCode::no_transformation,
                "the pinned pipeline does not transform from '" + options.source_crs + "' to '" + options.target_crs +
                    "': at (" + std::to_string(centre.x) + ", " + std::to_string(centre.y) + ") it gives (" +
                    std::to_string(got.xy.x) + ", " + std::to_string(got.xy.y) + "), PROJ's own operation (" +
                    std::to_string(want.xy.x) + ", " + std::to_string(want.xy.y) + ")");
  }
}

std::unique_ptr<Auditor::Impl> Auditor::Impl::clone() const {
  auto copy = std::make_unique<Impl>();
  copy->options = options;
  copy->source = source;
  copy->target = target;
  copy->transform = transform;
  copy->edges = edges;
  copy->ctx = detail::make_context();
  PJ_CONTEXT* c = copy->ctx.get();
  copy->op_proj = clone_into(c, op_proj);
  copy->datum_shift = datum_shift;
  copy->candidates = candidates;
  copy->pinned = pinned;
  copy->op_pinned = clone_into(c, op_pinned);
  copy->op_fast = clone_into(c, op_fast);
  copy->op_source = clone_into(c, op_source);
  copy->op_s_to_c = clone_into(c, op_s_to_c);
  copy->op_c_to_s = clone_into(c, op_c_to_s);
  copy->op_c_to_p = clone_into(c, op_c_to_p);
  copy->edge_crs_is_target = edge_crs_is_target;
  copy->source_is_target = source_is_target;
  copy->geod_s = geod_s;
  copy->geod_p = geod_p;
  copy->rhumb_s = rhumb_s;
  copy->rhumb_p = rhumb_p;
  copy->short_s = short_s;
  copy->short_p = short_p;
  copy->unit_m = unit_m;
  copy->tolerance_units = tolerance_units;
  return copy;
}

Coord Auditor::Impl::to_source_lonlat(const Coord& c) const {
  if (!op_source) return c;
  if (!finite(c)) return {kNaN, kNaN};
  const PJ_COORD out = proj_trans(op_source.get(), PJ_FWD, proj_coord(c.x, c.y, 0, 0));
  Coord lonlat{out.lp.lam, out.lp.phi};
  if (!finite(lonlat)) lonlat = {kNaN, kNaN};
  return lonlat;
}

Geometry Auditor::Impl::source_to_lonlat(const Geometry& g, std::vector<Problem>& problems) const {
  Geometry out = g;
  std::size_t failures = 0;
  std::string first;
  auto convert = [&](Coord& c, const std::string& where) {
    if (!finite(c)) return;  // validate() names non-finite values
    const Coord lonlat = to_source_lonlat(c);
    if (!finite(lonlat) && failures++ == 0) {
      first = where + " (" + std::to_string(c.x) + ", " + std::to_string(c.y) + ")";
    }
    c = finite(lonlat) ? lonlat : Coord{0, 0};
  };
  for (std::size_t i = 0; i < out.points.size(); ++i) convert(out.points[i], "point " + std::to_string(i + 1));
  for (std::size_t i = 0; i < out.lines.size(); ++i) {
    for (std::size_t k = 0; k < out.lines[i].size(); ++k) {
      convert(out.lines[i][k], "line " + std::to_string(i + 1) + " vertex " + std::to_string(k + 1));
    }
  }
  for (std::size_t i = 0; i < out.polygons.size(); ++i) {
    for (std::size_t k = 0; k < out.polygons[i].outer.size(); ++k) {
      convert(out.polygons[i].outer[k],
              "polygon " + std::to_string(i + 1) + " outer ring vertex " + std::to_string(k + 1));
    }
    for (std::size_t h = 0; h < out.polygons[i].holes.size(); ++h) {
      for (std::size_t k = 0; k < out.polygons[i].holes[h].size(); ++k) {
        convert(out.polygons[i].holes[h][k], "polygon " + std::to_string(i + 1) + " hole " +
                                                 std::to_string(h + 1) + " vertex " + std::to_string(k + 1));
      }
    }
  }
  if (failures > 0) {
    problems.push_back({Problem::Code::non_finite,
                        std::to_string(failures) + " vertices cannot be taken from the source CRS to longitude and "
                                                   "latitude, first " + first});
  }
  return out;
}

bool Auditor::Impl::transform_array(PJ* op, PJ_DIRECTION dir, std::vector<Coord>& pts) const {
  if (pts.empty()) return true;
  proj_errno_reset(op);
  proj_trans_generic(op, dir, &pts[0].x, sizeof(Coord), pts.size(), &pts[0].y, sizeof(Coord), pts.size(), nullptr,
                     0, 0, nullptr, 0, 0);
  return std::all_of(pts.begin(), pts.end(), finite);
}

// ---- Auditor ----------------------------------------------------------------------------------------------------

Auditor::Auditor(const AuditOptions& options) : impl_(std::make_unique<Impl>(options)) {}
Auditor::Auditor(std::unique_ptr<Impl> impl) : impl_(std::move(impl)) {}
Auditor::~Auditor() = default;
Auditor::Auditor(Auditor&&) noexcept = default;
Auditor& Auditor::operator=(Auditor&&) noexcept = default;

Auditor Auditor::clone() const { return Auditor(impl_->clone()); }

AuditResult Auditor::audit(const Geometry& geometry) const { return audit(geometry, impl_->options.height_m); }

AuditResult Auditor::audit(const Geometry& geometry, double height_m) const {
  try {
    return impl_->audit(geometry, height_m);
  } catch (const std::exception& e) {  // never let one feature stop a batch
    AuditResult r;
    r.type = geometry.type;
    r.vertices = geometry.vertex_count();
    r.status = Status::unmeasurable;
    r.message = std::string("internal error: ") + e.what();
    return r;
  }
}

std::vector<AuditResult> Auditor::audit(const std::vector<Geometry>& geometries) const {
  std::vector<AuditResult> out;
  out.reserve(geometries.size());
  for (const Geometry& g : geometries) out.push_back(audit(g));
  return out;
}

PointFactors Auditor::factors(double lon_deg, double lat_deg) const {
  const Coord lonlat = impl_->to_source_lonlat({lon_deg, lat_deg});
  if (!impl_->datum_shift) return impl_->factors_p(lonlat.x, lonlat.y);
  std::vector<Coord> pt{lonlat};
  // Through the datum transformation to the target plane, then back to its geographic CRS.
  auto& self = *impl_;
  std::optional<std::size_t> index;
  proj_trans_generic(self.datum_op(AreaOfUse{"", lonlat.x, lonlat.y, lonlat.x, lonlat.y}, index), PJ_FWD, &pt[0].x, sizeof(Coord), 1, &pt[0].y, sizeof(Coord), 1, nullptr,
                     0, 0, nullptr, 0, 0);
  proj_trans_generic(self.op_proj.get(), PJ_INV, &pt[0].x, sizeof(Coord), 1, &pt[0].y, sizeof(Coord), 1, nullptr,
                     0, 0, nullptr, 0, 0);
  if (!finite(pt[0])) return PointFactors{kNaN, kNaN, kNaN, kNaN, kNaN, kNaN, kNaN};
  return self.factors_p(pt[0].x, pt[0].y);
}

Coord Auditor::project(double lon_deg, double lat_deg) const {
  const Coord lonlat = impl_->to_source_lonlat({lon_deg, lat_deg});
  std::optional<std::size_t> index;
  PJ* op = impl_->datum_shift ? impl_->datum_op(AreaOfUse{"", lonlat.x, lonlat.y, lonlat.x, lonlat.y}, index)
                               : impl_->op_proj.get();
  const PJ_COORD out = proj_trans(op, PJ_FWD, proj_coord(lonlat.x, lonlat.y, 0, 0));
  Coord c{out.xy.x, out.xy.y};
  if (!finite(c)) c = {kNaN, kNaN};
  return c;
}

const AuditOptions& Auditor::options() const noexcept { return impl_->options; }
const CrsInfo& Auditor::source() const noexcept { return impl_->source; }
const CrsInfo& Auditor::target() const noexcept { return impl_->target; }
const TransformInfo& Auditor::transform() const noexcept { return impl_->transform; }
const std::vector<DatumOperation>& Auditor::datum_operations() const noexcept {
  static const std::vector<DatumOperation> none;
  return impl_->candidates ? impl_->candidates->operations() : none;
}
std::vector<std::string> Auditor::datum_warnings(const std::vector<std::size_t>& used) const {
  return impl_->candidates ? impl_->candidates->warnings(used) : std::vector<std::string>{};
}
const EdgeSpec& Auditor::edges() const noexcept { return impl_->edges; }

EdgeSpec EdgeSpec::parse(std::string_view text) {
  std::string t(text);
  t.erase(0, t.find_first_not_of(" \t"));
  t.erase(t.find_last_not_of(" \t") + 1);
  std::string lower = t;
  for (char& ch : lower) ch = static_cast<char>(std::tolower(static_cast<unsigned char>(ch)));
  if (lower == "geodesic") return {EdgeModel::geodesic, ""};
  if (lower == "rhumb") return {EdgeModel::rhumb, ""};
  const std::string prefix = "straight-in=";
  if (lower.compare(0, prefix.size(), prefix) == 0 && t.size() > prefix.size()) {
    return {EdgeModel::straight, t.substr(prefix.size())};
  }
  throw Error(ErrorCode::invalid_argument, "unknown edge model '" + std::string(text) +
                                               "': use geodesic, rhumb or straight-in=CRS");
}

std::string EdgeSpec::to_string() const {
  switch (model) {
    case EdgeModel::geodesic: return "geodesic";
    case EdgeModel::rhumb: return "rhumb";
    case EdgeModel::straight: return "straight-in=" + crs;
  }
  return "";
}

}  // namespace gridtruth
