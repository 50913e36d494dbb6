// Auditor::Impl::audit: one feature through the stages read → validate → truth → grid → budget → verdict, and
// the stages that prepare its vertices (validation, working copies, datum transformation and projection, checks).
#include <algorithm>
#include <cstdio>
#include <limits>
#include <utility>

#include "auditor_impl.hpp"
#include "target_check.hpp"

namespace gridtruth {

using detail::Feature;
using detail::EllipsoidWalk;
using detail::finite;
using detail::kProblemsListed;
using detail::WorkPath;

namespace detail {

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

}  // namespace detail

AuditResult Auditor::Impl::audit(const Geometry& input, double height_m) const {
  Feature f;
  f.input = &input;
  f.height_m = height_m;
  if (!validate_stage(f)) return std::move(f.result);
  read_stage(f);          // 1. working copies of every path
  vertices_stage(f);      // 2. datum transformation and projection (a failure is reported after the truth)
  if (!truth_stage(f)) return std::move(f.result);   // 3. E_S and R
  if (!check_stage(f)) return std::move(f.result);   // the vertices' transformation, the area of use
  target_truth_stage(f);  // 4. E_P
  if (!grid_stage(f)) return std::move(f.result);        // 5. G and D, bearings
  if (!distortion_stage(f)) return std::move(f.result);  // 6. distortion statistics
  budget_stage(f);                                       // 7. the budget
  f.result.message = f.with_note(f.area_of_use_message);
  apply_verdict(f.result);
  return std::move(f.result);
}

bool Auditor::Impl::validate_stage(Feature& f) const {
  const Geometry& input = *f.input;
  AuditResult& r = f.result;
  r.type = input.type;
  r.vertices = input.vertex_count();
  r.height_m = f.height_m;
  std::vector<Problem> problems;
  if (op_source) f.converted = source_to_lonlat(input, problems);
  for (Problem& p : validate(f.converted ? *f.converted : input)) problems.push_back(std::move(p));
  if (!std::isfinite(f.height_m) || f.height_m < -10000 || f.height_m > 100000) {
    problems.push_back({Problem::Code::non_finite, "height " + std::to_string(f.height_m) +
                                                       " m is not within -10000 m to 100000 m"});
  }
  if (options.repair && !problems.empty() &&
      std::all_of(problems.begin(), problems.end(), [](const Problem& p) { return is_topology(p.code); })) {
    Repair fixed = repair(f.converted ? *f.converted : input);
    if (fixed.repaired) {
      f.repair_note = fixed.note + "; was: " + describe(problems, kProblemsListed);
      f.converted = std::move(fixed.geometry);
      problems.clear();
    } else {
      problems.push_back({problems.front().code, fixed.note});
    }
  }
  if (!problems.empty()) {
    r.status = Status::invalid;
    r.message = describe(problems, kProblemsListed);
    if (!op_source && looks_projected(input)) r.message = std::string(looks_projected_text) + ": " + r.message;
    return false;
  }
  f.geometry = f.converted ? &*f.converted : &input;
  return true;
}

void Auditor::Impl::read_stage(Feature& f) const {
  const Geometry& g = *f.geometry;
  switch (g.type) {
    case GeometryType::point:
    case GeometryType::multi_point:
      f.points_s = g.points;
      break;
    case GeometryType::line_string:
    case GeometryType::multi_line_string:
      for (const Path& line : g.lines) {
        f.paths.push_back({WorkPath::Role::line, 0, detail::clean_path(line, false), {}, {}, {}});
      }
      break;
    case GeometryType::polygon:
    case GeometryType::multi_polygon:
      for (std::size_t p = 0; p < g.polygons.size(); ++p) {
        f.paths.push_back({WorkPath::Role::outer, p, detail::clean_path(g.polygons[p].outer, true), {}, {}, {}});
        for (const Path& hole : g.polygons[p].holes) {
          f.paths.push_back({WorkPath::Role::hole, p, detail::clean_path(hole, true), {}, {}, {}});
        }
      }
      break;
  }
  f.has_length = !f.paths.empty();
  f.has_area = g.type == GeometryType::polygon || g.type == GeometryType::multi_polygon;
}

void Auditor::Impl::vertices_stage(Feature& f) const {
  std::vector<WorkPath>& paths = f.paths;
  // The datum transformation PROJ would apply at the centre of the feature's bounding box, for all its vertices.
  PJ* op_full = nullptr;
  if (datum_shift) {
    constexpr double inf = std::numeric_limits<double>::infinity();
    double west = inf, south = inf, east = -inf, north = -inf;
    auto extend = [&](const std::vector<Coord>& pts) {
      for (const Coord& p : pts) {
        west = std::min(west, p.x), east = std::max(east, p.x);
        south = std::min(south, p.y), north = std::max(north, p.y);
      }
    };
    for (const WorkPath& path : paths) extend(path.lonlat_s);
    extend(f.points_s);
    op_full = datum_op(AreaOfUse{"", west, south, east, north}, f.result.datum_operation);
  }
  const std::string& op_name =
      f.result.datum_operation ? candidates->operations()[*f.result.datum_operation].name : transform.name;
  f.transform_failure = transform_vertices(op_full, op_name, paths, f.points_p, f.points_xy, f.points_s);
  if (source_is_target && f.transform_failure.empty() && f.repair_note.empty()) {
    // The grid measure is what a GIS computes from the coordinates as given, not from their round trip through
    // longitude and latitude (which moves them by nanometres).
    std::size_t k = 0;
    auto given = [&](const Path& raw, bool ring) {
      std::vector<Coord> cleaned = detail::clean_path(raw, ring);
      if (k < paths.size() && cleaned.size() == paths[k].xy.size()) paths[k].xy = std::move(cleaned);
      ++k;
    };
    for (const Path& line : f.input->lines) given(line, false);
    for (const Polygon& polygon : f.input->polygons) {
      given(polygon.outer, true);
      for (const Path& hole : polygon.holes) given(hole, true);
    }
  }
  if (edges.model == EdgeModel::straight) {
    for (std::size_t i = 0; i < paths.size() && f.transform_failure.empty(); ++i) {
      paths[i].c_xy = paths[i].lonlat_s;
      if (!transform_array(op_s_to_c.get(), PJ_FWD, paths[i].c_xy)) {
        f.transform_failure = "a vertex of part " + std::to_string(i + 1) + " cannot be taken to the edge CRS (" +
                              edges.crs + ")";
      }
    }
  }
}

bool Auditor::Impl::check_stage(Feature& f) const {
  if (!f.transform_failure.empty()) return fail(f, f.transform_failure, detail::kNaN, detail::kNaN);
  if (std::string why = projected_vertices_problem(f.paths, f.points_p, f.points_xy); !why.empty()) {
    return fail(f, why, detail::kNaN, detail::kNaN);
  }
  bool beyond_margin = false;
  f.area_of_use_message = area_of_use_check(f.paths, f.points_s, beyond_margin);
  if (beyond_margin) {
    return datum_shift ? fail(f, f.area_of_use_message, detail::kNaN, detail::kNaN)
                       : fail(f, f.area_of_use_message, f.e_s_length, f.e_s_area);
  }
  // Not read again: the source coordinates and, with a datum change, the walk on the source ellipsoid (so that a
  // long path is not held once more than the later stages need).
  for (WorkPath& path : f.paths) std::vector<Coord>().swap(path.lonlat_s);
  if (datum_shift) std::vector<EllipsoidWalk>().swap(f.walk_s);
  return true;
}

std::string Auditor::Impl::transform_vertices(PJ* op_full, const std::string& op_name, std::vector<WorkPath>& paths,
                                              std::vector<Coord>& points_lonlat_p,
                                              std::vector<Coord>& points_xy,
                                              const std::vector<Coord>& points_s) const {
  auto one = [&](const std::vector<Coord>& lonlat_s, std::vector<Coord>& lonlat_p, std::vector<Coord>& xy,
                 const std::string& what) -> std::string {
    if (!op_full) {
      lonlat_p = lonlat_s;
      xy = lonlat_s;
      if (!transform_array(op_fast.get(), PJ_FWD, xy)) return what + " cannot be projected to the target CRS";
      return {};
    }
    xy = lonlat_s;
    if (!transform_array(op_full, PJ_FWD, xy)) {
      return what + " cannot be transformed to the target CRS (" +
             op_name + ")";
    }
    lonlat_p = xy;
    if (!transform_array(op_fast.get(), PJ_INV, lonlat_p)) {
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

std::string Auditor::Impl::area_of_use_check(const std::vector<WorkPath>& paths, const std::vector<Coord>& points,
                                             bool& beyond_margin) const {
  beyond_margin = false;
  if (!target.area_of_use) return {};
  const AreaOfUse& aou = *target.area_of_use;
  // Degrees outside the bounding box (0 inside); longitudes compared the short way round.
  auto outside_deg = [&](const Coord& c) {
    const double lat_out = std::max({0.0, aou.south_deg - c.y, c.y - aou.north_deg});
    const double width = std::remainder(aou.east_deg - aou.west_deg, 360.0);
    const double span = width <= 0 ? width + 360 : width;  // across the antimeridian when west > east
    const double from_west = std::remainder(c.x - aou.west_deg, 360.0);
    const double offset = from_west < 0 ? from_west + 360 : from_west;  // [0, 360)
    const double lon_out = offset <= span ? 0.0 : std::min(offset - span, 360 - offset);
    return std::max(lat_out, lon_out);
  };
  std::size_t total = 0, outside = 0;
  double worst = 0;
  auto check = [&](const Coord& c) {
    ++total;
    const double d = outside_deg(c);
    if (d > 0) ++outside;
    worst = std::max(worst, d);
  };
  for (const WorkPath& p : paths) {
    for (const Coord& c : p.lonlat_s) check(c);
  }
  for (const Coord& c : points) check(c);
  if (outside == 0) return {};
  beyond_margin = worst > options.area_of_use_margin_deg;
  char worst_text[32];
  std::snprintf(worst_text, sizeof worst_text, "%.3g", worst);
  return std::string(beyond_margin ? "" : "warning: ") + std::to_string(outside) + " of " + std::to_string(total) +
         " vertices lie outside the area of use of the target CRS (" + aou.name + "), up to " + worst_text +
         "° beyond it" +
         (beyond_margin ? "; more than the margin of " + std::to_string(options.area_of_use_margin_deg).substr(0, 4) +
                              "°, so the grid measure is not meaningful"
                        : "");
}

std::string Auditor::Impl::projected_vertices_problem(const std::vector<WorkPath>& paths,
                                                      const std::vector<Coord>& points_p,
                                                      const std::vector<Coord>& points_xy) const {
  // A sample of four vertices: the target was checked at set-up, this catches a projection that degenerates
  // away from its representative point. With a datum transformation lonlat_p is the inverse of xy, so the
  // forward projection is compared instead.
  constexpr std::size_t kChecked = 4;
  const bool inverse = !datum_shift;
  const double a_m = target.ellipsoid.a_m;
  if (!paths.empty()) {
    return detail::round_trip_problem(op_fast.get(), paths.front().lonlat_p, paths.front().xy, inverse, unit_m,
                                      a_m, kChecked);
  }
  return detail::round_trip_problem(op_fast.get(), points_p, points_xy, inverse, unit_m, a_m, kChecked);
}

}  // namespace gridtruth
