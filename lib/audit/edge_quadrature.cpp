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

/// The interpolation and quadrature tables of one order n: n-point Gauss–Legendre nodes g_i and weights w_i on
/// [−1, 1], and the matrices taking the n + 1 Lobatto values f_j = f(cos(jπ/n)) to the interpolant's value and
/// derivative at g_i, for the full interpolant (degree n) and for it truncated to degree n − 1.
struct Rule {
  int n = 0;
  std::vector<double> weight;                        // w_i
  std::vector<double> value, slope;                  // [i * (n + 1) + j]
  std::vector<double> value_low, slope_low;          // truncated to degree n − 1

  explicit Rule(int order) : n(order) {
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
    // Chebyshev coefficients of the Lobatto interpolant: c_k = (2/n) Σ''_j f_j cos(jkπ/n), c_0 and c_n halved
    // (Trefethen 2013, ch. 3); f(t) = Σ c_k T_k(t), f'(t) = Σ c_k k U_{k−1}(t).
    const int m = n + 1;
    std::vector<double> cosines(2 * n);  // cos(iπ/n): cos(jkπ/n) = cosines[jk mod 2n]
    for (int i = 0; i < 2 * n; ++i) cosines[i] = std::cos(kPi * i / n);
    value.assign(n * m, 0.0);
    slope.assign(n * m, 0.0);
    value_low.assign(n * m, 0.0);
    slope_low.assign(n * m, 0.0);
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
      for (int j = 0; j < m; ++j) {
        double v = 0, d = 0, vl = 0, dl = 0;
        for (int k = 0; k < m; ++k) {
          double c = (2.0 / n) * cosines[(j * k) % (2 * n)];
          if (j == 0 || j == n) c *= 0.5;
          if (k == 0 || k == n) c *= 0.5;
          v += c * t[k];
          d += c * dt[k];
          if (k <= n - 1) {
            vl += c * t[k];
            dl += c * dt[k];
          }
        }
        value[i * m + j] = v;
        slope[i * m + j] = d;
        value_low[i * m + j] = vl;
        slope_low[i * m + j] = dl;

      }
    }
  }
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

struct Integrals {
  double length = 0, bulge2 = 0, length_low = 0, bulge2_low = 0;
};

/// The integrals of the order-n interpolant through xy (relative to xy[0]) and of its truncation.
Integrals integrals(const Rule& r, const std::vector<Coord>& xy) {
  const int m = r.n + 1;
  // In the frame of the chord (u along it from P0, v across): the cross products are then of the size of the
  // bulge, not of the chord squared, and keep their precision.
  const Coord o = xy.front();
  const double cx = xy.back().x - o.x, cy = xy.back().y - o.y;
  const double c = std::hypot(cx, cy);
  const double ux = c > 0 ? cx / c : 1, uy = c > 0 ? cy / c : 0;
  Integrals out;
  for (int i = 0; i < r.n; ++i) {
    const double* v = &r.value[i * m];
    const double* d = &r.slope[i * m];
    const double* vl = &r.value_low[i * m];
    const double* dl = &r.slope_low[i * m];

    double x = 0, y = 0, dx = 0, dy = 0, xl = 0, yl = 0, dxl = 0, dyl = 0;
    for (int j = 1; j < m; ++j) {  // X_0 = Y_0 = 0
      const double dxj = xy[j].x - o.x, dyj = xy[j].y - o.y;
      const double px = dxj * ux + dyj * uy, py = dyj * ux - dxj * uy;
      x += v[j] * px;
      y += v[j] * py;
      dx += d[j] * px;
      dy += d[j] * py;
      xl += vl[j] * px;
      yl += vl[j] * py;
      dxl += dl[j] * px;
      dyl += dl[j] * py;
    }
    const double w = r.weight[i];
    out.length += w * std::sqrt(dx * dx + dy * dy);  // no overflow at plane coordinates
    out.length_low += w * std::sqrt(dxl * dxl + dyl * dyl);
    // t runs from +1 (P0) to −1 (P1): the integral from P0 to P1 is minus the one over [−1, 1].
    out.bulge2 -= w * (x * dy - y * dx);
    out.bulge2_low -= w * (xl * dyl - yl * dxl);

  }
  return out;
}

bool finite(const Coord& c) noexcept { return std::isfinite(c.x) && std::isfinite(c.y); }

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
                                                 std::vector<Coord>& samples) {
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
    const Integrals q = integrals(rule_of(n), xy_);
    res.length = q.length;
    res.bulge2 = q.bulge2;
    res.length_error = std::fabs(q.length - q.length_low);
    res.area_error = 0.5 * std::fabs(q.bulge2 - q.bulge2_low);
    if (res.length_error <= length_target && res.area_error <= area_target) {
      res.accepted = true;
      return res;
    }
    if (2 * n > kMaxOrder) return res;
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
