// gridtruth — a projection tailored to the data: a family's parameters optimised for the features' worst error.
#pragma once

#include <cstddef>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "gridtruth/geometry.hpp"
#include "gridtruth/rank.hpp"

namespace gridtruth {

/// The projection families tailor_crs() can fit, and the parameters it optimises:
/// albers: standard parallels lat_1, lat_2 and central meridian lon_0;
/// lambert_conic: the one-standard-parallel form (lat_0 = lat_1), central meridian lon_0 and scale factor k_0
///   (equivalent to any pair of standard parallels);
/// transverse_mercator: central meridian lon_0 and scale factor k_0;
/// azimuthal_equal_area: the centre lat_0, lon_0;
/// oblique_mercator: the centre lat_0, lonc, azimuth alpha of the central line (degrees) and scale factor k_0.
enum class ProjectionFamily { albers, lambert_conic, transverse_mercator, azimuthal_equal_area, oblique_mercator };
/// "albers", "lambert-conic", "transverse-mercator", "azimuthal-equal-area", "oblique-mercator".
std::string_view to_string(ProjectionFamily family) noexcept;
/// Parses the names of to_string(); throws Error(invalid_argument) otherwise.
ProjectionFamily parse_projection_family(std::string_view name);

/// How tailor_crs() works.
struct TailorOptions {
  RankOptions rank;                     ///< source CRS, metric, tolerances, threads, screening points
  std::size_t max_evaluations = 800;    ///< objective evaluations of the optimiser
  bool optimise_scale = true;           ///< optimise k_0 where the family has one (else k_0 = 1)
  bool compare_registry = true;         ///< also rank the database's CRSs to report the improvement
};

/// One optimised parameter, in the unit of its PROJ name (degrees, or 1 for k_0).
struct TailoredParameter {
  std::string name;  ///< PROJ's name: "lat_1", "lon_0", "k_0", "alpha", ...
  double value = 0;  ///< the optimised value
};

/// The outcome of tailor_crs().
struct TailorResult {
  ProjectionFamily family = ProjectionFamily::transverse_mercator;  ///< the family fitted
  std::vector<TailoredParameter> parameters;  ///< the optimised parameters, in the order of ProjectionFamily's list
  std::string proj_string;     ///< the tailored CRS as a PROJ string ("+type=crs", on the source ellipsoid)
  std::string wkt2;            ///< the same as WKT2 (ISO 19162:2019)
  double start_objective_ppm = 0;  ///< screened worst |metric| at the rule-of-thumb start
  double objective_ppm = 0;        ///< screened worst |metric| at the optimum (distortion factors at vertices)
  std::size_t evaluations = 0;     ///< objective evaluations used
  RankedCrs audit;                 ///< the exact audit of the tailored CRS on every feature
  std::optional<RankedCrs> best_registry;  ///< the best database CRS by exact audit (compare_registry)
  std::size_t invalid = 0;  ///< features skipped because validate() finds a problem (e.g. a crossing ring)
};

/// Fits a family's parameters to the features (longitude, latitude in options.rank.source_crs; each at its own
/// ellipsoidal height when it has one, so the fit can be a low-distortion ground projection) by Nelder–Mead
/// (Nelder & Mead 1965; Lagarias et al. 1998 coefficients 1, 2, ½, ½) on the worst screened |metric| at sample
/// vertices, restarted once from its optimum, then audits the result exactly. Deterministic.
/// Throws Error(invalid_argument) when no feature carries the metric, Error for an unusable source CRS.
TailorResult tailor_crs(const std::vector<RankFeature>& features, ProjectionFamily family,
                        const TailorOptions& options);

}  // namespace gridtruth
