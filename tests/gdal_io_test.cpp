// End-to-end tests of vector data read through GDAL/OGR: the inputs are written here with GDAL's own C API (no
// files from elsewhere), then audited by the gridtruth command.
#include <gmock/gmock.h>
#include <gtest/gtest.h>
#include <stdlib.h>
#include <sys/wait.h>

#include <cmath>
#include <cstdlib>
#include <string>
#include <vector>

#include "test_files.hpp"

#ifdef GRIDTRUTH_WITH_GDAL
#include <gdal.h>
#include <ogr_api.h>
#include <ogr_srs_api.h>
#endif

namespace {

using namespace gridtruth::test_files;
using ::testing::HasSubstr;
using ::testing::Not;

#ifndef GRIDTRUTH_CLI
const std::string cli;
#else
const std::string cli = GRIDTRUTH_CLI;
#endif

struct CliRun {
  int status = -1;
  std::string out, err;
  std::vector<std::vector<std::string>> rows;
};

#ifdef GRIDTRUTH_WITH_GDAL

/// One feature to write: an id attribute, a name attribute and a WKT geometry (empty: no geometry).
struct Item {
  std::string id, name, wkt;
};

/// Writes `items` as layer `layer` of a new (or, for GPKG, existing) data source with GDAL's C API.
void write_layer(const std::string& driver_name, const std::string& path, const std::string& layer,
                 const std::string& crs, const std::vector<Item>& items, bool append = false) {
  GDALAllRegister();
  GDALDriverH driver = GDALGetDriverByName(driver_name.c_str());
  ASSERT_NE(driver, nullptr) << driver_name;
  GDALDatasetH ds = append ? GDALOpenEx(path.c_str(), GDAL_OF_VECTOR | GDAL_OF_UPDATE, nullptr, nullptr, nullptr)
                           : GDALCreate(driver, path.c_str(), 0, 0, 0, GDT_Unknown, nullptr);
  ASSERT_NE(ds, nullptr) << path;
  OGRSpatialReferenceH srs = OSRNewSpatialReference(nullptr);
  ASSERT_EQ(OSRSetFromUserInput(srs, crs.c_str()), OGRERR_NONE);
  OSRSetAxisMappingStrategy(srs, OAMS_TRADITIONAL_GIS_ORDER);
  OGRLayerH l = GDALDatasetCreateLayer(ds, layer.c_str(), srs, wkbUnknown, nullptr);
  ASSERT_NE(l, nullptr);
  for (const char* field : {"id", "name"}) {
    OGRFieldDefnH f = OGR_Fld_Create(field, OFTString);
    OGR_L_CreateField(l, f, TRUE);
    OGR_Fld_Destroy(f);
  }
  for (const Item& item : items) {
    OGRFeatureH f = OGR_F_Create(OGR_L_GetLayerDefn(l));
    OGR_F_SetFieldString(f, 0, item.id.c_str());
    OGR_F_SetFieldString(f, 1, item.name.c_str());
    if (!item.wkt.empty()) {
      OGRGeometryH g = nullptr;
      char* text = const_cast<char*>(item.wkt.c_str());
      ASSERT_EQ(OGR_G_CreateFromWkt(&text, srs, &g), OGRERR_NONE) << item.wkt;
      OGR_F_SetGeometryDirectly(f, g);
    }
    ASSERT_EQ(OGR_L_CreateFeature(l, f), OGRERR_NONE);
    OGR_F_Destroy(f);
  }
  OSRRelease(srs);
  GDALClose(ds);
}

class GdalIoTest : public ::testing::Test {
 protected:
  void SetUp() override {
    if (cli.empty()) GTEST_SKIP() << "the gridtruth executable was not built";
    ASSERT_FALSE(scratch_.dir().empty());
  }
  std::string path(const std::string& name) const { return scratch_.path(name); }

