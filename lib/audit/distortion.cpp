// Distortion statistics: Tissot's indicatrix and the convergence at points (central differences of the
// projection), and their extremes over a feature's vertices, points and densified points (screened).
#include <algorithm>
#include <array>
#include <cmath>
#include <limits>
#include <utility>

#include "auditor_impl.hpp"
#include "target_check.hpp"

namespace gridtruth {

using detail::Feature;
using detail::finite;
using detail::kDegToRad;
using detail::kNaN;

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

/// The smallest and largest of the values added (NaN ignored).
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

constexpr std::size_t kMaxSamples = 64;  // more samples are thinned to this many
constexpr std::size_t kEvery = 10;       // up to this many points, every one is evaluated

/// The points the statistics are taken over: every sample, or for more than kMaxSamples the points extreme in
/// longitude and latitude plus evenly spaced others.
std::vector<Coord> sample_pool(const std::vector<Coord>& samples) {
  std::vector<Coord> pool;
  if (samples.size() <= kMaxSamples) {
    pool = samples;
    return pool;
  }
  auto by_x = std::minmax_element(samples.begin(), samples.end(),
                                  [](const Coord& a, const Coord& b) { return a.x < b.x; });
  auto by_y = std::minmax_element(samples.begin(), samples.end(),
                                  [](const Coord& a, const Coord& b) { return a.y < b.y; });
  pool = {*by_x.first, *by_x.second, *by_y.first, *by_y.second};
  const std::size_t rest = kMaxSamples - pool.size();
  for (std::size_t k = 0; k < rest; ++k) pool.push_back(samples[k * samples.size() / rest]);
  return pool;
}

/// The extremes of every channel over the points evaluated.
class ChannelExtremes {
 public:
  void take(const std::vector<PointFactors>& fs) {
    for (const PointFactors& f : fs) {
      const auto v = channels(f);
      for (int c = 0; c < kChannels; ++c) ext_[c].add(v[c]);
    }
  }
  std::optional<Distortion> result() const {
    if (ext_[0].empty()) return std::nullopt;
    return Distortion{ext_[0].lo, ext_[1].hi, ext_[2].lo, ext_[3].hi, ext_[4].hi, ext_[5].lo, ext_[6].hi};
  }

 private:
  Extremes ext_[kChannels];
};

/// Points in local coordinates: degrees of arc east (u) and north (v) of the first point.
struct LocalPoints {
  std::vector<double> u, v;
};

LocalPoints local_points(const std::vector<Coord>& pool) {
  const std::size_t n = pool.size();
  const Coord o = pool.front();
  const double coslat = std::cos(o.y * kDegToRad);
  LocalPoints p{std::vector<double>(n), std::vector<double>(n)};
  for (std::size_t i = 0; i < n; ++i) {
    double du = pool[i].x - o.x;  // the model needs no more than a few digits: a plain wrap will do
    if (du > 180) du -= 360;
    else if (du < -180) du += 360;
    p.u[i] = du * coslat;
    p.v[i] = pool[i].y - o.y;
  }
  return p;
}

/// The anchors: the points extreme in eight directions (each once, marked in `done`).
std::vector<std::size_t> extreme_anchors(const LocalPoints& p, std::vector<char>& done) {
  const std::vector<double>& u = p.u;
  const std::vector<double>& v = p.v;
  std::vector<std::size_t> anchors;
  for (const auto& [du, dv] : {std::pair{1.0, 0.0}, {0.0, 1.0}, {1.0, 1.0}, {1.0, -1.0}}) {
    std::size_t lo = 0, hi = 0;
    for (std::size_t i = 1; i < u.size(); ++i) {
      const double d = du * u[i] + dv * v[i];
      if (d < du * u[lo] + dv * v[lo]) lo = i;
      if (d > du * u[hi] + dv * v[hi]) hi = i;
    }
    for (std::size_t i : {lo, hi}) {
      if (!done[i]) anchors.push_back(i), done[i] = 1;
    }
  }
  return anchors;
}

/// Enough anchors for a quadratic, and every channel finite at them.
bool finite_anchors(const std::vector<PointFactors>& af) {
  bool finite = af.size() >= 5;
  for (const PointFactors& f : af) {
    for (double val : channels(f)) finite = finite && std::isfinite(val);
  }
  return finite;
}

/// Least squares of a value on a quadratic in (u, v) over the anchors, by modified Gram–Schmidt. A column that
/// the anchors cannot tell from the others is dropped (e.g. u² + v² when they lie on a circle: it is then
/// constant over them).
class QuadraticFit {
 public:
  QuadraticFit(const LocalPoints& p, const std::vector<std::size_t>& anchors)
      : anchors_(anchors), na_(anchors.size()), terms_(p.u.size()), q_(kTerms * anchors.size()) {
    const std::size_t n = p.u.size();
    double extent = 0;
    for (std::size_t i = 0; i < n; ++i) extent = std::max({extent, std::fabs(p.u[i]), std::fabs(p.v[i])});
    extent = extent > 0 ? extent : 1;
    for (std::size_t i = 0; i < n; ++i) {
      const double x = p.u[i] / extent, y = p.v[i] / extent;
      terms_[i] = {1, x, y, x * x - y * y, x * y, x * x + y * y};
    }
    for (int j = 0; j < kTerms; ++j) orthogonalise(j);
  }

