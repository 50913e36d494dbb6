// gridtruth — raster cells: true cell areas of geographic and projected grids, and class areas.
#include "core/enum_names.hpp"
#include "gridtruth/cells.hpp"

#include <GeographicLib/Math.hpp>
#include <proj.h>

#include <algorithm>
#include <array>
#include <cerrno>
#include <cmath>
#include <cstdlib>
#include <fstream>
#include <limits>
#include <sstream>
#include <string>
#include <vector>

#include "gridtruth/error.hpp"
#include "core/compensated_sum.hpp"
#include "io/io_detail.hpp"
#include "core/proj_handles.hpp"

namespace gridtruth {

namespace {

using detail::Pj;
constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
constexpr double kDegToRad = M_PI / 180;

using detail::CompensatedSum;

/// The ellipsoid's constants for q.
struct Authalic {
  double a_m = 0, e2 = 0, e = 0;
  explicit Authalic(const Ellipsoid& el) : a_m(el.a_m), e2(el.f * (2 - el.f)), e(std::sqrt(el.f * (2 - el.f))) {}

  /// q(φ2) − q(φ1) from sines and cosines of the half sum and half difference (Snyder 1987 eq. 3-12 differenced):
  ///   with s = sin φ, q/(1 − e²) = s/(1 − e²s²) + atanh(e s)/e, so
  ///   Δ[s/(1 − e²s²)] = Δs (1 + e² s1 s2) / ((1 − e² s1²)(1 − e² s2²)),
  ///   Δ atanh(e s)   = atanh(e Δs / (1 − e² s1 s2)),
  ///   Δs = 2 cos((φ1 + φ2)/2) sin((φ2 − φ1)/2),
  /// none of which cancels when φ2 − φ1 is small.
  double dq(double s1, double s2, double ds) const noexcept {
    const double first = ds * (1 + e2 * s1 * s2) / ((1 - e2 * s1 * s1) * (1 - e2 * s2 * s2));
    const double second = e == 0 ? ds : std::atanh(e * ds / (1 - e2 * s1 * s2)) / e;
    return (1 - e2) * (first + second);
  }
  double dq_deg(double lat1_deg, double lat2_deg) const noexcept {
    using GeographicLib::Math;
    const double s1 = Math::sind(lat1_deg), s2 = Math::sind(lat2_deg);
    const double ds = 2 * Math::cosd((lat1_deg + lat2_deg) / 2) * Math::sind((lat2_deg - lat1_deg) / 2);
    return dq(s1, s2, ds);
  }
  double dq_rad(double lat1_rad, double lat2_rad) const noexcept {
    const double s1 = std::sin(lat1_rad), s2 = std::sin(lat2_rad);
    const double ds = 2 * std::cos((lat1_rad + lat2_rad) / 2) * std::sin((lat2_rad - lat1_rad) / 2);
    return dq(s1, s2, ds);
  }
  double q(double lat_deg) const noexcept {
    const double s = GeographicLib::Math::sind(lat_deg);
    return (1 - e2) * (s / (1 - e2 * s * s) + (e == 0 ? s : std::atanh(e * s) / e));
  }
};

/// ∫ q dλ along the parabola through (λ0, q0), (λm, qm), (λ1, q1) (parameter t = 0, ½, 1): the integrand is a
/// cubic in t, so Simpson's rule is exact.
double edge_integral(double l0, double q0, double lm, double qm, double l1, double q1) noexcept {
  return (q0 * (-3 * l0 + 4 * lm - l1) + 4 * qm * (l1 - l0) + q1 * (l0 - 4 * lm + 3 * l1)) / 6;
}

/// A horizontal line of grid points taken to (λ, φ) in radians.
struct Line {
  std::vector<double> lam_rad, phi_rad;
};

}  // namespace

double authalic_q(const Ellipsoid& ellipsoid, double lat_deg) noexcept { return Authalic(ellipsoid).q(lat_deg); }

double authalic_q_difference(const Ellipsoid& ellipsoid, double lat1_deg, double lat2_deg) noexcept {
  return Authalic(ellipsoid).dq_deg(lat1_deg, lat2_deg);
}

double quadrangle_area_m2(const Ellipsoid& ellipsoid, double lat1_deg, double lat2_deg, double dlon_deg) noexcept {
  const Authalic au(ellipsoid);
  return std::fabs(0.5 * au.a_m * au.a_m * (dlon_deg * kDegToRad) * au.dq_deg(lat1_deg, lat2_deg));
}

struct CellGrid::Impl {
  GridSpec spec;
  CrsInfo info;
  detail::Context ctx;
  Pj inverse;  // grid CRS (easting, northing) → base geographic CRS (longitude, latitude in degrees)
  Authalic au{Ellipsoid{}};
  double nominal_m2 = 0;
  std::size_t sub = 1;  // parts per cell side (projected grids)
  bool polish = true;   // polish the inverse by a Newton step (see project_line)
  mutable std::vector<double> xs, fx, fy, gx, gy, hx, hy;  // scratch for project_line

