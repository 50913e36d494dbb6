// Internal: D of one edge by quadrature of its projected image (issue 15).
//
// The true edge (geodesic, rhumb line or straight line of the edge CRS) is a curve s ↦ (λ, φ) over [0, L]; its
// image in the target plane is P(s) = project(curve(s)). Instead of a densified polyline, the image is
// interpolated by a polynomial of degree n in t ∈ [−1, 1] (s = L (1 − t)/2) through its values at the n + 1
// Chebyshev–Lobatto points t_j = cos(jπ/n), which include both vertices and (n even) the edge's midpoint; the
// derivative P'(t) is the derivative of the interpolant (spectral differentiation; Trefethen, "Spectral Methods
// in MATLAB", 2000, ch. 6). The edge's contributions are then
//   twice the signed area between the image and its chord:  ∫ (X dY − Y dX) from P0 to P1, X = x − x0, Y = y − y0
//   length:                                                  ∫ |P'(t)| dt
// both by n-point Gauss–Legendre quadrature of the interpolant (exact for the area integrand of degree 2n − 1).
// The image of a true edge is analytic wherever the projection is, so the interpolant converges geometrically
// (Trefethen, "Approximation Theory and Approximation Practice", 2013, thm. 8.2). An order is accepted when
// dropping its top degree changes both integrals by less than their targets (|Q_n − Q_{n−1}|). The first order is
// predicted from the chord, the midpoint's offset and the Earth's radius; when it is not enough the order is
// doubled (nested: each reuses the previous nodes), up to 64; an edge not accepted at 64 is left to the caller
// (adaptive densification, which tells a tear from a sharp bend).
//
// Bounds. The change |Q_n − Q_{n−1}| is the effect of degree n, far more than the error of order n when the
// coefficients decay (by ρ per degree: 1/ρ to 1/ρ² too much). The bound instead extrapolates the coefficients
// beyond n: each family (along or across the chord, even or odd degree) from its top coefficient at the largest
// rate ρ² per two degrees that any family's upper envelope shows between degree 2 (or 3) and n. The interpolant's
// error is then Σ_{k>n} c_k (T_k − T_{k'}), k' = 2n − k the degree c_k is aliased to on the Lobatto grid
// (Trefethen 2013, ch. 4), and its effect on each integral is summed per degree exactly (∫ T_k T_j in closed
// form) with absolute values, the length to first order by parts plus a second-order term. That estimate is
// multiplied by kSafety = 10 (for the rate read from a few coefficients). Measured during development per edge
// against the same edge at order 64 (about 8000 edges of 1 km to 2000 km in seven projections, densify
// tolerances 0.1 m to 10 m; at 1 mm the errors are below the nodes' noise): the bound was 2.2× to 4.6·10⁵× the
// error, median 29× to 53× (so the unscaled estimate fell short by up to 4.5×: the factor 10 is what that needs,
// with a margin of 2); features are checked in tests/bounds_test.cpp. When no geometric decay is seen (ρ² > 1/4,
// e.g. coefficients down to the nodes' noise) the rate is taken as 1/2 without the safety factor. Added to that:
// the nodes' noise
// (each node off by ≤ the caller's `noise` plus 4 ulp; through the Lebesgue constant Λ of the interpolant: Λ e·c
// in area, Λ e times the tangent's turning in length) and the arithmetic's round-off (Higham 2002, eq. 3.5).
#pragma once

#include <proj.h>

#include <cstddef>
#include <functional>
#include <vector>

#include "gridtruth/geometry.hpp"

namespace gridtruth::detail {

class EdgeQuadrature {
 public:
  /// A true edge: its point at parameter s ∈ [0, L] as (longitude, latitude) degrees on the target's geographic
  /// CRS; NaN where it cannot be computed.
  using Curve = std::function<Coord(double s)>;

  /// What one edge gave. Units: the target plane's linear unit (and its square for areas).
  struct Result {
    bool accepted = false;       ///< both estimates within their targets at some order ≤ kMaxOrder
    double length = 0;           ///< ∫ |P'| dt of the accepted order
    double bulge2 = 0;           ///< ∫ (X dY − Y dX) from P0 to P1 (twice the area between image and chord)
    double length_change = 0;    ///< |L_n − L_{n−1}|: the change when degree n is dropped (the acceptance test)
    double area_change = 0;      ///< |B_n − B_{n−1}| / 2 (area units; the acceptance test)
    double length_bound = 0;     ///< bound on |length − exact| (see "Bounds" above); set for the last order tried
    double area_bound = 0;       ///< bound on |bulge2/2 − exact| (area units)
    double decay_rate2 = 0;      ///< ρ², the coefficients' decay per two degrees read from the top ones
    int order = 0;               ///< n of the last order tried
    std::size_t points = 0;      ///< projected points computed here (nodes other than the vertices and midpoint)
  };

  static constexpr int kMaxOrder = 64;
  /// Safety factor on the extrapolated error (see "Bounds" above).
  static constexpr double kSafety = 10;
  /// Above this ρ² (ρ = 1/2 per degree) no rate is read from the coefficients and the bound is the change itself.
  static constexpr double kMaxRate2 = 0.25;

  /// Integrates the image of `curve` over [0, length_param], whose ends project to p0 and p1 and whose midpoint
  /// projects to pm. `op` projects (lon, lat) degrees to the plane; `radius` is the Earth's radius in the plane's
  /// unit; `noise` bounds how far a projected node may be from the exact projection (plane's unit). Starts at the order predicted_order() gives and doubles it until both
  /// estimates are within `length_target` and `area_target` (or kMaxOrder is passed). Appends every node's
  /// lon/lat to `samples`. Never throws for a bad edge: a node that cannot be projected ends the attempt.
  Result integrate(const Curve& curve, double length_param, const Coord& p0, const Coord& pm, const Coord& p1,
                   PJ* op, double radius, double length_target, double area_target, double noise,
                   std::vector<Coord>& samples);

  /// The smallest even order ≥ 4 whose predicted area estimate is within `area_target`, from the chord, the
  /// midpoint's distance from it (sagitta) and the Earth's radius (all in the plane's unit).
  static int predicted_order(double chord, double sagitta, double radius, double area_target);

  /// Decay of the image's coefficients per degree, as a share of chord/R (see predicted_order()).
  static constexpr double kRate = 0.3;

 private:
  std::vector<Coord> xy_, fresh_, scratch_;  // nodes j = 0..n of the current order; new nodes; scratch
  std::vector<std::size_t> index_;
};

}  // namespace gridtruth::detail
