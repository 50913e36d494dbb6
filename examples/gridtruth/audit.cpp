// gridtruth audit — every feature of a file measured on the grid of a projected CRS. Thin: parse options, call
// the library, write rows and the summary.
//
//   gridtruth audit INPUT --crs TARGET [options]
//
// Exit status: 0 every feature ok and within tolerance; 1 some feature failed a tolerance or is invalid or
// unmeasurable; 2 nothing could be audited (bad option, unreadable input, unknown CRS), with a one-line reason.
#include <unistd.h>

#include <CLI/CLI.hpp>
#include <algorithm>
#include <nlohmann/json.hpp>
#include <chrono>
#include <cctype>
#include <cerrno>
#include <cmath>
#include <cstdio>
#include <fstream>
#include <iostream>
#include <limits>
#include <memory>
#include <optional>
#include <stdexcept>
#include <string>
#include <vector>

#include "audit_run.hpp"
#include "audit_summary.hpp"
#include "commands.hpp"
#include "output_file.hpp"
#include "gridtruth/audit.hpp"
#include "gridtruth/crs.hpp"
#include "gridtruth/error.hpp"
#include "gridtruth/io.hpp"
#include "gridtruth/report.hpp"
#include "gridtruth/runner.hpp"
#include "gridtruth/tolerance.hpp"

namespace {

using namespace gridtruth;
using cli::exit_findings;
using cli::exit_ok;
using cli::fail_run;
using cli::AuditArgs;
using cli::AuditOutputs;
using cli::AuditPlan;


/// "Progress" on standard error, only for a terminal and only once the run has taken more than a second.
class Progress {
 public:
  Progress() : enabled_(isatty(STDERR_FILENO) == 1), start_(std::chrono::steady_clock::now()) {}
  void update(std::size_t features) {
    if (!enabled_ || (features & 63) != 0) return;
    const auto now = std::chrono::steady_clock::now();
    if (now - start_ < std::chrono::seconds(1) || now - last_ < std::chrono::milliseconds(250)) return;
    last_ = now;
    const double seconds = std::chrono::duration<double>(now - start_).count();
    std::fprintf(stderr, "\r  %zu features audited in %.0f s (%.0f per second)", features, seconds,
                 static_cast<double>(features) / seconds);
    std::fflush(stderr);
    shown_ = true;
  }
  void finish() {
    if (shown_) std::fprintf(stderr, "\r%60s\r", "");
    shown_ = false;
  }

