// Numbers as text for people (gridtruth/text.hpp): fixed decimals, one spelling for a figure that does not exist.
// Expected texts worked by hand (round half to even of the binary value, as printf's %.Nf: ISO C 7.21.6.1).
#include "gridtruth/text.hpp"

#include <gtest/gtest.h>

#include <limits>

namespace gridtruth {
namespace {

TEST(NumberForPeople, FixedDecimalsAndOneSpellingForNoValue) {
  EXPECT_EQ(fixed_text(1234.5678, 2), "1234.57");
  EXPECT_EQ(fixed_text(-0.004, 2), "0.00");  // rounds to zero: no sign
  EXPECT_EQ(fixed_text(-0.006, 2), "-0.01");
  EXPECT_EQ(fixed_text(2.5, 0), "2");        // 2.5 is exact in binary: ties to even
  EXPECT_EQ(fixed_text(0.125, 2), "0.12");   // 0.125 exact: ties to even
  EXPECT_EQ(fixed_text(1e-3, 4), "0.0010");
  const double nan = std::numeric_limits<double>::quiet_NaN(), inf = std::numeric_limits<double>::infinity();
  for (const double v : {nan, inf, -inf}) {
    EXPECT_EQ(fixed_text(v, 3), no_value_text);
    EXPECT_EQ(signed_fixed_text(v, 3), no_value_text);
  }
  EXPECT_EQ(no_value_text, "n/a");
}

TEST(NumberForPeople, SignedShowsThePlusSignButNotOnZero) {
  EXPECT_EQ(signed_fixed_text(227.097, 1), "+227.1");
  EXPECT_EQ(signed_fixed_text(-799.5641, 1), "-799.6");
  EXPECT_EQ(signed_fixed_text(0.0, 1), "0.0");
  EXPECT_EQ(signed_fixed_text(-0.01, 1), "0.0");
}

}  // namespace
}  // namespace gridtruth
