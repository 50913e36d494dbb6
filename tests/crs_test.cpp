// CRS resolution: every form PROJ accepts, the facts gridtruth needs (kind, ellipsoid, base CRS, linear unit in
// metres, area of use), clear errors for unknown or unsupported CRSs, and what the Auditor reports about its CRSs.
#include "gridtruth/crs.hpp"

#include <GeographicLib/TransverseMercatorExact.hpp>
#include <gmock/gmock.h>
#include <gtest/gtest.h>

#include <cmath>
#include <string>

#include "gridtruth/audit.hpp"
#include "gridtruth/error.hpp"
#include "support.hpp"

namespace gridtruth {
namespace {

using ::testing::AnyOf;
using ::testing::HasSubstr;

// The US survey foot is exactly 1200/3937 m (US Federal Register 1959; NIST SP 811 / NGS; common practice). The
// EPSG dataset stores it as 0.304800609601219 (15 significant digits): tolerance 1e-15 m.
constexpr double us_survey_foot_m = 1200.0 / 3937.0;
// The international foot is exactly 0.3048 m (common practice).
constexpr double international_foot_m = 0.3048;

// Inputs in other encodings (produced once with projinfo 9.1 from the PROJ strings / EPSG codes named beside
// them; the tests check what describe_crs reads out of them, not these texts).
// "+proj=lcc +lat_1=49 +lat_2=44 +lat_0=46.5 +lon_0=3 +x_0=700000 +y_0=6600000 +ellps=GRS80 +units=us-ft"
const char* const lcc_us_feet_projjson =
    R"gt({"$schema":"https://proj.org/schemas/v0.5/projjson.schema.json","type":"ProjectedCRS","name":"unknown","base_c)gt"
    R"gt(rs":{"name":"unknown","datum":{"type":"GeodeticReferenceFrame","name":"Unknown based on GRS80 ellipsoid","elli)gt"
    R"gt(psoid":{"name":"GRS 1980","semi_major_axis":6378137,"inverse_flattening":298.257222101,"id":{"authority":"EPSG)gt"
    R"gt(","code":7019}}},"coordinate_system":{"subtype":"ellipsoidal","axis":[{"name":"Longitude","abbreviation":"lon")gt"
    R"gt(,"direction":"east","unit":"degree"},{"name":"Latitude","abbreviation":"lat","direction":"north","unit":"degre)gt"
    R"gt(e"}]}},"conversion":{"name":"unknown","method":{"name":"Lambert Conic Conformal (2SP)","id":{"authority":"EPSG)gt"
    R"gt(","code":9802}},"parameters":[{"name":"Latitude of false origin","value":46.5,"unit":"degree","id":{"authority)gt"
    R"gt(":"EPSG","code":8821}},{"name":"Longitude of false origin","value":3,"unit":"degree","id":{"authority":"EPSG",)gt"
    R"gt("code":8822}},{"name":"Latitude of 1st standard parallel","value":49,"unit":"degree","id":{"authority":"EPSG",)gt"
    R"gt("code":8823}},{"name":"Latitude of 2nd standard parallel","value":44,"unit":"degree","id":{"authority":"EPSG",)gt"
    R"gt("code":8824}},{"name":"Easting at false origin","value":2296583.33333333,"unit":{"type":"LinearUnit","name":"U)gt"
    R"gt(S survey foot","conversion_factor":0.304800609601219},"id":{"authority":"EPSG","code":8826}},{"name":"Northing)gt"
    R"gt( at false origin","value":21653500,"unit":{"type":"LinearUnit","name":"US survey foot","conversion_factor":0.3)gt"
    R"gt(04800609601219},"id":{"authority":"EPSG","code":8827}}]},"coordinate_system":{"subtype":"Cartesian","axis":[{")gt"
    R"gt(name":"Easting","abbreviation":"E","direction":"east","unit":{"type":"LinearUnit","name":"US survey foot","con)gt"
    R"gt(version_factor":0.304800609601219,"id":{"authority":"EPSG","code":9003}}},{"name":"Northing","abbreviation":"N)gt"
    R"gt(","direction":"north","unit":{"type":"LinearUnit","name":"US survey foot","conversion_factor":0.30480060960121)gt"
    R"gt(9,"id":{"authority":"EPSG","code":9003}}}]}})gt";

// EPSG:2227 as WKT1 (GDAL flavour).
const char* const california_3_wkt1 =
    R"gt(PROJCS["NAD83 / California zone 3 (ftUS)",GEOGCS["NAD83",DATUM["North_American_Datum_1983",SPHEROID["GRS 1980")gt"
    R"gt(,6378137,298.257222101,AUTHORITY["EPSG","7019"]],AUTHORITY["EPSG","6269"]],PRIMEM["Greenwich",0,AUTHORITY["EPS)gt"
    R"gt(G","8901"]],UNIT["degree",0.0174532925199433,AUTHORITY["EPSG","9122"]],AUTHORITY["EPSG","4269"]],PROJECTION["L)gt"
    R"gt(ambert_Conformal_Conic_2SP"],PARAMETER["latitude_of_origin",36.5],PARAMETER["central_meridian",-120.5],PARAMET)gt"
    R"gt(ER["standard_parallel_1",38.4333333333333],PARAMETER["standard_parallel_2",37.0666666666667],PARAMETER["false_)gt"
    R"gt(easting",6561666.667],PARAMETER["false_northing",1640416.667],UNIT["US survey foot",0.304800609601219,AUTHORIT)gt"
    R"gt(Y["EPSG","9003"]],AXIS["Easting",EAST],AXIS["Northing",NORTH],AUTHORITY["EPSG","2227"]])gt";