  CliRun audit(const std::vector<std::string>& args) {
    std::string cmd = shell_quote(cli) + " audit";
    for (const auto& a : args) cmd += " " + shell_quote(a);
    cmd += " < /dev/null > " + shell_quote(path("out.csv")) + " 2> " + shell_quote(path("err.txt"));
    const int raw = std::system(cmd.c_str());
    CliRun r;
    r.status = WIFEXITED(raw) ? WEXITSTATUS(raw) : -1;
    r.out = slurp(path("out.csv"));
    r.err = slurp(path("err.txt"));
    r.rows = parse_csv(r.out);
    EXPECT_EQ(r.err.find("Sanitizer"), std::string::npos) << r.err;
    EXPECT_EQ(r.err.find("runtime error:"), std::string::npos) << r.err;
    return r;
  }

  ScratchDir scratch_{"gdal"};
};

// Parcel-sized features inside UTM zone 15N (invented, common practice), one of them a hole-bearing polygon, one
// a line, and one with no geometry (an invalid row, never a dropped feature). Outer rings run clockwise and holes
// counter-clockwise, as a shapefile stores them (ESRI Shapefile Technical Description, July 1998, "Polygon"
// shape type: holes counter-clockwise, the outer ring clockwise), so that every
// container keeps the same vertex order (the bearing error and the edge part follow the order of the vertices).
const std::vector<Item> lonlat_items = {
    {"P-1", "north meadow", "POLYGON ((-95.40 44.10,-95.40 44.1135,-95.375 44.1135,-95.375 44.10,-95.40 44.10))"},
    {"P-2", "fen with island",
     "POLYGON ((-95.30 44.20,-95.30 44.22,-95.27 44.22,-95.27 44.20,-95.30 44.20),"
     "(-95.29 44.205,-95.28 44.205,-95.28 44.21,-95.29 44.205))"},
    {"L-1", "ditch", "LINESTRING (-95.45 44.05,-95.41 44.06,-95.38 44.04)"},
    {"X-1", "record without a shape", ""},
};

std::string geojson_of(const std::vector<Item>& items) {
  std::string s = R"({"type":"FeatureCollection","features":[)";
  for (std::size_t k = 0; k < items.size(); ++k) {
    if (k) s += ",";
    s += R"({"type":"Feature","properties":{"id":")" + items[k].id + R"(","name":")" + items[k].name + "\"},";
    s += "\"geometry\":";
    // The same coordinates as the WKT, written out by hand for the three shapes used.
    if (items[k].id == "P-1")
      s += R"({"type":"Polygon","coordinates":[[[-95.40,44.10],[-95.40,44.1135],[-95.375,44.1135],[-95.375,44.10],[-95.40,44.10]]]})";
    else if (items[k].id == "P-2")
      s += R"({"type":"Polygon","coordinates":[[[-95.30,44.20],[-95.30,44.22],[-95.27,44.22],[-95.27,44.20],[-95.30,44.20]],)"
           R"([[-95.29,44.205],[-95.28,44.205],[-95.28,44.21],[-95.29,44.205]]]})";
    else if (items[k].id == "L-1")
      s += R"({"type":"LineString","coordinates":[[-95.45,44.05],[-95.41,44.06],[-95.38,44.04]]})";
    else
      s += "null";
    s += "}";
  }
  return s + "]}";
}

/// The columns after the id, which every reader must give alike (the message may name the feature differently).
std::vector<std::string> measures(const std::vector<std::string>& row) {
  std::vector<std::string> m(row.begin() + 1, row.end());
  if (m.size() > 2) m[2].clear();  // message
  return m;
}

