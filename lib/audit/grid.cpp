// The grid: G (straight chords in the target's plane) and D (the projected true edges: a parabola per edge
// within the densify tolerance of its chord, else quadrature, else adaptive densification), with the bearing of
// every chord and the points where the distortion statistics are evaluated.
#include <GeographicLib/GeodesicLine.hpp>

#include <algorithm>
#include <cmath>
#include <functional>
#include <limits>
#include <optional>
#include <string>

#include "auditor_impl.hpp"
#include "edge_quadrature.hpp"

namespace gridtruth {

using detail::CompensatedSum;
using detail::EllipsoidWalk;
using detail::Feature;
using detail::cross;
using detail::finite;
using detail::kNaN;
using detail::kUnitRoundoff;
using detail::WorkPath;

namespace {


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

  PathDensifier(PJ* op, double tolerance_units, double radius_units, double noise_units, const WorkPath& path,
                std::size_t path_index, std::vector<Coord>& samples, std::size_t& densified)
      : op_(op), tolerance_(tolerance_units), radius_(radius_units), noise_(noise_units), path_(path),
        path_index_(path_index),
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
      if (quadrature(curve, edge_m, p0, pm, p1)) return {};
    }
    if (const double d = deviation(p0, pm, p1); d <= tolerance_) {
      parabola(p0, pm, p1, d);
      return {};
    }
    return densify(edge_m, p0, pm, p1, first);
  }

  double length_units() const { return length_.value(); }
  double area2_units() const { return area2_.value(); }
  /// Sums of the quadrature's bounds (edge_quadrature.hpp) over the edges it measured.
  double quadrature_length_error_units() const { return length_error_.value(); }
  double quadrature_area_error_units2() const { return area_error_.value(); }
  /// Bounds on the method's error (Budget::densified_grid_bound, without round-off): the quadrature's bounds,
  /// the parabola edges' terms, the fallback pieces' whole bulges; length in the unit, area as twice the area.
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

  /// The line integrals of edge p0 → p1 (midpoint pm) by quadrature (edge_quadrature.hpp); false when they do
  /// not converge.
  bool quadrature(const Curve& curve, double edge_m, const Coord& p0, const Coord& pm, const Coord& p1) {
    const double c = chord(p0, p1);
    const detail::EdgeQuadrature::Result q =
        quadrature_.integrate(curve, edge_m, p0, pm, p1, op_, radius_, kQuadratureShare * tolerance_,
                              kQuadratureShare * tolerance_ * c, noise_, samples_);
    densified_ += q.points;
    if (q.accepted) {
      length_.add(q.length);
      length_error_.add(q.length_bound);
      ++quadrature_edges_;
      order_sum_ += q.order;
      if (path_.closed()) {
        area2_.add(cross(p0.x - origin_.x, p0.y - origin_.y, p1.x - origin_.x, p1.y - origin_.y));
        area2_.add(q.bulge2);
        area_error_.add(q.area_bound);
      }
      return true;
    }
    return false;
  }

  /// Edge p0 → p1 as one parabola through its ends and its midpoint pm, d off the chord.
  void parabola(const Coord& p0, const Coord& pm, const Coord& p1, double d) {
    // One parabola through the ends and the midpoint. It misses the image's cubic term b₃ (Chebyshev, in the
    // edge's parameter), which the midpoint cannot see: an image that changes its bend at the middle (a geodesic
    // crossing a transverse Mercator's central meridian) has d ≈ 0 but b₃ up to about 1e-2·c·(c/R)² (measured,
    // EdgeQuadrature::predicted_order), and b₃ costs 25.6·b₃²/c in length (∫ Y'² dt / c of b₃(T₃ − T₁), the part
    // no parabola through t = −1, 0, 1 holds); and the quartic b₄ ≈ max(b₂·ρ², b₃·ρ) (b₂ = max(d/2,
    // 2e-2·c·(c/R)²), ρ = 0.3·c/R, as predicted_order), which Simpson's rule misses by 32/15 in ∫ Y dt (the
    // parabola's bulge is Simpson's rule of ∫ Y dX, exact to the cubic). Each taken with a factor
    // 4 of margin (tested in tests/bounds_test.cpp at densify tolerances of 1 cm to 10 m).
    accept(p0, pm, p1);
    const double c = chord(p0, p1);
    const double q = c / radius_, rho = detail::EdgeQuadrature::kRate * q;
    const double b3 = std::max(0.5 * d * rho, 1e-2 * c * q * q);
    const double b4 = std::max(std::max(0.5 * d, 2e-2 * c * q * q) * rho * rho, b3 * rho);
    // And the midpoint sits ε off the chord's middle along it (the scale varies along the edge): a curve whose
    // apex is at the chord's middle then passes the midpoint lower by d·4ε²/c², which the parabola's bulge
    // (2/3)·c·d misses by (8/3)·d·ε²/c (twice that in twice the area), its length by (32/3)·d²ε²/c³.
    const double cx = p1.x - p0.x, cy = p1.y - p0.y;
    const double eps = c > 0 ? std::fabs((pm.x - 0.5 * (p0.x + p1.x)) * cx + (pm.y - 0.5 * (p0.y + p1.y)) * cy) / c : 0;
    const double off2 = c > 0 ? eps * eps / c : 0;
    bound_length_.add(4 * 25.6 * b3 * b3 / std::max(c, 1e-300) + 4 * (32.0 / 3.0) * d * d * off2 / std::max(c * c, 1e-300) +
                      midpoint_length_term(d, c));
    if (path_.closed()) {
      bound_area2_.add(4 * (32.0 / 15.0) * c * b4 + 4 * 2 * (8.0 / 3.0) * d * off2 + midpoint_area2_term(c));
    }
  }

  /// The adaptive densification of an edge (the fallback); `first`: the edge's midpoint is not yet a sample.
  std::string densify(double edge_m, const Coord& p0, const Coord& pm, const Coord& p1, bool first) {
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
    bound_length_.add((c > 0 ? 3 * d * d / c : 2 * d) + midpoint_length_term(d, c));
    if (path_.closed()) bound_area2_.add(2 * d * c + midpoint_area2_term(c));
  }

  /// The projected midpoint is off by at most the projection's accuracy ε (the vertices' share is in G's bound):
  /// the parabola's bulge (4/3 of the triangle) moves by (4/3)·c·ε in twice the area, and its length
  /// (4(c₁ + c₂) − c)/3 by (4/3)|u₁ − u₂|·ε to first order, u₁, u₂ the half-chords' directions, which differ by
  /// about 4d/c (d the midpoint's offset): taken as (8d/c + 4ε/c)·ε.
  double midpoint_length_term(double d, double c) const {
    return c > 0 ? (8 * d / c + 4 * noise_ / c) * noise_ : 2 * noise_;
  }
  double midpoint_area2_term(double c) const { return 4.0 / 3.0 * c * noise_; }

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
  double noise_;   // the projection's accuracy per point in the target's unit (G's assumption), for the quadrature
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
  CompensatedSum bound_length_, bound_area2_;
  std::size_t quadrature_edges_ = 0;
  long order_sum_ = 0;
};

