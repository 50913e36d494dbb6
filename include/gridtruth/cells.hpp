// gridtruth — raster cells: the true (ellipsoidal) area of the cells of a regular grid, and class areas.
//
// A raster's cell is a quadrangle of its grid CRS: in a geographic CRS its edges are meridians and parallels, in a
// projected CRS its edges are straight in the CRS's plane. Counting cells and multiplying by one nominal cell area
// can be off by percent; this header gives the area each cell covers on the ellipsoid of the grid CRS's datum.
//
// Grid geometry (as a GeoTIFF geotransform without rotation): the outer corner of cell (row 0, column 0) is
// (origin_x, origin_y); cell (row r, column c) spans x from origin_x + c·pixel_x to origin_x + (c+1)·pixel_x and
// y from origin_y + r·pixel_y to origin_y + (r+1)·pixel_y. pixel_y is usually negative (row 0 at the north).
// Geographic grids are in degrees (x = longitude, y = latitude, whatever the CRS's official axis order);
// projected grids are in the CRS's linear unit (x = easting, y = northing).
#pragma once

#include <cstddef>
#include <cstdint>
#include <functional>
#include <memory>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "gridtruth/compensated_sum.hpp"
#include "gridtruth/crs.hpp"

namespace gridtruth {

/// A regular, north-up raster grid.
struct GridSpec {
  std::string crs;        ///< any CRS definition PROJ accepts; geographic (degrees) or projected
  double origin_x = 0;    ///< outer corner of cell (0, 0): longitude (deg) or easting (CRS unit)
  double origin_y = 0;    ///< outer corner of cell (0, 0): latitude (deg) or northing (CRS unit)
  double pixel_x = 0;     ///< cell width, degrees or CRS unit; non-zero (negative: columns run west)
  double pixel_y = 0;     ///< cell height, degrees or CRS unit; non-zero (usually negative: rows run south)
  std::size_t cols = 0;   ///< columns, ≥ 1
  std::size_t rows = 0;   ///< rows, ≥ 1
};

/// Cells aggregated over a rectangle of rows [row_start, row_end) × columns [col_start, col_end).
struct CellRecord {
  std::size_t row_start = 0;  ///< first row of the record (0 = the row at origin_y)
  std::size_t row_end = 0;    ///< one past the last row
  std::size_t col_start = 0;  ///< first column (0 = the column at origin_x)
  std::size_t col_end = 0;    ///< one past the last column
  std::uint64_t cells = 0;     ///< (row_end − row_start)·(col_end − col_start)
  double true_area_m2 = 0;     ///< the sum of the cells' ellipsoidal areas
  double nominal_area_m2 = 0;  ///< cells × CellGrid::nominal_cell_area_m2()
  double ratio = 0;            ///< true / nominal
};

/// The true area of a raster's cells.
///
/// Geographic grid: the area of a cell between latitudes φ1 < φ2 and Δλ radians wide is the closed form
/// (a²/2)·Δλ·[q(φ2) − q(φ1)] with Snyder's authalic function q (Snyder 1987, USGS PP 1395, eq. 3-12), evaluated
/// as a difference formula (sin φ2 − sin φ1 from a product of sines, atanh of a difference) so that 30″ rows and
/// rows at the poles keep full double precision (relative error ~1e-15; no PROJ call per cell).
///
/// Projected grid: the cell corners and edge midpoints are taken to (λ, q(φ)) by the inverse projection, a plane
/// in which (a²/2)·dλ·dq is the ellipsoid's area element (an equal-area map of the ellipsoid). Each edge's image
/// is taken as the parabola through its ends and midpoint, and the area enclosed (Green's theorem, Simpson's rule,
/// exact for parabolic edges) is the cell's true area. Cells wider than 10 km are split into parts no wider (the
/// error falls as the fourth power of the size). Each inverse-projected point is polished by one Newton step on
/// the forward projection, because some of PROJ's inverses are series (the inverse authalic latitude of the
/// equal-area projections is good to ~1e-8°, worth ~1e-9 of relative area). Accuracy: relative error ~1e-12 in
/// equal-area, transverse Mercator and Lambert grids (tested: equal-area cells keep their nominal area to 1e-9, and
/// blocks agree with the Auditor's densified straight-edge polygons to 1e-9). The polish is skipped when the
/// inverse already returns to within 0.1 µm on a lattice of test points over the grid (transverse Mercator).
/// Cost per cell of up to 10 km: three inverse projections (about 1 µs), twelve with the polish (about 3 µs).
/// Cells containing or touching a pole, or cut by the projection's interruption (antimeridian of a world
/// projection), are not supported: their areas are NaN when the inverse projection fails, otherwise meaningless.
///
/// Nominal area of a cell: projected grid, |pixel_x·pixel_y| in m² (the area on the grid); geographic grid, the
/// "equatorial degree" convention a²·|Δλ·Δφ| (radians), i.e. the cell taken as a rectangle of (a·Δλ) × (a·Δφ) —
/// a 1° × 1° cell of WGS 84 is nominally 111.319 km × 111.319 km = 12 392 km² (common practice: a degree
/// of ~111 km); the ratio true/nominal then shows how far a count of cells × one fixed area is off.
///
/// Thread-safety: a CellGrid owns PROJ objects; use one per thread. Construction throws Error (unknown_crs,
/// unsupported_crs, no_transformation, invalid_argument) when the grid cannot be set up; the area functions
/// throw Error(invalid_argument) for rows or columns out of range and never otherwise.
class CellGrid {
 public:
  /// Resolves the grid's CRS and checks the geometry; throws Error as the class comment says.
  explicit CellGrid(const GridSpec& spec);
  ~CellGrid();
  /// Moves; the moved-from grid may only be destroyed or assigned to.
  CellGrid(CellGrid&&) noexcept;
  /// Moves; the moved-from grid may only be destroyed or assigned to.
  CellGrid& operator=(CellGrid&&) noexcept;
  CellGrid(const CellGrid&) = delete;
  CellGrid& operator=(const CellGrid&) = delete;

