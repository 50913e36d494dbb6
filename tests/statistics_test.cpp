// RunStatistics: the one accumulator of a run's counts, totals and worst features (summary and report).
#include "gridtruth/statistics.hpp"

#include <gtest/gtest.h>

#include <cmath>
#include <string>

namespace gridtruth {
namespace {

AuditResult measured(GeometryType type, double reference, double grid, Verdict verdict = Verdict::none) {
  AuditResult r;
  r.type = type;
  r.status = Status::ok;
  r.verdict = verdict;
  Budget b;
  b.reference = reference;
  b.grid = grid;
  b.error = grid - reference;
  b.error_ppm = 1e6 * b.error / reference;
  b.from_scale = b.error;  // the whole error from scale, the other parts zero
  if (type == GeometryType::polygon || type == GeometryType::multi_polygon) r.area = b;
  else r.length = b;
  return r;
}

TEST(RunStatistics, CountsEveryRowOnceByStatusAndVerdict) {
  RunStatistics s;
  s.add("a", 1, measured(GeometryType::polygon, 1e4, 1e4 + 1, Verdict::pass));
  s.add("b", 2, measured(GeometryType::line_string, 100, 100.01, Verdict::fail));
  AuditResult bad;
  bad.status = Status::invalid;
  s.add("c", 3, bad);
  AuditResult far;
  far.status = Status::unmeasurable;
  s.add("d", 4, far);
  s.add_unread();
  AuditResult point;
  point.type = GeometryType::point;
  point.status = Status::ok;
  s.add("e", 6, point);
  EXPECT_EQ(s.read(), 6u);
  EXPECT_EQ(s.ok(), 3u);
  EXPECT_EQ(s.invalid(), 2u);
  EXPECT_EQ(s.unmeasurable(), 1u);
  EXPECT_EQ(s.pass(), 1u);
  EXPECT_EQ(s.fail(), 1u);
  EXPECT_EQ(s.area_features(), 1u);
  EXPECT_EQ(s.length_features(), 1u);
  EXPECT_EQ(s.point_features(), 1u);
}

TEST(RunStatistics, TotalsAreCompensatedSums) {
  // 1e16 followed by 10 000 ones: a plain double sum loses every one (1e16 + 1 rounds back to 1e16, IEEE 754
  // binary64 has a 53-bit significand); Neumaier's sum keeps them (worked by hand: 1e16 + 1e4 exactly).
  RunStatistics s;
  s.add("big", 1, measured(GeometryType::polygon, 1e16, 1e16));
  for (int k = 0; k < 10000; ++k) s.add("one", static_cast<std::size_t>(k + 2), measured(GeometryType::polygon, 1, 1));
  EXPECT_EQ(s.true_area_m2(), 1e16 + 1e4);
  double plain = 1e16;
  for (int k = 0; k < 10000; ++k) plain += 1;
  EXPECT_NE(plain, 1e16 + 1e4);  // the test can tell the two apart
}

TEST(RunStatistics, WorstByAbsolutePpmThenByPosition) {
  RunStatistics s(3);
  s.add("small", 1, measured(GeometryType::polygon, 1e6, 1e6 + 10));   // +10 ppm
  s.add("neg", 2, measured(GeometryType::polygon, 1e6, 1e6 - 300));    // -300 ppm
  s.add("tie-b", 4, measured(GeometryType::line_string, 1e3, 1.1e3));  // +1e5 ppm
  s.add("tie-a", 3, measured(GeometryType::line_string, 1e3, 0.9e3));  // -1e5 ppm, earlier position
  for (int k = 0; k < 50; ++k) s.add("tiny", static_cast<std::size_t>(10 + k), measured(GeometryType::polygon, 1e6, 1e6));
  const auto w = s.worst();
  ASSERT_EQ(w.size(), 3u);
  EXPECT_EQ(w[0].id, "tie-a");
  EXPECT_EQ(w[1].id, "tie-b");
  EXPECT_EQ(w[2].id, "neg");
  EXPECT_EQ(w[2].measure, "area");
  EXPECT_EQ(w[0].measure, "length");
  EXPECT_NEAR(w[2].error_ppm, -300, 1e-9);
  EXPECT_NEAR(w[2].parts_ppm[1], -300, 1e-9);  // from_scale in ppm of R
  EXPECT_EQ(w[2].parts_ppm[0], 0);
}

}  // namespace
}  // namespace gridtruth
