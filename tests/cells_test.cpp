// Raster cells (issue 9): true cell areas of geographic and projected grids, class areas, and `gridtruth cells`.
#include <GeographicLib/Geodesic.hpp>
#include <gmock/gmock.h>
#include <gtest/gtest.h>
#include <sys/wait.h>
#include <unistd.h>

#include <algorithm>

#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <fstream>
#include <map>
#include <optional>
#include <random>
#include <sstream>
#include <string>
#include <tuple>
#include <vector>

#include "gridtruth/audit.hpp"
#include "gridtruth/cells.hpp"
#include "gridtruth/error.hpp"
#include "support.hpp"
#include "test_files.hpp"

#ifdef GRIDTRUTH_WITH_GDAL
#include <gdal.h>
#include <ogr_srs_api.h>
#endif

namespace {
using gridtruth::test_files::parse_csv;
using gridtruth::test_files::slurp;

using namespace gridtruth;
namespace t = gridtruth::test;

const Ellipsoid wgs84_el{"WGS 84", t::wgs84.a_m, t::wgs84.f};

GridSpec grid(const std::string& crs, double ox, double oy, double px, double py, std::size_t cols,
              std::size_t rows) {
  GridSpec g;
  g.crs = crs;
  g.origin_x = ox;
  g.origin_y = oy;
  g.pixel_x = px;
  g.pixel_y = py;
  g.cols = cols;
  g.rows = rows;
  return g;
}

/// A one-cell rhumb quadrangle (meridians and parallels are rhumb lines) measured by GeographicLib directly.
double rhumb_cell_m2(double lat1, double lat2, double lon1, double lon2) {
  const Path ring{{lon1, lat1}, {lon2, lat1}, {lon2, lat2}, {lon1, lat2}};
  return t::rhumb_ring(ring, t::wgs84).area_m2;
}

// ---- geographic grid ------------------------------------------------------------------------------------------------

// 1° cells of WGS 84: 0–1°N × 1° = 12 308 463 893.975 m² and 89–90°N × 1° = 108 866 681.636 m², closed form of
// Snyder 1987 (USGS PP 1395) eq. 3-12 (values as stated in issue 9); cross-checked against the plain evaluation of
// eq. 3-12 in support.hpp and against GeographicLib's PolygonAreaRhumb (Karney 2024) on the same quadrangle.
TEST(GeographicCells, OneDegreeCellsMatchTheClosedForm) {
  const CellGrid g(grid("EPSG:4326", 0, 90, 1, -1, 1, 180));
  EXPECT_NEAR(g.geographic_row_cell_area_m2(89), 12308463893.975, 0.002);  // row 89: 1°N → 0°
  EXPECT_NEAR(g.geographic_row_cell_area_m2(0), 108866681.636, 0.002);     // row 0: 90°N → 89°N
  EXPECT_NEAR(g.geographic_row_cell_area_m2(89), t::quadrangle_area_m2(t::wgs84, 0, 1, 1), 1e-3);
  EXPECT_NEAR(g.geographic_row_cell_area_m2(0), t::quadrangle_area_m2(t::wgs84, 89, 90, 1), 1e-3);
  EXPECT_NEAR(g.geographic_row_cell_area_m2(89) / rhumb_cell_m2(0, 1, 0, 1), 1, 1e-12);
  EXPECT_NEAR(g.geographic_row_cell_area_m2(0) / rhumb_cell_m2(89, 90, 0, 1), 1, 1e-12);
  // Symmetry about the equator: row 90 (0° → 1°S) equals row 89.
  EXPECT_NEAR(g.geographic_row_cell_area_m2(90), g.geographic_row_cell_area_m2(89), 1e-4);
  EXPECT_NEAR(quadrangle_area_m2(wgs84_el, 0, 1, 1), 12308463893.975, 0.002);
}

// 30″ cells at several latitudes against GeographicLib's PolygonAreaRhumb on the single cell (a cell bounded by
// meridians and parallels is a rhumb quadrangle; Karney 2024): relative 1e-9. PolygonAreaRhumb's error is absolute
// (it was measured at 2.5e-7 m² on the 63 m² polar cells, i.e. 4e-9 relative), so the rows next to the poles are
// checked instead against eq. 3-12 evaluated with 50 significant digits (mpmath 1.3, independent of this library):
// rows 0 and 21599 = 63.003280391575911666 m², row 1 = 189.0098397341706981 m², row 600 = 75563.027104047828493 m²,
// row 10799 = 854796.66924022836136 m².
TEST(GeographicCells, ThirtySecondCellsMatchRhumbPolygonsAndHighPrecision) {
  const double step = 1.0 / 120;
  const CellGrid g(grid("EPSG:4326", -180, 90, step, -step, 43200, 21600));
  for (const std::size_t row : {std::size_t{600}, std::size_t{5000}, std::size_t{10799}, std::size_t{10800},
                                std::size_t{15000}, std::size_t{21000}}) {
    const double lat_top = 90 - static_cast<double>(row) * step;
    const double lat_bottom = 90 - static_cast<double>(row + 1) * step;
    const double expected = rhumb_cell_m2(lat_bottom, lat_top, 10, 10 + step);
    EXPECT_NEAR(g.geographic_row_cell_area_m2(row) / expected, 1, 1e-9) << "row " << row;
  }
  const std::map<std::size_t, double> high_precision = {{0, 63.003280391575911666},
                                                        {1, 189.0098397341706981},
                                                        {600, 75563.027104047828493},
                                                        {10799, 854796.66924022836136},
                                                        {21599, 63.003280391575911666}};
  for (const auto& [row, area_m2] : high_precision)
    EXPECT_NEAR(g.geographic_row_cell_area_m2(row) / area_m2, 1, 1e-11) << "row " << row;
}

// The whole globe sums to the ellipsoid's area 2πa²q_p (Snyder 1987 eq. 3-12 at φ = 90°), compared with
// GeographicLib's Geodesic::EllipsoidArea (Karney 2013), for 1° and 30″ grids.
TEST(GeographicCells, WholeGlobeSumsToTheEllipsoidArea) {
  const double ellipsoid_m2 = GeographicLib::Geodesic(t::wgs84.a_m, t::wgs84.f).EllipsoidArea();
  const double step = 1.0 / 120;
  for (const auto& spec : {grid("EPSG:4326", -180, 90, 1, -1, 360, 180),
                           grid("EPSG:4326", -180, 90, step, -step, 43200, 21600),
                           grid("EPSG:4326", 180, -90, -0.25, 0.25, 1440, 720)}) {
    const CellGrid g(spec);
    long double total = 0;
    std::size_t records = 0;
    g.for_each_record(1, [&](const CellRecord& r) {
      total += r.true_area_m2;
      ++records;
      EXPECT_EQ(r.row_end, r.row_start + 1);
      EXPECT_EQ(r.cells, spec.cols);
    });
    EXPECT_EQ(records, spec.rows);
    EXPECT_NEAR(static_cast<double>(total) / ellipsoid_m2, 1, 1e-12) << spec.pixel_x;
  }
  const double qp = authalic_q(wgs84_el, 90);
  EXPECT_NEAR(2 * t::pi * t::wgs84.a_m * t::wgs84.a_m * qp / ellipsoid_m2, 1, 1e-14);
}

// The difference formula against the plain q for latitudes far apart (where the plain form does not cancel): the
// plain difference of two q values up to 2 in size carries a few units in the last place of q (ulp(2) = 4.4e-16).
TEST(GeographicCells, DifferenceFormulaAgreesWithPlainQ) {
  for (double lat1 = -90; lat1 <= 90; lat1 += 7.5)
    for (double lat2 = -90; lat2 <= 90; lat2 += 11.25)
      EXPECT_NEAR(authalic_q_difference(wgs84_el, lat1, lat2),
                  t::authalic_q(t::wgs84, lat2) - t::authalic_q(t::wgs84, lat1), 2e-15)
          << lat1 << " " << lat2;
}

// The nominal area of a geographic cell is the equatorial-degree convention a²·Δλ·Δφ (documented in cells.hpp):
// a 1° cell of WGS 84 is (2πa/360)² (a degree of 111 319.49 m both ways, common practice).
TEST(GeographicCells, NominalAreaIsTheEquatorialDegreeSquare) {
  const CellGrid g(grid("EPSG:4326", 0, 1, 1, -1, 1, 1));
  const double degree_m = 2 * t::pi * t::wgs84.a_m / 360;
  EXPECT_NEAR(g.nominal_cell_area_m2(), degree_m * degree_m, 1e-3);
  EXPECT_NEAR(degree_m, 111319.49, 0.01);
}

TEST(GeographicCells, BadGridsThrowAtSetUp) {
  EXPECT_THROW(CellGrid(grid("EPSG:4326", 0, 91, 1, -1, 1, 1)), Error);
  EXPECT_THROW(CellGrid(grid("EPSG:4326", 0, 90, 1, -1, 1, 181)), Error);
  EXPECT_THROW(CellGrid(grid("EPSG:4326", 0, 90, 1, -1, 361, 1)), Error);
  EXPECT_THROW(CellGrid(grid("EPSG:4326", 0, 90, 0, -1, 1, 1)), Error);
  EXPECT_THROW(CellGrid(grid("EPSG:4326", 0, 90, 1, -1, 0, 1)), Error);
  EXPECT_THROW(CellGrid(grid("EPSG:999999", 0, 0, 1, -1, 1, 1)), Error);
  EXPECT_THROW(CellGrid(grid("EPSG:4978", 0, 0, 1, -1, 1, 1)), Error);  // geocentric
  const CellGrid g(grid("EPSG:4326", 0, 90, 1, -1, 2, 2));
  EXPECT_THROW(g.geographic_row_cell_area_m2(2), Error);
  EXPECT_THROW(g.row_cell_areas_m2(0, 1, 3), Error);
}

// ---- projected grid -------------------------------------------------------------------------------------------------

// Equal-area CRSs: every cell's true area equals its nominal (grid) area (the equal-area guarantee, common
// practice), EPSG:6933 (WGS 84 / NSIDC EASE-Grid 2.0 Global, cylindrical equal-area) and EPSG:3035 (ETRS89-extended
// / LAEA Europe), for 1 km and 100 km cells.
TEST(ProjectedCells, EqualAreaCrsCellsKeepTheirNominalArea) {
  const std::vector<GridSpec> specs = {
      grid("EPSG:6933", -17000000, 7000000, 1000, -1000, 40, 30),
      grid("EPSG:6933", -17000000, 7000000, 100000, -100000, 20, 140),
      grid("EPSG:3035", 2500000, 5500000, 1000, -1000, 30, 20),
      grid("EPSG:3035", 2500000, 5500000, 100000, -100000, 40, 40),
  };
  for (const GridSpec& s : specs) {
    const CellGrid g(s);
    ASSERT_FALSE(g.is_geographic());
    EXPECT_NEAR(g.nominal_cell_area_m2(), std::fabs(s.pixel_x * s.pixel_y), 1e-6);
    double worst = 0;
    for (std::size_t row = 0; row < s.rows; row += std::max<std::size_t>(1, s.rows / 7)) {
      const auto areas = g.row_cell_areas_m2(row, 0, s.cols);
      for (const double a : areas) worst = std::max(worst, std::fabs(a / g.nominal_cell_area_m2() - 1));
    }
    EXPECT_LT(worst, 1e-9) << s.crs << " pixel " << s.pixel_x;
    g.for_each_record(16, [&](const CellRecord& r) { EXPECT_NEAR(r.ratio, 1, 1e-9) << s.crs << " pixel " << s.pixel_x << " block " << r.row_start << "," << r.col_start; });
  }
}

// UTM: on the central meridian the point scale is k0 = 0.9996 in every direction (Snyder 1987 p. 58, transverse
// Mercator with k0), so a small cell there covers 1/0.9996² of its grid area on the ellipsoid (common practice).
TEST(ProjectedCells, UtmCellOnTheCentralMeridian) {
  const CellGrid g(grid("EPSG:32632", 499995, 5, 10, -10, 1, 1));  // 10 m cell on the equator at 9°E
  const double a = g.row_cell_areas_m2(0, 0, 1).at(0);
  EXPECT_NEAR(a / 100.0, 1 / (0.9996 * 0.9996), 1e-9);
  const CellGrid g2(grid("EPSG:32632", 499500, 5000500, 1000, -1000, 1, 1));  // 1 km cell at ~45°N
  EXPECT_NEAR(g2.row_cell_areas_m2(0, 0, 1).at(0) / 1e6, 1 / (0.9996 * 0.9996), 1e-8);
}

// Projected cells against the library's own audit of the same block as a polygon with edges straight in the grid's
// plane (densified geodesic reference, an independent route): relative 1e-9 for 50 km cells in UTM far from the
// central meridian and in a Lambert conformal conic.
TEST(ProjectedCells, BlocksAgreeWithStraightEdgedPolygonAudit) {
  const std::vector<GridSpec> specs = {grid("EPSG:32632", 180000, 5400000, 50000, -50000, 6, 6),
                                       grid("EPSG:2154", 200000, 7000000, 50000, -50000, 6, 6)};
  for (const GridSpec& s : specs) {
    const CellGrid g(s);
    AuditOptions o;
    o.source_crs = s.crs;
    o.target_crs = s.crs;
    o.densify_tolerance_m = 1e-4;
    o.edges = EdgeSpec{EdgeModel::straight, s.crs};
    const Auditor auditor(o);
    std::size_t checked = 0;
    g.for_each_record(3, [&](const CellRecord& r) {
      const double x0 = s.origin_x + static_cast<double>(r.col_start) * s.pixel_x;
      const double x1 = s.origin_x + static_cast<double>(r.col_end) * s.pixel_x;
      const double y0 = s.origin_y + static_cast<double>(r.row_start) * s.pixel_y;
      const double y1 = s.origin_y + static_cast<double>(r.row_end) * s.pixel_y;
      const AuditResult res = auditor.audit(Geometry::polygon({{x0, y0}, {x1, y0}, {x1, y1}, {x0, y1}, {x0, y0}}));
      ASSERT_EQ(res.status, Status::ok) << res.message;
      ASSERT_TRUE(res.area);
      EXPECT_NEAR(r.true_area_m2 / res.area->reference, 1, 1e-9) << s.crs << " block " << r.row_start << ","
                                                                  << r.col_start;
      ++checked;
    });
    EXPECT_EQ(checked, 4u);
  }
}

// Per-block records tile the grid and their sum equals the sum of the cells row by row.
TEST(ProjectedCells, BlocksTileTheGrid) {
  const GridSpec s = grid("EPSG:32633", 300000, 6000000, 2000, -2000, 23, 17);
  const CellGrid g(s);
  double cell_sum = 0;
  for (std::size_t r = 0; r < s.rows; ++r)
    for (const double a : g.row_cell_areas_m2(r, 0, s.cols)) cell_sum += a;
  double block_sum = 0;
  std::uint64_t cells = 0;
  std::size_t records = 0;
  g.for_each_record(5, [&](const CellRecord& r) {
    block_sum += r.true_area_m2;
    cells += r.cells;
    ++records;
    EXPECT_EQ(r.cells, (r.row_end - r.row_start) * (r.col_end - r.col_start));
    EXPECT_NEAR(r.nominal_area_m2, 4e6 * static_cast<double>(r.cells), 1e-3);
  });
  EXPECT_EQ(cells, 23u * 17u);
  EXPECT_EQ(records, 5u * 4u);
  EXPECT_NEAR(block_sum / cell_sum, 1, 1e-13);
}

// ---- class areas ----------------------------------------------------------------------------------------------------

// A 3 × 4 geographic raster of 1° cells from 2°N to 1°S (rows 2–1°N, 1–0°N, 0–1°S) with codes
//   row 0: 1 1 2 7     row 1: 2 2 2 7     row 2: 1 9 9 9   (9 = nodata)
// hand-computed: class 1 = 2·A(1..2) + 1·A(0..1°S); class 2 = 1·A(1..2) + 3·A(0..1); class 7 = A(1..2) + A(0..1);
// A from the plain closed form (Snyder 1987 eq. 3-12, support.hpp).
TEST(ClassAreas, GeographicRasterAgainstHandSums) {
  const CellGrid g(grid("EPSG:4326", 10, 2, 1, -1, 4, 3));
  ClassAreaAccumulator acc(g, 9u);
  acc.add_strip(0, {1, 1, 2, 7, 2, 2, 2, 7});
  acc.add_strip(2, {1, 9, 9, 9});
  const double a12 = t::quadrangle_area_m2(t::wgs84, 1, 2, 1);
  const double a01 = t::quadrangle_area_m2(t::wgs84, 0, 1, 1);
  const double a10s = t::quadrangle_area_m2(t::wgs84, -1, 0, 1);
  const std::map<std::uint32_t, std::pair<std::uint64_t, double>> expected = {
      {1, {3, 2 * a12 + a10s}}, {2, {4, a12 + 3 * a01}}, {7, {2, a12 + a01}}};
  const auto got = acc.result();
  ASSERT_EQ(got.size(), expected.size());
  const double nominal = std::pow(t::wgs84.a_m * t::pi / 180, 2);
  for (const ClassArea& c : got) {
    const auto& e = expected.at(c.code);
    EXPECT_EQ(c.cells, e.first) << c.code;
    EXPECT_NEAR(c.true_area_m2, e.second, 1e-2) << c.code;
    EXPECT_NEAR(c.naive_area_m2, nominal * static_cast<double>(e.first), 1e-2);
    EXPECT_NEAR(c.difference_m2, c.naive_area_m2 - e.second, 1e-2);
    EXPECT_NEAR(c.difference_pct, 100 * (c.naive_area_m2 - e.second) / e.second, 1e-9);
  }
  // The same raster as counts per (row, class) gives the same areas.
  ClassAreaAccumulator counts(g, 9u);
  counts.add_row_count(0, 1, 2);
  counts.add_row_count(0, 2, 1);
  counts.add_row_count(0, 7, 1);
  counts.add_row_count(1, 2, 3);
  counts.add_row_count(1, 7, 1);
  counts.add_row_count(2, 1, 1);
  counts.add_row_count(2, 9, 3);
  const auto again = counts.result();
  ASSERT_EQ(again.size(), got.size());
  for (std::size_t k = 0; k < got.size(); ++k) EXPECT_NEAR(again[k].true_area_m2, got[k].true_area_m2, 1e-3);
  EXPECT_THROW(acc.add_strip(2, {1, 1, 1, 1, 1, 1, 1, 1}), Error);  // past the last row
  EXPECT_THROW(acc.add_strip(0, {1, 1, 1}), Error);                 // not whole rows
}

// Projected: in an equal-area CRS the class areas are count × cell area exactly (equal-area guarantee, common
// practice); in UTM they are the sums of the cells' own areas, hand-summed from row_cell_areas_m2.
TEST(ClassAreas, ProjectedRasters) {
  const CellGrid ea(grid("EPSG:6933", 1000000, 5000000, 500, -500, 3, 2));
  ClassAreaAccumulator acc(ea);
  acc.add_strip(0, {4, 4, 5, 5, 4, 4});
  const auto got = acc.result();
  ASSERT_EQ(got.size(), 2u);
  EXPECT_EQ(got[0].code, 4u);
  EXPECT_EQ(got[0].cells, 4u);
  EXPECT_NEAR(got[0].true_area_m2 / (4 * 250000.0), 1, 1e-9);
  EXPECT_NEAR(got[1].true_area_m2 / (2 * 250000.0), 1, 1e-9);

  const CellGrid utm(grid("EPSG:32632", 700000, 5200000, 1000, -1000, 2, 2));
  ClassAreaAccumulator u(utm);
  u.add_strip(0, {3, 8});
  u.add_strip(1, {8, 8});
  const auto r0 = utm.row_cell_areas_m2(0, 0, 2), r1 = utm.row_cell_areas_m2(1, 0, 2);
  const auto ur = u.result();
  ASSERT_EQ(ur.size(), 2u);
  EXPECT_NEAR(ur[0].true_area_m2, r0[0], 1e-6);
  EXPECT_NEAR(ur[1].true_area_m2, r0[1] + r1[0] + r1[1], 1e-6);
  // 200 km east of the central meridian the grid overstates (k > 1): the naive count overstates the true area.
  EXPECT_GT(ur[1].difference_m2, 0);
  EXPECT_THROW(u.add_row_count(0, 3, 1), Error);
}

// ---- the command ---------------------------------------------------------------------------------------------------

#ifdef GRIDTRUTH_CLI
const std::string cli = GRIDTRUTH_CLI;
#else
const std::string cli;
#endif

struct CommandRun {
  int status = -1;
  std::string out, err;
};


std::string temp_path(const std::string& name) {
  return ::testing::TempDir() + "cells_test_" + std::to_string(::getpid()) + "_" + name;
}

/// Runs `gridtruth ARGS` through the shell, as a user does.
CommandRun run(const std::string& args) {
  const std::string out = temp_path("stdout"), err = temp_path("stderr");
  const int raw = std::system((cli + " " + args + " >" + out + " 2>" + err).c_str());
  CommandRun r;
  r.status = WIFEXITED(raw) ? WEXITSTATUS(raw) : -1;
  r.out = slurp(out);
  r.err = slurp(err);
  std::remove(out.c_str());
  std::remove(err.c_str());
  return r;
}


class CellsCommand : public ::testing::Test {
 protected:
  void SetUp() override {
    if (cli.empty()) GTEST_SKIP() << "GRIDTRUTH_CLI is not defined";
  }
};

// Geographic grid: the CSV columns of issue 9, one record per row, the 1° cell of Snyder 1987 eq. 3-12
// (12 308 463 893.975 m² for 0–1°N), the documented equatorial-degree nominal area, ratio = true / nominal.
TEST_F(CellsCommand, GeographicGridCsv) {
  const CommandRun r = run("cells --grid-crs EPSG:4326 --origin 0,90 --pixel 1,-1 --size 3,180");
  ASSERT_EQ(r.status, 0) << r.err;
  const auto rows = parse_csv(r.out);
  ASSERT_EQ(rows.size(), 181u);
  EXPECT_EQ(rows[0], (std::vector<std::string>{"row_start", "row_end", "col_start", "col_end", "cells",
                                                "true_area_m2", "nominal_area_m2", "ratio"}));
  const auto& row89 = rows[90];  // 1°N → 0°
  EXPECT_EQ(row89[0], "89");
  EXPECT_EQ(row89[1], "90");
  EXPECT_EQ(row89[2], "0");
  EXPECT_EQ(row89[3], "3");
  EXPECT_EQ(row89[4], "3");
  EXPECT_NEAR(std::stod(row89[5]), 3 * 12308463893.975, 0.01);
  const double degree_m = 2 * t::pi * t::wgs84.a_m / 360;
  EXPECT_NEAR(std::stod(row89[6]), 3 * degree_m * degree_m, 0.01);
  EXPECT_NEAR(std::stod(row89[7]), std::stod(row89[5]) / std::stod(row89[6]), 1e-15);
  EXPECT_NEAR(std::stod(rows[1][5]), 3 * 108866681.636, 0.01);  // 90°N → 89°N
}

// Projected equal-area grid (EPSG:6933): blocks tile the grid and keep their nominal area (common practice).
TEST_F(CellsCommand, ProjectedGridBlocks) {
  const std::string out = temp_path("blocks.csv");
  const CommandRun r = run("cells --grid-crs EPSG:6933 --origin 1000000,6000000 --pixel 1000,-1000 --size 200,100 "
                    "--block 64 --out " + out);
  ASSERT_EQ(r.status, 0) << r.err;
  EXPECT_EQ(r.out, "");
  const auto rows = parse_csv(slurp(out));
  std::remove(out.c_str());
  ASSERT_EQ(rows.size(), 1u + 4 * 2);
  std::uint64_t cells = 0;
  for (std::size_t k = 1; k < rows.size(); ++k) {
    cells += std::stoull(rows[k][4]);
    EXPECT_NEAR(std::stod(rows[k][7]), 1, 1e-9) << k;
    EXPECT_NEAR(std::stod(rows[k][6]), 1e6 * std::stod(rows[k][4]), 1e-3);
  }
  EXPECT_EQ(cells, 20000u);
  EXPECT_EQ(rows.back()[0], "64");
  EXPECT_EQ(rows.back()[1], "100");
  EXPECT_EQ(rows.back()[2], "192");
  EXPECT_EQ(rows.back()[3], "200");
}

TEST_F(CellsCommand, BadOptionsExitTwoWithOneLine) {
  for (const std::string args : {"cells --grid-crs EPSG:4326 --origin 0,90 --pixel 1,-1",
                                 "cells --grid-crs EPSG:4326 --origin 0,90 --pixel 1,-1 --size 0,3",
                                 "cells --grid-crs EPSG:4326 --origin 0,90 --pixel 1 --size 1,3",
                                 "cells --grid-crs EPSG:4326 --origin 0,95 --pixel 1,-1 --size 1,3",
                                 "cells --grid-crs EPSG:999999 --origin 0,0 --pixel 1,-1 --size 1,3",
                                 "cells --grid-crs EPSG:6933 --origin 0,0 --pixel 1,-1 --size 1,3 --block 0",
                                 "cells --grid-crs EPSG:4326 --origin 0,2 --pixel 1,-1 --size 4,3 --classes /nonexistent.raw"}) {
    const CommandRun r = run(args);
    EXPECT_EQ(r.status, 2) << args;
    EXPECT_EQ(r.out, "") << args;
    EXPECT_FALSE(r.err.empty()) << args;
    EXPECT_LE(std::count(r.err.begin(), r.err.end(), '\n'), 3) << args << "\n" << r.err;
  }
}

// The library's class files (add_raw_class_raster, add_class_counts_csv): the raster of
// ClassAreas.GeographicRasterAgainstHandSums (checked there against hand sums, Snyder 1987 eq. 3-12) as raw uint8
// codes, as raw little-endian uint16 codes (one code above 255, so that the byte order shows) and as counts per
// (row, class) gives what add_strip() gives; a file of the wrong size and a malformed line are refused by name.
TEST(ClassAreas, RawAndCountsFilesGiveTheAreasOfTheirCodes) {
  const GridSpec spec = grid("EPSG:4326", 10, 2, 1, -1, 4, 3);
  const CellGrid g(spec);
  const std::vector<std::uint16_t> codes8 = {1, 1, 2, 7, 2, 2, 2, 7, 1, 9, 9, 9};
  std::vector<std::uint16_t> codes16 = codes8;
  std::replace(codes16.begin(), codes16.end(), std::uint16_t{7}, std::uint16_t{0x0107});
  const std::string raw8 = temp_path("lib8.raw"), raw16 = temp_path("lib16.raw"), counts = temp_path("lib.csv"),
                    bad = temp_path("lib_bad.csv");
  {
    std::ofstream f8(raw8, std::ios::binary), f16(raw16, std::ios::binary), c(counts, std::ios::binary),
        b(bad, std::ios::binary);
    for (const std::uint16_t code : codes8) f8.put(static_cast<char>(code));
    for (const std::uint16_t code : codes16) f16.put(static_cast<char>(code & 0xFF)).put(static_cast<char>(code >> 8));
    // RFC 4180 section 2.5: any field may be quoted ("1,7,1" written by a spreadsheet as "1","7","1").
    c << "row,class,count\r\n0,1,2\r\n0,2,1\r\n0,7,1\r\n\r\n1,2,3\r\n\"1\",\"7\",\"1\"\r\n2,1,1\r\n2,9,3\r\n";
    b << "row,class,count\n0,1,2\n0,2\n";
  }
  auto same = [](const std::vector<ClassArea>& got, const std::vector<ClassArea>& want, const std::string& what) {
    ASSERT_EQ(got.size(), want.size()) << what;
    for (std::size_t k = 0; k < got.size(); ++k) {
      EXPECT_EQ(got[k].code, want[k].code) << what;
      EXPECT_EQ(got[k].cells, want[k].cells) << what;
      EXPECT_NEAR(got[k].true_area_m2, want[k].true_area_m2, 1e-3) << what;
    }
  };
  for (const auto& [path, type, codes] : {std::make_tuple(raw8, RawCodeType::uint8, codes8),
                                          std::make_tuple(raw16, RawCodeType::uint16, codes16)}) {
    ClassAreaAccumulator strips(g, 9u), file(g, 9u);
    strips.add_strip(0, codes);
    add_raw_class_raster(path, spec, type, file);
    same(file.result(), strips.result(), path);
  }
  ClassAreaAccumulator strips(g, 9u), file(g, 9u);
  strips.add_strip(0, codes8);
  add_class_counts_csv(counts, file);
  same(file.result(), strips.result(), counts);

  try {
    add_raw_class_raster(raw8, grid("EPSG:4326", 10, 2, 1, -1, 4, 4), RawCodeType::uint8, file);
    ADD_FAILURE() << "a raw file of 12 bytes read as 16 cells";
  } catch (const Error& e) {
    EXPECT_EQ(e.code(), ErrorCode::parse);
    EXPECT_THAT(e.what(), ::testing::HasSubstr("holds 12 bytes"));
  }
  try {
    add_class_counts_csv(bad, file);
    ADD_FAILURE() << "a counts line without its count was accepted";
  } catch (const Error& e) {
    EXPECT_EQ(e.code(), ErrorCode::parse);
    EXPECT_THAT(e.what(), ::testing::HasSubstr(bad + " line 3"));
  }
  EXPECT_THROW(add_class_counts_csv(temp_path("missing.csv"), file), Error);
  for (const std::string& path : {raw8, raw16, counts, bad}) std::remove(path.c_str());
}

// Class areas through the command: the raster of ClassAreas.GeographicRasterAgainstHandSums as raw uint8 codes and as
// counts per (row, class); the hand sums come from the plain closed form (Snyder 1987 eq. 3-12).
TEST_F(CellsCommand, ClassAreasFromRawAndCounts) {
  const std::string raw = temp_path("codes.raw"), counts = temp_path("counts.csv");
  {
    std::ofstream f(raw, std::ios::binary);
    const unsigned char codes[12] = {1, 1, 2, 7, 2, 2, 2, 7, 1, 9, 9, 9};
    f.write(reinterpret_cast<const char*>(codes), 12);
    std::ofstream c(counts, std::ios::binary);
    c << "row,class,count\n0,1,2\n0,2,1\n0,7,1\n1,2,3\n1,7,1\n2,1,1\n2,9,3\n";
  }
  const double a12 = t::quadrangle_area_m2(t::wgs84, 1, 2, 1);
  const double a01 = t::quadrangle_area_m2(t::wgs84, 0, 1, 1);
  const double a10s = t::quadrangle_area_m2(t::wgs84, -1, 0, 1);
  const std::map<std::string, double> expected = {{"1", 2 * a12 + a10s}, {"2", a12 + 3 * a01}, {"7", a12 + a01}};
  const std::map<std::string, std::string> expected_cells = {{"1", "3"}, {"2", "4"}, {"7", "2"}};
  const std::string grid_args = "cells --grid-crs EPSG:4326 --origin 10,2 --pixel 1,-1 --size 4,3 --nodata 9 ";
  for (const std::string& input : {raw, counts}) {
    const CommandRun r = run(grid_args + "--classes " + input);
    ASSERT_EQ(r.status, 0) << r.err;
    const auto rows = parse_csv(r.out);
    ASSERT_EQ(rows.size(), 4u) << r.out;
    EXPECT_EQ(rows[0], (std::vector<std::string>{"class", "cells", "true_area_m2", "naive_area_m2", "difference_m2",
                                                  "difference_pct"}));
    for (std::size_t k = 1; k < rows.size(); ++k) {
      const std::string& code = rows[k][0];
      ASSERT_TRUE(expected.count(code)) << code;
      EXPECT_EQ(rows[k][1], expected_cells.at(code));
      EXPECT_NEAR(std::stod(rows[k][2]), expected.at(code), 0.01) << code;
      EXPECT_NEAR(std::stod(rows[k][4]), std::stod(rows[k][3]) - expected.at(code), 0.01) << code;
    }
  }
  // A raw raster of the wrong size, and counts for a projected grid, are refused.
  EXPECT_EQ(run("cells --grid-crs EPSG:4326 --origin 10,2 --pixel 1,-1 --size 4,4 --classes " + raw).status, 2);
  EXPECT_EQ(run("cells --grid-crs EPSG:6933 --origin 0,0 --pixel 1000,-1000 --size 4,3 --classes " + counts).status,
            2);
  std::remove(raw.c_str());
  std::remove(counts.c_str());
}

// uint16 codes on an equal-area grid: true = naive (equal-area guarantee, common practice).
TEST_F(CellsCommand, Uint16CodesOnAnEqualAreaGrid) {
  const std::string raw = temp_path("codes16.raw");
  {
    std::ofstream f(raw, std::ios::binary);
    const unsigned char le[8] = {0x2C, 0x01, 0x2C, 0x01, 0x2D, 0x01, 0x2C, 0x01};  // 300, 300, 301, 300
    f.write(reinterpret_cast<const char*>(le), 8);
  }
  const CommandRun r = run("cells --grid-crs EPSG:6933 --origin 0,3000000 --pixel 500,-500 --size 2,2 --class-type uint16 "
                    "--classes " + raw);
  std::remove(raw.c_str());
  ASSERT_EQ(r.status, 0) << r.err;
  const auto rows = parse_csv(r.out);
  ASSERT_EQ(rows.size(), 3u);
  EXPECT_EQ(rows[1][0], "300");
  EXPECT_EQ(rows[1][1], "3");
  EXPECT_NEAR(std::stod(rows[1][2]) / 750000, 1, 1e-9);
  EXPECT_EQ(rows[2][0], "301");
  EXPECT_NEAR(std::stod(rows[2][2]) / 250000, 1, 1e-9);
}

#ifdef GRIDTRUTH_WITH_GDAL
/// Writes a one-band GeoTIFF through GDAL: north-up geotransform, EPSG CRS, optional nodata.
void write_geotiff(const std::string& path, GDALDataType type, int epsg, const double geotransform[6], int cols,
                   int rows, const std::vector<double>& values, std::optional<double> nodata) {
  GDALAllRegister();
  GDALDriverH driver = GDALGetDriverByName("GTiff");
  ASSERT_NE(driver, nullptr);
  GDALDatasetH ds = GDALCreate(driver, path.c_str(), cols, rows, 1, type, nullptr);
  ASSERT_NE(ds, nullptr);
  double gt[6];
  std::copy(geotransform, geotransform + 6, gt);
  GDALSetGeoTransform(ds, gt);
  OGRSpatialReferenceH srs = OSRNewSpatialReference(nullptr);
  OSRImportFromEPSG(srs, epsg);
  GDALSetSpatialRef(ds, srs);
  OSRDestroySpatialReference(srs);
  GDALRasterBandH band = GDALGetRasterBand(ds, 1);
  if (nodata) GDALSetRasterNoDataValue(band, *nodata);
  std::vector<double> copy = values;
  ASSERT_EQ(GDALRasterIO(band, GF_Write, 0, 0, cols, rows, copy.data(), cols, rows, GDT_Float64, 0, 0), CE_None);
  GDALClose(ds);
}

// A GeoTIFF carries its own grid (geotransform, CRS, size) and nodata: the raster of
// ClassAreas.GeographicRasterAgainstHandSums gives the same hand sums (Snyder 1987 eq. 3-12) with no grid options.
TEST_F(CellsCommand, GeoTiffClassesTakeTheFilesGrid) {
  const std::string tif = temp_path("classes.tif");
  const double gt[6] = {10, 1, 0, 2, 0, -1};
  write_geotiff(tif, GDT_Byte, 4326, gt, 4, 3, {1, 1, 2, 7, 2, 2, 2, 7, 1, 9, 9, 9}, 9.0);
  const CommandRun r = run("cells --classes " + tif);
  ASSERT_EQ(r.status, 0) << r.err;
  const auto rows = parse_csv(r.out);
  ASSERT_EQ(rows.size(), 4u) << r.out;
  const double a12 = t::quadrangle_area_m2(t::wgs84, 1, 2, 1);
  const double a01 = t::quadrangle_area_m2(t::wgs84, 0, 1, 1);
  const double a10s = t::quadrangle_area_m2(t::wgs84, -1, 0, 1);
  EXPECT_EQ(rows[1][0], "1");
  EXPECT_EQ(rows[1][1], "3");
  EXPECT_NEAR(std::stod(rows[1][2]), 2 * a12 + a10s, 0.01);
  EXPECT_EQ(rows[2][0], "2");
  EXPECT_NEAR(std::stod(rows[2][2]), a12 + 3 * a01, 0.01);
  EXPECT_EQ(rows[3][0], "7");
  EXPECT_NEAR(std::stod(rows[3][2]), a12 + a01, 0.01);
  // A grid option overrides the file: --nodata 2 leaves class 2 out and counts the 9s.
  const CommandRun r2 = run("cells --nodata 2 --classes " + tif);
  ASSERT_EQ(r2.status, 0) << r2.err;
  EXPECT_THAT(r2.out, ::testing::HasSubstr("\n9,3,"));
  EXPECT_THAT(r2.out, ::testing::Not(::testing::HasSubstr("\n2,")));
  std::remove(tif.c_str());
}

// A UInt16 GeoTIFF in an equal-area CRS (EPSG:6933): true = naive (equal-area guarantee, common practice); a Float32
// raster holds no class codes and is refused with status 2.
TEST_F(CellsCommand, GeoTiffProjectedAndRefusals) {
  const std::string tif = temp_path("ease.tif"), flt = temp_path("float.tif");
  const double gt[6] = {0, 500, 0, 3000000, 0, -500};
  write_geotiff(tif, GDT_UInt16, 6933, gt, 2, 2, {300, 300, 301, 300}, std::nullopt);
  const CommandRun r = run("cells --classes " + tif);
  ASSERT_EQ(r.status, 0) << r.err;
  const auto rows = parse_csv(r.out);
  ASSERT_EQ(rows.size(), 3u) << r.out;
  EXPECT_EQ(rows[1][0], "300");
  EXPECT_NEAR(std::stod(rows[1][2]) / 750000, 1, 1e-9);
  EXPECT_NEAR(std::stod(rows[2][2]) / 250000, 1, 1e-9);
  write_geotiff(flt, GDT_Float32, 6933, gt, 2, 2, {1.5, 2, 3, 4}, std::nullopt);
  const CommandRun bad = run("cells --classes " + flt);
  EXPECT_EQ(bad.status, 2);
  EXPECT_THAT(bad.err, ::testing::HasSubstr("Float32"));
  EXPECT_EQ(run("cells --classes " + temp_path("missing.tif")).status, 2);
  std::remove(tif.c_str());
  std::remove(flt.c_str());
}
#endif

}  // namespace
