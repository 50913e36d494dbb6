// gridtruth — tolerances and verdicts.
#include "core/enum_names.hpp"
#include "gridtruth/tolerance.hpp"

#include <array>
#include <charconv>
#include <cmath>
#include <limits>
#include <string>
#include <system_error>

#include "gridtruth/error.hpp"

namespace gridtruth {

namespace {

constexpr std::string_view whitespace = " \t\r\n";

std::string_view trim(std::string_view s) {
  const auto first = s.find_first_not_of(whitespace);
  if (first == std::string_view::npos) return {};
  const auto last = s.find_last_not_of(whitespace);
  return s.substr(first, last - first + 1);
}

std::string lower(std::string_view s) {
  std::string out(s);
  for (char& c : out)
    if (c >= 'A' && c <= 'Z') c = static_cast<char>(c - 'A' + 'a');
  return out;
}

[[noreturn]] void fail(std::string_view spec, const std::string& reason) {
  throw Error(ErrorCode::invalid_argument, "invalid tolerance '" + std::string(spec) + "': " + reason +
                                               " (examples: area=0.1%, length=100ppm, length=1:10000, "
                                               "area=50m2, area=2ha, length=0.05m, bearing=20arcsec)");
}

// Parses a leading decimal number (no hex, no inf/nan). Returns the number of characters used, 0 if none.
std::size_t parse_number(std::string_view text, double& value) {
  // from_chars accepts "inf"/"nan"; only digits, a sign, a point and an exponent make a number here.
  if (text.empty()) return 0;
  const char c0 = text.front();
  const bool starts_numeric = (c0 >= '0' && c0 <= '9') || c0 == '.' || c0 == '+' || c0 == '-';
  if (!starts_numeric) return 0;
  std::size_t skip = (c0 == '+') ? 1 : 0;  // from_chars does not take a leading '+'
  if (skip && (text.size() < 2 || text[1] == '-' || text[1] == '+')) return 0;
  const char* first = text.data() + skip;
  const char* last = text.data() + text.size();
  const auto [ptr, ec] = std::from_chars(first, last, value, std::chars_format::general);
  if (ptr == first) return 0;
  if (ec == std::errc::result_out_of_range) value = std::numeric_limits<double>::infinity();  // reported later
  else if (ec != std::errc()) return 0;
  return static_cast<std::size_t>(ptr - text.data());
}

struct Unit {
  std::string_view name;
  Metric metric;        // the metric an absolute unit belongs to
  double factor;        // to m, m² or arcsec
};

constexpr std::array<Unit, 12> absolute_units{{
    {"m", Metric::length, 1.0},
    {"cm", Metric::length, 0.01},
    {"mm", Metric::length, 0.001},
    {"km", Metric::length, 1000.0},
    {"m2", Metric::area, 1.0},
    {"m^2", Metric::area, 1.0},
    {"m\xC2\xB2", Metric::area, 1.0},  // m² in UTF-8
    {"sqm", Metric::area, 1.0},
    {"ha", Metric::area, 1.0e4},
    {"km2", Metric::area, 1.0e6},
    {"arcsec", Metric::bearing, 1.0},
    {"\"", Metric::bearing, 1.0},
}};

std::string_view metric_name(Metric m) {
  switch (m) {
    case Metric::area: return "area";
    case Metric::length: return "length";
    case Metric::bearing: return "bearing";
  }
  return "?";
}

std::string_view metric_units(Metric m) {
  switch (m) {
    case Metric::area: return "%, ppm, 1:N, m2, ha or km2";
    case Metric::length: return "%, ppm, 1:N, m, cm, mm or km";
    case Metric::bearing: return "arcsec";
  }
  return "";
}

// Shortest text that reads back as the same double, in fixed notation for ordinary magnitudes.
std::string format_value(double v) {
  std::array<char, 400> buf{};
  const bool ordinary = std::abs(v) >= 1e-6 && std::abs(v) < 1e21;
  const auto result = ordinary ? std::to_chars(buf.data(), buf.data() + buf.size(), v, std::chars_format::fixed)
                               : std::to_chars(buf.data(), buf.data() + buf.size(), v);
  return std::string(buf.data(), result.ptr);
}

}  // namespace

Tolerance Tolerance::parse(std::string_view spec) {
  const std::string_view text = trim(spec);
  if (text.empty()) fail(spec, "empty specification");

  // metric: "area", "length" or "bearing", then "=" (or "<=", the canonical form of to_string()).
  auto eq = text.find('=');
  if (eq == std::string_view::npos) fail(spec, "expected metric=value, e.g. area=0.1%");
  std::string_view metric_text = text.substr(0, eq);
  if (!metric_text.empty() && metric_text.back() == '<') metric_text.remove_suffix(1);
  const std::string metric_key = lower(trim(metric_text));
  Tolerance t;
  if (metric_key == "area")
    t.metric = Metric::area;
  else if (metric_key == "length")
    t.metric = Metric::length;
  else if (metric_key == "bearing")
    t.metric = Metric::bearing;
  else
    fail(spec, "unknown metric '" + std::string(trim(metric_text)) + "'; expected area, length or bearing");

  const std::string_view value_text = trim(text.substr(eq + 1));
  if (value_text.empty()) fail(spec, "missing value after '='");

  // 1:N — a relative tolerance of one part in N.
  if (const auto colon = value_text.find(':'); colon != std::string_view::npos) {
    if (t.metric == Metric::bearing) fail(spec, "a bearing tolerance is absolute; use arcsec");
    double one = 0;
    const std::string_view lhs = trim(value_text.substr(0, colon));
    const std::string_view rhs = trim(value_text.substr(colon + 1));
    if (parse_number(lhs, one) != lhs.size() || one != 1.0) fail(spec, "a ratio must read 1:N");
    double n = 0;
    if (rhs.empty() || parse_number(rhs, n) != rhs.size()) fail(spec, "a ratio must read 1:N with a number N");
    if (!std::isfinite(n) || !(n > 0)) fail(spec, "N in 1:N must be a positive number");
    t.kind = Kind::relative_ppm;
    t.value = 1e6 / n;
    t.ratio_n = n;
    if (!(t.value > 0) || !std::isfinite(t.value)) fail(spec, "N in 1:N is out of range");
    return t;
  }

  double number = 0;
  const std::size_t used = parse_number(value_text, number);
  if (used == 0) fail(spec, "the value must start with a number");
  if (!std::isfinite(number)) fail(spec, "the value is out of range");
  const std::string unit = lower(trim(value_text.substr(used)));
  if (unit.empty()) fail(spec, "missing unit; use " + std::string(metric_units(t.metric)));

  if (unit == "%" || unit == "ppm") {
    if (t.metric == Metric::bearing) fail(spec, "a bearing tolerance is absolute; use arcsec");
    t.kind = Kind::relative_ppm;
    t.value = unit == "%" ? number * 1e4 : number;
  } else {
    const Unit* found = nullptr;
    for (const Unit& u : absolute_units)
      if (u.name == unit) found = &u;
    if (found == nullptr)
      fail(spec, "unknown unit '" + unit + "'; use " + std::string(metric_units(t.metric)));
    if (found->metric != t.metric)
      fail(spec, "unit '" + unit + "' measures " + std::string(metric_name(found->metric)) + ", not " +
                     std::string(metric_name(t.metric)) + "; use " + std::string(metric_units(t.metric)));
    t.kind = Kind::absolute;
    t.value = number * found->factor;
  }
  if (!(t.value > 0)) fail(spec, "the value must be greater than zero");
  if (!std::isfinite(t.value)) fail(spec, "the value is out of range");
  return t;
}

std::vector<Tolerance> Tolerance::parse_list(std::string_view specs) {
  std::vector<Tolerance> out;
  if (trim(specs).empty()) return out;
  std::size_t start = 0;
  while (true) {
    const std::size_t comma = specs.find(',', start);
    const std::string_view item =
        specs.substr(start, comma == std::string_view::npos ? std::string_view::npos : comma - start);
    if (trim(item).empty())
      throw Error(ErrorCode::invalid_argument,
                  "invalid tolerance list '" + std::string(specs) + "': empty item between commas");
    out.push_back(parse(item));
    if (comma == std::string_view::npos) break;
    start = comma + 1;
  }
  return out;
}

std::string Tolerance::to_string() const {
  std::string text(metric_name(metric));
  text += "<=";
  text += format_value(value);
  if (kind == Kind::relative_ppm) {
    text += "ppm";
  } else {
    switch (metric) {
      case Metric::area: text += "m2"; break;
      case Metric::length: text += "m"; break;
      case Metric::bearing: text += "arcsec"; break;
    }
  }
  return text;
}

std::string Tolerance::as_given() const {
  if (!(ratio_n > 0) || kind != Kind::relative_ppm) return to_string();
  return std::string(metric_name(metric)) + "<=1:" + format_value(ratio_n);
}

namespace {
constexpr std::array<detail::EnumName<Verdict>, 3> kVerdictNames = {
    {{Verdict::none, ""}, {Verdict::pass, "pass"}, {Verdict::fail, "fail"}}};
constexpr std::array<detail::EnumName<Metric>, 3> kMetricNames = {
    {{Metric::area, "area"}, {Metric::length, "length"}, {Metric::bearing, "bearing"}}};
constexpr std::array<detail::EnumName<Tolerance::Kind>, 2> kKindNames = {
    {{Tolerance::Kind::relative_ppm, "relative_ppm"}, {Tolerance::Kind::absolute, "absolute"}}};
}  // namespace

std::string_view to_string(Verdict v) noexcept { return detail::name_of(kVerdictNames, v); }

std::string_view to_string(Metric metric) noexcept { return detail::name_of(kMetricNames, metric); }

Metric parse_metric(std::string_view name) { return detail::value_named(kMetricNames, name, "metric"); }

std::string_view to_string(Tolerance::Kind kind) noexcept { return detail::name_of(kKindNames, kind); }

}  // namespace gridtruth
