// gridtruth — the report's picture (ReportCollector::write_svg): the map of the features coloured by their error
// over the scale field's isolines, axes and scale bar, the legend, the histogram of ppm, the budget bars of the
// worst features and the caption. Layout (pixels): the map at left (720 × up to 720), the legend, histogram and
// stacked bars at right, the caption under both.
#include <algorithm>
#include <cmath>
#include <cstdio>
#include <limits>
#include <map>
#include <ostream>
#include <string>
#include <utility>
#include <vector>

#include "collector_impl.hpp"
#include "gridtruth/crs.hpp"
#include "scale_field.hpp"

namespace gridtruth {

using namespace detail;

/// One picture being written: its layout, fixed at construction, and a method per part.
struct ReportCollector::Impl::SvgWriter {
  using Drawn = ReportCollector::Impl::Drawn;
  using Worst = ReportCollector::Impl::Worst;
  const ReportCollector::Impl& impl;
  std::ostream& o;
  static constexpr double W = 1240;
  static constexpr double map_x = 90, map_y = 60, map_w = 720, map_max_h = 720;
  static constexpr double right_x = 880, right_w = 330;
  static constexpr double legend_y = 60, legend_h = 9 * 20 + 44;
  static constexpr double hist_y = legend_y + legend_h + 40, hist_h = 170;
  static constexpr double bars_y = hist_y + hist_h + 80;
  static constexpr double bar_h = 16;
  Bounds v;  // the view in the plane: the projected features with a margin of 8 %, at least 1 unit
  double s = 1;  // pixels per CRS unit (aspect kept: metres are metres in both directions)
  double map_h = 0, used_w = 0, ox = 0;
  double step = 1;  // the colour classes' step (ppm)
  std::vector<Worst> worst_list;
  double bars_h = 0;
  std::vector<std::string> caption;
  double caption_y = 0, H = 0;
  std::string unit;  // the target CRS's linear unit, for the axes and the scale bar
  ScaleField field;
  double fmin = 0, fmax = 0;
  bool flat = false;

  SvgWriter(const ReportCollector::Impl& collected, std::ostream& out);
  void write(bool standalone) const {
    write_header(standalone);
    write_map();
    write_axes();
    write_scale_bar();
    write_legend();
    write_histogram();
    write_budget_bars();
    write_caption();
  }

  double X(double x) const { return ox + (x - v.x0) * s; }
  double Y(double y) const { return map_y + (v.y1 - y) * s; }
  /// An SVG path in pixels with one decimal; vertices within half a pixel of the last are dropped.
  std::string path_d(const Path& p, bool close) const;
  /// The vertex of a line, inside the map and clear of its edges, whose pixel row is nearest `row`; p.size() if
  /// none.
  std::size_t label_vertex(const Path& p, double row) const;

