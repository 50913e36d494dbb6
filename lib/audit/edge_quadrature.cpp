// Quadrature of a projected true edge; see edge_quadrature.hpp.
#include "edge_quadrature.hpp"

#include <algorithm>
#include <array>
#include <cmath>
#include <limits>
#include <memory>
#include <mutex>

namespace gridtruth::detail {
namespace {

constexpr double kPi = 3.14159265358979323846;
constexpr double kUnitRoundoff = 0x1p-53;

/// γ_k = k u / (1 − k u) (Higham 2002, lemma 3.1).
constexpr double gamma(int k) { return k * kUnitRoundoff / (1 - k * kUnitRoundoff); }

/// ∫_{−1}^{1} T_k(t) dt: 0 for odd k, −2/(k² − 1) for even k (Trefethen 2013, ch. 19).
double chebyshev_integral(int k) { return k % 2 ? 0.0 : -2.0 / (double(k) * k - 1); }

/// The interpolation and quadrature tables of one order n: n-point Gauss–Legendre nodes g_i and weights w_i on
/// [−1, 1]; the matrices taking the n + 1 Lobatto values f_j = f(cos(jπ/n)) to the interpolant's value and
/// derivative at g_i; the map from the same values to the interpolant's Chebyshev coefficients c_k; T_n, T'_n at
/// g_i, so that the interpolant truncated to degree n − 1 is the full one less its top term.
struct Rule {
  int n = 0;
  std::vector<double> weight;           // w_i
  std::vector<double> value, slope;     // [i * (n + 1) + j]
  std::vector<double> coefficient;      // [k * (n + 1) + j]
  std::vector<double> top_t, top_dt;    // T_n(g_i), T'_n(g_i)
  std::vector<double> value_sum, slope_sum;  // Σ_j |value_ij|, Σ_j |slope_ij| (for round-off bounds)
  double lebesgue = 0;                  // Lebesgue constant of the Lobatto nodes, Σ_j |ℓ_j(x)| at its largest
  std::vector<double> aliased;          // ∫ (T_k − T_{2n−k}) T_j at [(k − n − 1) * n + j], n < k ≤ 2n, j < n

  explicit Rule(int order) : n(order) {
    const std::vector<double> node = gauss_legendre();
    set_coefficient_map();
    set_node_tables(node);
    set_aliased_moments();
  }

 private:
  /// c_k of the Lobatto values f_j, as coefficient[] holds it.
  double coef(int j, int k) const {
    double c = (2.0 / n) * cosines_[(j * k) % (2 * n)];
    if (j == 0 || j == n) c *= 0.5;
    if (k == 0 || k == n) c *= 0.5;
    return c;
  }

  /// The Gauss–Legendre nodes (returned) and weights (set).
  std::vector<double> gauss_legendre() {
    // Gauss–Legendre nodes by Newton's method on P_n from Tricomi's initial guesses (common practice; Golub and
    // Welsch 1969 give the same nodes as eigenvalues).
    std::vector<double> node(n);
    weight.resize(n);
    for (int i = 0; i < n; ++i) {
      double z = std::cos(kPi * (i + 0.75) / (n + 0.5));
      double dp = 1;
      for (int it = 0; it < 100; ++it) {
        double p0 = 1, p1 = z;
        for (int k = 2; k <= n; ++k) {
          const double p2 = ((2 * k - 1) * z * p1 - (k - 1) * p0) / k;
          p0 = p1;
          p1 = p2;
        }
        dp = n * (z * p1 - p0) / (z * z - 1);
        const double dz = p1 / dp;
        z -= dz;
        if (std::fabs(dz) < 1e-16) break;
      }
      node[i] = z;
      weight[i] = 2 / ((1 - z * z) * dp * dp);
    }
    return node;
  }

