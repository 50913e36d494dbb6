#include "gridtruth/audit.hpp"

#include <GeographicLib/Geodesic.hpp>
#include <GeographicLib/GeodesicLine.hpp>
#include <GeographicLib/Accumulator.hpp>
#include <GeographicLib/Rhumb.hpp>

#include <algorithm>
#include <array>
#include <cctype>
#include <cmath>
#include <cstdio>
#include <limits>
#include <functional>
#include <map>
#include <utility>

#include "gridtruth/error.hpp"
#include "core/compensated_sum.hpp"
#include "datum_ops.hpp"
#include "edge_quadrature.hpp"
#include "core/proj_handles.hpp"
#include "short_geodesics.hpp"
#include "target_check.hpp"

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
constexpr double kUnitRoundoff = std::numeric_limits<double>::epsilon() / 2;  // u (Higham 2002, sect. 2.1)
constexpr double kDegToRad = M_PI / 180;

using detail::CompensatedSum;

double cross(double ax, double ay, double bx, double by) noexcept { return ax * by - ay * bx; }

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

bool finite(const Coord& c) noexcept { return std::isfinite(c.x) && std::isfinite(c.y); }

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

/// +1 when the edge from lon1 to lon2 (the shorter way round) crosses the prime meridian eastwards, −1 westwards,
/// 0 otherwise; longitude +0 counts as east of the meridian. The parity of the sum over a ring tells whether the
/// ring encircles a pole (Karney 2013, sec. 6).
int prime_meridian_crossing(double lon1_deg, double lon2_deg) noexcept {
  const double d = GeographicLib::Math::AngDiff(lon1_deg, lon2_deg);
  double start = std::remainder(lon1_deg, 360.0);  // [−180, 180]
  if (start >= 180) start -= 360;                  // [−180, 180)
  const double end = start + d;
  if (d > 0 && start < 0 && end >= 0) return 1;
  if (d < 0 && start >= 0 && end < 0) return -1;
  return 0;
}

/// One inverse per edge on an ellipsoid gives the path's length, a ring's signed area (counter-clockwise
/// positive, in (−A/2, A/2] for an ellipsoid of area A, as GeographicLib's PolygonArea) and each edge's start
/// azimuth and length for densification and bearings. `Geod` is GeographicLib::Geodesic (geodesic edges) or
/// GeographicLib::Rhumb (rhumb edges): both give the area S12 between the edge and the equator (Karney 2013;
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

/// Accumulates edges (length, S12, prime-meridian crossings) and reduces the sum to a ring's signed area.
class RingSum {
 public:
  void add(double s12, double area12, double lon1, double lon2) {
    length_ += s12;
    area_ += area12;
    crossings_ += prime_meridian_crossing(lon1, lon2);
  }
  void add_area(double area12) { area_ += area12; }
  void add_length(double s12) { length_ += s12; }
  double length() const { return length_(); }
  /// The ring's area, counter-clockwise positive, in (−whole/2, whole/2].
  double signed_area(double whole) const {
    // The sum of S12 is the area to the south of the edges, clockwise positive; reduce it to the ring's area.
    GeographicLib::Accumulator<> area(area_);
    area.remainder(whole);
    double ring = area();
    if (crossings_ % 2 != 0) ring += (ring < 0 ? 0.5 : -0.5) * whole;  // the ring encircles a pole
    ring = -ring;                                                       // counter-clockwise positive
    if (ring > whole / 2) ring -= whole;
    else if (ring <= -whole / 2) ring += whole;
    return ring;
  }

 private:
  GeographicLib::Accumulator<> length_, area_;  // double-double sums
  int crossings_ = 0;
};

struct EdgeInverse {
  double s12 = 0, azi1 = 0, area12 = 0;
};
EdgeInverse inverse(const GeographicLib::Geodesic& g, const Coord& a, const Coord& b, bool area) {
  EdgeInverse r;
  double azi2 = 0, m12 = 0, mm12 = 0, mm21 = 0;
  g.GenInverse(a.y, a.x, b.y, b.x,
               GeographicLib::Geodesic::DISTANCE | GeographicLib::Geodesic::AZIMUTH |
                   (area ? unsigned(GeographicLib::Geodesic::AREA) : 0U),
               r.s12, r.azi1, azi2, m12, mm12, mm21, r.area12);
  return r;
}
EdgeInverse inverse(const GeographicLib::Rhumb& g, const Coord& a, const Coord& b, bool area) {
  EdgeInverse r;
  g.GenInverse(a.y, a.x, b.y, b.x,
               GeographicLib::Rhumb::DISTANCE | GeographicLib::Rhumb::AZIMUTH |
                   (area ? unsigned(GeographicLib::Rhumb::AREA) : 0U),
               r.s12, r.azi1, r.area12);
  return r;
}

template <class Geod>
EllipsoidWalk walk_on_ellipsoid(const Geod& geod, const std::vector<Coord>& lonlat, bool closed) {
  EllipsoidWalk w;
  const std::size_t n = lonlat.size();
  const std::size_t edges = n < 2 ? 0 : (closed ? n : n - 1);
  w.resize(edges);
  RingSum sum;
  for (std::size_t e = 0; e < edges; ++e) {
    const Coord& a = lonlat[e];
    const Coord& b = lonlat[(e + 1) % n];
    const EdgeInverse edge = inverse(geod, a, b, closed);
    sum.add(edge.s12, closed ? edge.area12 : 0.0, a.x, b.x);
    w.azimuth_deg[e] = edge.azi1;
    w.edge_param[e] = edge.s12;
  }
  w.length_m = sum.length();
  if (closed && edges > 0) w.signed_area_m2 = sum.signed_area(geod.EllipsoidArea());
  // GeographicLib's stated accuracy per edge (Karney 2013, J. Geodesy 87:43, sect. 9; GeographicLib's documentation:
  // 15 nm in s12, 0.1 m² in S12, from memory), taken for rhumb edges too (an assumption), plus the double-double
  // sums' round-off.
  w.length_bound_m = 15e-9 * double(edges) + 4 * kUnitRoundoff * w.length_m;
  w.area_bound_m2 = closed ? 0.1 * double(edges) + 4 * kUnitRoundoff * std::fabs(w.signed_area_m2) : 0.0;
  return w;
}

/// The same walk for geodesic edges by the closed-form short-edge method (short_geodesics.hpp), which also gives
/// each edge's midpoint; nothing when the method does not apply to this path.
std::optional<EllipsoidWalk> walk_short_edges(const detail::ShortGeodesics& method, const GeographicLib::Geodesic& geod,
                                              const std::vector<Coord>& lonlat, bool closed) {
  EllipsoidWalk w;
  if (!method.walk(lonlat, closed, w.short_edges)) return std::nullopt;
  RingSum sum;
  for (std::size_t e = 0; e < w.short_edges.size(); ++e) {
    const detail::ShortGeodesics::Edge& edge = w.short_edges[e];
    sum.add(edge.s12, closed ? edge.area12 : 0.0, lonlat[e].x, lonlat[(e + 1) % lonlat.size()].x);
  }
  w.length_m = sum.length();
  if (closed && !w.short_edges.empty()) w.signed_area_m2 = sum.signed_area(geod.EllipsoidArea());
  // The closed-form method's tested bound (AuditOptions::closed_form_short_edges, tests/short_edge_truth_test.cpp).
  w.length_bound_m = 1e-9 * w.length_m + 1e-9;
  w.area_bound_m2 = closed ? 1e-9 * std::fabs(w.signed_area_m2) + 1e-3 : 0.0;
  return w;
}

/// Twice the signed area of a ring in the plane, centred on its first vertex to keep precision. With `bound2`, also
/// a bound on its round-off: each term (a − o) × (b − o) is within 4u·(|a_x b_y| + |a_y b_x|) of exact (two
/// subtractions, two products, one difference; Higham 2002, sect. 3.1), their compensated sum within
/// 2u|S| + 2n u² Σ|terms| (Higham 2002, sect. 4.3).
double planar_area2(const std::vector<Coord>& xy, double* bound2 = nullptr) {
  if (bound2) *bound2 = 0;
  if (xy.size() < 3) return 0;
  const Coord o = xy.front();
  CompensatedSum sum;
  double magnitude = 0;
  for (std::size_t i = 0; i < xy.size(); ++i) {
    const Coord& a = xy[i];
    const Coord& b = xy[(i + 1) % xy.size()];
    sum.add(cross(a.x - o.x, a.y - o.y, b.x - o.x, b.y - o.y));
    if (bound2) magnitude += std::fabs((a.x - o.x) * (b.y - o.y)) + std::fabs((a.y - o.y) * (b.x - o.x));
  }
  const double n = double(xy.size());
  if (bound2) *bound2 = (4 * kUnitRoundoff + 2 * n * kUnitRoundoff * kUnitRoundoff) * 1.01 * magnitude +
                        2 * kUnitRoundoff * std::fabs(sum.value());
  return sum.value();
}

/// Round-off bound on planar_length(): each chord within 3u of exact (two subtractions, hypot), the compensated
/// sum within 2u|S| + 2n u² S (Higham 2002, sect. 4.3), all terms positive.
double planar_length_roundoff(double length, std::size_t edges) {
  return (5 * kUnitRoundoff + 2 * double(edges) * kUnitRoundoff * kUnitRoundoff) * 1.01 * length;
}