TEST_F(GdalIoTest, GeoJsonGeoPackageAndShapefileGiveTheSameRows) {
  // One set of features, three containers: the audit depends on the features, not on how they were stored. A
  // shapefile holds one kind of shape besides null shapes (same document, "Organization of the Main File"): the
  // polygons and the record without a shape go there.
  const std::vector<Item> polygons = {lonlat_items[0], lonlat_items[1], lonlat_items[3]};
  spit(path("in.geojson"), geojson_of(lonlat_items));
  write_layer("GPKG", path("in.gpkg"), "parcels", "EPSG:4326", lonlat_items);
  write_layer("ESRI Shapefile", path("in.shp"), "in", "EPSG:4326", polygons);
  const CliRun json = audit({path("in.geojson"), "--crs", "EPSG:32615", "--id-field", "id"});
  const CliRun gpkg = audit({path("in.gpkg"), "--crs", "EPSG:32615", "--id-field", "id"});
  const CliRun shp = audit({path("in.shp"), "--crs", "EPSG:32615", "--id-field", "id"});
  ASSERT_EQ(json.rows.size(), lonlat_items.size() + 1) << json.err;
  ASSERT_EQ(gpkg.rows.size(), json.rows.size()) << gpkg.err;
  ASSERT_EQ(shp.rows.size(), polygons.size() + 1) << shp.err;
  EXPECT_EQ(gpkg.rows[0], json.rows[0]);
  EXPECT_EQ(shp.rows[0], json.rows[0]);
  EXPECT_THAT(gpkg.err, HasSubstr("(gdal)"));
  std::size_t ok_rows = 0;
  for (std::size_t k = 1; k < json.rows.size(); ++k) {
    SCOPED_TRACE(json.rows[k][0]);
    EXPECT_EQ(gpkg.rows[k][0], json.rows[k][0]);
    if (json.rows[k][2] != "ok") continue;
    ++ok_rows;
    EXPECT_EQ(measures(gpkg.rows[k]), measures(json.rows[k]));
    for (std::size_t j = 1; j < shp.rows.size(); ++j)
      if (shp.rows[j][0] == json.rows[k][0]) EXPECT_EQ(measures(shp.rows[j]), measures(json.rows[k]));
  }
  EXPECT_EQ(ok_rows, 3u);
  // The record without a shape is an invalid row that names its FID (GeoPackage FIDs start at 1, shapefile's at
  // 0), in its place.
  EXPECT_EQ(gpkg.rows[4][2], "invalid");
  EXPECT_THAT(gpkg.rows[4][3], HasSubstr("FID 4: no geometry"));
  EXPECT_EQ(shp.rows[3][2], "invalid");
  EXPECT_THAT(shp.rows[3][3], HasSubstr("FID 2: no geometry"));
  EXPECT_EQ(gpkg.status, 1);
}

TEST_F(GdalIoTest, HeightFromZOfA3dGeoPackageIsTheMeanZ) {
  // Issue 14: Z coordinates as ellipsoidal height (--height-from-z). A 3D layer written with GDAL's API; the mean Z
  // of the positions as given is worked by hand (closing vertex included): ring (100, 120, 140, 120, 100) → 116,
  // line (10, 30) → 20. The audit with the height taken from Z equals the audit at that height given by --height,
  // cell for cell; a 2D feature in the same layer is invalid and named.
  write_layer("GPKG", path("terrain.gpkg"), "sites", "EPSG:4326",
              {{"R", "ridge",
                "POLYGON Z ((-93.2 45.0 100,-93.18 45.0 120,-93.18 45.02 140,-93.2 45.02 120,-93.2 45.0 100))"},
               {"L", "lane", "LINESTRING Z (-93.1 45.1 10,-93.05 45.12 30)"},
               {"F", "flat", "LINESTRING (-93.1 45.1,-93.05 45.12)"}});
  const CliRun z = audit({path("terrain.gpkg"), "--crs", "EPSG:32615", "--id-field", "id", "--height-from-z",
                          "--all-digits"});
  ASSERT_EQ(z.rows.size(), 4u) << z.err;
  EXPECT_EQ(z.rows[0].back(), "combined_factor");
  EXPECT_EQ(z.rows[3][2], "invalid");
  EXPECT_THAT(z.rows[3][3], HasSubstr("no position has a Z"));
  const struct {
    std::size_t row;
    const char* height;
  } cases[] = {{1, "116"}, {2, "20"}};
  for (const auto& c : cases) {
    SCOPED_TRACE(z.rows[c.row][0]);
    ASSERT_EQ(z.rows[c.row][2], "ok") << z.rows[c.row][3];
    const CliRun at = audit({path("terrain.gpkg"), "--crs", "EPSG:32615", "--id-field", "id", "--height", c.height,
                             "--all-digits"});
    ASSERT_EQ(at.rows.size(), 4u) << at.err;
    EXPECT_EQ(at.rows[c.row], z.rows[c.row]);
    const CliRun flat = audit({path("terrain.gpkg"), "--crs", "EPSG:32615", "--id-field", "id", "--all-digits"});
    ASSERT_EQ(flat.rows.size(), 4u) << flat.err;
    EXPECT_NE(flat.rows[c.row], z.rows[c.row]);  // the height changed the figures: it was used
  }
}