  /// The map from the Lobatto values to the Chebyshev coefficients.
  void set_coefficient_map() {
    // Chebyshev coefficients of the Lobatto interpolant: c_k = (2/n) Σ''_j f_j cos(jkπ/n), c_0 and c_n halved
    // (Trefethen 2013, ch. 3); f(t) = Σ c_k T_k(t), f'(t) = Σ c_k k U_{k−1}(t).
    const int m = n + 1;
    cosines_.resize(2 * n);  // cos(iπ/n): cos(jkπ/n) = cosines_[jk mod 2n]
    for (int i = 0; i < 2 * n; ++i) cosines_[i] = std::cos(kPi * i / n);
    coefficient.assign(m * m, 0.0);
    for (int k = 0; k <= n; ++k) {
      for (int j = 0; j < m; ++j) coefficient[k * m + j] = coef(j, k);
    }
  }

  /// The interpolant's value and slope at each Gauss node, T_n and T'_n there, the round-off sums, the Lebesgue
  /// constant.
  void set_node_tables(const std::vector<double>& node) {
    const int m = n + 1;
    value.assign(n * m, 0.0);
    slope.assign(n * m, 0.0);
    top_t.assign(n, 0.0);
    top_dt.assign(n, 0.0);
    value_sum.assign(n, 0.0);
    slope_sum.assign(n, 0.0);
    for (int i = 0; i < n; ++i) {
      const double x = node[i];
      std::vector<double> t(m), dt(m);  // T_k(x), T'_k(x)
      double u_prev = 0, u = 1;         // U_{k−2}, U_{k−1}
      for (int k = 0; k < m; ++k) {
        t[k] = k == 0 ? 1 : (k == 1 ? x : 2 * x * t[k - 1] - t[k - 2]);
        if (k == 0) {
          dt[k] = 0;
        } else {
          dt[k] = k * u;
          const double next = 2 * x * u - u_prev;
          u_prev = u;
          u = next;
        }
      }
      top_t[i] = t[n];
      top_dt[i] = dt[n];
      double lebesgue_here = 0;
      for (int j = 0; j < m; ++j) {
        double v = 0, d = 0;
        for (int k = 0; k < m; ++k) {
          const double c = coef(j, k);
          v += c * t[k];
          d += c * dt[k];
        }
        value[i * m + j] = v;
        slope[i * m + j] = d;
        lebesgue_here += std::fabs(v);
        slope_sum[i] += std::fabs(d);
      }
      value_sum[i] = lebesgue_here;
      lebesgue = std::max(lebesgue, lebesgue_here);
    }
    // The Lobatto interpolant's Lebesgue constant is at most (2/π) ln(n) + 1 (Trefethen 2013, thm. 15.2); the
    // Gauss nodes sample it, the bound covers the rest.
    lebesgue = std::max(lebesgue, 2 / kPi * std::log(double(n)) + 1);
  }

  /// The aliased moments of the bounds.
  void set_aliased_moments() {
    // T_k T_j = (T_{k+j} + T_{|k−j|})/2 (Mason and Handscomb 2003, eq. 2.38).
    aliased.assign(n * n, 0.0);
    for (int k = n + 1; k <= 2 * n; ++k) {
      const int alias = 2 * n - k;
      for (int j = 0; j < n; ++j) {
        const double jk = 0.5 * (chebyshev_integral(k + j) + chebyshev_integral(std::abs(k - j)));
        const double ja = 0.5 * (chebyshev_integral(alias + j) + chebyshev_integral(std::abs(alias - j)));
        aliased[(k - n - 1) * n + j] = jk - ja;
      }
    }
  }