// A hand-written WKT2:2019 CRS with no identifier: Transverse Mercator on GRS 1980, λ0 = 15°E, k0 = 1.
const char* const custom_tm_wkt2 =
    R"gt(PROJCRS["Scenario grid TM 15E",BASEGEOGCRS["Scenario geographic",DATUM["Scenario datum",)gt"
    R"gt(ELLIPSOID["GRS 1980",6378137,298.257222101,LENGTHUNIT["metre",1]]],)gt"
    R"gt(PRIMEM["Greenwich",0,ANGLEUNIT["degree",0.0174532925199433]]],)gt"
    R"gt(CONVERSION["TM 15E",METHOD["Transverse Mercator",ID["EPSG",9807]],)gt"
    R"gt(PARAMETER["Latitude of natural origin",0,ANGLEUNIT["degree",0.0174532925199433]],)gt"
    R"gt(PARAMETER["Longitude of natural origin",15,ANGLEUNIT["degree",0.0174532925199433]],)gt"
    R"gt(PARAMETER["Scale factor at natural origin",1,SCALEUNIT["unity",1]],)gt"
    R"gt(PARAMETER["False easting",500000,LENGTHUNIT["metre",1]],)gt"
    R"gt(PARAMETER["False northing",0,LENGTHUNIT["metre",1]]],)gt"
    R"gt(CS[Cartesian,2],AXIS["easting (X)",east,ORDER[1],LENGTHUNIT["metre",1]],)gt"
    R"gt(AXIS["northing (Y)",north,ORDER[2],LENGTHUNIT["metre",1]]])gt";

void expect_wgs84(const Ellipsoid& e) {
  EXPECT_EQ(e.a_m, 6378137.0);
  EXPECT_NEAR(e.f, 1 / 298.257223563, 1e-15);
}

void expect_grs80(const Ellipsoid& e) {
  EXPECT_EQ(e.a_m, 6378137.0);
  EXPECT_NEAR(e.f, 1 / 298.257222101, 1e-15);
}

/// Runs `fn`, expects gridtruth::Error with `code` and a message containing `needle`.
template <class Fn>
void expect_error(Fn fn, ErrorCode code, const std::string& needle) {
  try {
    fn();
    ADD_FAILURE() << "no exception; expected " << to_string(code) << " naming '" << needle << "'";
  } catch (const Error& e) {
    EXPECT_EQ(e.code(), code) << to_string(e.code()) << ": " << e.what();
    EXPECT_THAT(e.what(), HasSubstr(needle));
  } catch (const std::exception& e) {
    ADD_FAILURE() << "wrong exception type: " << e.what();
  }
}

AuditOptions make_options(const std::string& source, const std::string& target) {
  AuditOptions o;
  o.source_crs = source;
  o.target_crs = target;
  return o;
}

