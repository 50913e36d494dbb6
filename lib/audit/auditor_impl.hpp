// Internal: Auditor::Impl and what its stages share (lib/audit/auditor.cpp, audit.cpp, truth.cpp, grid.cpp,
// budget.cpp, distortion.cpp). One feature goes read → validate → truth → grid → budget → verdict
// (Auditor::Impl::audit, audit.cpp); a detail::Feature carries its state from stage to stage.
#pragma once

#include <GeographicLib/Geodesic.hpp>
#include <GeographicLib/Math.hpp>
#include <GeographicLib/Rhumb.hpp>

#include <cmath>
#include <cstddef>
#include <limits>
#include <map>
#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "gridtruth/audit.hpp"
#include "core/compensated_sum.hpp"
#include "core/proj_handles.hpp"
#include "datum_ops.hpp"
#include "short_geodesics.hpp"

namespace gridtruth {
namespace detail {

inline constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
inline constexpr double kUnitRoundoff = std::numeric_limits<double>::epsilon() / 2;  // u (Higham 2002, sect. 2.1)
inline constexpr double kDegToRad = M_PI / 180;
inline constexpr std::size_t kProblemsListed = 3;  // problems an invalid feature's message lists before "and N more"

inline double cross(double ax, double ay, double bx, double by) noexcept { return ax * by - ay * bx; }
inline bool finite(const Coord& c) noexcept { return std::isfinite(c.x) && std::isfinite(c.y); }

/// The largest angle between grid chords (dx, dy) and geodesic start directions (sin α, cos α), without an
/// arctangent per edge: the angle's size is ordered by a monotone key, and only the largest is converted.
class BearingExtreme {
 public:
  void add(double dx, double dy, double sin_azimuth, double cos_azimuth) noexcept {
    const double across = dx * cos_azimuth - dy * sin_azimuth;  // |v| sin θ
    const double along = dx * sin_azimuth + dy * cos_azimuth;   // |v| cos θ
    const double norm = std::hypot(across, along);
    if (!(norm > 0)) return;
    const double s = std::fabs(across) / norm;
    const double key = along >= 0 ? s : 2 - s;  // increases with |θ| over [0°, 180°]
    if (key > key_) {
      key_ = key;
      across_ = across;
      along_ = along;
    }
  }
  double largest_deg() const noexcept {
    return key_ < 0 ? 0.0 : std::fabs(std::atan2(across_, along_)) * 180 / M_PI;
  }

 private:
  double key_ = -1, across_ = 0, along_ = 1;
};

/// One vertex sequence of a feature, with consecutive duplicates and the closing vertex removed.
struct WorkPath {
  enum class Role { line, outer, hole };
  Role role = Role::line;
  std::size_t polygon = 0;   // index of the polygon a ring belongs to
  std::vector<Coord> lonlat_s;  // source CRS, degrees
  std::vector<Coord> lonlat_p;  // target's base geographic CRS, degrees
  std::vector<Coord> xy;        // target CRS plane, its linear unit
  std::vector<Coord> c_xy;      // straight edges: the plane of the edge CRS
  bool closed() const noexcept { return role != Role::line; }
  std::size_t edge_count() const noexcept {  // from xy, which every stage after the projection keeps
    return xy.size() < 2 ? 0 : (closed() ? xy.size() : xy.size() - 1);
  }
};

/// The path's vertices without consecutive duplicates, and for a ring without its closing vertex.
std::vector<Coord> clean_path(const Path& path, bool ring);

/// One inverse per edge on an ellipsoid gives the path's length, a ring's signed area (counter-clockwise
/// positive, in (−A/2, A/2] for an ellipsoid of area A, as GeographicLib's PolygonArea) and each edge's start
/// azimuth and length for densification and bearings (truth.cpp). Geodesic edges use GeographicLib::Geodesic,
/// rhumb edges GeographicLib::Rhumb: both give the area S12 between the edge and the equator (Karney 2013;
/// Karney, "The area of rhumb polygons", 2024).
/// Per edge it keeps only what the later stages read, once: 16 bytes (azimuth, parameter), or the closed-form
/// method's own records (short_geodesics.hpp, which carry the midpoint) — a 10⁶-vertex ring is held once, not
/// once per derived quantity.
struct EllipsoidWalk {
  double length_m = 0;
  double signed_area_m2 = 0;
  double length_bound_m = 0;  // bounds on |length_m − exact|, |signed_area_m2 − exact| (Budget's *_bound); NaN: none
  double area_bound_m2 = 0;
  std::vector<double> azimuth_deg;  // of the true edge at its start (empty when `short_edges` holds the edges)
  std::vector<double> edge_param;  // the edge's curve parameter range: metres along it (geodesic, rhumb) or the
                                   // chord length in the edge CRS's unit (straight edges)
  std::vector<detail::ShortGeodesics::Edge> short_edges;  // the closed-form walk's edges, midpoints included