TEST_F(GdalIoTest, StatePlaneUsSurveyFeetShapefileNeedsNoSourceCrs) {
  // EPSG:2227 (NAD83 / California zone 3, US survey feet). A 1000 ft × 800 ft rectangle audited in its own CRS:
  // the grid area is the planar area in the CRS's unit times (1200/3937 m/ft)² (the US survey foot, NIST
  // Handbook 44 appendix C / Federal Register 24 FR 5348, 1959) -- only if the .prj was read.
  const double x0 = 6050000, y0 = 2100000;
  auto rect = [&](double w, double h) {
    char wkt[256];
    std::snprintf(wkt, sizeof wkt, "POLYGON ((%.1f %.1f,%.1f %.1f,%.1f %.1f,%.1f %.1f,%.1f %.1f))", x0, y0, x0 + w, y0,
                  x0 + w, y0 + h, x0, y0 + h, x0, y0);
    return std::string(wkt);
  };
  write_layer("ESRI Shapefile", path("lots.shp"), "lots", "EPSG:2227", {{"LOT-7", "orchard", rect(1000, 800)}});
  ASSERT_FALSE(slurp(path("lots.prj")).empty()) << "GDAL wrote no .prj";
  const CliRun r = audit({path("lots.shp"), "--crs", "EPSG:2227", "--id-field", "id", "--summary", path("s.json")});
  ASSERT_EQ(r.rows.size(), 2u) << r.err;
  const auto& header = r.rows[0];
  auto col = [&](const std::string& name) {
    for (std::size_t k = 0; k < header.size(); ++k)
      if (header[k] == name) return r.rows[1][k];
    ADD_FAILURE() << "no column " << name;
    return std::string();
  };
  EXPECT_EQ(col("status"), "ok") << col("message");
  const double us_ft_m = 1200.0 / 3937.0;
  EXPECT_NEAR(std::stod(col("grid_area_m2")), 1000 * 800 * us_ft_m * us_ft_m, 1e-6);
  // Without the .prj the coordinates would be taken as degrees: far out of range, an invalid row.
  EXPECT_THAT(r.err, HasSubstr("California zone 3"));
  // Any other reading of the same file with an explicit, equal CRS gives the same row, and no warning.
  const CliRun same = audit({path("lots.shp"), "--crs", "EPSG:2227", "--id-field", "id", "--source-crs", "EPSG:2227"});
  EXPECT_EQ(same.out, r.out);
  EXPECT_THAT(same.err, Not(HasSubstr("warning")));
  // A --source-crs that disagrees with the file is used, with a warning naming both.
  const CliRun other = audit({path("lots.shp"), "--crs", "EPSG:2227", "--id-field", "id", "--source-crs", "EPSG:2228"});
  EXPECT_THAT(other.err, HasSubstr("warning: --source-crs EPSG:2228 overrides the CRS"));
  EXPECT_NE(other.out, r.out);
}

TEST_F(GdalIoTest, GeoJsonCrsMemberOfThe2008SpecificationIsHonoured) {
  // GeoJSON 2008 specification, section 3.1.1: a named CRS. Coordinates are UTM zone 15N eastings and northings;
  // read as longitude and latitude they would be out of range.
  const std::string crs_member = R"("crs":{"type":"name","properties":{"name":"urn:ogc:def:crs:EPSG::26915"}},)";
  const std::string polygon =
      R"({"type":"Polygon","coordinates":[[[370000,4885000],[372000,4885000],[372000,4886500],[370000,4886500],[370000,4885000]]]})";
  spit(path("utm.geojson"), R"({"type":"FeatureCollection",)" + crs_member +
                                R"("features":[{"type":"Feature","id":"U-1","properties":{},"geometry":)" + polygon +
                                "}]}");
  spit(path("utm.csv"),
       "id,wkt\nU-1,\"POLYGON ((370000 4885000,372000 4885000,372000 4886500,370000 4886500,370000 4885000))\"\n");
  const CliRun from_member = audit({path("utm.geojson"), "--crs", "EPSG:26915"});
  const CliRun explicit_crs = audit({path("utm.csv"), "--crs", "EPSG:26915", "--source-crs", "EPSG:26915",
                                  "--id-field", "id"});
  ASSERT_EQ(from_member.rows.size(), 2u) << from_member.err;
  EXPECT_EQ(from_member.rows[1][2], "ok") << from_member.rows[1][3];
  EXPECT_EQ(from_member.out, explicit_crs.out);
  // 2 km × 1.5 km in the CRS's own plane (metres): the grid area is exactly the planar area.
  EXPECT_EQ(from_member.rows[1][14], "3000000") << from_member.rows[0][14];
}