// EPSG dataset: 32632 WGS 84 / UTM zone 32N, area of use 6°E-12°E, 0°N-84°N.
TEST(DescribeCrs, EpsgProjectedUtm) {
  const CrsInfo c = describe_crs("EPSG:32632");
  EXPECT_EQ(c.definition, "EPSG:32632");
  EXPECT_EQ(c.kind, CrsKind::projected);
  EXPECT_EQ(c.name, "WGS 84 / UTM zone 32N");
  EXPECT_EQ(c.id, "EPSG:32632");
  expect_wgs84(c.ellipsoid);
  EXPECT_THAT(c.datum_name, HasSubstr("World Geodetic System 1984"));
  EXPECT_EQ(c.base_geographic_name, "WGS 84");
  EXPECT_EQ(c.linear_unit_name, "metre");
  EXPECT_EQ(c.linear_unit_m, 1.0);
  ASSERT_TRUE(c.area_of_use.has_value());
  EXPECT_NEAR(c.area_of_use->west_deg, 6.0, 1e-9);
  EXPECT_NEAR(c.area_of_use->east_deg, 12.0, 1e-9);
  EXPECT_NEAR(c.area_of_use->south_deg, 0.0, 1e-9);
  EXPECT_NEAR(c.area_of_use->north_deg, 84.0, 1e-9);
}

TEST(DescribeCrs, EpsgGeographic) {
  const CrsInfo c = describe_crs("EPSG:4326");
  EXPECT_EQ(c.kind, CrsKind::geographic);
  EXPECT_EQ(c.name, "WGS 84");
  EXPECT_EQ(c.id, "EPSG:4326");
  expect_wgs84(c.ellipsoid);
  EXPECT_EQ(c.base_geographic_name, "WGS 84");  // itself
  EXPECT_TRUE(c.linear_unit_name.empty());
}

// EPSG dataset: NAD27 on Clarke 1866 (a = 6 378 206.4 m, b = 6 356 583.8 m); its area of use crosses the
// antimeridian (167.65°E to 47.74°W), which the header encodes as west > east.
TEST(DescribeCrs, Nad27OnClarke1866CrossingTheAntimeridian) {
  const CrsInfo c = describe_crs("EPSG:4267");
  EXPECT_EQ(c.kind, CrsKind::geographic);
  EXPECT_EQ(c.ellipsoid.a_m, 6378206.4);
  EXPECT_NEAR(c.ellipsoid.f, test::clarke1866.f, 1e-12);
  EXPECT_THAT(c.ellipsoid.name, HasSubstr("Clarke 1866"));
  ASSERT_TRUE(c.area_of_use.has_value());
  EXPECT_GT(c.area_of_use->west_deg, c.area_of_use->east_deg);
}

// EPSG:2227 NAD83 / California zone 3 (ftUS).
TEST(DescribeCrs, UsSurveyFootFromEpsg) {
  const CrsInfo c = describe_crs("EPSG:2227");
  EXPECT_EQ(c.kind, CrsKind::projected);
  EXPECT_THAT(c.name, HasSubstr("California zone 3"));
  EXPECT_EQ(c.linear_unit_name, "US survey foot");
  EXPECT_NEAR(c.linear_unit_m, us_survey_foot_m, 1e-15);
  EXPECT_GT(std::abs(c.linear_unit_m - international_foot_m), 5e-7);  // not confused with the international foot
  expect_grs80(c.ellipsoid);
  EXPECT_EQ(c.base_geographic_name, "NAD83");
  ASSERT_TRUE(c.area_of_use.has_value());
  // San Francisco lies inside zone 3.
  EXPECT_LT(c.area_of_use->west_deg, -122.42);
  EXPECT_GT(c.area_of_use->east_deg, -122.42);
  EXPECT_LT(c.area_of_use->south_deg, 37.77);
  EXPECT_GT(c.area_of_use->north_deg, 37.77);
}

TEST(DescribeCrs, Wkt1) {
  const CrsInfo c = describe_crs(california_3_wkt1);
  EXPECT_EQ(c.kind, CrsKind::projected);
  EXPECT_EQ(c.name, "NAD83 / California zone 3 (ftUS)");
  EXPECT_NEAR(c.linear_unit_m, us_survey_foot_m, 1e-15);
  expect_grs80(c.ellipsoid);
  EXPECT_EQ(c.definition, california_3_wkt1);
}

TEST(DescribeCrs, Wkt2WithoutIdentifier) {
  const CrsInfo c = describe_crs(custom_tm_wkt2);
  EXPECT_EQ(c.kind, CrsKind::projected);
  EXPECT_EQ(c.name, "Scenario grid TM 15E");
  EXPECT_TRUE(c.id.empty()) << c.id;
  EXPECT_EQ(c.datum_name, "Scenario datum");
  EXPECT_EQ(c.base_geographic_name, "Scenario geographic");
  expect_grs80(c.ellipsoid);
  EXPECT_EQ(c.linear_unit_m, 1.0);
}

