// gridtruth — a simple-features WKT parser (ISO 19125-1 / OGC 06-103r4, section 7): the six geometry types of
// gridtruth's model, EMPTY, and Z / M / ZM ordinates (M dropped; Z dropped or tallied for a height).
#include <cctype>
#include <charconv>
#include <cmath>
#include <string>

#include "gridtruth/error.hpp"
#include "gridtruth/io.hpp"
#include "io_detail.hpp"

namespace gridtruth {
namespace detail {
namespace {

class WktParser {
 public:
  WktParser(std::string_view text, ZTally* z) : s_(text), z_(z) {}

  bool parse(Geometry& g, std::optional<GeometryType>& declared, std::string& error) {
    skip_space();
    const std::size_t keyword_at = i_;
    std::string keyword = word();
    if (keyword.empty()) return fail(error, "expected a geometry type keyword", keyword_at);
    std::string dims = glued_dimension(keyword);
    if (!geometry_type(keyword, g.type, error, keyword_at)) return false;
    declared = g.type;
    dimension(dims);
    const bool ok = body(g);
    if (!error_.empty()) return fail(error, error_, error_at_);
    if (!ok) return fail(error, "malformed WKT", i_);
    skip_space();
    if (i_ < s_.size()) return fail(error, std::string("unexpected \"") + s_[i_] + "\" after the geometry", i_);
    return true;
  }

 private:
  /// Takes a dimension glued to the keyword off it and returns it ("ZM", "Z", "M"; empty when none).
  static std::string glued_dimension(std::string& keyword) {
    // "POINTZ", "LINESTRINGM", "POLYGONZM": a dimension glued to the keyword (no type name ends in Z or M).
    for (const char* suffix : {"ZM", "Z", "M"}) {
      const std::string suf(suffix);
      if (keyword.size() > suf.size() && keyword.compare(keyword.size() - suf.size(), suf.size(), suf) == 0 &&
          known(keyword.substr(0, keyword.size() - suf.size()))) {
        keyword.resize(keyword.size() - suf.size());
        return suf;
      }
    }
    return {};
  }

  /// The geometry type the keyword names; false with `error` set for a type gridtruth does not read.
  static bool geometry_type(const std::string& keyword, GeometryType& type, std::string& error,
                            std::size_t keyword_at) {
    if (keyword == "POINT") type = GeometryType::point;
    else if (keyword == "LINESTRING") type = GeometryType::line_string;
    else if (keyword == "POLYGON") type = GeometryType::polygon;
    else if (keyword == "MULTIPOINT") type = GeometryType::multi_point;
    else if (keyword == "MULTILINESTRING") type = GeometryType::multi_line_string;
    else if (keyword == "MULTIPOLYGON") type = GeometryType::multi_polygon;
    else if (keyword == "GEOMETRYCOLLECTION")
      return fail(error, "GEOMETRYCOLLECTION is not supported: give each member as a feature of its own", keyword_at);
    else if (keyword == "CIRCULARSTRING" || keyword == "COMPOUNDCURVE" || keyword == "CURVEPOLYGON" ||
             keyword == "MULTICURVE" || keyword == "MULTISURFACE" || keyword == "POLYHEDRALSURFACE" ||
             keyword == "TIN" || keyword == "TRIANGLE")
      return fail(error, keyword + " is not supported (only points, line strings and polygons and their multi forms)",
                  keyword_at);
    else
      return fail(error, "unknown geometry type \"" + keyword + "\"", keyword_at);
    return true;
  }

  /// Reads a dimension keyword after the type ("POINT Z (...)") unless `dims` is set already, and sets the
  /// number of ordinates a position has.
  void dimension(std::string dims) {
    skip_space();
    if (dims.empty()) {
      const std::size_t at = i_;
      std::string next = word();
      if (next == "Z" || next == "M" || next == "ZM") dims = next;
      else i_ = at;
    }
    ordinates_ = dims.empty() ? 0 : (dims == "ZM" ? 4 : 3);
    measure_only_ = dims == "M";
  }

