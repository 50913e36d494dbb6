// The truth: the walks of every path on an ellipsoid (E_S on the source's, E_P on the target's) with the edges
// the model says (geodesic, rhumb, straight in a CRS), the reference R lifted to the ground, and their bounds.
#include <GeographicLib/Accumulator.hpp>
#include <GeographicLib/Geodesic.hpp>
#include <GeographicLib/Rhumb.hpp>

#include <algorithm>
#include <array>
#include <cmath>
#include <optional>
#include <string>
#include <utility>

#include "auditor_impl.hpp"

namespace gridtruth {

using detail::CompensatedSum;
using detail::EllipsoidWalk;
using detail::Feature;
using detail::finite;
using detail::kNaN;
using detail::kUnitRoundoff;
using detail::MeasureBounds;
using detail::WorkPath;

namespace {

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
    Sums sums;
    on_source = EllipsoidWalk{};
    on_target = EllipsoidWalk{};
    on_source.resize(edges);
    on_target.resize(edges);
    for (std::size_t e = 0; e < edges; ++e) {
      const std::size_t j = (e + 1) % n;
      const Coord c0 = c_xy[e], c1 = c_xy[j];
      const double length = std::hypot(c1.x - c0.x, c1.y - c0.y);
      if (std::string why = edge(c0, c1, length, {lonlat_s[e], lonlat_s[j]}, {lonlat_p[e], lonlat_p[j]}, sums);
          !why.empty()) {
        return failure(e, path_index, why);
      }
      // The true edge's azimuth at its start: toward a point 1 unit (or half the edge) along it.
      const double t = std::min(0.5, 1.0 / std::max(length, 1e-300));
      const Coord near{c0.x + t * (c1.x - c0.x), c0.y + t * (c1.y - c0.y)};
      start_azimuth(source_, lonlat_s[e], from_plane(source_, near), on_source, e);
      if (target_) start_azimuth(*target_, lonlat_p[e], from_plane(*target_, near), on_target, e);
      on_source.edge_param[e] = length;
    }
    finish(sums, closed, edges, on_source, on_target);
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
  /// Sums of the accepted pieces' bounds on one ellipsoid (m, m²).
  struct Bounds {
    CompensatedSum length_m, area_m2;
  };
  /// What the accepted pieces of a path add up to, on each side.
  struct Sums {
    RingSum sum_s, sum_p;
    Bounds bound_s, bound_p;
  };

