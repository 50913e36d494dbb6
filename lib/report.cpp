// gridtruth — pictures for reports (see include/gridtruth/report.hpp).
#include "gridtruth/report.hpp"

#include <algorithm>
#include <array>
#include <cmath>
#include <cstdio>
#include <cstdint>
#include <cstdlib>
#include <ctime>
#include <limits>
#include <map>
#include <nlohmann/json.hpp>
#include <ostream>
#include <random>
#include <sstream>
#include <unordered_map>

#include "gridtruth/crs.hpp"
#include "gridtruth/error.hpp"
#include "gridtruth/io.hpp"
#include "proj_handles.hpp"

namespace gridtruth {

namespace {

constexpr double nan_v = std::numeric_limits<double>::quiet_NaN();

bool is_linear(GeometryType t) { return t == GeometryType::line_string || t == GeometryType::multi_line_string; }
bool is_areal(GeometryType t) { return t == GeometryType::polygon || t == GeometryType::multi_polygon; }

/// The budget a feature is judged by: area for polygons, length for lines (as the run summary ranks them).
const Budget* primary_budget(const AuditResult& r) {
  if (r.status != Status::ok) return nullptr;
  if (is_areal(r.type) && r.area) return &*r.area;
  if (is_linear(r.type) && r.length) return &*r.length;
  return nullptr;
}

std::string xml_escape(std::string_view s) {
  std::string o;
  o.reserve(s.size());
  for (const char c : s) {
    switch (c) {
      case '&': o += "&amp;"; break;
      case '<': o += "&lt;"; break;
      case '>': o += "&gt;"; break;
      case '"': o += "&quot;"; break;
      case '\'': o += "&#39;"; break;
      default:
        // Control characters are not allowed in XML 1.0 text.
        if (static_cast<unsigned char>(c) < 0x20 && c != '\t' && c != '\n') o += ' ';
        else o += c;
    }
  }
  return o;
}

std::string fmt(double v, int decimals) {
  if (!std::isfinite(v)) return "n/a";
  char buf[64];
  std::snprintf(buf, sizeof buf, "%.*f", decimals, v);
  std::string s = buf;
  if (s == "-0" || s == "-0.0" || s == "-0.00") s = s.substr(1);
  return s;
}

/// Pixel coordinates: one decimal is finer than any screen or printer needs.
std::string px(double v) { return fmt(v, 1); }

/// A number with its thousands grouped by thin spaces (ISO 80000-1), the sign as a true minus.
std::string grouped(double v, int decimals) {
  if (!std::isfinite(v)) return "n/a";
  std::string s = fmt(std::fabs(v), decimals);
  const auto dot = s.find('.');
  std::string whole = s.substr(0, dot), rest = dot == std::string::npos ? "" : s.substr(dot);
  std::string out;
  for (std::size_t k = 0; k < whole.size(); ++k) {
    if (k && (whole.size() - k) % 3 == 0) out += "\u2009";
    out += whole[k];
  }
  const bool negative = v < 0 && fmt(std::fabs(v), decimals).find_first_not_of("0.") != std::string::npos;
  return (negative ? "\u2212" : "") + out + rest;
}

std::string signed_ppm(double v) {
  if (v == 0) return "0";
  const int decimals = std::fabs(v) >= 100 ? 0 : std::fabs(v) >= 1 ? 1 : 2;
  return (v > 0 ? "+" : "") + grouped(v, decimals);
}

/// 1, 2, 2.5 or 5 × 10ⁿ, the smallest at least `raw` (common practice for chart ticks).
double nice_step(double raw) {
  if (!(raw > 0) || !std::isfinite(raw)) return 1;
  const double p = std::pow(10.0, std::floor(std::log10(raw)));
  for (const double m : {1.0, 2.0, 2.5, 5.0, 10.0})
    if (m * p >= raw * (1 - 1e-12)) return m * p;
  return 10 * p;
}

int decimals_for(double step) {
  if (step >= 1) return 0;
  return std::min(6, static_cast<int>(std::ceil(-std::log10(step) - 1e-9)) + (std::fmod(step * 1e6, 5e5) != 0 ? 1 : 0));
}

// The diverging scale of the features: nine classes centred on zero, blue for the grid understating, orange to
// brown for it overstating. Lightness falls monotonically away from zero on both sides (and a little faster on the
// blue side), so the classes stay apart in greyscale; blue against orange stays apart for the common colour
// vision deficiencies (protan, deutan, tritan), which confuse red with green, not blue with orange.
constexpr std::array<const char*, 9> class_colours = {"#1c3f7a", "#3a6bb0", "#7aa4d4", "#bfd3ea", "#f4f4f0",
                                                      "#f6d2a4", "#e9a053", "#bd6518", "#7a3a09"};

/// Class index 0..8 of a ppm value for class step s: the classes are centred on −4s … +4s.
int class_of(double ppm, double step) {
  if (!std::isfinite(ppm)) return 4;
  const double k = std::round(ppm / step);
  return static_cast<int>(std::clamp(k, -4.0, 4.0)) + 4;
}

// The parts of the budget in the stacked bars: distinct in lightness and, for greyscale, in pattern too.
struct PartStyle {
  const char* name;
  const char* colour;
  const char* pattern;  // id of a <pattern> overlay, or "" for a plain fill
};
constexpr std::array<PartStyle, 4> part_styles = {{{"edges", "#2b2d42", ""},
                                                   {"scale", "#5a8fc2", "pat-diag"},
                                                   {"datum", "#e0a040", "pat-dots"},
                                                   {"height", "#d8d2c4", "pat-cross"}}};

/// Douglas–Peucker simplification of a path in the plane (Douglas & Peucker 1973), tolerance in plane units.
void simplify(const Path& in, double tolerance, bool ring, Path& out) {
  out.clear();
  const std::size_t n = in.size();
  if (n <= 2 || !(tolerance > 0)) {
    out = in;
    return;
  }
  std::vector<char> keep(n, 0);
  keep[0] = keep[n - 1] = 1;
  // A ring keeps its farthest vertex from the first too, so it never collapses to a segment.
  std::vector<std::pair<std::size_t, std::size_t>> stack;
  if (ring) {
    std::size_t far = 0;
    double best = -1;
    for (std::size_t k = 1; k < n; ++k) {
      const double d = std::hypot(in[k].x - in[0].x, in[k].y - in[0].y);
      if (d > best) best = d, far = k;
    }
    keep[far] = 1;
    stack.push_back({0, far});
    stack.push_back({far, n - 1});
  } else {
    stack.push_back({0, n - 1});
  }
  while (!stack.empty()) {
    const auto [a, b] = stack.back();
    stack.pop_back();
    if (b <= a + 1) continue;
    // Centred coordinates before the cross product (DEVELOPERS.md rule 8).
    const double ax = in[a].x, ay = in[a].y;
    const double dx = in[b].x - ax, dy = in[b].y - ay, len = std::hypot(dx, dy);
    std::size_t far = a;
    double best = -1;
    for (std::size_t k = a + 1; k < b; ++k) {
      const double px_ = in[k].x - ax, py_ = in[k].y - ay;
      const double d = len > 0 ? std::fabs(px_ * dy - py_ * dx) / len : std::hypot(px_, py_);
      if (d > best) best = d, far = k;
    }
    if (best > tolerance) {
      keep[far] = 1;
      stack.push_back({a, far});
      stack.push_back({far, b});
    }
  }
  for (std::size_t k = 0; k < n; ++k)
    if (keep[k]) out.push_back(in[k]);
}

struct Bounds {
  double x0 = std::numeric_limits<double>::infinity(), y0 = x0;
  double x1 = -x0, y1 = -x0;
  bool empty() const { return !(x1 >= x0 && y1 >= y0); }
  void add(double x, double y) {
    if (!std::isfinite(x) || !std::isfinite(y)) return;
    x0 = std::min(x0, x), x1 = std::max(x1, x);
    y0 = std::min(y0, y), y1 = std::max(y1, y);
  }
};

std::string today_utc() {
  const std::time_t now = std::time(nullptr);
  std::tm tm{};
  gmtime_r(&now, &tm);
  char buf[32];
  std::strftime(buf, sizeof buf, "%Y-%m-%d", &tm);
  return buf;
}

}  // namespace

// ---------------------------------------------------------------------------------------------------------------

struct ReportCollector::Impl {
  Auditor auditor;
  ReportOptions options;

  struct Drawn {
    std::string id;
    GeometryType type = GeometryType::point;
    double ppm = nan_v;
    std::vector<Path> parts;  // rings (polygons), lines, or single points, projected and simplified
  };
  std::vector<Drawn> drawn;  // a min-heap on |ppm| once full, so the worst features stay drawn
  std::size_t stored_vertices = 0;
  struct Centroid {
    double x, y, ppm;
  };
  std::vector<Centroid> aggregated_points;
  std::size_t aggregated = 0;
  Bounds plane;   // of every projected vertex collected
  Bounds source;  // of every input vertex, in the source CRS

  struct Worst {
    std::string id;
    std::string measure;
    double ppm = 0;
    std::array<double, 4> parts_ppm{};  // edges, scale, datum, height
  };
  std::vector<Worst> worst;

