// gridtruth — numbers as text for people (include/gridtruth/text.hpp), formatted with fmt.
#include "gridtruth/text.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>

namespace gridtruth {

namespace {

/// True when the text of a number holds no non-zero digit ("-0.000").
bool all_zero(std::string_view text) { return text.find_first_of("123456789") == std::string_view::npos; }

}  // namespace

std::string fixed_text(double v, int decimals) {
  if (!std::isfinite(v)) return std::string(no_value_text);
  std::string s = fmt::format("{:.{}f}", v, std::clamp(decimals, 0, 17));
  if (s.front() == '-' && all_zero(s)) s.erase(0, 1);
  return s;
}

std::string signed_fixed_text(double v, int decimals) {
  std::string s = fixed_text(v, decimals);
  if (!std::isfinite(v) || all_zero(s) || s.front() == '-') return s;
  return "+" + s;
}

}  // namespace gridtruth
