#include "gridtruth/audit.hpp"

#include <GeographicLib/Geodesic.hpp>
#include <GeographicLib/GeodesicLine.hpp>
#include <GeographicLib/PolygonArea.hpp>

#include <algorithm>
#include <cmath>
#include <limits>
#include <sstream>
#include <utility>

#include "gridtruth/error.hpp"
#include "proj_handles.hpp"

namespace gridtruth {

std::string_view to_string(Status s) noexcept {
  switch (s) {
    case Status::ok: return "ok";
    case Status::invalid: return "invalid";
    case Status::unmeasurable: return "unmeasurable";
  }
  return "";
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

using detail::Pj;
constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
constexpr double kDegToRad = M_PI / 180;

/// Neumaier's compensated sum.
class CompensatedSum {
 public:
  void add(double v) noexcept {
    const double t = sum_ + v;
    comp_ += std::fabs(sum_) >= std::fabs(v) ? (sum_ - t) + v : (v - t) + sum_;
    sum_ = t;
  }
  double value() const noexcept { return sum_ + comp_; }

 private:
  double sum_ = 0, comp_ = 0;
};

double cross(double ax, double ay, double bx, double by) noexcept { return ax * by - ay * bx; }

/// Angle difference a − b in degrees, reduced to [−180, 180).
double angle_diff_deg(double a, double b) noexcept {
  double d = std::remainder(a - b, 360.0);
  if (d >= 180) d -= 360;
  return d;
}

bool finite(const Coord& c) noexcept { return std::isfinite(c.x) && std::isfinite(c.y); }

/// One vertex sequence of a feature, with consecutive duplicates and the closing vertex removed.
struct WorkPath {
  enum class Role { line, outer, hole };
  Role role = Role::line;
  std::size_t polygon = 0;   // index of the polygon a ring belongs to
  std::vector<Coord> lonlat_s;  // source CRS, degrees
  std::vector<Coord> lonlat_p;  // target's base geographic CRS, degrees
  std::vector<Coord> xy;        // target CRS plane, its linear unit
  bool closed() const noexcept { return role != Role::line; }
  std::size_t edge_count() const noexcept {
    return lonlat_s.size() < 2 ? 0 : (closed() ? lonlat_s.size() : lonlat_s.size() - 1);
  }
};

std::vector<Coord> clean_path(const Path& path, bool ring) {
  std::vector<Coord> out;
  out.reserve(path.size());
  for (const Coord& c : path) {
    if (!out.empty() && out.back().x == c.x && out.back().y == c.y) continue;
    out.push_back(c);
  }
  if (ring && out.size() > 1 && out.front().x == out.back().x && out.front().y == out.back().y) out.pop_back();
  return out;
}

/// Length (and, for a ring, signed area) of one path on an ellipsoid, by GeographicLib.
struct EllipsoidMeasure {
  double length_m = 0;
  double signed_area_m2 = 0;
};

EllipsoidMeasure measure_on_ellipsoid(const GeographicLib::Geodesic& geod, const std::vector<Coord>& lonlat,
                                      bool closed) {
  GeographicLib::PolygonArea poly(geod, !closed);
  for (const Coord& c : lonlat) poly.AddPoint(c.y, c.x);
  EllipsoidMeasure m;
  double area = 0;
  poly.Compute(false, true, m.length_m, area);
  if (closed) m.signed_area_m2 = area;
  return m;
}

/// Twice the signed area of a ring in the plane, centred on its first vertex to keep precision.
double planar_area2(const std::vector<Coord>& xy) {
  if (xy.size() < 3) return 0;
  const Coord o = xy.front();
  CompensatedSum sum;
  for (std::size_t i = 0; i < xy.size(); ++i) {
    const Coord& a = xy[i];
    const Coord& b = xy[(i + 1) % xy.size()];
    sum.add(cross(a.x - o.x, a.y - o.y, b.x - o.x, b.y - o.y));
  }
  return sum.value();
}

double planar_length(const std::vector<Coord>& xy, bool closed) {
  CompensatedSum sum;
  const std::size_t n = closed ? xy.size() : xy.size() - 1;
  for (std::size_t i = 0; i < n && xy.size() > 1; ++i) {
    const Coord& a = xy[i];
    const Coord& b = xy[(i + 1) % xy.size()];
    sum.add(std::hypot(b.x - a.x, b.y - a.y));
  }
  return sum.value();
}

/// Combines per-ring signed areas into a feature area: Σ over polygons of |outer| − Σ|holes|.
double polygon_area(const std::vector<WorkPath>& paths, const std::vector<double>& signed_area) {
  double total = 0;
  for (std::size_t i = 0; i < paths.size(); ++i) {
    if (paths[i].role == WorkPath::Role::outer) total += std::fabs(signed_area[i]);
    if (paths[i].role == WorkPath::Role::hole) total -= std::fabs(signed_area[i]);
  }
  return total;
}

struct Extremes {
  double lo = std::numeric_limits<double>::infinity();
  double hi = -std::numeric_limits<double>::infinity();
  void add(double v) noexcept {
    if (std::isnan(v)) return;
    lo = std::min(lo, v);
    hi = std::max(hi, v);
  }
  bool empty() const noexcept { return lo > hi; }
};

Budget make_budget(double reference, double e_s, double e_p, double d, double g) {
  Budget b;
  b.reference = reference;
  b.grid = g;
  b.error = g - reference;
  b.error_ppm = reference != 0 ? 1e6 * b.error / reference : kNaN;
  b.from_edges = g - d;
  b.from_scale = d - e_p;
  b.from_datum = e_p - e_s;
  b.from_height = e_s - reference;
  b.ellipsoid_source = e_s;
  b.ellipsoid_target = e_p;
  b.densified_grid = d;
  return b;
}

Budget truth_only_budget(double reference, double e_s, double e_p) {
  Budget b = make_budget(reference, e_s, e_p, kNaN, kNaN);
  b.from_datum = std::isnan(e_p) ? kNaN : e_p - e_s;
  return b;
}

}  // namespace

struct Auditor::Impl {
  AuditOptions options;
  CrsInfo source;
  CrsInfo target;
  TransformInfo transform;
  detail::Context ctx;
  Pj op_proj;  // target's base geographic CRS (lon, lat degrees) → target plane (easting, northing)
  Pj op_full;  // source (lon, lat degrees) → target plane, through the datum transformation; null when identity
  GeographicLib::Geodesic geod_s{GeographicLib::Constants::WGS84_a(), GeographicLib::Constants::WGS84_f()};
  GeographicLib::Geodesic geod_p{GeographicLib::Constants::WGS84_a(), GeographicLib::Constants::WGS84_f()};
  double unit_m = 1;
  double tolerance_units = 0;  // densify tolerance in the target's linear unit