  std::vector<double> ppm_sample;
  std::size_t ppm_count = 0;
  std::mt19937_64 rng{20250601};  // fixed seed: the same input gives the same picture
  double ppm_min = std::numeric_limits<double>::infinity(), ppm_max = -ppm_min;

  std::size_t read = 0, ok = 0, invalid = 0, unmeasurable = 0, pass = 0, fail = 0;
  std::size_t polygons = 0, line_features = 0, points = 0;
  std::size_t lines_count() const { return line_features; }
  double true_length_m = 0, grid_length_m = 0, true_area_m2 = 0, grid_area_m2 = 0;
  double c_tl = 0, c_gl = 0, c_ta = 0, c_ga = 0;  // Neumaier compensations

  Impl(const Auditor& a, ReportOptions o) : auditor(a.clone()), options(std::move(o)) {}

  static void neumaier(double& sum, double& comp, double v) {
    const double t = sum + v;
    if (std::fabs(sum) >= std::fabs(v)) comp += (sum - t) + v;
    else comp += (v - t) + sum;
    sum = t;
  }

  Metric metric() const {
    if (options.field_metric) return *options.field_metric;
    return polygons > 0 ? Metric::area : Metric::length;
  }

  double field_value(double x, double y) const {
    const PointFactors f = auditor.factors(x, y);
    return metric() == Metric::area ? f.areal_scale : f.parallel_scale;
  }

  struct Grid {
    int n = 0;
    double x0 = 0, y0 = 0, dx = 0, dy = 0;
    std::vector<double> value;  // n × n, row j (y) major
    double at(int i, int j) const { return value[static_cast<std::size_t>(j) * n + i]; }
  };

  /// A field that varies by less than this (0.1 ppm) is flat: an equal-area projection's areal scale, which the
  /// factors reproduce to about 1e-9; contouring it would trace rounding noise.
  static constexpr double flat_field = 1e-7;

  static std::pair<double, double> field_range(const Grid& g) {
    double lo = std::numeric_limits<double>::infinity(), hi = -lo;
    for (const double val : g.value)
      if (std::isfinite(val)) lo = std::min(lo, val), hi = std::max(hi, val);
    return {lo, hi};
  }

  Grid field_grid() const {
    Grid g;
    if (source.empty()) return g;
    g.n = std::max(4, options.field_samples);
    const double mx = std::max(0.25 * (source.x1 - source.x0), 0.05);
    const double my = std::max(0.25 * (source.y1 - source.y0), 0.05);
    g.x0 = source.x0 - mx;
    g.y0 = source.y0 - my;
    double y_top = source.y1 + my;
    if (auditor.source().kind == CrsKind::geographic) g.y0 = std::max(g.y0, -89.9), y_top = std::min(y_top, 89.9);
    g.dx = (source.x1 + mx - g.x0) / (g.n - 1);
    g.dy = (y_top - g.y0) / (g.n - 1);
    g.value.resize(static_cast<std::size_t>(g.n) * g.n);
    for (int j = 0; j < g.n; ++j)
      for (int i = 0; i < g.n; ++i) g.value[static_cast<std::size_t>(j) * g.n + i] = field_value(g.x0 + i * g.dx, g.y0 + j * g.dy);
    return g;
  }

  /// Marching squares (Lorensen & Cline 1987, in two dimensions) over the sample grid; saddles are resolved by the
  /// mean of the four corners. Returns polylines in the plane.
  std::vector<Path> trace(const Grid& g, double level) const {
    std::vector<Path> out;
    if (g.n < 2) return out;
    const int n = g.n;
    // Edge keys: horizontal edge (i,j)-(i+1,j) → 2·(j·n+i); vertical edge (i,j)-(i,j+1) → 2·(j·n+i)+1.
    auto crossing = [&](long key) -> Coord {
      const long cell = key / 2;
      const int i = static_cast<int>(cell % n), j = static_cast<int>(cell / n);
      const bool vertical = key % 2 == 1;
      auto point = [&](double t) {
        return Coord{g.x0 + (i + (vertical ? 0 : t)) * g.dx, g.y0 + (j + (vertical ? t : 0)) * g.dy};
      };
      // The crossing on the edge: linear interpolation between the samples, refined by regula falsi with the
      // Illinois modification (Dowell & Jarratt 1971) on the field itself, so a curved field (a conic's scale near
      // a standard parallel) is contoured where it is, not where a straight line between samples puts it.
      double ta = 0, tb = 1, fa = g.at(i, j) - level, fb = (vertical ? g.at(i, j + 1) : g.at(i + 1, j)) - level;
      double t = std::clamp(fa / (fa - fb), 0.0, 1.0);
      int side = 0;
      for (int iteration = 0; iteration < 8 && fa != fb; ++iteration) {
        const Coord c = point(t);
        const double ft = field_value(c.x, c.y) - level;
        if (!std::isfinite(ft) || ft == 0) break;
        if ((ft < 0) == (fa < 0)) {
          ta = t, fa = ft;
          if (side == -1) fb /= 2;
          side = -1;
        } else {
          tb = t, fb = ft;
          if (side == 1) fa /= 2;
          side = 1;
        }
        t = std::clamp(ta + fa * (tb - ta) / (fa - fb), 0.0, 1.0);
        if (tb - ta < 1e-9) break;
      }
      const Coord c = point(t);
      return auditor.project(c.x, c.y);
    };
    std::vector<std::pair<long, long>> segments;
    for (int j = 0; j + 1 < n; ++j) {
      for (int i = 0; i + 1 < n; ++i) {
        const double v[4] = {g.at(i, j), g.at(i + 1, j), g.at(i + 1, j + 1), g.at(i, j + 1)};
        if (!std::isfinite(v[0]) || !std::isfinite(v[1]) || !std::isfinite(v[2]) || !std::isfinite(v[3])) continue;
        const int c = (v[0] >= level ? 1 : 0) | (v[1] >= level ? 2 : 0) | (v[2] >= level ? 4 : 0) |
                      (v[3] >= level ? 8 : 0);
        if (c == 0 || c == 15) continue;
        const long bottom = 2L * (static_cast<long>(j) * n + i), top = 2L * (static_cast<long>(j + 1) * n + i);
        const long left = 2L * (static_cast<long>(j) * n + i) + 1, right = 2L * (static_cast<long>(j) * n + i + 1) + 1;
        const double centre = 0.25 * (v[0] + v[1] + v[2] + v[3]);
        switch (c) {
          case 1: case 14: segments.push_back({left, bottom}); break;
          case 2: case 13: segments.push_back({bottom, right}); break;
          case 3: case 12: segments.push_back({left, right}); break;
          case 4: case 11: segments.push_back({right, top}); break;
          case 6: case 9: segments.push_back({bottom, top}); break;
          case 7: case 8: segments.push_back({left, top}); break;
          case 5:
            if (centre >= level) segments.push_back({left, top}), segments.push_back({bottom, right});
            else segments.push_back({left, bottom}), segments.push_back({right, top});
            break;
          case 10:
            if (centre >= level) segments.push_back({left, bottom}), segments.push_back({right, top});
            else segments.push_back({left, top}), segments.push_back({bottom, right});
            break;
          default: break;
        }
      }
    }
    // Join segments sharing an edge crossing into polylines.
    std::unordered_multimap<long, std::size_t> at;
    for (std::size_t k = 0; k < segments.size(); ++k) {
      at.emplace(segments[k].first, k);
      at.emplace(segments[k].second, k);
    }
    std::vector<char> used(segments.size(), 0);
    auto take_next = [&](long key) -> long {
      auto range = at.equal_range(key);
      for (auto it = range.first; it != range.second; ++it) {
        if (used[it->second]) continue;
        used[it->second] = 1;
        const auto& s = segments[it->second];
        return s.first == key ? s.second : s.first;
      }
      return -1;
    };
    for (std::size_t k = 0; k < segments.size(); ++k) {
      if (used[k]) continue;
      used[k] = 1;
      std::vector<long> keys = {segments[k].first, segments[k].second};
      for (long next; (next = take_next(keys.back())) >= 0;) keys.push_back(next);
      std::vector<long> head;
      for (long next; (next = take_next(keys.front())) >= 0;) keys.insert(keys.begin(), next);
      Path p;
      for (const long key : keys) {
        const Coord c = crossing(key);
        if (std::isfinite(c.x) && std::isfinite(c.y)) p.push_back(c);
      }
      if (p.size() >= 2) out.push_back(std::move(p));
    }
    return out;
  }

  void add_ppm(double ppm) {
    ++ppm_count;
    ppm_min = std::min(ppm_min, ppm);
    ppm_max = std::max(ppm_max, ppm);
    if (ppm_sample.size() < options.histogram_sample) {
      ppm_sample.push_back(ppm);
    } else {  // reservoir sampling (Vitter 1985, algorithm R)
      std::uniform_int_distribution<std::size_t> pick(0, ppm_count - 1);
      const std::size_t k = pick(rng);
      if (k < ppm_sample.size()) ppm_sample[k] = ppm;
    }
  }

  static bool heap_less(const Drawn& a, const Drawn& b) {  // top of the heap: the smallest |ppm|
    const double fa = std::isfinite(a.ppm) ? std::fabs(a.ppm) : -1, fb = std::isfinite(b.ppm) ? std::fabs(b.ppm) : -1;
    return fa > fb;
  }