  void write_header(bool standalone) const;
  void write_map() const;
  void write_isolines() const;
  void write_area_of_use() const;
  void write_features() const;
  void write_drawn(const Drawn& feature) const;
  void write_true_scale() const;
  void write_axes() const;
  void write_scale_bar() const;
  void write_legend() const;
  void write_histogram() const;
  void write_budget_bars() const;
  void write_caption() const;
};

ReportCollector::Impl::SvgWriter::SvgWriter(const ReportCollector::Impl& collected, std::ostream& out)
    : impl(collected),
      o(out),
      v(collected.plane),
      step(collected.class_step()),
      worst_list(collected.worst_sorted()),
      unit(collected.auditor.target().linear_unit_name.empty() ? "metre" : collected.auditor.target().linear_unit_name),
      field(collected.auditor, collected.metric(), collected.source, collected.options.field_samples),
      fmin(field.lo()),
      fmax(field.hi()),
      flat(field.flat()) {
  if (v.empty()) v.add(0, 0);
  const double mx = std::max(0.08 * (v.x1 - v.x0), 1.0), my = std::max(0.08 * (v.y1 - v.y0), 1.0);
  v.x0 -= mx, v.x1 += mx, v.y0 -= my, v.y1 += my;
  s = std::min(map_w / (v.x1 - v.x0), map_max_h / (v.y1 - v.y0));
  map_h = std::max(240.0, (v.y1 - v.y0) * s);
  if ((v.y1 - v.y0) * s < map_h) {  // a wide extent: grow the northing range to fill the minimum height
    const double extra = (map_h / s - (v.y1 - v.y0)) / 2;
    v.y0 -= extra, v.y1 += extra;
  }
  used_w = (v.x1 - v.x0) * s;
  ox = map_x + (map_w - used_w) / 2;
  bars_h = 30 + std::max<std::size_t>(worst_list.size(), 1) * (bar_h + 8) + 50;
  collected.write_caption_lines(caption);
  caption_y = std::max(map_y + map_h + 70, bars_y + bars_h + 20);
  H = caption_y + 24 + 18.0 * caption.size() + 20;
}

std::string ReportCollector::Impl::SvgWriter::path_d(const Path& p, bool close) const {
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
}

std::size_t ReportCollector::Impl::SvgWriter::label_vertex(const Path& p, double row) const {
  std::size_t best = p.size();
  double best_d = std::numeric_limits<double>::infinity();
  for (std::size_t m = 0; m < p.size(); ++m) {
    const double lx = X(p[m].x), ly = Y(p[m].y);
    if (!(lx > ox + 30 && lx < ox + used_w - 90 && ly > map_y + 12 && ly < map_y + map_h - 24)) continue;
    if (std::fabs(ly - row) < best_d) best_d = std::fabs(ly - row), best = m;
  }
  return best;
}

void ReportCollector::Impl::SvgWriter::write_header(bool standalone) const {
  if (standalone) o << "<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n";
  o << "<svg xmlns=\"http://www.w3.org/2000/svg\" version=\"1.1\" width=\"" << px(W) << "\" height=\"" << px(H)
    << "\" viewBox=\"0 0 " << px(W) << " " << px(H) << "\" font-family=\"sans-serif\" font-size=\"12\">\n";
  const std::string title = "Grid error of the features on " + impl.auditor.target().name;
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
}

void ReportCollector::Impl::SvgWriter::write_map() const {
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
  write_isolines();
  write_area_of_use();
  write_features();
  write_true_scale();
  if (flat)
    o << "<text id=\"flat-field\" x=\"" << px(ox + 8) << "\" y=\"" << px(map_y + 18) << "\" font-size=\"11\" "
      << "stroke=\"#ffffff\" stroke-width=\"3\" paint-order=\"stroke\">"
      << (impl.metric() == Metric::area ? "Areal" : "Linear") << " scale " << fixed_text(0.5 * (fmin + fmax), 7)
      << " everywhere within 0.1 ppm: no isolines</text>\n";
  o << "<rect x=\"" << px(ox) << "\" y=\"" << px(map_y) << "\" width=\"" << px(used_w) << "\" height=\"" << px(map_h)
    << "\" fill=\"none\" stroke=\"#222222\" stroke-width=\"1\"/>\n";
}

void ReportCollector::Impl::SvgWriter::write_isolines() const {
  // Scale field isolines.
  o << "<g id=\"scale-field\" fill=\"none\">\n";
  if (fmax >= fmin && !flat) {
    const double lo = (fmin - 1) * 1e6, hi = (fmax - 1) * 1e6;
    const double fstep = nice_step(std::max((hi - lo) / 8, 1e-3));
    for (double k = std::ceil(lo / fstep); k * fstep <= hi && k - std::ceil(lo / fstep) < 40; k += 1) {
      if (k == 0) continue;
      const double level_ppm = k * fstep;
      const auto iso = field.trace(1 + level_ppm / 1e6);
      o << "<g class=\"isoline\" data-scale-ppm=\"" << fixed_text(level_ppm, decimals_for(fstep)) << "\" stroke=\"#8a8a8a\" "
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
}

void ReportCollector::Impl::SvgWriter::write_area_of_use() const {
  // Area of use of the target CRS, its geographic box densified and projected.
  if (impl.auditor.target().area_of_use) {
    const AreaOfUse& a = *impl.auditor.target().area_of_use;
    // The box is in degrees on the target's base geographic CRS; the impl.auditor projects from the source CRS, which
    // for a geographic source differs from it by at most the datum shift (metres): invisible at this scale.
    if (impl.auditor.source().kind == CrsKind::geographic) {
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
        const Coord pc = impl.auditor.project(c.x > 180 ? c.x - 360 : c.x, std::clamp(c.y, -89.99, 89.99));
        if (std::isfinite(pc.x) && std::isfinite(pc.y)) projected.push_back(pc);
      }
      o << "<path id=\"area-of-use\" d=\"" << path_d(projected, true) << "\" fill=\"none\" stroke=\"#4d7a3a\" "
        << "stroke-width=\"1.6\" stroke-dasharray=\"2 3\"><title>Area of use: " << xml_escape(a.name)
        << "</title></path>\n";
    }
  }
}

void ReportCollector::Impl::SvgWriter::write_features() const {
  // Features: aggregated cells first, then the impl.drawn features, worst on top.
  o << "<g id=\"features\" stroke-linejoin=\"round\">\n";
  if (!impl.aggregated_points.empty()) {
    const double cell_px = 6;
    std::map<std::pair<long, long>, std::pair<double, std::size_t>> cells;
    for (const auto& c : impl.aggregated_points) {
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
  for (const Drawn& d : impl.drawn) order.push_back(&d);
  std::sort(order.begin(), order.end(), [](const Drawn* a, const Drawn* b) {
    const double fa = std::isfinite(a->ppm) ? std::fabs(a->ppm) : -1, fb = std::isfinite(b->ppm) ? std::fabs(b->ppm) : -1;
    return fa < fb;
  });
  for (const Drawn* d : order) write_drawn(*d);
  o << "</g>\n";  // features
}

void ReportCollector::Impl::SvgWriter::write_drawn(const Drawn& feature) const {
  const Drawn* d = &feature;
  {
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
}

void ReportCollector::Impl::SvgWriter::write_true_scale() const {
  // The line of true scale over the features, so that no feature hides it.
  o << "<g id=\"true-scale\" fill=\"none\" stroke=\"#000000\" stroke-width=\"2.4\" stroke-dasharray=\"10 4 2 4\">";
  bool true_label = false;
  for (const Path& p : flat ? std::vector<Path>{} : field.trace(1.0)) {
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
}

void ReportCollector::Impl::SvgWriter::write_axes() const {
  // --- axes in the CRS's unit ---
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
}

void ReportCollector::Impl::SvgWriter::write_scale_bar() const {
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
}

void ReportCollector::Impl::SvgWriter::write_legend() const {
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
}

void ReportCollector::Impl::SvgWriter::write_histogram() const {
  // --- histogram ---
  o << "<g id=\"histogram\">\n<text x=\"" << px(right_x) << "\" y=\"" << px(hist_y) << "\" font-weight=\"bold\">"
    << "Features by error (ppm)" << (impl.ppm_count > impl.ppm_sample.size() ? " \u2014 sample" : "") << "</text>\n";
  {
    const double hx = right_x + 30, hy = hist_y + 15, hw = right_w - 40, hh = hist_h - 45;
    std::vector<std::pair<std::string, double>> marks;
    for (const auto& tol : impl.auditor.options().tolerances)
      if (tol.kind == Tolerance::Kind::relative_ppm && tol.metric != Metric::bearing)
        marks.push_back({tol.metric == Metric::area ? "area" : "length", tol.value});
    double lo = impl.ppm_sample.empty() ? -1 : impl.ppm_min, hi = impl.ppm_sample.empty() ? 1 : impl.ppm_max;
    for (const auto& m : marks) lo = std::min(lo, -m.second * 1.05), hi = std::max(hi, m.second * 1.05);
    lo = std::min(lo, 0.0), hi = std::max(hi, 0.0);
    const double bw = nice_step(std::max((hi - lo) / 30, 1e-3));
    const double b0 = std::floor(lo / bw) * bw;
    const std::size_t nb = std::max<std::size_t>(1, static_cast<std::size_t>(std::ceil((hi - b0) / bw - 1e-9)) + (hi >= b0 + std::ceil((hi - b0) / bw) * bw ? 1 : 0));
    std::vector<std::size_t> counts(nb, 0);
    for (const double p : impl.ppm_sample)
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
      << impl.ppm_count << " measured features" << (marks.empty() ? "; no tolerance in ppm" : "") << "</text>\n";
  }
  o << "</g>\n";
}

void ReportCollector::Impl::SvgWriter::write_budget_bars() const {
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
}

void ReportCollector::Impl::SvgWriter::write_caption() const {
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

void ReportCollector::Impl::write_svg(std::ostream& o, bool standalone) const { SvgWriter(*this, o).write(standalone); }

}  // namespace gridtruth