  /// Reads the geometry's body after its keyword into `g` (whose type is set); false when it is malformed.
  bool body(Geometry& g) {
    bool ok = true;
    switch (g.type) {
      case GeometryType::point: {
        std::vector<Coord> pts;
        if (!empty_or_open()) return true;  // the error is in error_
        if (!is_empty_) {
          Coord c;
          ok = coord(c) && close();
          if (ok) pts.push_back(c);
        }
        g.points = std::move(pts);
        break;
      }
      case GeometryType::line_string: {
        Path p;
        ok = path(p);
        if (ok && !is_empty_) g.lines.push_back(std::move(p));
        break;
      }
      case GeometryType::polygon: {
        Polygon poly;
        ok = polygon(poly);
        if (ok && !is_empty_) g.polygons.push_back(std::move(poly));
        break;
      }
      case GeometryType::multi_point: ok = multi_point(g.points); break;
      case GeometryType::multi_line_string:
        ok = list([&] {
          Path p;
          if (!path(p)) return false;
          g.lines.push_back(std::move(p));
          return true;
        });
        break;
      case GeometryType::multi_polygon:
        ok = list([&] {
          Polygon poly;
          if (!polygon(poly)) return false;
          g.polygons.push_back(std::move(poly));
          return true;
        });
        break;
    }
    return ok;
  }

  static bool known(const std::string& k) {
    return k == "POINT" || k == "LINESTRING" || k == "POLYGON" || k == "MULTIPOINT" || k == "MULTILINESTRING" ||
           k == "MULTIPOLYGON" || k == "GEOMETRYCOLLECTION";
  }
  static bool fail(std::string& error, const std::string& what, std::size_t at) {
    error = "WKT: " + what + " at character " + std::to_string(at + 1);
    return false;
  }
  bool set_error(const std::string& what) {
    if (error_.empty()) {
      error_ = what;
      error_at_ = i_;
    }
    return false;
  }

  void skip_space() {
    while (i_ < s_.size() && std::isspace(static_cast<unsigned char>(s_[i_]))) ++i_;
  }
  std::string word() {
    std::string w;
    while (i_ < s_.size() && std::isalpha(static_cast<unsigned char>(s_[i_])))
      w += static_cast<char>(std::toupper(static_cast<unsigned char>(s_[i_++])));
    return w;
  }
  bool expect(char c) {
    skip_space();
    if (i_ < s_.size() && s_[i_] == c) {
      ++i_;
      return true;
    }
    if (i_ >= s_.size()) return set_error(std::string("text ends where \"") + c + "\" belongs");
    return set_error(std::string("expected \"") + c + "\", found \"" + s_[i_] + "\"");
  }
  bool close() { return expect(')'); }
  /// Reads EMPTY (sets is_empty_) or an opening parenthesis.
  bool empty_or_open() {
    skip_space();
    const std::size_t at = i_;
    if (word() == "EMPTY") {
      is_empty_ = true;
      return true;
    }
    i_ = at;
    is_empty_ = false;
    return expect('(');
  }

  bool number(double& v) {
    skip_space();
    const std::size_t start = i_;
    std::size_t j = i_;
    if (j < s_.size() && (s_[j] == '+' || s_[j] == '-')) ++j;
    const std::size_t digits_from = j;
    while (j < s_.size() && std::isdigit(static_cast<unsigned char>(s_[j]))) ++j;
    if (j < s_.size() && s_[j] == '.') {
      ++j;
      while (j < s_.size() && std::isdigit(static_cast<unsigned char>(s_[j]))) ++j;
    }
    if (j == digits_from || (j == digits_from + 1 && s_[digits_from] == '.')) {
      std::size_t k = start;
      while (k < s_.size() && !std::isspace(static_cast<unsigned char>(s_[k])) && s_[k] != ',' && s_[k] != ')' &&
             s_[k] != '(' && k - start < 20)
        ++k;
      if (k == start) {
        if (start >= s_.size()) return set_error("text ends where a number belongs");
        return set_error(std::string("expected a number, found \"") + s_[start] + "\"");
      }
      return set_error("not a number: \"" + std::string(s_.substr(start, k - start)) + "\"");
    }
    if (j < s_.size() && (s_[j] == 'e' || s_[j] == 'E')) {
      std::size_t k = j + 1;
      if (k < s_.size() && (s_[k] == '+' || s_[k] == '-')) ++k;
      const std::size_t exp_digits = k;
      while (k < s_.size() && std::isdigit(static_cast<unsigned char>(s_[k]))) ++k;
      if (k == exp_digits) return set_error("malformed exponent in number");
      j = k;
    }
    const char* first = s_.data() + start + (s_[start] == '+' ? 1 : 0);
    const auto [ptr, ec] = std::from_chars(first, s_.data() + j, v);
    if (ec == std::errc::result_out_of_range) {
      // Underflow to zero is harmless; overflow is not a coordinate.
      if (std::strtod(std::string(first, s_.data() + j).c_str(), nullptr) == 0) {
        v = 0;
      } else {
        return set_error("number out of range: \"" + std::string(s_.substr(start, j - start)) + "\"");
      }
    } else if (ec != std::errc() || ptr != s_.data() + j) {
      return set_error("malformed number \"" + std::string(s_.substr(start, j - start)) + "\"");
    }
    i_ = j;
    return true;
  }