  void resize(std::size_t edges) {
    azimuth_deg.resize(edges);
    edge_param.resize(edges);
  }
  bool has_midpoints() const noexcept { return !short_edges.empty(); }
  Coord midpoint(std::size_t e) const noexcept { return short_edges[e].midpoint; }
  double param(std::size_t e) const noexcept { return short_edges.empty() ? edge_param[e] : short_edges[e].s12; }
  double azimuth(std::size_t e) const noexcept {
    if (short_edges.empty()) return azimuth_deg[e];
    return std::atan2(short_edges[e].sin_azi, short_edges[e].cos_azi) / kDegToRad;
  }
  /// Sine and cosine of azimuth(e): the closed-form method's own, else sincosd of the stored azimuth.
  void sincos(std::size_t e, double& sin_azimuth, double& cos_azimuth) const noexcept {
    if (short_edges.empty()) {
      GeographicLib::Math::sincosd(azimuth_deg[e], sin_azimuth, cos_azimuth);
      return;
    }
    sin_azimuth = short_edges[e].sin_azi;
    cos_azimuth = short_edges[e].cos_azi;
  }
};

/// Bounds on the measures of a budget (Budget's *_bound), m or m²; `datum` is the datum transformation's
/// propagated accuracy (0 when the datums agree, NaN when unknown).
struct MeasureBounds {
  double reference = kNaN, e_s = kNaN, e_p = kNaN, d = kNaN, g = kNaN, datum = kNaN;
};

// ---- Planar measures and the bounds of measures (budget.cpp) ----------------------------------------------------

/// Twice the signed area of a ring in the plane, centred on its first vertex to keep precision; with `bound2`,
/// also a bound on its round-off.
double planar_area2(const std::vector<Coord>& xy, double* bound2 = nullptr);
/// The sum of the chords of a path in the plane (compensated).
double planar_length(const std::vector<Coord>& xy, bool closed);
/// Round-off bound on planar_length().
double planar_length_roundoff(double length, std::size_t edges);
/// How much a length or an area can change when every vertex of a path moves by at most `sigma`.
double moved_length_bound(double sigma, std::size_t edges);
double moved_area_bound(double sigma, double perimeter, std::size_t vertices);
/// The projection's own numerical accuracy assumed for a vertex, in the target's unit.
double projection_accuracy_units(const std::vector<Coord>& xy, double unit_m);
/// Combines per-ring signed areas into a feature area: Σ over polygons of |outer| − Σ|holes|.
double polygon_area(const std::vector<WorkPath>& paths, const std::vector<double>& signed_area);
Budget make_budget(double reference, double e_s, double e_p, double d, double g, const MeasureBounds& bounds);
Budget truth_only_budget(double reference, double e_s, double e_p, const MeasureBounds& bounds);

/// G and D, summed over the paths of a feature, with their bounds (grid.cpp).
struct GridMeasures {
  CompensatedSum g_length, d_length;       // the target's unit
  std::vector<double> g_area2, d_area2;    // per path, twice the area (unit²)
  // Bounds on G and D in the target's unit (length) and as twice the area (unit²); rings' bounds add.
  double g_length_bound = 0, g_area2_bound = 0, d_length_bound = 0, d_area2_bound = 0;
  std::vector<Coord> samples;  // where the distortion statistics are evaluated (target lon, lat)
  BearingExtreme bearing;  // of every chord against its true edge
  std::size_t densified = 0;
};

/// What one feature carries from stage to stage of Auditor::Impl::audit.
struct Feature {
  AuditResult result;
  // validate: a projected source's geometry in longitude, latitude, or the repaired geometry; `geometry` points
  // to it, or to the input itself (no copy).
  std::optional<Geometry> converted;
  const Geometry* input = nullptr;
  const Geometry* geometry = nullptr;
  double height_m = 0;
  std::string repair_note;  // what --repair did, at the head of the message
  // read: working copies of every path, without repeated vertices, and the points.
  std::vector<WorkPath> paths;
  std::vector<Coord> points_s, points_p, points_xy;
  bool has_length = false, has_area = false;
  std::string transform_failure;  // why the vertices cannot be transformed ("" when they can)
  // truth
  std::vector<EllipsoidWalk> walk_s, walk_p_own;  // walk_p_own: on the target's ellipsoid, with a datum change
  const std::vector<EllipsoidWalk>* walk_p = nullptr;
  double radius_m = 0, lift = 1;
  double ref_length = 0, ref_area = 0, e_s_length = 0, e_s_area = 0, e_p_length = 0, e_p_area = 0;
  MeasureBounds length_bounds, area_bounds;
  std::string area_of_use_message;
  // grid
  GridMeasures grid;