/// How much a measure can change when every vertex of a path moves by at most `sigma` (independently): a length
/// by 2σ per edge; an area by σ·perimeter + max(π, n)·σ² (first order: the shoelace's gradient at a vertex is half
/// the perpendicular of its neighbours' difference; the Steiner bound σ·P + πσ² for a boundary moved by ≤ σ is
/// common practice).
double moved_length_bound(double sigma, std::size_t edges) { return 2 * sigma * double(edges); }
double moved_area_bound(double sigma, double perimeter, std::size_t vertices) {
  return sigma * perimeter + std::max(3.141592653589793, double(vertices)) * sigma * sigma;
}

/// The projection's own numerical accuracy assumed for a vertex, in the target's unit: 1 nm, or 4 ulp of the
/// largest coordinate of the path (PROJ's transverse Mercator is accurate to a few nm, Karney 2011 J. Geodesy
/// 85:475; the same assumed for every projection).
double projection_accuracy_units(const std::vector<Coord>& xy, double unit_m) {
  double largest = 0;
  for (const Coord& c : xy) largest = std::max({largest, std::fabs(c.x), std::fabs(c.y)});
  return std::max(1e-9 / unit_m, 8 * kUnitRoundoff * largest);
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

/// Bounds on the measures of a budget (Budget's *_bound), m or m²; `datum` is the datum transformation's
/// propagated accuracy (0 when the datums agree, NaN when unknown).
struct MeasureBounds {
  double reference = kNaN, e_s = kNaN, e_p = kNaN, d = kNaN, g = kNaN, datum = kNaN;
};

/// Budget::*_bound from the measures' bounds: a difference's bound is the sum of its terms' (plus its own
/// rounding, u|difference|).
void set_bounds(Budget& b, const MeasureBounds& m) {
  b.reference_bound = m.reference;
  b.ellipsoid_source_bound = m.e_s;
  b.ellipsoid_target_bound = m.e_p;
  b.densified_grid_bound = m.d;
  b.grid_bound = m.g;
  const double u = kUnitRoundoff;
  b.from_datum_computation_bound = m.e_p + m.e_s + u * std::fabs(b.from_datum);
  b.error_computation_bound = m.g + m.reference + u * std::fabs(b.error);
  b.from_datum_bound = b.from_datum_computation_bound + m.datum;
  b.error_bound = b.error_computation_bound + m.datum;
  b.from_edges_bound = m.g + m.d + u * std::fabs(b.from_edges);
  b.from_scale_bound = m.d + m.e_p + u * std::fabs(b.from_scale);
  b.from_height_bound = m.e_s + m.reference + u * std::fabs(b.from_height);
}

Budget make_budget(double reference, double e_s, double e_p, double d, double g, const MeasureBounds& bounds) {
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
  set_bounds(b, bounds);
  return b;
}

Budget truth_only_budget(double reference, double e_s, double e_p, const MeasureBounds& bounds) {
  Budget b = make_budget(reference, e_s, e_p, kNaN, kNaN, bounds);
  b.from_datum = std::isnan(e_p) ? kNaN : e_p - e_s;
  set_bounds(b, bounds);
  return b;
}

/// Truth for edges straight in the plane of a CRS C: each edge c0 → c1 of C's plane is taken back to the
/// ellipsoid point by point and followed by geodesic chords, refined until the chord of every piece passes within
/// the tolerance of the curve's midpoint (estimated as 2·T/s, T the geodesic triangle of the piece's ends and
/// midpoint). A final piece contributes its two half-chords plus a third of T (the curve taken as a parabola,
/// Archimedes' 4/3 rule; Richardson extrapolation for length). The same pieces give the measure on a second
/// ellipsoid (the target's) when the datums differ.
class StraightWalker {
 public:
  struct Side {
    const GeographicLib::Geodesic* geod;
    PJ* from_plane;  // C's plane → longitude, latitude (degrees) on this side's geographic CRS
  };

  StraightWalker(Side source, std::optional<Side> target, double tolerance_m)
      : source_(source), target_(target), tolerance_m_(tolerance_m) {}

  /// Walks a path given by its vertices in C's plane (`c_xy`) and on each side's geographic CRS; returns a failure
  /// message, or fills `on_source` and `on_target` (a copy of `on_source` when there is no target side).
  std::string walk(const std::vector<Coord>& c_xy, const std::vector<Coord>& lonlat_s,
                   const std::vector<Coord>& lonlat_p, bool closed, std::size_t path_index,
                   EllipsoidWalk& on_source, EllipsoidWalk& on_target) {
    const std::size_t n = c_xy.size();
    const std::size_t edges = n < 2 ? 0 : (closed ? n : n - 1);
    RingSum sum_s, sum_p;
    on_source = EllipsoidWalk{};
    on_target = EllipsoidWalk{};
    on_source.resize(edges);
    on_target.resize(edges);
    for (std::size_t e = 0; e < edges; ++e) {
      const std::size_t j = (e + 1) % n;
      const Coord c0 = c_xy[e], c1 = c_xy[j];
      const double length = std::hypot(c1.x - c0.x, c1.y - c0.y);
      Piece first{0, 1, {lonlat_s[e], lonlat_s[j]}, {lonlat_p[e], lonlat_p[j]}, {}, {}};
      chord(source_, first.s[0], first.s[1], first.chord_s);
      if (target_) chord(*target_, first.p[0], first.p[1], first.chord_p);
      stack_.assign(1, first);
      while (!stack_.empty()) {
        const Piece piece = stack_.back();
        stack_.pop_back();
        const double tm = 0.5 * (piece.t0 + piece.t1);
        const Coord mc{c0.x + tm * (c1.x - c0.x), c0.y + tm * (c1.y - c0.y)};
        const Coord ms = from_plane(source_, mc);
        const Coord mp = target_ ? from_plane(*target_, mc) : ms;
        if (!finite(ms) || !finite(mp)) return failure(e, path_index, "cannot be taken back to the ellipsoid");
        Chord a_s, b_s, a_p, b_p;
        chord(source_, piece.s[0], ms, a_s);
        chord(source_, ms, piece.s[1], b_s);
        const double whole_s = source_.geod->EllipsoidArea();
        const double triangle_s = std::remainder(a_s.area + b_s.area - piece.chord_s.area, whole_s);
        const double deviation = piece.chord_s.length > 0 ? 2 * std::fabs(triangle_s) / piece.chord_s.length : 0;
        if (target_) {
          chord(*target_, piece.p[0], mp, a_p);
          chord(*target_, mp, piece.p[1], b_p);
        }
        if (deviation <= tolerance_m_) {
          accept(sum_s, piece.s[0], ms, piece.s[1], a_s, b_s, piece.chord_s, whole_s);
          if (target_) {
            accept(sum_p, piece.p[0], mp, piece.p[1], a_p, b_p, piece.chord_p, target_->geod->EllipsoidArea());
          }
          continue;
        }
        if ((piece.t1 - piece.t0) * length < 1e-3 || ++points_ > kMaxPoints) {
          return failure(e, path_index, "does not converge when taken back to the ellipsoid");
        }
        stack_.push_back({tm, piece.t1, {ms, piece.s[1]}, {mp, piece.p[1]}, b_s, b_p});
        stack_.push_back({piece.t0, tm, {piece.s[0], ms}, {piece.p[0], mp}, a_s, a_p});
      }
      // The true edge's azimuth at its start: toward a point 1 unit (or half the edge) along it.
      const double t = std::min(0.5, 1.0 / std::max(length, 1e-300));
      const Coord near{c0.x + t * (c1.x - c0.x), c0.y + t * (c1.y - c0.y)};
      start_azimuth(source_, lonlat_s[e], from_plane(source_, near), on_source, e);
      if (target_) start_azimuth(*target_, lonlat_p[e], from_plane(*target_, near), on_target, e);
      on_source.edge_param[e] = length;
    }
    on_source.length_m = sum_s.length();
    if (closed && edges > 0) on_source.signed_area_m2 = sum_s.signed_area(source_.geod->EllipsoidArea());
    if (target_) {
      on_target.length_m = sum_p.length();
      if (closed && edges > 0) on_target.signed_area_m2 = sum_p.signed_area(target_->geod->EllipsoidArea());
      on_target.edge_param = on_source.edge_param;
    } else {
      on_target = on_source;
    }
    return {};
  }

 private:
  struct Chord {
    double length = 0, area = 0;
  };
  struct Piece {
    double t0, t1;
    Coord s[2], p[2];  // ends on the source and target ellipsoids
    Chord chord_s, chord_p;
  };
  static constexpr std::size_t kMaxPoints = 4'000'000;

  static Coord from_plane(const Side& side, const Coord& c) {
    const PJ_COORD out = proj_trans(side.from_plane, PJ_FWD, proj_coord(c.x, c.y, 0, 0));
    Coord lonlat{out.lp.lam, out.lp.phi};
    if (!finite(lonlat) || out.lp.lam == HUGE_VAL) lonlat = {kNaN, kNaN};
    return lonlat;
  }
  static void chord(const Side& side, const Coord& a, const Coord& b, Chord& out) {
    double azi1 = 0, azi2 = 0, m12 = 0, mm12 = 0, mm21 = 0;
    side.geod->GenInverse(a.y, a.x, b.y, b.x,
                          GeographicLib::Geodesic::DISTANCE | GeographicLib::Geodesic::AREA, out.length, azi1,
                          azi2, m12, mm12, mm21, out.area);
  }
  static void accept(RingSum& sum, const Coord& a, const Coord& m, const Coord& b, const Chord& am,
                     const Chord& mb, const Chord& ab, double whole) {
    sum.add(am.length, am.area, a.x, m.x);
    sum.add(mb.length, mb.area, m.x, b.x);
    sum.add_area(std::remainder(am.area + mb.area - ab.area, whole) / 3);
    sum.add_length((am.length + mb.length - ab.length) / 3);
  }
  static void start_azimuth(const Side& side, const Coord& a, const Coord& toward, EllipsoidWalk& w,
                            std::size_t e) {
    double s12 = 0, azi1 = 0, azi2 = 0;
    side.geod->Inverse(a.y, a.x, toward.y, toward.x, s12, azi1, azi2);
    w.azimuth_deg[e] = azi1;
  }
  static std::string failure(std::size_t e, std::size_t path_index, const std::string& what) {
    return "edge " + std::to_string(e + 1) + " of part " + std::to_string(path_index + 1) + " " + what;
  }

  Side source_;
  std::optional<Side> target_;
  double tolerance_m_;
  std::vector<Piece> stack_;
  std::size_t points_ = 0;
};

/// Adaptive densification of one path's edges in the target plane (the D measure).
///
/// Each edge is the geodesic on the target's ellipsoid; its projected image is approximated piecewise by
/// parabolas through the projected end points and midpoint of each piece, in geodesic distance. A piece is final
/// when its projected midpoint lies within the tolerance of its chord, or when the parabola of the piece predicts
/// the projected quarter points within 8 × the tolerance across the chord (then its two halves, each with its
/// own midpoint, are final: their parabolas deviate from the image by about 1/8 of that residual, the cubic term
/// scaling with length³); otherwise it is split. A final piece contributes the parabola's area (4/3 of the triangle on its chord,
/// Archimedes) and length (Richardson extrapolation of the two-chord length), so D's error is well below the
/// tolerance. A piece shorter than 1 mm that still deviates marks a tear (a discontinuity of the projection).
class PathDensifier {
 public:
  /// A true edge: its point at parameter s (0 at the start vertex), as longitude and latitude on the target's
  /// geographic CRS; NaN where it cannot be computed.
  using Curve = std::function<Coord(double s)>;

  PathDensifier(PJ* op, double tolerance_units, double radius_units, const WorkPath& path, std::size_t path_index,
                std::vector<Coord>& samples, std::size_t& densified)
      : op_(op), tolerance_(tolerance_units), radius_(radius_units), path_(path), path_index_(path_index),
        samples_(samples), densified_(densified), origin_(path.xy.front()) {}

  /// Densifies edge e → j, the curve over parameters [0, length], whose point at length/2 is `mid_lonlat`,
  /// projected to `mid_xy` (computed beforehand, all edges of a path at once); returns a failure message.
  std::string edge(std::size_t e, std::size_t j, const Curve& curve, double length, const Coord& mid_lonlat,
                   const Coord& mid_xy) {
    curve_ = &curve;
    const double edge_m = length;
    edge_index_ = e;
    if (!(edge_m > 1e-9)) {
      // A true edge of no length (e.g. two vertices on the same pole at different longitudes): its image is the
      // limit of the boundary there, the chord itself.
      const Coord p0 = path_.xy[e], p1 = path_.xy[j];
      accept(p0, {0.5 * (p0.x + p1.x), 0.5 * (p0.y + p1.y)}, p1);
      return {};
    }
    // The first midpoint joins the distortion samples only when the edge needs refining: along an edge that is
    // straight to within the tolerance the scale varies linearly to within ~(L/R)², so its extremes are at the
    // vertices.
    first_midpoint_ = mid_lonlat;
    ++densified_;
    const Coord pm = finite(mid_lonlat) ? mid_xy : Coord{kNaN, kNaN};
    if (!finite(pm)) return failure("cannot be projected to the target CRS");
    bool first = true;
    const Coord p0 = path_.xy[e], p1 = path_.xy[j];
    if (deviation(p0, pm, p1) > tolerance_ && std::isfinite(deviation(p0, pm, p1))) {
      // A smooth image that bends by more than the tolerance: the line integrals by quadrature
      // (edge_quadrature.hpp), when they converge; else the adaptive densification below.
      samples_.push_back(first_midpoint_);
      first = false;
      const double c = chord(p0, p1);
      const detail::EdgeQuadrature::Result q =
          quadrature_.integrate(curve, edge_m, p0, pm, p1, op_, radius_, kQuadratureShare * tolerance_,
                                kQuadratureShare * tolerance_ * c, samples_);
      densified_ += q.points;
      if (q.accepted) {
        length_.add(q.length);
        length_error_.add(q.length_error);
        ++quadrature_edges_;
        order_sum_ += q.order;
        if (path_.closed()) {
          area2_.add(cross(p0.x - origin_.x, p0.y - origin_.y, p1.x - origin_.x, p1.y - origin_.y));
          area2_.add(q.bulge2);
          area_error_.add(q.area_error);
        }
        return {};
      }
    }
    if (const double d = deviation(p0, pm, p1); d <= tolerance_) {
      // One parabola: it misses the image's cubic term, which scales as d·c/R (an estimate with a factor 10 of
      // margin, tested in tests/bounds_test.cpp).
      accept(p0, pm, p1);
      const double c = chord(p0, p1);
      bound_length_.add(kParabolaMargin * d * d / radius_);
      if (path_.closed()) bound_area2_.add(2 * kParabolaMargin * d * c * c / radius_);
      return {};
    }
    stack_.assign(1, Piece{0.0, edge_m, p0, p1, pm});
    while (!stack_.empty()) {
      const Piece piece = stack_.back();
      stack_.pop_back();
      if (deviation(piece.p0, piece.pm, piece.p1) <= tolerance_) {
        accept_piece(piece.p0, piece.pm, piece.p1);
        continue;
      }
      if (first) {
        samples_.push_back(first_midpoint_);
        first = false;
      }
      if (piece.s1 - piece.s0 < 1e-3) {
        return failure("tears when projected (it crosses a discontinuity of the target CRS, such as its "
                       "antimeridian or an interruption)");
      }
      const double sm = 0.5 * (piece.s0 + piece.s1);
      Coord q1, q3;
      if (!point_at(0.5 * (piece.s0 + sm), q1) || !point_at(0.5 * (sm + piece.s1), q3)) {
        return failure("cannot be projected to the target CRS");
      }
      if (densified_ > kMaxPoints) return "densification exceeded " + std::to_string(kMaxPoints) + " points";
      // Lagrange prediction of the quarter points by the piece's parabola.
      const Coord pred1{0.375 * piece.p0.x + 0.75 * piece.pm.x - 0.125 * piece.p1.x,
                        0.375 * piece.p0.y + 0.75 * piece.pm.y - 0.125 * piece.p1.y};
      const Coord pred3{-0.125 * piece.p0.x + 0.75 * piece.pm.x + 0.375 * piece.p1.x,
                        -0.125 * piece.p0.y + 0.75 * piece.pm.y + 0.375 * piece.p1.y};
      // Only the part across the chord changes the shape; along it the parabola is merely reparametrised.
      const double cx = piece.p1.x - piece.p0.x, cy = piece.p1.y - piece.p0.y;
      const double c = std::hypot(cx, cy);
      const double residual =
          c > 0 ? std::max(std::fabs(cross(cx, cy, q1.x - pred1.x, q1.y - pred1.y)),
                           std::fabs(cross(cx, cy, q3.x - pred3.x, q3.y - pred3.y))) / c
                : std::numeric_limits<double>::infinity();
      if (residual <= kCubic * tolerance_ && deviation(piece.p0, q1, piece.pm) <= kSmooth * chord(piece.p0, piece.pm) &&
          deviation(piece.pm, q3, piece.p1) <= kSmooth * chord(piece.pm, piece.p1)) {
        accept_piece(piece.p0, q1, piece.pm);
        accept_piece(piece.pm, q3, piece.p1);
        continue;
      }
      stack_.push_back({sm, piece.s1, piece.pm, piece.p1, q3});
      stack_.push_back({piece.s0, sm, piece.p0, piece.pm, q1});
    }
    return {};
  }

  double length_units() const { return length_.value(); }
  double area2_units() const { return area2_.value(); }
  /// Sums of the quadrature's error estimates (edge_quadrature.hpp) over the edges it measured.
  double quadrature_length_error_units() const { return length_error_.value(); }
  double quadrature_area_error_units2() const { return area_error_.value(); }
  /// Bounds on the method's error (Budget::densified_grid_bound, without round-off): the quadrature's estimates,
  /// the parabola edges' estimate, the fallback pieces' whole bulges; length in the unit, area as twice the area.
  double method_length_bound_units() const { return length_error_.value() + bound_length_.value(); }
  double method_area2_bound_units2() const { return 2 * area_error_.value() + bound_area2_.value(); }
  std::size_t quadrature_edges() const { return quadrature_edges_; }
  double mean_order() const { return quadrature_edges_ ? double(order_sum_) / quadrature_edges_ : 0; }

 private:
  struct Piece {
    double s0, s1;
    Coord p0, p1, pm;
  };
  static constexpr std::size_t kMaxPoints = 4'000'000;
  static constexpr double kSmooth = 0.25;  // a smooth image stays near its chord relative to the chord's length
  // The residual of a piece's parabola at its quarter points is the image's cubic term; the parabolas of its two
  // halves (through the quarter points) then deviate by about 1/8 of it (the cubic term scales with length³).
  static constexpr double kCubic = 8;

  static double chord(const Coord& p0, const Coord& p1) { return std::hypot(p1.x - p0.x, p1.y - p0.y); }

  /// How far pm is from where a smooth image would put it: its distance from the chord p0p1, or — when it sits
  /// far from the chord's middle along the chord (a jump in the image) — infinity.
  static double deviation(const Coord& p0, const Coord& pm, const Coord& p1) {
    const double cx = p1.x - p0.x, cy = p1.y - p0.y;
    const double dx = pm.x - 0.5 * (p0.x + p1.x), dy = pm.y - 0.5 * (p0.y + p1.y);
    const double c2 = cx * cx + cy * cy;
    if (c2 == 0) return std::hypot(dx, dy);
    if (std::fabs(cx * dx + cy * dy) >= kSmooth * c2) return std::numeric_limits<double>::infinity();
    return std::fabs(cross(cx, cy, dx, dy)) / std::sqrt(c2);
  }

  bool point_at(double s, Coord& xy) {
    const Coord lonlat = (*curve_)(s);
    const PJ_COORD out = proj_trans(op_, PJ_FWD, proj_coord(lonlat.x, lonlat.y, 0, 0));
    xy = {out.xy.x, out.xy.y};
    if (!finite(lonlat)) xy = {kNaN, kNaN};
    samples_.push_back(lonlat);
    ++densified_;
    return finite(xy);
  }

  /// A piece of the fallback densification, its error bounded by its whole bulge (3d²/c in length, d·c in area).
  void accept_piece(const Coord& p0, const Coord& pm, const Coord& p1) {
    accept(p0, pm, p1);
    const double c = chord(p0, p1);
    const double d = deviation(p0, pm, p1);
    bound_length_.add(c > 0 ? 3 * d * d / c : 2 * d);
    if (path_.closed()) bound_area2_.add(2 * d * c);
  }

  void accept(const Coord& p0, const Coord& pm, const Coord& p1) {
    const double c = chord(p0, p1);
    length_.add((4 * (chord(p0, pm) + chord(pm, p1)) - c) / 3);
    if (!path_.closed()) return;
    area2_.add(cross(p0.x - origin_.x, p0.y - origin_.y, p1.x - origin_.x, p1.y - origin_.y));
    area2_.add(4.0 / 3.0 * cross(pm.x - p0.x, pm.y - p0.y, p1.x - p0.x, p1.y - p0.y));
  }

  std::string failure(const std::string& what) const {
    return "edge " + std::to_string(edge_index_ + 1) + " of part " + std::to_string(path_index_ + 1) + " " + what;
  }

  PJ* op_;
  double tolerance_;
  double radius_;  // the Earth's radius (target ellipsoid's a) in the target's unit, for the quadrature's order
  const WorkPath& path_;
  std::size_t path_index_;
  std::vector<Coord>& samples_;
  std::size_t& densified_;
  Coord origin_;
  const Curve* curve_ = nullptr;
  std::size_t edge_index_ = 0;
  Coord first_midpoint_;
  std::vector<Piece> stack_;
  CompensatedSum length_, area2_;
  // The quadrature's targets per edge, as a share of the densify tolerance δ: length δ·share, area δ·share·chord.
  static constexpr double kQuadratureShare = 1e-2;
  detail::EdgeQuadrature quadrature_;
  CompensatedSum length_error_, area_error_;
  static constexpr double kParabolaMargin = 10;
  CompensatedSum bound_length_, bound_area2_;
  std::size_t quadrature_edges_ = 0;
  long order_sum_ = 0;
};

}  // namespace

