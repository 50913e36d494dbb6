// gridtruth — internal: is a target projection usable at all? (lib/target_check.cpp, used by Auditor)
#pragma once

#include <functional>
#include <string>
#include <vector>

#include <proj.h>

#include "gridtruth/audit.hpp"
#include "gridtruth/crs.hpp"

namespace gridtruth::detail {

/// Largest round-trip error (metres on the ellipsoid) of a point projected and taken back before the projection
/// is judged degenerate there: 1 mm (a well-formed projection round-trips to nanometres within its domain).
inline constexpr double kRoundTripTolerance_m = 1e-3;

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
/// kRoundTripTolerance_m. `unit_m` is the plane's unit in metres, `a_m` the ellipsoid's semi-major axis.
std::string round_trip_problem(PJ* projection, const std::vector<Coord>& lonlat, const std::vector<Coord>& xy,
                               bool inverse, double unit_m, double a_m, std::size_t max_checked);

}  // namespace gridtruth::detail
