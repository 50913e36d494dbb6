// gridtruth — internal: is a target projection usable at all? (lib/audit/target_check.cpp, used by Auditor)
#pragma once

#include <functional>
#include <string>
#include <vector>

#include <proj.h>

#include "gridtruth/audit.hpp"
#include "gridtruth/crs.hpp"

namespace gridtruth::detail {

/// Largest round-trip error (metres on the ellipsoid) of the representative point of a target at set-up: 1 mm.
inline constexpr double kRoundTripTolerance_m = 1e-3;
/// Largest round-trip error of a feature's projected vertices: 0.1 m. Looser than at set-up because some
/// well-formed inverses are series: PROJ 9.1's inverse authalic latitude leaves 1.3 mm in EPSG:6933 at 30°N
/// (measured); a degenerate projection misses by kilometres.
inline constexpr double kVertexRoundTripTolerance_m = 0.1;

/// Why a projection's point factors are unusable ("" when every factor is finite and the scales positive).
std::string factors_problem(const PointFactors& f);
/// The same for a feature's distortion statistics.
std::string distortion_problem(const Distortion& d);

/// Refuses a degenerate target: throws Error(unsupported_crs) naming the CRS and the problem when a parameter of
/// its conversion is not finite (or an angle beyond ±360°), or when none of its representative points (the centre
/// of its area of use, its natural origin) projects, round-trips within kRoundTripTolerance_m and has finite,
/// positive scale factors. `projection` maps the target's geographic lon, lat (degrees) to its plane;
/// `factors` gives the scale factors at a lon, lat of that geographic CRS.
void check_target_projection(PJ_CONTEXT* ctx, const PJ* target_horizontal, PJ* projection, const CrsInfo& target,
                             const std::function<PointFactors(double, double)>& factors);

/// Why the projected vertices of a feature cannot be trusted ("" when they can): a sample of at most
/// `max_checked` vertices evenly spread over `lonlat` (target's geographic CRS, degrees) with their plane
/// coordinates `xy` (target's unit) is taken back (`inverse` true: inverse of xy compared with lonlat) or
/// forward again (`inverse` false: forward of lonlat compared with xy) and must agree within
/// kVertexRoundTripTolerance_m. `unit_m` is the plane's unit in metres, `a_m` the ellipsoid's semi-major axis.
std::string round_trip_problem(PJ* projection, const std::vector<Coord>& lonlat, const std::vector<Coord>& xy,
                               bool inverse, double unit_m, double a_m, std::size_t max_checked);

}  // namespace gridtruth::detail
