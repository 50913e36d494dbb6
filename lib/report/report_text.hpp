// gridtruth — internal: the text, colours and small helpers shared by the report's picture (svg.cpp), its
// tables (collector.cpp) and its scale field (scale_field.cpp).
#pragma once

#include <algorithm>
#include <array>
#include <cmath>
#include <cstdio>
#include <ctime>
#include <limits>
#include <string>
#include <string_view>

#include "core/geometry_kind.hpp"
#include "gridtruth/audit.hpp"
#include "gridtruth/geometry.hpp"
#include "gridtruth/text.hpp"

namespace gridtruth::detail {

inline constexpr double nan_v = std::numeric_limits<double>::quiet_NaN();


/// The budget a feature is judged by: area for polygons, length for lines (as the run summary ranks them).
inline const Budget* primary_budget(const AuditResult& r) {
  if (r.status != Status::ok) return nullptr;
  if (is_areal(r.type) && r.area) return &*r.area;
  if (is_linear(r.type) && r.length) return &*r.length;
  return nullptr;
}

inline std::string xml_escape(std::string_view s) {
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

/// Pixel coordinates: one decimal is finer than any screen or printer needs.
inline std::string px(double v) { return fixed_text(v, 1); }

/// A number with its thousands grouped by thin spaces (ISO 80000-1), the sign as a true minus.
inline std::string grouped(double v, int decimals) {
  if (!std::isfinite(v)) return "n/a";
  std::string s = fixed_text(std::fabs(v), decimals);
  const auto dot = s.find('.');
  std::string whole = s.substr(0, dot), rest = dot == std::string::npos ? "" : s.substr(dot);
  std::string out;
  for (std::size_t k = 0; k < whole.size(); ++k) {
    if (k && (whole.size() - k) % 3 == 0) out += "\u2009";
    out += whole[k];
  }
  const bool negative = v < 0 && fixed_text(std::fabs(v), decimals).find_first_not_of("0.") != std::string::npos;
  return (negative ? "\u2212" : "") + out + rest;
}

inline std::string signed_ppm(double v) {
  if (v == 0) return "0";
  const int decimals = std::fabs(v) >= 100 ? 0 : std::fabs(v) >= 1 ? 1 : 2;
  return (v > 0 ? "+" : "") + grouped(v, decimals);
}

/// 1, 2, 2.5 or 5 × 10ⁿ, the smallest at least `raw` (common practice for chart ticks).
inline double nice_step(double raw) {
  if (!(raw > 0) || !std::isfinite(raw)) return 1;
  const double p = std::pow(10.0, std::floor(std::log10(raw)));
  for (const double m : {1.0, 2.0, 2.5, 5.0, 10.0})
    if (m * p >= raw * (1 - 1e-12)) return m * p;
  return 10 * p;
}

inline int decimals_for(double step) {
  if (step >= 1) return 0;
  return std::min(6, static_cast<int>(std::ceil(-std::log10(step) - 1e-9)) + (std::fmod(step * 1e6, 5e5) != 0 ? 1 : 0));
}

// The diverging scale of the features: nine classes centred on zero, blue for the grid understating, orange to
// brown for it overstating. Lightness falls monotonically away from zero on both sides (and a little faster on the
// blue side), so the classes stay apart in greyscale; blue against orange stays apart for the common colour
// vision deficiencies (protan, deutan, tritan), which confuse red with green, not blue with orange.
inline constexpr std::array<const char*, 9> class_colours = {"#1c3f7a", "#3a6bb0", "#7aa4d4", "#bfd3ea", "#f4f4f0",
                                                      "#f6d2a4", "#e9a053", "#bd6518", "#7a3a09"};

/// Class index 0..8 of a ppm value for class step s: the classes are centred on −4s … +4s.
inline int class_of(double ppm, double step) {
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
inline constexpr std::array<PartStyle, 4> part_styles = {{{"edges", "#2b2d42", ""},
                                                   {"scale", "#5a8fc2", "pat-diag"},
                                                   {"datum", "#e0a040", "pat-dots"},
                                                   {"height", "#d8d2c4", "pat-cross"}}};


/// The bounding box of the points added (non-finite ones are skipped).
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

/// Today's date (UTC) as YYYY-MM-DD, for the caption.
inline std::string today_utc() {
  const std::time_t now = std::time(nullptr);
  std::tm tm{};
  gmtime_r(&now, &tm);
  char buf[32];
  std::strftime(buf, sizeof buf, "%Y-%m-%d", &tm);
  return buf;
}

}  // namespace gridtruth::detail