TEST(DescribeCrs, ProjJsonInUsSurveyFeet) {
  const CrsInfo c = describe_crs(lcc_us_feet_projjson);
  EXPECT_EQ(c.kind, CrsKind::projected);
  EXPECT_TRUE(c.id.empty()) << c.id;
  expect_grs80(c.ellipsoid);
  EXPECT_EQ(c.linear_unit_name, "US survey foot");
  EXPECT_NEAR(c.linear_unit_m, us_survey_foot_m, 1e-15);
}

TEST(DescribeCrs, ProjStringsWithAndWithoutTypeCrs) {
  const CrsInfo utm = describe_crs("+proj=utm +zone=32 +datum=WGS84");  // "+type=crs" added by gridtruth
  EXPECT_EQ(utm.kind, CrsKind::projected);
  expect_wgs84(utm.ellipsoid);
  EXPECT_EQ(utm.linear_unit_m, 1.0);

  const CrsInfo ll = describe_crs("+proj=longlat +ellps=clrk66 +no_defs +type=crs");
  EXPECT_EQ(ll.kind, CrsKind::geographic);
  EXPECT_EQ(ll.ellipsoid.a_m, 6378206.4);
  EXPECT_NEAR(ll.ellipsoid.f, test::clarke1866.f, 1e-12);

  const CrsInfo ft = describe_crs("+proj=tmerc +lon_0=-100 +k=0.9999 +x_0=200000 +ellps=GRS80 +units=ft");
  EXPECT_EQ(ft.kind, CrsKind::projected);
  EXPECT_DOUBLE_EQ(ft.linear_unit_m, international_foot_m);

  const CrsInfo usft = describe_crs("+proj=tmerc +lon_0=-100 +k=0.9999 +ellps=GRS80 +units=us-ft +type=crs");
  EXPECT_NEAR(usft.linear_unit_m, us_survey_foot_m, 1e-15);

  // The sphere: f = 0.
  const CrsInfo sphere = describe_crs("+proj=merc +R=6371000 +type=crs");
  EXPECT_EQ(sphere.ellipsoid.a_m, 6371000.0);
  EXPECT_EQ(sphere.ellipsoid.f, 0.0);
}

TEST(DescribeCrs, GeocentricAndCompound) {
  EXPECT_EQ(describe_crs("EPSG:4978").kind, CrsKind::geocentric);
  // EPSG:7405 OSGB36 / British National Grid + ODN height: described by its horizontal part (Airy 1830,
  // a = 6 377 563.396 m, EPSG dataset).
  const CrsInfo c = describe_crs("EPSG:7405");
  EXPECT_EQ(c.kind, CrsKind::projected);
  EXPECT_EQ(c.ellipsoid.a_m, 6377563.396);
  EXPECT_EQ(c.linear_unit_m, 1.0);
}

TEST(DescribeCrs, UnknownCrsThrowsNamingTheDefinition) {
  for (const std::string bad : {"EPSG:999999", "+proj=nonsense +type=crs", "PROJCRS[\"broken\"", "not a crs at all"})
    expect_error([&] { (void)describe_crs(bad); }, ErrorCode::unknown_crs, bad);
}

TEST(AuditorCrs, GeographicTargetIsUnsupported) {
  expect_error([] { Auditor a(make_options("EPSG:4326", "EPSG:4326")); }, ErrorCode::unsupported_crs, "EPSG:4326");
  expect_error([] { Auditor a(make_options("EPSG:4326", "EPSG:4258")); }, ErrorCode::unsupported_crs, "EPSG:4258");
}

TEST(AuditorCrs, GeocentricSourceIsUnsupported) {
  // A source must be geographic or projected; EPSG:4978 is WGS 84 geocentric (X, Y, Z).
  expect_error([] { Auditor a(make_options("EPSG:4978", "EPSG:32633")); }, ErrorCode::unsupported_crs,
               "EPSG:4978");
}

TEST(AuditorCrs, ProjectedSourceDefaultsToEdgesStraightInItsPlane) {
  // A projected source is taken to its base geographic CRS; its edges default to straight in its own plane.
  const Auditor a(make_options("EPSG:32632", "EPSG:32633"));
  EXPECT_EQ(a.source().kind, gridtruth::CrsKind::projected);
  EXPECT_EQ(a.edges().model, gridtruth::EdgeModel::straight);
  EXPECT_EQ(a.edges().crs, "EPSG:32632");
}

TEST(AuditorCrs, UnknownCrsThrowsNamingIt) {
  expect_error([] { Auditor a(make_options("EPSG:4326", "EPSG:999999")); }, ErrorCode::unknown_crs, "EPSG:999999");
  expect_error([] { Auditor a(make_options("EPSG:888888", "EPSG:32632")); }, ErrorCode::unknown_crs, "EPSG:888888");
}

