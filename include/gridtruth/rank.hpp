// gridtruth — which projected CRS keeps these features most nearly true? Candidate CRSs ranked by measurement.
//
// rank_crs() gathers candidates (every non-deprecated projected CRS of PROJ's database whose area of use contains
// the data's extent, plus CRSs generated for the data and two world equal-area baselines), screens them cheaply
// with distortion factors at sample vertices, then audits the leaders exactly (Auditor::audit) on the features
// and ranks them by the worst |ppm| of the chosen metric.
#pragma once

#include <cstddef>
#include <cstdint>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "gridtruth/audit.hpp"
#include "gridtruth/geometry.hpp"
#include "gridtruth/tolerance.hpp"

namespace gridtruth {

/// What a ranking or a tailoring minimises. Values are "ppm": 10⁶ × relative error for area and length; for the
/// angular metrics, microradians (1 µrad = 0.206 arcsec), so every metric reads as parts per million.
enum class RankMetric {
  area,     ///< |area_error_ppm| of polygons
  length,   ///< |length_error_ppm| (perimeter for polygons)
  shape,    ///< angular distortion ω (Distortion::angular_distortion_max_deg), in µrad
  bearing,  ///< AuditResult::bearing_error_max_arcsec, in µrad
};
/// "area", "length", "shape", "bearing".
std::string_view to_string(RankMetric metric) noexcept;
/// Parses the names of to_string(); throws Error(invalid_argument) otherwise.
RankMetric parse_rank_metric(std::string_view name);

/// The geographic extent of features, degrees. west_deg > east_deg when it crosses the antimeridian (the extent
/// is the shortest longitude interval holding every vertex).
struct GeoExtent {
  double west_deg = 0;   ///< westernmost longitude, [-180, 180)
  double south_deg = 0;  ///< southernmost latitude
  double east_deg = 0;   ///< easternmost longitude, [-180, 180); < west_deg across the antimeridian
  double north_deg = 0;  ///< northernmost latitude
  double centre_lon_deg = 0;  ///< middle of the longitude interval, in [-180, 180)
  double centre_lat_deg = 0;  ///< middle of the latitude interval
  /// True when the extent crosses ±180° (west_deg > east_deg).
  bool crosses_antimeridian() const noexcept { return west_deg > east_deg; }
  /// Width in degrees of longitude (antimeridian handled).
  double width_deg() const noexcept { return crosses_antimeridian() ? east_deg + 360 - west_deg : east_deg - west_deg; }
};
/// One feature to rank CRSs for (rank_crs()) or to fit a projection to (tailor_crs()).
struct RankFeature {
  Geometry geometry;  ///< longitude, latitude in degrees on the source CRS
  /// Ellipsoidal height in metres (ground lift: lengths and areas are true at this height); absent: on the
  /// ellipsoid (0 m).
  std::optional<double> height_m;
};

/// The extent of every vertex of the valid features (longitude, latitude in degrees). Throws
/// Error(invalid_argument) when there is none.
GeoExtent extent_of(const std::vector<Geometry>& features);
/// The same for the geometries of RankFeatures (their heights play no part).
GeoExtent extent_of(const std::vector<RankFeature>& features);

/// One CRS to try.
struct CandidateCrs {
  std::string crs;         ///< "EPSG:32615", or a short label for a generated CRS ("generated:aea")
  std::string name;        ///< the CRS's name
  bool generated = false;  ///< built for the data (PROJ string), not taken from the database
  std::string definition;  ///< what Auditor takes: "EPSG:32615" or the PROJ string of a generated CRS
  /// Whether the data's extent lies inside the CRS's declared area of use; absent for a generated CRS (it has
  /// none: it is made for this extent).
  std::optional<bool> inside_area_of_use;
};

/// How rank_crs() works. Deterministic: the same input and options give the same ranking on every run and for
/// every thread count.
struct RankOptions {
  std::string source_crs = "EPSG:4326";  ///< geographic CRS of the features (longitude, latitude)
  RankMetric metric = RankMetric::area;  ///< what the ranking minimises
  std::vector<Tolerance> tolerances;     ///< for pass_share; empty → pass_share is NaN
  bool registry = true;                  ///< include the database's CRSs
  bool generated = true;                 ///< include CRSs generated for the data and the world baselines
  std::size_t leaders = 10;              ///< candidates audited exactly after screening (at least 1)
  /// Above this many features the leaders are audited on a sample of this size (the features with the smallest
  /// splitmix64 hash of (seed, position)), and the best `full_reaudit` of them again on every feature.
  std::size_t sample_features = 20000;
  std::size_t full_reaudit = 3;          ///< leaders re-audited on every feature after a sampled audit
  std::uint64_t seed = 20240601;         ///< seed of the sample (same seed, same sample)
  std::size_t screen_points = 256;       ///< vertices at which the screening evaluates distortion factors
  unsigned threads = 0;                  ///< threads of the exact audits; 0 = every hardware thread
};

/// The exact audit of one candidate.
struct RankedCrs {
  CandidateCrs candidate;                ///< the CRS audited
  RankMetric metric = RankMetric::area;  ///< the metric of the figures below
  double worst_ppm = 0;      ///< largest |metric| over the audited features (ppm or µrad, see RankMetric)
  double p95_ppm = 0;        ///< 95th percentile (nearest rank) of |metric|
  double pass_share = 0;     ///< share of features with a verdict that pass; NaN without tolerances
  double screen_ppm = 0;     ///< the screening estimate (distortion factors at sample vertices)
  std::size_t features = 0;     ///< features that carry the metric and were audited
  std::size_t unmeasured = 0;   ///< of those, features the CRS could not measure (ranked last on this count)
  bool sampled = false;         ///< audited on the sample only
};

/// The outcome of rank_crs().
struct RankReport {
  GeoExtent extent;                ///< the features' extent
  std::size_t candidates = 0;      ///< candidates screened
  std::size_t features = 0;        ///< valid features given
  std::size_t invalid = 0;         ///< features skipped because validate() finds a problem (e.g. a crossing ring)
  std::size_t sample = 0;          ///< features in the sample (== features when no sample was drawn)
  /// The exactly audited candidates, best first: by unmeasured count, then worst_ppm, then p95_ppm, then crs id.
  /// When a sample was drawn, the candidates re-audited on every feature come first.
  std::vector<RankedCrs> ranked;
};

/// The candidates for an extent: database CRSs (non-deprecated, projected, on Earth, area of use containing the
/// extent) and, when options.generated, CRSs generated for the extent on the source CRS's ellipsoid plus
/// EPSG:6933 and EPSG:8857. Sorted by crs id, no duplicates. Throws Error for an unknown source CRS.
std::vector<CandidateCrs> candidate_crs(const GeoExtent& extent, const RankOptions& options);

/// Ranks candidate CRSs for the features (longitude, latitude in options.source_crs; each at its own ellipsoidal
/// height when it has one, RankFeature::height_m). Invalid features (validate(), topology included) are skipped
/// and counted in RankReport::invalid. Throws Error(invalid_argument)
/// when no feature carries the metric (e.g. an area metric without polygons).
RankReport rank_crs(const std::vector<RankFeature>& features, const RankOptions& options);

}  // namespace gridtruth
