// The budget: the parts of G − R (edges, scale, datum, height) and the bound of every measure, the planar
// measures G and D are summed with, and the verdict against the tolerances.
#include <algorithm>
#include <cmath>
#include <string>

#include "auditor_impl.hpp"

namespace gridtruth {

using detail::CompensatedSum;
using detail::cross;
using detail::Feature;
using detail::kNaN;
using detail::kUnitRoundoff;
using detail::MeasureBounds;
using detail::WorkPath;

namespace {

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

}  // namespace

namespace detail {

/// Twice the signed area of a ring in the plane, centred on its first vertex to keep precision. With `bound2`, also
/// a bound on its round-off: each term (a − o) × (b − o) is within 4u·(|a_x b_y| + |a_y b_x|) of exact (two
/// subtractions, two products, one difference; Higham 2002, sect. 3.1), their compensated sum within
/// 2u|S| + 2n u² Σ|terms| (Higham 2002, sect. 4.3).
double planar_area2(const std::vector<Coord>& xy, double* bound2) {
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

/// The projection's own numerical accuracy assumed for a vertex, in the target's unit: 10 nm, or 4 ulp of the
/// largest coordinate of the path (PROJ's transverse Mercator is accurate to a few nm, Karney 2011 J. Geodesy
/// 85:475; PROJ's output jitters from point to point by up to about 5 nm, measured by fourth differences in
/// tests/bounds_test.cpp; the same assumed for every projection).
double projection_accuracy_units(const std::vector<Coord>& xy, double unit_m) {
  double largest = 0;
  for (const Coord& c : xy) largest = std::max({largest, std::fabs(c.x), std::fabs(c.y)});
  return std::max(1e-8 / unit_m, 8 * kUnitRoundoff * largest);
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

}  // namespace detail

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

bool Auditor::Impl::fail(Feature& f, const std::string& why, double e_p_length, double e_p_area) const {
  AuditResult& r = f.result;
  r.status = Status::unmeasurable;
  r.message = f.with_note(why);
  if (f.has_length) r.length = detail::truth_only_budget(f.ref_length, f.e_s_length, e_p_length, f.length_bounds);
  if (f.has_area) r.area = detail::truth_only_budget(f.ref_area, f.e_s_area, e_p_area, f.area_bounds);
  return false;
}

void Auditor::Impl::budget_stage(Feature& f) const {
  AuditResult& r = f.result;
  const detail::GridMeasures& grid = f.grid;
  const double unit2 = unit_m * unit_m;
  if (f.has_length) {
    f.length_bounds.g = (grid.g_length_bound + 2 * kUnitRoundoff * grid.g_length.value()) * unit_m;
    f.length_bounds.d = (grid.d_length_bound + 2 * kUnitRoundoff * grid.d_length.value()) * unit_m;
    r.length = detail::make_budget(f.ref_length, f.e_s_length, f.e_p_length, grid.d_length.value() * unit_m,
                                   grid.g_length.value() * unit_m, f.length_bounds);
  }
  if (f.has_area) {
    std::vector<double> g_area(f.paths.size()), d_area(f.paths.size());
    for (std::size_t i = 0; i < f.paths.size(); ++i) {
      g_area[i] = 0.5 * grid.g_area2[i] * unit2;
      d_area[i] = 0.5 * grid.d_area2[i] * unit2;
    }
    const double g_area_m2 = detail::polygon_area(f.paths, g_area), d_area_m2 = detail::polygon_area(f.paths, d_area);
    f.area_bounds.g = 0.5 * grid.g_area2_bound * unit2 + 2 * kUnitRoundoff * std::fabs(g_area_m2);
    f.area_bounds.d = 0.5 * grid.d_area2_bound * unit2 + 2 * kUnitRoundoff * std::fabs(d_area_m2);
    r.area = detail::make_budget(f.ref_area, f.e_s_area, f.e_p_area, d_area_m2, g_area_m2, f.area_bounds);
  }
  // Combined factor: mean grid scale × elevation factor R_G/(R_G + h).
  const double mean_scale = r.length && r.length->ellipsoid_target > 0
                                ? r.length->grid / r.length->ellipsoid_target
                                : (r.distortion ? std::sqrt(0.5 * (r.distortion->areal_scale_min +
                                                                   r.distortion->areal_scale_max))
                                                : kNaN);
  if (std::isfinite(mean_scale)) r.combined_factor = mean_scale * f.radius_m / (f.radius_m + f.height_m);
}

}  // namespace gridtruth
