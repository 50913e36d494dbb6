// gridtruth — coordinate reference system resolution.
#pragma once

#include <optional>
#include <string>
#include <string_view>

namespace gridtruth {

/// What kind of CRS a definition resolves to (compound CRSs are described by their horizontal part).
enum class CrsKind { geographic, projected, geocentric, other };
/// "geographic", "projected", "geocentric" or "other"; never throws.
std::string_view to_string(CrsKind kind) noexcept;

/// An ellipsoid: semi-major axis a (metres) and flattening f (0 for a sphere).
struct Ellipsoid {
  std::string name;  ///< the ellipsoid's name, e.g. "WGS 84", "GRS 1980"
  double a_m = 0;    ///< semi-major axis a in metres (> 0)
  double f = 0;      ///< flattening f = (a − b)/a, dimensionless, in [0, 1); e.g. 1/298.257223563 for WGS 84
};

/// Geographic bounding box of a CRS's area of use, in degrees. west > east means it crosses the antimeridian.
struct AreaOfUse {
  std::string name;  ///< the CRS database's description of the area
  double west_deg = -180;  ///< western bound, degrees of longitude in [-180, 180]; above east_deg across ±180°
  double south_deg = -90;  ///< southern bound, degrees of latitude in [-90, 90]
  double east_deg = 180;   ///< eastern bound, degrees of longitude in [-180, 180]
  double north_deg = 90;   ///< northern bound, degrees of latitude in [-90, 90]
};

/// The facts gridtruth needs about a CRS.
struct CrsInfo {
  std::string definition;      ///< as given by the caller
  std::string name;            ///< the CRS's own name, e.g. "WGS 84 / UTM zone 32N"
  std::string id;              ///< "AUTHORITY:CODE" when known, else empty
  CrsKind kind = CrsKind::other;  ///< geographic, projected, geocentric or other
  Ellipsoid ellipsoid;         ///< the ellipsoid of its geodetic datum
  std::string datum_name;      ///< e.g. "World Geodetic System 1984 ensemble"
  std::string base_geographic_name;  ///< the geographic CRS it is built on (itself when geographic)
  std::string linear_unit_name;      ///< e.g. "metre", "US survey foot"; empty for a geographic CRS
  double linear_unit_m = 1;          ///< metres per linear unit (1200/3937 for the US survey foot)
  std::optional<AreaOfUse> area_of_use;  ///< absent when the database knows none
};

/// Which files PROJ may open while it resolves CRS definitions and builds operations: init files (+init=), grids
/// (+nadgrids=, +grids=, +geoidgrids=, grid files named in WKT or PROJJSON, grids the database picks).
enum class CrsFileAccess {
  any,               ///< whatever a definition names (PROJ's own behaviour): for definitions you trust
  data_directories,  ///< only regular files inside PROJ's data directories (its search path: PROJ_DATA, the
                     ///< install's share/proj, the user's writable PROJ directory), read only; never a FIFO, a
                     ///< device or a path outside them, whatever the definition spells (absolute, "..", links)
};
/// "any" or "data_directories" (spelled as the enumerator); never throws.
std::string_view to_string(CrsFileAccess access) noexcept;

/// Sets the file access of the PROJ contexts gridtruth creates from now on (describe_crs, Auditor, rank_crs,
/// tailor_crs, CellGrid): process-wide, thread-safe; objects already built keep theirs. The library's default is
/// CrsFileAccess::any (definitions are the caller's own); the `gridtruth` command uses data_directories unless
/// given --trusted-crs. A definition that needs a refused file fails as an unknown CRS (Error(unknown_crs)), or,
/// for a grid only an operation needs, the operation is not available.
void set_crs_file_access(CrsFileAccess access) noexcept;
/// The current setting of set_crs_file_access().
CrsFileAccess crs_file_access() noexcept;

/// Resolves any CRS definition PROJ accepts: "EPSG:32632", WKT1, WKT2, PROJJSON, or a PROJ string
/// ("+proj=utm +zone=32 +datum=WGS84"; "+type=crs" is added when missing).
/// Throws Error(ErrorCode::unknown_crs) naming the definition when PROJ cannot make a CRS of it.
/// Thread-safe: each call uses its own PROJ context.
CrsInfo describe_crs(const std::string& definition);

/// True when two CRS definitions (any form describe_crs() takes) describe the same CRS, axis order of geographic
/// CRSs aside (PROJ's proj_is_equivalent_to with PJ_COMP_EQUIVALENT_EXCEPT_AXIS_ORDER_GEOGCRS): "EPSG:26915" and
/// the WKT of a shapefile's .prj for NAD83 / UTM zone 15N are the same; names and identifiers do not count.
/// Throws Error(unknown_crs) as describe_crs() does. Thread-safe.
bool same_crs(const std::string& a, const std::string& b);

}  // namespace gridtruth