  explicit Impl(const GridSpec& s) : spec(s) {}

  void check_row(std::size_t row) const {
    if (row >= spec.rows)
      throw Error(ErrorCode::invalid_argument,
                  "row " + std::to_string(row) + " is outside the grid (" + std::to_string(spec.rows) + " rows)");
  }
  void check_cols(std::size_t b, std::size_t e) const {
    if (b > e || e > spec.cols)
      throw Error(ErrorCode::invalid_argument, "columns [" + std::to_string(b) + ", " + std::to_string(e) +
                                                   ") are outside the grid (" + std::to_string(spec.cols) +
                                                   " columns)");
  }

  double row_lat_deg(std::size_t row_edge) const {
    return std::clamp(spec.origin_y + static_cast<double>(row_edge) * spec.pixel_y, -90.0, 90.0);
  }
  double geographic_cell_m2(std::size_t row) const {
    return std::fabs(0.5 * au.a_m * au.a_m * (spec.pixel_x * kDegToRad) *
                     au.dq_deg(row_lat_deg(row), row_lat_deg(row + 1)));
  }

  /// The grid points at northing y and eastings origin_x + (col_begin + k·step_cols)·pixel_x, k = 0..count−1, taken
  /// to (λ, φ) in radians (NaN where the projection fails).
  ///
  /// The inverse projection is polished by one Newton step on the forward projection: some inverses are series
  /// (PROJ's inverse authalic latitude for the equal-area projections is good to ~1e-8°, which alone would put
  /// ~1e-9 of relative error into the cells' areas), while the forward projections are closed forms. The Jacobian
  /// comes from forward differences 1e-5° wide; the step leaves the point's residual far below 1 nm.
  void project_line(double y, std::size_t col_begin, double step_cols, std::size_t count, Line& line) const {
    line.lam_rad.resize(count);
    line.phi_rad.resize(count);
    std::vector<double>& lam = line.lam_rad;
    std::vector<double>& phi = line.phi_rad;
    xs.resize(count);
    for (std::size_t k = 0; k < count; ++k) {
      xs[k] = spec.origin_x + (static_cast<double>(col_begin) + static_cast<double>(k) * step_cols) * spec.pixel_x;
      lam[k] = xs[k];
      phi[k] = y;
    }
    const auto trans = [&](PJ_DIRECTION dir, std::vector<double>& a, std::vector<double>& b) {
      proj_trans_generic(inverse.get(), dir, a.data(), sizeof(double), count, b.data(), sizeof(double), count,
                         nullptr, 0, 0, nullptr, 0, 0);
    };
    trans(PJ_FWD, lam, phi);
    if (!polish) {
      for (std::size_t k = 0; k < count; ++k) {
        if (!std::isfinite(lam[k]) || !std::isfinite(phi[k]) || std::fabs(phi[k]) > 90) {
          lam[k] = phi[k] = kNaN;
        } else {
          lam[k] *= kDegToRad;
          phi[k] *= kDegToRad;
        }
      }
      return;
    }
    constexpr double d_deg = 1e-5;
    fx.assign(lam.begin(), lam.end());
    fy.assign(phi.begin(), phi.end());
    gx.resize(count);
    gy.resize(count);
    hx.resize(count);
    hy.resize(count);
    for (std::size_t k = 0; k < count; ++k) {
      gx[k] = lam[k] + d_deg;
      gy[k] = phi[k];
      hx[k] = lam[k];
      hy[k] = phi[k] + (phi[k] > 0 ? -d_deg : d_deg);
    }
    trans(PJ_INV, fx, fy);
    trans(PJ_INV, gx, gy);
    trans(PJ_INV, hx, hy);
    for (std::size_t k = 0; k < count; ++k) {
      const double dphi = phi[k] > 0 ? -d_deg : d_deg;
      const double j11 = (gx[k] - fx[k]) / d_deg, j21 = (gy[k] - fy[k]) / d_deg;
      const double j12 = (hx[k] - fx[k]) / dphi, j22 = (hy[k] - fy[k]) / dphi;
      const double rx = xs[k] - fx[k], ry = y - fy[k];
      const double det = j11 * j22 - j12 * j21;
      const double dl = (j22 * rx - j12 * ry) / det, dp = (j11 * ry - j21 * rx) / det;
      if (std::isfinite(dl) && std::isfinite(dp) && std::fabs(dl) < 1e-3 && std::fabs(dp) < 1e-3) {
        lam[k] += dl;
        phi[k] += dp;
      }
      if (!std::isfinite(lam[k]) || !std::isfinite(phi[k]) || std::fabs(phi[k]) > 90) {
        lam[k] = phi[k] = kNaN;
      } else {
        lam[k] *= kDegToRad;
        phi[k] *= kDegToRad;
      }
    }
  }

