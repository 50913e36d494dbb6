// gridtruth Python binding — the compiled core (gridtruth._core). The package's Python layer (gridtruth/__init__.py)
// turns these results into pandas DataFrames; the columns come from the library's result table (result_columns()).
#include <pybind11/numpy.h>
#include <pybind11/pybind11.h>
#include <pybind11/stl.h>

#include <cmath>
#include <optional>
#include <string>
#include <vector>

#include "geometry_input.hpp"
#include "gridtruth/audit.hpp"
#include "gridtruth/error.hpp"
#include "gridtruth/io.hpp"
#include "gridtruth/rank.hpp"
#include "gridtruth/runner.hpp"
#include "gridtruth/tailor.hpp"
#include "gridtruth/version.hpp"
#include "audit/runner_detail.hpp"  // detail::unread_result (lib/ is on this module's private include path)

namespace py = pybind11;
using namespace gridtruth;

namespace {

AuditOptions audit_options(const std::string& target_crs, const std::optional<std::string>& source_crs,
                           const std::optional<std::string>& edges, const std::string& tolerance, double height_m,
                           double densify_tolerance_m, double area_of_use_margin_deg, bool closed_form_short_edges) {
  AuditOptions o;
  o.target_crs = target_crs;
  if (source_crs) o.source_crs = *source_crs;
  if (edges) o.edges = EdgeSpec::parse(*edges);
  o.tolerances = Tolerance::parse_list(tolerance);
  o.height_m = height_m;
  o.densify_tolerance_m = densify_tolerance_m;
  o.area_of_use_margin_deg = area_of_use_margin_deg;
  o.closed_form_short_edges = closed_form_short_edges;
  return o;
}

py::dict crs_dict(const CrsInfo& c) {
  py::dict d;
  d["definition"] = c.definition;
  d["name"] = c.name;
  d["id"] = c.id;
  d["datum"] = c.datum_name;
  d["ellipsoid"] = c.ellipsoid.name;
  d["linear_unit"] = c.linear_unit_name;
  d["linear_unit_m"] = c.linear_unit_m;
  return d;
}

/// The features of a Python sequence of geometries (and optional per-feature heights in metres and ids), shapely
/// 1.x geometries read from GEOS on `threads` threads (0: every hardware thread).
std::vector<InputFeature> features_of(const py::iterable& geometries, const py::object& heights,
                                      const py::object& ids, unsigned threads) {
  std::vector<InputFeature> features = python::features_of_objects(geometries, threads);
  for (std::size_t k = 0; k < features.size(); ++k) features[k].position = k + 1;
  if (!ids.is_none()) {
    std::size_t k = 0;
    for (py::handle id : ids) {
      if (k >= features.size()) throw Error(ErrorCode::invalid_argument, "more ids than geometries");
      features[k++].id = py::str(id);
    }
    if (k != features.size()) throw Error(ErrorCode::invalid_argument, "fewer ids than geometries");
  } else {
    for (InputFeature& f : features) f.id = std::to_string(f.position);  // as the readers do without an id
  }
  if (!heights.is_none()) {
    std::size_t k = 0;
    for (py::handle h : heights) {
      if (k >= features.size()) throw Error(ErrorCode::invalid_argument, "more heights than geometries");
      features[k++].height_m = h.is_none() ? NAN : h.cast<double>();  // NaN: invalid, with the library's message
    }
    if (k != features.size()) throw Error(ErrorCode::invalid_argument, "fewer heights than geometries");
  }
  return features;
}

/// What a result row needs of its feature.
struct RowKey {
  std::string id;
  bool read = false;  ///< the feature had a geometry (else: an unread row)
  std::optional<GeometryType> declared_type;
};

RowKey key_of(const InputFeature& f) { return {f.id, f.geometry.has_value(), f.declared_type}; }

std::vector<RowKey> keys_of(const std::vector<InputFeature>& features) {
  std::vector<RowKey> keys;
  keys.reserve(features.size());
  for (const InputFeature& f : features) keys.push_back(key_of(f));
  return keys;
}

/// The result table of features and their results: {column name: numpy float64 array or list of str}, the rows
/// as ResultCsvWriter writes them (result_row(), unread_row()).
py::dict result_table(const std::vector<RowKey>& features, const std::vector<AuditResult>& results,
                      bool combined_factor, bool bounds) {
  const auto& columns = result_columns(combined_factor, bounds);
  const std::size_t n = features.size();
  std::vector<py::list> texts(columns.size());
  std::vector<py::array_t<double>> numbers(columns.size());
  std::vector<double*> data(columns.size(), nullptr);
  for (std::size_t k = 0; k < columns.size(); ++k) {
    if (columns[k].kind == ColumnKind::text) texts[k] = py::list(n);
    else {
      numbers[k] = py::array_t<double>(static_cast<py::ssize_t>(n));
      data[k] = numbers[k].mutable_data();
    }
  }
  for (std::size_t i = 0; i < n; ++i) {
    const RowKey& f = features[i];
    ResultRow row = f.read ? result_row(f.id, results[i], combined_factor, bounds)
                           : unread_row(f.id, results[i].message, f.declared_type, combined_factor, bounds);
    for (std::size_t k = 0; k < row.size; ++k) {
      if (data[k]) data[k][i] = row.cells[k].number;
      else texts[k][i] = py::str(row.cells[k].text.data(), row.cells[k].text.size());
    }
  }
  py::dict table;
  for (std::size_t k = 0; k < columns.size(); ++k) {
    const py::str name(columns[k].name.data(), columns[k].name.size());
    if (data[k]) table[name] = numbers[k];
    else table[name] = texts[k];
  }
  return table;
}

RankOptions rank_options(const py::dict& o) {
  RankOptions r;
  if (o.contains("source_crs") && !o["source_crs"].is_none()) r.source_crs = o["source_crs"].cast<std::string>();
  if (o.contains("metric")) r.metric = parse_rank_metric(o["metric"].cast<std::string>());
  if (o.contains("tolerance") && !o["tolerance"].is_none())
    r.tolerances = Tolerance::parse_list(o["tolerance"].cast<std::string>());
  if (o.contains("registry")) r.registry = o["registry"].cast<bool>();
  if (o.contains("generated")) r.generated = o["generated"].cast<bool>();
  if (o.contains("leaders")) r.leaders = o["leaders"].cast<std::size_t>();
  if (o.contains("sample_features")) r.sample_features = o["sample_features"].cast<std::size_t>();
  if (o.contains("full_reaudit")) r.full_reaudit = o["full_reaudit"].cast<std::size_t>();
  if (o.contains("seed")) r.seed = o["seed"].cast<std::uint64_t>();
  if (o.contains("screen_points")) r.screen_points = o["screen_points"].cast<std::size_t>();
  if (o.contains("threads") && !o["threads"].is_none()) r.threads = o["threads"].cast<unsigned>();
  return r;
}

/// The readable geometries of a sequence with their heights (rank and tailor ignore what cannot be read).
std::vector<RankFeature> rank_input(const py::iterable& geometries, const py::object& heights, unsigned threads) {
  std::vector<RankFeature> in;
  for (InputFeature& f : features_of(geometries, heights, py::none(), threads)) {
    if (f.geometry) in.push_back({std::move(*f.geometry), f.height_m});
  }
  return in;
}

py::dict ranked_dict(const RankedCrs& r) {
  py::dict d;
  d["crs"] = r.candidate.crs;
  d["name"] = r.candidate.name;
  d["kind"] = r.candidate.generated ? "generated" : "registry";
  d["metric"] = std::string(to_string(r.metric));
  d["worst_ppm"] = r.worst_ppm;
  d["p95_ppm"] = r.p95_ppm;
  d["pass_share"] = r.pass_share;
  d["inside_area_of_use"] =
      r.candidate.inside_area_of_use ? py::object(py::bool_(*r.candidate.inside_area_of_use)) : py::object(py::none());
  d["definition"] = r.candidate.definition;
  d["screen_ppm"] = r.screen_ppm;
  d["features"] = r.features;
  d["unmeasured"] = r.unmeasured;
  d["sampled"] = r.sampled;
  return d;
}

}  // namespace

