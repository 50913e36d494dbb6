// gridtruth — feature geometry and its validation.
#include "core/enum_names.hpp"
#include "gridtruth/geometry.hpp"

#include <array>
#include <algorithm>
#include <cmath>
#include <sstream>
#include <string>
#include <utility>

#include "validity.hpp"

namespace gridtruth {

namespace {

// Where a path sits inside its geometry, e.g. "polygon 2 hole 1" or "" for the one line of a LineString.
// Indices are 0-based, as in the GeoJSON coordinate arrays and the C++ vectors.
std::string join_location(const std::string& where, const std::string& what) {
  if (where.empty()) return what;
  if (what.empty()) return where;
  return where + " " + what;
}

std::string format_number(double v) {
  std::ostringstream out;
  out.precision(15);
  out << v;
  return out.str();
}

void add(std::vector<Problem>& problems, Problem::Code code, const std::string& where, const std::string& text) {
  problems.push_back(Problem{code, where.empty() ? text : where + ": " + text});
}

// Checks one coordinate: finite, |lat| <= 90, |lon| <= 540. Adds one problem per defect.
void check_coord(const Coord& c, const std::string& where, std::vector<Problem>& problems) {
  if (!std::isfinite(c.x) || !std::isfinite(c.y)) {
    add(problems, Problem::Code::non_finite, where,
        "non-finite coordinate (" + format_number(c.x) + ", " + format_number(c.y) + ")");
    // A finite partner may still be out of range: check it too.
    if (std::isfinite(c.y) && std::abs(c.y) > 90)
      add(problems, Problem::Code::latitude_range, where,
          "latitude " + format_number(c.y) + " is outside [-90, 90]");
    if (std::isfinite(c.x) && std::abs(c.x) > 540)
      add(problems, Problem::Code::longitude_range, where,
          "longitude " + format_number(c.x) + " is outside [-540, 540]");
    return;
  }
  if (std::abs(c.y) > 90)
    add(problems, Problem::Code::latitude_range, where,
        "latitude " + format_number(c.y) + " is outside [-90, 90]");
  if (std::abs(c.x) > 540)
    add(problems, Problem::Code::longitude_range, where,
        "longitude " + format_number(c.x) + " is outside [-540, 540]");
}

// Number of distinct vertices of a path. Repeated consecutive vertices and a closing vertex are the same
// point as their neighbour, so counting distinct values covers both; non-finite vertices each count once
// (they are reported on their own and must not also produce a "too few vertices" report). Stops early, with a
// count of at least `enough`, once that many are found.
std::size_t distinct_vertices(const Path& path, std::size_t enough) {
  // Cheap exit for the common case: `enough` pairwise different finite vertices among the first ones seen.
  std::vector<Coord> seen;
  for (const Coord& c : path) {
    if (!(std::isfinite(c.x) && std::isfinite(c.y))) break;
    if (std::none_of(seen.begin(), seen.end(), [&](const Coord& s) { return s.x == c.x && s.y == c.y; })) {
      seen.push_back(c);
      if (seen.size() >= enough) return seen.size();
    }
  }
  std::vector<std::pair<double, double>> finite;
  finite.reserve(path.size());
  std::size_t non_finite = 0;
  for (const Coord& c : path) {
    if (std::isfinite(c.x) && std::isfinite(c.y))
      finite.emplace_back(c.x, c.y);
    else
      ++non_finite;
  }
  std::sort(finite.begin(), finite.end());
  const auto last = std::unique(finite.begin(), finite.end());
  return static_cast<std::size_t>(last - finite.begin()) + non_finite;
}

bool plausible(const Coord& c) noexcept {
  return std::isfinite(c.x) && std::isfinite(c.y) && std::abs(c.y) <= 90 && std::abs(c.x) <= 540;
}

void check_vertices(const Path& path, const std::string& where, std::vector<Problem>& problems) {
  for (std::size_t i = 0; i < path.size(); ++i) {
    if (plausible(path[i])) continue;  // the location text is only built for a vertex with a problem
    check_coord(path[i], join_location(where, "vertex " + std::to_string(i)), problems);
  }
}

void check_line(const Path& line, const std::string& where, std::vector<Problem>& problems) {
  if (line.empty()) {
    add(problems, Problem::Code::empty, where, "line is empty");
    return;
  }
  check_vertices(line, where, problems);
  const std::size_t n = distinct_vertices(line, 2);
  if (n < 2)
    add(problems, Problem::Code::too_few_vertices, where,
        "line has " + std::to_string(n) + " distinct vertex, needs 2");
}

void check_ring(const Path& ring, const std::string& where, std::vector<Problem>& problems) {
  if (ring.empty()) {
    add(problems, Problem::Code::empty, where, "ring is empty");
    return;
  }
  check_vertices(ring, where, problems);
  const std::size_t n = distinct_vertices(ring, 3);
  if (n < 3)
    add(problems, Problem::Code::too_few_vertices, where,
        "ring has " + std::to_string(n) + (n == 1 ? " distinct vertex" : " distinct vertices") + ", needs 3");
}

void check_polygon(const Polygon& polygon, const std::string& where, std::vector<Problem>& problems) {
  check_ring(polygon.outer, join_location(where, "outer ring"), problems);
  for (std::size_t h = 0; h < polygon.holes.size(); ++h)
    check_ring(polygon.holes[h], join_location(where, "hole " + std::to_string(h)), problems);
}

void check_single_count(std::size_t count, std::string_view type, std::string_view part,
                        std::vector<Problem>& problems) {
  if (count == 1) return;
  add(problems, Problem::Code::wrong_part_count, "",
      std::string(type) + " has " + std::to_string(count) + " " + std::string(part) + "s, needs exactly 1");
}

void check_multi_count(std::size_t count, std::string_view type, std::vector<Problem>& problems) {
  if (count == 0) add(problems, Problem::Code::empty, "", std::string(type) + " has no parts");
}

}  // namespace

namespace {
constexpr std::array<detail::EnumName<GeometryType>, 6> kGeometryTypeNames = {
    {{GeometryType::point, "Point"},
     {GeometryType::line_string, "LineString"},
     {GeometryType::polygon, "Polygon"},
     {GeometryType::multi_point, "MultiPoint"},
     {GeometryType::multi_line_string, "MultiLineString"},
     {GeometryType::multi_polygon, "MultiPolygon"}}};
}  // namespace

std::string_view to_string(GeometryType type) noexcept {
  const std::string_view name = detail::name_of(kGeometryTypeNames, type);
  return name.empty() ? "Unknown" : name;
}

Geometry Geometry::point(Coord c) {
  Geometry g;
  g.type = GeometryType::point;
  g.points.push_back(c);
  return g;
}

Geometry Geometry::line_string(Path line) {
  Geometry g;
  g.type = GeometryType::line_string;
  g.lines.push_back(std::move(line));
  return g;
}

Geometry Geometry::polygon(Path outer, std::vector<Path> holes) {
  Geometry g;
  g.type = GeometryType::polygon;
  g.polygons.push_back(Polygon{std::move(outer), std::move(holes)});
  return g;
}

Geometry Geometry::multi_polygon(std::vector<Polygon> parts) {
  Geometry g;
  g.type = GeometryType::multi_polygon;
  g.polygons = std::move(parts);
  return g;
}

Geometry Geometry::multi_line_string(std::vector<Path> parts) {
  Geometry g;
  g.type = GeometryType::multi_line_string;
  g.lines = std::move(parts);
  return g;
}

Geometry Geometry::multi_point(std::vector<Coord> parts) {
  Geometry g;
  g.type = GeometryType::multi_point;
  g.points = std::move(parts);
  return g;
}

std::size_t Geometry::vertex_count() const noexcept {
  switch (type) {
    case GeometryType::point:
    case GeometryType::multi_point:
      return points.size();
    case GeometryType::line_string:
    case GeometryType::multi_line_string: {
      std::size_t n = 0;
      for (const Path& line : lines) n += line.size();
      return n;
    }
    case GeometryType::polygon:
    case GeometryType::multi_polygon: {
      std::size_t n = 0;
      for (const Polygon& polygon : polygons) {
        n += polygon.outer.size();
        for (const Path& hole : polygon.holes) n += hole.size();
      }
      return n;
    }
  }
  return 0;
}

std::vector<Problem> validate(const Geometry& geometry) {
  std::vector<Problem> problems;
  switch (geometry.type) {
    case GeometryType::point:
      check_single_count(geometry.points.size(), "Point", "point", problems);
      for (std::size_t i = 0; i < geometry.points.size(); ++i)
        check_coord(geometry.points[i], geometry.points.size() == 1 ? "point" : "point " + std::to_string(i),
                    problems);
      break;
    case GeometryType::multi_point:
      check_multi_count(geometry.points.size(), "MultiPoint", problems);
      for (std::size_t i = 0; i < geometry.points.size(); ++i)
        check_coord(geometry.points[i], "point " + std::to_string(i), problems);
      break;
    case GeometryType::line_string:
      check_single_count(geometry.lines.size(), "LineString", "line", problems);
      for (std::size_t i = 0; i < geometry.lines.size(); ++i)
        check_line(geometry.lines[i], geometry.lines.size() == 1 ? "" : "line " + std::to_string(i), problems);
      break;
    case GeometryType::multi_line_string:
      check_multi_count(geometry.lines.size(), "MultiLineString", problems);
      for (std::size_t i = 0; i < geometry.lines.size(); ++i)
        check_line(geometry.lines[i], "line " + std::to_string(i), problems);
      break;
    case GeometryType::polygon:
      check_single_count(geometry.polygons.size(), "Polygon", "polygon", problems);
      for (std::size_t i = 0; i < geometry.polygons.size(); ++i)
        check_polygon(geometry.polygons[i],
                      geometry.polygons.size() == 1 ? "" : "polygon " + std::to_string(i), problems);
      break;
    case GeometryType::multi_polygon:
      check_multi_count(geometry.polygons.size(), "MultiPolygon", problems);
      for (std::size_t i = 0; i < geometry.polygons.size(); ++i)
        check_polygon(geometry.polygons[i], "polygon " + std::to_string(i), problems);
      break;
  }
  // Topology only once every vertex is plausible and every ring has enough distinct vertices.
  if (problems.empty()) detail::check_topology(geometry, problems);
  return problems;
}

std::string describe(const std::vector<Problem>& problems) { return describe(problems, problems.size()); }

std::string describe(const std::vector<Problem>& problems, std::size_t max_listed) {
  std::string text;
  for (std::size_t i = 0; i < problems.size() && i < max_listed; ++i) {
    if (!text.empty()) text += "; ";
    text += problems[i].message;
  }
  if (problems.size() > max_listed) text += "; and " + std::to_string(problems.size() - max_listed) + " more";
  return text;
}

bool looks_projected(const Geometry& geometry) {
  std::size_t finite = 0, beyond = 0;
  auto count = [&](const Coord& c) {
    if (!std::isfinite(c.x) || !std::isfinite(c.y)) return;
    ++finite;
    if (std::abs(c.x) > 360 || std::abs(c.y) > 90) ++beyond;
  };
  for (const Coord& c : geometry.points) count(c);
  for (const Path& line : geometry.lines) std::for_each(line.begin(), line.end(), count);
  for (const Polygon& polygon : geometry.polygons) {
    std::for_each(polygon.outer.begin(), polygon.outer.end(), count);
    for (const Path& hole : polygon.holes) std::for_each(hole.begin(), hole.end(), count);
  }
  return finite > 0 && 2 * beyond > finite;
}

const char* const looks_projected_text = "coordinates look projected (e.g. feet/metres); pass --source-crs";

}  // namespace gridtruth