  Impl() = default;
  explicit Impl(const AuditOptions& o);
  std::unique_ptr<Impl> clone() const;

  AuditResult audit(const Geometry& g) const;
  PointFactors factors_p(double lon_p, double lat_p) const;

 private:
  // Fills lonlat_p and xy of every path and point; returns an error message when a vertex fails.
  std::string transform_vertices(std::vector<WorkPath>& paths, std::vector<Coord>& points_lonlat_p,
                                 std::vector<Coord>& points_xy, const std::vector<Coord>& points_s) const;
  bool transform_array(PJ* op, PJ_DIRECTION dir, std::vector<Coord>& pts) const;
  void accumulate_factors(const std::vector<Coord>& lonlat_p, Extremes& scale_b, Extremes& scale_a,
                          Extremes& areal, Extremes& omega, Extremes& conv) const;
  std::string outside_area_warning(const std::vector<WorkPath>& paths, const std::vector<Coord>& points) const;
  void apply_verdict(AuditResult& r) const;
};

Auditor::Impl::Impl(const AuditOptions& o) : options(o), ctx(detail::make_context()) {
  if (o.target_crs.empty()) throw Error(ErrorCode::invalid_argument, "no target CRS given");
  if (!(o.densify_tolerance_m > 0) || !std::isfinite(o.densify_tolerance_m)) {
    throw Error(ErrorCode::invalid_argument, "densify tolerance must be a positive number of metres");
  }
  if (!std::isfinite(o.height_m) || o.height_m < -10000 || o.height_m > 100000) {
    throw Error(ErrorCode::invalid_argument, "height must be between -10000 m and 100000 m");
  }
  PJ_CONTEXT* c = ctx.get();
  Pj src = detail::resolve_crs(c, o.source_crs);
  source = detail::describe(c, src.get(), o.source_crs);
  if (source.kind != CrsKind::geographic) {
    throw Error(ErrorCode::unsupported_crs,
                "source CRS '" + o.source_crs + "' (" + source.name + ") is not a geographic CRS");
  }
  Pj tgt = detail::resolve_crs(c, o.target_crs);
  target = detail::describe(c, tgt.get(), o.target_crs);
  if (target.kind != CrsKind::projected) {
    throw Error(ErrorCode::unsupported_crs,
                "target CRS '" + o.target_crs + "' (" + target.name + ") is not a projected CRS");
  }
  unit_m = target.linear_unit_m;
  tolerance_units = o.densify_tolerance_m / unit_m;
  geod_s = GeographicLib::Geodesic(source.ellipsoid.a_m, source.ellipsoid.f);
  geod_p = GeographicLib::Geodesic(target.ellipsoid.a_m, target.ellipsoid.f);

  Pj tgt_h = detail::horizontal_crs(c, tgt.get());
  Pj src_h = detail::horizontal_crs(c, src.get());
  Pj geog_p(proj_crs_get_geodetic_crs(c, tgt_h.get()));
  if (!geog_p) throw Error(ErrorCode::unsupported_crs, "target CRS '" + o.target_crs + "' has no geodetic CRS");
  {
    Pj raw(proj_create_crs_to_crs_from_pj(c, geog_p.get(), tgt_h.get(), nullptr, nullptr));
    if (raw) op_proj.reset(proj_normalize_for_visualization(c, raw.get()));
    if (!op_proj) {
      throw Error(ErrorCode::no_transformation,
                  "cannot build the projection of '" + o.target_crs + "': " + detail::last_error(c));
    }
  }
  const bool target_is_bound = proj_get_type(tgt.get()) == PJ_TYPE_BOUND_CRS;
  const bool same = !target_is_bound &&
                    proj_is_equivalent_to_with_ctx(c, src_h.get(), geog_p.get(),
                                                   PJ_COMP_EQUIVALENT_EXCEPT_AXIS_ORDER_GEOGCRS);
  if (same) {
    transform.name = "none (source CRS is the target's base geographic CRS)";
    transform.accuracy_m = 0.0;
    transform.is_identity = true;
    return;
  }
  PJ_OPERATION_FACTORY_CONTEXT* factory = proj_create_operation_factory_context(c, nullptr);
  proj_operation_factory_context_set_grid_availability_use(c, factory,
                                                           PROJ_GRID_AVAILABILITY_DISCARD_OPERATION_IF_MISSING_GRID);
  proj_operation_factory_context_set_spatial_criterion(c, factory, PROJ_SPATIAL_CRITERION_PARTIAL_INTERSECTION);
  PJ_OBJ_LIST* list = proj_create_operations(c, src.get(), tgt.get(), factory);
  const int count = list ? proj_list_get_count(list) : 0;
  for (int i = 0; i < count && !op_full; ++i) {
    Pj candidate(proj_list_get(c, list, i));
    if (!candidate || !proj_coordoperation_is_instantiable(c, candidate.get())) continue;
    Pj normalized(proj_normalize_for_visualization(c, candidate.get()));
    if (!normalized) continue;
    if (const char* name = proj_get_name(candidate.get())) transform.name = name;
    const double accuracy = proj_coordoperation_get_accuracy(c, candidate.get());
    if (accuracy >= 0) transform.accuracy_m = accuracy;
    transform.is_ballpark = proj_coordoperation_has_ballpark_transformation(c, candidate.get()) != 0;
    if (const char* def = proj_as_proj_string(c, candidate.get(), PJ_PROJ_5, nullptr)) transform.proj_string = def;
    op_full = std::move(normalized);
  }
  if (list) proj_list_destroy(list);
  proj_operation_factory_context_destroy(factory);
  if (!op_full) {
    throw Error(ErrorCode::no_transformation,
                "PROJ has no usable operation from '" + o.source_crs + "' to '" + o.target_crs + "'");
  }
}

std::unique_ptr<Auditor::Impl> Auditor::Impl::clone() const {
  auto copy = std::make_unique<Impl>();
  copy->options = options;
  copy->source = source;
  copy->target = target;
  copy->transform = transform;
  copy->ctx = detail::make_context();
  copy->op_proj.reset(proj_clone(copy->ctx.get(), op_proj.get()));
  if (op_full) copy->op_full.reset(proj_clone(copy->ctx.get(), op_full.get()));
  copy->geod_s = geod_s;
  copy->geod_p = geod_p;
  copy->unit_m = unit_m;
  copy->tolerance_units = tolerance_units;
  if (!copy->op_proj || (op_full && !copy->op_full)) {
    throw Error(ErrorCode::no_transformation, "cannot clone the PROJ operations");
  }
  return copy;
}

bool Auditor::Impl::transform_array(PJ* op, PJ_DIRECTION dir, std::vector<Coord>& pts) const {
  if (pts.empty()) return true;
  proj_errno_reset(op);
  proj_trans_generic(op, dir, &pts[0].x, sizeof(Coord), pts.size(), &pts[0].y, sizeof(Coord), pts.size(), nullptr,
                     0, 0, nullptr, 0, 0);
  return std::all_of(pts.begin(), pts.end(), finite);
}

std::string Auditor::Impl::transform_vertices(std::vector<WorkPath>& paths, std::vector<Coord>& points_lonlat_p,
                                              std::vector<Coord>& points_xy,
                                              const std::vector<Coord>& points_s) const {
  auto one = [&](const std::vector<Coord>& lonlat_s, std::vector<Coord>& lonlat_p, std::vector<Coord>& xy,
                 const std::string& what) -> std::string {
    if (!op_full) {
      lonlat_p = lonlat_s;
      xy = lonlat_s;
      if (!transform_array(op_proj.get(), PJ_FWD, xy)) return what + " cannot be projected to the target CRS";
      return {};
    }
    xy = lonlat_s;
    if (!transform_array(op_full.get(), PJ_FWD, xy)) {
      return what + " cannot be transformed to the target CRS (" + transform.name + ")";
    }
    lonlat_p = xy;
    if (!transform_array(op_proj.get(), PJ_INV, lonlat_p)) {
      return what + " cannot be taken back to the target's geographic CRS";
    }
    return {};
  };
  for (std::size_t i = 0; i < paths.size(); ++i) {
    std::string why = one(paths[i].lonlat_s, paths[i].lonlat_p, paths[i].xy, "a vertex of part " +
                                                                                 std::to_string(i + 1));
    if (!why.empty()) return why;
  }
  return one(points_s, points_lonlat_p, points_xy, "a point");
}

PointFactors Auditor::Impl::factors_p(double lon_p, double lat_p) const {
  // Central differences of the projection with a step of 1e-4 degrees (about 11 m): truncation error about
  // 1e-12 and rounding error about 1e-10 relative for coordinates of 10⁷ m.
  constexpr double step_deg = 1e-4;
  const double lat = std::clamp(lat_p, -90 + 2 * step_deg, 90 - 2 * step_deg);
  std::vector<Coord> pts = {{lon_p + step_deg, lat}, {lon_p - step_deg, lat}, {lon_p, lat + step_deg},
                            {lon_p, lat - step_deg}};
  PointFactors f{kNaN, kNaN, kNaN, kNaN, kNaN, kNaN, kNaN};
  if (!transform_array(op_proj.get(), PJ_FWD, pts)) return f;
  const double step_rad = 2 * step_deg * kDegToRad;
  const double x_lam = (pts[0].x - pts[1].x) * unit_m / step_rad;
  const double y_lam = (pts[0].y - pts[1].y) * unit_m / step_rad;
  const double x_phi = (pts[2].x - pts[3].x) * unit_m / step_rad;
  const double y_phi = (pts[2].y - pts[3].y) * unit_m / step_rad;
  const double e2 = target.ellipsoid.f * (2 - target.ellipsoid.f);
  const double sphi = std::sin(lat * kDegToRad), cphi = std::cos(lat * kDegToRad);
  const double w2 = 1 - e2 * sphi * sphi;
  const double m = target.ellipsoid.a_m * (1 - e2) / (w2 * std::sqrt(w2));
  const double n = target.ellipsoid.a_m / std::sqrt(w2);
  // Snyder (1987) eqs. 4-9 to 4-14 (Tissot's indicatrix from the partial derivatives).
  const double h = std::hypot(x_phi, y_phi) / m;
  const double k = std::hypot(x_lam, y_lam) / (n * cphi);
  const double s = std::fabs(x_lam * y_phi - x_phi * y_lam) / (m * n * cphi);
  const double ap = std::sqrt(std::max(0.0, h * h + k * k + 2 * s));
  const double bp = std::sqrt(std::max(0.0, h * h + k * k - 2 * s));
  f.meridional_scale = h;
  f.parallel_scale = k;
  f.areal_scale = s;
  f.tissot_a = (ap + bp) / 2;
  f.tissot_b = (ap - bp) / 2;
  f.angular_distortion_deg = ap > 0 ? 2 * std::asin(std::min(1.0, bp / ap)) / kDegToRad : kNaN;
  f.convergence_deg = -std::atan2(x_phi, y_phi) / kDegToRad;
  return f;
}

void Auditor::Impl::accumulate_factors(const std::vector<Coord>& lonlat_p, Extremes& scale_b, Extremes& scale_a,
                                       Extremes& areal, Extremes& omega, Extremes& conv) const {
  for (const Coord& c : lonlat_p) {
    const PointFactors f = factors_p(c.x, c.y);
    scale_b.add(f.tissot_b);
    scale_a.add(f.tissot_a);
    areal.add(f.areal_scale);
    omega.add(f.angular_distortion_deg);
    conv.add(f.convergence_deg);
  }
}

std::string Auditor::Impl::outside_area_warning(const std::vector<WorkPath>& paths,
                                                const std::vector<Coord>& points) const {
  if (!target.area_of_use) return {};
  const AreaOfUse& aou = *target.area_of_use;
  auto inside = [&](const Coord& c) {
    if (c.y < aou.south_deg || c.y > aou.north_deg) return false;
    const double lon = std::remainder(c.x, 360.0);
    if (aou.west_deg <= aou.east_deg) return lon >= aou.west_deg && lon <= aou.east_deg;
    return lon >= aou.west_deg || lon <= aou.east_deg;  // area of use across the antimeridian
  };
  std::size_t total = 0, outside = 0;
  for (const WorkPath& p : paths) {
    for (const Coord& c : p.lonlat_s) {
      ++total;
      if (!inside(c)) ++outside;
    }
  }
  for (const Coord& c : points) {
    ++total;
    if (!inside(c)) ++outside;
  }
  if (outside == 0) return {};
  return "warning: " + std::to_string(outside) + " of " + std::to_string(total) +
         " vertices lie outside the area of use of the target CRS (" + aou.name + ")";
}

void Auditor::Impl::apply_verdict(AuditResult& r) const {
  if (r.status != Status::ok) return;
  bool any = false;
  for (const Tolerance& t : options.tolerances) {
    double observed = kNaN;
    std::string unit;
    if (t.metric == Metric::bearing) {
      if (!r.bearing_error_max_arcsec) continue;
      observed = *r.bearing_error_max_arcsec;
    } else {
      const std::optional<Budget>& b = t.metric == Metric::area ? r.area : r.length;
      if (!b) continue;
      observed = t.kind == Tolerance::Kind::relative_ppm ? b->error_ppm : b->error;
    }
    any = true;
    if (!(std::fabs(observed) <= t.value)) r.failed.push_back(t.to_string());
  }
  if (any) r.verdict = r.failed.empty() ? Verdict::pass : Verdict::fail;
}

AuditResult Auditor::Impl::audit(const Geometry& g) const {
  AuditResult r;
  r.type = g.type;
  r.vertices = g.vertex_count();
  const std::vector<Problem> problems = validate(g);
  if (!problems.empty()) {
    r.status = Status::invalid;
    r.message = describe(problems);
    return r;
  }

  // 1. Working copies of every path, without repeated vertices.
  std::vector<WorkPath> paths;
  std::vector<Coord> points_s;
  switch (g.type) {
    case GeometryType::point:
    case GeometryType::multi_point:
      points_s = g.points;
      break;
    case GeometryType::line_string:
    case GeometryType::multi_line_string:
      for (const Path& line : g.lines) paths.push_back({WorkPath::Role::line, 0, clean_path(line, false), {}, {}});
      break;
    case GeometryType::polygon:
    case GeometryType::multi_polygon:
      for (std::size_t p = 0; p < g.polygons.size(); ++p) {
        paths.push_back({WorkPath::Role::outer, p, clean_path(g.polygons[p].outer, true), {}, {}});
        for (const Path& hole : g.polygons[p].holes) {
          paths.push_back({WorkPath::Role::hole, p, clean_path(hole, true), {}, {}});
        }
      }
      break;
  }
  const bool has_length = !paths.empty();
  const bool has_area = g.type == GeometryType::polygon || g.type == GeometryType::multi_polygon;

  // 2. Truth on the source ellipsoid (E_S), lifted to the ground (R).
  CompensatedSum length_s, lat_sum;
  std::vector<double> area_s(paths.size(), 0.0);
  std::size_t lat_count = 0;
  for (std::size_t i = 0; i < paths.size(); ++i) {
    const EllipsoidMeasure m = measure_on_ellipsoid(geod_s, paths[i].lonlat_s, paths[i].closed());
    length_s.add(m.length_m);
    area_s[i] = m.signed_area_m2;
    for (const Coord& c : paths[i].lonlat_s) lat_sum.add(c.y), ++lat_count;
  }
  for (const Coord& c : points_s) lat_sum.add(c.y), ++lat_count;
  const double mean_lat = lat_count ? lat_sum.value() / lat_count : 0;
  const double lift = 1 + options.height_m / gaussian_mean_radius_m(source.ellipsoid, mean_lat);
  const double e_s_length = length_s.value();
  const double e_s_area = has_area ? polygon_area(paths, area_s) : 0;
  const double ref_length = e_s_length * lift;
  const double ref_area = e_s_area * lift * lift;

  auto fail = [&](const std::string& why, double e_p_length, double e_p_area) {
    r.status = Status::unmeasurable;
    r.message = why;
    if (has_length) r.length = truth_only_budget(ref_length, e_s_length, e_p_length);
    if (has_area) r.area = truth_only_budget(ref_area, e_s_area, e_p_area);
    return r;
  };

  // 3. Datum transformation and projection of the vertices.
  std::vector<Coord> points_p, points_xy;
  if (std::string why = transform_vertices(paths, points_p, points_xy, points_s); !why.empty()) {
    return fail(why, kNaN, kNaN);
  }

  // 4. E_P: the same measures on the target's ellipsoid after the datum transformation.
  double e_p_length = e_s_length, e_p_area = e_s_area;
  if (op_full) {
    CompensatedSum length_p;
    std::vector<double> area_p(paths.size(), 0.0);
    for (std::size_t i = 0; i < paths.size(); ++i) {
      const EllipsoidMeasure m = measure_on_ellipsoid(geod_p, paths[i].lonlat_p, paths[i].closed());
      length_p.add(m.length_m);
      area_p[i] = m.signed_area_m2;
    }
    e_p_length = length_p.value();
    e_p_area = has_area ? polygon_area(paths, area_p) : 0;
  }

  // 5. G (straight chords) and D (projected geodesics), path by path, with the bearing of every chord.
  CompensatedSum g_length, d_length;
  std::vector<double> g_area2(paths.size(), 0.0), d_area2(paths.size(), 0.0);
  std::vector<Coord> samples = points_p;
  double bearing_max_deg = 0;
  std::size_t densified = 0;
  constexpr std::size_t max_points = 4'000'000;
  for (std::size_t i = 0; i < paths.size(); ++i) {
    const WorkPath& path = paths[i];
    g_length.add(planar_length(path.xy, path.closed()));
    if (path.closed()) g_area2[i] = planar_area2(path.xy);
    samples.insert(samples.end(), path.lonlat_p.begin(), path.lonlat_p.end());

    const Coord origin = path.xy.front();
    CompensatedSum length_units, area2_units;
    for (std::size_t e = 0; e < path.edge_count(); ++e) {
      const std::size_t j = (e + 1) % path.lonlat_p.size();
      const Coord& a = path.lonlat_p[e];
      const Coord& b = path.lonlat_p[j];
      const GeographicLib::GeodesicLine line =
          geod_p.InverseLine(a.y, a.x, b.y, b.x, GeographicLib::Geodesic::LATITUDE |
                                                     GeographicLib::Geodesic::LONGITUDE |
                                                     GeographicLib::Geodesic::DISTANCE_IN |
                                                     GeographicLib::Geodesic::AZIMUTH);
      const Coord p0 = path.xy[e], p1 = path.xy[j];
      // Bearing: grid bearing of the chord minus the geodesic azimuth at the start vertex.
      const double grid_bearing = std::atan2(p1.x - p0.x, p1.y - p0.y) / kDegToRad;
      bearing_max_deg = std::max(bearing_max_deg, std::fabs(angle_diff_deg(grid_bearing, line.Azimuth())));

      // Depth-first refinement: a piece [s0, s1] whose projected midpoint lies within the tolerance of its chord
      // is final and gets the parabolic correction; otherwise it is split at the midpoint.
      struct Piece {
        double s0, s1;
        Coord p0, p1;
      };
      std::vector<Piece> stack{{0.0, line.Distance(), p0, p1}};
      while (!stack.empty()) {
        const Piece piece = stack.back();
        stack.pop_back();
        const double sm = 0.5 * (piece.s0 + piece.s1);
        double lat = 0, lon = 0;
        line.Position(sm, lat, lon);
        PJ_COORD in = proj_coord(lon, lat, 0, 0);
        const PJ_COORD out = proj_trans(op_proj.get(), PJ_FWD, in);
        const Coord pm{out.xy.x, out.xy.y};
        if (!finite(pm)) {
          return fail("a point on edge " + std::to_string(e + 1) + " of part " + std::to_string(i + 1) +
                          " cannot be projected to the target CRS",
                      e_p_length, e_p_area);
        }
        samples.push_back({lon, lat});
        if (++densified > max_points) {
          return fail("densification exceeded " + std::to_string(max_points) + " points", e_p_length, e_p_area);
        }
        const double cx = piece.p1.x - piece.p0.x, cy = piece.p1.y - piece.p0.y;
        const double chord = std::hypot(cx, cy);
        const double dx = pm.x - 0.5 * (piece.p0.x + piece.p1.x), dy = pm.y - 0.5 * (piece.p0.y + piece.p1.y);
        const double deviation = chord > 0 ? std::fabs(cross(cx, cy, dx, dy)) / chord : std::hypot(dx, dy);
        // Along the chord the midpoint of a smooth image stays near the middle; far from it, the image jumps
        // (a discontinuity of the projection) and the piece is split until the jump is isolated.
        const double along = chord > 0 ? std::fabs(cx * dx + cy * dy) / (chord * chord) : 0.0;
        if (deviation <= tolerance_units && along < 0.25) {
          const double half = std::hypot(pm.x - piece.p0.x, pm.y - piece.p0.y) +
                              std::hypot(piece.p1.x - pm.x, piece.p1.y - pm.y);
          length_units.add((4 * half - chord) / 3);  // Richardson: arc length of the parabola through the three
          if (path.closed()) {
            area2_units.add(cross(piece.p0.x - origin.x, piece.p0.y - origin.y, piece.p1.x - origin.x,
                                  piece.p1.y - origin.y));
            // Parabolic segment = 4/3 of the triangle (Archimedes); twice the area here.
            area2_units.add(4.0 / 3.0 * cross(pm.x - piece.p0.x, pm.y - piece.p0.y, cx, cy));
          }
          continue;
        }
        if (piece.s1 - piece.s0 < 1e-3) {
          return fail("edge " + std::to_string(e + 1) + " of part " + std::to_string(i + 1) +
                          " tears when projected (it crosses a discontinuity of the target CRS, such as its "
                          "antimeridian or an interruption)",
                      e_p_length, e_p_area);
        }
        stack.push_back({sm, piece.s1, pm, piece.p1});
        stack.push_back({piece.s0, sm, piece.p0, pm});
      }
    }
    d_length.add(length_units.value());
    if (path.closed()) d_area2[i] = area2_units.value();
  }
  r.densified_points = densified;

  // 6. Distortion statistics at the vertices, points and densified points.
  Extremes scale_b, scale_a, areal, omega, conv;
  accumulate_factors(samples, scale_b, scale_a, areal, omega, conv);
  if (!scale_b.empty()) {
    r.distortion = Distortion{scale_b.lo, scale_a.hi, areal.lo, areal.hi, omega.hi, conv.lo, conv.hi};
  }
  if (has_length) r.bearing_error_max_arcsec = bearing_max_deg * 3600;

  // 7. The budget.
  const double unit2 = unit_m * unit_m;
  if (has_length) {
    r.length = make_budget(ref_length, e_s_length, e_p_length, d_length.value() * unit_m,
                           g_length.value() * unit_m);
  }
  if (has_area) {
    std::vector<double> g_area(paths.size()), d_area(paths.size());
    for (std::size_t i = 0; i < paths.size(); ++i) {
      g_area[i] = 0.5 * g_area2[i] * unit2;
      d_area[i] = 0.5 * d_area2[i] * unit2;
    }
    r.area = make_budget(ref_area, e_s_area, e_p_area, polygon_area(paths, d_area), polygon_area(paths, g_area));
  }
  r.message = outside_area_warning(paths, points_s);
  apply_verdict(r);
  return r;
}

// ---- Auditor ----------------------------------------------------------------------------------------------------

Auditor::Auditor(const AuditOptions& options) : impl_(std::make_unique<Impl>(options)) {}
Auditor::Auditor(std::unique_ptr<Impl> impl) : impl_(std::move(impl)) {}
Auditor::~Auditor() = default;
Auditor::Auditor(Auditor&&) noexcept = default;
Auditor& Auditor::operator=(Auditor&&) noexcept = default;

Auditor Auditor::clone() const { return Auditor(impl_->clone()); }

AuditResult Auditor::audit(const Geometry& geometry) const {
  try {
    return impl_->audit(geometry);
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
  if (!impl_->op_full) return impl_->factors_p(lon_deg, lat_deg);
  std::vector<Coord> pt{{lon_deg, lat_deg}};
  // Through the datum transformation to the target plane, then back to its geographic CRS.
  auto& self = *impl_;
  proj_trans_generic(self.op_full.get(), PJ_FWD, &pt[0].x, sizeof(Coord), 1, &pt[0].y, sizeof(Coord), 1, nullptr,
                     0, 0, nullptr, 0, 0);
  proj_trans_generic(self.op_proj.get(), PJ_INV, &pt[0].x, sizeof(Coord), 1, &pt[0].y, sizeof(Coord), 1, nullptr,
                     0, 0, nullptr, 0, 0);
  if (!finite(pt[0])) return PointFactors{kNaN, kNaN, kNaN, kNaN, kNaN, kNaN, kNaN};
  return self.factors_p(pt[0].x, pt[0].y);
}

Coord Auditor::project(double lon_deg, double lat_deg) const {
  PJ* op = impl_->op_full ? impl_->op_full.get() : impl_->op_proj.get();
  const PJ_COORD out = proj_trans(op, PJ_FWD, proj_coord(lon_deg, lat_deg, 0, 0));
  Coord c{out.xy.x, out.xy.y};
  if (!finite(c)) c = {kNaN, kNaN};
  return c;
}

const AuditOptions& Auditor::options() const noexcept { return impl_->options; }
const CrsInfo& Auditor::source() const noexcept { return impl_->source; }
const CrsInfo& Auditor::target() const noexcept { return impl_->target; }
const TransformInfo& Auditor::transform() const noexcept { return impl_->transform; }

}  // namespace gridtruth
