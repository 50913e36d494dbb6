// gridtruth — refusing degenerate target projections, and distrusting projected vertices that do not round-trip.
//
// A projection given absurd parameters (e.g. "+proj=tmerc +lon_0=1e308") still "works" in PROJ: every point maps
// somewhere, the grid measures come out as 0 and the budget as −10⁶ ppm. Such a target is refused at set-up, and a
// feature whose vertices do not survive the projection's round trip is unmeasurable rather than `ok`.
#include "target_check.hpp"

#include <GeographicLib/Geodesic.hpp>

#include <cmath>
#include <cstdio>
#include <initializer_list>
#include <optional>
#include <string>

#include "gridtruth/error.hpp"
#include "core/proj_handles.hpp"

namespace gridtruth::detail {

namespace {

constexpr double kPi = 3.14159265358979323846;

std::string number(double v) {
  char buf[48];
  std::snprintf(buf, sizeof buf, "%.12g", v);
  return buf;
}

bool finite(const Coord& c) { return std::isfinite(c.x) && std::isfinite(c.y); }

// Why the projection fails at (lon, lat) degrees: "" when it projects, round-trips and has sane factors.
std::string point_problem(PJ* projection, const CrsInfo& target, double lon, double lat,
                          const std::function<PointFactors(double, double)>& factors) {
  const std::string where = "at (" + number(lon) + ", " + number(lat) + ")";
  proj_errno_reset(projection);
  const PJ_COORD xy = proj_trans(projection, PJ_FWD, proj_coord(lon, lat, 0, 0));
  if (!std::isfinite(xy.xy.x) || !std::isfinite(xy.xy.y)) return "the point " + where + " cannot be projected";
  const PJ_COORD back = proj_trans(projection, PJ_INV, xy);
  if (!std::isfinite(back.lp.lam) || !std::isfinite(back.lp.phi)) {
    return "the projection of the point " + where + " cannot be taken back";
  }
  const GeographicLib::Geodesic geod(target.ellipsoid.a_m, target.ellipsoid.f);
  double s12 = 0;
  geod.Inverse(lat, lon, back.lp.phi, back.lp.lam, s12);
  if (!(s12 <= kRoundTripTolerance_m)) {
    return "the point " + where + " comes back " + number(s12) + " m away from its projection's inverse (" +
           number(back.lp.lam) + ", " + number(back.lp.phi) + ")";
  }
  if (std::string why = factors_problem(factors(lon, lat)); !why.empty()) return why + " " + where;
  return {};
}

}  // namespace

namespace {

std::string scales_problem(std::initializer_list<double> all, double smallest, double areal) {
  for (double v : all) {
    if (!std::isfinite(v)) return "the scale factors are not finite";
  }
  if (!(smallest > 0) || !(areal > 0)) {
    return "the scale factors are not positive (smallest " + number(smallest) + ", areal " + number(areal) + ")";
  }
  return {};
}

}  // namespace

std::string factors_problem(const PointFactors& f) {
  return scales_problem({f.meridional_scale, f.parallel_scale, f.areal_scale, f.tissot_a, f.tissot_b,
                         f.angular_distortion_deg, f.convergence_deg},
                        f.tissot_b, f.areal_scale);
}

std::string distortion_problem(const Distortion& d) {
  return scales_problem({d.scale_min, d.scale_max, d.areal_scale_min, d.areal_scale_max,
                         d.angular_distortion_max_deg, d.convergence_min_deg, d.convergence_max_deg},
                        d.scale_min, d.areal_scale_min);
}

void check_target_projection(PJ_CONTEXT* ctx, const PJ* target_horizontal, PJ* projection, const CrsInfo& target,
                             const std::function<PointFactors(double, double)>& factors) {
  auto refuse = [&](const std::string& why) {
    throw Error(ErrorCode::unsupported_crs, "target CRS '" + target.definition + "' is degenerate: " + why);
  };
  // 1. The conversion's parameters: finite, angles within ±360°.
  Pj base(proj_get_type(target_horizontal) == PJ_TYPE_BOUND_CRS ? proj_get_source_crs(ctx, target_horizontal)
                                                                : proj_clone(ctx, target_horizontal));
  Pj conversion(base ? proj_crs_get_coordoperation(ctx, base.get()) : nullptr);
  std::optional<double> origin_lon, origin_lat;
  const int count = conversion ? proj_coordoperation_get_param_count(ctx, conversion.get()) : 0;
  for (int i = 0; i < count; ++i) {
    const char* name = nullptr;
    const char* category = nullptr;
    const char* unit = nullptr;
    double value = 0, to_si = 1;
    if (!proj_coordoperation_get_param(ctx, conversion.get(), i, &name, nullptr, nullptr, &value, nullptr, &to_si,
                                       &unit, nullptr, nullptr, &category)) {
      continue;
    }
    const std::string label = name ? name : "parameter " + std::to_string(i);
    const std::string given = number(value) + (unit ? " " + std::string(unit) : "");
    if (!std::isfinite(value)) refuse("its parameter '" + label + "' is " + given);
    if (category && std::string(category) == "angular") {
      const double deg = value * (to_si * 180 / kPi);
      if (!(std::fabs(deg) <= 360)) refuse("its parameter '" + label + "' is " + given + ", beyond ±360°");
      const std::string n = label;
      if (!origin_lon && n.rfind("Longitude of", 0) == 0) origin_lon = deg;
      if (!origin_lat && n.rfind("Latitude of", 0) == 0 && std::fabs(deg) <= 90) origin_lat = deg;
    }
  }
  // 2. A representative point must project, round-trip and have sane factors.
  std::vector<Coord> points;
  if (target.area_of_use) {
    const AreaOfUse& a = *target.area_of_use;
    const double width = a.east_deg >= a.west_deg ? a.east_deg - a.west_deg : a.east_deg + 360 - a.west_deg;
    points.push_back({a.west_deg + width / 2, (a.south_deg + a.north_deg) / 2});
  }
  points.push_back({origin_lon.value_or(0), origin_lat.value_or(0)});
  std::string first;
  for (const Coord& p : points) {
    const std::string why = point_problem(projection, target, p.x, p.y, factors);
    if (why.empty()) return;
    if (first.empty()) first = why;
  }
  refuse(first);
}

std::string round_trip_problem(PJ* projection, const std::vector<Coord>& lonlat, const std::vector<Coord>& xy,
                               bool inverse, double unit_m, double a_m, std::size_t max_checked) {
  const std::size_t n = std::min(lonlat.size(), xy.size());
  if (n == 0) return {};
  const std::size_t checked = std::min(n, max_checked);
  constexpr double kDegToRad = kPi / 180;
  for (std::size_t k = 0; k < checked; ++k) {
    const std::size_t i = k * n / checked;
    double miss_m = 0;
    if (inverse) {
      const PJ_COORD back = proj_trans(projection, PJ_INV, proj_coord(xy[i].x, xy[i].y, 0, 0));
      const Coord c{back.lp.lam, back.lp.phi};
      if (!finite(c)) return "the projected vertex " + std::to_string(i) + " cannot be taken back";
      // Small angles: metres on a sphere of radius a (an upper bound within 0.7 % of the ellipsoid's).
      const double dlon = std::remainder(c.x - lonlat[i].x, 360.0);
      miss_m = a_m * kDegToRad * std::hypot(dlon * std::cos(lonlat[i].y * kDegToRad), c.y - lonlat[i].y);
    } else {
      const PJ_COORD fwd = proj_trans(projection, PJ_FWD, proj_coord(lonlat[i].x, lonlat[i].y, 0, 0));
      const Coord c{fwd.xy.x, fwd.xy.y};
      if (!finite(c)) return "the vertex " + std::to_string(i) + " cannot be projected again";
      miss_m = unit_m * std::hypot(c.x - xy[i].x, c.y - xy[i].y);
    }
    if (!(miss_m <= kVertexRoundTripTolerance_m)) {
      return "the target projection does not round-trip at vertex " + std::to_string(i) + " (" +
             number(lonlat[i].x) + ", " + number(lonlat[i].y) + "): " + number(miss_m) + " m apart";
    }
  }
  return {};
}

}  // namespace gridtruth::detail
