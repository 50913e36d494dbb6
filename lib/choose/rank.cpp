#include "gridtruth/rank.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <limits>
#include <map>
#include <utility>
#include <thread>

#include "gridtruth/crs.hpp"
#include "gridtruth/error.hpp"
#include "core/proj_handles.hpp"
#include "rank_detail.hpp"

namespace gridtruth {

namespace {

constexpr double kPi = 3.14159265358979323846;
constexpr double kInf = std::numeric_limits<double>::infinity();
constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

std::string num(double v) {
  char buf[64];
  std::snprintf(buf, sizeof buf, "%.10g", v);
  return buf;
}

double wrap180(double lon) {
  double w = std::fmod(lon + 180.0, 360.0);
  if (w < 0) w += 360.0;
  return w - 180.0;
}

template <typename F>
void for_each_vertex(const Geometry& g, F&& f) {
  for (const Coord& c : g.points) f(c);
  for (const Path& p : g.lines)
    for (const Coord& c : p) f(c);
  for (const Polygon& poly : g.polygons) {
    for (const Coord& c : poly.outer) f(c);
    for (const Path& h : poly.holes)
      for (const Coord& c : h) f(c);
  }
}

bool valid(const Geometry& g) { return validate(g).empty(); }

/// Radii of curvature in the meridian (M) and the prime vertical (N), metres (Snyder 1987 eqs. 4-18, 4-20).
std::pair<double, double> radii_m(double a, double f, double lat_deg) {
  const double e2 = f * (2 - f);
  const double s = std::sin(lat_deg * kPi / 180);
  const double w2 = 1 - e2 * s * s;
  return {a * (1 - e2) / (w2 * std::sqrt(w2)), a / std::sqrt(w2)};
}

/// splitmix64 (Steele, Lea & Flood 2014): a fixed, portable hash for the reproducible sample.
std::uint64_t splitmix64(std::uint64_t x) {
  x += 0x9E3779B97F4A7C15ULL;
  x = (x ^ (x >> 30)) * 0xBF58476D1CE4E5B9ULL;
  x = (x ^ (x >> 27)) * 0x94D049BB133111EBULL;
  return x ^ (x >> 31);
}

/// Whether the extent lies inside an area of use (both may cross the antimeridian).
bool extent_inside(const GeoExtent& e, const AreaOfUse& a) {
  if (e.south_deg < a.south_deg || e.north_deg > a.north_deg) return false;
  const double a_width = a.west_deg <= a.east_deg ? a.east_deg - a.west_deg : a.east_deg + 360 - a.west_deg;
  if (a_width >= 360 - 1e-9) return true;
  double offset = std::fmod(e.west_deg - a.west_deg, 360.0);
  if (offset < 0) offset += 360.0;
  return offset + e.width_deg() <= a_width + 1e-9;
}

/// The metric of one audit result, ppm or µrad; NaN when the feature does not carry it.
double metric_value(const AuditResult& r, RankMetric m) {
  switch (m) {
    case RankMetric::area: return r.area ? std::fabs(r.area->error_ppm) : kNaN;
    case RankMetric::length: return r.length ? std::fabs(r.length->error_ppm) : kNaN;
    case RankMetric::shape:
      return r.distortion ? std::fabs(r.distortion->angular_distortion_max_deg) * kPi / 180 * 1e6 : kNaN;
    case RankMetric::bearing:
      return r.bearing_error_max_arcsec ? std::fabs(*r.bearing_error_max_arcsec) * kPi / 648000 * 1e6 : kNaN;
  }
  return kNaN;
}

bool carries(const Geometry& g, RankMetric m) {
  switch (m) {
    case RankMetric::area: return g.type == GeometryType::polygon || g.type == GeometryType::multi_polygon;
    case RankMetric::length:
    case RankMetric::bearing: return g.type != GeometryType::point && g.type != GeometryType::multi_point;
    case RankMetric::shape: return true;
  }
  return false;
}

bool better(const RankedCrs& a, const RankedCrs& b) {
  if (a.unmeasured != b.unmeasured) return a.unmeasured < b.unmeasured;
  if (a.worst_ppm != b.worst_ppm) return a.worst_ppm < b.worst_ppm;
  if (a.p95_ppm != b.p95_ppm) return a.p95_ppm < b.p95_ppm;
  return a.candidate.crs < b.candidate.crs;
}

}  // namespace

namespace detail {

std::string proj_ellipsoid_terms(const Ellipsoid& e) {
  if (e.name == "WGS 84") return "+datum=WGS84";
  if (e.name == "GRS 1980") return "+ellps=GRS80";
  if (e.f == 0) return "+R=" + num(e.a_m);
  char buf[96];
  std::snprintf(buf, sizeof buf, "+a=%.17g +rf=%.17g", e.a_m, 1 / e.f);
  return buf;
}

std::vector<ScreenPoint> screen_points(const std::vector<RankFeature>& features, const Ellipsoid& ellipsoid,
                                       std::size_t count) {
  std::vector<ScreenPoint> all;
  for (const RankFeature& f : features) {
    if (!valid(f.geometry)) continue;
    const double h = f.height_m.value_or(0.0);
    for_each_vertex(f.geometry, [&](const Coord& c) {
      const double rg = gaussian_mean_radius_m(ellipsoid, c.y);
      const auto [m, n] = radii_m(ellipsoid.a_m, ellipsoid.f, c.y);
      all.push_back({c.x, c.y, rg / (rg + h), m, n});
    });
  }
  if (all.size() <= count || count == 0) return all;
  std::vector<ScreenPoint> out;
  std::vector<bool> taken(all.size(), false);
  auto take = [&](std::size_t k) {
    if (!taken[k]) {
      taken[k] = true;
      out.push_back(all[k]);
    }
  };
  std::size_t lo_x = 0, hi_x = 0, lo_y = 0, hi_y = 0;
  for (std::size_t k = 0; k < all.size(); ++k) {
    if (all[k].lon_deg < all[lo_x].lon_deg) lo_x = k;
    if (all[k].lon_deg > all[hi_x].lon_deg) hi_x = k;
    if (all[k].lat_deg < all[lo_y].lat_deg) lo_y = k;
    if (all[k].lat_deg > all[hi_y].lat_deg) hi_y = k;
  }
  take(lo_x), take(hi_x), take(lo_y), take(hi_y);
  const std::size_t rest = count > out.size() ? count - out.size() : 0;
  for (std::size_t j = 0; j < rest; ++j) take(j * all.size() / rest);
  return out;
}

double screen_definition(PJ_CONTEXT* ctx, const std::string& definition, const std::vector<ScreenPoint>& points,
                         RankMetric metric) {
  Pj crs;
  try {
    crs = resolve_crs(ctx, definition);
  } catch (const Error&) {
    return kInf;
  }
  // The plain projection (radians in, plane out) is much cheaper to evaluate than the CRS object.
  Pj op;
  if (const char* def = proj_as_proj_string(ctx, crs.get(), PJ_PROJ_5, nullptr)) {
    std::string s = def;
    const auto type = s.find("+type=crs");
    if (type != std::string::npos) s.erase(type, 9);
    op.reset(proj_create(ctx, s.c_str()));
  }
  if (!op) return kInf;
  double unit_m = 1;
  {
    Pj horizontal = horizontal_crs(ctx, crs.get());
    unit_m = describe(ctx, horizontal.get(), definition).linear_unit_m;
  }
  // The Jacobian of the projection by central differences, against the source ellipsoid's radii of curvature M
  // and N (so a candidate on another ellipsoid, or a projection with spherical formulas only, is judged against
  // the truth, not against its own figure): h = |∂P/∂φ|/M, k = |∂P/∂λ|/(N cos φ), areal scale
  // s = |∂P/∂λ × ∂P/∂φ|/(M N cos φ), Tissot a ± b = √(h² + k² ± 2s) (Snyder 1987 eqs. 4-9 to 4-13).
  constexpr double step = 1e-5;  // radians: truncation ~1e-10, rounding ~1e-11 relative
  std::vector<Coord> xy;
  xy.reserve(points.size() * 4);
  for (const ScreenPoint& p : points) {
    const double lam = p.lon_deg * kPi / 180, phi = p.lat_deg * kPi / 180;
    xy.push_back({lam + step, phi});
    xy.push_back({lam - step, phi});
    xy.push_back({lam, phi + step});
    xy.push_back({lam, phi - step});
  }
  if (xy.empty()) return 0;
  proj_trans_generic(op.get(), PJ_FWD, &xy[0].x, sizeof(Coord), xy.size(), &xy[0].y, sizeof(Coord), xy.size(),
                     nullptr, 0, 0, nullptr, 0, 0);
  double worst = 0;
  for (std::size_t k = 0; k < points.size(); ++k) {
    const ScreenPoint& p = points[k];
    const Coord* q = &xy[4 * k];
    for (int j = 0; j < 4; ++j) {
      if (!std::isfinite(q[j].x) || !std::isfinite(q[j].y) || std::fabs(q[j].x) > 1e15) return kInf;
    }
    const double cos_phi = std::cos(p.lat_deg * kPi / 180);
    if (cos_phi < 1e-6 || !(p.meridian_radius_m > 0)) continue;  // the poles: no longitude derivative
    const double x_lam = (q[0].x - q[1].x) * unit_m / (2 * step), y_lam = (q[0].y - q[1].y) * unit_m / (2 * step);
    const double x_phi = (q[2].x - q[3].x) * unit_m / (2 * step), y_phi = (q[2].y - q[3].y) * unit_m / (2 * step);
    const double h = std::hypot(x_phi, y_phi) / p.meridian_radius_m;
    const double kk = std::hypot(x_lam, y_lam) / (p.normal_radius_m * cos_phi);
    const double s = std::fabs(x_lam * y_phi - x_phi * y_lam) / (p.meridian_radius_m * p.normal_radius_m * cos_phi);
    const double sum = std::sqrt(std::max(0.0, h * h + kk * kk + 2 * s));
    const double diff = std::sqrt(std::max(0.0, h * h + kk * kk - 2 * s));
    const double a = (sum + diff) / 2, b = (sum - diff) / 2;
    const double omega = 2 * std::asin(std::min(1.0, diff / sum));
    const double gamma = std::atan2(x_phi, y_phi);  // grid bearing of the meridian: the convergence, up to sign
    const double e = p.elevation_factor;
    double v = kInf;
    switch (metric) {
      case RankMetric::length: v = std::max(std::fabs(a * e - 1), std::fabs(b * e - 1)); break;
      case RankMetric::area: v = std::fabs(s * e * e - 1); break;
      case RankMetric::shape: v = omega; break;
      case RankMetric::bearing: v = std::fabs(gamma) + omega / 2; break;
    }
    if (!std::isfinite(v)) return kInf;
    worst = std::max(worst, v * 1e6);
  }
  return worst;
}

}  // namespace detail

std::string_view to_string(RankMetric metric) noexcept {
  switch (metric) {
    case RankMetric::area: return "area";
    case RankMetric::length: return "length";
    case RankMetric::shape: return "shape";
    case RankMetric::bearing: return "bearing";
  }
  return "";
}

RankMetric parse_rank_metric(std::string_view name) {
  for (RankMetric m : {RankMetric::area, RankMetric::length, RankMetric::shape, RankMetric::bearing}) {
    if (name == to_string(m)) return m;
  }
  throw Error(ErrorCode::invalid_argument,
              "unknown metric '" + std::string(name) + "': use area, length, shape or bearing");
}

namespace {

/// The extent of the valid geometries among `features`; geometry(feature) gives a feature's Geometry.
template <typename Feature, typename GeometryOf>
GeoExtent extent_of_geometries(const std::vector<Feature>& features, GeometryOf geometry) {
  std::vector<double> lons;
  double south = 90, north = -90;
  for (const Feature& f : features) {
    const Geometry& g = geometry(f);
    if (!valid(g)) continue;
    for_each_vertex(g, [&](const Coord& c) {
      lons.push_back(wrap180(c.x));
      south = std::min(south, c.y);
      north = std::max(north, c.y);
    });
  }
  if (lons.empty()) throw Error(ErrorCode::invalid_argument, "no valid feature to take an extent from");
  // The shortest longitude interval holding every vertex: the complement of the largest gap between sorted
  // longitudes on the circle.
  std::sort(lons.begin(), lons.end());
  double gap = lons.front() + 360 - lons.back();
  std::size_t after = 0;  // index of the longitude just east of the largest gap
  for (std::size_t k = 1; k < lons.size(); ++k) {
    if (lons[k] - lons[k - 1] > gap) {
      gap = lons[k] - lons[k - 1];
      after = k;
    }
  }
  GeoExtent e;
  e.west_deg = lons[after];
  e.east_deg = after == 0 ? lons.back() : lons[after - 1];
  if (gap <= 0) e.east_deg = e.west_deg;  // every vertex at one longitude
  e.south_deg = south;
  e.north_deg = north;
  e.centre_lon_deg = wrap180(e.west_deg + e.width_deg() / 2);
  e.centre_lat_deg = (south + north) / 2;
  return e;
}

}  // namespace

GeoExtent extent_of(const std::vector<Geometry>& features) {
  return extent_of_geometries(features, [](const Geometry& g) -> const Geometry& { return g; });
}

GeoExtent extent_of(const std::vector<RankFeature>& features) {
  return extent_of_geometries(features, [](const RankFeature& f) -> const Geometry& { return f.geometry; });
}

namespace {

using CandidateMap = std::map<std::string, CandidateCrs>;

/// Adds the registry's projected CRSs whose area of use contains the extent (not deprecated, on the Earth).
void add_registry_candidates(PJ_CONTEXT* c, const GeoExtent& extent, CandidateMap& found) {
  PROJ_CRS_LIST_PARAMETERS* params = proj_get_crs_list_parameters_create();
  PJ_TYPE types[] = {PJ_TYPE_PROJECTED_CRS};
  params->types = types;
  params->typesCount = 1;
  params->crs_area_of_use_contains_bbox = 1;
  params->bbox_valid = 1;
  // PROJ takes west > east as an extent across the antimeridian.
  params->west_lon_degree = extent.west_deg;
  params->east_lon_degree = extent.east_deg;
  params->south_lat_degree = extent.south_deg;
  params->north_lat_degree = extent.north_deg;
  params->allow_deprecated = 0;
  int count = 0;
  PROJ_CRS_INFO** list = proj_get_crs_info_list_from_database(c, nullptr, params, &count);
  for (int k = 0; list && k < count; ++k) {
    const PROJ_CRS_INFO* info = list[k];
    if (info->deprecated) continue;
    if (info->celestial_body_name && std::string(info->celestial_body_name) != "Earth") continue;
    CandidateCrs cand;
    cand.crs = std::string(info->auth_name) + ":" + info->code;
    cand.name = info->name ? info->name : "";
    cand.definition = cand.crs;
    cand.inside_area_of_use = true;  // the query asked for areas of use containing the extent
    found.emplace(cand.crs, cand);
  }
  if (list) proj_crs_info_list_destroy(list);
  proj_get_crs_list_parameters_destroy(params);
}

/// Adds the world equal-area baselines not found already.
void add_baseline_candidates(const GeoExtent& extent, CandidateMap& found) {
  // World equal-area baselines (EPSG:6933 NSIDC EASE-Grid 2.0 Global, EPSG:8857 Equal Earth Greenwich).
  for (const char* id : {"EPSG:6933", "EPSG:8857"}) {
    if (found.count(id)) continue;
    try {
      const CrsInfo info = describe_crs(id);
      CandidateCrs cand{id, info.name, false, id, std::nullopt};
      cand.inside_area_of_use = info.area_of_use ? extent_inside(extent, *info.area_of_use) : false;
      found.emplace(id, cand);
    } catch (const Error&) {
    }
  }
}

/// Adds the CRSs generated for the extent on the source's ellipsoid: UTM zones, transverse Mercator, conics by the
/// 1/6 rule, azimuthals at the centroid.
void add_generated_candidates(const GeoExtent& extent, const CrsInfo& source, CandidateMap& found) {
  const std::string datum = detail::proj_ellipsoid_terms(source.ellipsoid);
  const std::string tail = " " + datum + " +units=m +no_defs +type=crs";
  const double lon0 = extent.centre_lon_deg, lat0 = extent.centre_lat_deg;
  const double span = extent.north_deg - extent.south_deg;
  // Standard parallels one sixth of the latitude span inside its edges (common practice).
  const double lat1 = extent.south_deg + span / 6, lat2 = extent.north_deg - span / 6;
  auto add = [&](const std::string& label, const std::string& name, const std::string& def) {
    found.emplace(label, CandidateCrs{label, name, true, def, std::nullopt});
  };
  // UTM zones of the centroid and of the extent's edges (at most three, deduplicated by the map).
  const bool south = lat0 < 0;
  for (double lon : {lon0, extent.west_deg, extent.east_deg}) {
    const int zone = std::min(60, static_cast<int>(std::floor((wrap180(lon) + 180) / 6)) + 1);
    const int centre_zone = std::min(60, static_cast<int>(std::floor((wrap180(lon0) + 180) / 6)) + 1);
    int dz = std::abs(zone - centre_zone);
    dz = std::min(dz, 60 - dz);
    if (dz > 1) continue;
    char label[48];
    std::snprintf(label, sizeof label, "generated:utm%02d%c", zone, south ? 's' : 'n');
    add(label, "UTM zone " + std::to_string(zone) + (south ? "S" : "N") + " on the data's datum",
        "+proj=utm +zone=" + std::to_string(zone) + (south ? " +south" : "") + tail);
  }
  add("generated:tmerc", "Transverse Mercator on the data's central meridian",
      "+proj=tmerc +lat_0=0 +lon_0=" + num(lon0) + " +k=1 +x_0=500000 +y_0=0" + tail);
  add("generated:aea", "Albers equal-area, standard parallels by the 1/6 rule",
      "+proj=aea +lat_0=" + num(lat0) + " +lon_0=" + num(lon0) + " +lat_1=" + num(lat1) + " +lat_2=" + num(lat2) +
          " +x_0=0 +y_0=0" + tail);
  add("generated:lcc", "Lambert conformal conic, standard parallels by the 1/6 rule",
      "+proj=lcc +lat_0=" + num(lat0) + " +lon_0=" + num(lon0) + " +lat_1=" + num(lat1) + " +lat_2=" + num(lat2) +
          " +x_0=0 +y_0=0" + tail);
  add("generated:laea", "Lambert azimuthal equal-area at the centroid",
      "+proj=laea +lat_0=" + num(lat0) + " +lon_0=" + num(lon0) + " +x_0=0 +y_0=0" + tail);
  add("generated:aeqd", "Azimuthal equidistant at the centroid",
      "+proj=aeqd +lat_0=" + num(lat0) + " +lon_0=" + num(lon0) + " +x_0=0 +y_0=0" + tail);
}

}  // namespace

std::vector<CandidateCrs> candidate_crs(const GeoExtent& extent, const RankOptions& options) {
  detail::Context ctx = detail::make_context();
  PJ_CONTEXT* c = ctx.get();
  const CrsInfo source = describe_crs(options.source_crs);
  if (source.kind != CrsKind::geographic) {
    throw Error(ErrorCode::unsupported_crs, "ranking needs a geographic source CRS; '" + options.source_crs +
                                                "' (" + source.name + ") is not one");
  }
  CandidateMap found;
  if (options.registry) add_registry_candidates(c, extent, found);
  if (options.generated) {
    add_baseline_candidates(extent, found);
    add_generated_candidates(extent, source, found);
  }
  std::vector<CandidateCrs> out;
  out.reserve(found.size());
  for (auto& [id, cand] : found) out.push_back(std::move(cand));
  return out;
}

RankedCrs detail::audit_candidate(const CandidateCrs& candidate, const std::vector<RankFeature>& features,
                                  const std::vector<std::size_t>& indices, const RankOptions& options) {
  std::vector<std::size_t> which = indices;
  if (which.empty()) {
    for (std::size_t i = 0; i < features.size(); ++i) which.push_back(i);
  }
  which.erase(std::remove_if(which.begin(), which.end(),
                             [&](std::size_t i) {
                               return !carries(features[i].geometry, options.metric) || !valid(features[i].geometry);
                             }),
              which.end());
  RankedCrs out;
  out.candidate = candidate;
  out.metric = options.metric;
  AuditOptions ao;
  ao.source_crs = options.source_crs;
  ao.target_crs = candidate.definition;
  ao.tolerances = options.tolerances;
  Auditor first(ao);
  unsigned threads = options.threads ? options.threads : std::max(1u, std::thread::hardware_concurrency());
  threads = static_cast<unsigned>(std::min<std::size_t>(threads, std::max<std::size_t>(1, which.size() / 64)));
  threads = std::max(1u, threads);
  // Results by position, so the aggregate does not depend on the thread count.
  std::vector<double> value(which.size(), kNaN);
  std::vector<signed char> verdict(which.size(), 0);  // 0 none, 1 pass, -1 fail
  auto work = [&](const Auditor& auditor, unsigned t) {
    for (std::size_t k = t; k < which.size(); k += threads) {
      const std::size_t i = which[k];
      const RankFeature& f = features[i];
      const AuditResult r = f.height_m ? auditor.audit(f.geometry, *f.height_m) : auditor.audit(f.geometry);
      if (r.status != Status::ok) continue;
      value[k] = metric_value(r, options.metric);
      verdict[k] = r.verdict == Verdict::pass ? 1 : r.verdict == Verdict::fail ? -1 : 0;
    }
  };
  if (threads == 1) {
    work(first, 0);
  } else {
    std::vector<Auditor> clones;
    for (unsigned t = 1; t < threads; ++t) clones.push_back(first.clone());
    std::vector<std::thread> pool;
    for (unsigned t = 1; t < threads; ++t) pool.emplace_back([&, t] { work(clones[t - 1], t); });
    work(first, 0);
    for (std::thread& th : pool) th.join();
  }
  std::vector<double> measured;
  std::size_t with_verdict = 0, passed = 0;
  for (std::size_t k = 0; k < which.size(); ++k) {
    if (std::isnan(value[k])) {
      ++out.unmeasured;
    } else {
      measured.push_back(value[k]);
    }
    if (verdict[k] != 0) ++with_verdict;
    if (verdict[k] == 1) ++passed;
  }
  out.features = which.size();
  if (measured.empty()) {
    out.worst_ppm = out.p95_ppm = kInf;
  } else {
    std::sort(measured.begin(), measured.end());
    out.worst_ppm = measured.back();
    // Nearest-rank percentile: the ⌈0.95 n⌉-th smallest value.
    const std::size_t rank = static_cast<std::size_t>(std::ceil(0.95 * static_cast<double>(measured.size())));
    out.p95_ppm = measured[std::max<std::size_t>(rank, 1) - 1];
  }
  out.pass_share = with_verdict ? static_cast<double>(passed) / static_cast<double>(with_verdict) : kNaN;
  return out;
}

namespace {

using Screened = std::vector<std::pair<double, std::size_t>>;

/// The candidates' screening values (ppm) with their indices, best first.
Screened screen_candidates(const std::vector<CandidateCrs>& candidates, const std::vector<RankFeature>& features,
                           const RankOptions& options) {
  const CrsInfo source = describe_crs(options.source_crs);
  const std::vector<detail::ScreenPoint> points =
      detail::screen_points(features, source.ellipsoid, options.screen_points);
  Screened screened;
  {
    detail::Context ctx = detail::make_context();
    for (std::size_t k = 0; k < candidates.size(); ++k) {
      screened.emplace_back(detail::screen_definition(ctx.get(), candidates[k].definition, points, options.metric), k);
    }
  }
  // Screening values closer than 0.01 ppm are ties (below the estimate's meaning), broken by crs id.
  for (auto& entry : screened) {
    if (std::isfinite(entry.first)) entry.first = std::round(entry.first * 100) / 100;
  }
  std::sort(screened.begin(), screened.end(), [&](const auto& a, const auto& b) {
    if (a.first != b.first) return a.first < b.first;
    return candidates[a.second].crs < candidates[b.second].crs;
  });
  return screened;
}

/// The sample: all usable features, or the `sample_features` with the smallest hash of (seed, position) when there
/// are more.
std::vector<std::size_t> sample_of(const std::vector<std::size_t>& usable, const RankOptions& options) {
  std::vector<std::size_t> sample = usable;
  if (options.sample_features > 0 && usable.size() > options.sample_features) {
    std::vector<std::pair<std::uint64_t, std::size_t>> keyed;
    for (std::size_t i : usable) keyed.emplace_back(splitmix64(options.seed ^ splitmix64(i)), i);
    std::nth_element(keyed.begin(), keyed.begin() + static_cast<std::ptrdiff_t>(options.sample_features),
                     keyed.end());
    keyed.resize(options.sample_features);
    sample.clear();
    for (const auto& kv : keyed) sample.push_back(kv.second);
    std::sort(sample.begin(), sample.end());
  }
  return sample;
}

/// The best `full_reaudit` of the ranking audited again on every usable feature; they lead the ranking.
std::vector<RankedCrs> reaudit_in_full(std::vector<RankedCrs> audited, const std::vector<RankFeature>& features,
                                       const std::vector<std::size_t>& usable, const RankOptions& options) {
  const std::size_t n = std::min(options.full_reaudit, audited.size());
  std::vector<RankedCrs> full;
  for (std::size_t k = 0; k < n; ++k) {
    RankedCrs r = detail::audit_candidate(audited[k].candidate, features, usable, options);
    r.screen_ppm = audited[k].screen_ppm;
    full.push_back(std::move(r));
  }
  std::sort(full.begin(), full.end(), better);
  for (std::size_t k = n; k < audited.size(); ++k) full.push_back(audited[k]);
  return full;
}

}  // namespace

RankReport rank_crs(const std::vector<RankFeature>& features, const RankOptions& options) {
  RankReport report;
  report.extent = extent_of(features);
  std::vector<std::size_t> usable;
  for (std::size_t i = 0; i < features.size(); ++i) {
    if (!valid(features[i].geometry)) {
      ++report.invalid;
      continue;
    }
    ++report.features;
    if (carries(features[i].geometry, options.metric)) usable.push_back(i);
  }
  if (usable.empty()) {
    throw Error(ErrorCode::invalid_argument,
                "no valid feature carries the " + std::string(to_string(options.metric)) + " metric");
  }
  const std::vector<CandidateCrs> candidates = candidate_crs(report.extent, options);
  report.candidates = candidates.size();

  // Screening: distortion factors at sample vertices, one PROJ context (cheap: no datum operations built).
  const Screened screened = screen_candidates(candidates, features, options);

  // The sample: all usable features, or the `sample_features` with the smallest hash of (seed, position).
  const std::vector<std::size_t> sample = sample_of(usable, options);
  const bool sampling = sample.size() < usable.size();
  report.sample = sample.size();

  std::vector<RankedCrs> audited;
  const std::size_t leaders = std::max<std::size_t>(1, options.leaders);
  for (const auto& [score, k] : screened) {
    if (audited.size() >= leaders) break;
    if (!std::isfinite(score)) break;
    try {
      RankedCrs r = detail::audit_candidate(candidates[k], features, sample, options);
      r.screen_ppm = score;
      r.sampled = sampling;
      audited.push_back(std::move(r));
    } catch (const Error&) {
      // A candidate Auditor cannot set up (no operation from the source) is skipped; the next one is tried.
    }
  }
  std::sort(audited.begin(), audited.end(), better);
  if (sampling) {
    // Exact re-audit of the best on every feature; they lead the ranking.
    audited = reaudit_in_full(std::move(audited), features, usable, options);
  }
  report.ranked = std::move(audited);
  return report;
}

}  // namespace gridtruth