  /// Fits the values y at the anchors.
  void fit(const std::vector<double>& y) {
    double c[kTerms] = {};
    for (double& b : coef_) b = 0;
    for (int i : kept_) {
      for (std::size_t k = 0; k < na_; ++k) c[i] += q_[i * na_ + k] * y[k];
    }
    for (auto it = kept_.rbegin(); it != kept_.rend(); ++it) {  // back substitution R β = c over the kept columns
      double sum = c[*it];
      for (int j : kept_) {
        if (j > *it) sum -= r_[*it][j] * coef_[j];
      }
      coef_[*it] = sum / r_[*it][*it];
    }
  }
  /// The fitted value at point i.
  double predict(std::size_t i) const {
    double sum = 0;
    for (int j : kept_) sum += coef_[j] * terms_[i][j];
    return sum;
  }

 private:
  static constexpr int kTerms = 6;

  void orthogonalise(int j) {
    std::vector<double> col(na_);
    for (std::size_t k = 0; k < na_; ++k) col[k] = terms_[anchors_[k]][j];
    double norm0 = 0;
    for (double c : col) norm0 += c * c;
    for (int i : kept_) {
      double dot = 0;
      for (std::size_t k = 0; k < na_; ++k) dot += q_[i * na_ + k] * col[k];
      r_[i][j] = dot;
      for (std::size_t k = 0; k < na_; ++k) col[k] -= dot * q_[i * na_ + k];
    }
    double norm = 0;
    for (double c : col) norm += c * c;
    if (!(norm > 1e-16 * norm0) || kept_.size() + 1 >= na_) return;  // dependent, or no degree of freedom left
    norm = std::sqrt(norm);
    r_[j][j] = norm;
    for (std::size_t k = 0; k < na_; ++k) q_[j * na_ + k] = col[k] / norm;
    kept_.push_back(j);
  }

  const std::vector<std::size_t>& anchors_;
  std::size_t na_;
  std::vector<std::array<double, kTerms>> terms_;
  std::vector<double> q_;  // orthonormal columns over the anchors, column-major
  double r_[kTerms][kTerms] = {};
  std::vector<int> kept_;
  double coef_[kTerms] = {};
};

/// The points (not yet evaluated) that may hold the extreme of channel ch: those whose modelled value is within
/// 4ρ plus the channel's accuracy of the modelled extreme; none when the channel is flat to its accuracy over
/// the anchors. Returns how many it newly marked.
std::size_t mark_candidates(int ch, const std::vector<PointFactors>& af, const std::vector<std::size_t>& anchors,
                            QuadraticFit& fit, const std::vector<char>& done, std::vector<char>& candidate,
                            std::vector<double>& model) {
  const std::size_t na = anchors.size(), n = candidate.size();
  std::vector<double> y(na);
  for (std::size_t k = 0; k < na; ++k) y[k] = channels(af[k])[ch];
  fit.fit(y);
  double rho = 0, lo = std::numeric_limits<double>::infinity(), hi = -lo;
  for (std::size_t k = 0; k < na; ++k) {
    rho = std::max(rho, std::fabs(y[k] - fit.predict(anchors[k])));
    lo = std::min(lo, y[k]);
    hi = std::max(hi, y[k]);
  }
  const double flat = kFlat[ch] * (ch < 4 ? std::max(1.0, std::fabs(hi)) : 1.0);
  if (hi - lo + 4 * rho <= flat) return 0;  // flat to its accuracy: the anchors give its extreme
  double best = kSense[ch] * -std::numeric_limits<double>::infinity();
  for (std::size_t i = 0; i < n; ++i) {
    model[i] = fit.predict(i);
    best = kSense[ch] > 0 ? std::max(best, model[i]) : std::min(best, model[i]);
  }
  const double band = 4 * rho + flat;
  std::size_t marked = 0;
  for (std::size_t i = 0; i < n; ++i) {
    if (!done[i] && !candidate[i] && kSense[ch] * (best - model[i]) <= band) candidate[i] = 1, ++marked;
  }
  return marked;
}

}  // namespace