  /// The grid as given.
  const GridSpec& spec() const noexcept;
  /// What the grid's CRS resolved to.
  const CrsInfo& crs() const noexcept;
  /// True for a geographic grid (cells bounded by meridians and parallels), false for a projected one.
  bool is_geographic() const noexcept;
  /// The nominal area of one cell in m² (see the class comment for the geographic convention).
  double nominal_cell_area_m2() const noexcept;

  /// Geographic grid only: the true area of each cell of row `row` (all cells of a row are equal), m².
  /// Throws Error(unsupported_crs) for a projected grid.
  double geographic_row_cell_area_m2(std::size_t row) const;

  /// The true areas of the cells of row `row`, columns [col_begin, col_end), in column order, m².
  std::vector<double> row_cell_areas_m2(std::size_t row, std::size_t col_begin, std::size_t col_end) const;

  /// Streams the whole grid in strips and calls `sink` once per record, in row-major record order: a geographic
  /// grid gives one record per row (all columns); a projected grid one per block of block_size × block_size cells
  /// (smaller at the right and bottom edges). Memory: O(cols), independent of the number of rows.
  /// block_size ≥ 1 (a geographic grid ignores it).
  void for_each_record(std::size_t block_size, const std::function<void(const CellRecord&)>& sink) const;

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

/// The authalic function q(φ) of an ellipsoid (Snyder 1987, eq. 3-12), dimensionless; q(90°) = q_p.
/// lat_deg within [-90, 90]; f within [0, 1).
double authalic_q(const Ellipsoid& ellipsoid, double lat_deg) noexcept;
/// q(φ2) − q(φ1) by a difference formula (no cancellation for close latitudes); relative error ~1e-15.
double authalic_q_difference(const Ellipsoid& ellipsoid, double lat1_deg, double lat2_deg) noexcept;
/// The area of the quadrangle bounded by two meridians dlon_deg apart and the parallels lat1_deg and lat2_deg,
/// m² (positive whatever the order of the latitudes or the sign of dlon_deg).
double quadrangle_area_m2(const Ellipsoid& ellipsoid, double lat1_deg, double lat2_deg, double dlon_deg) noexcept;

/// Area per class code.
struct ClassArea {
  std::uint32_t code = 0;      ///< the class code
  std::uint64_t cells = 0;     ///< how many cells carry it
  double true_area_m2 = 0;     ///< the sum of the true areas of the class's cells
  double naive_area_m2 = 0;    ///< cells × nominal cell area (the pixel-count area)
  double difference_m2 = 0;    ///< naive − true ("+" means the pixel count overstates)
  double difference_pct = 0;   ///< 100·(naive − true)/true; NaN when true = 0
};

/// Accumulates class areas over a raster streamed in strips of whole rows, in any order (each row once).
/// Memory: a table of the codes seen (at most 65 536) plus O(cols) per call, independent of the raster's size.
/// Not thread-safe; use one per thread and add their results.
class ClassAreaAccumulator {
 public:
  /// `grid` must outlive the accumulator. `nodata`: a code to skip, if any.
  explicit ClassAreaAccumulator(const CellGrid& grid, std::optional<std::uint32_t> nodata = std::nullopt);

