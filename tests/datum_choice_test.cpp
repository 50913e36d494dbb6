// The datum transformation per feature equals PROJ's own default for the feature's extent (issue 14 item 4):
// proj_create_crs_to_crs with the feature's bounding box as area of interest, applied by proj_trans, is the
// reference (PROJ 9 C API, https://proj.org/en/stable/development/reference/functions.html). Also --datum-op
// pinning, the missing-grid warning, and the "looks projected" hint with its capped problem list.
#include <proj.h>

#include <cmath>
#include <memory>
#include <set>
#include <string>
#include <vector>

#include <gmock/gmock.h>
#include <gtest/gtest.h>

#include "gridtruth/audit.hpp"
#include "gridtruth/error.hpp"
#include "support.hpp"

namespace gridtruth {
namespace {

using ::testing::HasSubstr;
using ::testing::StartsWith;

struct ContextDeleter {
  void operator()(PJ_CONTEXT* c) const { proj_context_destroy(c); }
};
struct PjDeleter {
  void operator()(PJ* p) const { proj_destroy(p); }
};
using Context = std::unique_ptr<PJ_CONTEXT, ContextDeleter>;
using Pj = std::unique_ptr<PJ, PjDeleter>;

AuditOptions options(const std::string& source, const std::string& target, const std::string& datum_op = "") {
  AuditOptions o;
  o.source_crs = source;
  o.target_crs = target;
  o.datum_operation = datum_op;
  return o;
}

/// What PROJ itself does for a feature: the operation proj_create_crs_to_crs picks with the feature's bounding
/// box as area of interest (its name, from proj_trans_get_last_used_operation at the box centre) and the grid
/// area of the projected vertices (shoelace formula about the first vertex; the audit's G joins projected
/// vertices by straight lines).
struct ProjDefault {
  std::string operation;
  double grid_area_m2 = 0;
};

ProjDefault proj_default(const std::string& source, const std::string& target, const Path& ring) {
  Context ctx(proj_context_create());
  proj_context_set_enable_network(ctx.get(), 0);
  double west = 1e9, south = 1e9, east = -1e9, north = -1e9;
  for (const Coord& c : ring) {
    west = std::min(west, c.x), east = std::max(east, c.x), south = std::min(south, c.y), north = std::max(north, c.y);
  }
  PJ_AREA* area = proj_area_create();
  proj_area_set_bbox(area, west, south, east, north);
  Pj raw(proj_create_crs_to_crs(ctx.get(), source.c_str(), target.c_str(), area));
  proj_area_destroy(area);
  Pj op(raw ? proj_normalize_for_visualization(ctx.get(), raw.get()) : nullptr);
  EXPECT_TRUE(op) << proj_context_errno_string(ctx.get(), proj_context_errno(ctx.get()));
  ProjDefault out;
  if (!op) return out;
  proj_trans(op.get(), PJ_FWD, proj_coord((west + east) / 2, (south + north) / 2, 0, 0));
  if (Pj used{proj_trans_get_last_used_operation(op.get())}) out.operation = proj_get_name(used.get());
  // Normalising for longitude-latitude order adds this first step to PROJ's name (it changes no coordinate).
  const std::string swap = "axis order change (2D) + ";
  if (out.operation.compare(0, swap.size(), swap) == 0) out.operation.erase(0, swap.size());
  std::vector<Coord> xy;
  for (const Coord& c : ring) {
    // All vertices through the operation chosen for the box, as one feature is transformed by one operation.
    const PJ_COORD p = proj_trans(op.get(), PJ_FWD, proj_coord(c.x, c.y, 0, 0));
    xy.push_back({p.xy.x, p.xy.y});
  }
  double twice = 0;
  for (std::size_t i = 0; i + 1 < xy.size(); ++i) {
    twice += (xy[i].x - xy[0].x) * (xy[i + 1].y - xy[0].y) - (xy[i + 1].x - xy[0].x) * (xy[i].y - xy[0].y);
  }
  out.grid_area_m2 = std::abs(twice) / 2;  // both targets below are in metres
  return out;
}

struct Place {
  const char* state;
  double lon, lat;
};
// Small squares (0.05°) in different states of the United States, inside NAD27's areas (EPSG database).
const Place places[] = {{"Iowa", -93.7, 41.6},      {"Minnesota", -93.4, 46.5}, {"Louisiana", -92.9, 30.1},
                        {"Missouri", -92.5, 38.5}, {"Texas", -95.4, 29.8},     {"Arkansas", -92.3, 34.7}};

void expect_proj_default(const std::string& source, const std::string& target) {
  const Auditor auditor(options(source, target));
  std::set<std::string> chosen;
  for (const Place& p : places) {
    const Path ring = test::box(p.lon, p.lat, 0.05, 0.05);
    const AuditResult r = auditor.audit(Geometry::polygon(ring));
    ASSERT_EQ(r.status, Status::ok) << p.state << ": " << r.message;
    ASSERT_TRUE(r.datum_operation.has_value()) << p.state;
    const DatumOperation& used = auditor.datum_operations().at(*r.datum_operation);
    const ProjDefault want = proj_default(source, target, ring);
    EXPECT_EQ(used.name, want.operation) << p.state;
    // The grid figure is PROJ's own computation with that operation (rounding of metre coordinates only).
    EXPECT_NEAR(r.area->grid, want.grid_area_m2, 1e-6) << p.state << " with " << used.name;
    chosen.insert(used.name);
  }
  std::cout << "[ choice   ] " << source << " -> " << target << ": " << chosen.size() << " distinct operations\n";
  // Several regional operations, not one continent-wide one for every state.
  EXPECT_GE(chosen.size(), 2u);
}

TEST(DatumChoice, EachFeatureGetsProjsDefaultForItsExtentIntoANad27Grid) {
  expect_proj_default("EPSG:4326", "EPSG:26715");
}

TEST(DatumChoice, EachFeatureGetsProjsDefaultForItsExtentFromNad27) { expect_proj_default("EPSG:4267", "EPSG:32615"); }

TEST(DatumChoice, CandidatesListEveryOperationWithItsGrids) {
  const Auditor auditor(options("EPSG:4326", "EPSG:26715"));
  const auto& ops = auditor.datum_operations();
  ASSERT_FALSE(ops.empty());
  std::size_t usable = 0;
  for (const DatumOperation& d : ops) {
    EXPECT_FALSE(d.name.empty());
    EXPECT_EQ(d.grids_available, d.missing_grids.empty()) << d.name;
    if (d.usable) {
      ++usable;
      EXPECT_TRUE(d.grids_available) << d.name;
      EXPECT_THAT(d.proj_string, StartsWith("+proj=pipeline")) << d.name;
    }
  }
  EXPECT_GE(usable, 1u);
  // The Helmert "NAD27 to WGS 84 (3)" of EPSG's database (North America, 20 m) needs no grid.
  const auto three = std::find_if(ops.begin(), ops.end(), [](const DatumOperation& d) {
    return d.name.find("NAD27 to WGS 84 (3)") != std::string::npos;
  });
  ASSERT_NE(three, ops.end());
  EXPECT_TRUE(three->usable);
  ASSERT_TRUE(three->accuracy_m.has_value());
  EXPECT_EQ(*three->accuracy_m, 20.0);  // EPSG dataset, transformation 1172: accuracy 20 m
  EXPECT_TRUE(Auditor(options("EPSG:4326", "EPSG:32632")).datum_operations().empty());  // identity
}

TEST(DatumChoice, AMissingBetterGridIsNamedWithHowToGetIt) {
  const Auditor auditor(options("EPSG:4326", "EPSG:26715"));
  const auto& ops = auditor.datum_operations();
  const auto conus = std::find_if(ops.begin(), ops.end(), [](const DatumOperation& d) {
    return d.missing_grids.size() == 1 && d.missing_grids[0] == "us_noaa_conus.tif";
  });
  if (conus == ops.end()) GTEST_SKIP() << "us_noaa_conus.tif is installed here: no missing-grid warning to give";
  const AuditResult r = auditor.audit(Geometry::polygon(test::box(-93.7, 41.6, 0.05, 0.05)));
  ASSERT_TRUE(r.datum_operation.has_value());
  const std::vector<std::string> warnings = auditor.datum_warnings({*r.datum_operation});
  ASSERT_EQ(warnings.size(), 1u);
  EXPECT_THAT(warnings[0], HasSubstr("us_noaa_conus.tif"));
  EXPECT_THAT(warnings[0], HasSubstr("projsync --file us_noaa_conus.tif"));
  EXPECT_THAT(warnings[0], HasSubstr("PROJ_NETWORK=ON"));
}

TEST(DatumChoice, PinnedDatabaseOperationIsUsedForEveryFeature) {
  // EPSG:1173 is "NAD27 to WGS 84 (4)" (EPSG dataset). The reference: PROJ's own EPSG:1173, inverted, then the
  // NAD27 / UTM 15N conversion, both from PROJ directly.
  const Auditor auditor(options("EPSG:4326", "EPSG:26715", "EPSG:1173"));
  Context ctx(proj_context_create());
  Pj datum(proj_create(ctx.get(), "urn:ogc:def:coordinateOperation:EPSG::1173"));
  ASSERT_TRUE(datum);
  Pj datum_n(proj_normalize_for_visualization(ctx.get(), datum.get()));
  Pj utm_raw(proj_create_crs_to_crs(ctx.get(), "EPSG:4267", "EPSG:26715", nullptr));
  ASSERT_TRUE(datum_n && utm_raw);
  Pj utm(proj_normalize_for_visualization(ctx.get(), utm_raw.get()));
  ASSERT_TRUE(utm);
  for (const Place& p : places) {
    const Path ring = test::box(p.lon, p.lat, 0.05, 0.05);
    const AuditResult r = auditor.audit(Geometry::polygon(ring));
    ASSERT_EQ(r.status, Status::ok) << r.message;
    ASSERT_TRUE(r.datum_operation.has_value());
    EXPECT_THAT(auditor.datum_operations()[*r.datum_operation].name, HasSubstr("NAD27 to WGS 84 (4)"));
    std::vector<Coord> xy;
    for (const Coord& c : ring) {
      const PJ_COORD nad27 = proj_trans(datum_n.get(), PJ_INV, proj_coord(c.x, c.y, 0, 0));
      const PJ_COORD e = proj_trans(utm.get(), PJ_FWD, nad27);
      xy.push_back({e.xy.x, e.xy.y});
    }
    double twice = 0;
    for (std::size_t i = 0; i + 1 < xy.size(); ++i) {
      twice += (xy[i].x - xy[0].x) * (xy[i + 1].y - xy[0].y) - (xy[i + 1].x - xy[0].x) * (xy[i].y - xy[0].y);
    }
    // Two evaluation orders of the same operation (two PROJ objects here, one pipeline in the audit): rounding
    // only, 1e-12 relative (double precision of 10⁶ m coordinates, common practice).
    EXPECT_NEAR(r.area->grid, std::abs(twice) / 2, 1e-12 * r.area->grid) << p.state;
  }
}

TEST(DatumChoice, PinsThatDoNotTransformBetweenTheCrssAreRefused) {
  // EPSG:1188 is "NAD83 to WGS 84 (1)": no step of any NAD27 candidate.
  try {
    Auditor a(options("EPSG:4326", "EPSG:26715", "EPSG:1188"));
    ADD_FAILURE() << "accepted";
  } catch (const Error& e) {
    EXPECT_EQ(e.code(), ErrorCode::no_transformation);
    EXPECT_THAT(e.what(), HasSubstr("does not transform"));
  }
  // A pipeline into the wrong UTM zone lands hundreds of kilometres from PROJ's operation.
  const std::string zone16 =
      "+proj=pipeline +step +proj=unitconvert +xy_in=deg +xy_out=rad +step +proj=utm +zone=16 +ellps=clrk66";
  EXPECT_THROW(Auditor(options("EPSG:4326", "EPSG:26715", zone16)), Error);
  // The same pipeline into zone 15 is a ballpark (no shift, about 200 m off) but transforms between them.
  const std::string zone15 =
      "+proj=pipeline +step +proj=unitconvert +xy_in=deg +xy_out=rad +step +proj=utm +zone=15 +ellps=clrk66";
  const Auditor pinned(options("EPSG:4326", "EPSG:26715", zone15));
  const AuditResult r = pinned.audit(Geometry::polygon(test::box(-93.7, 41.6, 0.05, 0.05)));
  EXPECT_EQ(r.status, Status::ok) << r.message;
  EXPECT_FALSE(r.datum_operation.has_value());
  EXPECT_THROW(Auditor(options("EPSG:4326", "EPSG:26715", "+proj=utm +zone=15 +ellps=clrk66")), Error);  // radians
}

TEST(Plausibility, ProjectedCoordinatesReadAsDegreesGetOneHintAndAShortMessage) {
  // Metres of a UTM zone read as longitude, latitude: every vertex is beyond ±360°/±90° (degree ranges: common
  // practice), two problems per vertex.
  Path ring;
  for (int i = 0; i < 200; ++i) {
    const double t = 2 * M_PI * i / 200;
    ring.push_back({500000 + 1000 * std::cos(t), 4000000 + 1000 * std::sin(t)});
  }
  ring.push_back(ring.front());
  const Geometry g = Geometry::polygon(ring);
  EXPECT_TRUE(looks_projected(g));
  EXPECT_FALSE(looks_projected(Geometry::polygon(test::box(9, 45, 1, 1))));
  const Auditor auditor(options("EPSG:4326", "EPSG:32632"));
  const AuditResult r = auditor.audit(g);
  EXPECT_EQ(r.status, Status::invalid);
  EXPECT_THAT(r.message, StartsWith(looks_projected_text));
  const std::size_t problems = validate(g).size();
  EXPECT_EQ(problems, 2 * ring.size());  // both ranges fail at every vertex, the closing one included
  EXPECT_THAT(r.message, HasSubstr("; and " + std::to_string(problems - 3) + " more"));
  EXPECT_LT(r.message.size(), 400u);
  // validate()'s full list stays available to callers.
  EXPECT_EQ(describe(validate(g)).find("and 3"), std::string::npos);
}

}  // namespace
}  // namespace gridtruth