  std::vector<double> cosines_;
};

/// The rule of an even order 4 ≤ n ≤ kMaxOrder, built on first use (thread-safe).
const Rule& rule_of(int n) {
  constexpr int kRules = (EdgeQuadrature::kMaxOrder - 4) / 2 + 1;
  static std::array<std::once_flag, kRules> once;
  static std::array<std::unique_ptr<Rule>, kRules> rules;
  const int k = (n - 4) / 2;
  std::call_once(once[k], [&] { rules[k] = std::make_unique<Rule>(n); });
  return *rules[k];
}

/// What integrals() gives: the length and twice the bulge of the order-n interpolant and of it truncated to degree
/// n − 1; its Chebyshev coefficients along (a_k) and across (b_k) the chord; what the bounds need.
struct Integrals {
  double length = 0, bulge2 = 0, length_low = 0, bulge2_low = 0;
  // a_k, b_k, k = 0..n (only those are set and read: clearing the whole arrays would cost more than the sums)
  std::array<double, EdgeQuadrature::kMaxOrder + 1> along, across;
  double chord = 0;
  double length_magnitude = 0;      // ∫ |X'| + |Y'|
  double coordinate_magnitude = 0;  // largest |coordinate| of a node (plane, not chord frame)
  double turning = 0;       // variation of the tangent's slope across the chord over the Gauss nodes, from the chord
  double length_roundoff = 0, bulge2_roundoff = 0;  // bounds on the arithmetic's round-off (the nodes as given)
};

/// The integrals of the order-n interpolant through xy (relative to xy[0]) and of its truncation.
Integrals integrals(const Rule& r, const std::vector<Coord>& xy) {
  const int n = r.n, m = n + 1;
  // In the frame of the chord (u along it from P0, v across): the cross products are then of the size of the
  // bulge, not of the chord squared, and keep their precision.
  const Coord o = xy.front();
  const double cx = xy.back().x - o.x, cy = xy.back().y - o.y;
  const double c = std::hypot(cx, cy);
  const double ux = c > 0 ? cx / c : 1, uy = c > 0 ? cy / c : 0;
  Integrals out;
  out.chord = c;
  std::array<double, EdgeQuadrature::kMaxOrder + 1> px, py;  // [0, m) used
  px[0] = py[0] = 0;
  out.coordinate_magnitude = std::max(std::fabs(o.x), std::fabs(o.y));
  double big_x = 0, big_y = 0;  // max |px|, |py|
  for (int j = 1; j < m; ++j) {  // X_0 = Y_0 = 0
    const double dxj = xy[j].x - o.x, dyj = xy[j].y - o.y;
    px[j] = dxj * ux + dyj * uy;
    py[j] = dyj * ux - dxj * uy;
    out.coordinate_magnitude = std::max({out.coordinate_magnitude, std::fabs(xy[j].x), std::fabs(xy[j].y)});
    big_x = std::max(big_x, std::fabs(px[j]));
    big_y = std::max(big_y, std::fabs(py[j]));
  }
  for (int k = 0; k <= n; ++k) {
    const double* row = &r.coefficient[k * m];
    double a = 0, b = 0;
    for (int j = 1; j < m; ++j) a += row[j] * px[j], b += row[j] * py[j];
    out.along[k] = a;
    out.across[k] = b;
  }
  const double top_a = out.along[n], top_b = out.across[n];
  double slope_prev = 0, length_sum_magnitude = 0, bulge2_sum_magnitude = 0;
  for (int i = 0; i < n; ++i) {
    const double* v = &r.value[i * m];
    const double* d = &r.slope[i * m];
    double x = 0, y = 0, dx = 0, dy = 0;
    for (int j = 1; j < m; ++j) {
      x += v[j] * px[j];
      y += v[j] * py[j];
      dx += d[j] * px[j];
      dy += d[j] * py[j];
    }
    const double w = r.weight[i];
    const double speed = std::sqrt(dx * dx + dy * dy);  // no overflow at plane coordinates
    out.length += w * speed;
    // t runs from +1 (P0) to −1 (P1): the integral from P0 to P1 is minus the one over [−1, 1].
    out.bulge2 -= w * (x * dy - y * dx);
    out.length_magnitude += w * (std::fabs(dx) + std::fabs(dy));
    length_sum_magnitude += w * speed;
    bulge2_sum_magnitude += w * (std::fabs(x * dy) + std::fabs(y * dx));
    // Round-off of the node's sums (Higham 2002, eq. 3.5: |fl(Σ a_j b_j) − Σ a_j b_j| ≤ γ_m Σ |a_j b_j|), carried
    // through the square root and the cross product to first order.
    const double ex = gamma(m) * r.value_sum[i] * big_x, ey = gamma(m) * r.value_sum[i] * big_y;
    const double edx = gamma(m) * r.slope_sum[i] * big_x, edy = gamma(m) * r.slope_sum[i] * big_y;
    out.length_roundoff += w * (edx + edy);
    out.bulge2_roundoff += w * (std::fabs(x) * edy + std::fabs(dy) * ex + std::fabs(y) * edx + std::fabs(dx) * ey);
    const double slope_here = dx != 0 ? dy / dx : 0;
    out.turning += std::fabs(slope_here - slope_prev);
    slope_prev = slope_here;
    // Truncated to degree n − 1: the acceptance test's change.
    const double tn = r.top_t[i], dtn = r.top_dt[i];
    x -= top_a * tn;
    y -= top_b * tn;
    dx -= top_a * dtn;
    dy -= top_b * dtn;
    out.length_low += w * std::sqrt(dx * dx + dy * dy);
    out.bulge2_low -= w * (x * dy - y * dx);
  }
  out.turning += std::fabs(slope_prev);  // the first and last slopes count from the chord's direction
  // The Gauss sums: n terms, each with a relative error of a few u.
  out.length_roundoff += gamma(n + 3) * length_sum_magnitude;
  out.bulge2_roundoff += gamma(n + 3) * bulge2_sum_magnitude;
  return out;
}

using Coefficients = std::array<double, EdgeQuadrature::kMaxOrder + 1>;

/// The rate ρ² per two degrees at which one family of the image's Chebyshev coefficients (one component, even or
/// odd degrees, from degree 2 or 3: degrees 0 and 1 hold the chord itself) decays: the mean rate of its upper
/// envelope (e_k = max_{j ≥ k} |c_j| over the family) from its lowest degree to its highest k ≤ n; 0 for a family
/// of one coefficient (odd degrees at n = 4), which is extrapolated at the others' rate.
double family_rate2(const Coefficients& c, int n, int parity) {
  const int top = (n % 2 == parity) ? n : n - 1;
  const int bottom = parity == 0 ? 2 : 3;
  const double high = std::fabs(c[top]);
  if (high == 0) return 0;
  if (top - bottom < 2) return 0;  // one coefficient: no rate of its own
  double envelope = 0;
  for (int k = top; k >= bottom; k -= 2) envelope = std::max(envelope, std::fabs(c[k]));
  const double ratio = high / envelope;  // over top − bottom degrees: ρ² is its 2/(top − bottom)-th power
  if (top - bottom == 2) return ratio;
  if (top - bottom == 4) return std::sqrt(ratio);
  return std::pow(ratio, 2.0 / (top - bottom));
}

/// The Chebyshev coefficients of the derivative of Σ_{k≤n} c_k T_k (degree n − 1): d_{k−1} = d_{k+1} + 2k c_k,
/// d_0 halved (Mason and Handscomb 2003, eq. 2.49).
Coefficients derivative(const Coefficients& c, int n) {
  Coefficients d;  // degrees ≥ n are never read past n: only those are cleared (a full clear costs more than the rest)
  std::fill_n(d.begin(), std::min<std::size_t>(d.size(), static_cast<std::size_t>(n) + 1), 0.0);
  double next = 0, next2 = 0;  // d_{k+1}, d_{k+2}
  for (int k = n; k >= 1; --k) {
    const double here = next2 + 2.0 * k * c[k];  // d_{k−1}
    next2 = next;
    next = here;
    d[k - 1] = here;
  }
  d[0] *= 0.5;
  return d;
}

/// |∫ (T_k − T_{2n−k}) f| for f = Σ_{j<n} f_j T_j (n < k ≤ 2n), from the rule's table.
double aliased_moment(const Rule& r, int k, const Coefficients& f) {
  const double* row = &r.aliased[(k - r.n - 1) * r.n];
  double sum = 0;
  for (int j = 0; j < r.n; ++j) sum += f[j] * row[j];
  return std::fabs(sum);
}

double abs_sum(const Coefficients& c, int n) {
  double s = 0;
  for (int k = 0; k <= n; ++k) s += std::fabs(c[k]);
  return s;
}

bool finite(const Coord& c) noexcept { return std::isfinite(c.x) && std::isfinite(c.y); }

/// The image's Chebyshev coefficients beyond the order n, extrapolated (see set_bounds()).
struct Tail {
  int n = 0;
  double seen = 0;    // the largest decay rate ρ² per two degrees any family shows
  double r2 = 0.5;    // the rate the extrapolation uses
  double safety = 1;  // the factor on the estimate (EdgeQuadrature::kSafety when the coefficients converge)
  double top[2][2] = {};  // [component][parity of the degree]: the top coefficient of each family
  std::array<double, EdgeQuadrature::kMaxOrder + 3> power;  // r2^i, for i ≤ (2n + 2 − (n − 1)) / 2 ≤ n/2 + 2
  /// |c_k| for k > n of component 0 (along) or 1 (across).
  double extrapolated(int component, int k) const {
    const int from = (n % 2 == k % 2) ? n : n - 1;
    return top[component][k % 2] * power[(k - from) / 2];
  }
};

// The coefficients beyond n, each family (along or across, even or odd) extrapolated from its top one at the
// largest rate ρ² per two degrees any family shows (the same function, so the same asymptotic rate: the largest
// guards against a family that happens to decay fast at low degrees), the top one taken as at least ρ² times
// the one two below it (in case it happens to be small). With no geometric decay seen (ρ² > 1/4: e.g.
// coefficients down to the nodes' noise) the rate is taken as 1/2 and the bound has no safety factor: it is
// then of the size of the last coefficients, as the acceptance test.
Tail tail_of(const Integrals& q, int n) {
  using EQ = EdgeQuadrature;
  Tail t;
  t.n = n;
  for (const Coefficients* c : {&q.along, &q.across}) {
    for (int parity = 0; parity < 2; ++parity) t.seen = std::max(t.seen, family_rate2(*c, n, parity));
  }
  const bool converging = t.seen <= EQ::kMaxRate2;
  t.r2 = converging ? t.seen : 0.5;
  t.safety = converging ? EQ::kSafety : 1.0;
  for (int component = 0; component < 2; ++component) {
    const Coefficients& c = component == 0 ? q.along : q.across;
    for (int parity = 0; parity < 2; ++parity) {
      const int k = (n % 2 == parity) ? n : n - 1;
      t.top[component][parity] = std::fabs(c[k]);
      if (k - 2 >= 2) t.top[component][parity] = std::max(t.top[component][parity], t.r2 * std::fabs(c[k - 2]));
    }
  }
  t.power[0] = 1;
  const std::size_t powers = std::min<std::size_t>(t.power.size(), static_cast<std::size_t>(n) / 2 + 3);
  for (std::size_t i = 1; i < powers; ++i) t.power[i] = t.power[i - 1] * t.r2;
  return t;
}

/// The bounds of the order tried last (see edge_quadrature.hpp, "Bounds").
void set_bounds(EdgeQuadrature::Result& res, const Integrals& q, const Rule& rule, double noise) {
  const int n = rule.n;
  const double lebesgue = rule.lebesgue;
  const Tail tail = tail_of(q, n);
  res.decay_rate2 = tail.seen;
  const double r2 = tail.r2, safety = tail.safety;
  auto extrapolated = [&tail](int component, int k) { return tail.extrapolated(component, k); };
  const double tail_beyond = 1 / (1 - r2);  // Σ_{i≥0} r2^i, at the slowest family's rate
  // The nodes as given are off by at most e (the projection's accuracy, and the rounding of the coordinates):
  // to first order that moves the length by ∫ τ·η' = −∫ τ'·η ≤ turning · Λ e (η the interpolant of the nodes'
  // errors, |η| ≤ Λ e; τ the unit tangent, whose total turning is taken as twice the slope's sampled variation)
  // and twice the bulge by 2 ∫ (X' η_Y − Y' η_X) ≤ 2 Λ e ∫ (|X'| + |Y'|).
  const double e = noise + 4 * kUnitRoundoff * q.coordinate_magnitude;
  const double length_floor = q.length_roundoff + 2 * q.turning * lebesgue * e;
  const double area_floor = 0.5 * q.bulge2_roundoff + lebesgue * e * q.length_magnitude;
  // Chebyshev coefficients of X', Y', Y'' and X'' (degrees n − 1, n − 1, n − 2, n − 2).
  const Coefficients dx = derivative(q.along, n), dy = derivative(q.across, n), ddy = derivative(dy, n - 1);
  const Coefficients ddx = derivative(dx, n - 1);
  const double c2 = 0.5 * q.chord;                       // |X'| if the parameter ran evenly along the chord
  const double dx_max = abs_sum(dx, n - 1), dy_max = abs_sum(dy, n - 1), ddy_max = abs_sum(ddy, n - 2);
  const double ddx_max = abs_sum(ddx, n - 2);
  double stretch = std::fabs(dx[0] + c2);                 // max |X' + c/2| ≤ Σ |coefficients|
  for (int k = 1; k < n; ++k) stretch += std::fabs(dx[k]);
  // The interpolant's error δP = P − p = Σ_{k>n} c_k (T_k − T_{k'}), k' = 2n − k the degree c_k is aliased to on
  // the Lobatto grid for n < k ≤ 2n (Trefethen 2013, ch. 4); |T_k − T_k'| ≤ 2, |T_k' − T_k''| ≤ 2 k².
  // Area: bulge2/2 = ∫ Y X' dt, so it moves by ∫ δY X' + ∫ Y δX' = ∫ δY X' − ∫ Y' δX (δX = 0 at the ends), each
  // an exact sum over k of c_k ∫ (T_k − T_k') f with f = X' or Y'.
  // Length: L = ∫ |P'| moves by ∫ (X' δX' + Y' δY')/|P'| to first order; by parts, with g = Y'/|P'|, that is
  // −∫ (X'/|P'|)' δX − ∫ g' δY, where (X'/|P'|)' = O(g g') and g' ≈ Y''/|X'|; plus the second order
  // ∫ |δP'|² / |P'|. The Gauss rule is exact for the polynomial part of |p'| (degree 2n − 1), and what is not
  // polynomial in it is of the order of the squared slope times ρ^{2n}, far below the rest.
  double area = 0, length_y = 0, tail_a = 0, tail_b = 0, tail_dp = 0;
  for (int k = n + 1; k <= 2 * n; ++k) {
    const double ak = extrapolated(0, k), bk = extrapolated(1, k);
    area += bk * aliased_moment(rule, k, dx) + ak * aliased_moment(rule, k, dy);
    length_y += bk * aliased_moment(rule, k, ddy);
    tail_a += ak;
    tail_b += bk;
    tail_dp += 2.0 * k * k * (ak + bk);
  }
  const double a_far = extrapolated(0, 2 * n + 1) + extrapolated(0, 2 * n + 2);
  const double b_far = extrapolated(1, 2 * n + 1) + extrapolated(1, 2 * n + 2);
  const double far = 2 * (2 * n + 4.0) * (2 * n + 4.0) * tail_beyond;  // Σ k² r2^i over the rest, generously
  area += 4 * tail_beyond * (b_far * dx_max + a_far * dy_max);  // |∫ (T_k − T_k') f| ≤ 4 max |f|
  length_y += 4 * tail_beyond * b_far * ddy_max;
  tail_a += a_far * tail_beyond;
  tail_b += b_far * tail_beyond;
  tail_dp += (a_far + b_far) * far;
  double length_estimate = std::numeric_limits<double>::infinity();
  if (stretch < 0.5 * c2) {
    // |P'| ≥ |X'| ≥ c/2 − stretch: g' = Y''/|X'| − Y' X''/X'² is taken at the even speed c/2, corrected by the
    // ratio (c/2)/(c/2 − stretch) squared for the rest.
    const double slow = c2 / (c2 - stretch);
    const double g_max = dy_max / (c2 - stretch), dg_max = ddy_max / (c2 - stretch) + g_max * ddx_max / (c2 - stretch);
    length_estimate = slow * slow * length_y / c2 + 2 * g_max * dg_max * 2 * tail_a +
                      2 * tail_dp * tail_dp / (c2 - stretch);
  } else {
    // A parameter far from even along the chord: the coarser −∫ τ'·δP ≤ turning · max |δP|.
    length_estimate = 2 * q.turning * 2 * (tail_a + tail_b) + (c2 > 0 ? 2 * tail_dp * tail_dp / c2 : tail_dp);
  }
  res.length_bound = safety * length_estimate + length_floor;
  res.area_bound = safety * area + area_floor;
}

}  // namespace

int EdgeQuadrature::predicted_order(double chord, double sagitta, double radius, double area_target) {
  // The image's coefficients across the chord (Chebyshev, in t) start at a_2 = sagitta/2 and decay by about
  // kRate · chord/R per degree (measured on edges of 1 km to 2000 km in TM, LCC, Albers, LAEA, polar
  // stereographic, Mercator and equidistant cylindrical: 0.05 to 0.25 · chord/R). When the sagitta vanishes
  // (an image that changes its bend at the middle) a_3 still measures up to about 1e-2 · chord · (chord/R)²,
  // which then stands in for a_2.
  // Dropping the even a_n changes the area by c · a_n / (n² − 1) (∫ T_n = −2/(n² − 1)).
  const double q = chord / radius;
  const double rho = kRate * q;
  double a = std::max(0.5 * sagitta, 2e-2 * chord * q * q);
  for (int n = 4; n < kMaxOrder; n += 2) {
    a *= rho * rho;  // a_n from a_{n−2}
    if (chord * a / (n * n - 1.0) <= area_target) return n;
  }
  return kMaxOrder;
}

EdgeQuadrature::Result EdgeQuadrature::integrate(const Curve& curve, double length_param, const Coord& p0,
                                                 const Coord& pm, const Coord& p1, PJ* op,
                                                 double radius, double length_target, double area_target,
                                                 double noise, std::vector<Coord>& samples) {
  Result res;
  const double cx = p1.x - p0.x, cy = p1.y - p0.y;
  const double chord = std::hypot(cx, cy);
  const double sagitta = chord > 0 ? std::fabs(cx * (pm.y - p0.y) - cy * (pm.x - p0.x)) / chord : 0;
  int n = predicted_order(chord, sagitta, radius, area_target);
  // First order: every interior node but the midpoint; then each doubling adds the odd nodes of the new order.
  xy_.assign(n + 1, Coord{0, 0});
  xy_[0] = p0;
  xy_[n / 2] = pm;
  xy_[n] = p1;
  std::size_t first = 1, step = 1;
  for (;;) {
    fresh_.clear();
    index_.clear();
    for (std::size_t j = first; j < static_cast<std::size_t>(n); j += step) {
      if (2 * j == static_cast<std::size_t>(n)) continue;
      const double t = std::cos(kPi * double(j) / n);
      fresh_.push_back(curve(0.5 * length_param * (1 - t)));
      index_.push_back(j);
    }
    const std::size_t at = samples.size();
    samples.insert(samples.end(), fresh_.begin(), fresh_.end());
    if (!fresh_.empty()) {
      proj_trans_generic(op, PJ_FWD, &fresh_[0].x, sizeof(Coord), fresh_.size(), &fresh_[0].y, sizeof(Coord),
                         fresh_.size(), nullptr, 0, 0, nullptr, 0, 0);
    }
    res.points += fresh_.size();
    res.order = n;
    for (std::size_t k = 0; k < fresh_.size(); ++k) {
      if (!finite(samples[at + k]) || !finite(fresh_[k])) return res;
      xy_[index_[k]] = fresh_[k];
    }
    const Rule& rule = rule_of(n);
    const Integrals q = integrals(rule, xy_);
    res.length = q.length;
    res.bulge2 = q.bulge2;
    res.length_change = std::fabs(q.length - q.length_low);
    res.area_change = 0.5 * std::fabs(q.bulge2 - q.bulge2_low);
    if (res.length_change <= length_target && res.area_change <= area_target) {
      res.accepted = true;
      set_bounds(res, q, rule, noise);
      return res;
    }
    if (2 * n > kMaxOrder) {
      set_bounds(res, q, rule, noise);
      return res;
    }
    // Double the order: the old nodes are the even ones of the new.
    scratch_.assign(2 * n + 1, Coord{0, 0});
    for (int j = 0; j <= n; ++j) scratch_[2 * j] = xy_[j];
    xy_.swap(scratch_);
    n *= 2;
    first = 1;
    step = 2;
  }
}

}  // namespace gridtruth::detail
