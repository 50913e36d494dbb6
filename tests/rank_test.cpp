// Ranking candidate CRSs and tailoring a projection (issue 6): facts of the trade, a closed form for the tailored
// transverse Mercator, reproducibility, and the `rank` / `tailor` commands' contract.
#include <gtest/gtest.h>
#include <sys/wait.h>
#include <unistd.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <fstream>
#include <optional>
#include <set>
#include <sstream>
#include <string>
#include <vector>

#include "gridtruth/audit.hpp"
#include "gridtruth/error.hpp"
#include "gridtruth/rank.hpp"
#include "gridtruth/tailor.hpp"
#include "../lib/choose/rank_detail.hpp"  // detail::audit_candidate: one candidate audited exactly
#include "test_files.hpp"

namespace {
using gridtruth::test_files::parse_csv;
using gridtruth::test_files::ScratchDir;
using gridtruth::test_files::slurp;

using namespace gridtruth;

constexpr double pi = 3.14159265358979323846;
// WGS 84 (EPSG:7030): a = 6 378 137 m, 1/f = 298.257223563 (EPSG dataset, ellipsoid 7030).
constexpr double wgs84_a = 6378137.0, wgs84_f = 1 / 298.257223563;

/// A block of small square polygons (side `side_deg`) on a grid over [lon0, lon0 + nx·step] × [lat0, ...].
std::vector<Geometry> parcels(double lon0, double lat0, int nx, int ny, double step_deg, double side_deg) {
  std::vector<Geometry> out;
  for (int i = 0; i < nx; ++i) {
    for (int j = 0; j < ny; ++j) {
      const double x = lon0 + i * step_deg, y = lat0 + j * step_deg;
      out.push_back(Geometry::polygon({{x, y}, {x + side_deg, y}, {x + side_deg, y + side_deg}, {x, y + side_deg}}));
    }
  }
  return out;
}

/// Short north–south lines (0.01°) across a strip [centre − half, centre + half] × [lat0, lat0 + rows − 1].
std::vector<Geometry> strip_lines(double centre_lon, double half_width_deg, double lat0, int rows) {
  std::vector<Geometry> out;
  for (int i = 0; i <= 10; ++i) {
    const double x = centre_lon - half_width_deg + i * half_width_deg / 5;
    for (int j = 0; j < rows; ++j) out.push_back(Geometry::line_string({{x, lat0 + j}, {x, lat0 + j + 0.01}}));
  }
  return out;
}

/// The geometries as rank_crs() and tailor_crs() take them, each at heights_m[i] (heights_m empty: no heights).
std::vector<RankFeature> to_rank(const std::vector<Geometry>& geometries, const std::vector<double>& heights_m = {}) {
  std::vector<RankFeature> out;
  for (std::size_t i = 0; i < geometries.size(); ++i)
    out.push_back({geometries[i], heights_m.empty() ? std::nullopt : std::optional<double>(heights_m[i])});
  return out;
}

bool is_equal_area(const std::string& crs) {
  return crs == "generated:aea" || crs == "generated:laea" || crs == "EPSG:6933" || crs == "EPSG:8857";
}
bool is_conformal(const std::string& crs) {
  return crs.rfind("generated:utm", 0) == 0 || crs == "generated:tmerc" || crs == "generated:lcc";
}

const RankedCrs* find(const RankReport& report, const std::string& crs) {
  for (const RankedCrs& r : report.ranked)
    if (r.candidate.crs == crs) return &r;
  return nullptr;
}

// Common practice: an equal-area projection keeps areas (its scale part is zero up to the densified measure's
// accuracy) and so ranks ahead of the conformal projections of the same extent for an area metric.
TEST(Rank, EqualAreaCandidatesLeadForAreaWithNoScalePart) {
  const auto features = parcels(-95.5, 41.0, 6, 4, 0.5, 0.2);
  RankOptions o;
  o.metric = RankMetric::area;
  o.registry = false;  // only the generated candidates and the world baselines: all of them audited
  o.leaders = 50;
  const RankReport report = rank_crs(to_rank(features), o);
  ASSERT_GE(report.ranked.size(), 8u);
  std::size_t last_equal_area = 0, first_conformal = report.ranked.size();
  int equal_area = 0, conformal = 0;
  for (std::size_t k = 0; k < report.ranked.size(); ++k) {
    const std::string& crs = report.ranked[k].candidate.crs;
    if (is_equal_area(crs)) last_equal_area = k, ++equal_area;
    if (is_conformal(crs)) first_conformal = std::min(first_conformal, k), ++conformal;
  }
  EXPECT_EQ(equal_area, 4);
  EXPECT_GE(conformal, 3);
  EXPECT_LT(last_equal_area, first_conformal);

  // The scale part itself: for each equal-area candidate, |from_scale| / area below 0.2 ppm — the bound the 1 mm
  // densify tolerance puts on a 0.2° parcel (1 mm × perimeter ≈ 80 m² of 4·10⁸ m²) — while a conformal
  // projection's scale part is at least ten times that.
  for (const RankedCrs& r : report.ranked) {
    if (!is_equal_area(r.candidate.crs) && !is_conformal(r.candidate.crs)) continue;
    AuditOptions ao;
    ao.target_crs = r.candidate.definition;
    const Auditor auditor(ao);
    double worst_scale_ppm = 0;
    for (const Geometry& g : features) {
      const AuditResult a = auditor.audit(g);
      ASSERT_EQ(a.status, Status::ok) << r.candidate.crs << ": " << a.message;
      worst_scale_ppm = std::max(worst_scale_ppm, std::fabs(a.area->from_scale / a.area->reference) * 1e6);
    }
    if (is_equal_area(r.candidate.crs)) {
      EXPECT_LT(worst_scale_ppm, 0.2) << r.candidate.crs;
    } else {
      EXPECT_GT(worst_scale_ppm, 2.0) << r.candidate.crs;
    }
  }
}

// Common practice: along a north–south strip a transverse Mercator on the strip's meridian keeps lengths better
// than a conic (whose scale varies with latitude).
TEST(Rank, TransverseMercatorBeatsConicOnNorthSouthStrip) {
  const auto features = strip_lines(-93.0, 0.5, 40.0, 5);
  RankOptions o;
  o.metric = RankMetric::length;
  o.registry = false;
  o.leaders = 50;
  const RankReport report = rank_crs(to_rank(features), o);
  const RankedCrs* tm = find(report, "generated:tmerc");
  const RankedCrs* lcc = find(report, "generated:lcc");
  const RankedCrs* aea = find(report, "generated:aea");
  ASSERT_NE(tm, nullptr);
  ASSERT_NE(lcc, nullptr);
  ASSERT_NE(aea, nullptr);
  EXPECT_LT(tm->worst_ppm, lcc->worst_ppm);
  EXPECT_LT(tm->worst_ppm, aea->worst_ppm);
  EXPECT_EQ(tm->unmeasured, 0u);
}

/// The first-order transverse Mercator scale at longitude offset Δλ from the central meridian, minus one, for
/// k₀ = 1: (1 + C) A² / 2 with A = Δλ cos φ, C = e'² cos² φ (Snyder 1987, "Map Projections — A Working Manual",
/// eq. 8-11; the next term is O(A⁴), ~10⁻¹⁰ here).
double tm_excess(double dlon_deg, double lat_deg) {
  const double e2 = wgs84_f * (2 - wgs84_f), ep2 = e2 / (1 - e2);
  const double c = std::cos(lat_deg * pi / 180);
  const double a = dlon_deg * pi / 180 * c;
  return (1 + ep2 * c * c) * a * a / 2;
}

// The tailored transverse Mercator on a narrow strip: with k₀ free, the minimax fit of k ≈ k₀(1 + x²/2R²) spreads
// the error evenly about zero, k₀ = 1 − m/2 for the largest excess m, so its worst error is about half the
// uniform-k₀ (k₀ = 1) one — and no larger than the best UTM zone's.
TEST(Tailor, TransverseMercatorHalvesUniformScaleErrorAndBeatsUtm) {
  const auto features = strip_lines(-93.0, 0.5, 40.0, 5);
  double excess = 0;  // the largest (k − 1) for k₀ = 1 over the features, computed independently
  for (const Geometry& g : features) {
    const Coord mid{g.lines[0][0].x, (g.lines[0][0].y + g.lines[0][1].y) / 2};
    excess = std::max(excess, tm_excess(mid.x + 93.0, mid.y));
  }
  const double uniform_ppm = excess * 1e6;      // ≈ 22.4 ppm here
  const double expected_ppm = uniform_ppm / 2;  // minimax with k₀ free

  TailorOptions o;
  o.rank.metric = RankMetric::length;
  o.compare_registry = false;
  const TailorResult t = tailor_crs(to_rank(features), ProjectionFamily::transverse_mercator, o);
  ASSERT_EQ(t.audit.unmeasured, 0u);
  EXPECT_NEAR(t.audit.worst_ppm, expected_ppm, 0.03 * expected_ppm);
  ASSERT_EQ(t.parameters.size(), 2u);
  EXPECT_EQ(t.parameters[0].name, "lon_0");
  EXPECT_NEAR(t.parameters[0].value, -93.0, 0.01);
  EXPECT_EQ(t.parameters[1].name, "k_0");
  EXPECT_NEAR((t.parameters[1].value - (1 - excess / 2)) * 1e6, 0.0, 0.5);  // within 0.5 ppm of 1 − m/2
  EXPECT_NE(t.wkt2.find("Transverse Mercator"), std::string::npos);

  // The uniform k₀ = 1 transverse Mercator on the same meridian, audited exactly, matches the closed form.
  o.optimise_scale = false;
  const TailorResult uniform = tailor_crs(to_rank(features), ProjectionFamily::transverse_mercator, o);
  EXPECT_NEAR(uniform.audit.worst_ppm, uniform_ppm, 0.03 * uniform_ppm);
  EXPECT_NEAR(t.audit.worst_ppm / uniform.audit.worst_ppm, 0.5, 0.03);

  // The best UTM zone of the strip (zones 14, 15, 16 north on WGS 84).
  double best_utm = HUGE_VAL;
  RankOptions ro;
  ro.metric = RankMetric::length;
  for (const char* id : {"EPSG:32614", "EPSG:32615", "EPSG:32616"}) {
    const RankedCrs r = gridtruth::detail::audit_candidate({id, id, false, id, true}, to_rank(features), {}, ro);
    best_utm = std::min(best_utm, r.worst_ppm);
  }
  EXPECT_LE(t.audit.worst_ppm, best_utm);
}

// A low-distortion ground projection: at 1 500 m the fitted k₀ rises by about h/R so ground lengths stay true.
TEST(Tailor, HeightsRaiseTheFittedScaleFactor) {
  const auto features = strip_lines(-105.0, 0.2, 39.0, 2);
  const std::vector<double> heights(features.size(), 1500.0);
  TailorOptions o;
  o.rank.metric = RankMetric::length;
  o.compare_registry = false;
  const TailorResult ground = tailor_crs(to_rank(features, heights), ProjectionFamily::transverse_mercator, o);
  const TailorResult ellipsoid = tailor_crs(to_rank(features), ProjectionFamily::transverse_mercator, o);
  const double lat = 39.5 * pi / 180;
  const double e2 = wgs84_f * (2 - wgs84_f), w2 = 1 - e2 * std::sin(lat) * std::sin(lat);
  const double rg = wgs84_a * std::sqrt(1 - e2) / w2;  // Gaussian mean radius √(MN) (common practice)
  EXPECT_NEAR((ground.parameters[1].value - ellipsoid.parameters[1].value) * 1e6, 1500.0 / rg * 1e6, 2.0);
  EXPECT_LT(ground.audit.worst_ppm, 5.0);
}

// Common practice: along a strip running obliquely (here south-west to north-east) an oblique Mercator with its
// central line along the strip keeps lengths better than any transverse Mercator.
TEST(Tailor, ObliqueMercatorBeatsTransverseMercatorOnADiagonalStrip) {
  std::vector<Geometry> features;
  for (int i = 0; i <= 20; ++i) {
    const double t = i / 20.0;
    const double lon = -96 + 5 * t, lat = 40 + 4 * t;
    for (double offset : {-0.1, 0.0, 0.1}) {
      features.push_back(Geometry::line_string({{lon - offset, lat + offset}, {lon - offset + 0.01, lat + offset + 0.008}}));
    }
  }
  TailorOptions o;
  o.rank.metric = RankMetric::length;
  o.compare_registry = false;
  const TailorResult omerc = tailor_crs(to_rank(features), ProjectionFamily::oblique_mercator, o);
  const TailorResult tm = tailor_crs(to_rank(features), ProjectionFamily::transverse_mercator, o);
  ASSERT_EQ(omerc.audit.unmeasured, 0u);
  ASSERT_EQ(tm.audit.unmeasured, 0u);
  EXPECT_LT(omerc.audit.worst_ppm, tm.audit.worst_ppm / 5);
  ASSERT_EQ(omerc.parameters.size(), 4u);
  EXPECT_EQ(omerc.parameters[2].name, "alpha");
  EXPECT_GT(omerc.parameters[2].value, 20.0);  // the central line runs north-east, like the strip
  EXPECT_LT(omerc.parameters[2].value, 70.0);
}

TEST(Rank, RegistryCandidatesAreThoseWhoseAreaOfUseHoldsTheExtent) {
  const GeoExtent e = extent_of(parcels(-93.8, 41.0, 3, 3, 0.5, 0.2));  // inside 96°W–90°W: UTM zone 15N
  RankOptions o;
  const auto candidates = candidate_crs(e, o);
  std::set<std::string> ids;
  for (const CandidateCrs& c : candidates) {
    ids.insert(c.crs);
    if (!c.generated) {
      ASSERT_TRUE(c.inside_area_of_use.has_value()) << c.crs;
      EXPECT_TRUE(*c.inside_area_of_use) << c.crs;
    }
  }
  EXPECT_TRUE(ids.count("EPSG:32615"));   // WGS 84 / UTM zone 15N
  EXPECT_TRUE(ids.count("EPSG:26915"));   // NAD83 / UTM zone 15N
  EXPECT_FALSE(ids.count("EPSG:32632"));  // UTM zone 32N: Europe
  EXPECT_FALSE(ids.count("EPSG:32614"));  // UTM zone 14N ends at 96°W
  EXPECT_TRUE(ids.count("generated:utm15n"));
  EXPECT_TRUE(ids.count("EPSG:6933"));
  EXPECT_TRUE(std::is_sorted(candidates.begin(), candidates.end(),
                             [](const CandidateCrs& a, const CandidateCrs& b) { return a.crs < b.crs; }));
}

TEST(Rank, SameRankingOnEveryRunAndThreadCount) {
  auto features = parcels(8.0, 46.0, 8, 5, 0.25, 0.1);
  RankOptions o;
  o.metric = RankMetric::area;
  o.sample_features = 25;  // force the sampled path with its full re-audit
  o.threads = 1;
  const RankReport one = rank_crs(to_rank(features), o);
  o.threads = 4;
  const RankReport four = rank_crs(to_rank(features), o);
  const RankReport again = rank_crs(to_rank(features), o);
  ASSERT_EQ(one.sample, 25u);
  ASSERT_FALSE(one.ranked.empty());
  for (const RankReport* other : {&four, &again}) {
    ASSERT_EQ(one.ranked.size(), other->ranked.size());
    for (std::size_t k = 0; k < one.ranked.size(); ++k) {
      EXPECT_EQ(one.ranked[k].candidate.crs, other->ranked[k].candidate.crs) << "rank " << k + 1;
      EXPECT_EQ(one.ranked[k].worst_ppm, other->ranked[k].worst_ppm) << "rank " << k + 1;
      EXPECT_EQ(one.ranked[k].p95_ppm, other->ranked[k].p95_ppm) << "rank " << k + 1;
    }
  }
  // The re-audited leaders were measured on every feature.
  EXPECT_EQ(one.ranked.front().features, features.size());
  EXPECT_FALSE(one.ranked.front().sampled);
}

TEST(Rank, ExtentAcrossTheAntimeridian) {
  // Parcels on both sides of 180° (Fiji's longitudes).
  std::vector<Geometry> features = parcels(178.5, -18.0, 3, 2, 0.5, 0.2);
  for (Geometry& g : parcels(-179.9, -18.0, 2, 2, 0.5, 0.2)) features.push_back(g);
  const GeoExtent e = extent_of(features);
  EXPECT_TRUE(e.crosses_antimeridian());
  EXPECT_DOUBLE_EQ(e.west_deg, 178.5);
  EXPECT_NEAR(e.east_deg, -179.9 + 0.7, 1e-9);
  EXPECT_NEAR(e.width_deg(), (180 - 178.5) + (180 - 179.2), 1e-9);  // across 180°, not 357.7° the long way
  RankOptions o;
  o.metric = RankMetric::area;
  const auto candidates = candidate_crs(e, o);
  int registry = 0;
  for (const CandidateCrs& c : candidates) {
    if (!c.generated) ++registry;
    if (c.crs == "generated:tmerc") {
      // Centred on the data, near ±180°, not on Greenwich.
      const auto at = c.definition.find("+lon_0=");
      ASSERT_NE(at, std::string::npos);
      EXPECT_GT(std::fabs(std::stod(c.definition.substr(at + 7))), 179.0);
    }
  }
  EXPECT_GT(registry, 2);
  const RankReport report = rank_crs(to_rank(features), o);
  ASSERT_FALSE(report.ranked.empty());
  EXPECT_EQ(report.ranked.front().unmeasured, 0u);
  EXPECT_LT(report.ranked.front().worst_ppm, 1.0);
}

TEST(Rank, NoFeatureWithTheMetricIsAnError) {
  const std::vector<Geometry> lines = strip_lines(10.0, 0.2, 50.0, 1);
  RankOptions o;
  o.metric = RankMetric::area;
  EXPECT_THROW(rank_crs(to_rank(lines), o), Error);
  EXPECT_THROW(parse_rank_metric("volume"), Error);
  EXPECT_THROW(parse_projection_family("mercator"), Error);
}

// ---- the commands -------------------------------------------------------------------------------------------

std::string cli_path() {
#ifdef GRIDTRUTH_CLI
  return GRIDTRUTH_CLI;
#else
  // The build puts tests/ and examples/ side by side.
  char self[4096];
  const ssize_t n = readlink("/proc/self/exe", self, sizeof self - 1);
  if (n <= 0) return "";
  std::string dir(self, static_cast<std::size_t>(n));
  dir = dir.substr(0, dir.rfind('/'));
  return dir.substr(0, dir.rfind('/')) + "/examples/gridtruth";
#endif
}

struct CliRun {
  int status = -1;
  std::string out, err;
};


CliRun run(const std::string& args, const std::string& dir) {
  const std::string cmd = cli_path() + " " + args + " > " + dir + "/out.txt 2> " + dir + "/err.txt";
  const int raw = std::system(cmd.c_str());
  CliRun r;
  r.status = WIFEXITED(raw) ? WEXITSTATUS(raw) : -1;
  r.out = slurp(dir + "/out.txt");
  r.err = slurp(dir + "/err.txt");
  return r;
}


class RankCli : public ::testing::Test {
 protected:
  void SetUp() override {
    if (std::ifstream(cli_path()).fail()) GTEST_SKIP() << "the gridtruth executable is not built: " << cli_path();
    ASSERT_FALSE(dir_.empty());
    std::ofstream f(dir_ + "/in.csv");
    f << "id,wkt\n";
    for (int i = 0; i < 4; ++i) {
      const double x = -93.4 + 0.25 * i;
      f << i << ",\"POLYGON((" << x << " 41," << x + 0.1 << " 41," << x + 0.1 << " 41.1," << x << " 41.1," << x
        << " 41))\"\n";
    }
  }
  ScratchDir scratch_{"rank"};
  const std::string& dir_ = scratch_.dir();
};

TEST_F(RankCli, WritesTheRankingCsvAndExitsZero) {
  const CliRun r = run("rank " + dir_ + "/in.csv --metric area --top 4 --tolerance area=1ppm --out " + dir_ + "/rank.csv",
                    dir_);
  ASSERT_EQ(r.status, 0) << r.err;
  EXPECT_NE(r.out.find("worst_ppm"), std::string::npos);
  const auto rows = parse_csv(slurp(dir_ + "/rank.csv"));
  ASSERT_EQ(rows.size(), 5u);
  const std::vector<std::string> header = {"crs", "name", "kind", "metric", "worst_ppm", "p95_ppm", "pass_share",
                                           "inside_area_of_use", "definition"};
  EXPECT_EQ(rows[0], header);
  double previous = 0;
  for (std::size_t k = 1; k < rows.size(); ++k) {
    ASSERT_EQ(rows[k].size(), header.size());
    EXPECT_TRUE(rows[k][2] == "registry" || rows[k][2] == "generated") << rows[k][2];
    EXPECT_EQ(rows[k][3], "area");
    const double worst = std::stod(rows[k][4]);
    EXPECT_GE(worst, previous);  // best first
    previous = worst;
    EXPECT_LE(std::stod(rows[k][5]), worst);
    const double share = std::stod(rows[k][6]);
    EXPECT_TRUE(share >= 0 && share <= 1);
    if (rows[k][2] == "generated") EXPECT_EQ(rows[k][8].rfind("+proj=", 0), 0u) << rows[k][8];
  }
}

// Issue 17: invalid features (here a bowtie, OGC 06-103r4 6.1.11.1: rings are simple) are skipped, and counted.
TEST(Rank, InvalidFeaturesAreSkippedAndCounted) {
  const Geometry square = Geometry::polygon({{-93.4, 41}, {-93.3, 41}, {-93.3, 41.1}, {-93.4, 41.1}});
  const Geometry bowtie = Geometry::polygon({{-93, 41}, {-92.9, 41.1}, {-92.9, 41}, {-93, 41.1}});
  RankOptions o;
  o.metric = RankMetric::area;
  o.leaders = 2;
  const RankReport report = rank_crs(to_rank({square, bowtie, square}), o);
  EXPECT_EQ(report.features, 2u);
  EXPECT_EQ(report.invalid, 1u);
  ASSERT_FALSE(report.ranked.empty());
  EXPECT_EQ(report.ranked.front().features, 2u);
  TailorOptions t;
  t.rank.metric = RankMetric::area;
  t.compare_registry = false;
  EXPECT_EQ(tailor_crs(to_rank({square, bowtie, square}), ProjectionFamily::transverse_mercator, t).invalid, 1u);
}

TEST_F(RankCli, SaysHowManyInvalidFeaturesWereSkipped) {
  std::ofstream(dir_ + "/in.csv", std::ios::app) << "bowtie,\"POLYGON((-93 41,-92.9 41.1,-92.9 41,-93 41.1,-93 41))\"\n";
  const CliRun r = run("rank " + dir_ + "/in.csv --metric area --top 2", dir_);
  ASSERT_EQ(r.status, 0) << r.err;
  EXPECT_NE(r.out.find("Features: 4 valid, 1 invalid (skipped)"), std::string::npos) << r.out;
  const CliRun t = run("tailor " + dir_ + "/in.csv --family transverse-mercator --metric area --no-compare", dir_);
  ASSERT_EQ(t.status, 0) << t.err;
  EXPECT_NE(t.out.find("Features: 1 invalid (skipped)"), std::string::npos) << t.out;
}

TEST_F(RankCli, HeightsFromZAreTheHeightsOfAHeightField) {
  // The same squares at 1500 m above the ellipsoid, given once as Z coordinates (WKT "POLYGON Z", ISO 19125-1
  // section 7) and once as a height column: rank and tailor give the same output for both (the ground lift is
  // measured, so the heights are used: a tailored ground projection's scale k0 differs from the ellipsoid's).
  std::ofstream z(dir_ + "/z.csv"), h(dir_ + "/h.csv");
  z << "id,wkt\n";
  h << "id,h,wkt\n";
  for (int i = 0; i < 4; ++i) {
    const double x = -93.4 + 0.25 * i;
    z << i << ",\"POLYGON Z((" << x << " 41 1500," << x + 0.1 << " 41 1500," << x + 0.1 << " 41.1 1500," << x
      << " 41.1 1500," << x << " 41 1500))\"\n";
    h << i << ",1500,\"POLYGON((" << x << " 41," << x + 0.1 << " 41," << x + 0.1 << " 41.1," << x << " 41.1," << x
      << " 41))\"\n";
  }
  z.close();
  h.close();
  for (const std::string command : {"rank %s --metric area --top 3",
                                    "tailor %s --family transverse-mercator --metric area --no-compare"}) {
    auto with = [&](const std::string& input) {
      std::string c = command;
      c.replace(c.find("%s"), 2, input);
      return c;
    };
    const CliRun from_z = run(with(dir_ + "/z.csv --height-from-z"), dir_);
    const CliRun from_field = run(with(dir_ + "/h.csv --height-field h"), dir_);
    const CliRun flat = run(with(dir_ + "/h.csv"), dir_);
    ASSERT_EQ(from_z.status, 0) << from_z.err;
    ASSERT_EQ(from_field.status, 0) << from_field.err;
    const auto strip_input = [&](std::string text, const std::string& name) {  // the lines naming the input differ
      for (std::size_t at; (at = text.find(name)) != std::string::npos;) text.replace(at, name.size(), "INPUT");
      return text;
    };
    EXPECT_EQ(strip_input(from_z.out, dir_ + "/z.csv"), strip_input(from_field.out, dir_ + "/h.csv")) << command;
    if (command.rfind("tailor", 0) == 0) EXPECT_NE(flat.out, from_field.out);  // the height was used
  }
}

TEST_F(RankCli, BadOptionsAndUnreadableInputExitTwoWithOneLine) {
  for (const std::string& args : {"rank " + dir_ + "/in.csv --metric volume", "rank " + dir_ + "/missing.csv",
                                  "rank " + dir_ + "/in.csv --tolerance area=abc",
                                  "tailor " + dir_ + "/in.csv --family mercator"}) {
    const CliRun r = run(args, dir_);
    EXPECT_EQ(r.status, 2) << args;
    EXPECT_EQ(std::count(r.err.begin(), r.err.end(), '\n'), 1) << args << ": " << r.err;
    EXPECT_TRUE(r.out.empty()) << args;
  }
}

TEST_F(RankCli, TailorPrintsParametersProjStringAndWkt) {
  const CliRun r = run("tailor " + dir_ + "/in.csv --family albers --metric area", dir_);
  ASSERT_EQ(r.status, 0) << r.err;
  EXPECT_NE(r.out.find("lat_1"), std::string::npos);
  EXPECT_NE(r.out.find("+proj=aea"), std::string::npos);
  EXPECT_NE(r.out.find("PROJCRS["), std::string::npos);
  EXPECT_NE(r.out.find("Best database CRS"), std::string::npos);
  const CliRun help = run("tailor --help", dir_);
  EXPECT_NE(help.out.find("do not replace, licensed survey practice"), std::string::npos);
}

}  // namespace
