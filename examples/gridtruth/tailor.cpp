// gridtruth tailor — a projection of one family fitted to the features, audited, and compared with the database.
#include <cmath>
#include <cstdio>
#include <iostream>
#include <memory>
#include <string>

#include "commands.hpp"
#include "output_file.hpp"
#include "gridtruth/error.hpp"
#include "gridtruth/tailor.hpp"
#include "rank_input.hpp"

namespace gridtruth::cli {
namespace {

struct TailorArgs {
  std::string input;
  std::string family;
  std::string source_crs = "EPSG:4326";
  std::string metric = "length";
  std::string tolerance;
  cli::ReadingArgs reading;
  bool no_compare = false;
  unsigned threads = 0;
};

void print_audit(std::ostream& o, const RankedCrs& r) {
  o << "  worst " << fixed(r.worst_ppm, 3) << " ppm, 95th percentile " << fixed(r.p95_ppm, 3) << " ppm over "
    << r.features << " features";
  if (r.unmeasured) o << " (" << r.unmeasured << " not measured)";
  if (!std::isnan(r.pass_share)) o << ", pass share " << fixed(r.pass_share, 3);
  o << "\n";
}

int run_tailor(const TailorArgs& a) {
  TailorOptions options;
  ProjectionFamily family;
  try {
    family = parse_projection_family(a.family);
    options.rank.source_crs = a.source_crs;
    options.rank.metric = parse_rank_metric(a.metric);
    options.rank.tolerances = Tolerance::parse_list(a.tolerance);
    options.rank.threads = a.threads;
    options.compare_registry = !a.no_compare;
  } catch (const Error& e) {
    std::cerr << "gridtruth tailor: " << e.what() << "\n";
    return 2;
  }
  if (const std::string problem = same_file_problem({a.input}, {"-"}); !problem.empty()) {
    std::cerr << "gridtruth tailor: " << problem << "\n";
    return 2;
  }
  TailorResult t;
  try {
    const LoadedFeatures features = load_features(a.input, a.reading);
    t = tailor_crs(features.features, family, options);
  } catch (const std::exception& e) {
    std::cerr << "gridtruth tailor: " << e.what() << "\n";
    return 2;
  }
  std::ostream& o = std::cout;
  const bool angular = options.rank.metric == RankMetric::shape || options.rank.metric == RankMetric::bearing;
  o << "Family: " << to_string(family) << "; metric: " << to_string(options.rank.metric)
    << (angular ? " (ppm = microradians)" : "") << "\n";
  o << "Features: " << t.invalid << " invalid (skipped)\n";
  o << "Parameters:\n";
  for (const TailoredParameter& p : t.parameters) {
    char line[128];
    std::snprintf(line, sizeof line, "  %-6s %.10g\n", p.name.c_str(), p.value);
    o << line;
  }
  o << "Screened worst: " << fixed(t.start_objective_ppm, 3) << " ppm at the rule-of-thumb start, "
    << fixed(t.objective_ppm, 3) << " ppm tailored (" << t.evaluations << " evaluations)\n";
  o << "PROJ string:\n  " << t.proj_string << "\n";
  o << "WKT2:\n  " << t.wkt2 << "\n";
  o << "Exact audit of the tailored CRS:\n";
  print_audit(o, t.audit);
  if (t.best_registry) {
    o << "Best database CRS: " << t.best_registry->candidate.crs << " (" << t.best_registry->candidate.name << ")\n";
    print_audit(o, *t.best_registry);
    o << "Improvement: worst |" << to_string(options.rank.metric) << " ppm| "
      << fixed(t.best_registry->worst_ppm - t.audit.worst_ppm, 3) << " ppm lower";
    if (t.audit.worst_ppm > 0 && std::isfinite(t.best_registry->worst_ppm)) {
      o << " (" << fixed(t.best_registry->worst_ppm / t.audit.worst_ppm, 2) << " times smaller)";
    }
    o << "\n";
  } else if (options.compare_registry) {
    o << "No database CRS covers the extent: no comparison.\n";
  }
  if (const std::string problem = flush_stdout_problem(); !problem.empty()) {
    std::cerr << "gridtruth tailor: " << problem << "\n";
    return 2;
  }
  return 0;
}

Command set_up(CLI::App& tool) {
  auto args = std::make_shared<TailorArgs>();
  CLI::App* app =
      tool.add_subcommand("tailor", "fit a projection's parameters to the features and compare with the database");
  app->add_option("INPUT", args->input, "GeoJSON, newline-delimited GeoJSON or CSV with WKT; '-' for standard input")
      ->required();
  app->add_option("--family", args->family,
                  "albers, lambert-conic, transverse-mercator, azimuthal-equal-area or oblique-mercator")
      ->required();
  app->add_option("--metric", args->metric, "what to keep true: area, length, shape (angles) or bearing")
      ->capture_default_str();
  app->add_option("--source-crs", args->source_crs, "geographic CRS of the input (longitude, latitude)")
      ->capture_default_str();
  app->add_option("--tolerance", args->tolerance, "limits for the pass share, e.g. length=1:100000");
  add_reading_options(app, args->reading, " (fits a ground projection)");
  app->add_flag("--no-compare", args->no_compare, "skip ranking the database's CRSs for the comparison");
  app->add_option("--threads", args->threads, "worker threads; 0 uses every hardware thread")->capture_default_str();
  app->footer(std::string("\nThe parameters minimise the worst |ppm| of the metric over distortion factors at sample "
                          "vertices (Nelder-Mead); the result is then audited exactly on every feature.\n"
                          "Exit status: 0 tailored, 2 bad options or unreadable input.\n\n") +
              caution_text + "\n");
  add_trusted_crs_flag(app);
  return Command{app, [args] { return run_tailor(*args); }, {}, false};
}

const CommandRegistrar registrar{"tailor", set_up};

}  // namespace
}  // namespace gridtruth::cli