TEST(AuditorCrs, MissingTargetIsRejected) {
  try {
    Auditor a(make_options("EPSG:4326", ""));
    ADD_FAILURE() << "an empty target CRS was accepted";
  } catch (const Error& e) {
    EXPECT_THAT(e.code(), AnyOf(ErrorCode::invalid_argument, ErrorCode::unknown_crs)) << e.what();
  }
}

TEST(AuditorCrs, ReportsBothCrsAndTheTransformation) {
  const Auditor same(make_options("EPSG:4326", "EPSG:32632"));
  EXPECT_EQ(same.options().target_crs, "EPSG:32632");
  EXPECT_EQ(same.source().kind, CrsKind::geographic);
  EXPECT_EQ(same.target().kind, CrsKind::projected);
  EXPECT_EQ(same.target().id, "EPSG:32632");
  EXPECT_TRUE(same.transform().is_identity);

  const Auditor nad(make_options("EPSG:4267", "EPSG:26915"));  // NAD27 into NAD83 / UTM 15N
  EXPECT_FALSE(nad.transform().is_identity);
  EXPECT_FALSE(nad.transform().name.empty());
  EXPECT_EQ(nad.source().ellipsoid.a_m, 6378206.4);
  expect_grs80(nad.target().ellipsoid);
}

// A custom WKT2 target works end to end: on its central meridian a TM with k0 = 1 has scale 1, and coordinates
// agree with the independent GeographicLib::TransverseMercatorExact (1 mm; both exact within 1° of the meridian).
TEST(AuditorCrs, Wkt2TargetProjectsLikeAnIndependentTransverseMercator) {
  const Auditor auditor(make_options("+proj=longlat +ellps=GRS80 +no_defs +type=crs", custom_tm_wkt2));
  const GeographicLib::TransverseMercatorExact tm(test::grs80.a_m, test::grs80.f, 1.0);
  for (const Coord p : {Coord{15.0, 45.0}, Coord{15.7, 60.2}, Coord{14.1, -20.0}}) {
    double x = 0, y = 0, gamma = 0, k = 0;
    tm.Forward(15.0, p.y, p.x, x, y, gamma, k);
    const Coord xy = auditor.project(p.x, p.y);
    EXPECT_NEAR(xy.x, x + 500000, 1e-3);
    EXPECT_NEAR(xy.y, y, 1e-3);
    EXPECT_NEAR(auditor.factors(p.x, p.y).parallel_scale, k, 1e-8);
  }
}

// SPCS83 California zone 3 (from memory; agrees with the EPSG dataset): origin φ0 = 36.5°N, λ0 = 120.5°W,
// false easting 2 000 000 m = 6 561 666.667 ftUS, false northing 500 000 m = 1 640 416.667 ftUS.
// Auditor::project answers in the CRS's unit; budgets are always in metres. State plane zones are designed to
// keep the scale within 1:10 000 (common practice): a small parcel's errors stay within 100 ppm (length) and
// 200 ppm (area) — a budget left in feet would be off by a factor 3.28 (length) or 10.76 (area).
TEST(AuditorCrs, UsSurveyFeetProjectInFeetMeasureInMetres) {
  const Auditor auditor(make_options("EPSG:4269", "EPSG:2227"));
  EXPECT_NEAR(auditor.target().linear_unit_m, us_survey_foot_m, 1e-15);
  const Coord origin = auditor.project(-120.5, 36.5);
  EXPECT_NEAR(origin.x, 2000000.0 / us_survey_foot_m, 1e-3);
  EXPECT_NEAR(origin.y, 500000.0 / us_survey_foot_m, 1e-3);

  const AuditResult r = auditor.audit(Geometry::polygon(test::box(-122.45, 37.75, 0.01, 0.008)));
  ASSERT_EQ(r.status, Status::ok) << r.message;
  ASSERT_TRUE(r.area.has_value());
  ASSERT_TRUE(r.length.has_value());
  EXPECT_LT(std::abs(r.area->error_ppm), 200.0);
  EXPECT_LT(std::abs(r.length->error_ppm), 100.0);
  const test::RingMeasure truth = test::geodesic_ring(test::box(-122.45, 37.75, 0.01, 0.008), test::grs80);
  EXPECT_NEAR(r.area->reference, truth.area_m2, 1e-9 * truth.area_m2);
}

}  // namespace
}  // namespace gridtruth