  /// Cell areas from the top line (corners and midpoints, 2n+1 points), the middle line (corners, n+1) and the
  /// bottom line (2n+1), appended to out.
  void cell_areas(const Line& top, const Line& mid, const Line& bot, std::size_t n, std::vector<double>& out) const {
    const double half_a2 = 0.5 * au.a_m * au.a_m;
    for (std::size_t i = 0; i < n; ++i) {
      // The ring: top edge left → right, right edge top → bottom, bottom edge right → left, left edge upwards.
      const double lam[8] = {top.lam_rad[2 * i], top.lam_rad[2 * i + 1], top.lam_rad[2 * i + 2], mid.lam_rad[i + 1],
                             bot.lam_rad[2 * i + 2], bot.lam_rad[2 * i + 1], bot.lam_rad[2 * i], mid.lam_rad[i]};
      const double phi[8] = {top.phi_rad[2 * i], top.phi_rad[2 * i + 1], top.phi_rad[2 * i + 2], mid.phi_rad[i + 1],
                             bot.phi_rad[2 * i + 2], bot.phi_rad[2 * i + 1], bot.phi_rad[2 * i], mid.phi_rad[i]};
      // Centre on the first corner: λ unwrapped about it, q as a difference from it (no cancellation).
      double l[9], q[9];
      bool ok = true;
      for (int k = 0; k < 8; ++k) {
        l[k] = std::remainder(lam[k] - lam[0], 2 * M_PI);
        q[k] = au.dq_rad(phi[0], phi[k]);
        if (!std::isfinite(l[k]) || !std::isfinite(q[k])) ok = false;
      }
      l[8] = l[0];
      q[8] = q[0];
      // A jump in longitude means the cell holds a pole or straddles an interruption: not supported.
      for (int k = 0; k < 8 && ok; ++k)
        if (std::fabs(l[k + 1] - l[k]) > 1) ok = false;
      if (!ok) {
        out.push_back(kNaN);
        continue;
      }
      double integral = 0;
      for (int k = 0; k < 8; k += 2) integral += edge_integral(l[k], q[k], l[k + 1], q[k + 1], l[k + 2], q[k + 2]);
      out.push_back(std::fabs(half_a2 * integral));
    }
  }