  void aggregate(const Drawn& d) {
    ++aggregated;
    double sx = 0, sy = 0;
    std::size_t n = 0;
    for (const auto& p : d.parts)
      for (const auto& c : p) sx += c.x, sy += c.y, ++n;
    if (n == 0 || aggregated_points.size() >= options.max_aggregated_points) return;
    aggregated_points.push_back({sx / n, sy / n, d.ppm});
  }

  void store(Drawn d) {
    std::size_t v = 0;
    for (const auto& p : d.parts) v += p.size();
    auto fits = [&] { return drawn.size() < options.max_drawn_features && stored_vertices + v <= options.max_stored_vertices; };
    while (!fits() && !drawn.empty() && heap_less(d, drawn.front())) {
      // The least bad drawn feature gives way to a worse one.
      std::pop_heap(drawn.begin(), drawn.end(), heap_less);
      for (const auto& p : drawn.back().parts) stored_vertices -= p.size();
      aggregate(drawn.back());
      drawn.pop_back();
    }
    if (!fits()) {
      aggregate(d);
      return;
    }
    stored_vertices += v;
    drawn.push_back(std::move(d));
    std::push_heap(drawn.begin(), drawn.end(), heap_less);
  }

  void add(std::string_view id, const Geometry& g, const AuditResult& r) {
    ++read;
    switch (r.status) {
      case Status::ok: ++ok; break;
      case Status::invalid: ++invalid; break;
      case Status::unmeasurable: ++unmeasurable; break;
    }
    if (r.verdict == Verdict::pass) ++pass;
    if (r.verdict == Verdict::fail) ++fail;
    if (r.status != Status::ok) return;
    if (is_areal(r.type)) ++polygons;
    else if (is_linear(r.type)) ++line_features;
    else ++points;
    if (is_areal(r.type) && r.area) {
      neumaier(true_area_m2, c_ta, r.area->reference);
      neumaier(grid_area_m2, c_ga, r.area->grid);
    } else if (is_linear(r.type) && r.length) {
      neumaier(true_length_m, c_tl, r.length->reference);
      neumaier(grid_length_m, c_gl, r.length->grid);
    }
    const Budget* b = primary_budget(r);
    const double ppm = b ? b->error_ppm : nan_v;
    if (std::isfinite(ppm)) {
      add_ppm(ppm);
      const double ref = b->reference;
      Worst w{std::string(id), is_areal(r.type) ? "area" : "length", ppm,
              {1e6 * b->from_edges / ref, 1e6 * b->from_scale / ref, 1e6 * b->from_datum / ref,
               1e6 * b->from_height / ref}};
      worst.push_back(std::move(w));
      auto worse = [](const Worst& a, const Worst& c) { return std::fabs(a.ppm) > std::fabs(c.ppm); };
      if (worst.size() > 4 * options.worst_count + 4) {
        std::partial_sort(worst.begin(), worst.begin() + options.worst_count, worst.end(), worse);
        worst.resize(options.worst_count);
      }
    }

    // Project and simplify. The tolerance is half a pixel of the extent seen so far (the picture is about 720
    // pixels wide), so early features are kept finer than needed, never coarser.
    Drawn d;
    d.id = std::string(id);
    d.type = r.type;
    d.ppm = ppm;
    std::vector<Path> raw;
    auto project_path = [&](const Path& p) {
      Path q;
      q.reserve(p.size());
      for (const Coord& c : p) {
        source.add(c.x, c.y);
        const Coord pc = auditor.project(c.x, c.y);
        if (!std::isfinite(pc.x) || !std::isfinite(pc.y)) continue;
        plane.add(pc.x, pc.y);
        q.push_back(pc);
      }
      return q;
    };
    for (const Coord& c : g.points) raw.push_back(project_path(Path{c}));
    for (const Path& l : g.lines) raw.push_back(project_path(l));
    for (const Polygon& poly : g.polygons) {
      raw.push_back(project_path(poly.outer));
      for (const Path& h : poly.holes) raw.push_back(project_path(h));
    }
    const double span = plane.empty() ? 0 : std::max(plane.x1 - plane.x0, plane.y1 - plane.y0);
    const double tolerance = span / 1440;
    Path simple;
    for (const Path& p : raw) {
      if (p.empty()) continue;
      simplify(p, tolerance, is_areal(r.type), simple);
      d.parts.push_back(simple);
    }
    if (!d.parts.empty()) store(std::move(d));
  }

  std::vector<Worst> worst_sorted() const {
    std::vector<Worst> w = worst;
    std::sort(w.begin(), w.end(), [](const Worst& a, const Worst& b) { return std::fabs(a.ppm) > std::fabs(b.ppm); });
    if (w.size() > options.worst_count) w.resize(options.worst_count);
    return w;
  }

  /// The class step of the colour scale: four classes either side reach the 98th percentile of |ppm|.
  double class_step() const {
    if (ppm_sample.empty()) return 1;
    std::vector<double> a;
    a.reserve(ppm_sample.size());
    for (const double v : ppm_sample) a.push_back(std::fabs(v));
    const std::size_t k = std::min(a.size() - 1, static_cast<std::size_t>(0.98 * (a.size() - 1) + 0.5));
    std::nth_element(a.begin(), a.begin() + k, a.end());
    return nice_step(std::max(a[k], 1e-3) / 4);
  }