std::optional<Distortion> Auditor::Impl::distortion_over(const std::vector<Coord>& samples) const {
  // A small feature: every point. Otherwise the points are screened. The factors vary smoothly over a feature, so
  // each statistic is modelled as a quadratic in local east and north (least squares over the anchors: the points
  // extreme in eight directions); ρ is the model's largest residual at the anchors. A point can hold an extreme
  // only if its modelled value is within 4ρ (plus the statistic's accuracy, kFlat) of the modelled extreme; those
  // candidates are evaluated exactly, and the statistics are the extremes over every point evaluated. A statistic
  // whose anchors span less than its accuracy needs no candidates. When anchors and candidates are more than half
  // of the points, every point is evaluated. Large features (more than kMaxSamples points) are first thinned to
  // the points extreme in longitude and latitude plus evenly spaced others.
  const std::vector<Coord> pool = sample_pool(samples);
  ChannelExtremes ext;
  const std::size_t n = pool.size();
  if (n <= kEvery) {
    ext.take(factors_batch(pool));
    return ext.result();
  }
  const LocalPoints local = local_points(pool);
  std::vector<char> done(n, 0);
  const std::vector<std::size_t> anchors = extreme_anchors(local, done);
  std::vector<Coord> at(anchors.size());
  for (std::size_t k = 0; k < anchors.size(); ++k) at[k] = pool[anchors[k]];
  const std::vector<PointFactors> af = factors_batch(at);
  ext.take(af);
  if (!finite_anchors(af)) {
    ext.take(factors_batch(pool));  // too few distinct anchors, or a point that cannot be projected: every point
    return ext.result();
  }
  QuadraticFit fit(local, anchors);
  std::vector<char> candidate(n, 0);
  std::size_t candidate_count = 0;
  std::vector<double> model(n);
  for (int ch = 0; ch < kChannels; ++ch) {
    candidate_count += mark_candidates(ch, af, anchors, fit, done, candidate, model);
  }
  const bool every = 2 * (candidate_count + anchors.size()) > n;  // screening saves too little: every point
  std::vector<Coord> rest;
  for (std::size_t i = 0; i < n; ++i) {
    if (!done[i] && (every || candidate[i])) rest.push_back(pool[i]);
  }
  ext.take(factors_batch(rest));
  return ext.result();
}


bool Auditor::Impl::distortion_stage(Feature& f) const {
  AuditResult& r = f.result;
  if (std::optional<Distortion> d = distortion_over(f.grid.samples)) r.distortion = d;
  if (!r.distortion) {
    return fail(f, "the target projection's scale factors cannot be evaluated at the feature", f.e_p_length,
                f.e_p_area);
  }
  if (std::string why = detail::distortion_problem(*r.distortion); !why.empty()) {
    r.distortion.reset();
    return fail(f, "the target projection is degenerate at the feature: " + why, f.e_p_length, f.e_p_area);
  }
  if (f.has_length) r.bearing_error_max_arcsec = f.grid.bearing.largest_deg() * 3600;
  return true;
}

}  // namespace gridtruth