  /// Refines the edge c0 → c1 of C's plane (`length` long, its ends `s` on the source's and `p` on the target's
  /// geographic CRS) into pieces and adds them to `sums`; returns why it cannot ("" when it can).
  std::string edge(const Coord& c0, const Coord& c1, double length, const std::array<Coord, 2>& s,
                   const std::array<Coord, 2>& p, Sums& sums) {
    Piece first{0, 1, {s[0], s[1]}, {p[0], p[1]}, {}, {}};
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
      if (!finite(ms) || !finite(mp)) return "cannot be taken back to the ellipsoid";
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
        accept(sums.sum_s, sums.bound_s, *source_.geod, piece.s[0], ms, piece.s[1], a_s, b_s, piece.chord_s,
               whole_s);
        if (target_) {
          accept(sums.sum_p, sums.bound_p, *target_->geod, piece.p[0], mp, piece.p[1], a_p, b_p, piece.chord_p,
                 target_->geod->EllipsoidArea());
        }
        continue;
      }
      if ((piece.t1 - piece.t0) * length < 1e-3 || ++points_ > kMaxPoints) {
        return "does not converge when taken back to the ellipsoid";
      }
      stack_.push_back({tm, piece.t1, {ms, piece.s[1]}, {mp, piece.p[1]}, b_s, b_p});
      stack_.push_back({piece.t0, tm, {piece.s[0], ms}, {piece.p[0], mp}, a_s, a_p});
    }
    return {};
  }

  /// The walks' measures and bounds from the sums: the pieces' bounds plus the double-double sums' round-off
  /// (as walk_on_ellipsoid()).
  void finish(const Sums& sums, bool closed, std::size_t edges, EllipsoidWalk& on_source,
              EllipsoidWalk& on_target) const {
    on_source.length_m = sums.sum_s.length();
    if (closed && edges > 0) on_source.signed_area_m2 = sums.sum_s.signed_area(source_.geod->EllipsoidArea());
    on_source.length_bound_m = sums.bound_s.length_m.value() + 4 * kUnitRoundoff * on_source.length_m;
    on_source.area_bound_m2 =
        closed ? sums.bound_s.area_m2.value() + 4 * kUnitRoundoff * std::fabs(on_source.signed_area_m2) : 0.0;
    if (target_) {
      on_target.length_m = sums.sum_p.length();
      if (closed && edges > 0) on_target.signed_area_m2 = sums.sum_p.signed_area(target_->geod->EllipsoidArea());
      on_target.edge_param = on_source.edge_param;
      on_target.length_bound_m = sums.bound_p.length_m.value() + 4 * kUnitRoundoff * on_target.length_m;
      on_target.area_bound_m2 =
          closed ? sums.bound_p.area_m2.value() + 4 * kUnitRoundoff * std::fabs(on_target.signed_area_m2) : 0.0;
    } else {
      on_target = on_source;
    }
  }

  static void accept(RingSum& sum, Bounds& bound, const GeographicLib::Geodesic& geod, const Coord& a,
                     const Coord& m, const Coord& b, const Chord& am, const Chord& mb, const Chord& ab,
                     double whole) {
    const double triangle = std::remainder(am.area + mb.area - ab.area, whole);
    sum.add(am.length, am.area, a.x, m.x);
    sum.add(mb.length, mb.area, m.x, b.x);
    sum.add_area(triangle / 3);
    sum.add_length((am.length + mb.length - ab.length) / 3);
    // The piece's error. The curve between the chord's ends is taken as a parabola through its midpoint: as for
    // a parabola edge of D (PathDensifier), the terms the three points cannot see, from the decay rates measured
    // for projected images (the same analytic structure: a line of C's plane taken through PROJ), with a factor
    // 4: the cubic b₃ ≤ max(0.15·d·q, 1e-2·s·q²) costs 25.6·b₃²/s in length, the quartic b₄ ≤ max(0.09·q²·
    // max(d/2, 2e-2·s·q²), 0.3·q·b₃) costs (32/15)·s·b₄ in area (s the chord, d = 2T/s its midpoint's offset,
    // q = s/a); the midpoint's offset ε along the chord costs (8/3)·d·ε²/s in area, (32/3)·d²ε²/s³ in length; the
    // midpoint's own accuracy from PROJ (10 nm, as the projection's) (2/3)·s·10 nm and (8d/s)·10 nm. Then
    // GeographicLib's stated accuracy (15 nm, 0.1 m² per inverse: walk_on_ellipsoid()) for the three inverses,
    // with weights 4/3, 4/3, 1/3.
    const double s = ab.length;
    const double d = s > 0 ? 2 * std::fabs(triangle) / s : 0;
    const double q = s / geod.EquatorialRadius(), rho = 0.3 * q;
    const double b3 = std::max(0.5 * d * rho, 1e-2 * s * q * q);
    const double b4 = std::max(std::max(0.5 * d, 2e-2 * s * q * q) * rho * rho, b3 * rho);
    const double along = 0.5 * std::fabs(am.length - mb.length);
    const double off2 = s > 0 ? along * along / s : 0;
    constexpr double kPoint = 1e-8;
    bound.length_m.add(4 * 25.6 * b3 * b3 / std::max(s, 1e-300) + 4 * (32.0 / 3.0) * d * d * off2 / std::max(s * s, 1e-300) +
                       (s > 0 ? 8 * d / s * kPoint : 2 * kPoint) + 3 * 15e-9);
    bound.area_m2.add(4 * (32.0 / 15.0) * s * b4 + 4 * (8.0 / 3.0) * d * off2 + (2.0 / 3.0) * s * kPoint + 3 * 0.1);
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

/// The walk of one path on an ellipsoid with geodesic or rhumb edges (the closed-form method for short geodesic
/// edges when it is enabled and applies).
EllipsoidWalk walk_path(const GeographicLib::Geodesic& geod, const std::optional<detail::ShortGeodesics>& short_edges,
                        const std::optional<GeographicLib::Rhumb>& rhumb, EdgeModel model, const WorkPath& path,
                        const std::vector<Coord>& lonlat) {
  if (model == EdgeModel::rhumb) return walk_on_ellipsoid(*rhumb, lonlat, path.closed());
  std::optional<EllipsoidWalk> quick =
      short_edges ? walk_short_edges(*short_edges, geod, lonlat, path.closed()) : std::nullopt;
  return quick ? std::move(*quick) : walk_on_ellipsoid(geod, lonlat, path.closed());
}

double sum_length(const std::vector<EllipsoidWalk>& walks) {
  CompensatedSum sum;
  for (const EllipsoidWalk& w : walks) sum.add(w.length_m);
  return sum.value();
}

double sum_area(const Feature& f, const std::vector<EllipsoidWalk>& walks) {
  std::vector<double> rings(walks.size());
  for (std::size_t i = 0; i < walks.size(); ++i) rings[i] = walks[i].signed_area_m2;
  return f.has_area ? detail::polygon_area(f.paths, rings) : 0.0;
}

/// Bounds on the truth (Budget::*_bound): the walks' bounds (areas of rings add, whatever their role).
void sum_bounds(Feature& f, const std::vector<EllipsoidWalk>& walks, bool source_side) {
  double l = 0, a = 0;
  for (const EllipsoidWalk& w : walks) l += w.length_bound_m, a += w.area_bound_m2;
  l += 2 * kUnitRoundoff * sum_length(walks);
  (source_side ? f.length_bounds.e_s : f.length_bounds.e_p) = l;
  (source_side ? f.area_bounds.e_s : f.area_bounds.e_p) = f.has_area ? a : 0.0;
}

}  // namespace