struct Auditor::Impl {
  AuditOptions options;
  CrsInfo source;
  CrsInfo target;
  TransformInfo transform;
  EdgeSpec edges;
  detail::Context ctx;
  Pj op_proj;    // target's base geographic CRS (lon, lat degrees) → target plane (easting, northing)
  // The datum transformation (source lon, lat → target plane): the candidates PROJ offers and its choice per
  // feature, or a pinned one. datum_shift is false when source and target share their geographic CRS.
  bool datum_shift = false;
  std::shared_ptr<const detail::DatumCandidates> candidates;  // null: identity, or a pinned pipeline
  std::optional<std::size_t> pinned;  // --datum-op AUTH:CODE: the candidate every feature uses
  Pj op_pinned;                       // --datum-op PIPELINE
  mutable std::map<std::size_t, Pj> op_cache;  // instantiated candidates of this auditor (one thread)
  Pj op_fast;    // the same as op_proj, rebuilt from its PROJ pipeline string (no CRS wrapper): faster per point
  Pj op_source;  // projected source plane → its base geographic CRS; null for a geographic source
  Pj op_s_to_c;  // straight edges: source lon, lat → the edge CRS's plane
  Pj op_c_to_s;  // straight edges: the edge CRS's plane → source lon, lat
  Pj op_c_to_p;  // straight edges: the edge CRS's plane → target's geographic lon, lat; null when identity
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
  // Fills lonlat_p and xy of every path and point; returns an error message when a vertex fails.
  std::string transform_vertices(PJ* op_full, const std::string& op_name, std::vector<WorkPath>& paths, std::vector<Coord>& points_lonlat_p,
                                 std::vector<Coord>& points_xy, const std::vector<Coord>& points_s) const;
  void check_pinned_pipeline(PJ_CONTEXT* c, const PJ* src_geog, const PJ* tgt) const;
  bool transform_array(PJ* op, PJ_DIRECTION dir, std::vector<Coord>& pts) const;
  std::vector<PointFactors> factors_batch(const std::vector<Coord>& lonlat_p) const;
  std::optional<Distortion> distortion_over(const std::vector<Coord>& samples) const;
  std::string area_of_use_check(const std::vector<WorkPath>& paths, const std::vector<Coord>& points,
                                bool& beyond_margin) const;
  void apply_verdict(AuditResult& r) const;
  /// Why the projected vertices cannot be trusted (a sample does not round-trip); "" when they can.
  std::string projected_vertices_problem(const std::vector<WorkPath>& paths, const std::vector<Coord>& points_p,
                                         const std::vector<Coord>& points_xy) const;
  /// A projected source's geometry taken to longitude and latitude; problems listed like validate()'s.
  Geometry source_to_lonlat(const Geometry& g, std::vector<Problem>& problems) const;
};