PYBIND11_MODULE(_core, m) {
  m.doc() = "gridtruth's compiled core; use the gridtruth package";
  m.attr("__version__") = std::string(version_string());

  // gridtruth::Error → gridtruth.Error (a ValueError) carrying `code`; io errors → OSError.
  static py::exception<Error> error_type(m, "Error", PyExc_ValueError);
  py::register_exception_translator([](std::exception_ptr p) {
    try {
      if (p) std::rethrow_exception(p);
    } catch (const Error& e) {
      if (e.code() == ErrorCode::io) {
        PyErr_SetString(PyExc_OSError, e.what());
        return;
      }
      py::object instance = py::reinterpret_borrow<py::object>(error_type.ptr())(e.what());
      instance.attr("code") = std::string(to_string(e.code()));
      PyErr_SetObject(error_type.ptr(), instance.ptr());
    }
  });

  py::class_<Budget>(m, "Budget", "One measure (length in m, or area in m²) with its error budget")
      .def_readonly("reference", &Budget::reference, "R: the true measure (m or m²)")
      .def_readonly("grid", &Budget::grid, "G: the grid measure, straight chords in the target plane")
      .def_readonly("error", &Budget::error, "G − R")
      .def_readonly("error_ppm", &Budget::error_ppm, "10⁶ (G − R) / R; NaN when R = 0")
      .def_readonly("from_edges", &Budget::from_edges, "G − D: arc-to-chord")
      .def_readonly("from_scale", &Budget::from_scale, "D − E_P: projection scale")
      .def_readonly("from_datum", &Budget::from_datum, "E_P − E_S: datum change")
      .def_readonly("from_height", &Budget::from_height, "E_S − R: ellipsoid versus ground")
      .def_readonly("ellipsoid_source", &Budget::ellipsoid_source, "E_S")
      .def_readonly("ellipsoid_target", &Budget::ellipsoid_target, "E_P")
      .def_readonly("densified_grid", &Budget::densified_grid, "D")
      // Bounds on |computed − exact| of each figure (m or m²; NaN: none can be given; Budget's *_bound).
      .def_readonly("reference_bound", &Budget::reference_bound, "bound on R")
      .def_readonly("grid_bound", &Budget::grid_bound, "bound on G")
      .def_readonly("error_bound", &Budget::error_bound, "bound on G − R (with the datum's stated accuracy)")
      .def_readonly("from_edges_bound", &Budget::from_edges_bound, "bound on G − D")
      .def_readonly("from_scale_bound", &Budget::from_scale_bound, "bound on D − E_P")
      .def_readonly("from_datum_bound", &Budget::from_datum_bound, "bound on E_P − E_S")
      .def_readonly("from_height_bound", &Budget::from_height_bound, "bound on E_S − R")
      .def_readonly("ellipsoid_source_bound", &Budget::ellipsoid_source_bound, "bound on E_S")
      .def_readonly("ellipsoid_target_bound", &Budget::ellipsoid_target_bound, "bound on E_P")
      .def_readonly("densified_grid_bound", &Budget::densified_grid_bound, "bound on D");

  py::class_<Distortion>(m, "Distortion", "Distortion statistics over a feature")
      .def_readonly("scale_min", &Distortion::scale_min)
      .def_readonly("scale_max", &Distortion::scale_max)
      .def_readonly("areal_scale_min", &Distortion::areal_scale_min)
      .def_readonly("areal_scale_max", &Distortion::areal_scale_max)
      .def_readonly("angular_distortion_max_deg", &Distortion::angular_distortion_max_deg)
      .def_readonly("convergence_min_deg", &Distortion::convergence_min_deg)
      .def_readonly("convergence_max_deg", &Distortion::convergence_max_deg);

  py::class_<AuditResult>(m, "AuditResult", "Everything gridtruth says about one feature")
      .def_property_readonly("status", [](const AuditResult& r) { return std::string(to_string(r.status)); })
      .def_readonly("message", &AuditResult::message)
      .def_property_readonly("geometry_type", [](const AuditResult& r) { return std::string(to_string(r.type)); })
      .def_readonly("vertices", &AuditResult::vertices)
      .def_readonly("length", &AuditResult::length, "Budget of the length (perimeter of polygons), or None")
      .def_readonly("area", &AuditResult::area, "Budget of the area (polygons), or None")
      .def_readonly("distortion", &AuditResult::distortion)
      .def_readonly("bearing_error_max_arcsec", &AuditResult::bearing_error_max_arcsec)
      .def_readonly("densified_points", &AuditResult::densified_points)
      .def_readonly("height_m", &AuditResult::height_m)
      .def_readonly("combined_factor", &AuditResult::combined_factor)
      .def_property_readonly("verdict", [](const AuditResult& r) { return std::string(to_string(r.verdict)); })
      .def_readonly("failed", &AuditResult::failed)
      .def("__repr__", [](const AuditResult& r) {
        std::string s = "<AuditResult " + std::string(to_string(r.type)) + " " + std::string(to_string(r.status));
        if (r.area) s += " area_error_ppm=" + format_number(r.area->error_ppm);
        else if (r.length) s += " length_error_ppm=" + format_number(r.length->error_ppm);
        if (r.verdict != Verdict::none) s += " " + std::string(to_string(r.verdict));
        return s + ">";
      });

  py::class_<Auditor>(m, "Auditor", py::dynamic_attr())
      .def(py::init([](const std::string& target_crs, const std::optional<std::string>& source_crs,
                       const std::optional<std::string>& edges, const std::string& tolerance, double height_m,
                       double densify_tolerance_m, double area_of_use_margin_deg, bool closed_form_short_edges) {
             return Auditor(audit_options(target_crs, source_crs, edges, tolerance, height_m, densify_tolerance_m,
                                          area_of_use_margin_deg, closed_form_short_edges));
           }),
           py::arg("target_crs"), py::arg("source_crs") = py::none(), py::arg("edges") = py::none(),
           py::arg("tolerance") = "", py::arg("height_m") = 0.0, py::arg("densify_tolerance_m") = 0.001,
           py::arg("area_of_use_margin_deg") = 5.0, py::arg("closed_form_short_edges") = true)
      .def(
          "audit",
          [](const Auditor& a, py::handle geometry, std::optional<double> height_m) {
            InputFeature f = python::feature_of(geometry);
            if (!f.geometry) return detail::unread_result(f);
            py::gil_scoped_release release;
            return height_m ? a.audit(*f.geometry, *height_m) : a.audit(*f.geometry);
          },
          py::arg("geometry"), py::arg("height_m") = py::none(),
          "Audits one geometry (shapely, WKB, WKT or __geo_interface__); never raises for a bad geometry")
      .def(
          "_audit_table",
          [](const Auditor& a, const py::iterable& geometries, const py::object& heights, const py::object& ids,
             unsigned threads, std::size_t batch_features, bool combined_factor, bool bounds) {
            const std::vector<InputFeature> features = features_of(geometries, heights, ids, threads);
            std::vector<AuditResult> results;
            {
              py::gil_scoped_release release;
              results = audit_features(features, a, RunOptions{threads, batch_features});
            }
            return result_table(keys_of(features), results, combined_factor, bounds);
          },
          py::arg("geometries"), py::arg("heights"), py::arg("ids"), py::arg("threads"),
          py::arg("batch_features"), py::arg("combined_factor"), py::arg("bounds") = false)
      .def(
          "_audit_file",
          [](const Auditor& a, const std::string& path, const std::string& format, const std::string& id_field,
             const std::string& wkt_field, const std::string& height_field, unsigned threads,
             std::size_t batch_features, bool combined_factor, bool bounds) {
            ReaderOptions ro;
            ro.format = parse_input_format(format);
            ro.id_field = id_field;
            ro.wkt_field = wkt_field;
            ro.height_field = height_field;
            std::vector<RowKey> keys;
            std::vector<AuditResult> results;
            {
              py::gil_scoped_release release;
              FeatureReader reader(path, ro);
              run_audit(reader, a, RunOptions{threads, batch_features},
                        [&](const InputFeature& f, const AuditResult& r) {
                          keys.push_back(key_of(f));
                          results.push_back(r);
                        });
            }
            return result_table(keys, results, combined_factor, bounds);
          },
          py::arg("path"), py::arg("format"), py::arg("id_field"), py::arg("wkt_field"), py::arg("height_field"),
          py::arg("threads"), py::arg("batch_features"), py::arg("combined_factor"), py::arg("bounds") = false,
          "Audits a file with the library's readers and runner (as gridtruth audit does)")
      .def("clone", &Auditor::clone, "An independent auditor for another thread")
      .def("factors",
           [](const Auditor& a, double lon_deg, double lat_deg) {
             const PointFactors f = a.factors(lon_deg, lat_deg);
             py::dict d;
             d["meridional_scale"] = f.meridional_scale;
             d["parallel_scale"] = f.parallel_scale;
             d["areal_scale"] = f.areal_scale;
             d["tissot_a"] = f.tissot_a;
             d["tissot_b"] = f.tissot_b;
             d["angular_distortion_deg"] = f.angular_distortion_deg;
             d["convergence_deg"] = f.convergence_deg;
             return d;
           })
      .def("project",
           [](const Auditor& a, double lon_deg, double lat_deg) {
             const Coord c = a.project(lon_deg, lat_deg);
             return py::make_tuple(c.x, c.y);
           })
      .def_property_readonly("source", [](const Auditor& a) { return crs_dict(a.source()); })
      .def_property_readonly("target", [](const Auditor& a) { return crs_dict(a.target()); })
      .def_property_readonly("edges", [](const Auditor& a) { return a.edges().to_string(); })
      .def_property_readonly("tolerances",
                             [](const Auditor& a) {
                               std::vector<std::string> t;
                               for (const Tolerance& tol : a.options().tolerances) t.push_back(tol.to_string());
                               return t;
                             })
      .def_property_readonly("transform", [](const Auditor& a) {
        const TransformInfo& t = a.transform();
        py::dict d;
        d["name"] = t.name;
        d["accuracy_m"] = t.accuracy_m;
        d["is_identity"] = t.is_identity;
        d["is_ballpark"] = t.is_ballpark;
        d["proj_string"] = t.proj_string;
        return d;
      });

  m.def("result_columns", [](bool combined_factor, bool bounds) {
    py::list out;
    for (const ResultColumn& c : result_columns(combined_factor, bounds)) {
      out.append(py::make_tuple(std::string(c.name), std::string(to_string(c.kind))));
    }
    return out;
  }, py::arg("combined_factor") = false, py::arg("bounds") = false,
        "The result table's (name, kind) pairs: the CSV columns of gridtruth audit (with --bounds: `bounds`)");

  m.def("parse_wkb", [](py::bytes wkb) {
    const Geometry g = python::parse_wkb(std::string(wkb));
    return py::make_tuple(std::string(to_string(g.type)), g.vertex_count());
  }, "Parses WKB; returns (geometry type, vertex count); raises gridtruth.Error for malformed WKB");

  m.def("_shapely_geos_linked", &python::shapely_geos_linked,
        "True when shapely 1.x geometries are read straight from GEOS (the libgeos_c this module links)");

  m.def("rank", [](const py::iterable& geometries, const py::object& heights, const py::dict& options) {
    const RankOptions o = rank_options(options);
    const std::vector<RankFeature> in = rank_input(geometries, heights, o.threads);
    RankReport report;
    {
      py::gil_scoped_release release;
      report = rank_crs(in, o);
    }
    py::list rows;
    for (const RankedCrs& r : report.ranked) rows.append(ranked_dict(r));
    return rows;
  });

  m.def("tailor", [](const py::iterable& geometries, const py::object& heights, const std::string& family,
                     const py::dict& options) {
    TailorOptions o;
    o.rank = rank_options(options);
    if (options.contains("max_evaluations")) o.max_evaluations = options["max_evaluations"].cast<std::size_t>();
    if (options.contains("optimise_scale")) o.optimise_scale = options["optimise_scale"].cast<bool>();
    if (options.contains("compare_registry")) o.compare_registry = options["compare_registry"].cast<bool>();
    const ProjectionFamily f = parse_projection_family(family);
    const std::vector<RankFeature> in = rank_input(geometries, heights, o.rank.threads);
    TailorResult t;
    {
      py::gil_scoped_release release;
      t = tailor_crs(in, f, o);
    }
    py::dict d;
    d["family"] = std::string(to_string(t.family));
    py::dict parameters;
    for (const TailoredParameter& p : t.parameters) parameters[py::str(p.name)] = p.value;
    d["parameters"] = parameters;
    d["proj_string"] = t.proj_string;
    d["wkt2"] = t.wkt2;
    d["start_objective_ppm"] = t.start_objective_ppm;
    d["objective_ppm"] = t.objective_ppm;
    d["evaluations"] = t.evaluations;
    d["audit"] = ranked_dict(t.audit);
    d["best_registry"] = t.best_registry ? py::object(ranked_dict(*t.best_registry)) : py::object(py::none());
    return d;
  });
}
