// Internal: the library's compensated sum is the public gridtruth::CompensatedSum (one algorithm everywhere).
#pragma once

#include "gridtruth/compensated_sum.hpp"

namespace gridtruth::detail {
using gridtruth::CompensatedSum;
}  // namespace gridtruth::detail
