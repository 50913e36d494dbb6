// gridtruth Python binding — Python geometry objects to gridtruth::Geometry.
#include "geometry_input.hpp"

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <cstring>
#include <string>
#include <system_error>
#include <thread>
#include <type_traits>

#include "gridtruth/error.hpp"

#ifdef GRIDTRUTH_PYTHON_GEOS
#include <geos_c.h>
#endif

namespace py = pybind11;

namespace gridtruth::python {

namespace {

/// Reads WKB (ISO 19125-1 / OGC 06-103r4 §8.2.5 ff.) from a byte buffer, keeping the offset for messages.
class WkbCursor {
 public:
  explicit WkbCursor(std::string_view bytes) : bytes_(bytes) {}

  Geometry geometry() {
    Geometry g;
    const Header h = header();
    switch (h.base) {
      case 1: {
        g.type = GeometryType::point;
        const Coord c = coord(h.little, h.dimensions);
        if (!(std::isnan(c.x) && std::isnan(c.y))) g.points.push_back(c);  // GEOS writes POINT EMPTY as NaN, NaN
        break;
      }
      case 2: g.type = GeometryType::line_string; g.lines.push_back(path(h.little, h.dimensions)); break;
      case 3: g.type = GeometryType::polygon; g.polygons.push_back(polygon(h.little, h.dimensions)); break;
      case 4: case 5: case 6: {
        g.type = h.base == 4 ? GeometryType::multi_point : h.base == 5 ? GeometryType::multi_line_string
                                                                     : GeometryType::multi_polygon;
        const std::uint32_t n = count(h.little);
        for (std::uint32_t k = 0; k < n; ++k) {
          const std::size_t at = offset_;
          const Header part = header();
          if (part.base != h.base - 3) fail(at, "a part of a " + std::string(to_string(g.type)) + " is not a " +
                                                    std::string(single_name(h.base - 3)));
          if (h.base == 4) {
            const Coord c = coord(part.little, part.dimensions);
            if (!(std::isnan(c.x) && std::isnan(c.y))) g.points.push_back(c);
          } else if (h.base == 5) {
            g.lines.push_back(path(part.little, part.dimensions));
          } else {
            g.polygons.push_back(polygon(part.little, part.dimensions));
          }
        }
        break;
      }
      case 7: fail(h.at, "GeometryCollection is not supported");
      default: fail(h.at, "unknown WKB geometry type " + std::to_string(h.base));
    }
    return g;
  }

  bool at_end() const { return offset_ == bytes_.size(); }
  std::size_t offset() const { return offset_; }

 private:
  struct Header {
    std::size_t at = 0;
    bool little = true;
    std::uint32_t base = 0;    // 1 Point … 7 GeometryCollection
    unsigned dimensions = 2;   // ordinates per coordinate
  };

  [[noreturn]] static void fail(std::size_t at, const std::string& what) {
    throw Error(ErrorCode::parse, "WKB byte " + std::to_string(at) + ": " + what);
  }

  static std::string_view single_name(std::uint32_t base) {
    return base == 1 ? "Point" : base == 2 ? "LineString" : "Polygon";
  }

  void need(std::size_t n) {
    if (bytes_.size() - offset_ < n) fail(offset_, "truncated (" + std::to_string(bytes_.size()) + " bytes in all)");
  }

  std::uint32_t u32(bool little) {
    need(4);
    unsigned char b[4];
    std::memcpy(b, bytes_.data() + offset_, 4);
    offset_ += 4;
    return little ? (std::uint32_t(b[0]) | std::uint32_t(b[1]) << 8 | std::uint32_t(b[2]) << 16 |
                     std::uint32_t(b[3]) << 24)
                  : (std::uint32_t(b[3]) | std::uint32_t(b[2]) << 8 | std::uint32_t(b[1]) << 16 |
                     std::uint32_t(b[0]) << 24);
  }

  double f64(bool little) {
    need(8);
    unsigned char b[8];
    std::memcpy(b, bytes_.data() + offset_, 8);
    offset_ += 8;
    std::uint64_t bits = 0;
    for (int k = 0; k < 8; ++k) bits |= std::uint64_t(b[little ? k : 7 - k]) << (8 * k);
    double v;
    std::memcpy(&v, &bits, sizeof v);
    return v;
  }