  /// A message after what --repair did.
  std::string with_note(const std::string& message) const {
    return repair_note.empty() ? message : message.empty() ? repair_note : repair_note + "; " + message;
  }
};

}  // namespace detail

struct Auditor::Impl {
  AuditOptions options;
  CrsInfo source;
  CrsInfo target;
  TransformInfo transform;
  EdgeSpec edges;
  detail::Context ctx;
  detail::Pj op_proj;  // target's base geographic CRS (lon, lat degrees) → target plane (easting, northing)
  // The datum transformation (source lon, lat → target plane): the candidates PROJ offers and its choice per
  // feature, or a pinned one. datum_shift is false when source and target share their geographic CRS.
  bool datum_shift = false;
  std::shared_ptr<const detail::DatumCandidates> candidates;  // null: identity, or a pinned pipeline
  std::optional<std::size_t> pinned;  // --datum-op AUTH:CODE: the candidate every feature uses
  detail::Pj op_pinned;               // --datum-op PIPELINE
  mutable std::map<std::size_t, detail::Pj> op_cache;  // instantiated candidates of this auditor (one thread)
  detail::Pj op_fast;    // the same as op_proj, rebuilt from its PROJ pipeline string (no CRS wrapper): faster
  detail::Pj op_source;  // projected source plane → its base geographic CRS; null for a geographic source
  detail::Pj op_s_to_c;  // straight edges: source lon, lat → the edge CRS's plane
  detail::Pj op_c_to_s;  // straight edges: the edge CRS's plane → source lon, lat
  detail::Pj op_c_to_p;  // straight edges: the edge CRS's plane → target's geographic lon, lat; null when identity
  bool edge_crs_is_target = false;  // straight edges in the target's own plane: D = G
  bool source_is_target = false;    // a projected source audited in its own CRS: G uses the given coordinates
  GeographicLib::Geodesic geod_s{GeographicLib::Constants::WGS84_a(), GeographicLib::Constants::WGS84_f()};
  GeographicLib::Geodesic geod_p{GeographicLib::Constants::WGS84_a(), GeographicLib::Constants::WGS84_f()};
  std::optional<GeographicLib::Rhumb> rhumb_s, rhumb_p;
  std::optional<detail::ShortGeodesics> short_s, short_p;  // the closed-form short-edge method, when enabled
  double unit_m = 1;
  double tolerance_units = 0;  // densify tolerance in the target's linear unit

