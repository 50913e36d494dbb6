// gridtruth command — the run summary of `gridtruth audit`.
#include "audit_summary.hpp"

#include "commands.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <sstream>

#include "gridtruth/error.hpp"
#include "gridtruth/text.hpp"

namespace gridtruth::cli {

const std::vector<std::string>& summary_unit_names() {
  static const std::vector<std::string> names = {"metric", "hectare", "acre", "us-survey-acre"};
  return names;
}

SummaryUnits summary_units(std::string_view name) {
  // Area units. The international foot is 0.3048 m exactly, so the international acre (43 560 ft²) is
  // 4 046.856 422 4 m² exactly. The US survey foot is 1200/3937 m, and the US survey acre 43 560 US survey ft²,
  // 4 046.872 609 874 252 m² (NIST Handbook 44, appendix C; NIST SP 811, appendix B; the US survey foot was deprecated from 2023 by the notice in the Federal
  // Register, 85 FR 62698 (5 October 2020), "Deprecation of the United States (U.S.) Survey Foot").
  if (name == "metric") return {"metric", "m", "m2", 1.0, 1.0};
  if (name == "hectare") return {"hectare", "m", "ha", 1.0, 1e4};
  if (name == "acre") return {"acre", "ft", "ac", 0.3048, 4046.8564224};
  if (name == "us-survey-acre") return {"us-survey-acre", "ftUS", "acUS", 1200.0 / 3937.0, 4046.872609874252};
  throw Error(ErrorCode::invalid_argument,
              "unknown units \"" + std::string(name) + "\" (expected metric, hectare, acre or us-survey-acre)");
}

namespace {

double ppm(double error, double reference) { return reference != 0 ? 1e6 * error / reference : NAN; }

nlohmann::ordered_json number_or_null(double v) {
  return std::isfinite(v) ? nlohmann::ordered_json(v) : nlohmann::ordered_json(nullptr);
}

nlohmann::ordered_json crs_json(const CrsInfo& c) {
  return {{"definition", c.definition}, {"name", c.name}, {"id", c.id}, {"datum", c.datum_name},
          {"ellipsoid", c.ellipsoid.name}, {"linear_unit", c.linear_unit_name}};
}

}  // namespace

void AuditSummary::add(const InputFeature& feature, const AuditResult& r) {
  stats_.add(feature.id, feature.position, r);
  if (r.message.find("lie outside the area of use") != std::string::npos) ++outside_area_of_use_;
  if (r.message.rfind(looks_projected_text, 0) == 0) ++look_projected_;
}

void AuditSummary::add_unread(const InputFeature&) { stats_.add_unread(); }

std::vector<std::string> AuditSummary::datum_warnings(const Auditor& a) const {
  std::vector<std::size_t> used;
  for (const auto& entry : stats_.datum_use()) used.push_back(entry.first);
  return a.datum_warnings(used);
}

/// The auditor's part of the JSON summary: the CRSs, the datum transformation and its candidates, the options.
void AuditSummary::add_auditor_json(nlohmann::ordered_json& j, const Auditor& a) const {
  using json = nlohmann::ordered_json;
  j["source_crs"] = crs_json(a.source());
  j["target_crs"] = crs_json(a.target());
  const TransformInfo& t = a.transform();
  j["datum_transformation"] = {{"name", t.name},
                               {"accuracy_m", t.accuracy_m ? json(*t.accuracy_m) : json(nullptr)},
                               {"is_identity", t.is_identity},
                               {"is_ballpark", t.is_ballpark},
                               {"proj_string", t.proj_string}};
  json candidates = json::array();
  const auto& ops = a.datum_operations();
  for (std::size_t i = 0; i < ops.size(); ++i) {
    const DatumOperation& d = ops[i];
    const auto used = stats_.datum_use().find(i);
    json area = nullptr;
    if (d.area) {
      area = {{"name", d.area->name}, {"west_deg", d.area->west_deg}, {"south_deg", d.area->south_deg},
              {"east_deg", d.area->east_deg}, {"north_deg", d.area->north_deg}};
    }
    candidates.push_back({{"name", d.name},
                          {"accuracy_m", d.accuracy_m ? json(*d.accuracy_m) : json(nullptr)},
                          {"is_ballpark", d.is_ballpark},
                          {"grids_available", d.grids_available},
                          {"missing_grids", d.missing_grids},
                          {"usable", d.usable},
                          {"area_of_use", area},
                          {"features", used == stats_.datum_use().end() ? 0 : used->second}});
  }
  // Beside "datum_transformation" (the Python package's summary() mirrors that one): what PROJ offered.
  j["datum_operations"] = {
      {"pinned", a.options().datum_operation.empty() ? json(nullptr) : json(a.options().datum_operation)},
      {"candidates", candidates},
      {"warnings", datum_warnings(a)}};
  j["edges"] = a.edges().to_string();
  json tolerances = json::array();
  for (const auto& tol : a.options().tolerances) tolerances.push_back(tol.to_string());  // canonical for machines (as the Python summary)
  j["options"] = {{"height_m", a.options().height_m},
                  {"densify_tolerance_m", a.options().densify_tolerance_m},
                  {"tolerances", tolerances}};
}

nlohmann::ordered_json AuditSummary::to_json(const Context& c) const {
  using json = nlohmann::ordered_json;
  const SummaryUnits& u = c.units;
  json j;
  j["input"] = c.input;
  j["format"] = std::string(to_string(c.format));
  if (c.auditor) add_auditor_json(j, *c.auditor);
  j["units"] = {{"name", u.name},
                {"length_unit", u.length_unit},
                {"area_unit", u.area_unit},
                {"metres_per_length_unit", u.length_m},
                {"square_metres_per_area_unit", u.area_m2}};
  const RunStatistics& st = stats_;
  j["counts"] = {{"read", st.read()}, {"ok", st.ok()},     {"invalid", st.invalid()},
                 {"unmeasurable", st.unmeasurable()}, {"pass", st.pass()}, {"fail", st.fail()}};
  const double tl = st.true_length_m(), gl = st.grid_length_m();
  const double ta = st.true_area_m2(), ga = st.grid_area_m2();
  j["totals"] = {
      {"length_features", st.length_features()},
      {"true_length", number_or_null(tl / u.length_m)},
      {"grid_length", number_or_null(gl / u.length_m)},
      {"length_error", number_or_null((gl - tl) / u.length_m)},
      {"length_error_ppm", number_or_null(ppm(gl - tl, tl))},
      {"area_features", st.area_features()},
      {"true_area", number_or_null(ta / u.area_m2)},
      {"grid_area", number_or_null(ga / u.area_m2)},
      {"area_error", number_or_null((ga - ta) / u.area_m2)},
      {"area_error_ppm", number_or_null(ppm(ga - ta, ta))},
  };
  json worst = json::array();
  for (const auto& w : st.worst()) {
    const double scale = w.measure == "area" ? u.area_m2 : u.length_m;
    worst.push_back({{"id", w.id},
                     {"position", w.position},
                     {"geometry_type", std::string(to_string(w.type))},
                     {"measure", w.measure},
                     {"error_ppm", number_or_null(w.error_ppm)},
                     {"error", number_or_null(w.error / scale)},
                     {"verdict", std::string(to_string(w.verdict))}});
  }
  j["worst_features"] = worst;
  json problems = json::array();
  std::uint64_t skipped_bytes = 0;
  if (c.input_problems) {
    for (const InputProblem& p : *c.input_problems) {
      skipped_bytes += p.end_byte - p.first_byte;
      problems.push_back({{"first_byte", p.first_byte},
                          {"end_byte", p.end_byte},
                          {"line", p.line},
                          {"feature_position", p.position ? json(p.position) : json(nullptr)},
                          {"message", p.message}});
    }
  }
  j["input_problems"] = {{"skipped_bytes", skipped_bytes}, {"spans", problems}};
  j["outside_area_of_use"] = outside_area_of_use_;
  j["look_projected"] = look_projected_;
  j["exit_status"] = exit_status(c);
  j["caution"] = caution_text;
  return j;
}

/// The auditor's part of the text summary: the CRSs, the datum transformation(s) used, the edges, the tolerances.
void AuditSummary::add_auditor_text(std::ostringstream& s, const Auditor& a) const {
  auto crs_line = [](const CrsInfo& crs) {
    std::string line = crs.name;
    if (!crs.id.empty()) line += " [" + crs.id + "]";
    return line;
  };
  s << "  source CRS:   " << crs_line(a.source()) << "\n";
  s << "  target CRS:   " << crs_line(a.target()) << "\n";
  const TransformInfo& t = a.transform();
  const auto& ops = a.datum_operations();
  auto accuracy = [](const DatumOperation& d) {
    return d.is_ballpark    ? std::string("ballpark: approximate only")
           : d.accuracy_m ? "stated accuracy " + fixed_text(*d.accuracy_m, 3) + " m"
                          : std::string("accuracy unknown: the datum part has no bound");
  };
  std::size_t usable = 0;
  for (const DatumOperation& d : ops) usable += d.usable ? 1 : 0;
  const std::string candidates = std::to_string(ops.size()) + " candidates, " + std::to_string(usable) +
                                 " usable; --summary lists them";
  const auto& datum_use = stats_.datum_use();
  if (datum_use.size() == 1) {
    const DatumOperation& d = ops[datum_use.begin()->first];
    s << "  datum transformation: " << d.name << " (" << accuracy(d) << ")\n    (" << candidates << ")\n";
  } else if (datum_use.size() > 1) {
    // What the features used, per operation: PROJ's choice per feature.
    s << "  datum transformation: per feature (" << candidates << "):\n";
    for (const auto& [index, features] : datum_use) {
      s << "    " << ops[index].name << " (" << accuracy(ops[index]) << "): " << features << " feature(s)\n";
    }
  } else {
    s << "  datum transformation: " << t.name;
    if (t.is_identity) {
    } else if (t.accuracy_m) s << " (stated accuracy " << fixed_text(*t.accuracy_m, 3) << " m)";
    else s << " (accuracy unknown: the datum part has no bound)";
    if (t.is_ballpark) s << " [ballpark: approximate only]";
    s << "\n";
  }
  for (const std::string& w : datum_warnings(a)) s << "  warning: " << w << "\n";
  s << "  edges:        " << a.edges().to_string() << "\n";
  std::string tolerances;
  for (const auto& tol : a.options().tolerances) tolerances += (tolerances.empty() ? "" : ", ") + tol.as_given();
  s << "  tolerances:   " << (tolerances.empty() ? "none (no verdict)" : tolerances) << "\n";
}

std::string AuditSummary::to_text(const Context& c) const {
  const SummaryUnits& u = c.units;
  std::ostringstream s;
  s << "gridtruth audit: " << c.input << " (" << to_string(c.format) << ")\n";
  if (c.auditor) add_auditor_text(s, *c.auditor);
  const RunStatistics& st = stats_;
  s << "  features:     " << st.read() << " read, " << st.ok() << " ok, " << st.invalid() << " invalid, "
    << st.unmeasurable() << " unmeasurable; " << st.pass() << " pass, " << st.fail() << " fail\n";
  if (st.area_features() > 0) {
    const double ta = st.true_area_m2(), ga = st.grid_area_m2();
    s << "  area of " << st.area_features() << " polygonal feature(s): true " << fixed_text(ta / u.area_m2, 4) << " "
      << u.area_unit << ", grid " << fixed_text(ga / u.area_m2, 4) << " " << u.area_unit << ", error "
      << signed_fixed_text((ga - ta) / u.area_m2, 4) << " " << u.area_unit << " (" << signed_fixed_text(ppm(ga - ta, ta), 1)
      << " ppm)\n";
  }
  if (st.length_features() > 0) {
    const double tl = st.true_length_m(), gl = st.grid_length_m();
    s << "  length of " << st.length_features() << " linear feature(s): true " << fixed_text(tl / u.length_m, 3) << " "
      << u.length_unit << ", grid " << fixed_text(gl / u.length_m, 3) << " " << u.length_unit << ", error "
      << signed_fixed_text((gl - tl) / u.length_m, 3) << " " << u.length_unit << " ("
      << signed_fixed_text(ppm(gl - tl, tl), 1) << " ppm)\n";
  }
  const auto w = st.worst();
  if (!w.empty()) {
    s << "  worst features by |ppm|:\n";
    for (const auto& f : w) {
      s << "    " << f.id << "  " << to_string(f.type) << "  " << f.measure << " " << signed_fixed_text(f.error_ppm, 1)
        << " ppm";
      if (f.verdict != Verdict::none) s << "  " << to_string(f.verdict);
      s << "\n";
    }
  }
  if (outside_area_of_use_ > 0) {
    s << "  warning: " << outside_area_of_use_ << " feature(s) lie partly outside the target CRS's area of use\n";
  }
  if (look_projected_ > 0) {
    s << "  warning: " << looks_projected_text << " (" << look_projected_ << " feature(s))\n";
  }
  if (c.input_problems && !c.input_problems->empty()) {
    std::uint64_t skipped_bytes = 0;
    for (const InputProblem& p : *c.input_problems) skipped_bytes += p.end_byte - p.first_byte;
    s << "  damaged input: " << c.input_problems->size() << " place(s), " << skipped_bytes << " bytes skipped\n";
    for (const InputProblem& p : *c.input_problems) {
      s << "    line " << p.line;
      if (p.position) s << " (row of feature " << p.position << ")";
      s << ": " << p.message << "\n";
    }
  }
  s << "  " << caution_text << "\n";
  return s.str();
}

}  // namespace gridtruth::cli