 private:
  bool enabled_;
  bool shown_ = false;
  std::chrono::steady_clock::time_point start_, last_{};
};


/// Whether `s` ends with `tail` (lower case), ignoring the case of `s`.
bool ends_with_lower(const std::string& s, const std::string& tail) {
  if (s.size() < tail.size()) return false;
  for (std::size_t k = 0; k < tail.size(); ++k)
    if (std::tolower(static_cast<unsigned char>(s[s.size() - tail.size() + k])) != tail[k]) return false;
  return true;
}

/// --area-of-use-margin: degrees >= 0, or "off" (infinity); nullopt for anything else.
std::optional<double> area_of_use_margin_deg(const std::string& text) {
  if (text == "off") return std::numeric_limits<double>::infinity();
  char* end = nullptr;
  const double margin_deg = std::strtod(text.c_str(), &end);
  if (text.empty() || *end != '\0' || !(margin_deg >= 0) || !std::isfinite(margin_deg)) return std::nullopt;
  return margin_deg;
}

/// Fills `plan` from the options: "" when they all make sense, else the reason (nothing is read before).
std::string plan_audit(const AuditArgs& args, AuditPlan& plan) {
  if (!std::isfinite(args.height_m)) return "--height must be a finite number of metres";
  if (!(args.densify_tolerance_m > 0) || !std::isfinite(args.densify_tolerance_m))
    return "--densify-tolerance must be a positive number of metres";
  if (args.wkt_field.empty()) return "--wkt-field must name a column";
  plan.report_html = ends_with_lower(args.report, ".html") || ends_with_lower(args.report, ".htm");
  if (!args.report.empty() && !plan.report_html && !ends_with_lower(args.report, ".svg"))
    return "--report must name a .svg or .html file (got " + args.report + ")";

  AuditOptions& options = plan.options;
  options.source_crs = args.source_crs;
  options.target_crs = args.target_crs;
  options.height_m = args.height_m;
  options.densify_tolerance_m = args.densify_tolerance_m;
  options.repair = args.repair;
  options.datum_operation = args.datum_op;
  const std::optional<double> margin_deg = area_of_use_margin_deg(args.area_of_use_margin);
  if (!margin_deg)
    return "--area-of-use-margin must be a number of degrees >= 0 or \"off\" (got \"" + args.area_of_use_margin +
           "\")";
  options.area_of_use_margin_deg = *margin_deg;
  plan.with_heights = args.height_m != 0 || !args.height_field.empty() || args.height_from_z;
  try {
    options.tolerances = Tolerance::parse_list(args.tolerance);
    if (!args.edges.empty()) options.edges = EdgeSpec::parse(args.edges);
    plan.units = cli::summary_units(args.units);
    plan.reader_options.format = parse_input_format(args.format);
  } catch (const Error& e) {
    return e.what();
  }
  plan.reader_options.id_field = args.id_field;
  plan.reader_options.wkt_field = args.wkt_field;
  plan.reader_options.height_field = args.height_field;
  plan.reader_options.height_from_z = args.height_from_z;
  plan.reader_options.layer = args.layer;

  std::vector<std::string> outputs = {args.out.empty() ? std::string("-") : args.out};
  for (const std::string* path : {&args.summary, &args.report, &args.geojson, &args.gpkg})
    if (!path->empty()) outputs.push_back(*path);
  return cli::same_file_problem({args.input}, outputs);
}

/// Opens the input and settles the source CRS: "" when both went well, else the reason.
std::string open_input(const AuditArgs& args, const std::string& input_name, AuditPlan& plan,
                       std::optional<FeatureReader>& reader) {
  if (args.input == "-" && cli::standard_input_closed()) return "cannot read standard input: it is closed";
  try {
    reader.emplace(args.input, plan.reader_options);
  } catch (const Error& e) {
    return e.what();
  }
  try {
    // The source CRS: the one the input names for itself (a .prj, a layer's SRS, a GeoJSON "crs" member) unless
    // --source-crs overrides it; then a disagreement is worth a warning, since one of the two is wrong.
    const std::string declared = reader->declared_crs();
    if (args.source_crs.empty()) {
      plan.options.source_crs = declared.empty() ? std::string("EPSG:4326") : declared;
    } else if (!declared.empty() && !same_crs(args.source_crs, declared)) {
      std::cerr << "gridtruth: warning: --source-crs " << args.source_crs << " overrides the CRS " << input_name
                << " names for itself (" << describe_crs(declared).name << ")\n";
    }
  } catch (const Error& e) {
    return input_name + ": " + e.what();
  }
  return "";
}


int run_audit_command(const AuditArgs& args) {
  AuditPlan plan;
  if (const std::string problem = plan_audit(args, plan); !problem.empty()) return fail_run(problem);
  const std::string input_name = args.input == "-" ? std::string("standard input") : args.input;
  std::optional<FeatureReader> reader;
  if (const std::string problem = open_input(args, input_name, plan, reader); !problem.empty())
    return fail_run(problem);
  std::optional<Auditor> auditor;
  try {
    auditor.emplace(plan.options);
  } catch (const Error& e) {
    return fail_run(e.what());
  } catch (const std::exception& e) {
    return fail_run(std::string("cannot set up the audit: ") + e.what());
  }

  AuditOutputs outputs(args, plan, *auditor, input_name);
  Progress progress;
  RunOptions run_options;
  run_options.threads = args.threads;
  try {
    run_audit(*reader, *auditor, run_options, [&](const InputFeature& feature, const AuditResult& result) {
      if (!outputs.opened()) outputs.open(&feature);
      if (feature.geometry) outputs.add(feature, result);
      else outputs.add_unread(feature);
      progress.update(outputs.summary().read());
    });
    if (!outputs.opened()) outputs.open(nullptr);  // an input without features still gets its header line
  } catch (const cli::OutputError& e) {
    progress.finish();
    return fail_run(e.what());
  } catch (const Error& e) {
    progress.finish();
    if (!outputs.opened()) return fail_run(input_name + ": " + e.what());
    // No output file is left: the temporary files are removed when their owners go (a CSV on standard output
    // keeps the rows already written).
    const bool to_stdout = args.out.empty() || args.out == "-";
    return fail_run(input_name + ": " + e.what() + " (" + std::to_string(outputs.summary().read()) +
                    " feature rows " +
                    (to_stdout ? "were written to standard output before it; no other output was kept)"
                               : "were read before it; no output file was written)"));
  }
  progress.finish();
  const std::vector<InputProblem>& problems = reader->problems();
  const cli::AuditSummary& summary = outputs.summary();
  if (summary.read() == 0 && !problems.empty())  // damaged, and not one feature in it: nothing was audited
    return fail_run(input_name + ": " + problems.front().message + "; no feature could be read");
  const cli::AuditSummary::Context context{input_name, reader->format(), &*auditor, plan.units, &problems};
  try {
    outputs.finish(context);
  } catch (const cli::OutputError& e) {
    return fail_run(e.what());
  }
  std::cerr << summary.to_text(context);
  if (summary.read() == 0) std::cerr << "  note: the input holds no features\n";
  return summary.exit_status(context) == 0 ? exit_ok : exit_findings;
}

const char* audit_summary_line = "audit every feature of a file on the grid of a projected CRS";

const char* audit_description =
    "Audits every feature of INPUT against the grid of the projected CRS TARGET: the true (geodesic) length\n"
    "and area on the ellipsoid, the same measured on the grid, and the error between them split into its\n"
    "parts (straight edges, projection scale, datum change, height), with distortion statistics and a\n"
    "pass/fail verdict against the tolerances. One CSV row per input feature, in input order, on standard\n"
    "output or --out; a summary on standard error and, with --summary, as JSON.\n";

const char* audit_footer =
    "\nInput formats:\n"
    "  geojson   a FeatureCollection, a Feature or a bare geometry (RFC 7946); coordinates are longitude,\n"
    "            latitude in the source CRS.\n"
    "  ndjson    one GeoJSON Feature per line; RFC 8142 record separators (0x1E) are accepted.\n"
    "  csv       RFC 4180 CSV with a header line; geometry as WKT in the --wkt-field column.\n"
    "  gdal      any vector data source GDAL reads: Shapefile, GeoPackage (--layer), FlatGeobuf, OpenFileGDB,\n"
    "            GML, KML, ...; the layer's own CRS is the source CRS; the FID is the id.\n"
    "  auto      guessed from the first bytes and the name (also for '-', standard input).\n"
    "Feature id: the GeoJSON feature \"id\", else the --id-field property or column, else the 1-based position.\n"
    "\n"
    "Tolerances (--tolerance, comma-separated metric=limit):\n"
    "  area=0.1%   length=100ppm   length=1:10000   area=50m2   area=0.5ha   length=0.05m   bearing=20arcsec\n"
    "  A feature passes when every tolerance that applies to it holds; no tolerance, no verdict.\n"
    "  Length tolerances also apply to polygon perimeters.\n"
    "\n"
    "CSV columns (metres, square metres, degrees, arcseconds; empty where a value does not apply):\n"
    "  id, geometry_type, status (ok | invalid | unmeasurable), message, vertices,\n"
    "  true_length_m, grid_length_m, length_error_m, length_error_ppm, length_from_edges_m,\n"
    "  length_from_scale_m, length_from_datum_m, length_from_height_m,\n"
    "  true_area_m2, grid_area_m2, area_error_m2, area_error_ppm, area_from_edges_m2, area_from_scale_m2,\n"
    "  area_from_datum_m2, area_from_height_m2, scale_min, scale_max, areal_scale_min, areal_scale_max,\n"
    "  angular_distortion_max_deg, convergence_min_deg, convergence_max_deg, bearing_error_max_arcsec, verdict\n"
    "  error = grid - true = from_edges + from_scale + from_datum + from_height; '+' means the grid overstates.\n"
    "  A polygon's length is its perimeter (all rings).\n"
    "  Each length, area and budget part is rounded to a tenth of its bound (see --bounds; --all-digits: in full).\n"
    "  With --height, --height-field or --height-from-z a last column, combined_factor, gives mean grid scale x R/(R + h):\n"
    "  the factor a surveyor multiplies ground distances by to get grid distances.\n"
    "\n"
    "Edges (--edges): the same vertices joined by different curves enclose different areas.\n"
    "  geodesic          shortest path on the ellipsoid (default for a geographic --source-crs)\n"
    "  rhumb             constant azimuth: parallels and meridians (zones drawn along them)\n"
    "  straight-in=CRS   straight in that projected CRS's plane, e.g. where the data were digitised\n"
    "                    (default for a projected --source-crs: straight in the source CRS)\n"
    "\n"
    "Pictures (--report FILE.svg | FILE.html) and GeoJSON (--geojson FILE):\n"
    "  the SVG draws the features in the target CRS's plane filled by their error in ppm (blue: the grid\n"
    "  understates, orange to brown: it overstates), over isolines of the projection's scale with the line of\n"
    "  true scale dashed and the CRS's area of use outlined; beside it a histogram of ppm with the tolerances,\n"
    "  the budget parts of the worst features, and a caption. The HTML page holds the same picture and the\n"
    "  summary tables; neither needs a network or a script. --geojson writes the features with every CSV column\n"
    "  in their properties, in WGS 84 longitude/latitude as RFC 7946 requires (transformed by PROJ from another\n"
    "  source CRS), or with --geojson-crs source as read, the CRS named by a 2008-style \"crs\" member.\n"
    "GeoPackage (--gpkg FILE.gpkg): one layer named after the file, the features in the source CRS, the input's\n"
    "  attributes, then every CSV column (numbers as Real, counts as Integer, empty cells as NULL); an input\n"
    "  attribute named like a column is kept as input_<name>; a feature that could not be read has no geometry.\n"
    "\n"
    "Units (--units): the summary's totals, and CSV columns beside the SI ones (after them, in the order shown):\n"
    "  metric           m, m2                                           (no extra columns)\n"
    "  hectare          m, ha (10 000 m2)                               true_area_ha, grid_area_ha, area_error_ha\n"
    "  acre             international foot (0.3048 m) and acre          true_length_ft, grid_length_ft,\n"
    "                   (4 046.856 422 4 m2)                            length_error_ft, true_area_ac, ...\n"
    "  us-survey-acre   US survey foot (1200/3937 m) and acre           true_length_us_ft, ..., true_area_us_ac,\n"
    "                   (4 046.872 609 874 252 m2)                      grid_area_us_ac, area_error_us_ac\n"
    "Input attributes (--keep-fields a,b | all): CSV columns after those; missing or null: an empty cell.\n"
    "\n"
    "CRS files: without --trusted-crs, grid and init files named by a CRS (+nadgrids=, +grids=, +geoidgrids=,\n"
    "  +init=) are opened only when they are regular files inside PROJ's data directories.\n"
    "\n"
    "Exit status:\n"
    "  0  every feature is ok and none fails a tolerance\n"
    "  1  some feature fails a tolerance, or is invalid or unmeasurable, or the input is damaged and a part of it\n"
    "     was skipped (a partial run: the skipped bytes are an invalid row and are listed in the summary)\n"
    "  2  nothing could be audited: a bad option, an unreadable input, an unknown CRS (one-line reason)\n"
    "\n"
    "Examples:\n"
    "  gridtruth audit parcels.geojson --crs EPSG:32615 --tolerance area=0.1%\n"
    "  gridtruth audit route.csv --wkt-field geom --id-field route_id --crs EPSG:26915 \\\n"
    "      --tolerance length=1:10000,bearing=20arcsec --height 350 --out route_audit.csv\n"
    "  gridtruth audit units.geojson --crs EPSG:5070 --units acre --summary summary.json > rows.csv\n"
    "  cat features.ndjson | gridtruth audit - --format ndjson --crs \"+proj=utm +zone=15 +datum=WGS84\"\n"
    "  gridtruth audit lots.csv --source-crs EPSG:2227 --crs EPSG:2227 --height-field elev_m\n"
    "\n";

/// The options of what is read: the input, the CRSs, the heights.
void add_input_options(CLI::App* audit, AuditArgs& args) {
  audit->add_option("INPUT", args.input, "GeoJSON, newline-delimited GeoJSON or CSV with WKT; '-' for standard input")
      ->required();
  audit->add_option("--crs", args.target_crs, "target projected CRS: EPSG:XXXX, WKT, PROJJSON or a PROJ string")
      ->required();
  audit->add_option("--source-crs", args.source_crs,
                    "CRS of the input coordinates: geographic (longitude, latitude) or projected (easting, northing "
                    "in its unit); default: the CRS the input names (.prj, layer, GeoJSON \"crs\"), else "
                    "EPSG:4326");
  audit->add_option("--layer", args.layer, "layer of a GDAL data source with several (GeoPackage, file geodatabase)");
  audit->add_option("--height", args.height_m, "ellipsoidal height of the features in metres (ground lift)")
      ->capture_default_str();
  audit->add_option("--height-field", args.height_field,
                    "property or column holding each feature's ellipsoidal height in metres (instead of --height)")
      ->excludes(audit->get_option("--height"));
  audit->add_flag("--height-from-z", args.height_from_z,
                  "take each feature's ellipsoidal height from its Z coordinates (the mean of its positions' Z, "
                  "metres; GeoJSON altitude, WKT Z, 3D layers); a feature with a position lacking Z is invalid")
      ->excludes(audit->get_option("--height"))
      ->excludes(audit->get_option("--height-field"));
}

/// The options of how it is measured and judged.
void add_method_options(CLI::App* audit, AuditArgs& args) {
  audit->add_option("--edges", args.edges,
                    "what an edge means: geodesic (default for geographic input), rhumb, or straight-in=CRS "
                    "(default for projected input: straight in the source CRS)");
  audit->add_option("--tolerance", args.tolerance, "comma-separated limits, e.g. area=0.1%,length=1:10000");
  audit->add_option("--densify-tolerance", args.densify_tolerance_m,
                    "largest planar deviation of a densified edge from the true edge, metres")
      ->capture_default_str();
  audit->add_flag("--bounds", args.bounds,
                  "add a bound column after the others for R, G, the error and each budget part "
                  "(*_bound_m, *_bound_m2: how far each printed figure may be from its exact value)");
  audit->add_flag("--all-digits", args.all_digits,
                  "write every CSV number in full (the shortest text that reads back to the same double) instead "
                  "of rounding each figure to a tenth of its bound");
  audit->add_flag("--repair", args.repair,
                  "make polygons with invalid topology (self-crossing rings, holes outside, overlapping parts, "
                  "spikes) valid by the even-odd rule and audit them; their message says so (default: invalid)");
  audit->add_option("--area-of-use-margin", args.area_of_use_margin,
                    "degrees a vertex may lie outside the target CRS's area of use before the feature is "
                    "unmeasurable (within it: measured with a warning); 'off': always measured, with the warning")
      ->capture_default_str();
  audit->add_option("--datum-op", args.datum_op,
                    "pin the datum transformation for a reproducible run: AUTH:CODE of PROJ's database (e.g. "
                    "EPSG:1173) or a PROJ pipeline from source lon/lat to the target; default: per feature, the one "
                    "PROJ applies at the centre of its bounding box");
}

/// The options of the ids and the outputs.
void add_output_options(CLI::App* audit, AuditArgs& args) {
  audit->add_option("--id-field", args.id_field, "property or column that holds the feature id");
  audit->add_option("--wkt-field", args.wkt_field, "CSV column that holds the WKT geometry")->capture_default_str();
  audit->add_option("--out", args.out, "write the CSV rows to this file instead of standard output");
  audit->add_option("--summary", args.summary, "also write the summary to this file as JSON");
  audit->add_option("--report", args.report,
                    "also draw the audit as a picture: FILE.svg, or FILE.html (the same picture with the summary "
                    "tables)");
  audit->add_option("--geojson", args.geojson,
                    "also write the input features with every CSV column in their properties, as GeoJSON");
  audit->add_option("--geojson-crs", args.geojson_crs,
                    "coordinates of --geojson: wgs84 (longitude, latitude, RFC 7946; transformed when the input "
                    "is in another CRS) or source (as read, the CRS named by a \"crs\" member)")
      ->check(CLI::IsMember({"wgs84", "source"}))
      ->capture_default_str();
  audit->add_option("--gpkg", args.gpkg,
                    "also write the input features in their own CRS, with their attributes and every CSV column, "
                    "as a GeoPackage layer (named after the file)");
  audit->add_option("--keep-fields", args.keep_fields,
                    "input attributes to add to the CSV after the audit columns: comma-separated names, or 'all' "
                    "(those of the first feature); a name an audit column has becomes input_<name>");
  audit->add_option("--units", args.units,
                    "units of the summary's totals, and of extra CSV columns (true_area_ac, ...) beside the SI ones")
      ->check(CLI::IsMember(cli::summary_unit_names()))
      ->capture_default_str();
  audit->add_option("--format", args.format, "input format")
      ->check(CLI::IsMember({"auto", "geojson", "ndjson", "csv", "gdal"}))
      ->capture_default_str();
  audit->add_option("--threads", args.threads, "worker threads; 0 uses every hardware thread")
      ->capture_default_str();
}

}  // namespace

namespace gridtruth::cli {

Command set_up_audit(CLI::App& app) {
  auto shared = std::make_shared<AuditArgs>();
  AuditArgs& args = *shared;
  CLI::App* audit = app.add_subcommand("audit", audit_summary_line);
  add_input_options(audit, args);
  add_method_options(audit, args);
  add_output_options(audit, args);
  cli::add_trusted_crs_flag(audit);
  audit->footer(std::string(audit_footer) + cli::caution_text + "\n");
  // An exception escaping the run is a bug: say so (the other commands' reach main() as their reason).
  auto run = [shared] {
    try {
      return run_audit_command(*shared);
    } catch (const std::exception& e) {
      return fail_run(std::string("internal error: ") + e.what());
    }
  };
  return Command{audit, run, audit_description, true};
}

}  // namespace gridtruth::cli
