// Internal: Neumaier's compensated summation, for long sums of lengths and areas (DEVELOPERS.md, naming rule 8).
#pragma once

#include <cmath>

namespace gridtruth::detail {

/// Neumaier's compensated sum: the rounding error of each addition is carried along and added back at the end.
class CompensatedSum {
 public:
  void add(double v) noexcept {
    const double t = sum_ + v;
    comp_ += std::fabs(sum_) >= std::fabs(v) ? (sum_ - t) + v : (v - t) + sum_;
    sum_ = t;
  }
  double value() const noexcept { return sum_ + comp_; }

 private:
  double sum_ = 0, comp_ = 0;
};

}  // namespace gridtruth::detail
