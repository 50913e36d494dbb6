// gridtruth cells — the true (ellipsoidal) area of a raster's cells, and class areas against pixel counts.
#include <cerrno>
#include <cmath>
#include <cstdint>
#include <cstdlib>
#include <fstream>
#include <iostream>
#include <memory>
#include <optional>
#include <sstream>
#include <string>
#include <tuple>
#include <vector>

#include "audit_summary.hpp"
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

/// Raw codes, row-major, little-endian, one byte (uint8) or two (uint16) per cell, nothing else.
void read_raw(const std::string& path, const CellGrid& grid, bool two_bytes, ClassAreaAccumulator& acc) {
  std::ifstream in(path, std::ios::binary);
  if (!in) throw Error(ErrorCode::io, "cannot read " + path);
  const GridSpec& g = grid.spec();
  const std::size_t bytes_per_cell = two_bytes ? 2 : 1;
  in.seekg(0, std::ios::end);
  const auto file_bytes = static_cast<unsigned long long>(in.tellg());
  const unsigned long long expected = static_cast<unsigned long long>(g.cols) * g.rows * bytes_per_cell;
  if (file_bytes != expected)
    throw Error(ErrorCode::parse, path + " holds " + std::to_string(file_bytes) + " bytes; a " +
                                      std::to_string(g.cols) + " x " + std::to_string(g.rows) + " raster of " +
                                      (two_bytes ? "uint16" : "uint8") + " codes needs " + std::to_string(expected));
  in.seekg(0);
  const std::size_t strip_rows = std::max<std::size_t>(1, (std::size_t{1} << 22) / g.cols);
  std::vector<unsigned char> bytes;
  std::vector<std::uint16_t> codes;
  for (std::size_t r = 0; r < g.rows; r += strip_rows) {
    const std::size_t n = std::min(strip_rows, g.rows - r);
    bytes.resize(n * g.cols * bytes_per_cell);
    if (!in.read(reinterpret_cast<char*>(bytes.data()), static_cast<std::streamsize>(bytes.size())))
      throw Error(ErrorCode::io, "cannot read " + path);
    codes.resize(n * g.cols);
    for (std::size_t k = 0; k < codes.size(); ++k)
      codes[k] = two_bytes ? static_cast<std::uint16_t>(bytes[2 * k] | (bytes[2 * k + 1] << 8)) : bytes[k];
    acc.add_strip(r, codes);
  }
}

/// CSV of counts: a header "row,class,count", then one line per (row, class) with the cells of that class in the row.
void read_counts(const std::string& path, ClassAreaAccumulator& acc) {
  std::ifstream in(path, std::ios::binary);
  if (!in) throw Error(ErrorCode::io, "cannot read " + path);
  std::string line;
  std::getline(in, line);
  if (!line.empty() && line.back() == '\r') line.pop_back();
  if (line != "row,class,count") throw Error(ErrorCode::parse, path + ": the first line must be 'row,class,count'");
  std::size_t line_no = 1;
  while (std::getline(in, line)) {
    ++line_no;
    if (!line.empty() && line.back() == '\r') line.pop_back();
    if (line.empty()) continue;
    std::istringstream fields(line);
    std::string f[3];
    if (!std::getline(fields, f[0], ',') || !std::getline(fields, f[1], ',') || !std::getline(fields, f[2]) ||
        f[2].find(',') != std::string::npos)
      throw Error(ErrorCode::parse, path + " line " + std::to_string(line_no) + ": needs row,class,count");
    unsigned long long v[3];
    for (int k = 0; k < 3; ++k) {
      char* end = nullptr;
      errno = 0;
      v[k] = std::strtoull(f[k].c_str(), &end, 10);
      if (f[k].empty() || f[k][0] == '-' || end != f[k].c_str() + f[k].size() || errno != 0)
        throw Error(ErrorCode::parse, path + " line " + std::to_string(line_no) + ": '" + f[k] +
                                          "' is not a whole number");
    }
    try {
      acc.add_row_count(static_cast<std::size_t>(v[0]), static_cast<std::uint32_t>(std::min(v[1], 1ull << 20)),
                        v[2]);
    } catch (const Error& e) {
      throw Error(e.code(), path + " line " + std::to_string(line_no) + ": " + e.what());
    }
  }
}

int run_cells(const CellsArgs& a) {
  const bool with_gdal = built_with_gdal();
  GridSpec spec;
  std::optional<std::uint32_t> nodata;
  std::string format = a.classes_format;
  try {
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
  } catch (const BadOption& e) {
    return fail(e.what());
  }
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
    // Grid options given override what a raster file says about itself.
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
  } catch (const BadOption& e) {
    return fail(e.what());
  }

  std::unique_ptr<CellGrid> grid;
  try {
    grid = std::make_unique<CellGrid>(spec);
  } catch (const Error& e) {
    return fail(e.what());
  }

  if (!a.classes.empty()) {
    if (const std::string problem = same_file_problem({a.classes}, {a.out.empty() ? std::string("-") : a.out});
        !problem.empty())
      return fail(problem);
  }

  if (!a.classes.empty()) {
    ClassAreaAccumulator acc(*grid, nodata);
    try {
      if (format == "counts") read_counts(a.classes, acc);
      else if (format == "gdal") add_class_raster(a.classes, spec, acc);
      else read_raw(a.classes, *grid, a.class_type == "uint16", acc);
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

  std::size_t unmeasured = 0;
  try {
    OutputFile out_file(a.out);
    std::ostream& out = out_file.stream();
    out << "row_start,row_end,col_start,col_end,cells,true_area_m2,nominal_area_m2,ratio\n";
    grid->for_each_record(a.block, [&](const CellRecord& r) {
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