/// The true edges of one path as curves over [0, walk.param(e)], for PathDensifier; a geodesic line is only set
/// up when it is followed. Edges are taken in blocks of kBlock, so that what is kept per edge while densifying
/// (midpoints, lines) does not grow with the path: a 10⁶-vertex ring would otherwise hold 0.5 kB per edge in
/// lines alone.
class EdgeCurves {
 public:
  static constexpr std::size_t kBlock = 4096;

  EdgeCurves(const GeographicLib::Geodesic& geod_p, const std::optional<GeographicLib::Rhumb>& rhumb_p,
             EdgeModel model, const WorkPath& path, const EllipsoidWalk& walk, PJ* c_to_p)
      : geod_p_(geod_p), rhumb_p_(rhumb_p), model_(model), path_(path), walk_(walk), c_to_p_(c_to_p),
        keep_lines_(model == EdgeModel::geodesic && !walk.has_midpoints()) {}

  /// Starts the block of edges from `block_start` to `block_end`, and fills the midpoint of each of its edges
  /// (from the walk when it gives them), as longitude and latitude on the target's geographic CRS.
  void start_block(std::size_t block_start, std::size_t block_end, std::vector<Coord>& mid_lonlat) {
    block_start_ = block_start;
    lines_.assign(keep_lines_ ? block_end - block_start : 0, GeographicLib::GeodesicLine());
    mid_lonlat.assign(block_end - block_start, Coord{kNaN, kNaN});
    for (std::size_t e = block_start; e < block_end; ++e) {
      if (walk_.has_midpoints()) {
        mid_lonlat[e - block_start] = walk_.midpoint(e);
      } else if (walk_.param(e) > 1e-9) {
        mid_lonlat[e - block_start] = curve(e)(0.5 * walk_.param(e));
      }
    }
  }

