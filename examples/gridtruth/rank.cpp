// gridtruth rank — which projected CRS keeps these features most nearly true? Candidates ranked by measurement.
#include <cmath>
#include <cstdio>
#include <iostream>
#include <memory>
#include <sstream>
#include <string>
#include <vector>

#include "commands.hpp"
#include "output_file.hpp"
#include "rank_input.hpp"
#include "gridtruth/error.hpp"
#include "gridtruth/io.hpp"
#include "gridtruth/rank.hpp"

namespace gridtruth::cli {

namespace {

struct RankArgs {
  std::string input;
  std::string source_crs = "EPSG:4326";
  std::string metric = "area";
  std::string tolerance;
  std::size_t top = 10;
  std::string out;
  cli::ReadingArgs reading;
  std::size_t sample = 20000;
  unsigned threads = 0;
};

std::string cell(double v) { return std::isfinite(v) ? format_number(v) : ""; }

std::string inside_text(const std::optional<bool>& inside) { return inside ? (*inside ? "true" : "false") : ""; }

/// --out: the first `top` candidates as CSV. Throws OutputError.
void write_rank_csv(const std::string& path, const RankReport& report, std::size_t top) {
  OutputFile file(path);
  std::ostream& csv = file.stream();
  csv << "crs,name,kind,metric,worst_ppm,p95_ppm,pass_share,inside_area_of_use,definition\r\n";
  for (std::size_t k = 0; k < report.ranked.size() && k < top; ++k) {
    const RankedCrs& r = report.ranked[k];
    csv << csv_field(r.candidate.crs) << ',' << csv_field(r.candidate.name) << ','
        << (r.candidate.generated ? "generated" : "registry") << ',' << to_string(r.metric) << ','
        << cell(r.worst_ppm) << ',' << cell(r.p95_ppm) << ',' << cell(r.pass_share) << ','
        << inside_text(r.candidate.inside_area_of_use) << ','
        << csv_field(r.candidate.generated ? r.candidate.definition : "") << "\r\n";
  }
  file.commit();
}

int run_rank(const RankArgs& a) {
  RankOptions options;
  try {
    options.source_crs = a.source_crs;
    options.metric = parse_rank_metric(a.metric);
    options.tolerances = Tolerance::parse_list(a.tolerance);
    options.leaders = std::max<std::size_t>(10, a.top);
    options.sample_features = a.sample;
    options.threads = a.threads;
    if (a.top == 0) throw Error(ErrorCode::invalid_argument, "--top must be at least 1");
  } catch (const Error& e) {
    std::cerr << "gridtruth rank: " << e.what() << "\n";
    return 2;
  }
  std::vector<std::string> outputs = {"-"};
  if (!a.out.empty()) outputs.push_back(a.out);
  if (const std::string problem = same_file_problem({a.input}, outputs); !problem.empty()) {
    std::cerr << "gridtruth rank: " << problem << "\n";
    return 2;
  }
  RankReport report;
  try {
    const LoadedFeatures features = load_features(a.input, a.reading);
    report = rank_crs(features.features, options);
  } catch (const std::exception& e) {
    std::cerr << "gridtruth rank: " << e.what() << "\n";
    return 2;
  }
  if (!a.out.empty()) {
    try {
      write_rank_csv(a.out, report, a.top);
    } catch (const OutputError& e) {
      std::cerr << "gridtruth rank: " << e.what() << "\n";
      return 2;
    }
  }
  std::ostream& o = std::cout;
  o << "Extent: west " << fixed(report.extent.west_deg, 4) << ", south " << fixed(report.extent.south_deg, 4)
    << ", east " << fixed(report.extent.east_deg, 4) << ", north " << fixed(report.extent.north_deg, 4)
    << (report.extent.crosses_antimeridian() ? " (across the antimeridian)" : "") << "\n";
  o << report.candidates << " candidates screened by distortion factors at sample vertices; " << report.ranked.size()
    << " audited exactly on ";
  if (report.sample < report.features) {
    o << "a sample of " << report.sample << " features (seed " << options.seed << "), the best "
      << std::min(options.full_reaudit, report.ranked.size()) << " again on all\n";
  } else {
    o << "all features\n";
  }
  o << "Features: " << report.features << " valid, " << report.invalid << " invalid (skipped)\n";
  o << "Metric: " << to_string(options.metric)
    << (options.metric == RankMetric::shape || options.metric == RankMetric::bearing ? " (ppm = microradians)" : "")
    << "\n\n";
  char line[512];
  std::snprintf(line, sizeof line, "%4s  %-24s %-9s %12s %12s %6s %6s  %s\n", "rank", "crs", "kind", "worst_ppm",
                "p95_ppm", "pass", "inside", "name");
  o << line;
  for (std::size_t k = 0; k < report.ranked.size() && k < a.top; ++k) {
    const RankedCrs& r = report.ranked[k];
    std::string inside = inside_text(r.candidate.inside_area_of_use);
    std::snprintf(line, sizeof line, "%4zu  %-24s %-9s %12s %12s %6s %6s  %s%s\n", k + 1, r.candidate.crs.c_str(),
                  r.candidate.generated ? "generated" : "registry", fixed(r.worst_ppm, 3).c_str(),
                  fixed(r.p95_ppm, 3).c_str(), fixed(r.pass_share, 3).c_str(), inside.empty() ? "-" : inside.c_str(),
                  r.candidate.name.c_str(), r.unmeasured ? (" [" + std::to_string(r.unmeasured) + " unmeasured]").c_str() : "");
    o << line;
  }
  if (const std::string problem = flush_stdout_problem(); !problem.empty()) {
    std::cerr << "gridtruth rank: " << problem << "\n";
    return 2;
  }
  return 0;
}

Command set_up(CLI::App& tool) {
  auto args = std::make_shared<RankArgs>();
  CLI::App* app = tool.add_subcommand("rank", "rank candidate projected CRSs by how true they keep the features");
  app->add_option("INPUT", args->input, "GeoJSON, newline-delimited GeoJSON or CSV with WKT; '-' for standard input")
      ->required();
  app->add_option("--source-crs", args->source_crs, "geographic CRS of the input (longitude, latitude)")
      ->capture_default_str();
  app->add_option("--metric", args->metric, "what to keep true: area, length, shape (angles) or bearing")
      ->capture_default_str();
  app->add_option("--tolerance", args->tolerance, "limits for the pass share, e.g. area=0.1%,length=1:10000");
  app->add_option("--top", args->top, "candidates listed")->capture_default_str();
  app->add_option("--out", args->out, "also write the ranking as CSV to this file");
  add_reading_options(app, args->reading, "");
  app->add_option("--sample", args->sample,
                  "above this many features the leaders are audited on a reproducible sample of this size")
      ->capture_default_str();
  app->add_option("--threads", args->threads, "worker threads; 0 uses every hardware thread")->capture_default_str();
  app->footer(std::string(
                  "\nCandidates: every non-deprecated projected CRS of PROJ's database whose area of use contains the "
                  "data's extent, CRSs generated for the data (UTM, transverse Mercator, Albers, Lambert conic, "
                  "Lambert azimuthal equal-area, azimuthal equidistant) and world equal-area baselines. They are "
                  "screened by distortion factors at sample vertices; the leaders are audited exactly.\n"
                  "Exit status: 0 ranked, 2 bad options or unreadable input.\n\n") +
              caution_text + "\n");
  add_trusted_crs_flag(app);
  return Command{app, [args] { return run_rank(*args); }, {}, false};
}

const CommandRegistrar registrar{"rank", set_up};

}  // namespace
}  // namespace gridtruth::cli