  /// Adds rows [row_start, row_start + codes.size()/cols) given row-major; codes.size() must be a multiple of
  /// cols and the rows within the grid, else Error(invalid_argument).
  void add_strip(std::size_t row_start, const std::vector<std::uint16_t>& codes);
  /// Adds `count` cells of class `code` in row `row` without saying which: exact for a geographic grid, where
  /// every cell of a row has the same area; Error(unsupported_crs) for a projected grid.
  void add_row_count(std::size_t row, std::uint32_t code, std::uint64_t count);

  /// The classes seen (except nodata), by ascending code.
  std::vector<ClassArea> result() const;

 private:
  struct Sum {
    std::uint64_t cells = 0;
    CompensatedSum area_m2;
  };
  void add_area(std::uint32_t code, std::uint64_t cells, double area_m2);
  const CellGrid* grid_;
  std::optional<std::uint32_t> nodata_;
  std::vector<Sum> sums_;  // indexed by code
};

/// The cell type of a raw class raster (add_raw_class_raster()).
enum class RawCodeType { uint8, uint16 };
/// "uint8" or "uint16"; never throws.
std::string_view to_string(RawCodeType type) noexcept;
/// Parses the names of to_string(); throws Error(invalid_argument) otherwise.
RawCodeType parse_raw_code_type(std::string_view name);

/// Streams a raw class raster into `acc`, in strips of whole rows: the codes of the grid's cols × rows cells,
/// row-major, one byte (uint8) or two little-endian bytes (uint16) per cell, and nothing else (no header).
/// Throws Error(io) when the file cannot be read, Error(parse) when its size is not cols × rows × the bytes per
/// cell (the message gives both). `grid` must be the accumulator's.
void add_raw_class_raster(const std::string& path, const GridSpec& grid, RawCodeType type,
                          ClassAreaAccumulator& acc);

/// Adds a CSV of class counts to `acc`: the header line "row,class,count", then one line per (row, class) giving
/// how many cells of the row carry the class (whole numbers; CRLF line ends and empty lines are accepted). Exact
/// only on a geographic grid (ClassAreaAccumulator::add_row_count()). Throws Error(io) when the file cannot be
/// read, Error(parse) naming the line for a malformed one, and, with the line named, what add_row_count() throws:
/// Error(unsupported_crs) for a projected grid, Error(invalid_argument) for a code above 65535 or a count above
/// the row's cells.
void add_class_counts_csv(const std::string& path, ClassAreaAccumulator& acc);

/// What a class raster file says about itself: its grid (CRS, geotransform, size) and band 1's nodata code, if any.
struct ClassRasterHeader {
  GridSpec grid;                        ///< the file's CRS ("EPSG:n" when it names one, else WKT2), geotransform, size
  std::optional<std::uint32_t> nodata;  ///< band 1's nodata value when it is a whole number in [0, 65535]
};

/// True when this build reads rasters and vector data through GDAL (GRIDTRUTH_WITH_GDAL); the functions below
/// then load GDAL on first use.
bool built_with_gdal() noexcept;

/// Opens any raster GDAL reads (GeoTIFF, ASCII grid, ...). A rotated geotransform is refused. Throws Error(io)
/// when GDAL cannot open the file (or this build has no GDAL), Error(parse) when it has no georeferencing (give
/// the grid yourself then) or a rotated geotransform. An empty grid.crs means the file names no CRS.
ClassRasterHeader read_class_raster_header(const std::string& path);

/// Streams band 1 of a raster GDAL reads, in strips of whole rows, into `acc`. The band must hold whole numbers
/// in [0, 65535] (Byte, UInt16, or wider integer types whose values fit); any other value is Error(parse) naming
/// the row. The raster's size must equal the grid's (Error(invalid_argument) otherwise). Error(io) as above.
void add_class_raster(const std::string& path, const GridSpec& grid, ClassAreaAccumulator& acc);

}  // namespace gridtruth