  /// The true edge e (in the current block) as a curve.
  PathDensifier::Curve curve(std::size_t e) {
    const Coord a = path_.lonlat_p[e];
    const double azimuth = walk_.azimuth(e);
    if (keep_lines_) {  // geodesic edges solved by GeographicLib: their lines, set up once, kept for refining
      GeographicLib::GeodesicLine* line = &lines_[e - block_start_];
      if (!line->Init()) {
        *line = geod_p_.Line(a.y, a.x, azimuth,
                             GeographicLib::Geodesic::LATITUDE | GeographicLib::Geodesic::LONGITUDE |
                                 GeographicLib::Geodesic::DISTANCE_IN);
      }
      return [line](double s) {
        Coord c;
        line->Position(s, c.y, c.x);
        return c;
      };
    }
    if (model_ == EdgeModel::geodesic) {
      geodesic_.reset();
      return [geod = &geod_p_, geodesic = &geodesic_, a, azimuth](double s) {
        if (!*geodesic) {
          geodesic->emplace(geod->Line(a.y, a.x, azimuth,
                                       GeographicLib::Geodesic::LATITUDE | GeographicLib::Geodesic::LONGITUDE |
                                           GeographicLib::Geodesic::DISTANCE_IN));
        }
        Coord c;
        (*geodesic)->Position(s, c.y, c.x);
        return c;
      };
    }
    if (model_ == EdgeModel::rhumb) {
      rhumb_line_.emplace(rhumb_p_->Line(a.y, a.x, azimuth));
      GeographicLib::RhumbLine* rhumb = &*rhumb_line_;
      return [rhumb](double s) {
        Coord c;
        rhumb->Position(s, c.y, c.x);
        return c;
      };
    }
    const std::size_t j = (e + 1) % path_.lonlat_p.size();
    const Coord c0 = path_.c_xy[e], c1 = path_.c_xy[j];
    const double length = walk_.param(e);
    return [c0, c1, length, c_to_p = c_to_p_](double s) {
      const double t = length > 0 ? s / length : 0;
      const PJ_COORD out = proj_trans(c_to_p, PJ_FWD, proj_coord(c0.x + t * (c1.x - c0.x),
                                                                   c0.y + t * (c1.y - c0.y), 0, 0));
      return Coord{out.lp.lam, out.lp.phi};
    };
  }

 private:
  const GeographicLib::Geodesic& geod_p_;
  const std::optional<GeographicLib::Rhumb>& rhumb_p_;
  EdgeModel model_;
  const WorkPath& path_;
  const EllipsoidWalk& walk_;
  PJ* c_to_p_;
  bool keep_lines_;
  std::size_t block_start_ = 0;
  std::optional<GeographicLib::GeodesicLine> geodesic_;
  std::optional<GeographicLib::RhumbLine> rhumb_line_;
  std::vector<GeographicLib::GeodesicLine> lines_;
};

}  // namespace

bool Auditor::Impl::grid_stage(Feature& f) const {
  detail::GridMeasures& grid = f.grid;
  grid.g_area2.assign(f.paths.size(), 0.0);
  grid.d_area2.assign(f.paths.size(), 0.0);
  grid.samples = f.points_p;
  for (std::size_t i = 0; i < f.paths.size(); ++i) {
    if (std::string why = grid_path(f, i); !why.empty()) return fail(f, why, f.e_p_length, f.e_p_area);
  }
  f.result.densified_points = grid.densified;
  return true;
}

