// gridtruth — feature geometry in a geographic CRS and its validation.
//
// Coordinates are always (longitude, latitude) in degrees, whatever the official axis order of the CRS.
#pragma once

#include <cstddef>
#include <string>
#include <string_view>
#include <vector>

namespace gridtruth {

/// One vertex: longitude and latitude in degrees (or easting/northing in a projected CRS's unit where a
/// function says so).
struct Coord {
  double x = 0;  ///< longitude in degrees (or easting)
  double y = 0;  ///< latitude in degrees (or northing)
};

/// A sequence of vertices. As a ring it may be open or closed; an open ring is closed implicitly.
using Path = std::vector<Coord>;

/// A polygon: one outer ring and any number of holes. Winding order is free: areas are unsigned.
struct Polygon {
  Path outer;               ///< the outer ring, (longitude, latitude) degrees; open or closed
  std::vector<Path> holes;  ///< the inner rings (holes), each open or closed; their areas are subtracted
};

/// The geometry types of GeoJSON (RFC 7946) and simple-features WKT, except GeometryCollection.
enum class GeometryType { point, line_string, polygon, multi_point, multi_line_string, multi_polygon };

/// Stable lower-case name: "Point", "LineString", ... as GeoJSON spells them.
std::string_view to_string(GeometryType type) noexcept;

/// A geometry. Which member is used depends on `type`:
/// - point, multi_point: `points` (a point has exactly one);
/// - line_string, multi_line_string: `lines` (a line string has exactly one);
/// - polygon, multi_polygon: `polygons` (a polygon has exactly one).
struct Geometry {
  GeometryType type = GeometryType::point;  ///< which of points, lines or polygons holds the geometry
  std::vector<Coord> points;                ///< the points of a point or multi-point
  std::vector<Path> lines;                  ///< the lines of a line string or multi-line string
  std::vector<Polygon> polygons;            ///< the polygons of a polygon or multi-polygon

  /// A point at (longitude, latitude) in degrees. Does not validate (see validate()); throws only std::bad_alloc.
  static Geometry point(Coord c);
  /// A line string through the vertices, (longitude, latitude) degrees. Does not validate.
  static Geometry line_string(Path line);
  /// A polygon with an outer ring and optional holes, (longitude, latitude) degrees; rings open or closed, any
  /// winding. Does not validate.
  static Geometry polygon(Path outer, std::vector<Path> holes = {});
  /// A multi-polygon of the parts. Does not validate.
  static Geometry multi_polygon(std::vector<Polygon> parts);
  /// A multi-line string of the parts. Does not validate.
  static Geometry multi_line_string(std::vector<Path> parts);
  /// A multi-point of the parts. Does not validate.
  static Geometry multi_point(std::vector<Coord> parts);

  /// Total number of vertices as given (closing vertices of rings included when present).
  std::size_t vertex_count() const noexcept;
};

/// One problem found by validate(): a stable code and a message naming the part, ring and vertex.
struct Problem {
  /// Stable codes of the problems validate() finds.
  enum class Code {
    non_finite,          ///< NaN or infinite coordinate
    latitude_range,      ///< |latitude| > 90°
    longitude_range,     ///< |longitude| > 540° (absurd: not a wrapped longitude but a wrong value)
    empty,               ///< no parts, or an empty part / ring
    too_few_vertices,    ///< a line with fewer than 2 distinct vertices, a ring with fewer than 3
    wrong_part_count,    ///< a single geometry (Point, LineString, Polygon) holding more or fewer than one part
  };
  Code code;            ///< what kind of problem
  std::string message;  ///< the problem in words, naming the part, ring and vertex
};

/// Checks a geographic geometry without throwing and lists every problem found (empty: valid).
/// Repeated consecutive vertices are tolerated; unclosed rings are accepted (closed implicitly).
/// Self-intersection is not checked here: a self-intersecting ring is measured as the signed sum of its lobes.
std::vector<Problem> validate(const Geometry& geometry);

/// The problems of validate() joined by "; " (empty when valid).
std::string describe(const std::vector<Problem>& problems);

}  // namespace gridtruth