  /// Projected grid: the areas of row `row`, columns [b, e). Each cell is split into sub × sub parts so that no part
  /// is wider than 10 km (the parabolic edges' error falls as the fourth power of the size). `top` is reused when
  /// `top_ready`, and the bottom line is left in `top` for the next row.
  void projected_row(std::size_t row, std::size_t b, std::size_t e, Line& top, bool top_ready, Line& mid, Line& bot,
                     std::vector<double>& out) const {
    const std::size_t n = e - b;
    const std::size_t parts = n * sub;
    const double step = 1.0 / static_cast<double>(sub);
    const auto y_at = [&](std::size_t j) {
      return spec.origin_y + (static_cast<double>(row) + static_cast<double>(j) * step) * spec.pixel_y;
    };
    if (sub == 1) {
      if (!top_ready) project_line(y_at(0), b, 0.5, 2 * n + 1, top);
      project_line(0.5 * (y_at(0) + y_at(1)), b, 1.0, n + 1, mid);
      project_line(y_at(1), b, 0.5, 2 * n + 1, bot);
      cell_areas(top, mid, bot, n, out);
      std::swap(top, bot);
      return;
    }
    if (!top_ready) project_line(y_at(0), b, 0.5 * step, 2 * parts + 1, top);
    const std::size_t first = out.size();
    out.resize(first + n, 0.0);
    std::vector<double> part_areas;
    for (std::size_t j = 0; j < sub; ++j) {
      project_line(0.5 * (y_at(j) + y_at(j + 1)), b, step, parts + 1, mid);
      project_line(y_at(j + 1), b, 0.5 * step, 2 * parts + 1, bot);
      part_areas.clear();
      cell_areas(top, mid, bot, parts, part_areas);
      for (std::size_t p = 0; p < parts; ++p) out[first + p / sub] += part_areas[p];
      std::swap(top, bot);
    }
  }
};

CellGrid::CellGrid(const GridSpec& spec) : impl_(std::make_unique<Impl>(spec)) {
  Impl& m = *impl_;
  const auto bad = [](const std::string& what) { throw Error(ErrorCode::invalid_argument, what); };
  if (spec.cols == 0 || spec.rows == 0) bad("a grid needs at least one column and one row");
  if (!std::isfinite(spec.origin_x) || !std::isfinite(spec.origin_y)) bad("the grid origin must be finite");
  if (!std::isfinite(spec.pixel_x) || !std::isfinite(spec.pixel_y) || spec.pixel_x == 0 || spec.pixel_y == 0)
    bad("the pixel size must be finite and non-zero");

  m.ctx = detail::make_context();
  PJ_CONTEXT* c = m.ctx.get();
  Pj crs = detail::resolve_crs(c, spec.crs);
  Pj horizontal = detail::horizontal_crs(c, crs.get());
  m.info = detail::describe(c, horizontal.get(), spec.crs);
  m.au = Authalic(m.info.ellipsoid);
  if (!(m.info.ellipsoid.a_m > 0)) throw Error(ErrorCode::unsupported_crs, spec.crs + " has no ellipsoid");

  if (m.info.kind == CrsKind::geographic) {
    const double lat_a = spec.origin_y, lat_b = spec.origin_y + static_cast<double>(spec.rows) * spec.pixel_y;
    constexpr double slack_deg = 1e-9;
    if (std::min(lat_a, lat_b) < -90 - slack_deg || std::max(lat_a, lat_b) > 90 + slack_deg)
      bad("the grid's latitudes run from " + std::to_string(lat_a) + " to " + std::to_string(lat_b) +
          ", outside [-90, 90]");
    if (std::fabs(static_cast<double>(spec.cols) * spec.pixel_x) > 360 + slack_deg)
      bad("the grid spans more than 360 degrees of longitude");
    m.nominal_m2 = m.au.a_m * m.au.a_m * std::fabs(spec.pixel_x * kDegToRad * spec.pixel_y * kDegToRad);
    return;
  }
  if (m.info.kind != CrsKind::projected)
    throw Error(ErrorCode::unsupported_crs, spec.crs + " is neither geographic nor projected");
  Pj geodetic(proj_crs_get_geodetic_crs(c, horizontal.get()));
  if (!geodetic) throw Error(ErrorCode::unsupported_crs, spec.crs + " has no base geographic CRS");
  Pj raw(proj_create_crs_to_crs_from_pj(c, horizontal.get(), geodetic.get(), nullptr, nullptr));
  m.inverse = Pj(raw ? proj_normalize_for_visualization(c, raw.get()) : nullptr);
  if (!m.inverse)
    throw Error(ErrorCode::no_transformation, "cannot invert the projection of " + spec.crs + ": " +
                                                  detail::last_error(c));
  const double unit_m = m.info.linear_unit_m;
  m.nominal_m2 = std::fabs(spec.pixel_x * unit_m * spec.pixel_y * unit_m);
  const double side_m = std::max(std::fabs(spec.pixel_x), std::fabs(spec.pixel_y)) * unit_m;
  m.sub = static_cast<std::size_t>(std::min(1000.0, std::max(1.0, std::ceil(side_m / 10000))));
  // The Newton polish costs three forward projections per point; it is left out when the inverse already returns
  // to within 0.1 µm on a 9 × 9 lattice of points spanning the grid (transverse Mercator's inverse does).
  {
    std::vector<double> x(81), y(81), x0(81), y0(81);
    for (int i = 0; i < 9; ++i)
      for (int j = 0; j < 9; ++j) {
        x[9 * i + j] = x0[9 * i + j] = spec.origin_x + static_cast<double>(spec.cols) * spec.pixel_x * j / 8.0;
        y[9 * i + j] = y0[9 * i + j] = spec.origin_y + static_cast<double>(spec.rows) * spec.pixel_y * i / 8.0;
      }
    proj_trans_generic(m.inverse.get(), PJ_FWD, x.data(), sizeof(double), 81, y.data(), sizeof(double), 81, nullptr,
                       0, 0, nullptr, 0, 0);
    proj_trans_generic(m.inverse.get(), PJ_INV, x.data(), sizeof(double), 81, y.data(), sizeof(double), 81, nullptr,
                       0, 0, nullptr, 0, 0);
    double worst_m = 0;
    for (int k = 0; k < 81; ++k)
      if (std::isfinite(x[k]) && std::isfinite(y[k]))
        worst_m = std::max(worst_m, std::hypot(x[k] - x0[k], y[k] - y0[k]) * unit_m);
    m.polish = !(worst_m < 1e-7);
  }
}

CellGrid::~CellGrid() = default;
CellGrid::CellGrid(CellGrid&&) noexcept = default;
CellGrid& CellGrid::operator=(CellGrid&&) noexcept = default;

const GridSpec& CellGrid::spec() const noexcept { return impl_->spec; }
const CrsInfo& CellGrid::crs() const noexcept { return impl_->info; }
bool CellGrid::is_geographic() const noexcept { return impl_->info.kind == CrsKind::geographic; }
double CellGrid::nominal_cell_area_m2() const noexcept { return impl_->nominal_m2; }

double CellGrid::geographic_row_cell_area_m2(std::size_t row) const {
  if (!is_geographic()) throw Error(ErrorCode::unsupported_crs, "the grid is not geographic");
  impl_->check_row(row);
  return impl_->geographic_cell_m2(row);
}

std::vector<double> CellGrid::row_cell_areas_m2(std::size_t row, std::size_t col_begin, std::size_t col_end) const {
  impl_->check_row(row);
  impl_->check_cols(col_begin, col_end);
  std::vector<double> out;
  out.reserve(col_end - col_begin);
  if (is_geographic()) {
    out.assign(col_end - col_begin, impl_->geographic_cell_m2(row));
    return out;
  }
  Line top, mid, bot;
  impl_->projected_row(row, col_begin, col_end, top, false, mid, bot, out);
  return out;
}

void CellGrid::for_each_record(std::size_t block_size, const std::function<void(const CellRecord&)>& sink) const {
  const GridSpec& s = impl_->spec;
  const double nominal = impl_->nominal_m2;
  if (is_geographic()) {
    for (std::size_t r = 0; r < s.rows; ++r) {
      CellRecord rec{r, r + 1, 0, s.cols, s.cols, 0, 0, 0};
      rec.true_area_m2 = impl_->geographic_cell_m2(r) * static_cast<double>(s.cols);
      rec.nominal_area_m2 = nominal * static_cast<double>(s.cols);
      rec.ratio = rec.true_area_m2 / rec.nominal_area_m2;
      sink(rec);
    }
    return;
  }
  if (block_size == 0) throw Error(ErrorCode::invalid_argument, "the block size must be at least 1");
  const std::size_t blocks_across = (s.cols + block_size - 1) / block_size;
  std::vector<CompensatedSum> sums;
  std::vector<double> areas;
  Line top, mid, bot;
  bool top_ready = false;
  for (std::size_t r0 = 0; r0 < s.rows; r0 += block_size) {
    const std::size_t r1 = std::min(s.rows, r0 + block_size);
    sums.assign(blocks_across, CompensatedSum{});
    for (std::size_t r = r0; r < r1; ++r) {
      areas.clear();
      impl_->projected_row(r, 0, s.cols, top, top_ready, mid, bot, areas);
      top_ready = true;
      for (std::size_t c = 0; c < s.cols; ++c) sums[c / block_size].add(areas[c]);
    }
    for (std::size_t b = 0; b < blocks_across; ++b) {
      const std::size_t c0 = b * block_size, c1 = std::min(s.cols, c0 + block_size);
      CellRecord rec{r0, r1, c0, c1, static_cast<std::uint64_t>((r1 - r0) * (c1 - c0)), 0, 0, 0};
      rec.true_area_m2 = sums[b].value();
      rec.nominal_area_m2 = nominal * static_cast<double>(rec.cells);
      rec.ratio = rec.true_area_m2 / rec.nominal_area_m2;
      sink(rec);
    }
  }
}

// ---- class areas ---------------------------------------------------------------------------------------------------

ClassAreaAccumulator::ClassAreaAccumulator(const CellGrid& grid, std::optional<std::uint32_t> nodata)
    : grid_(&grid), nodata_(nodata) {}

void ClassAreaAccumulator::add_area(std::uint32_t code, std::uint64_t cells, double area_m2) {
  if (code >= sums_.size()) {
    if (code > 0xFFFFu) throw Error(ErrorCode::invalid_argument, "class code " + std::to_string(code) + " > 65535");
    sums_.resize(static_cast<std::size_t>(code) + 1);
  }
  Sum& s = sums_[code];
  s.cells += cells;
  s.area_m2.add(area_m2);
}

void ClassAreaAccumulator::add_strip(std::size_t row_start, const std::vector<std::uint16_t>& codes) {
  const GridSpec& g = grid_->spec();
  if (codes.size() % g.cols != 0)
    throw Error(ErrorCode::invalid_argument, "a strip must hold whole rows of " + std::to_string(g.cols) + " cells");
  const std::size_t n_rows = codes.size() / g.cols;
  if (row_start > g.rows || n_rows > g.rows - row_start)
    throw Error(ErrorCode::invalid_argument, "the strip runs past the grid's last row");
  std::vector<std::uint64_t> counts;
  std::vector<std::uint16_t> seen;
  for (std::size_t k = 0; k < n_rows; ++k) {
    const std::size_t row = row_start + k;
    const std::uint16_t* row_codes = codes.data() + k * g.cols;
    if (grid_->is_geographic()) {
      // Every cell of a row has the same area: count, then multiply once per class.
      if (counts.empty()) counts.assign(65536, 0);
      seen.clear();
      for (std::size_t c = 0; c < g.cols; ++c) {
        const std::uint16_t code = row_codes[c];
        if (counts[code]++ == 0) seen.push_back(code);
      }
      const double cell_m2 = grid_->geographic_row_cell_area_m2(row);
      for (const std::uint16_t code : seen) {
        if (!nodata_ || *nodata_ != code)
          add_area(code, counts[code], cell_m2 * static_cast<double>(counts[code]));
        counts[code] = 0;
      }
    } else {
      const std::vector<double> areas = grid_->row_cell_areas_m2(row, 0, g.cols);
      for (std::size_t c = 0; c < g.cols; ++c)
        if (!nodata_ || *nodata_ != row_codes[c]) add_area(row_codes[c], 1, areas[c]);
    }
  }
}

void ClassAreaAccumulator::add_row_count(std::size_t row, std::uint32_t code, std::uint64_t count) {
  if (!grid_->is_geographic())
    throw Error(ErrorCode::unsupported_crs,
                "counts per row give exact areas only on a geographic grid; give the codes of a projected grid");
  if (count > grid_->spec().cols)
    throw Error(ErrorCode::invalid_argument, "row " + std::to_string(row) + " has only " +
                                                 std::to_string(grid_->spec().cols) + " cells");
  const double cell_m2 = grid_->geographic_row_cell_area_m2(row);
  if (nodata_ && *nodata_ == code) return;
  add_area(code, count, cell_m2 * static_cast<double>(count));
}

std::vector<ClassArea> ClassAreaAccumulator::result() const {
  std::vector<ClassArea> out;
  const double nominal = grid_->nominal_cell_area_m2();
  for (std::size_t code = 0; code < sums_.size(); ++code) {
    const Sum& s = sums_[code];
    if (s.cells == 0) continue;
    ClassArea a;
    a.code = static_cast<std::uint32_t>(code);
    a.cells = s.cells;
    a.true_area_m2 = s.area_m2.value();
    a.naive_area_m2 = nominal * static_cast<double>(s.cells);
    a.difference_m2 = a.naive_area_m2 - a.true_area_m2;
    a.difference_pct = a.true_area_m2 > 0 ? 100 * a.difference_m2 / a.true_area_m2 : kNaN;
    out.push_back(a);
  }
  return out;
}

void add_raw_class_raster(const std::string& path, const GridSpec& g, RawCodeType type, ClassAreaAccumulator& acc) {
  std::ifstream in(path, std::ios::binary);
  if (!in) throw Error(ErrorCode::io, "cannot read " + path);
  const bool two_bytes = type == RawCodeType::uint16;
  const std::size_t bytes_per_cell = two_bytes ? 2 : 1;
  in.seekg(0, std::ios::end);
  const auto file_bytes = static_cast<unsigned long long>(in.tellg());
  const unsigned long long expected = static_cast<unsigned long long>(g.cols) * g.rows * bytes_per_cell;
  if (file_bytes != expected)
    throw Error(ErrorCode::parse, path + " holds " + std::to_string(file_bytes) + " bytes; a " +
                                      std::to_string(g.cols) + " x " + std::to_string(g.rows) + " raster of " +
                                      (two_bytes ? "uint16" : "uint8") + " codes needs " + std::to_string(expected));
  in.seekg(0);
  // Strips of about 4 MiB of codes: memory stays bounded whatever the raster's size.
  const std::size_t strip_rows = std::max<std::size_t>(1, (std::size_t{1} << 22) / g.cols);
  std::vector<unsigned char> bytes;
  std::vector<std::uint16_t> codes;
  for (std::size_t r = 0; r < g.rows; r += strip_rows) {
    const std::size_t n = std::min(strip_rows, g.rows - r);
    bytes.resize(n * g.cols * bytes_per_cell);
    if (!in.read(reinterpret_cast<char*>(bytes.data()), static_cast<std::streamsize>(bytes.size())))
      throw Error(ErrorCode::io, "cannot read " + path);
    codes.resize(n * g.cols);
    for (std::size_t k = 0; k < codes.size(); ++k)
      codes[k] = two_bytes ? static_cast<std::uint16_t>(bytes[2 * k] | (bytes[2 * k + 1] << 8)) : bytes[k];
    acc.add_strip(r, codes);
  }
}

namespace {

/// The three fields of a "row,class,count" record as whole numbers; Error(parse) naming `where` otherwise.
std::array<unsigned long long, 3> count_fields(const std::vector<std::string>& f, const std::string& where) {
  if (f.size() != 3) throw Error(ErrorCode::parse, where + ": needs row,class,count");
  std::array<unsigned long long, 3> v{};
  for (int k = 0; k < 3; ++k) {
    char* end = nullptr;
    errno = 0;
    v[k] = std::strtoull(f[k].c_str(), &end, 10);
    if (f[k].empty() || f[k][0] == '-' || end != f[k].c_str() + f[k].size() || errno != 0)
      throw Error(ErrorCode::parse, where + ": '" + f[k] + "' is not a whole number");
  }
  return v;
}

}  // namespace

void add_class_counts_csv(const std::string& path, ClassAreaAccumulator& acc) {
  std::ifstream in(path, std::ios::binary);
  if (!in) throw Error(ErrorCode::io, "cannot read " + path);
  // Read as any CSV (RFC 4180, the library's one reader: CRLF or LF, quoted fields); blank lines are skipped.
  detail::Source source(in);
  detail::CsvRecord r;
  if (!detail::read_csv_record(source, r) || r.fields != std::vector<std::string>{"row", "class", "count"})
    throw Error(ErrorCode::parse, path + ": the first line must be 'row,class,count'");
  while (detail::read_csv_record(source, r)) {
    if (r.fields.size() == 1 && r.fields[0].empty()) continue;
    const std::string where = path + " line " + std::to_string(r.line);
    if (!r.error.empty()) throw Error(ErrorCode::parse, where + ": " + r.error);
    const auto v = count_fields(r.fields, where);
    try {
      // A code beyond 2^20 is held there, so that it cannot wrap into a valid one: add_row_count() refuses it.
      acc.add_row_count(static_cast<std::size_t>(v[0]), static_cast<std::uint32_t>(std::min(v[1], 1ull << 20)),
                        v[2]);
    } catch (const Error& e) {
      throw Error(e.code(), where + ": " + e.what());
    }
  }
}

#ifndef GRIDTRUTH_WITH_GDAL
// Without GDAL (lib/gdal/raster.cpp is not built): say so when a raster is asked for.
bool built_with_gdal() noexcept { return false; }

namespace {
[[noreturn]] void no_gdal(const std::string& path) {
  throw Error(ErrorCode::io, path + ": this build of gridtruth reads rasters only through GDAL: install Debian's "
                                    "libgdal-dev and configure again (GRIDTRUTH_WITH_GDAL)");
}
}  // namespace

ClassRasterHeader read_class_raster_header(const std::string& path) { no_gdal(path); }
void add_class_raster(const std::string& path, const GridSpec&, ClassAreaAccumulator&) { no_gdal(path); }
#endif

namespace {
constexpr std::array<detail::EnumName<RawCodeType>, 2> kRawCodeNames = {
    {{RawCodeType::uint8, "uint8"}, {RawCodeType::uint16, "uint16"}}};
}  // namespace

std::string_view to_string(RawCodeType type) noexcept { return detail::name_of(kRawCodeNames, type); }

RawCodeType parse_raw_code_type(std::string_view name) {
  return detail::value_named(kRawCodeNames, name, "raw code type");
}

}  // namespace gridtruth