  void write_svg(std::ostream& o, bool standalone) const;
  void write_caption_lines(std::vector<std::string>& lines) const;
};

// ---------------------------------------------------------------------------------------------------------------

void ReportCollector::Impl::write_caption_lines(std::vector<std::string>& lines) const {
  const CrsInfo& s = auditor.source();
  const CrsInfo& t = auditor.target();
  const TransformInfo& tr = auditor.transform();
  auto crs_text = [](const CrsInfo& c) { return c.name + (c.id.empty() ? "" : " [" + c.id + "]"); };
  lines.push_back("Input: " + (options.input_name.empty() ? std::string("(not named)") : options.input_name));
  lines.push_back("Source CRS: " + crs_text(s) + "   Target CRS: " + crs_text(t) + ", unit " +
                  (t.linear_unit_name.empty() ? std::string("metre") : t.linear_unit_name));
  std::string datum = "Datum transformation: " + tr.name;
  if (tr.is_identity) datum += " (same datum: none needed)";
  else if (tr.accuracy_m) datum += ", stated accuracy " + fmt(*tr.accuracy_m, *tr.accuracy_m < 1 ? 2 : 1) + " m";
  else datum += ", accuracy unknown";
  if (tr.is_ballpark) datum += " (ballpark only)";
  lines.push_back(datum);
  std::string tol;
  for (const auto& x : auditor.options().tolerances) tol += (tol.empty() ? "" : ", ") + x.to_string();
  lines.push_back("Edges: " + auditor.edges().to_string() + "   Tolerance: " + (tol.empty() ? "none" : tol) +
                  "   Height: " + fmt(auditor.options().height_m, 1) + " m (unless given per feature)");
  lines.push_back("Features: " + std::to_string(read) + " read, " + std::to_string(ok) + " ok, " +
                  std::to_string(invalid) + " invalid, " + std::to_string(unmeasurable) + " unmeasurable; " +
                  std::to_string(pass) + " pass, " + std::to_string(fail) + " fail; " +
                  std::to_string(drawn.size()) + " drawn one by one" +
                  (aggregated ? ", " + std::to_string(aggregated) + " as cells of mean ppm" : std::string()));
  const double tl = true_length_m + c_tl, gl = grid_length_m + c_gl, ta = true_area_m2 + c_ta, ga = grid_area_m2 + c_ga;
  std::string totals = "Totals:";
  if (lines_count() > 0)
    totals += " true length " + grouped(tl / options.length_unit_m, 3) + " " + options.length_unit + ", grid " +
              grouped(gl / options.length_unit_m, 3) + " " + options.length_unit + " (" +
              signed_ppm(tl != 0 ? 1e6 * (gl - tl) / tl : nan_v) + " ppm);";
  if (polygons > 0)
    totals += " true area " + grouped(ta / options.area_unit_m2, 3) + " " + options.area_unit + ", grid " +
              grouped(ga / options.area_unit_m2, 3) + " " + options.area_unit + " (" +
              signed_ppm(ta != 0 ? 1e6 * (ga - ta) / ta : nan_v) + " ppm)";
  if (lines_count() == 0 && polygons == 0) totals += " nothing measured";
  lines.push_back(totals);
  lines.push_back(std::string("Colours: error in ppm of the area (polygons) or length (lines); + means the grid "
                              "overstates. Isolines: ") +
                  (metric() == Metric::area ? "areal scale a\u00b7b" : "linear scale k along the parallels") +
                  " as (scale \u2212 1) in ppm; heavy dashed line: true scale (scale = 1).");
  lines.push_back("Date: " + (options.date.empty() ? today_utc() : options.date));
  lines.push_back(options.caution);
}

// The picture. Layout (pixels): the map at left (720 × up to 720), the legend, histogram and stacked bars at right,
// the caption under both.
void ReportCollector::Impl::write_svg(std::ostream& o, bool standalone) const {
  const double W = 1240;
  const double map_x = 90, map_y = 60, map_w = 720, map_max_h = 720;
  // View extent: the projected features with a margin of 8 %, at least 1 unit.
  Bounds v = plane;
  if (v.empty()) v.add(0, 0);
  const double mx = std::max(0.08 * (v.x1 - v.x0), 1.0), my = std::max(0.08 * (v.y1 - v.y0), 1.0);
  v.x0 -= mx, v.x1 += mx, v.y0 -= my, v.y1 += my;
  // Aspect kept: metres are metres in both directions.
  double s = std::min(map_w / (v.x1 - v.x0), map_max_h / (v.y1 - v.y0));
  const double map_h = std::max(240.0, (v.y1 - v.y0) * s);
  if ((v.y1 - v.y0) * s < map_h) {  // a wide extent: grow the northing range to fill the minimum height
    const double extra = (map_h / s - (v.y1 - v.y0)) / 2;
    v.y0 -= extra, v.y1 += extra;
  }
  const double used_w = (v.x1 - v.x0) * s;
  const double ox = map_x + (map_w - used_w) / 2;
  auto X = [&](double x) { return ox + (x - v.x0) * s; };
  auto Y = [&](double y) { return map_y + (v.y1 - y) * s; };
  auto path_d = [&](const Path& p, bool close) {
    std::string d;
    double lx = NAN, ly = NAN;
    for (const Coord& c : p) {
      const double x = std::round(X(c.x) * 10) / 10, y = std::round(Y(c.y) * 10) / 10;
      if (std::fabs(x - lx) < 0.5 && std::fabs(y - ly) < 0.5) continue;  // below half a pixel: drop
      d += (d.empty() ? "M" : "L") + px(x) + " " + px(y);
      lx = x, ly = y;
    }
    if (close && !d.empty()) d += "Z";
    return d;
  };

  // The vertex of a line, inside the map and clear of its edges, whose pixel row is nearest `row`; p.size() if none.
  auto label_vertex = [&](const Path& p, double row) {
    std::size_t best = p.size();
    double best_d = std::numeric_limits<double>::infinity();
    for (std::size_t m = 0; m < p.size(); ++m) {
      const double lx = X(p[m].x), ly = Y(p[m].y);
      if (!(lx > ox + 30 && lx < ox + used_w - 90 && ly > map_y + 12 && ly < map_y + map_h - 24)) continue;
      if (std::fabs(ly - row) < best_d) best_d = std::fabs(ly - row), best = m;
    }
    return best;
  };
  const double step = class_step();
  const std::vector<Worst> worst_list = worst_sorted();
  const double right_x = 880, right_w = 330;
  const double legend_y = 60, legend_h = 9 * 20 + 44;
  const double hist_y = legend_y + legend_h + 40, hist_h = 170;
  const double bars_y = hist_y + hist_h + 80;
  const double bar_h = 16;
  const double bars_h = 30 + std::max<std::size_t>(worst_list.size(), 1) * (bar_h + 8) + 50;
  std::vector<std::string> caption;
  write_caption_lines(caption);
  const double caption_y = std::max(map_y + map_h + 70, bars_y + bars_h + 20);
  const double H = caption_y + 24 + 18.0 * caption.size() + 20;

  if (standalone) o << "<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n";
  o << "<svg xmlns=\"http://www.w3.org/2000/svg\" version=\"1.1\" width=\"" << px(W) << "\" height=\"" << px(H)
    << "\" viewBox=\"0 0 " << px(W) << " " << px(H) << "\" font-family=\"sans-serif\" font-size=\"12\">\n";
  const std::string title = "Grid error of the features on " + auditor.target().name;
  o << "<title>" << xml_escape(title) << "</title>\n";
  o << "<defs>\n"
    << "<clipPath id=\"map-clip\"><rect x=\"" << px(ox) << "\" y=\"" << px(map_y) << "\" width=\"" << px(used_w)
    << "\" height=\"" << px(map_h) << "\"/></clipPath>\n"
    << "<pattern id=\"pat-diag\" width=\"6\" height=\"6\" patternUnits=\"userSpaceOnUse\"><path d=\"M0 6L6 0\" "
       "stroke=\"#ffffff\" stroke-width=\"1.2\"/></pattern>\n"
    << "<pattern id=\"pat-dots\" width=\"5\" height=\"5\" patternUnits=\"userSpaceOnUse\"><circle cx=\"2.5\" "
       "cy=\"2.5\" r=\"1\" fill=\"#3a2a10\"/></pattern>\n"
    // Overstating classes carry a sparse hatch as well as their colour, so the sign survives greyscale printing.
    << "<pattern id=\"pat-over\" width=\"5\" height=\"5\" patternUnits=\"userSpaceOnUse\"><path d=\"M0 5L5 0\" "
       "stroke=\"#000000\" stroke-opacity=\"0.45\" stroke-width=\"0.7\"/></pattern>\n"
    << "<pattern id=\"pat-cross\" width=\"6\" height=\"6\" patternUnits=\"userSpaceOnUse\"><path d=\"M0 3H6M3 0V6\" "
       "stroke=\"#6b6457\" stroke-width=\"0.8\"/></pattern>\n"
    << "</defs>\n";
  o << "<rect width=\"100%\" height=\"100%\" fill=\"#ffffff\"/>\n";
  o << "<text id=\"title\" x=\"" << px(map_x) << "\" y=\"32\" font-size=\"18\" font-weight=\"bold\">"
    << xml_escape(title) << "</text>\n";

  // --- map ---
  // The map's transform, for readers of the SVG who want CRS coordinates back: easting = data-easting-origin +
  // (x − data-x-origin) / data-pixels-per-unit, northing = data-northing-origin − (y − data-y-origin) / ... .
  char transform[256];
  std::snprintf(transform, sizeof transform,
                " data-x-origin=\"%.17g\" data-y-origin=\"%.17g\" data-easting-origin=\"%.17g\" "
                "data-northing-origin=\"%.17g\" data-pixels-per-unit=\"%.17g\"",
                ox, map_y, v.x0, v.y1, s);
  o << "<g id=\"map\"" << transform << ">\n<rect x=\"" << px(ox) << "\" y=\"" << px(map_y) << "\" width=\"" << px(used_w)
    << "\" height=\"" << px(map_h) << "\" fill=\"#fbfbf8\" stroke=\"none\"/>\n<g clip-path=\"url(#map-clip)\">\n";
  // Scale field isolines.
  const Grid g = field_grid();
  const auto [fmin, fmax] = field_range(g);
  const bool flat = fmax >= fmin && fmax - fmin < flat_field;
  o << "<g id=\"scale-field\" fill=\"none\">\n";
  if (fmax >= fmin && !flat) {
    const double lo = (fmin - 1) * 1e6, hi = (fmax - 1) * 1e6;
    const double fstep = nice_step(std::max((hi - lo) / 8, 1e-3));
    for (double k = std::ceil(lo / fstep); k * fstep <= hi && k - std::ceil(lo / fstep) < 40; k += 1) {
      if (k == 0) continue;
      const double level_ppm = k * fstep;
      const auto iso = trace(g, 1 + level_ppm / 1e6);
      o << "<g class=\"isoline\" data-scale-ppm=\"" << fmt(level_ppm, decimals_for(fstep)) << "\" stroke=\"#8a8a8a\" "
        << "stroke-width=\"0.8\">";
      for (const Path& p : iso) {
        const std::string d = path_d(p, false);
        if (d.empty()) continue;
        o << "<path d=\"" << d << "\"/>";
        // Labelled near the top of the map, where features are least likely to cover the label.
        const std::size_t m = label_vertex(p, map_y + 16);
        if (m < p.size())
          o << "<text x=\"" << px(X(p[m].x) + 3) << "\" y=\"" << px(Y(p[m].y)) << "\" fill=\"#444444\" "
            << "stroke=\"#fbfbf8\" stroke-width=\"2.5\" paint-order=\"stroke\" font-size=\"10\">"
            << signed_ppm(level_ppm) << "</text>";
      }
      o << "</g>\n";
    }
  }
  o << "</g>\n";  // scale-field
  // Area of use of the target CRS, its geographic box densified and projected.
  if (auditor.target().area_of_use) {
    const AreaOfUse& a = *auditor.target().area_of_use;
    // The box is in degrees on the target's base geographic CRS; the auditor projects from the source CRS, which
    // for a geographic source differs from it by at most the datum shift (metres): invisible at this scale.
    if (auditor.source().kind == CrsKind::geographic) {
      double east = a.east_deg;
      if (east < a.west_deg) east += 360;
      Path box;
      const int n = 96;
      for (int k = 0; k <= n; ++k) box.push_back({a.west_deg + (east - a.west_deg) * k / n, a.south_deg});
      for (int k = 0; k <= n; ++k) box.push_back({east, a.south_deg + (a.north_deg - a.south_deg) * k / n});
      for (int k = 0; k <= n; ++k) box.push_back({east - (east - a.west_deg) * k / n, a.north_deg});
      for (int k = 0; k <= n; ++k) box.push_back({a.west_deg, a.north_deg - (a.north_deg - a.south_deg) * k / n});
      Path projected;
      for (const Coord& c : box) {
        const Coord pc = auditor.project(c.x > 180 ? c.x - 360 : c.x, std::clamp(c.y, -89.99, 89.99));
        if (std::isfinite(pc.x) && std::isfinite(pc.y)) projected.push_back(pc);
      }
      o << "<path id=\"area-of-use\" d=\"" << path_d(projected, true) << "\" fill=\"none\" stroke=\"#4d7a3a\" "
        << "stroke-width=\"1.6\" stroke-dasharray=\"2 3\"><title>Area of use: " << xml_escape(a.name)
        << "</title></path>\n";
    }
  }
  // Features: aggregated cells first, then the drawn features, worst on top.
  o << "<g id=\"features\" stroke-linejoin=\"round\">\n";
  if (!aggregated_points.empty()) {
    const double cell_px = 6;
    std::map<std::pair<long, long>, std::pair<double, std::size_t>> cells;
    for (const auto& c : aggregated_points) {
      auto& e = cells[{static_cast<long>(std::floor((X(c.x) - ox) / cell_px)),
                       static_cast<long>(std::floor((Y(c.y) - map_y) / cell_px))}];
      e.first += c.ppm, e.second += 1;
    }
    o << "<g id=\"aggregated\" stroke=\"#333333\" stroke-width=\"0.3\">";
    for (const auto& [key, e] : cells)
      o << "<rect x=\"" << px(ox + key.first * cell_px) << "\" y=\"" << px(map_y + key.second * cell_px)
        << "\" width=\"6\" height=\"6\" fill=\"" << class_colours[class_of(e.first / e.second, step)] << "\"/>";
    o << "</g>\n";
  }
  std::vector<const Drawn*> order;
  for (const Drawn& d : drawn) order.push_back(&d);
  std::sort(order.begin(), order.end(), [](const Drawn* a, const Drawn* b) {
    const double fa = std::isfinite(a->ppm) ? std::fabs(a->ppm) : -1, fb = std::isfinite(b->ppm) ? std::fabs(b->ppm) : -1;
    return fa < fb;
  });
  for (const Drawn* d : order) {
    const char* colour = class_colours[class_of(d->ppm, step)];
    const std::string tip = xml_escape(d->id) + ": " + (std::isfinite(d->ppm) ? signed_ppm(d->ppm) + " ppm" : "no ppm");
    if (is_areal(d->type)) {
      std::string dd;
      for (const Path& p : d->parts) {
        std::string part = path_d(p, true);
        if (part.size() < 3) part = "";  // a ring below a pixel: drawn as a dot below
        dd += part;
      }
      if (dd.empty() && !d->parts.empty() && !d->parts[0].empty())
        o << "<circle cx=\"" << px(X(d->parts[0][0].x)) << "\" cy=\"" << px(Y(d->parts[0][0].y)) << "\" r=\"1.5\" fill=\""
          << colour << "\" stroke=\"#222222\" stroke-width=\"0.5\"><title>" << tip << "</title></circle>\n";
      else
      {
        o << "<path d=\"" << dd << "\" fill=\"" << colour << "\" fill-rule=\"evenodd\" stroke=\"#222222\" "
          << "stroke-width=\"0.7\"><title>" << tip << "</title></path>\n";
        if (class_of(d->ppm, step) > 4)
          o << "<path d=\"" << dd << "\" fill=\"url(#pat-over)\" fill-rule=\"evenodd\" stroke=\"none\"/>\n";
      }
    } else if (is_linear(d->type)) {
      std::string dd;
      for (const Path& p : d->parts) dd += path_d(p, false);
      // A dark casing under the coloured line keeps light classes visible on the light ground.
      o << "<g><title>" << tip << "</title><path d=\"" << dd << "\" fill=\"none\" stroke=\"#222222\" stroke-width=\"5\"/>"
        << "<path d=\"" << dd << "\" fill=\"none\" stroke=\"" << colour << "\" stroke-width=\"3\"/></g>\n";
    } else {
      for (const Path& p : d->parts)
        for (const Coord& c : p)
          o << "<circle cx=\"" << px(X(c.x)) << "\" cy=\"" << px(Y(c.y)) << "\" r=\"3\" fill=\"#ffffff\" "
            << "stroke=\"#222222\" stroke-width=\"1.2\"><title>" << xml_escape(d->id) << "</title></circle>\n";
    }
  }
  o << "</g>\n";  // features
  // The line of true scale over the features, so that no feature hides it.
  o << "<g id=\"true-scale\" fill=\"none\" stroke=\"#000000\" stroke-width=\"2.4\" stroke-dasharray=\"10 4 2 4\">";
  bool true_label = false;
  for (const Path& p : flat ? std::vector<Path>{} : trace(g, 1.0)) {
    const std::string d = path_d(p, false);
    if (d.empty()) continue;
    o << "<path d=\"" << d << "\"/>";
    const std::size_t m = true_label ? p.size() : label_vertex(p, map_y + 34);
    if (m < p.size()) {
      o << "<text x=\"" << px(X(p[m].x) + 5) << "\" y=\"" << px(Y(p[m].y)) << "\" stroke=\"#ffffff\" "
        << "stroke-width=\"3\" paint-order=\"stroke\" stroke-dasharray=\"none\" fill=\"#000000\" "
        << "font-weight=\"bold\">scale = 1</text>";
      true_label = true;
    }
  }
  o << "</g>\n";
  o << "</g>\n</g>\n";  // clip, map
  if (flat)
    o << "<text id=\"flat-field\" x=\"" << px(ox + 8) << "\" y=\"" << px(map_y + 18) << "\" font-size=\"11\" "
      << "stroke=\"#ffffff\" stroke-width=\"3\" paint-order=\"stroke\">"
      << (metric() == Metric::area ? "Areal" : "Linear") << " scale " << fmt(0.5 * (fmin + fmax), 7)
      << " everywhere within 0.1 ppm: no isolines</text>\n";
  o << "<rect x=\"" << px(ox) << "\" y=\"" << px(map_y) << "\" width=\"" << px(used_w) << "\" height=\"" << px(map_h)
    << "\" fill=\"none\" stroke=\"#222222\" stroke-width=\"1\"/>\n";

  // --- axes in the CRS's unit ---
  const std::string unit = auditor.target().linear_unit_name.empty() ? "metre" : auditor.target().linear_unit_name;
  o << "<g id=\"axes\" font-size=\"10\" fill=\"#222222\">\n";
  {
    const double xs = nice_step((v.x1 - v.x0) / 5), ys = nice_step((v.y1 - v.y0) / 6);
    const int xd = decimals_for(xs), yd = decimals_for(ys);
    for (double t = std::ceil(v.x0 / xs) * xs; t <= v.x1; t += xs) {
      const double x = X(t);
      o << "<line x1=\"" << px(x) << "\" y1=\"" << px(map_y + map_h) << "\" x2=\"" << px(x) << "\" y2=\""
        << px(map_y + map_h + 5) << "\" stroke=\"#222222\"/><text x=\"" << px(x) << "\" y=\"" << px(map_y + map_h + 17)
        << "\" text-anchor=\"middle\">" << grouped(t, xd) << "</text>\n";
    }
    for (double t = std::ceil(v.y0 / ys) * ys; t <= v.y1; t += ys) {
      const double y = Y(t);
      o << "<line x1=\"" << px(ox - 5) << "\" y1=\"" << px(y) << "\" x2=\"" << px(ox) << "\" y2=\"" << px(y)
        << "\" stroke=\"#222222\"/><text x=\"" << px(ox - 7) << "\" y=\"" << px(y + 3) << "\" text-anchor=\"end\">"
        << grouped(t, yd) << "</text>\n";
    }
    o << "<text x=\"" << px(ox + used_w / 2) << "\" y=\"" << px(map_y + map_h + 32) << "\" text-anchor=\"middle\" "
      << "font-size=\"11\">Easting (" << xml_escape(unit) << ")</text>\n";
    o << "<text transform=\"translate(" << px(ox - 70) << " " << px(map_y + map_h / 2) << ") rotate(-90)\" "
      << "text-anchor=\"middle\" font-size=\"11\">Northing (" << xml_escape(unit) << ")</text>\n";
  }
  o << "</g>\n";
  // Scale bar: a round length near a fifth of the map's width, in the CRS's unit.
  {
    const double len = nice_step((v.x1 - v.x0) / 6);
    const double bx = ox + 12, by = map_y + map_h - 16, bw = len * s;
    std::string label = grouped(len, decimals_for(len)) + " " + unit;
    if (unit == "metre" && len >= 1000) label = grouped(len / 1000, decimals_for(len / 1000)) + " km";
    o << "<g id=\"scale-bar\"><rect x=\"" << px(bx - 4) << "\" y=\"" << px(by - 16) << "\" width=\"" << px(bw + 8)
      << "\" height=\"26\" fill=\"#ffffff\" fill-opacity=\"0.85\"/><rect x=\"" << px(bx) << "\" y=\"" << px(by)
      << "\" width=\"" << px(bw / 2) << "\" height=\"5\" fill=\"#222222\"/><rect x=\"" << px(bx + bw / 2) << "\" y=\""
      << px(by) << "\" width=\"" << px(bw / 2) << "\" height=\"5\" fill=\"#ffffff\" stroke=\"#222222\"/>"
      << "<text x=\"" << px(bx) << "\" y=\"" << px(by - 4) << "\" font-size=\"10\">0</text><text x=\"" << px(bx + bw)
      << "\" y=\"" << px(by - 4) << "\" font-size=\"10\" text-anchor=\"end\">" << xml_escape(label) << "</text></g>\n";
  }

  // --- legend ---
  o << "<g id=\"legend\">\n<text x=\"" << px(right_x) << "\" y=\"" << px(legend_y) << "\" font-weight=\"bold\">"
    << "Error of each feature (ppm)</text>\n";
  for (int k = 8; k >= 0; --k) {
    const double y = legend_y + 12 + (8 - k) * 20;
    const double c = (k - 4) * step;
    std::string label;
    if (k == 8) label = "\u2265 " + signed_ppm(3.5 * step) + " (grid overstates)";
    else if (k == 0) label = "\u2264 " + signed_ppm(-3.5 * step) + " (grid understates)";
    else label = signed_ppm(c - 0.5 * step) + " to " + signed_ppm(c + 0.5 * step);
    o << "<rect x=\"" << px(right_x) << "\" y=\"" << px(y) << "\" width=\"28\" height=\"16\" fill=\""
      << class_colours[k] << "\" stroke=\"#222222\" stroke-width=\"0.6\"/>";
    if (k > 4)
      o << "<rect x=\"" << px(right_x) << "\" y=\"" << px(y) << "\" width=\"28\" height=\"16\" fill=\"url(#pat-over)\"/>";
    o << "<text x=\"" << px(right_x + 36) << "\" y=\"" << px(y + 12) << "\">" << label << "</text>\n";
  }
  o << "<text x=\"" << px(right_x) << "\" y=\"" << px(legend_y + 12 + 9 * 20 + 10) << "\" font-size=\"10\" "
    << "fill=\"#444444\">area ppm for polygons, length ppm for lines</text>\n<text x=\"" << px(right_x) << "\" y=\""
    << px(legend_y + 12 + 9 * 20 + 23) << "\" font-size=\"10\" fill=\"#444444\">hatched: the grid overstates "
    << "(kept apart from blue in greyscale)</text>\n</g>\n";

  // --- histogram ---
  o << "<g id=\"histogram\">\n<text x=\"" << px(right_x) << "\" y=\"" << px(hist_y) << "\" font-weight=\"bold\">"
    << "Features by error (ppm)" << (ppm_count > ppm_sample.size() ? " \u2014 sample" : "") << "</text>\n";
  {
    const double hx = right_x + 30, hy = hist_y + 15, hw = right_w - 40, hh = hist_h - 45;
    std::vector<std::pair<std::string, double>> marks;
    for (const auto& tol : auditor.options().tolerances)
      if (tol.kind == Tolerance::Kind::relative_ppm && tol.metric != Metric::bearing)
        marks.push_back({tol.metric == Metric::area ? "area" : "length", tol.value});
    double lo = ppm_sample.empty() ? -1 : ppm_min, hi = ppm_sample.empty() ? 1 : ppm_max;
    for (const auto& m : marks) lo = std::min(lo, -m.second * 1.05), hi = std::max(hi, m.second * 1.05);
    lo = std::min(lo, 0.0), hi = std::max(hi, 0.0);
    const double bw = nice_step(std::max((hi - lo) / 30, 1e-3));
    const double b0 = std::floor(lo / bw) * bw;
    const std::size_t nb = std::max<std::size_t>(1, static_cast<std::size_t>(std::ceil((hi - b0) / bw - 1e-9)) + (hi >= b0 + std::ceil((hi - b0) / bw) * bw ? 1 : 0));
    std::vector<std::size_t> counts(nb, 0);
    for (const double p : ppm_sample)
      counts[std::min(nb - 1, static_cast<std::size_t>(std::max(0.0, std::floor((p - b0) / bw))))] += 1;
    const std::size_t cmax = std::max<std::size_t>(1, *std::max_element(counts.begin(), counts.end()));
    const double hb = b0 + nb * bw;
    auto HX = [&](double p) { return hx + (p - b0) / (hb - b0) * hw; };
    for (std::size_t k = 0; k < nb; ++k) {
      if (counts[k] == 0) continue;
      const double h = hh * static_cast<double>(counts[k]) / cmax;
      o << "<rect x=\"" << px(HX(b0 + k * bw)) << "\" y=\"" << px(hy + hh - h) << "\" width=\""
        << px(std::max(1.0, hw / nb)) << "\" height=\"" << px(h) << "\" fill=\""
        << class_colours[class_of(b0 + (k + 0.5) * bw, step)] << "\" stroke=\"#222222\" stroke-width=\"0.5\"/>\n";
    }
    o << "<line x1=\"" << px(hx) << "\" y1=\"" << px(hy + hh) << "\" x2=\"" << px(hx + hw) << "\" y2=\"" << px(hy + hh)
      << "\" stroke=\"#222222\"/><line x1=\"" << px(hx) << "\" y1=\"" << px(hy) << "\" x2=\"" << px(hx) << "\" y2=\""
      << px(hy + hh) << "\" stroke=\"#222222\"/>\n";
    o << "<text x=\"" << px(hx - 4) << "\" y=\"" << px(hy + 8) << "\" text-anchor=\"end\" font-size=\"10\">" << cmax
      << "</text><text x=\"" << px(hx - 4) << "\" y=\"" << px(hy + hh) << "\" text-anchor=\"end\" font-size=\"10\">0"
      << "</text>\n";
    const double ts = nice_step((hb - b0) / 4);
    for (double t = std::ceil(b0 / ts) * ts; t <= hb + 1e-9 * ts; t += ts)
      o << "<line x1=\"" << px(HX(t)) << "\" y1=\"" << px(hy + hh) << "\" x2=\"" << px(HX(t)) << "\" y2=\""
        << px(hy + hh + 4) << "\" stroke=\"#222222\"/><text x=\"" << px(HX(t)) << "\" y=\"" << px(hy + hh + 15)
        << "\" text-anchor=\"middle\" font-size=\"10\">" << signed_ppm(t) << "</text>\n";
    o << "<g id=\"tolerance-marks\">";
    int row = 0;
    for (const auto& m : marks) {
      for (const double sgn : {-1.0, 1.0}) {
        const double x = HX(sgn * m.second);
        o << "<line x1=\"" << px(x) << "\" y1=\"" << px(hy - 2) << "\" x2=\"" << px(x) << "\" y2=\"" << px(hy + hh)
          << "\" stroke=\"#000000\" stroke-width=\"1.5\" stroke-dasharray=\"" << (m.first == "area" ? "6 3" : "2 2")
          << "\"/>";
      }
      const double ly = hy + hh + 44 + 13 * row++;
      o << "<line x1=\"" << px(hx) << "\" y1=\"" << px(ly - 4) << "\" x2=\"" << px(hx + 22) << "\" y2=\"" << px(ly - 4)
        << "\" stroke=\"#000000\" stroke-width=\"1.5\" stroke-dasharray=\"" << (m.first == "area" ? "6 3" : "2 2")
        << "\"/><text x=\"" << px(hx + 28) << "\" y=\"" << px(ly) << "\" font-size=\"10\">" << m.first
        << " tolerance \u00b1" << grouped(m.second, m.second < 10 ? 2 : 0) << " ppm</text>";
    }
    o << "</g>\n";
    o << "<text x=\"" << px(hx) << "\" y=\"" << px(hy + hh + 30) << "\" font-size=\"10\" fill=\"#444444\">"
      << ppm_count << " measured features" << (marks.empty() ? "; no tolerance in ppm" : "") << "</text>\n";
  }
  o << "</g>\n";

  // --- stacked bars of the budget parts of the worst features ---
  o << "<g id=\"budget-bars\">\n<text x=\"" << px(right_x) << "\" y=\"" << px(bars_y) << "\" font-weight=\"bold\">"
    << "Where the error comes from: worst " << worst_list.size() << " (ppm)</text>\n";
  {
    double neg = 0, pos = 0;
    for (const Worst& w : worst_list) {
      double n = 0, p = 0;
      for (const double part : w.parts_ppm) (part < 0 ? n : p) += part;
      neg = std::min(neg, n), pos = std::max(pos, p);
    }
    if (pos - neg <= 0) pos = 1;
    const double label_w = 80, bx = right_x + label_w, bw = right_w - label_w - 10;
    auto BX = [&](double p) { return bx + (p - neg) / (pos - neg) * bw; };
    double y = bars_y + 14;
    for (const Worst& w : worst_list) {
      std::string id = w.id.size() > 12 ? w.id.substr(0, 11) + "\u2026" : w.id;
      o << "<g class=\"bar\"><title>" << xml_escape(w.id) << " (" << w.measure << "): " << signed_ppm(w.ppm)
        << " ppm</title><text x=\"" << px(bx - 4) << "\" y=\"" << px(y + 12) << "\" text-anchor=\"end\" "
        << "font-size=\"10\">" << xml_escape(id) << "</text>";
      double at_neg = 0, at_pos = 0;
      for (std::size_t k = 0; k < 4; ++k) {
        const double part = w.parts_ppm[k];
        if (!std::isfinite(part) || part == 0) continue;
        double a, b;
        if (part < 0) a = at_neg + part, b = at_neg, at_neg += part;
        else a = at_pos, b = at_pos + part, at_pos += part;
        const std::string r = "x=\"" + px(BX(a)) + "\" y=\"" + px(y) + "\" width=\"" + px(BX(b) - BX(a)) +
                              "\" height=\"" + px(bar_h) + "\"";
        o << "<rect " << r << " fill=\"" << part_styles[k].colour << "\"/>";
        if (*part_styles[k].pattern) o << "<rect " << r << " fill=\"url(#" << part_styles[k].pattern << ")\"/>";
      }
      // The total error: a black tick.
      o << "<line x1=\"" << px(BX(w.ppm)) << "\" y1=\"" << px(y - 3) << "\" x2=\"" << px(BX(w.ppm)) << "\" y2=\""
        << px(y + bar_h + 3) << "\" stroke=\"#000000\" stroke-width=\"2\"/></g>\n";
      y += bar_h + 8;
    }
    if (worst_list.empty())
      o << "<text x=\"" << px(right_x) << "\" y=\"" << px(y + 12) << "\" font-size=\"11\">no measured feature</text>\n";
    o << "<line x1=\"" << px(BX(0)) << "\" y1=\"" << px(bars_y + 8) << "\" x2=\"" << px(BX(0)) << "\" y2=\"" << px(y)
      << "\" stroke=\"#222222\" stroke-width=\"0.8\"/>\n";
    o << "<text x=\"" << px(BX(neg)) << "\" y=\"" << px(y + 10) << "\" font-size=\"10\">" << signed_ppm(neg)
      << "</text><text x=\"" << px(BX(pos)) << "\" y=\"" << px(y + 10) << "\" font-size=\"10\" text-anchor=\"end\">"
      << signed_ppm(pos) << "</text>\n";
    double lx = right_x;
    const double ly = y + 22;
    for (const PartStyle& p : part_styles) {
      o << "<rect x=\"" << px(lx) << "\" y=\"" << px(ly) << "\" width=\"14\" height=\"12\" fill=\"" << p.colour
        << "\" stroke=\"#222222\" stroke-width=\"0.5\"/>";
      if (*p.pattern) o << "<rect x=\"" << px(lx) << "\" y=\"" << px(ly) << "\" width=\"14\" height=\"12\" fill=\"url(#"
                        << p.pattern << ")\"/>";
      o << "<text x=\"" << px(lx + 18) << "\" y=\"" << px(ly + 10) << "\" font-size=\"10\">" << p.name << "</text>";
      lx += 72;
    }
    o << "\n<text x=\"" << px(right_x) << "\" y=\"" << px(ly + 28) << "\" font-size=\"10\" fill=\"#444444\">"
      << "black tick: total error (the parts sum to it)</text>\n";
  }
  o << "</g>\n";

  // --- caption ---
  o << "<g id=\"caption\" font-size=\"12\">\n<line x1=\"" << px(map_x) << "\" y1=\"" << px(caption_y - 6) << "\" x2=\""
    << px(W - 30) << "\" y2=\"" << px(caption_y - 6) << "\" stroke=\"#999999\"/>\n";
  for (std::size_t k = 0; k < caption.size(); ++k) {
    const bool caution = k + 1 == caption.size();
    o << "<text x=\"" << px(map_x - 60) << "\" y=\"" << px(caption_y + 14 + 18.0 * k) << "\""
      << (caution ? " id=\"caution\" font-weight=\"bold\"" : "") << ">" << xml_escape(caption[k]) << "</text>\n";
  }
  o << "</g>\n</svg>\n";
}

// ---------------------------------------------------------------------------------------------------------------

ReportCollector::ReportCollector(const Auditor& auditor, ReportOptions options)
    : impl_(std::make_unique<Impl>(auditor, std::move(options))) {}
ReportCollector::~ReportCollector() = default;
ReportCollector::ReportCollector(ReportCollector&&) noexcept = default;
ReportCollector& ReportCollector::operator=(ReportCollector&&) noexcept = default;

void ReportCollector::add(std::string_view id, const Geometry& geometry, const AuditResult& result) {
  impl_->add(id, geometry, result);
}
void ReportCollector::add_unread(std::string_view) {
  ++impl_->read;
  ++impl_->invalid;
}
void ReportCollector::write_svg(std::ostream& out) const { impl_->write_svg(out, true); }
Metric ReportCollector::field_metric() const { return impl_->metric(); }
std::vector<Path> ReportCollector::isolines(double scale) const {
  const Impl::Grid g = impl_->field_grid();
  const auto [lo, hi] = Impl::field_range(g);
  if (!(hi - lo >= Impl::flat_field)) return {};
  return impl_->trace(g, scale);
}
std::size_t ReportCollector::features() const noexcept { return impl_->read; }
std::size_t ReportCollector::drawn() const noexcept { return impl_->drawn.size(); }
std::size_t ReportCollector::aggregated() const noexcept { return impl_->aggregated; }

void ReportCollector::write_html(std::ostream& o) const {
  const Impl& m = *impl_;
  std::vector<std::string> caption;
  m.write_caption_lines(caption);
  o << "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n<title>"
    << xml_escape("gridtruth report: " + m.auditor.target().name) << "</title>\n<style>\n"
    << "body{font-family:sans-serif;margin:16px;color:#111}\ntable{border-collapse:collapse;margin:8px 0 20px}\n"
    << "th,td{border:1px solid #999;padding:3px 8px;text-align:right}\nth{background:#eee}\n"
    << "td.t{text-align:left}\nsvg{max-width:100%;height:auto}\n.caution{font-weight:bold}\n</style>\n</head>\n<body>\n";
  o << "<h1>Grid error audit</h1>\n<figure id=\"figure\">\n";
  m.write_svg(o, false);
  o << "</figure>\n<h2>Counts</h2>\n<table id=\"counts\"><tr><th>read</th><th>ok</th><th>invalid</th>"
    << "<th>unmeasurable</th><th>pass</th><th>fail</th><th>drawn</th><th>aggregated</th></tr><tr><td>" << m.read
    << "</td><td>" << m.ok << "</td><td>" << m.invalid << "</td><td>" << m.unmeasurable << "</td><td>" << m.pass
    << "</td><td>" << m.fail << "</td><td>" << m.drawn.size() << "</td><td>" << m.aggregated << "</td></tr></table>\n";
  const double tl = m.true_length_m + m.c_tl, gl = m.grid_length_m + m.c_gl;
  const double ta = m.true_area_m2 + m.c_ta, ga = m.grid_area_m2 + m.c_ga;
  const ReportOptions& u = m.options;
  o << "<h2>Totals</h2>\n<table id=\"totals\"><tr><th>measure</th><th>features</th><th>true</th><th>grid</th>"
    << "<th>error</th><th>error (ppm)</th></tr>\n";
  o << "<tr><td class=\"t\">length (" << xml_escape(u.length_unit) << ")</td><td>" << m.lines_count() << "</td><td>"
    << grouped(tl / u.length_unit_m, 3) << "</td><td>" << grouped(gl / u.length_unit_m, 3) << "</td><td>"
    << grouped((gl - tl) / u.length_unit_m, 4) << "</td><td>" << (tl != 0 ? signed_ppm(1e6 * (gl - tl) / tl) : "n/a")
    << "</td></tr>\n";
  o << "<tr><td class=\"t\">area (" << xml_escape(u.area_unit) << ")</td><td>" << m.polygons << "</td><td>"
    << grouped(ta / u.area_unit_m2, 3) << "</td><td>" << grouped(ga / u.area_unit_m2, 3) << "</td><td>"
    << grouped((ga - ta) / u.area_unit_m2, 4) << "</td><td>" << (ta != 0 ? signed_ppm(1e6 * (ga - ta) / ta) : "n/a")
    << "</td></tr>\n</table>\n";
  o << "<h2>Worst features</h2>\n<table id=\"worst\"><tr><th>id</th><th>measure</th><th>error (ppm)</th>"
    << "<th>edges</th><th>scale</th><th>datum</th><th>height</th></tr>\n";
  for (const auto& w : m.worst_sorted()) {
    o << "<tr><td class=\"t\">" << xml_escape(w.id) << "</td><td class=\"t\">" << w.measure << "</td><td>"
      << signed_ppm(w.ppm) << "</td>";
    for (const double p : w.parts_ppm) o << "<td>" << signed_ppm(p) << "</td>";
    o << "</tr>\n";
  }
  o << "</table>\n<h2>About these figures</h2>\n<ul id=\"caption-list\">\n";
  for (std::size_t k = 0; k < caption.size(); ++k)
    o << "<li" << (k + 1 == caption.size() ? " class=\"caution\"" : "") << ">" << xml_escape(caption[k]) << "</li>\n";
  o << "</ul>\n</body>\n</html>\n";
}

// ---------------------------------------------------------------------------------------------------------------
// GeoJSON

namespace {

/// Splits one RFC 4180 record (as ResultCsvWriter writes it, without its line ending) into fields.
std::vector<std::string> split_csv_record(const std::string& line) {
  std::vector<std::string> fields;
  std::string field;
  bool quoted = false;
  for (std::size_t k = 0; k < line.size(); ++k) {
    const char c = line[k];
    if (quoted) {
      if (c == '"' && k + 1 < line.size() && line[k + 1] == '"') field += '"', ++k;
      else if (c == '"') quoted = false;
      else field += c;
    } else if (c == '"') {
      quoted = true;
    } else if (c == ',') {
      fields.push_back(std::move(field));
      field.clear();
    } else {
      field += c;
    }
  }
  fields.push_back(std::move(field));
  return fields;
}

void write_position(std::ostream& o, const Coord& c) {
  const std::string x = format_number(c.x), y = format_number(c.y);
  o << '[' << (x.empty() ? "null" : x) << ',' << (y.empty() ? "null" : y) << ']';
}
/// A JSON array of the items, each written by `write`.
template <class T, class Write>
void write_array(std::ostream& o, const std::vector<T>& items, Write write) {
  o << '[';
  for (std::size_t k = 0; k < items.size(); ++k) {
    if (k) o << ',';
    write(o, items[k]);
  }
  o << ']';
}
void write_path(std::ostream& o, const Path& p) { write_array(o, p, write_position); }
void write_polygon(std::ostream& o, const Polygon& p) {
  o << '[';
  write_path(o, p.outer);
  for (const Path& h : p.holes) o << ',', write_path(o, h);
  o << ']';
}

void write_geometry(std::ostream& o, const Geometry& g) {
  o << "{\"type\":\"" << to_string(g.type) << "\",\"coordinates\":";
  switch (g.type) {
    case GeometryType::point:
      if (g.points.empty()) o << "[]";
      else write_position(o, g.points[0]);
      break;
    case GeometryType::multi_point: write_path(o, g.points); break;
    case GeometryType::line_string:
      if (g.lines.empty()) o << "[]";
      else write_path(o, g.lines[0]);
      break;
    case GeometryType::multi_line_string: write_array(o, g.lines, write_path); break;
    case GeometryType::polygon:
      if (g.polygons.empty()) o << "[]";
      else write_polygon(o, g.polygons[0]);
      break;
    case GeometryType::multi_polygon: write_array(o, g.polygons, write_polygon); break;
  }
  o << '}';
}

}  // namespace

struct ResultGeoJsonWriter::Transform {
  detail::Context context = detail::make_context();
  detail::Pj operation;

