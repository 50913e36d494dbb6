// Internal: the cheap screening of a candidate CRS by distortion factors at sample vertices, and the exact audit of
// one candidate (rank.cpp, tailor.cpp; tests/rank_test.cpp).
#pragma once

#include <proj.h>

#include <string>
#include <vector>

#include "gridtruth/rank.hpp"

namespace gridtruth::detail {

/// A vertex at which a candidate's distortion is evaluated.
struct ScreenPoint {
  double lon_deg = 0, lat_deg = 0;
  double elevation_factor = 1;  ///< R_G / (R_G + h): ground → ellipsoid (common practice)
  double meridian_radius_m = 0;  ///< M of the source ellipsoid at the point
  double normal_radius_m = 0;    ///< N of the source ellipsoid at the point
};

/// Up to `count` vertices of the valid features, chosen deterministically: the extreme vertices in longitude and
/// latitude first, then evenly spaced others in input order.
std::vector<ScreenPoint> screen_points(const std::vector<RankFeature>& features, const Ellipsoid& ellipsoid,
                                       std::size_t count);

/// The worst estimated |metric| (ppm, µrad) over the points for a CRS definition: length uses the larger of
/// |a·e − 1| and |b·e − 1| (Tissot semi-axes a, b; elevation factor e), area |a·b·e² − 1|, shape ω, bearing
/// |γ| + ω/2; the Tissot axes come from central differences of the projection against the source ellipsoid's
/// radii of curvature (so a candidate on another ellipsoid or with spherical formulas is judged against the
/// truth). +infinity when the definition cannot be made or a point cannot be projected. Datum shifts of the origin are
/// left out (they change scale by far less than a ppm).
double screen_definition(PJ_CONTEXT* ctx, const std::string& definition, const std::vector<ScreenPoint>& points,
                         RankMetric metric);

/// Audits the features exactly in one candidate (indices: which features; empty = all): the valid features that
/// carry options.metric, each at its own height when it has one.
RankedCrs audit_candidate(const CandidateCrs& candidate, const std::vector<RankFeature>& features,
                          const std::vector<std::size_t>& indices, const RankOptions& options);

/// "+datum=WGS84" for a WGS 84 ellipsoid, "+ellps=GRS80" for GRS 1980, else "+a=… +rf=…" (or "+R=…").
std::string proj_ellipsoid_terms(const Ellipsoid& ellipsoid);

}  // namespace gridtruth::detail