TEST_F(GdalIoTest, LayersAreChosenByNameAndAnAmbiguousSourceIsRefused) {
  write_layer("GPKG", path("two.gpkg"), "wetlands", "EPSG:4326", {lonlat_items[0]});
  write_layer("GPKG", path("two.gpkg"), "uplands", "EPSG:4326", {lonlat_items[1], lonlat_items[2]}, true);
  const CliRun ambiguous = audit({path("two.gpkg"), "--crs", "EPSG:32615"});
  EXPECT_EQ(ambiguous.status, 2);
  EXPECT_THAT(ambiguous.err, HasSubstr("has 2 layers; name one with --layer (its layers: wetlands, uplands)"));
  EXPECT_EQ(ambiguous.out, "");
  const CliRun uplands = audit({path("two.gpkg"), "--crs", "EPSG:32615", "--layer", "uplands", "--id-field", "id"});
  ASSERT_EQ(uplands.rows.size(), 3u) << uplands.err;
  EXPECT_EQ(uplands.rows[1][0], "P-2");
  EXPECT_EQ(uplands.rows[2][0], "L-1");
  const CliRun missing = audit({path("two.gpkg"), "--crs", "EPSG:32615", "--layer", "forest"});
  EXPECT_EQ(missing.status, 2);
  EXPECT_THAT(missing.err, HasSubstr("has no layer \"forest\" (its layers: wetlands, uplands)"));
}

TEST_F(GdalIoTest, AGeoPackageIsNeverReadAsCsv) {
  // Regression (issue 14): a GeoPackage given to the CSV reader gave "CSV header (line 1) has no geometry column".
  write_layer("GPKG", path("parcels.gpkg"), "parcels", "EPSG:4326", {lonlat_items[0]});
  spit(path("renamed.dat"), slurp(path("parcels.gpkg")));  // sniffed by its first bytes, not its name
  const CliRun r = audit({path("renamed.dat"), "--crs", "EPSG:32615"});
  EXPECT_THAT(r.err, Not(HasSubstr("CSV header")));
  ASSERT_EQ(r.rows.size(), 2u) << r.err;
  EXPECT_EQ(r.rows[1][2], "ok");
}

TEST_F(GdalIoTest, AnUnreadableDataSourceExitsTwoWithGdalsReason) {
  spit(path("broken.gpkg"), std::string("SQLite format 3\0garbage", 24));
  const CliRun r = audit({path("broken.gpkg"), "--crs", "EPSG:32615"});
  EXPECT_EQ(r.status, 2);
  EXPECT_THAT(r.err, HasSubstr("GDAL cannot open"));
  EXPECT_THAT(r.err, HasSubstr("broken.gpkg"));
}

