// gridtruth — numbers as text for people (summaries, tables, report captions): fixed decimals, one spelling for a
// figure that does not exist. Machine outputs (CSV, JSON) use format_number() in io.hpp instead.
#pragma once

#include <string>
#include <string_view>

namespace gridtruth {

/// What every text output writes for a figure that does not exist or is not finite (NaN, ±infinity).
inline constexpr std::string_view no_value_text = "n/a";

/// `v` with exactly `decimals` decimals (0 to 17), "n/a" (no_value_text) when not finite; a value that rounds to
/// zero is written without a sign ("0.00", not "-0.00").
std::string fixed_text(double v, int decimals);

/// As fixed_text() with the sign always written ("+1.5", "-0.3", and "0.0" for what rounds to zero).
std::string signed_fixed_text(double v, int decimals);

}  // namespace gridtruth
