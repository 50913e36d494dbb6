// gridtruth cells — the true (ellipsoidal) area of a raster's cells, and class areas against pixel counts.
#include <cerrno>
#include <cmath>
#include <cstdint>
#include <cstdlib>
#include <iostream>
#include <memory>
#include <optional>
#include <string>
#include <tuple>
#include <vector>

#include "commands.hpp"
#include "output_file.hpp"
#include "gridtruth/cells.hpp"
#include "gridtruth/error.hpp"
#include "gridtruth/io.hpp"


namespace gridtruth::cli {

namespace {

struct CellsArgs {
  std::string grid_crs;
  std::string origin;
  std::string pixel;
  std::string size;
  std::size_t block = 256;
  std::string out;
  std::string classes;
  std::string classes_format = "auto";
  std::string class_type = "uint8";
  long long nodata = -1;
};

struct BadOption : std::runtime_error {
  using std::runtime_error::runtime_error;
};

int fail(const std::string& reason) {
  std::cerr << "gridtruth cells: " << reason << "\n";
  return 2;
}

/// "A,B" → two finite numbers.
std::pair<double, double> number_pair(const std::string& text, const std::string& option) {
  const auto comma = text.find(',');
  if (comma == std::string::npos) throw BadOption(option + " needs two numbers separated by a comma, got '" + text + "'");
  const auto number = [&](const std::string& part) {
    char* end = nullptr;
    errno = 0;
    const double v = std::strtod(part.c_str(), &end);
    if (part.empty() || end != part.c_str() + part.size() || errno != 0 || !std::isfinite(v))
      throw BadOption(option + ": '" + part + "' is not a finite number");
    return v;
  };
  return {number(text.substr(0, comma)), number(text.substr(comma + 1))};
}

std::size_t whole_number(double v, const std::string& option) {
  if (!(v >= 1) || v != std::floor(v) || v > 1e9) throw BadOption(option + " needs whole numbers from 1 to 10^9");
  return static_cast<std::size_t>(v);
}

std::string cell_text(double v) { return format_number(v); }

/// The checked --classes-format ("auto" only without --classes); throws BadOption for a bad option.
std::string classes_format(const CellsArgs& a) {
  const bool with_gdal = built_with_gdal();
  std::string format = a.classes_format;
  if (a.block == 0) throw BadOption("--block must be at least 1");
  if (a.class_type != "uint8" && a.class_type != "uint16") throw BadOption("--class-type must be uint8 or uint16");
  if (a.nodata > 65535) throw BadOption("--nodata must be a class code from 0 to 65535");
  if (format == "auto" && !a.classes.empty()) {
    const auto dot = a.classes.rfind('.');
    const std::string ext = dot == std::string::npos ? "" : a.classes.substr(dot + 1);
    format = ext == "csv" ? "counts" : ext == "raw" || ext == "bin" || !with_gdal ? "raw" : "gdal";
  }
  if (format != "auto" && format != "counts" && format != "raw" && format != "gdal")
    throw BadOption("--classes-format must be auto, gdal, raw or counts");
  if (format == "gdal" && !with_gdal)
    throw BadOption("this gridtruth was built without GDAL: give the classes as raw codes or counts");
  return format;
}

/// The grid options laid over `spec` (what a raster file says about itself, or nothing), and --nodata over
/// `nodata`; throws BadOption for a bad or missing option.
void apply_grid_options(const CellsArgs& a, const std::string& format, GridSpec& spec,
                        std::optional<std::uint32_t>& nodata) {
  if (!a.grid_crs.empty()) spec.crs = a.grid_crs;
  if (!a.origin.empty()) std::tie(spec.origin_x, spec.origin_y) = number_pair(a.origin, "--origin");
  if (!a.pixel.empty()) std::tie(spec.pixel_x, spec.pixel_y) = number_pair(a.pixel, "--pixel");
  if (!a.size.empty()) {
    const auto size = number_pair(a.size, "--size");
    spec.cols = whole_number(size.first, "--size");
    spec.rows = whole_number(size.second, "--size");
  }
  if (a.nodata >= 0) nodata = static_cast<std::uint32_t>(a.nodata);
  if (format != "gdal" && (a.grid_crs.empty() || a.origin.empty() || a.pixel.empty() || a.size.empty()))
    throw BadOption("--grid-crs, --origin, --pixel and --size are required (unless --classes is a GDAL raster)");
  if (spec.crs.empty()) throw BadOption(a.classes + " names no CRS: give --grid-crs");
}

/// --classes: the class areas as CSV; returns the exit status.
int write_class_areas(const CellsArgs& a, const std::string& format, const CellGrid& grid, const GridSpec& spec,
                      std::optional<std::uint32_t> nodata) {
  if (const std::string problem = same_file_problem({a.classes}, {a.out.empty() ? std::string("-") : a.out});
      !problem.empty())
    return fail(problem);
  ClassAreaAccumulator acc(grid, nodata);
  try {
    if (format == "counts") add_class_counts_csv(a.classes, acc);
    else if (format == "gdal") add_class_raster(a.classes, spec, acc);
    else
      add_raw_class_raster(a.classes, grid.spec(), parse_raw_code_type(a.class_type), acc);
  } catch (const Error& e) {
    return fail(e.what());
  }
  try {
    OutputFile out_file(a.out);
    std::ostream& out = out_file.stream();
    out << "class,cells,true_area_m2,naive_area_m2,difference_m2,difference_pct\n";
    for (const ClassArea& c : acc.result())
      out << c.code << ',' << c.cells << ',' << cell_text(c.true_area_m2) << ',' << cell_text(c.naive_area_m2)
          << ',' << cell_text(c.difference_m2) << ',' << cell_text(c.difference_pct) << '\n';
    out_file.commit();
  } catch (const OutputError& e) {
    return fail(e.what());
  }
  return 0;
}

/// Without --classes: the cells' true areas as CSV records; returns the exit status.
int write_cell_records(const CellsArgs& a, const CellGrid& grid) {
  std::size_t unmeasured = 0;
  try {
    OutputFile out_file(a.out);
    std::ostream& out = out_file.stream();
    out << "row_start,row_end,col_start,col_end,cells,true_area_m2,nominal_area_m2,ratio\n";
    grid.for_each_record(a.block, [&](const CellRecord& r) {
      if (!std::isfinite(r.true_area_m2)) ++unmeasured;
      out << r.row_start << ',' << r.row_end << ',' << r.col_start << ',' << r.col_end << ',' << r.cells << ','
          << cell_text(r.true_area_m2) << ',' << cell_text(r.nominal_area_m2) << ',' << cell_text(r.ratio) << '\n';
    });
    out_file.commit();
  } catch (const OutputError& e) {
    return fail(e.what());
  }
  if (unmeasured > 0) {
    std::cerr << "gridtruth cells: " << unmeasured
              << " records hold cells the grid CRS cannot take back to the ellipsoid (empty areas)\n";
    return 1;
  }
  return 0;
}

int run_cells(const CellsArgs& a) {
  std::string format;
  try {
    format = classes_format(a);
  } catch (const BadOption& e) {
    return fail(e.what());
  }
  GridSpec spec;
  std::optional<std::uint32_t> nodata;
  if (format == "gdal") {
    try {
      const ClassRasterHeader header = read_class_raster_header(a.classes);
      spec = header.grid;
      nodata = header.nodata;
    } catch (const Error& e) {
      return fail(e.what());
    }
  }
  try {
    apply_grid_options(a, format, spec, nodata);  // grid options given override what a raster file says
  } catch (const BadOption& e) {
    return fail(e.what());
  }
  std::unique_ptr<CellGrid> grid;
  try {
    grid = std::make_unique<CellGrid>(spec);
  } catch (const Error& e) {
    return fail(e.what());
  }
  return a.classes.empty() ? write_cell_records(a, *grid) : write_class_areas(a, format, *grid, spec, nodata);
}

Command set_up(CLI::App& tool) {
  auto args = std::make_shared<CellsArgs>();
  CLI::App* app = tool.add_subcommand("cells", "true ellipsoidal areas of a raster's cells, and class areas");
  app->add_option("--grid-crs", args->grid_crs,
                  "CRS of the raster: geographic (degrees) or projected (a GDAL raster's own when not given)");
  app->add_option("--origin", args->origin,
                  "X,Y of the outer corner of the first cell (row 0, column 0): longitude,latitude in degrees or "
                  "easting,northing in the CRS's unit");
  app->add_option("--pixel", args->pixel, "DX,DY: cell width and height (DY negative for rows running south)");
  app->add_option("--size", args->size, "COLS,ROWS of the raster");
  app->add_option("--block", args->block, "projected grid: one record per block of N x N cells")
      ->capture_default_str();
  app->add_option("--out", args->out, "write the CSV to this file instead of standard output");
  app->add_option("--classes", args->classes,
                  "class codes: a raster GDAL reads (GeoTIFF, ...; its grid stands in for the grid options), a raw "
                  "raster (row-major codes, nothing else) or a CSV of counts 'row,class,count'");
  app->add_option("--classes-format", args->classes_format,
                  "gdal, raw, counts, or auto (.csv: counts; .raw, .bin: raw; else gdal when built with GDAL)")
      ->capture_default_str();
  app->add_option("--class-type", args->class_type, "raw raster cell type: uint8 or uint16 (little-endian)")
      ->capture_default_str();
  app->add_option("--nodata", args->nodata, "class code to leave out");
  app->footer(std::string(
                  "\nWithout --classes: CSV row_start,row_end,col_start,col_end,cells,true_area_m2,nominal_area_m2,"
                  "ratio; one record per row for a geographic grid, per block for a projected one. true_area_m2 is "
                  "the cells' area on the ellipsoid of the CRS's datum; nominal_area_m2 is cells x |DX*DY| for a "
                  "projected grid and, for a geographic grid, cells x a^2*dlon*dlat (radians): a degree taken as "
                  "2*pi*a/360 (111.32 km on WGS 84) both ways; ratio = true / nominal.\n"
                  "With --classes: CSV class,cells,true_area_m2,naive_area_m2 (cells x nominal cell area),"
                  "difference_m2 (naive - true),difference_pct. Counts per row are exact only on a geographic grid.\n"
                  "Exit status: 0 done; 1 some cells could not be measured (empty areas); 2 bad options or "
                  "unreadable input.\n\n") +
              caution_text + "\n");
  add_trusted_crs_flag(app);
  return Command{app, [args] { return run_cells(*args); }, {}, false};
}

const CommandRegistrar registrar{"cells", set_up};

}  // namespace

}  // namespace gridtruth::cli