  Header header() {
    Header h;
    h.at = offset_;
    need(1);
    const unsigned char order = static_cast<unsigned char>(bytes_[offset_++]);
    if (order > 1) fail(h.at, "byte order must be 0 or 1, not " + std::to_string(order));
    h.little = order == 1;
    std::uint32_t type = u32(h.little);
    // EWKB (PostGIS, GEOS): high bits for Z (0x80000000), M (0x40000000) and an SRID (0x20000000) that follows.
    if (type & 0x80000000U) ++h.dimensions;
    if (type & 0x40000000U) ++h.dimensions;
    if (type & 0x20000000U) u32(h.little);
    type &= 0x0FFFFFFFU;
    // ISO: 1000s for Z, 2000s for M, 3000s for ZM.
    const std::uint32_t thousands = type / 1000;
    if (thousands > 3) fail(h.at, "unknown WKB geometry type " + std::to_string(type));
    h.dimensions += thousands == 3 ? 2 : thousands > 0 ? 1 : 0;
    h.base = type % 1000;
    return h;
  }

  std::uint32_t count(bool little) {
    const std::size_t at = offset_;
    const std::uint32_t n = u32(little);
    // Every element takes at least 4 bytes: a larger count cannot be right (and must not allocate).
    if (n > (bytes_.size() - offset_) / 4) fail(at, "count " + std::to_string(n) + " exceeds the data");
    return n;
  }

  Coord coord(bool little, unsigned dimensions) {
    Coord c;
    c.x = f64(little);
    c.y = f64(little);
    for (unsigned k = 2; k < dimensions; ++k) f64(little);
    return c;
  }

  Path path(bool little, unsigned dimensions) {
    const std::uint32_t n = count(little);
    Path p;
    p.reserve(n);
    for (std::uint32_t k = 0; k < n; ++k) p.push_back(coord(little, dimensions));
    return p;
  }

  Polygon polygon(bool little, unsigned dimensions) {
    const std::uint32_t rings = count(little);
    Polygon p;
    for (std::uint32_t k = 0; k < rings; ++k) {
      if (k == 0) p.outer = path(little, dimensions);
      else p.holes.push_back(path(little, dimensions));
    }
    return p;
  }