std::string Auditor::Impl::grid_path(Feature& f, std::size_t i) const {
  detail::GridMeasures& grid = f.grid;
  const WorkPath& path = f.paths[i];
  const EllipsoidWalk& walk = (*f.walk_p)[i];
  const double path_g_length = detail::planar_length(path.xy, path.closed());
  grid.g_length.add(path_g_length);
  double path_g_area2_roundoff = 0;
  if (path.closed()) grid.g_area2[i] = detail::planar_area2(path.xy, &path_g_area2_roundoff);
  const double eps_xy = detail::projection_accuracy_units(path.xy, unit_m);
  const double path_g_length_bound = detail::planar_length_roundoff(path_g_length, path.edge_count()) +
                                     detail::moved_length_bound(eps_xy, path.edge_count());
  const double path_g_area2_bound =
      path.closed() ? path_g_area2_roundoff + 2 * detail::moved_area_bound(eps_xy, path_g_length, path.xy.size())
                    : 0.0;
  grid.g_length_bound += path_g_length_bound;
  grid.g_area2_bound += path_g_area2_bound;
  grid.samples.insert(grid.samples.end(), path.lonlat_p.begin(), path.lonlat_p.end());
  PathDensifier densifier(op_fast.get(), tolerance_units, target.ellipsoid.a_m / unit_m, eps_xy, path, i,
                          grid.samples, grid.densified);
  const std::size_t edge_count = path.edge_count();
  EdgeCurves curves(geod_p, rhumb_p, edges.model, path, walk, datum_shift ? op_c_to_p.get() : op_c_to_s.get());
  const bool d_is_g = edges.model == EdgeModel::straight && edge_crs_is_target;  // the true edges are the chords
  std::vector<Coord> mid_lonlat, mid_xy;
  for (std::size_t block_start = 0; block_start < edge_count; block_start += EdgeCurves::kBlock) {
    const std::size_t block_end = std::min(edge_count, block_start + EdgeCurves::kBlock);
    // Every edge's midpoint, projected in one call per block.
    if (!d_is_g) {
      curves.start_block(block_start, block_end, mid_lonlat);
      mid_xy = mid_lonlat;
      transform_array(op_fast.get(), PJ_FWD, mid_xy);
    }
    for (std::size_t e = block_start; e < block_end; ++e) {
      const std::size_t j = (e + 1) % path.lonlat_p.size();
      // Bearing: grid bearing of the chord minus the true edge's azimuth at the start vertex.
      double sin_azimuth = 0, cos_azimuth = 1;
      walk.sincos(e, sin_azimuth, cos_azimuth);
      grid.bearing.add(path.xy[j].x - path.xy[e].x, path.xy[j].y - path.xy[e].y, sin_azimuth, cos_azimuth);
      if (d_is_g) continue;
      const PathDensifier::Curve curve = curves.curve(e);
      if (std::string why = densifier.edge(e, j, curve, walk.param(e), mid_lonlat[e - block_start],
                                           mid_xy[e - block_start]);
          !why.empty()) {
        return why;
      }
    }
  }
  if (d_is_g) {
    grid.d_length.add(path_g_length);
    grid.d_area2[i] = grid.g_area2[i];
    grid.d_length_bound += path_g_length_bound;
    grid.d_area2_bound += path_g_area2_bound;
    return {};
  }
  grid.d_length.add(densifier.length_units());
  if (path.closed()) grid.d_area2[i] = densifier.area2_units();
  // G's round-off and projection terms, the method's bound, and the round-off of the bulges' sum.
  grid.d_length_bound +=
      path_g_length_bound + densifier.method_length_bound_units() +
      detail::planar_length_roundoff(std::fabs(densifier.length_units() - path_g_length), path.edge_count());
  if (path.closed()) {
    grid.d_area2_bound += path_g_area2_bound + densifier.method_area2_bound_units2() +
                          4 * kUnitRoundoff * std::fabs(grid.d_area2[i] - grid.g_area2[i]);
  }
  return {};
}

}  // namespace gridtruth