TEST_F(GdalIoTest, GeoPackageOutputKeepsTheCrsTheAttributesAndEveryColumn) {
  // Issue 14: --gpkg writes the features in their own CRS (here NAD83 / UTM zone 15N, EPSG:26915, read from a
  // CSV with --source-crs), the input's attributes and every CSV column. Reopened here with GDAL's own C API,
  // independently of gridtruth's writer: the layer's SRS, the feature count, each column's value against the CSV.
  spit(path("plots.csv"),
       "id,name,status,wkt\n"
       "A-1,south field,leased,\"POLYGON ((370000 4885000,372000 4885000,372000 4886500,370000 4886500,370000 "
       "4885000))\"\n"
       "A-2,lane,public,\"LINESTRING (370000 4880000,371500 4881200)\"\n"
       "A-3,broken,unknown,\"POLYGON ((370000 4885000,372000\"\n");
  const std::string gpkg_path = path("plots_audit.gpkg");
  const CliRun r = audit({path("plots.csv"), "--source-crs", "EPSG:26915", "--crs", "EPSG:32615", "--id-field",
                          "id", "--gpkg", gpkg_path, "--tolerance", "area=1ppm", "--all-digits"});
  ASSERT_EQ(r.rows.size(), 4u) << r.err;
  EXPECT_EQ(r.status, 1);  // one invalid row
  GDALAllRegister();
  GDALDatasetH ds = GDALOpenEx(gpkg_path.c_str(), GDAL_OF_VECTOR | GDAL_OF_READONLY, nullptr, nullptr, nullptr);
  ASSERT_NE(ds, nullptr) << r.err;
  ASSERT_EQ(GDALDatasetGetLayerCount(ds), 1);
  OGRLayerH layer = GDALDatasetGetLayer(ds, 0);
  EXPECT_STREQ(OGR_L_GetName(layer), "plots_audit");
  OGRSpatialReferenceH srs = OGR_L_GetSpatialRef(layer);
  ASSERT_NE(srs, nullptr);
  EXPECT_STREQ(OSRGetAuthorityName(srs, nullptr), "EPSG");
  EXPECT_STREQ(OSRGetAuthorityCode(srs, nullptr), "26915");
  EXPECT_EQ(OGR_L_GetFeatureCount(layer, TRUE), 3);
  OGRFeatureDefnH defn = OGR_L_GetLayerDefn(layer);
  const std::vector<std::string>& header = r.rows[0];
  // The input's attributes come first, the one named like an audit column renamed (as --geojson does).
  // (the CSV's own "id" column is an input attribute too).
  EXPECT_EQ(OGR_FD_GetFieldIndex(defn, "input_id"), 0);
  EXPECT_EQ(OGR_FD_GetFieldIndex(defn, "name"), 1);
  EXPECT_GE(OGR_FD_GetFieldIndex(defn, "input_status"), 0);
  OGR_L_ResetReading(layer);
  for (std::size_t k = 1; k < r.rows.size(); ++k) {
    OGRFeatureH f = OGR_L_GetNextFeature(layer);
    ASSERT_NE(f, nullptr);
    SCOPED_TRACE(r.rows[k][0]);
    for (std::size_t c = 0; c < header.size(); ++c) {
      SCOPED_TRACE(header[c]);
      const int index = OGR_FD_GetFieldIndex(defn, header[c].c_str());
      ASSERT_GE(index, 0);
      const std::string& cell = r.rows[k][c];
      const OGRFieldType type = OGR_Fld_GetType(OGR_FD_GetFieldDefn(defn, index));
      if (type == OFTString) {
        EXPECT_EQ(OGR_F_GetFieldAsString(f, index), cell);
      } else if (cell.empty()) {
        EXPECT_FALSE(OGR_F_IsFieldSetAndNotNull(f, index));
      } else {
        ASSERT_TRUE(OGR_F_IsFieldSetAndNotNull(f, index));
        // With --all-digits the CSV's numbers are the shortest text that reads back to the same double: equal.
        EXPECT_EQ(OGR_F_GetFieldAsDouble(f, index), std::stod(cell));
        EXPECT_EQ(type, header[c] == "vertices" ? OFTInteger64 : OFTReal);
      }
    }
    const char* names[] = {"south field", "lane", "broken"};
    const char* statuses[] = {"leased", "public", "unknown"};
    EXPECT_STREQ(OGR_F_GetFieldAsString(f, OGR_FD_GetFieldIndex(defn, "name")), names[k - 1]);
    EXPECT_STREQ(OGR_F_GetFieldAsString(f, OGR_FD_GetFieldIndex(defn, "input_status")), statuses[k - 1]);
    OGRGeometryH g = OGR_F_GetGeometryRef(f);
    if (k == 3) {
      EXPECT_EQ(g, nullptr);  // the feature that could not be read: a row without geometry
    } else {
      ASSERT_NE(g, nullptr);
      OGREnvelope e;
      OGR_G_GetEnvelope(g, &e);  // the input's own coordinates, not transformed
      EXPECT_EQ(e.MinX, 370000);
      EXPECT_EQ(e.MinY, k == 1 ? 4885000 : 4880000);
      EXPECT_EQ(e.MaxX, k == 1 ? 372000 : 371500);
      EXPECT_EQ(e.MaxY, k == 1 ? 4886500 : 4881200);
    }
    OGR_F_Destroy(f);
  }
  GDALClose(ds);
  // The same file seen by Debian's ogrinfo (gdal-bin), when installed.
  if (std::system("command -v ogrinfo > /dev/null 2>&1") == 0) {
    const std::string report = path("ogrinfo.txt");
    ASSERT_EQ(std::system(("ogrinfo -so -al " + shell_quote(gpkg_path) + " > " + shell_quote(report)).c_str()), 0);
    const std::string text = slurp(report);
    EXPECT_THAT(text, HasSubstr("Feature Count: 3"));
    EXPECT_THAT(text, HasSubstr("NAD83 / UTM zone 15N"));
    EXPECT_THAT(text, HasSubstr("ID[\"EPSG\",26915]"));
    EXPECT_THAT(text, HasSubstr("true_area_m2: Real"));
  }
  // No temporary file is left beside it.
  EXPECT_EQ(std::system(("ls -a " + shell_quote(scratch_.dir()) + " | grep -q gridtruth-").c_str()) == 0, false);
}