  Impl() = default;
  explicit Impl(const AuditOptions& o);
  std::unique_ptr<Impl> clone() const;

  AuditResult audit(const Geometry& g, double height_m) const;
  PointFactors factors_p(double lon_p, double lat_p) const { return factors_batch({{lon_p, lat_p}}).front(); }
  /// Source coordinates (as given) → source longitude, latitude; NaN when they cannot be converted.
  Coord to_source_lonlat(const Coord& c) const;
  /// The datum transformation for a feature with this bounding box (source lon, lat degrees): PROJ's default
  /// for it, or the pinned one; `index` into candidates->operations() (none for a pinned pipeline). Null when identity.
  PJ* datum_op(const AreaOfUse& box, std::optional<std::size_t>& index) const;

 private:
  struct CrsHandles;  // the PROJ objects set-up works with (auditor.cpp)

  // ---- set-up (auditor.cpp) ----
  static void check_options(const AuditOptions& o);
  void set_up_crss(CrsHandles& h);
  void set_up_projection(CrsHandles& h);
  void set_up_edges(CrsHandles& h);
  void set_up_datum(CrsHandles& h);
  bool transform_array(PJ* op, PJ_DIRECTION dir, std::vector<Coord>& pts) const;
  void check_pinned_pipeline(PJ_CONTEXT* c, const PJ* src_geog, const PJ* tgt) const;
  /// A projected source's geometry taken to longitude and latitude; problems listed like validate()'s.
  Geometry source_to_lonlat(const Geometry& g, std::vector<Problem>& problems) const;

  // ---- the stages of audit(); each returns false when the feature's result is final (audit.cpp, truth.cpp,
  // grid.cpp, budget.cpp) ----
  bool validate_stage(detail::Feature& f) const;
  void read_stage(detail::Feature& f) const;
  void vertices_stage(detail::Feature& f) const;
  bool truth_stage(detail::Feature& f) const;
  bool check_stage(detail::Feature& f) const;
  void target_truth_stage(detail::Feature& f) const;
  bool grid_stage(detail::Feature& f) const;
  bool distortion_stage(detail::Feature& f) const;
  void budget_stage(detail::Feature& f) const;
  /// The feature is unmeasurable for `why`: its result holds the truth only (E_P as given). Returns false.
  bool fail(detail::Feature& f, const std::string& why, double e_p_length, double e_p_area) const;
  /// G and D of path i, added to f.grid; why the path cannot be measured ("" when it can).
  std::string grid_path(detail::Feature& f, std::size_t i) const;

  // Fills lonlat_p and xy of every path and point; returns an error message when a vertex fails.
  std::string transform_vertices(PJ* op_full, const std::string& op_name, std::vector<detail::WorkPath>& paths,
                                 std::vector<Coord>& points_lonlat_p, std::vector<Coord>& points_xy,
                                 const std::vector<Coord>& points_s) const;
  std::vector<PointFactors> factors_batch(const std::vector<Coord>& lonlat_p) const;
  std::optional<Distortion> distortion_over(const std::vector<Coord>& samples) const;
  std::string area_of_use_check(const std::vector<detail::WorkPath>& paths, const std::vector<Coord>& points,
                                bool& beyond_margin) const;
  void apply_verdict(AuditResult& r) const;
  /// Why the projected vertices cannot be trusted (a sample does not round-trip); "" when they can.
  std::string projected_vertices_problem(const std::vector<detail::WorkPath>& paths,
                                         const std::vector<Coord>& points_p,
                                         const std::vector<Coord>& points_xy) const;
};

}  // namespace gridtruth