  bool coord(Coord& c) {
    double v[4];
    std::size_t n = 0;
    for (; n < 4; ++n) {
      skip_space();
      if (n >= 2 && (i_ >= s_.size() || s_[i_] == ',' || s_[i_] == ')')) break;
      if (!number(v[n])) return false;
    }
    skip_space();
    if (n == 4 && i_ < s_.size() && s_[i_] != ',' && s_[i_] != ')')
      return set_error("a position has more than 4 ordinates");
    if (ordinates_ != 0 && n != ordinates_)
      return set_error("a position has " + std::to_string(n) + " ordinates where the dimension says " +
                       std::to_string(ordinates_));
    c.x = v[0];
    c.y = v[1];
    if (z_) {
      if (n >= 3 && !measure_only_) z_->add(v[2]);
      else z_->none();
    }
    return true;
  }

  template <class F>
  bool list(F&& item) {
    if (!empty_or_open()) return false;
    if (is_empty_) return true;
    for (;;) {
      if (!item()) return false;
      skip_space();
      if (i_ < s_.size() && s_[i_] == ',') {
        ++i_;
        continue;
      }
      is_empty_ = false;
      return close();
    }
  }

  /// A coordinate list in parentheses, or EMPTY (sets is_empty_).
  bool path(Path& p) {
    bool outer_empty = false;
    const bool ok = list([&] {
      Coord c;
      if (!coord(c)) return false;
      p.push_back(c);
      return true;
    });
    outer_empty = p.empty() && ok;
    is_empty_ = outer_empty;
    return ok;
  }

  bool polygon(Polygon& poly) {
    bool first = true;
    const bool ok = list([&] {
      Path ring;
      if (!path(ring)) return false;
      if (first) poly.outer = std::move(ring);
      else poly.holes.push_back(std::move(ring));
      first = false;
      return true;
    });
    is_empty_ = ok && first;
    return ok;
  }

  bool multi_point(std::vector<Coord>& pts) {
    return list([&] {
      skip_space();
      Coord c;
      if (i_ < s_.size() && s_[i_] == '(') {  // MULTIPOINT ((1 2), (3 4)) as the standard writes it
        ++i_;
        if (!coord(c) || !close()) return false;
        pts.push_back(c);
        return true;
      }
      const std::size_t at = i_;
      if (word() == "EMPTY") return set_error("an EMPTY point inside MULTIPOINT has no position");
      i_ = at;
      if (!coord(c)) return false;  // MULTIPOINT (1 2, 3 4), as many programs write it
      pts.push_back(c);
      return true;
    });
  }

  std::string_view s_;
  std::size_t i_ = 0;
  std::size_t ordinates_ = 0;  // 0: 2 to 4 allowed
  bool measure_only_ = false;  // "M": the third ordinate is a measure, not a Z
  ZTally* z_ = nullptr;
  bool is_empty_ = false;
  std::string error_;
  std::size_t error_at_ = 0;
};

}  // namespace

bool parse_wkt(std::string_view text, Geometry& geometry, std::optional<GeometryType>& declared,
               std::string& error, ZTally* z) {
  geometry = Geometry{};
  declared.reset();
  error.clear();
  WktParser parser(text, z);
  return parser.parse(geometry, declared, error);
}

std::optional<double> height_from_tally(const ZTally& z, std::string& error) {
  if (z.with_z == 0) {
    error = "no position has a Z coordinate to take the height from";
    return std::nullopt;
  }
  if (z.without_z > 0) {
    error = std::to_string(z.without_z) + " of " + std::to_string(z.with_z + z.without_z) +
            " positions have no Z coordinate to take the height from";
    return std::nullopt;
  }
  const double mean = z.sum / static_cast<double>(z.with_z);
  if (!std::isfinite(mean)) {
    error = "the mean of the Z coordinates is not a finite number of metres";
    return std::nullopt;
  }
  return mean;
}

}  // namespace detail

Geometry parse_wkt(std::string_view text) {
  Geometry g;
  std::optional<GeometryType> declared;
  std::string error;
  if (!detail::parse_wkt(text, g, declared, error)) throw Error(ErrorCode::parse, error);
  return g;
}

}  // namespace gridtruth
