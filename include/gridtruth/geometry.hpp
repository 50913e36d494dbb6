// gridtruth — feature geometry in a geographic CRS and its validation.
//
// Coordinates are always (longitude, latitude) in degrees, whatever the official axis order of the CRS.
#pragma once

#include <cstddef>
#include <optional>
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
    // Topology of polygons (OGC 06-103r4, Simple Features 1.2.1, 6.1.11.1 and 6.1.13.1):
    self_intersection,      ///< a ring crosses or touches itself (a ring must be simple), or has zero area
    spike,                  ///< a ring turns back on itself along a segment (an edge of zero width)
    rings_cross,            ///< two rings of one polygon cross or overlap along a segment
    hole_outside,           ///< a hole lies (partly) outside its polygon's outer ring
    nested_holes,           ///< a hole lies inside another hole of the same polygon
    disconnected_interior,  ///< the holes cut the polygon's interior into several pieces
    parts_overlap,          ///< two polygons of a multi-polygon overlap (their area would be counted twice)
  };
  Code code;            ///< what kind of problem
  std::string message;  ///< the problem in words, naming the part, ring, segment and vertex
  /// Where a topology problem is: longitude, latitude in degrees of a crossing point, spike apex or offending
  /// vertex (to about 1e-9 degrees); absent when the problem has no single point.
  std::optional<Coord> at = std::nullopt;
};

/// The code's stable name, spelled as the enumerator ("non_finite", "self_intersection", ...); never throws.
std::string_view to_string(Problem::Code code) noexcept;

/// Whether a problem is one of polygon topology (self_intersection ... parts_overlap), which repair() can mend.
bool is_topology(Problem::Code code) noexcept;

/// Checks a geographic geometry without throwing and lists every problem found (empty: valid).
/// Repeated consecutive vertices are tolerated; unclosed rings are accepted (closed implicitly); winding is free.
///
/// Polygons whose coordinates are all plausible are also checked for the assertions of OGC 06-103r4
/// (Simple Features 1.2.1) 6.1.11.1 and 6.1.13.1: simple rings, no spikes, rings that meet at most at single
/// points, holes inside their outer ring and not inside each other, a connected interior, and multi-polygon parts
/// whose interiors are disjoint. Messages name the polygon, ring, segments (segment i joins vertex i as given to
/// the next distinct vertex) and the longitude and latitude of the problem point (Problem::at).
///
/// How: edges are taken as great-circle arcs. A feature whose vertices all lie within 60° of their mean direction
/// is checked in a gnomonic plane centred there (spherical, radius 6 371 008.8 m: great circles are straight lines
/// in it, so the check is exact for them). A geodesic on the ellipsoid departs from the great-circle arc by about
/// f·L²/R (f the flattening, L the edge's length: ≈ 0.5 mm at 1 km, 5 cm at 10 km; an estimate), so rings meeting
/// closer than that along long edges may be judged either way. A single ring is checked by a sweep over its
/// segments (O(n log n) for ordinary rings); polygons with holes and multi-polygons by Boost.Geometry's is_valid.
/// A larger feature is checked by Boost.Geometry on the WGS 84 ellipsoid (its geographic strategies follow the
/// geodesics), slower, and without the segment of a self-intersection when its lobes cancel.
std::vector<Problem> validate(const Geometry& geometry);

/// The result of repair().
struct Repair {
  Geometry geometry;     ///< the repaired feature (a polygon, or a multi-polygon when it falls into pieces)
  bool repaired = false; ///< false when the feature could not be repaired (see note)
  std::string note;      ///< what was done, or why it could not be
};

/// Makes a polygon or multi-polygon with topology problems valid by this rule (documented in README "Status"):
/// 1. spikes are cut off and repeated vertices removed;
/// 2. each ring is cut at its self-crossings into simple loops, and the ring's region is the even-odd union
///    of its loops (a point is inside if an odd number of loops hold it; a bowtie becomes its two triangles);
/// 3. each polygon's region is its outer ring's region minus the union of its holes' regions (holes outside the
///    ring are dropped, a hole inside another is absorbed by it);
/// 4. the polygons' regions are united (overlaps counted once).
/// New vertices (the crossing points) are placed in the gnomonic plane of validate(). Features too large for that
/// plane, and other geometry types, are not repaired (`repaired` false). Never throws but std::bad_alloc.
Repair repair(const Geometry& geometry);

/// The problems of validate() joined by "; " (empty when valid).
std::string describe(const std::vector<Problem>& problems);
/// The first `max_listed` problems joined by "; ", then "; and N more" when there are more (empty when valid).
/// An auditor's messages list at most 3, so a feature with many bad vertices stays short.
std::string describe(const std::vector<Problem>& problems, std::size_t max_listed);

/// True when most (more than half) of the finite vertices have |x| > 360 or |y| > 90: values no longitude and
/// latitude in degrees take, typical of projected coordinates (feet or metres) read as geographic ones.
bool looks_projected(const Geometry& geometry);
/// The message start an auditor gives a geographic feature for which looks_projected() holds.
extern const char* const looks_projected_text;

}  // namespace gridtruth
