// D by quadrature of the projected true edge (issue 15): against a reference computed independently here with far
// more nodes, for edges from 1 m to 2000 km in seven projections. Randomised placement prints its seed (replay with
// GRIDTRUTH_TEST_SEED=<seed>).
#include <GeographicLib/Geodesic.hpp>
#include <GeographicLib/GeodesicLine.hpp>
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <random>
#include <string>
#include <vector>

#include "gridtruth/audit.hpp"
#include "support.hpp"

namespace gridtruth {
namespace {

struct Plane {
  double length = 0, area = 0;
};

/// The ring's geodesic edges (GeographicLib's InverseLine), each cut into `pieces` chords between points
/// projected by the auditor (PROJ), measured by a shoelace centred on the first point (common practice).
Plane chords(const Auditor& auditor, const Path& ring, int pieces) {
  const GeographicLib::Geodesic& geod = GeographicLib::Geodesic::WGS84();
  std::vector<Coord> xy;
  for (std::size_t i = 0; i < ring.size(); ++i) {
    const Coord a = ring[i], b = ring[(i + 1) % ring.size()];
    const GeographicLib::GeodesicLine line = geod.InverseLine(a.y, a.x, b.y, b.x);
    for (int k = 0; k < pieces; ++k) {
      double lat = 0, lon = 0;
      line.Position(line.Distance() * k / pieces, lat, lon);
      xy.push_back(auditor.project(lon, lat));
    }
  }
  Plane p;
  const Coord o = xy.front();
  long double twice = 0, length = 0;  // extended precision: the reference's own rounding stays negligible
  for (std::size_t i = 0; i < xy.size(); ++i) {
    const Coord& a = xy[i];
    const Coord& b = xy[(i + 1) % xy.size()];
    twice += (long double)(a.x - o.x) * (b.y - o.y) - (long double)(b.x - o.x) * (a.y - o.y);
    length += std::hypot(b.x - a.x, b.y - a.y);
  }
  p.area = std::fabs(double(twice)) / 2;
  p.length = double(length);
  return p;
}

/// The chord polygons' error is a series in pieces⁻² (the chord of an arc of curvature κ and length ℓ differs by
/// κ²ℓ³/24 in length and κℓ³/12 in area: common practice), so Richardson extrapolation of n and 2n pieces removes
/// the leading term.
Plane reference(const Auditor& auditor, const Path& ring, int pieces) {
  const Plane coarse = chords(auditor, ring, pieces), fine = chords(auditor, ring, 2 * pieces);
  return {(4 * fine.length - coarse.length) / 3, (4 * fine.area - coarse.area) / 3};
}

/// A hexagon of geodesic edges of about `edge_m` around (lon, lat), turned by a random angle.
Path hexagon(std::mt19937_64& rng, double lon, double lat, double edge_m) {
  const double turn = std::uniform_real_distribution<double>(0, 60)(rng);
  Path ring;
  for (int i = 0; i < 6; ++i) {
    double lat2 = 0, lon2 = 0;
    GeographicLib::Geodesic::WGS84().Direct(lat, lon, turn + 60 * i, edge_m, lat2, lon2);
    ring.push_back({lon2, lat2});
  }
  return ring;
}

struct Case {
  const char* name;
  const char* crs;
  double lon, lat;  // where the hexagons are centred
};

// The seven projections of issue 15, each on WGS 84 so that D is the only approximation compared.
const Case kCases[] = {
    {"transverse Mercator (UTM 32N)", "EPSG:32632", 12.0, 50.0},
    {"Lambert conformal conic", "+proj=lcc +lat_1=33 +lat_2=45 +lat_0=39 +lon_0=-96 +datum=WGS84 +type=crs", -90.0,
     40.0},
    {"Albers equal-area", "+proj=aea +lat_1=29.5 +lat_2=45.5 +lat_0=37.5 +lon_0=-96 +datum=WGS84 +type=crs", -100.0,
     38.0},
    {"Lambert azimuthal equal-area", "+proj=laea +lat_0=52 +lon_0=10 +datum=WGS84 +type=crs", 14.0, 50.0},
    {"polar stereographic (EPSG:3995)", "EPSG:3995", 30.0, 72.0},
    {"Mercator (EPSG:3395)", "EPSG:3395", 20.0, 35.0},
    {"equidistant cylindrical (EPSG:4087)", "EPSG:4087", -40.0, 20.0},
};

// The target: D within 1e-9 relative (or 1e-4 m², 1e-6 m, whichever is larger) of the reference, edges of
// 1 m to 2000 km. The reference uses 1024 and 2048 pieces per edge: more than 10× the nodes of the largest
// quadrature order (64).
TEST(EdgeQuadrature, DensifiedMeasureMatchesAFineIndependentReference) {
  std::mt19937_64 rng(test::test_seed());
  std::uniform_real_distribution<double> jitter(-1.0, 1.0);
  for (const Case& c : kCases) {
    AuditOptions o;
    o.target_crs = c.crs;
    o.area_of_use_margin_deg = 90;  // the 2000 km hexagons reach beyond some areas of use; D is still defined
    const Auditor auditor(o);
    for (const double edge_m : {1.0, 100.0, 1e4, 1e5, 5e5, 2e6}) {
      const Path ring = hexagon(rng, c.lon + jitter(rng), c.lat + jitter(rng), edge_m);
      const std::string what = std::string(c.name) + ", edges of " + std::to_string(edge_m) + " m";
      const AuditResult r = auditor.audit(Geometry::polygon(ring));
      ASSERT_EQ(r.status, Status::ok) << what << ": " << r.message;
      ASSERT_TRUE(r.area && r.length) << what;
      test::expect_budget_telescopes(*r.area, what + " area");
      test::expect_budget_telescopes(*r.length, what + " length");
      const Plane ref = reference(auditor, ring, 1024);
      std::cout << "[ D        ] " << what << ": area " << r.area->densified_grid - ref.area << " m², length "
                << r.length->densified_grid - ref.length << " m off; " << r.densified_points << " points\n";
      EXPECT_NEAR(r.area->densified_grid, ref.area, std::max(1e-9 * ref.area, 1e-4)) << what;
      EXPECT_NEAR(r.length->densified_grid, ref.length, std::max(1e-9 * ref.length, 1e-6)) << what;
    }
  }
}

}  // namespace
}  // namespace gridtruth
