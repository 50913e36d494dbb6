#include "core/enum_names.hpp"
#include "gridtruth/tailor.hpp"

#include <array>
#include <algorithm>
#include <cmath>
#include <cstdio>
#include <limits>
#include <functional>
#include <numeric>

#include "gridtruth/crs.hpp"
#include "gridtruth/error.hpp"
#include "core/proj_handles.hpp"
#include "rank_detail.hpp"

namespace gridtruth {

namespace {

constexpr double kPi = 3.14159265358979323846;
constexpr double kInf = std::numeric_limits<double>::infinity();

std::string num(double v) {
  char buf[64];
  std::snprintf(buf, sizeof buf, "%.12g", v);
  return buf;
}

/// A family's parameter vector: names, a start, the start's step, and the PROJ string it makes.
struct Model {
  std::vector<std::string> names;
  std::vector<double> start;
  std::vector<double> step;
  std::function<std::string(const std::vector<double>&)> definition;  // "" when the vector is out of range
};

bool lat_ok(double lat) { return std::isfinite(lat) && std::fabs(lat) < 89; }
bool k_ok(double k) { return std::isfinite(k) && k > 0.9 && k < 1.1; }

/// The direction (azimuth, degrees in (−90, 90]) of the longest axis of the vertices, in a local plane.
double principal_azimuth_deg(const std::vector<detail::ScreenPoint>& pts, double lon0, double lat0) {
  const double c = std::cos(lat0 * kPi / 180);
  double sxx = 0, syy = 0, sxy = 0;
  for (const auto& p : pts) {
    double dl = p.lon_deg - lon0;
    if (dl > 180) dl -= 360;
    if (dl < -180) dl += 360;
    const double x = dl * c, y = p.lat_deg - lat0;
    sxx += x * x, syy += y * y, sxy += x * y;
  }
  // Major axis angle from the x axis (east): ½ atan2(2 sxy, sxx − syy); azimuth from north = 90° − that.
  const double theta = 0.5 * std::atan2(2 * sxy, sxx - syy) * 180 / kPi;
  double az = 90 - theta;
  if (az > 90) az -= 180;
  if (std::fabs(az) < 0.5) az = 0.5;  // keep off the degenerate meridian case
  return az;
}

Model make_model(ProjectionFamily family, const GeoExtent& e, const std::vector<detail::ScreenPoint>& pts,
                 const std::string& tail, bool optimise_scale) {
  const double lon0 = e.centre_lon_deg, lat0 = e.centre_lat_deg;
  const double span = e.north_deg - e.south_deg, width = e.width_deg();
  const double dlon = std::max(width / 4, 0.01), dlat = std::max(span / 6, 0.01);
  Model m;
  switch (family) {
    case ProjectionFamily::transverse_mercator:
      m.names = {"lon_0"};
      m.start = {lon0};
      m.step = {dlon};
      if (optimise_scale) m.names.push_back("k_0"), m.start.push_back(1.0), m.step.push_back(1e-4);
      m.definition = [tail](const std::vector<double>& x) -> std::string {
        const double k = x.size() > 1 ? x[1] : 1.0;
        if (!std::isfinite(x[0]) || !k_ok(k)) return "";
        return "+proj=tmerc +lat_0=0 +lon_0=" + num(x[0]) + " +k_0=" + num(k) + " +x_0=500000 +y_0=0" + tail;
      };
      break;
    case ProjectionFamily::albers:
      m.names = {"lat_1", "lat_2", "lon_0"};
      m.start = {e.south_deg + span / 6, e.north_deg - span / 6, lon0};
      m.step = {dlat, dlat, dlon};
      m.definition = [tail, lat0](const std::vector<double>& x) -> std::string {
        if (!lat_ok(x[0]) || !lat_ok(x[1]) || !std::isfinite(x[2]) || std::fabs(x[0] + x[1]) < 1e-6) return "";
        return "+proj=aea +lat_0=" + num(lat0) + " +lon_0=" + num(x[2]) + " +lat_1=" + num(x[0]) +
               " +lat_2=" + num(x[1]) + " +x_0=0 +y_0=0" + tail;
      };
      break;
    case ProjectionFamily::lambert_conic:
      m.names = {"lat_0", "lon_0"};
      m.start = {lat0 == 0 ? 0.01 : lat0, lon0};
      m.step = {dlat, dlon};
      if (optimise_scale) m.names.push_back("k_0"), m.start.push_back(1.0), m.step.push_back(1e-4);
      m.definition = [tail](const std::vector<double>& x) -> std::string {
        const double k = x.size() > 2 ? x[2] : 1.0;
        if (!lat_ok(x[0]) || std::fabs(x[0]) < 1e-6 || !std::isfinite(x[1]) || !k_ok(k)) return "";
        return "+proj=lcc +lat_1=" + num(x[0]) + " +lat_0=" + num(x[0]) + " +lon_0=" + num(x[1]) +
               " +k_0=" + num(k) + " +x_0=0 +y_0=0" + tail;
      };
      break;
    case ProjectionFamily::azimuthal_equal_area:
      m.names = {"lat_0", "lon_0"};
      m.start = {lat0, lon0};
      m.step = {dlat, dlon};
      m.definition = [tail](const std::vector<double>& x) -> std::string {
        if (!lat_ok(x[0]) || !std::isfinite(x[1])) return "";
        return "+proj=laea +lat_0=" + num(x[0]) + " +lon_0=" + num(x[1]) + " +x_0=0 +y_0=0" + tail;
      };
      break;
    case ProjectionFamily::oblique_mercator:
      m.names = {"lat_0", "lonc", "alpha"};
      m.start = {lat0, lon0, principal_azimuth_deg(pts, lon0, lat0)};
      m.step = {dlat, dlon, 10};
      if (optimise_scale) m.names.push_back("k_0"), m.start.push_back(1.0), m.step.push_back(1e-4);
      m.definition = [tail](const std::vector<double>& x) -> std::string {
        const double k = x.size() > 3 ? x[3] : 1.0;
        if (!lat_ok(x[0]) || !std::isfinite(x[1]) || !(std::fabs(x[2]) > 0.01 && std::fabs(x[2]) < 89.99) || !k_ok(k))
          return "";
        // gamma = alpha: grid north along true north at the centre (the rectified skew orthomorphic habit).
        return "+proj=omerc +lat_0=" + num(x[0]) + " +lonc=" + num(x[1]) + " +alpha=" + num(x[2]) +
               " +gamma=" + num(x[2]) + " +k_0=" + num(k) + " +x_0=0 +y_0=0" + tail;
      };
      break;
  }
  return m;
}

/// Nelder–Mead on variables scaled by their steps (so the start simplex is a unit one), coefficients 1, 2, ½, ½
/// (Lagarias, Reeds, Wright & Wright 1998). Stops after `budget` evaluations or when the simplex has collapsed.
std::vector<double> nelder_mead(const std::function<double(const std::vector<double>&)>& f, std::vector<double> x0,
                                const std::vector<double>& step, std::size_t budget, std::size_t& used,
                                double& best) {
  const std::size_t n = x0.size();
  auto unscale = [&](const std::vector<double>& u) {
    std::vector<double> x(n);
    for (std::size_t i = 0; i < n; ++i) x[i] = x0[i] + u[i] * step[i];
    return x;
  };
  auto eval = [&](const std::vector<double>& u) {
    ++used;
    return f(unscale(u));
  };
  std::vector<std::vector<double>> s(n + 1, std::vector<double>(n, 0.0));
  for (std::size_t i = 0; i < n; ++i) s[i + 1][i] = 1.0;
  std::vector<double> fs(n + 1);
  for (std::size_t i = 0; i <= n; ++i) fs[i] = eval(s[i]);
  std::vector<std::size_t> order(n + 1);
  while (used < budget) {
    std::iota(order.begin(), order.end(), 0);
    std::stable_sort(order.begin(), order.end(), [&](std::size_t a, std::size_t b) { return fs[a] < fs[b]; });
    const std::size_t lo = order.front(), hi = order.back(), second = order[n - 1];
    double size = 0;
    for (std::size_t i = 0; i <= n; ++i)
      for (std::size_t j = 0; j < n; ++j) size = std::max(size, std::fabs(s[i][j] - s[lo][j]));
    if (size < 1e-7) break;
    std::vector<double> centroid(n, 0.0);
    for (std::size_t i = 0; i <= n; ++i) {
      if (i == hi) continue;
      for (std::size_t j = 0; j < n; ++j) centroid[j] += s[i][j] / static_cast<double>(n);
    }
    auto along = [&](double t) {
      std::vector<double> p(n);
      for (std::size_t j = 0; j < n; ++j) p[j] = centroid[j] + t * (s[hi][j] - centroid[j]);
      return p;
    };
    const std::vector<double> r = along(-1.0);
    const double fr = eval(r);
    if (fr < fs[lo]) {
      const std::vector<double> ex = along(-2.0);
      const double fe = eval(ex);
      if (fe < fr) s[hi] = ex, fs[hi] = fe;
      else s[hi] = r, fs[hi] = fr;
    } else if (fr < fs[second]) {
      s[hi] = r, fs[hi] = fr;
    } else {
      const bool outside = fr < fs[hi];
      const std::vector<double> c = along(outside ? -0.5 : 0.5);
      const double fc = eval(c);
      if (fc < (outside ? fr : fs[hi])) {
        s[hi] = c, fs[hi] = fc;
      } else {
        for (std::size_t i = 0; i <= n; ++i) {
          if (i == lo) continue;
          for (std::size_t j = 0; j < n; ++j) s[i][j] = s[lo][j] + 0.5 * (s[i][j] - s[lo][j]);
          fs[i] = eval(s[i]);
        }
      }
    }
  }
  const std::size_t lo =
      static_cast<std::size_t>(std::min_element(fs.begin(), fs.end()) - fs.begin());
  best = fs[lo];
  return unscale(s[lo]);
}

}  // namespace

namespace {
constexpr std::array<detail::EnumName<ProjectionFamily>, 5> kFamilyNames = {
    {{ProjectionFamily::albers, "albers"},
     {ProjectionFamily::lambert_conic, "lambert-conic"},
     {ProjectionFamily::transverse_mercator, "transverse-mercator"},
     {ProjectionFamily::azimuthal_equal_area, "azimuthal-equal-area"},
     {ProjectionFamily::oblique_mercator, "oblique-mercator"}}};
}  // namespace

std::string_view to_string(ProjectionFamily family) noexcept { return detail::name_of(kFamilyNames, family); }

ProjectionFamily parse_projection_family(std::string_view name) {
  return detail::value_named(kFamilyNames, name, "family");
}

TailorResult tailor_crs(const std::vector<RankFeature>& features, ProjectionFamily family,
                        const TailorOptions& options) {
  const RankOptions& ro = options.rank;
  const CrsInfo source = describe_crs(ro.source_crs);
  if (source.kind != CrsKind::geographic) {
    throw Error(ErrorCode::unsupported_crs, "tailoring needs a geographic source CRS; '" + ro.source_crs + "' (" +
                                                source.name + ") is not one");
  }
  const GeoExtent extent = extent_of(features);
  const std::vector<detail::ScreenPoint> points =
      detail::screen_points(features, source.ellipsoid, ro.screen_points);
  const std::string tail = " " + detail::proj_ellipsoid_terms(source.ellipsoid) + " +units=m +no_defs +type=crs";
  const Model model = make_model(family, extent, points, tail, options.optimise_scale);

  detail::Context ctx = detail::make_context();
  auto objective = [&](const std::vector<double>& x) {
    const std::string def = model.definition(x);
    return def.empty() ? kInf : detail::screen_definition(ctx.get(), def, points, ro.metric);
  };
  TailorResult out;
  out.family = family;
  out.invalid = static_cast<std::size_t>(
      std::count_if(features.begin(), features.end(), [](const RankFeature& f) { return !validate(f.geometry).empty(); }));
  out.start_objective_ppm = objective(model.start);
  std::size_t used = 0;
  double best = kInf;
  const std::size_t budget = std::max<std::size_t>(options.max_evaluations, 4 * (model.start.size() + 1));
  std::vector<double> x = nelder_mead(objective, model.start, model.step, budget / 2, used, best);
  // A restart from the optimum with fresh, smaller steps: the worst-case objective has kinks where a simplex
  // can stall.
  std::vector<double> small = model.step;
  for (double& s : small) s /= 10;
  double best2 = kInf;
  const std::vector<double> x2 = nelder_mead(objective, x, small, budget, used, best2);
  if (best2 <= best) x = x2, best = best2;
  if (!std::isfinite(best)) {
    throw Error(ErrorCode::invalid_argument,
                "no usable " + std::string(to_string(family)) + " projection was found for these features");
  }
  out.objective_ppm = best;
  out.evaluations = used;
  for (std::size_t i = 0; i < x.size(); ++i) out.parameters.push_back({model.names[i], x[i]});
  out.proj_string = model.definition(x);
  {
    detail::Pj crs = detail::resolve_crs(ctx.get(), out.proj_string);
    const char* options_wkt[] = {"MULTILINE=NO", nullptr};
    if (const char* wkt = proj_as_wkt(ctx.get(), crs.get(), PJ_WKT2_2019, options_wkt)) out.wkt2 = wkt;
  }
  CandidateCrs cand{"tailored:" + std::string(to_string(family)), "Tailored " + std::string(to_string(family)), true,
                    out.proj_string, std::nullopt};
  out.audit = detail::audit_candidate(cand, features, {}, ro);
  out.audit.screen_ppm = best;
  if (options.compare_registry) {
    RankOptions registry = ro;
    registry.generated = false;
    try {
      RankReport report = rank_crs(features, registry);
      if (!report.ranked.empty()) out.best_registry = report.ranked.front();
    } catch (const Error&) {
      // No database CRS covers the extent: nothing to compare with.
    }
  }
  return out;
}

}  // namespace gridtruth