  /// The geometry with every vertex in WGS 84 longitude/latitude; false when PROJ cannot transform one.
  bool apply(Geometry& g) {
    auto one = [&](Coord& c) {
      PJ_COORD p = proj_coord(c.x, c.y, 0, 0);
      p = proj_trans(operation.get(), PJ_FWD, p);
      if (!std::isfinite(p.xy.x) || !std::isfinite(p.xy.y)) return false;
      c = {p.xy.x, p.xy.y};
      return true;
    };
    auto path = [&](Path& ps) {
      for (Coord& c : ps)
        if (!one(c)) return false;
      return true;
    };
    if (!path(g.points)) return false;
    for (Path& l : g.lines)
      if (!path(l)) return false;
    for (Polygon& p : g.polygons) {
      if (!path(p.outer)) return false;
      for (Path& h : p.holes)
        if (!path(h)) return false;
    }
    return true;
  }
};

ResultGeoJsonWriter::ResultGeoJsonWriter(std::ostream& out) : out_(&out) {
  *out_ << "{\"type\":\"FeatureCollection\",\"features\":[";
}

ResultGeoJsonWriter::ResultGeoJsonWriter(std::ostream& out, const std::string& source_crs,
                                         GeoJsonCoordinates coordinates)
    : out_(&out) {
  // WGS 84 longitude/latitude already (EPSG:4326 and OGC:CRS84 differ only in axis order, which gridtruth's
  // coordinates do not follow: x is always the longitude): nothing to transform, nothing to name.
  const bool wgs84 = same_crs(source_crs, "EPSG:4326");
  std::string crs_member;
  if (!wgs84 && coordinates == GeoJsonCoordinates::source) {
    const CrsInfo info = describe_crs(source_crs);
    std::string name = source_crs;
    if (info.id.rfind("EPSG:", 0) == 0) name = "urn:ogc:def:crs:EPSG::" + info.id.substr(5);
    crs_member = ",\"crs\":{\"type\":\"name\",\"properties\":{\"name\":" + nlohmann::json(name).dump() + "}}";
  } else if (!wgs84) {
    auto t = std::make_unique<Transform>();
    PJ_CONTEXT* c = t->context.get();
    detail::Pj from = detail::resolve_crs(c, source_crs);
    detail::Pj to = detail::resolve_crs(c, "EPSG:4326");
    detail::Pj raw(proj_create_crs_to_crs_from_pj(c, from.get(), to.get(), nullptr, nullptr));
    if (raw) t->operation.reset(proj_normalize_for_visualization(c, raw.get()));
    if (!t->operation)
      throw Error(ErrorCode::no_transformation,
                  "cannot transform " + source_crs + " to WGS 84 for GeoJSON: " + detail::last_error(c));
    transform_ = std::move(t);
  }
  *out_ << "{\"type\":\"FeatureCollection\"" << crs_member << ",\"features\":[";
}

ResultGeoJsonWriter::~ResultGeoJsonWriter() {
  try {
    finish();
  } catch (...) {  // a destructor must not throw; the stream's state tells the caller
  }
}

void ResultGeoJsonWriter::finish() {
  if (finished_) return;
  finished_ = true;
  *out_ << "\n]}\n";
}

void ResultGeoJsonWriter::write_properties(std::string_view id, const std::string& csv_row,
                                           std::string_view input_properties_json, const char* geometry_note) {
  static const std::vector<std::string> text_columns = {"id", "geometry_type", "status", "message", "verdict"};
  std::vector<std::string> names;
  for (const ResultColumn& c : result_columns(combined_factor_, bounds_)) names.emplace_back(c.name);
  const std::vector<std::string> fields = split_csv_record(csv_row);
  nlohmann::ordered_json props = nlohmann::ordered_json::object();
  if (!input_properties_json.empty()) {
    const auto input = nlohmann::ordered_json::parse(input_properties_json, nullptr, false);
    if (input.is_object()) {
      for (const auto& [key, value] : input.items()) {
        const bool clash = std::find(names.begin(), names.end(), key) != names.end();
        props[clash ? "input_" + key : key] = value;
      }
    }
  }
  for (std::size_t k = 0; k < names.size(); ++k) {
    const std::string cell = k < fields.size() ? fields[k] : std::string();
    if (std::find(text_columns.begin(), text_columns.end(), names[k]) != text_columns.end()) {
      props[names[k]] = cell;
    } else if (cell.empty()) {
      props[names[k]] = nullptr;
    } else {
      char* end = nullptr;
      const double v = std::strtod(cell.c_str(), &end);
      if (end && *end == '\0' && std::isfinite(v)) {
        if (names[k] == "vertices") props[names[k]] = static_cast<std::uint64_t>(v);
        else props[names[k]] = v;
      } else {
        props[names[k]] = cell;
      }
    }
  }
  if (geometry_note) props["geometry_note"] = geometry_note;
  *out_ << (first_ ? "\n" : ",\n") << "{\"type\":\"Feature\",\"id\":" << nlohmann::json(std::string(id)).dump()
        << ",\"properties\":" << props.dump() << ",\"geometry\":";
  first_ = false;
}

void ResultGeoJsonWriter::write_feature(std::string_view id, const Geometry& geometry, const AuditResult& result,
                                        std::string_view input_properties_json) {
  std::ostringstream row;
  ResultCsvWriter csv(row, "");
  csv.with_combined_factor(combined_factor_);
  csv.with_bounds(bounds_);
  csv.write_row(id, result);
  if (!transform_) {
    write_properties(id, row.str(), input_properties_json);
    write_geometry(*out_, geometry);
  } else if (Geometry lonlat = geometry; transform_->apply(lonlat)) {
    write_properties(id, row.str(), input_properties_json);
    write_geometry(*out_, lonlat);
  } else {
    write_properties(id, row.str(), input_properties_json,
                     "a vertex could not be transformed to WGS 84 longitude/latitude (RFC 7946)");
    *out_ << "null";
  }
  *out_ << '}';
}

void ResultGeoJsonWriter::write_unread(std::string_view id, std::string_view message,
                                       std::optional<GeometryType> type, std::string_view input_properties_json) {
  std::ostringstream row;
  ResultCsvWriter csv(row, "");
  csv.with_combined_factor(combined_factor_);
  csv.with_bounds(bounds_);
  csv.write_unread_row(id, message, type);
  write_properties(id, row.str(), input_properties_json);
  *out_ << "null}";
}

#ifndef GRIDTRUTH_WITH_GDAL
// Without GDAL (lib/gdal/gpkg_writer.cpp is not built): the writer exists, and says why it cannot work.
struct ResultGeoPackageWriter::Impl {};
ResultGeoPackageWriter::ResultGeoPackageWriter(const std::string& path, const std::string&, const std::string&) {
  throw Error(ErrorCode::io, "cannot write the GeoPackage " + path +
                                 ": this build of gridtruth has no GDAL (install Debian's libgdal-dev and configure "
                                 "again, GRIDTRUTH_WITH_GDAL)");
}
ResultGeoPackageWriter::~ResultGeoPackageWriter() = default;
void ResultGeoPackageWriter::with_combined_factor(bool) noexcept {}
void ResultGeoPackageWriter::write_feature(std::string_view, const Geometry&, const AuditResult&, std::string_view) {}
void ResultGeoPackageWriter::write_unread(std::string_view, std::string_view, std::optional<GeometryType>,
                                          std::string_view) {}
void ResultGeoPackageWriter::finish() {}
#endif

}  // namespace gridtruth