TEST_F(GdalIoTest, GeoPackageOutputToStandardOutputIsRefused) {
  spit(path("one.csv"), "id,wkt\nB-1,\"POINT (370000 4885000)\"\n");
  const CliRun r = audit({path("one.csv"), "--source-crs", "EPSG:26915", "--crs", "EPSG:26915", "--gpkg", "-"});
  EXPECT_EQ(r.status, 2);
  EXPECT_THAT(r.err, HasSubstr("a file name is needed"));
}

TEST_F(GdalIoTest, GeoJsonInTheSourceCrsIsPlacedByGdal) {
  // --geojson-crs source writes the 2008-style "crs" member; GDAL's GeoJSON driver reads the layer's SRS from it.
  spit(path("one.csv"), "id,wkt\nB-1,\"POINT (370000 4885000)\"\n");
  const std::string out = path("b.geojson");
  const CliRun r = audit({path("one.csv"), "--source-crs", "EPSG:26915", "--crs", "EPSG:26915", "--geojson", out,
                          "--geojson-crs", "source"});
  ASSERT_EQ(r.status, 0) << r.err;
  GDALAllRegister();
  GDALDatasetH ds = GDALOpenEx(out.c_str(), GDAL_OF_VECTOR | GDAL_OF_READONLY, nullptr, nullptr, nullptr);
  ASSERT_NE(ds, nullptr);
  OGRLayerH layer = GDALDatasetGetLayer(ds, 0);
  OGRSpatialReferenceH srs = OGR_L_GetSpatialRef(layer);
  ASSERT_NE(srs, nullptr);
  EXPECT_STREQ(OSRGetAuthorityName(srs, nullptr), "EPSG");
  EXPECT_STREQ(OSRGetAuthorityCode(srs, nullptr), "26915");
  OGRFeatureH f = OGR_L_GetNextFeature(layer);
  ASSERT_NE(f, nullptr);
  OGRGeometryH g = OGR_F_GetGeometryRef(f);
  ASSERT_NE(g, nullptr);
  EXPECT_EQ(OGR_G_GetX(g, 0), 370000);
  EXPECT_EQ(OGR_G_GetY(g, 0), 4885000);
  OGR_F_Destroy(f);
  GDALClose(ds);
}

#else
TEST(GdalIoTest, BuiltWithoutGdal) { GTEST_SKIP() << "this build has no GDAL (GRIDTRUTH_WITH_GDAL)"; }
#endif

}  // namespace