bool Auditor::Impl::truth_stage(Feature& f) const {
  // Truth on the source ellipsoid (E_S), lifted to the ground (R), with the edges the model says; for straight
  // edges the same pieces give E_P. One inverse per edge (or piece) feeds truth, densification and bearings.
  const std::vector<WorkPath>& paths = f.paths;
  const bool straight = edges.model == EdgeModel::straight;
  const bool separate_target = datum_shift;
  f.walk_s.resize(paths.size());
  if (separate_target) f.walk_p_own.resize(paths.size());
  CompensatedSum lat_sum;
  std::size_t lat_count = 0;
  for (std::size_t i = 0; i < paths.size(); ++i) {
    const WorkPath& path = paths[i];
    if (!straight) {
      f.walk_s[i] = walk_path(geod_s, short_s, rhumb_s, edges.model, path, path.lonlat_s);
    } else if (f.transform_failure.empty()) {
      StraightWalker walker({&geod_s, op_c_to_s.get()},
                            separate_target ? std::optional<StraightWalker::Side>({&geod_p, op_c_to_p.get()})
                                            : std::nullopt,
                            options.densify_tolerance_m);
      EllipsoidWalk on_target;
      const std::string why =
          walker.walk(path.c_xy, path.lonlat_s, separate_target ? path.lonlat_p : path.lonlat_s, path.closed(), i,
                      f.walk_s[i], on_target);
      if (!why.empty()) {
        f.result.status = Status::unmeasurable;  // not even the truth: nothing to report but the reason
        f.result.message = why;
        return false;
      }
      if (separate_target) f.walk_p_own[i] = std::move(on_target);
    }
    for (const Coord& c : path.lonlat_s) lat_sum.add(c.y), ++lat_count;
  }
  for (const Coord& c : f.points_s) lat_sum.add(c.y), ++lat_count;
  if (straight && !f.transform_failure.empty()) {
    f.result.status = Status::unmeasurable;
    f.result.message = f.transform_failure;
    return false;
  }
  const double mean_lat = lat_count ? lat_sum.value() / lat_count : 0;
  f.radius_m = gaussian_mean_radius_m(source.ellipsoid, mean_lat);
  f.lift = 1 + f.height_m / f.radius_m;
  f.e_s_length = sum_length(f.walk_s);
  f.e_s_area = sum_area(f, f.walk_s);
  f.ref_length = f.e_s_length * f.lift;
  f.ref_area = f.e_s_area * f.lift * f.lift;
  sum_bounds(f, f.walk_s, true);
  f.length_bounds.reference = f.length_bounds.e_s * f.lift + 2 * kUnitRoundoff * f.ref_length;
  f.area_bounds.reference = f.area_bounds.e_s * f.lift * f.lift + 3 * kUnitRoundoff * f.ref_area;
  // The datum transformation's stated accuracy σ, propagated (moved_*_bound) over the source perimeter.
  std::size_t edge_total = 0, vertex_total = 0;
  for (const WorkPath& path : paths) {
    const std::size_t n = path.lonlat_s.size();
    edge_total += n < 2 ? 0 : (path.closed() ? n : n - 1);
    vertex_total += n;
  }
  const double sigma_m =
      !separate_target ? 0.0 : transform.accuracy_m && !transform.is_ballpark ? *transform.accuracy_m : kNaN;
  f.length_bounds.datum = detail::moved_length_bound(sigma_m, edge_total);
  f.area_bounds.datum = f.has_area ? detail::moved_area_bound(sigma_m, f.e_s_length, vertex_total) : 0.0;
  if (!separate_target) f.length_bounds.e_p = f.length_bounds.e_s, f.area_bounds.e_p = f.area_bounds.e_s;
  return true;
}

void Auditor::Impl::target_truth_stage(Feature& f) const {
  // E_P: the same measures on the target's ellipsoid after the datum transformation (for straight edges, from
  // the truth stage's pieces).
  f.walk_p = &f.walk_s;
  if (!datum_shift) {
    f.e_p_length = f.e_s_length;
    f.e_p_area = f.e_s_area;
    return;
  }
  for (std::size_t i = 0; i < f.paths.size() && edges.model != EdgeModel::straight; ++i) {
    f.walk_p_own[i] = walk_path(geod_p, short_p, rhumb_p, edges.model, f.paths[i], f.paths[i].lonlat_p);
  }
  f.walk_p = &f.walk_p_own;
  f.e_p_length = sum_length(f.walk_p_own);
  f.e_p_area = sum_area(f, f.walk_p_own);
  sum_bounds(f, f.walk_p_own, false);
}

}  // namespace gridtruth
