// gridtruth — the report's collector: counts, totals, the worst features and the features to draw, gathered as
// a run streams by (include/gridtruth/report.hpp); its HTML page. The picture itself is lib/report/svg.cpp.
#include <algorithm>
#include <cmath>
#include <ostream>
#include <string>
#include <vector>

#include "collector_impl.hpp"
#include "gridtruth/crs.hpp"
#include "scale_field.hpp"
#include "simplify.hpp"

namespace gridtruth {

using namespace detail;

void ReportCollector::Impl::add_ppm(double ppm) {
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

bool ReportCollector::Impl::heap_less(const Drawn& a, const Drawn& b) {  // top of the heap: the smallest |ppm|
  const double fa = std::isfinite(a.ppm) ? std::fabs(a.ppm) : -1, fb = std::isfinite(b.ppm) ? std::fabs(b.ppm) : -1;
  return fa > fb;
}

void ReportCollector::Impl::aggregate(const Drawn& d) {
  ++aggregated;
  double sx = 0, sy = 0;
  std::size_t n = 0;
  for (const auto& p : d.parts)
    for (const auto& c : p) sx += c.x, sy += c.y, ++n;
  if (n == 0 || aggregated_points.size() >= options.max_aggregated_points) return;
  aggregated_points.push_back({sx / n, sy / n, d.ppm});
}

void ReportCollector::Impl::store(Drawn d) {
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

void ReportCollector::Impl::add(std::string_view id, const Geometry& g, const AuditResult& r) {
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
    true_area_m2.add(r.area->reference);
    grid_area_m2.add(r.area->grid);
  } else if (is_linear(r.type) && r.length) {
    true_length_m.add(r.length->reference);
    grid_length_m.add(r.length->grid);
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

  Drawn drawn_feature = project_and_simplify(id, g, r.type, ppm);
  if (!drawn_feature.parts.empty()) store(std::move(drawn_feature));
}

ReportCollector::Impl::Drawn ReportCollector::Impl::project_and_simplify(std::string_view id, const Geometry& g,
                                                                          GeometryType type, double ppm) {
  // The tolerance is half a pixel of the extent seen so far (the picture is about 720 pixels wide), so early
  // features are kept finer than needed, never coarser.
  Drawn d;
  d.id = std::string(id);
  d.type = type;
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
    simplify(p, tolerance, is_areal(type), simple);
    d.parts.push_back(simple);
  }
  return d;
}

std::vector<ReportCollector::Impl::Worst> ReportCollector::Impl::worst_sorted() const {
  std::vector<Worst> w = worst;
  std::sort(w.begin(), w.end(), [](const Worst& a, const Worst& b) { return std::fabs(a.ppm) > std::fabs(b.ppm); });
  if (w.size() > options.worst_count) w.resize(options.worst_count);
  return w;
}

/// The class step of the colour scale: four classes either side reach the 98th percentile of |ppm|.
double ReportCollector::Impl::class_step() const {
  if (ppm_sample.empty()) return 1;
  std::vector<double> a;
  a.reserve(ppm_sample.size());
  for (const double v : ppm_sample) a.push_back(std::fabs(v));
  const std::size_t k = std::min(a.size() - 1, static_cast<std::size_t>(0.98 * (a.size() - 1) + 0.5));
  std::nth_element(a.begin(), a.begin() + k, a.end());
  return nice_step(std::max(a[k], 1e-3) / 4);
}

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
  else if (tr.accuracy_m) datum += ", stated accuracy " + fixed_text(*tr.accuracy_m, *tr.accuracy_m < 1 ? 2 : 1) + " m";
  else datum += ", accuracy unknown";
  if (tr.is_ballpark) datum += " (ballpark only)";
  lines.push_back(datum);
  std::string tol;
  for (const auto& x : auditor.options().tolerances) tol += (tol.empty() ? "" : ", ") + x.to_string();
  lines.push_back("Edges: " + auditor.edges().to_string() + "   Tolerance: " + (tol.empty() ? "none" : tol) +
                  "   Height: " + fixed_text(auditor.options().height_m, 1) + " m (unless given per feature)");
  lines.push_back("Features: " + std::to_string(read) + " read, " + std::to_string(ok) + " ok, " +
                  std::to_string(invalid) + " invalid, " + std::to_string(unmeasurable) + " unmeasurable; " +
                  std::to_string(pass) + " pass, " + std::to_string(fail) + " fail; " +
                  std::to_string(drawn.size()) + " drawn one by one" +
                  (aggregated ? ", " + std::to_string(aggregated) + " as cells of mean ppm" : std::string()));
  const double tl = true_length_m.value(), gl = grid_length_m.value(), ta = true_area_m2.value(),
               ga = grid_area_m2.value();
  std::string totals = "Totals:";
  if (line_features > 0)
    totals += " true length " + grouped(tl / options.length_unit_m, 3) + " " + options.length_unit + ", grid " +
              grouped(gl / options.length_unit_m, 3) + " " + options.length_unit + " (" +
              signed_ppm(tl != 0 ? 1e6 * (gl - tl) / tl : nan_v) + " ppm);";
  if (polygons > 0)
    totals += " true area " + grouped(ta / options.area_unit_m2, 3) + " " + options.area_unit + ", grid " +
              grouped(ga / options.area_unit_m2, 3) + " " + options.area_unit + " (" +
              signed_ppm(ta != 0 ? 1e6 * (ga - ta) / ta : nan_v) + " ppm)";
  if (line_features == 0 && polygons == 0) totals += " nothing measured";
  lines.push_back(totals);
  lines.push_back(std::string("Colours: error in ppm of the area (polygons) or length (lines); + means the grid "
                              "overstates. Isolines: ") +
                  (metric() == Metric::area ? "areal scale a\u00b7b" : "linear scale k along the parallels") +
                  " as (scale \u2212 1) in ppm; heavy dashed line: true scale (scale = 1).");
  lines.push_back("Date: " + (options.date.empty() ? today_utc() : options.date));
  lines.push_back(options.caution);
}

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
  const detail::ScaleField field(impl_->auditor, impl_->metric(), impl_->source, impl_->options.field_samples);
  if (!(field.hi() - field.lo() >= detail::ScaleField::flat_field)) return {};
  return field.trace(scale);
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
  const double tl = m.true_length_m.value(), gl = m.grid_length_m.value();
  const double ta = m.true_area_m2.value(), ga = m.grid_area_m2.value();
  const ReportOptions& u = m.options;
  o << "<h2>Totals</h2>\n<table id=\"totals\"><tr><th>measure</th><th>features</th><th>true</th><th>grid</th>"
    << "<th>error</th><th>error (ppm)</th></tr>\n";
  o << "<tr><td class=\"t\">length (" << xml_escape(u.length_unit) << ")</td><td>" << m.line_features << "</td><td>"
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

}  // namespace gridtruth