  std::string_view bytes_;
  std::size_t offset_ = 0;
};

Coord coord_of(py::handle position) {
  const py::sequence s = py::reinterpret_borrow<py::sequence>(position);
  if (s.size() < 2) throw Error(ErrorCode::parse, "a position needs two numbers");
  return {s[0].cast<double>(), s[1].cast<double>()};
}

Path path_of(py::handle positions) {
  Path p;
  for (py::handle position : positions) p.push_back(coord_of(position));
  return p;
}

Polygon polygon_of(py::handle rings) {
  Polygon p;
  bool first = true;
  for (py::handle ring : rings) {
    if (first) p.outer = path_of(ring);
    else p.holes.push_back(path_of(ring));
    first = false;
  }
  return p;
}

/// A GeoJSON geometry mapping (RFC 7946 §3.1): "type" and "coordinates".
Geometry geometry_of_mapping(py::handle mapping) {
  const py::object get = mapping.attr("get");
  const py::object type_object = get("type");
  if (type_object.is_none()) throw Error(ErrorCode::parse, "the mapping has no \"type\"");
  const std::string type = py::str(type_object);
  if (type == "GeometryCollection") throw Error(ErrorCode::parse, "GeometryCollection is not supported");
  const py::object coordinates = get("coordinates");
  if (coordinates.is_none()) throw Error(ErrorCode::parse, "a " + type + " without \"coordinates\"");
  Geometry g;
  if (type == "Point") {
    g.type = GeometryType::point;
    if (py::len(coordinates) > 0) g.points.push_back(coord_of(coordinates));
  } else if (type == "MultiPoint") {
    g.type = GeometryType::multi_point;
    g.points = path_of(coordinates);
  } else if (type == "LineString") {
    g.type = GeometryType::line_string;
    g.lines.push_back(path_of(coordinates));
  } else if (type == "MultiLineString") {
    g.type = GeometryType::multi_line_string;
    for (py::handle line : coordinates) g.lines.push_back(path_of(line));
  } else if (type == "Polygon") {
    g.type = GeometryType::polygon;
    g.polygons.push_back(polygon_of(coordinates));
  } else if (type == "MultiPolygon") {
    g.type = GeometryType::multi_polygon;
    for (py::handle polygon : coordinates) g.polygons.push_back(polygon_of(polygon));
  } else {
    throw Error(ErrorCode::parse, "unknown geometry type \"" + type + "\"");
  }
  return g;
}

std::string_view bytes_view(py::handle object, py::buffer_info& info) {
  if (PyBytes_Check(object.ptr())) {
    return {PyBytes_AS_STRING(object.ptr()), static_cast<std::size_t>(PyBytes_GET_SIZE(object.ptr()))};
  }
  info = py::reinterpret_borrow<py::buffer>(object).request();
  return {static_cast<const char*>(info.ptr), static_cast<std::size_t>(info.size * info.itemsize)};
}

Geometry wkb_geometry(std::string_view bytes) {
  WkbCursor cursor(bytes);
  Geometry g = cursor.geometry();
  if (!cursor.at_end()) {
    throw Error(ErrorCode::parse, "WKB byte " + std::to_string(cursor.offset()) + ": data after the geometry");
  }
  return g;
}

#ifdef GRIDTRUTH_PYTHON_GEOS
/// One GEOS context per thread (GEOS C API, reentrant _r functions), finished when the thread ends.
GEOSContextHandle_t geos_context() {
  struct Context {
    GEOSContextHandle_t handle = GEOS_init_r();
    ~Context() { GEOS_finish_r(handle); }
  };
  thread_local Context context;
  return context.handle;
}

static_assert(sizeof(Coord) == 2 * sizeof(double) && std::is_standard_layout_v<Coord>,
              "GEOSCoordSeq_copyToBuffer_r writes x, y pairs into Path's storage");

/// The x, y of a point, line string or ring; false on a GEOS error.
bool read_path(GEOSContextHandle_t h, const GEOSGeometry* g, Path& path) {
  const GEOSCoordSequence* s = GEOSGeom_getCoordSeq_r(h, g);
  unsigned int n = 0;
  if (!s || !GEOSCoordSeq_getSize_r(h, s, &n)) return false;
  path.resize(n);
  return n == 0 || GEOSCoordSeq_copyToBuffer_r(h, s, &path.front().x, 0, 0);
}

/// A point as parse_wkb() reads GEOS's WKB of it: an empty point (NaN, NaN) adds nothing.
bool read_point(GEOSContextHandle_t h, const GEOSGeometry* g, std::vector<Coord>& points) {
  if (GEOSisEmpty_r(h, g) == 1) return true;
  Path p;
  if (!read_path(h, g, p) || p.size() != 1) return false;
  if (!(std::isnan(p[0].x) && std::isnan(p[0].y))) points.push_back(p[0]);
  return true;
}

/// A polygon as parse_wkb() reads GEOS's WKB of it: an empty polygon has no ring.
bool read_polygon(GEOSContextHandle_t h, const GEOSGeometry* g, Polygon& polygon) {
  const char empty = GEOSisEmpty_r(h, g);
  if (empty == 1) return true;
  const GEOSGeometry* outer = GEOSGetExteriorRing_r(h, g);
  const int holes = GEOSGetNumInteriorRings_r(h, g);
  if (empty != 0 || !outer || holes < 0 || !read_path(h, outer, polygon.outer)) return false;
  polygon.holes.resize(static_cast<std::size_t>(holes));
  for (int k = 0; k < holes; ++k) {
    const GEOSGeometry* ring = GEOSGetInteriorRingN_r(h, g, k);
    if (!ring || !read_path(h, ring, polygon.holes[static_cast<std::size_t>(k)])) return false;
  }
  return true;
}

bool read_part(GEOSContextHandle_t h, const GEOSGeometry* part, int type_id, Geometry& g) {
  switch (type_id) {
    case GEOS_POINT: return read_point(h, part, g.points);
    case GEOS_LINESTRING: case GEOS_LINEARRING: return read_path(h, part, g.lines.emplace_back());
    case GEOS_POLYGON: return read_polygon(h, part, g.polygons.emplace_back());
    default: return false;
  }
}
#endif

/// What shapely_geos_linked() found, once shapely is imported (decided with the GIL held, never changed after).
struct ShapelyLink {
  bool decided = false;
  bool linked = false;
  PyObject* base_geometry = nullptr;  ///< shapely.geometry.base.BaseGeometry (a strong reference, kept for good)
};

ShapelyLink& shapely_link() {
  static ShapelyLink link;
#ifdef GRIDTRUTH_PYTHON_GEOS
  if (link.decided) return link;
  PyObject* base = PyDict_GetItemString(PyImport_GetModuleDict(), "shapely.geometry.base");  // borrowed
  if (!base) return link;  // not imported yet: no object can be a shapely geometry; decide later
  link.decided = true;
  try {
    const std::string version = py::str(py::module_::import("shapely").attr("__version__"));
    if (version.rfind("1.", 0) != 0) return link;
    const py::module_ ctypes = py::module_::import("ctypes");
    const py::object dll = py::module_::import("shapely.geos").attr("lgeos").attr("_lgeos");
    const py::object address = ctypes.attr("cast")(dll.attr("GEOSversion"), ctypes.attr("c_void_p")).attr("value");
    if (address.is_none() ||
        address.cast<std::uintptr_t>() != reinterpret_cast<std::uintptr_t>(&GEOSversion)) {
      return link;
    }
    link.base_geometry = py::object(py::reinterpret_borrow<py::object>(base).attr("BaseGeometry")).release().ptr();
    link.linked = true;
  } catch (const py::error_already_set&) {
    // anything unexpected in shapely's layout: not linked, every geometry goes through its WKB
  } catch (const py::cast_error&) {
  }
#endif
  return link;
}

}  // namespace

Geometry parse_wkb(std::string_view bytes) { return wkb_geometry(bytes); }

bool shapely_geos_linked() { return shapely_link().linked; }

const void* shapely_geos_geometry(py::handle object) {
  const ShapelyLink& link = shapely_link();
  if (!link.linked) return nullptr;
  const int is_geometry = PyObject_IsInstance(object.ptr(), link.base_geometry);
  if (is_geometry != 1) {
    if (is_geometry < 0) PyErr_Clear();
    return nullptr;
  }
  PyObject* pointer = PyObject_GetAttrString(object.ptr(), "_geom");
  if (!pointer) {
    PyErr_Clear();
    return nullptr;
  }
  const void* g = PyLong_Check(pointer) ? PyLong_AsVoidPtr(pointer) : nullptr;
  if (PyErr_Occurred()) PyErr_Clear();
  Py_DECREF(pointer);
  return g;
}

std::optional<Geometry> geos_geometry([[maybe_unused]] const void* geos_geometry) {
#ifdef GRIDTRUTH_PYTHON_GEOS
  const GEOSContextHandle_t h = geos_context();
  const auto* g = static_cast<const GEOSGeometry*>(geos_geometry);
  if (!g || GEOSisEmpty_r(h, g) != 0) return std::nullopt;
  const int type_id = GEOSGeomTypeId_r(h, g);
  Geometry out;
  switch (type_id) {
    case GEOS_POINT: out.type = GeometryType::point; break;
    case GEOS_LINESTRING: case GEOS_LINEARRING: out.type = GeometryType::line_string; break;
    case GEOS_POLYGON: out.type = GeometryType::polygon; break;
    case GEOS_MULTIPOINT: out.type = GeometryType::multi_point; break;
    case GEOS_MULTILINESTRING: out.type = GeometryType::multi_line_string; break;
    case GEOS_MULTIPOLYGON: out.type = GeometryType::multi_polygon; break;
    default: return std::nullopt;  // GeometryCollection: the WKB route names it
  }
  if (type_id < GEOS_MULTIPOINT) {
    if (!read_part(h, g, type_id, out)) return std::nullopt;
    return out;
  }
  const int parts = GEOSGetNumGeometries_r(h, g);
  if (parts < 0) return std::nullopt;
  for (int k = 0; k < parts; ++k) {
    const GEOSGeometry* part = GEOSGetGeometryN_r(h, g, k);
    if (!part || !read_part(h, part, GEOSGeomTypeId_r(h, part), out)) return std::nullopt;
  }
  return out;
#else
  return std::nullopt;
#endif
}

namespace {

InputFeature feature_of_geometry(Geometry g) {
  InputFeature f;
  f.declared_type = g.type;
  f.geometry = std::move(g);
  return f;
}

}  // namespace

InputFeature feature_of(py::handle object) {
  if (const void* g = shapely_geos_geometry(object)) {
    if (std::optional<Geometry> read = geos_geometry(g)) return feature_of_geometry(std::move(*read));
  }
  InputFeature f;
  if (object.is_none()) return f;  // unread_result(): "the feature has no geometry"
  try {
    py::buffer_info info;
    if (PyBytes_Check(object.ptr()) || PyByteArray_Check(object.ptr()) || PyMemoryView_Check(object.ptr())) {
      f.geometry = wkb_geometry(bytes_view(object, info));
    } else if (PyUnicode_Check(object.ptr())) {
      f.geometry = parse_wkt(object.cast<std::string>());
    } else if (py::hasattr(object, "wkb")) {  // shapely 1.8 and 2: WKB of the geometry (GEOS)
      const py::object wkb = object.attr("wkb");
      f.geometry = wkb_geometry(bytes_view(wkb, info));
    } else if (py::hasattr(object, "__geo_interface__")) {
      f.geometry = geometry_of_mapping(object.attr("__geo_interface__"));
    } else if (PyMapping_Check(object.ptr())) {
      f.geometry = geometry_of_mapping(object);
    } else {
      f.error = "not a geometry: a " + std::string(py::str(py::type::handle_of(object).attr("__name__")));
    }
  } catch (const Error& e) {
    f.error = e.what();
  } catch (const py::error_already_set& e) {
    f.error = e.what();
  } catch (const py::cast_error& e) {
    f.error = std::string("not a geometry: ") + e.what();
  }
  if (f.geometry) f.declared_type = f.geometry->type;
  return f;
}

std::vector<InputFeature> features_of_objects(const py::iterable& objects, unsigned threads) {
  std::vector<InputFeature> features;
  std::vector<py::object> held;        // the shapely geometries read below without the GIL, kept alive meanwhile
  std::vector<std::size_t> positions;  // their 0-based positions in `features`
  std::vector<const void*> pointers;   // their GEOS geometries
  if (py::hasattr(objects, "__len__")) features.reserve(py::len(objects));
  for (py::handle object : objects) {
    if (const void* g = shapely_geos_geometry(object)) {
      held.push_back(py::reinterpret_borrow<py::object>(object));
      positions.push_back(features.size());
      pointers.push_back(g);
      features.emplace_back();
    } else {
      features.push_back(feature_of(object));
    }
  }
  if (pointers.empty()) return features;
  std::vector<std::optional<Geometry>> read(pointers.size());
  {
    py::gil_scoped_release release;
    const auto read_range = [&](std::size_t begin, std::size_t end) noexcept {
      for (std::size_t k = begin; k < end; ++k) {
        try {
          read[k] = geos_geometry(pointers[k]);
        } catch (...) {  // std::bad_alloc: left to the WKB route below, which reports it with the GIL held
        }
      }
    };
    constexpr std::size_t per_thread_min = 4096;  // below this a thread costs more than it saves
    unsigned workers = threads != 0 ? threads : std::max(1U, std::thread::hardware_concurrency());
    workers = static_cast<unsigned>(std::min<std::size_t>(workers, 1 + pointers.size() / per_thread_min));
    std::vector<std::thread> pool;
    const std::size_t step = (pointers.size() + workers - 1) / workers;
    for (unsigned w = 1; w < workers; ++w) {
      const std::size_t begin = std::min(pointers.size(), w * step), end = std::min(pointers.size(), (w + 1) * step);
      try {
        pool.emplace_back(read_range, begin, end);
      } catch (const std::system_error&) {  // no thread to be had: read that range here
        read_range(begin, end);
      }
    }
    read_range(0, std::min(pointers.size(), step));
    for (std::thread& t : pool) t.join();
  }
  for (std::size_t k = 0; k < pointers.size(); ++k) {
    features[positions[k]] = read[k] ? feature_of_geometry(std::move(*read[k])) : feature_of(held[k]);
  }
  return features;
}

}  // namespace gridtruth::python
