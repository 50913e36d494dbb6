// gridtruth — Neumaier's compensated summation, for long sums of lengths and areas (DEVELOPERS.md, naming rule 8).
#pragma once

#include <cmath>

namespace gridtruth {

/// Neumaier's compensated sum (Neumaier 1974, "Rundungsfehleranalyse einiger Verfahren zur Summation endlicher
/// Summen", ZAMM 54:39-51): the rounding error of each addition is carried along and added back at the end, so a
/// sum of n terms is good to about one rounding of the result plus n·u² relative (Higham 2002, sect. 4.3).
class CompensatedSum {
 public:
  /// Adds `v`.
  void add(double v) noexcept {
    const double t = sum_ + v;
    comp_ += std::fabs(sum_) >= std::fabs(v) ? (sum_ - t) + v : (v - t) + sum_;
    sum_ = t;
  }
  /// The sum so far, its compensation added.
  double value() const noexcept { return sum_ + comp_; }

 private:
  double sum_ = 0, comp_ = 0;
};

}  // namespace gridtruth