namespace {

Pj normalized_operation(PJ_CONTEXT* c, const PJ* from, const PJ* to, const std::string& what) {
  Pj raw(proj_create_crs_to_crs_from_pj(c, from, to, nullptr, nullptr));
  Pj op(raw ? proj_normalize_for_visualization(c, raw.get()) : nullptr);
  if (!op) throw Error(ErrorCode::no_transformation, "cannot build " + what + ": " + detail::last_error(c));
  return op;
}

constexpr std::size_t kProblemsListed = 3;  // problems an invalid feature's message lists before "and N more"

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

Auditor::Impl::Impl(const AuditOptions& o) : options(o), ctx(detail::make_context()) {
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
  PJ_CONTEXT* c = ctx.get();
  Pj src = detail::resolve_crs(c, o.source_crs);
  source = detail::describe(c, src.get(), o.source_crs);
  if (source.kind != CrsKind::geographic && source.kind != CrsKind::projected) {
    throw Error(ErrorCode::unsupported_crs, "source CRS '" + o.source_crs + "' (" + source.name +
                                                ") is neither geographic nor projected");
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
  if (o.closed_form_short_edges) {
    short_s.emplace(source.ellipsoid.a_m, source.ellipsoid.f);
    short_p.emplace(target.ellipsoid.a_m, target.ellipsoid.f);
  }

  Pj tgt_h = detail::horizontal_crs(c, tgt.get());
  Pj src_h = detail::horizontal_crs(c, src.get());
  // The geographic CRS the truth lives on: the source itself, or a projected source's base geographic CRS.
  Pj src_geog = source.kind == CrsKind::projected ? Pj(proj_crs_get_geodetic_crs(c, src_h.get()))
                                                  : Pj(proj_clone(c, src.get()));
  if (!src_geog) throw Error(ErrorCode::unsupported_crs, "source CRS '" + o.source_crs + "' has no geodetic CRS");
  if (source.kind == CrsKind::projected) {
    op_source = normalized_operation(c, src_h.get(), src_geog.get(), "the inverse projection of the source CRS");
    source_is_target = proj_is_equivalent_to_with_ctx(c, src_h.get(), tgt.get(), PJ_COMP_EQUIVALENT) != 0;
  }
  Pj geog_p(proj_crs_get_geodetic_crs(c, tgt_h.get()));
  if (!geog_p) throw Error(ErrorCode::unsupported_crs, "target CRS '" + o.target_crs + "' has no geodetic CRS");
  op_proj = normalized_operation(c, geog_p.get(), tgt_h.get(), "the projection of '" + o.target_crs + "'");
  if (const char* pipeline = proj_as_proj_string(c, op_proj.get(), PJ_PROJ_5, nullptr)) {
    op_fast.reset(proj_create(c, pipeline));
  }
  if (!op_fast) op_fast.reset(proj_clone(c, op_proj.get()));
  detail::check_target_projection(c, tgt_h.get(), op_fast.get(), target,
                                  [this](double lon, double lat) { return factors_p(lon, lat); });

  // The edge model, and for straight edges the plane they are straight in.
  edges = o.edges ? *o.edges
                  : (source.kind == CrsKind::projected ? EdgeSpec{EdgeModel::straight, o.source_crs} : EdgeSpec{});
  if (edges.model == EdgeModel::rhumb) {
    rhumb_s.emplace(source.ellipsoid.a_m, source.ellipsoid.f, true);
    rhumb_p.emplace(target.ellipsoid.a_m, target.ellipsoid.f, true);
  }
  Pj edge_h;
  if (edges.model == EdgeModel::straight) {
    Pj edge_crs = detail::resolve_crs(c, edges.crs);
    const CrsInfo edge_info = detail::describe(c, edge_crs.get(), edges.crs);
    if (edge_info.kind != CrsKind::projected) {
      throw Error(ErrorCode::unsupported_crs, "edges can only be straight in a projected CRS; '" + edges.crs +
                                                  "' (" + edge_info.name + ") is not one");
    }
    edge_h = detail::horizontal_crs(c, edge_crs.get());
    edge_crs_is_target = proj_is_equivalent_to_with_ctx(c, edge_h.get(), tgt_h.get(), PJ_COMP_EQUIVALENT) != 0;
    op_s_to_c = normalized_operation(c, src_geog.get(), edge_h.get(), "the operation to the edge CRS");
    op_c_to_s = normalized_operation(c, edge_h.get(), src_geog.get(), "the operation from the edge CRS");
  }

  const bool target_is_bound = proj_get_type(tgt.get()) == PJ_TYPE_BOUND_CRS;
  const bool same = !target_is_bound &&
                    proj_is_equivalent_to_with_ctx(c, src_geog.get(), geog_p.get(),
                                                   PJ_COMP_EQUIVALENT_EXCEPT_AXIS_ORDER_GEOGCRS);
  if (same) {
    transform.name = "none (source CRS is the target's base geographic CRS)";
    transform.accuracy_m = 0.0;
    transform.is_identity = true;
    return;
  }
  if (edge_h) op_c_to_p = normalized_operation(c, edge_h.get(), geog_p.get(), "the operation from the edge CRS");
  datum_shift = true;
  if (!o.datum_operation.empty() && is_database_code(o.datum_operation)) {
    candidates = std::make_shared<const detail::DatumCandidates>(c, src_geog.get(), tgt.get());
    pinned = candidates->find(o.datum_operation);
  } else if (!o.datum_operation.empty()) {
    op_pinned = pinned_pipeline(c, o.datum_operation);
  } else {
    candidates = std::make_shared<const detail::DatumCandidates>(c, src_geog.get(), tgt.get());
  }
  if (op_pinned) {
    transform.name = "pinned pipeline";
    transform.proj_string = o.datum_operation;
    check_pinned_pipeline(c, src_geog.get(), tgt.get());
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

std::vector<PointFactors> Auditor::Impl::factors_batch(const std::vector<Coord>& lonlat_p) const {
  // Central differences of the projection with a step of 1e-4 degrees (about 11 m): truncation error about
  // 1e-12 and rounding error about 1e-10 relative for coordinates of 10⁷ m. All points go through PROJ at once.
  constexpr double step_deg = 1e-4;
  std::vector<Coord> pts;
  pts.reserve(4 * lonlat_p.size());
  for (const Coord& c : lonlat_p) {
    const double lat = std::clamp(c.y, -90 + 2 * step_deg, 90 - 2 * step_deg);
    pts.insert(pts.end(), {{c.x + step_deg, lat}, {c.x - step_deg, lat}, {c.x, lat + step_deg}, {c.x, lat - step_deg}});
  }
  if (!pts.empty()) {
    proj_trans_generic(op_fast.get(), PJ_FWD, &pts[0].x, sizeof(Coord), pts.size(), &pts[0].y, sizeof(Coord),
                       pts.size(), nullptr, 0, 0, nullptr, 0, 0);
  }
  const double e2 = target.ellipsoid.f * (2 - target.ellipsoid.f);
  const double step_rad = 2 * step_deg * kDegToRad;
  std::vector<PointFactors> out(lonlat_p.size(), PointFactors{kNaN, kNaN, kNaN, kNaN, kNaN, kNaN, kNaN});
  for (std::size_t i = 0; i < lonlat_p.size(); ++i) {
    const Coord* q = &pts[4 * i];
    if (!finite(q[0]) || !finite(q[1]) || !finite(q[2]) || !finite(q[3])) continue;
    const double lat = std::clamp(lonlat_p[i].y, -90 + 2 * step_deg, 90 - 2 * step_deg);
    const double x_lam = (q[0].x - q[1].x) * unit_m / step_rad;
    const double y_lam = (q[0].y - q[1].y) * unit_m / step_rad;
    const double x_phi = (q[2].x - q[3].x) * unit_m / step_rad;
    const double y_phi = (q[2].y - q[3].y) * unit_m / step_rad;
    const double sphi = std::sin(lat * kDegToRad), cphi = std::cos(lat * kDegToRad);
    const double w2 = 1 - e2 * sphi * sphi;
    const double m = target.ellipsoid.a_m * (1 - e2) / (w2 * std::sqrt(w2));  // meridian radius of curvature
    const double n = target.ellipsoid.a_m / std::sqrt(w2);                      // prime-vertical radius
    // Tissot's indicatrix (Snyder 1987, eqs. 4-9 to 4-14) from the Jacobian J of the map from local east and
    // north metres to grid metres. Snyder's a' = √(h² + k² + 2s) and b' = √(h² + k² − 2s) are computed as
    // |J ± rotation part| without cancellation: for det J > 0, b'² = (J11 − J22)² + (J12 + J21)² exactly, which
    // vanishes for a conformal map (Cauchy–Riemann), so ω stays accurate where it is tiny.
    const double j11 = x_lam / (n * cphi), j12 = x_phi / m, j21 = y_lam / (n * cphi), j22 = y_phi / m;
    const double det = j11 * j22 - j12 * j21;
    const double h = std::hypot(j12, j22);
    const double k = std::hypot(j11, j21);
    const double s = std::fabs(det);
    const double sign = det >= 0 ? 1.0 : -1.0;  // a west- or south-oriented grid mirrors the plane
    const double ap = std::hypot(j11 + sign * j22, j12 - sign * j21);
    const double bp = std::hypot(j11 - sign * j22, j12 + sign * j21);
    PointFactors& f = out[i];
    f.meridional_scale = h;
    f.parallel_scale = k;
    f.areal_scale = s;
    f.tissot_a = (ap + bp) / 2;
    f.tissot_b = (ap - bp) / 2;
    f.angular_distortion_deg = ap > 0 ? 2 * std::asin(std::min(1.0, bp / ap)) / kDegToRad : kNaN;
    f.convergence_deg = -std::atan2(x_phi, y_phi) / kDegToRad;
  }
  return out;
}

namespace {

/// The statistics of Distortion as seven channels, each to be minimised (−) or maximised (+) over a feature.
constexpr int kChannels = 7;
std::array<double, kChannels> channels(const PointFactors& f) {
  return {f.tissot_b, f.tissot_a, f.areal_scale, f.areal_scale, f.angular_distortion_deg, f.convergence_deg,
          f.convergence_deg};
}
constexpr std::array<int, kChannels> kSense = {-1, +1, -1, +1, +1, -1, +1};
/// Below these spreads a channel is flat to the accuracy of the central differences (relative 1e-9 for scales;
/// 1e-7° for angles), and any sample gives its extreme.
constexpr std::array<double, kChannels> kFlat = {1e-9, 1e-9, 1e-9, 1e-9, 1e-7, 1e-7, 1e-7};

}  // namespace

std::optional<Distortion> Auditor::Impl::distortion_over(const std::vector<Coord>& samples) const {
  // A small feature: every point. Otherwise the points are screened. The factors vary smoothly over a feature, so
  // each statistic is modelled as a quadratic in local east and north (least squares over the anchors: the points
  // extreme in eight directions); ρ is the model's largest residual at the anchors. A point can hold an extreme
  // only if its modelled value is within 4ρ (plus the statistic's accuracy, kFlat) of the modelled extreme; those
  // candidates are evaluated exactly, and the statistics are the extremes over every point evaluated. A statistic
  // whose anchors span less than its accuracy needs no candidates. When anchors and candidates are more than half
  // of the points, every point is evaluated. Large features (more than kMaxSamples points) are first thinned to the points extreme in
  // longitude and latitude plus evenly spaced others.
  constexpr std::size_t kMaxSamples = 64;
  constexpr std::size_t kEvery = 10;
  std::vector<Coord> pool;
  if (samples.size() <= kMaxSamples) {
    pool = samples;
  } else {
    auto by_x = std::minmax_element(samples.begin(), samples.end(),
                                    [](const Coord& a, const Coord& b) { return a.x < b.x; });
    auto by_y = std::minmax_element(samples.begin(), samples.end(),
                                    [](const Coord& a, const Coord& b) { return a.y < b.y; });
    pool = {*by_x.first, *by_x.second, *by_y.first, *by_y.second};
    const std::size_t rest = kMaxSamples - pool.size();
    for (std::size_t k = 0; k < rest; ++k) pool.push_back(samples[k * samples.size() / rest]);
  }
  Extremes ext[kChannels];
  auto take = [&](const std::vector<PointFactors>& fs) {
    for (const PointFactors& f : fs) {
      const auto v = channels(f);
      for (int c = 0; c < kChannels; ++c) ext[c].add(v[c]);
    }
  };
  auto result = [&]() -> std::optional<Distortion> {
    if (ext[0].empty()) return std::nullopt;
    return Distortion{ext[0].lo, ext[1].hi, ext[2].lo, ext[3].hi, ext[4].hi, ext[5].lo, ext[6].hi};
  };
  const std::size_t n = pool.size();
  if (n <= kEvery) {
    take(factors_batch(pool));
    return result();
  }
  // Local coordinates (degrees of arc east and north of the first point).
  const Coord o = pool.front();
  const double coslat = std::cos(o.y * kDegToRad);
  std::vector<double> u(n), v(n);
  for (std::size_t i = 0; i < n; ++i) {
    double du = pool[i].x - o.x;  // the model needs no more than a few digits: a plain wrap will do
    if (du > 180) du -= 360;
    else if (du < -180) du += 360;
    u[i] = du * coslat;
    v[i] = pool[i].y - o.y;
  }
  std::vector<char> done(n, 0);
  std::vector<std::size_t> anchors;
  for (const auto& [du, dv] : {std::pair{1.0, 0.0}, {0.0, 1.0}, {1.0, 1.0}, {1.0, -1.0}}) {
    std::size_t lo = 0, hi = 0;
    for (std::size_t i = 1; i < n; ++i) {
      const double d = du * u[i] + dv * v[i];
      if (d < du * u[lo] + dv * v[lo]) lo = i;
      if (d > du * u[hi] + dv * v[hi]) hi = i;
    }
    for (std::size_t i : {lo, hi}) {
      if (!done[i]) anchors.push_back(i), done[i] = 1;
    }
  }
  std::vector<Coord> at(anchors.size());
  for (std::size_t k = 0; k < anchors.size(); ++k) at[k] = pool[anchors[k]];
  const std::vector<PointFactors> af = factors_batch(at);
  take(af);
  // Least squares of each channel on a quadratic in (u, v) over the anchors, by modified Gram–Schmidt. A column
  // that the anchors cannot tell from the others is dropped (e.g. u² + v² when they lie on a circle: it is then
  // constant over them).
  bool finite_anchors = anchors.size() >= 5;
  for (const PointFactors& f : af) {
    for (double val : channels(f)) finite_anchors = finite_anchors && std::isfinite(val);
  }
  if (!finite_anchors) {
    take(factors_batch(pool));  // too few distinct anchors, or a point that cannot be projected: every point
    return result();
  }
  double extent = 0;
  for (std::size_t i = 0; i < n; ++i) extent = std::max({extent, std::fabs(u[i]), std::fabs(v[i])});
  extent = extent > 0 ? extent : 1;
  constexpr int kTerms = 6;
  std::vector<std::array<double, kTerms>> terms(n);
  for (std::size_t i = 0; i < n; ++i) {
    const double x = u[i] / extent, y = v[i] / extent;
    terms[i] = {1, x, y, x * x - y * y, x * y, x * x + y * y};
  }
  const std::size_t na = anchors.size();
  std::vector<double> q(kTerms * na);  // orthonormal columns over the anchors, column-major
  double r[kTerms][kTerms] = {};
  std::vector<int> kept;
  for (int j = 0; j < kTerms; ++j) {
    std::vector<double> col(na);
    for (std::size_t k = 0; k < na; ++k) col[k] = terms[anchors[k]][j];
    double norm0 = 0;
    for (double c : col) norm0 += c * c;
    for (int i : kept) {
      double dot = 0;
      for (std::size_t k = 0; k < na; ++k) dot += q[i * na + k] * col[k];
      r[i][j] = dot;
      for (std::size_t k = 0; k < na; ++k) col[k] -= dot * q[i * na + k];
    }
    double norm = 0;
    for (double c : col) norm += c * c;
    if (!(norm > 1e-16 * norm0) || kept.size() + 1 >= na) continue;  // dependent, or no degree of freedom left
    norm = std::sqrt(norm);
    r[j][j] = norm;
    for (std::size_t k = 0; k < na; ++k) q[j * na + k] = col[k] / norm;
    kept.push_back(j);
  }
  std::vector<char> candidate(n, 0);
  std::size_t candidates = 0;
  std::vector<double> model(n);
  for (int ch = 0; ch < kChannels; ++ch) {
    std::vector<double> y(na);
    for (std::size_t k = 0; k < na; ++k) y[k] = channels(af[k])[ch];
    double c[kTerms] = {}, coef[kTerms] = {};
    for (int i : kept) {
      for (std::size_t k = 0; k < na; ++k) c[i] += q[i * na + k] * y[k];
    }
    for (auto it = kept.rbegin(); it != kept.rend(); ++it) {  // back substitution R β = c over the kept columns
      double sum = c[*it];
      for (int j : kept) {
        if (j > *it) sum -= r[*it][j] * coef[j];
      }
      coef[*it] = sum / r[*it][*it];
    }
    auto predict = [&](std::size_t i) {
      double sum = 0;
      for (int j : kept) sum += coef[j] * terms[i][j];
      return sum;
    };
    double rho = 0, lo = std::numeric_limits<double>::infinity(), hi = -lo;
    for (std::size_t k = 0; k < na; ++k) {
      rho = std::max(rho, std::fabs(y[k] - predict(anchors[k])));
      lo = std::min(lo, y[k]);
      hi = std::max(hi, y[k]);
    }
    const double flat = kFlat[ch] * (ch < 4 ? std::max(1.0, std::fabs(hi)) : 1.0);
    if (hi - lo + 4 * rho <= flat) continue;  // flat to its accuracy: the anchors give its extreme
    double best = kSense[ch] * -std::numeric_limits<double>::infinity();
    for (std::size_t i = 0; i < n; ++i) {
      model[i] = predict(i);
      best = kSense[ch] > 0 ? std::max(best, model[i]) : std::min(best, model[i]);
    }
    const double band = 4 * rho + flat;
    for (std::size_t i = 0; i < n; ++i) {
      if (!done[i] && !candidate[i] && kSense[ch] * (best - model[i]) <= band) candidate[i] = 1, ++candidates;
    }
  }
  const bool every = 2 * (candidates + anchors.size()) > n;  // screening saves too little: every point
  std::vector<Coord> rest;
  for (std::size_t i = 0; i < n; ++i) {
    if (!done[i] && (every || candidate[i])) rest.push_back(pool[i]);
  }
  take(factors_batch(rest));
  return result();
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
    if (!(std::fabs(observed) <= t.value)) r.failed.push_back(t.as_given());
  }
  if (any) r.verdict = r.failed.empty() ? Verdict::pass : Verdict::fail;
  // The message names the failed tolerances, after any warning: every output (CSV, GeoJSON, GeoPackage, Python)
  // carries this one text.
  for (std::size_t k = 0; k < r.failed.size(); ++k) {
    r.message += k > 0 ? ", " : r.message.empty() ? "exceeds " : "; exceeds ";
    r.message += r.failed[k];
  }
}

AuditResult Auditor::Impl::audit(const Geometry& input, double height_m) const {
  AuditResult r;
  r.type = input.type;
  r.vertices = input.vertex_count();
  r.height_m = height_m;
  std::vector<Problem> problems;
  // A projected source's geometry in longitude, latitude, or the repaired geometry; else `input` itself (no copy).
  std::optional<Geometry> converted;
  if (op_source) converted = source_to_lonlat(input, problems);
  for (Problem& p : validate(converted ? *converted : input)) problems.push_back(std::move(p));
  if (!std::isfinite(height_m) || height_m < -10000 || height_m > 100000) {
    problems.push_back({Problem::Code::non_finite, "height " + std::to_string(height_m) +
                                                       " m is not within -10000 m to 100000 m"});
  }
  std::string repair_note;  // what --repair did, at the head of the message
  if (options.repair && !problems.empty() &&
      std::all_of(problems.begin(), problems.end(), [](const Problem& p) { return is_topology(p.code); })) {
    Repair fixed = repair(converted ? *converted : input);
    if (fixed.repaired) {
      repair_note = fixed.note + "; was: " + describe(problems, kProblemsListed);
      converted = std::move(fixed.geometry);
      problems.clear();
    } else {
      problems.push_back({problems.front().code, fixed.note});
    }
  }
  if (!problems.empty()) {
    r.status = Status::invalid;
    r.message = describe(problems, kProblemsListed);
    if (!op_source && looks_projected(input)) r.message = std::string(looks_projected_text) + ": " + r.message;
    return r;
  }
  const Geometry& g = converted ? *converted : input;
  auto with_note = [&repair_note](const std::string& message) {
    return repair_note.empty() ? message : message.empty() ? repair_note : repair_note + "; " + message;
  };

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
      for (const Path& line : g.lines) paths.push_back({WorkPath::Role::line, 0, clean_path(line, false), {}, {}, {}});
      break;
    case GeometryType::polygon:
    case GeometryType::multi_polygon:
      for (std::size_t p = 0; p < g.polygons.size(); ++p) {
        paths.push_back({WorkPath::Role::outer, p, clean_path(g.polygons[p].outer, true), {}, {}, {}});
        for (const Path& hole : g.polygons[p].holes) {
          paths.push_back({WorkPath::Role::hole, p, clean_path(hole, true), {}, {}, {}});
        }
      }
      break;
  }
  const bool has_length = !paths.empty();
  const bool has_area = g.type == GeometryType::polygon || g.type == GeometryType::multi_polygon;
  const bool straight = edges.model == EdgeModel::straight;

  // 2. Datum transformation and projection of the vertices (a failure is reported after the truth).
  std::vector<Coord> points_p, points_xy;
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
    extend(points_s);
    op_full = datum_op(AreaOfUse{"", west, south, east, north}, r.datum_operation);
  }
  const std::string& op_name = r.datum_operation ? candidates->operations()[*r.datum_operation].name : transform.name;
  std::string transform_failure = transform_vertices(op_full, op_name, paths, points_p, points_xy, points_s);
  if (source_is_target && transform_failure.empty() && repair_note.empty()) {
    // The grid measure is what a GIS computes from the coordinates as given, not from their round trip through
    // longitude and latitude (which moves them by nanometres).
    std::size_t k = 0;
    auto given = [&](const Path& raw, bool ring) {
      std::vector<Coord> cleaned = clean_path(raw, ring);
      if (k < paths.size() && cleaned.size() == paths[k].xy.size()) paths[k].xy = std::move(cleaned);
      ++k;
    };
    for (const Path& line : input.lines) given(line, false);
    for (const Polygon& polygon : input.polygons) {
      given(polygon.outer, true);
      for (const Path& hole : polygon.holes) given(hole, true);
    }
  }
  if (straight) {
    for (std::size_t i = 0; i < paths.size() && transform_failure.empty(); ++i) {
      paths[i].c_xy = paths[i].lonlat_s;
      if (!transform_array(op_s_to_c.get(), PJ_FWD, paths[i].c_xy)) {
        transform_failure = "a vertex of part " + std::to_string(i + 1) + " cannot be taken to the edge CRS (" +
                            edges.crs + ")";
      }
    }
  }

  // 3. Truth on the source ellipsoid (E_S), lifted to the ground (R), with the edges the model says; for
  //    straight edges the same pieces give E_P. One inverse per edge (or piece) feeds truth, densification and
  //    bearings.
  std::vector<EllipsoidWalk> walk_s(paths.size()), walk_p_own;
  const bool separate_target = datum_shift;
  if (separate_target) walk_p_own.resize(paths.size());
  CompensatedSum lat_sum;
  std::size_t lat_count = 0;
  for (std::size_t i = 0; i < paths.size(); ++i) {
    const WorkPath& path = paths[i];
    if (edges.model == EdgeModel::geodesic) {
      std::optional<EllipsoidWalk> quick =
          short_s ? walk_short_edges(*short_s, geod_s, path.lonlat_s, path.closed()) : std::nullopt;
      walk_s[i] = quick ? std::move(*quick) : walk_on_ellipsoid(geod_s, path.lonlat_s, path.closed());
    } else if (edges.model == EdgeModel::rhumb) {
      walk_s[i] = walk_on_ellipsoid(*rhumb_s, path.lonlat_s, path.closed());
    } else if (transform_failure.empty()) {
      StraightWalker walker({&geod_s, op_c_to_s.get()},
                            separate_target ? std::optional<StraightWalker::Side>({&geod_p, op_c_to_p.get()})
                                            : std::nullopt,
                            options.densify_tolerance_m);
      EllipsoidWalk on_target;
      const std::string why =
          walker.walk(path.c_xy, path.lonlat_s, separate_target ? path.lonlat_p : path.lonlat_s, path.closed(), i,
                      walk_s[i], on_target);
      if (!why.empty()) {
        r.status = Status::unmeasurable;  // not even the truth: nothing to report but the reason
        r.message = why;
        return r;
      }
      // The straight-edge truth is a refinement to the densify tolerance: no bound yet.
      walk_s[i].length_bound_m = walk_s[i].area_bound_m2 = on_target.length_bound_m = on_target.area_bound_m2 = kNaN;
      if (separate_target) walk_p_own[i] = std::move(on_target);
    }
    for (const Coord& c : path.lonlat_s) lat_sum.add(c.y), ++lat_count;
  }
  for (const Coord& c : points_s) lat_sum.add(c.y), ++lat_count;
  if (straight && !transform_failure.empty()) {
    r.status = Status::unmeasurable;
    r.message = transform_failure;
    return r;
  }
  auto sum_length = [&](const std::vector<EllipsoidWalk>& walks) {
    CompensatedSum sum;
    for (const EllipsoidWalk& w : walks) sum.add(w.length_m);
    return sum.value();
  };
  auto sum_area = [&](const std::vector<EllipsoidWalk>& walks) {
    std::vector<double> rings(walks.size());
    for (std::size_t i = 0; i < walks.size(); ++i) rings[i] = walks[i].signed_area_m2;
    return has_area ? polygon_area(paths, rings) : 0.0;
  };
  const double mean_lat = lat_count ? lat_sum.value() / lat_count : 0;
  const double radius_m = gaussian_mean_radius_m(source.ellipsoid, mean_lat);
  const double lift = 1 + height_m / radius_m;
  const double e_s_length = sum_length(walk_s);
  const double e_s_area = sum_area(walk_s);
  const double ref_length = e_s_length * lift;
  const double ref_area = e_s_area * lift * lift;
  // Bounds on the truth (Budget::*_bound): the walks' bounds (areas of rings add, whatever their role).
  auto sum_bounds = [&](const std::vector<EllipsoidWalk>& walks, MeasureBounds& length, MeasureBounds& area,
                        bool source_side) {
    double l = 0, a = 0;
    for (const EllipsoidWalk& w : walks) l += w.length_bound_m, a += w.area_bound_m2;
    l += 2 * kUnitRoundoff * sum_length(walks);
    (source_side ? length.e_s : length.e_p) = l;
    (source_side ? area.e_s : area.e_p) = has_area ? a : 0.0;
  };
  MeasureBounds length_bounds, area_bounds;
  sum_bounds(walk_s, length_bounds, area_bounds, true);
  length_bounds.reference = length_bounds.e_s * lift + 2 * kUnitRoundoff * ref_length;
  area_bounds.reference = area_bounds.e_s * lift * lift + 3 * kUnitRoundoff * ref_area;
  // The datum transformation's stated accuracy σ, propagated (moved_*_bound) over the source perimeter.
  std::size_t edge_total = 0, vertex_total = 0;
  for (const WorkPath& path : paths) {
    const std::size_t n = path.lonlat_s.size();
    edge_total += n < 2 ? 0 : (path.closed() ? n : n - 1);
    vertex_total += n;
  }
  const double sigma_m =
      !separate_target ? 0.0 : transform.accuracy_m && !transform.is_ballpark ? *transform.accuracy_m : kNaN;
  length_bounds.datum = moved_length_bound(sigma_m, edge_total);
  area_bounds.datum = has_area ? moved_area_bound(sigma_m, e_s_length, vertex_total) : 0.0;
  if (!separate_target) length_bounds.e_p = length_bounds.e_s, area_bounds.e_p = area_bounds.e_s;

  auto fail = [&](const std::string& why, double e_p_length, double e_p_area) {
    r.status = Status::unmeasurable;
    r.message = with_note(why);
    if (has_length) r.length = truth_only_budget(ref_length, e_s_length, e_p_length, length_bounds);
    if (has_area) r.area = truth_only_budget(ref_area, e_s_area, e_p_area, area_bounds);
    return r;
  };
  if (!transform_failure.empty()) return fail(transform_failure, kNaN, kNaN);
  if (std::string why = projected_vertices_problem(paths, points_p, points_xy); !why.empty()) {
    return fail(why, kNaN, kNaN);
  }
  bool beyond_margin = false;
  const std::string area_of_use_message = area_of_use_check(paths, points_s, beyond_margin);
  if (beyond_margin) {
    return separate_target ? fail(area_of_use_message, kNaN, kNaN)
                           : fail(area_of_use_message, e_s_length, e_s_area);
  }
  // Not read again: the source coordinates and, with a datum change, the walk on the source ellipsoid (so that a
  // long path is not held once more than the later stages need).
  for (WorkPath& path : paths) std::vector<Coord>().swap(path.lonlat_s);
  if (separate_target) std::vector<EllipsoidWalk>().swap(walk_s);

  // 4. E_P: the same measures on the target's ellipsoid after the datum transformation.
  const std::vector<EllipsoidWalk>* walk_p = &walk_s;
  if (separate_target) {
    for (std::size_t i = 0; i < paths.size() && !straight; ++i) {
      if (edges.model == EdgeModel::rhumb) {
        walk_p_own[i] = walk_on_ellipsoid(*rhumb_p, paths[i].lonlat_p, paths[i].closed());
        continue;
      }
      std::optional<EllipsoidWalk> quick =
          short_p ? walk_short_edges(*short_p, geod_p, paths[i].lonlat_p, paths[i].closed()) : std::nullopt;
      walk_p_own[i] = quick ? std::move(*quick) : walk_on_ellipsoid(geod_p, paths[i].lonlat_p, paths[i].closed());
    }
    walk_p = &walk_p_own;
  }
  const double e_p_length = separate_target ? sum_length(walk_p_own) : e_s_length;
  const double e_p_area = separate_target ? sum_area(walk_p_own) : e_s_area;
  if (separate_target) sum_bounds(walk_p_own, length_bounds, area_bounds, false);

  // 5. G (straight chords) and D (projected true edges), path by path, with the bearing of every chord.
  CompensatedSum g_length, d_length;
  std::vector<double> g_area2(paths.size(), 0.0), d_area2(paths.size(), 0.0);
  // Bounds on G and D in the target's unit (length) and as twice the area (unit²); rings' bounds add.
  double g_length_bound = 0, g_area2_bound = 0, d_length_bound = 0, d_area2_bound = 0;
  std::vector<Coord> samples = points_p;
  BearingExtreme bearing;
  std::size_t densified = 0;
  PJ* c_to_p = separate_target ? op_c_to_p.get() : op_c_to_s.get();
  for (std::size_t i = 0; i < paths.size(); ++i) {
    const WorkPath& path = paths[i];
    const EllipsoidWalk& walk = (*walk_p)[i];
    const double path_g_length = planar_length(path.xy, path.closed());
    g_length.add(path_g_length);
    double path_g_area2_roundoff = 0;
    if (path.closed()) g_area2[i] = planar_area2(path.xy, &path_g_area2_roundoff);
    const double eps_xy = projection_accuracy_units(path.xy, unit_m);
    const double path_g_length_bound =
        planar_length_roundoff(path_g_length, path.edge_count()) + moved_length_bound(eps_xy, path.edge_count());
    const double path_g_area2_bound =
        path.closed() ? path_g_area2_roundoff + 2 * moved_area_bound(eps_xy, path_g_length, path.xy.size()) : 0.0;
    g_length_bound += path_g_length_bound;
    g_area2_bound += path_g_area2_bound;
    samples.insert(samples.end(), path.lonlat_p.begin(), path.lonlat_p.end());
    PathDensifier densifier(op_fast.get(), tolerance_units, target.ellipsoid.a_m / unit_m, path, i, samples,
                            densified);
    const std::size_t edge_count = path.edge_count();
    // The true edge e as a curve over [0, edge_param[e]]; a geodesic line is only set up when it is followed.
    std::optional<GeographicLib::GeodesicLine> geodesic;
    std::optional<GeographicLib::RhumbLine> rhumb_line;
    // Edges are taken in blocks of kEdgeBlock, so that what is kept per edge while densifying (midpoints, lines)
    // does not grow with the path: a 10⁶-vertex ring would otherwise hold 0.5 kB per edge in lines alone.
    constexpr std::size_t kEdgeBlock = 4096;
    std::size_t block_start = 0;
    // Geodesic edges solved by GeographicLib: their lines, set up once for the midpoint and kept for refining.
    std::vector<GeographicLib::GeodesicLine> lines;
    const bool keep_lines = edges.model == EdgeModel::geodesic && !walk.has_midpoints();
    auto curve_of = [&](std::size_t e) -> PathDensifier::Curve {
      const Coord a = path.lonlat_p[e];
      const double azimuth = walk.azimuth(e);
      if (keep_lines) {
        GeographicLib::GeodesicLine* line = &lines[e - block_start];
        if (!line->Init()) {
          *line = geod_p.Line(a.y, a.x, azimuth,
                              GeographicLib::Geodesic::LATITUDE | GeographicLib::Geodesic::LONGITUDE |
                                  GeographicLib::Geodesic::DISTANCE_IN);
        }
        return [line](double s) {
          Coord c;
          line->Position(s, c.y, c.x);
          return c;
        };
      }
      if (edges.model == EdgeModel::geodesic) {
        geodesic.reset();
        return [this, &geodesic, a, azimuth](double s) {
          if (!geodesic) {
            geodesic.emplace(geod_p.Line(a.y, a.x, azimuth,
                                         GeographicLib::Geodesic::LATITUDE | GeographicLib::Geodesic::LONGITUDE |
                                             GeographicLib::Geodesic::DISTANCE_IN));
          }
          Coord c;
          geodesic->Position(s, c.y, c.x);
          return c;
        };
      }
      if (edges.model == EdgeModel::rhumb) {
        rhumb_line.emplace(rhumb_p->Line(a.y, a.x, azimuth));
        GeographicLib::RhumbLine* rhumb = &*rhumb_line;
        return [rhumb](double s) {
          Coord c;
          rhumb->Position(s, c.y, c.x);
          return c;
        };
      }
      const std::size_t j = (e + 1) % path.lonlat_p.size();
      const Coord c0 = path.c_xy[e], c1 = path.c_xy[j];
      const double length = walk.param(e);
      return [c0, c1, length, c_to_p](double s) {
        const double t = length > 0 ? s / length : 0;
        const PJ_COORD out = proj_trans(c_to_p, PJ_FWD, proj_coord(c0.x + t * (c1.x - c0.x),
                                                                     c0.y + t * (c1.y - c0.y), 0, 0));
        return Coord{out.lp.lam, out.lp.phi};
      };
    };
    const bool densify = !(straight && edge_crs_is_target);  // else the true edges are the chords: D = G
    std::vector<Coord> mid_lonlat, mid_xy;
    for (; block_start < edge_count; block_start += kEdgeBlock) {
      const std::size_t block_end = std::min(edge_count, block_start + kEdgeBlock);
      // Every edge's midpoint (from the walk when it gives them), projected in one call per block.
      if (densify) {
        lines.assign(keep_lines ? block_end - block_start : 0, GeographicLib::GeodesicLine());
        mid_lonlat.assign(block_end - block_start, Coord{kNaN, kNaN});
        for (std::size_t e = block_start; e < block_end; ++e) {
          if (walk.has_midpoints()) {
            mid_lonlat[e - block_start] = walk.midpoint(e);
          } else if (walk.param(e) > 1e-9) {
            mid_lonlat[e - block_start] = curve_of(e)(0.5 * walk.param(e));
          }
        }
        mid_xy = mid_lonlat;
        transform_array(op_fast.get(), PJ_FWD, mid_xy);
      }
      for (std::size_t e = block_start; e < block_end; ++e) {
        const std::size_t j = (e + 1) % path.lonlat_p.size();
        // Bearing: grid bearing of the chord minus the true edge's azimuth at the start vertex.
        double sin_azimuth = 0, cos_azimuth = 1;
        walk.sincos(e, sin_azimuth, cos_azimuth);
        bearing.add(path.xy[j].x - path.xy[e].x, path.xy[j].y - path.xy[e].y, sin_azimuth, cos_azimuth);
        if (!densify) continue;
        const PathDensifier::Curve curve = curve_of(e);
        if (std::string why = densifier.edge(e, j, curve, walk.param(e), mid_lonlat[e - block_start],
                                             mid_xy[e - block_start]);
            !why.empty()) {
          return fail(why, e_p_length, e_p_area);
        }
      }
    }
    if (straight && edge_crs_is_target) {
      d_length.add(path_g_length);
      d_area2[i] = g_area2[i];
      d_length_bound += path_g_length_bound;
      d_area2_bound += path_g_area2_bound;
    } else {
      d_length.add(densifier.length_units());
      if (path.closed()) d_area2[i] = densifier.area2_units();
      // G's round-off and projection terms, the method's bound, and the round-off of the bulges' sum.
      d_length_bound += path_g_length_bound + densifier.method_length_bound_units() +
                        planar_length_roundoff(std::fabs(densifier.length_units() - path_g_length), path.edge_count());
      if (path.closed()) {
        d_area2_bound += path_g_area2_bound + densifier.method_area2_bound_units2() +
                         4 * kUnitRoundoff * std::fabs(d_area2[i] - g_area2[i]);
      }
    }
  }
  r.densified_points = densified;

  // 6. Distortion statistics at the vertices, points and densified points (sampled on large features).
  if (std::optional<Distortion> d = distortion_over(samples)) r.distortion = d;
  if (!r.distortion) return fail("the target projection's scale factors cannot be evaluated at the feature", e_p_length, e_p_area);
  if (std::string why = detail::distortion_problem(*r.distortion); !why.empty()) {
    r.distortion.reset();
    return fail("the target projection is degenerate at the feature: " + why, e_p_length, e_p_area);
  }
  if (has_length) r.bearing_error_max_arcsec = bearing.largest_deg() * 3600;

  // 7. The budget.
  const double unit2 = unit_m * unit_m;
  if (has_length) {
    length_bounds.g = (g_length_bound + 2 * kUnitRoundoff * g_length.value()) * unit_m;
    length_bounds.d = (d_length_bound + 2 * kUnitRoundoff * d_length.value()) * unit_m;
    r.length = make_budget(ref_length, e_s_length, e_p_length, d_length.value() * unit_m,
                           g_length.value() * unit_m, length_bounds);
  }
  if (has_area) {
    std::vector<double> g_area(paths.size()), d_area(paths.size());
    for (std::size_t i = 0; i < paths.size(); ++i) {
      g_area[i] = 0.5 * g_area2[i] * unit2;
      d_area[i] = 0.5 * d_area2[i] * unit2;
    }
    const double g_area_m2 = polygon_area(paths, g_area), d_area_m2 = polygon_area(paths, d_area);
    area_bounds.g = 0.5 * g_area2_bound * unit2 + 2 * kUnitRoundoff * std::fabs(g_area_m2);
    area_bounds.d = 0.5 * d_area2_bound * unit2 + 2 * kUnitRoundoff * std::fabs(d_area_m2);
    r.area = make_budget(ref_area, e_s_area, e_p_area, d_area_m2, g_area_m2, area_bounds);
  }
  // Combined factor: mean grid scale × elevation factor R_G/(R_G + h).
  const double mean_scale = r.length && r.length->ellipsoid_target > 0
                                ? r.length->grid / r.length->ellipsoid_target
                                : (r.distortion ? std::sqrt(0.5 * (r.distortion->areal_scale_min +
                                                                   r.distortion->areal_scale_max))
                                                : kNaN);
  if (std::isfinite(mean_scale)) r.combined_factor = mean_scale * radius_m / (radius_m + height_m);
  r.message = with_note(area_of_use_message);
  apply_verdict(r);
  return r;
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
