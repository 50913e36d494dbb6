// Internal: closed-form measures of short geodesic edges, without solving the inverse problem per edge.
//
// For an edge P1 → P2 of chord c on an ellipsoid (a, f):
// - The chord is formed in P1's meridian frame from differences of sines and cosines of half-angle differences,
//   so it keeps full relative precision however short the edge (no difference of two Earth-centred coordinates).
// - Length: the normal section through P1 and P2 is, to far below a nanometre over a few kilometres, an arc of
//   the radius of curvature R_α of Euler's formula (1/R_α = cos²α/M + sin²α/N at the mid-latitude), so
//   s = c (1 + c²/(24 R_α²) + 3c⁴/(640 R_α⁴)), the series of 2R asin(c/2R). Geodesic and normal section differ in
//   length by terms of order e⁴ s (s/R)⁴.
// - Start azimuth: the chord's direction in P1's local east-north plane, the normal-section azimuth, which
//   differs from the geodesic's by about (e²/12)(s/N)² cos²φ sin 2α (about 1e-11 rad at 1 km).
// - Midpoint: the point of the ellipsoid whose normal passes through the chord's midpoint (Bowring's 1976
//   one-step latitude, exact for points this close to the surface). By the point symmetry of the osculating
//   quadric it is the geodesic's midpoint up to cubic terms of the surface.
// - Area: the edge is carried to the authalic sphere (radius R_q, authalic latitude β; Snyder 1987, eqs. 3-11,
//   3-12), where areas are the ellipsoid's. The area between the great-circle arc of the images and the equator
//   is the exact spherical excess tan(E/2) = tan(Δλ/2) (tan(β1/2) + tan(β2/2)) / (1 + tan(β1/2) tan(β2/2)); the
//   image of the geodesic bulges from that arc (by about e² s²/(8R)), and the bulge's area is added as the
//   parabola's, 2/3 of chord × offset of the image of the midpoint (Archimedes).
// The sum over a ring is reduced exactly as GeographicLib's PolygonArea reduces its S12 terms (the same sign
// convention: the area between the edge and the equator, counter-clockwise).
//
// Where it applies (checked by walk()): every vertex within kMaxLatitudeDeg of the equator and every chord between
// kMinChordM and kMaxChordM. Tested against GeographicLib 2.1 over randomized polygons in every latitude band
// (tests/short_edge_truth_test.cpp): areas within 1e-9 relative + 1e-3 m², lengths within 1e-9 relative + 1 nm,
// bearing errors within 0.01″ and D within 1e-9 relative + 1e-3 m² of the inverse-problem path (which checks the
// midpoints). Measured during development on 0.1 m to 4.9 km edges, f from 1/298 to 1/150: areas within 4e-4 m²,
// lengths within 2e-9 relative, azimuths within 0.002″, midpoints within 5e-9 m of GeographicLib's. Anywhere
// else the caller solves the inverse problem.
#pragma once

#include <GeographicLib/Math.hpp>

#include <algorithm>
#include <cmath>
#include <vector>

#include "gridtruth/geometry.hpp"

namespace gridtruth::detail {

class ShortGeodesics {
 public:
  static constexpr double kMaxChordM = 5000;
  static constexpr double kMinChordM = 0.1;
  static constexpr double kMaxLatitudeDeg = 85;

  /// One edge's measures.
  struct Edge {
    double s12 = 0;             ///< geodesic length, metres
    double sin_azi = 0, cos_azi = 1;  ///< start azimuth (clockwise from north)
    double area12 = 0;          ///< area between the edge and the equator, m², GeographicLib's S12 convention
    Coord midpoint;             ///< longitude, latitude of the edge's midpoint, degrees
  };

  ShortGeodesics(double a_m, double f)
      : a_(a_m), e2_(f * (2 - f)), e_(std::sqrt(std::fabs(e2_))), b_(a_m * (1 - f)), ep2_(e2_ / (1 - e2_)),
        qp_(q(1.0)), rq2_(a_m * a_m * qp_ / 2) {}

  /// Measures every edge of a path (closed: the last vertex joins the first). Returns false, with `out` in an
  /// unspecified state, when a chord is out of [kMinChordM, kMaxChordM] or a vertex out of range.
  bool walk(const std::vector<Coord>& lonlat, bool closed, std::vector<Edge>& out) const {
    const std::size_t n = lonlat.size();
    const std::size_t edges = n < 2 ? 0 : (closed ? n : n - 1);
    out.resize(edges);
    if (!vertices_apply(lonlat)) return false;
    // Each vertex's terms are computed once and carried to the next edge (no array of them: a long path costs
    // no memory beyond `out`).
    const Vertex first = n > 0 ? vertex(lonlat[0].y) : Vertex{};
    Vertex start = first;
    for (std::size_t e = 0; e < edges; ++e) {
      const std::size_t j = (e + 1) % n;
      const Vertex end = j == 0 ? first : vertex(lonlat[j].y);
      if (!edge(lonlat[e], start, lonlat[j], end, out[e])) return false;
      start = end;
    }
    return true;
  }

 private:
  /// True when every vertex is within kMaxLatitudeDeg of the equator (the edges' lengths are checked by edge()).
  static bool vertices_apply(const std::vector<Coord>& lonlat) {
    return std::all_of(lonlat.begin(), lonlat.end(),
                       [](const Coord& c) { return std::fabs(c.y) <= kMaxLatitudeDeg && std::fabs(c.x) <= 540; });
  }

  struct Vertex {
    double sphi, cphi, w;      // sin, cos of latitude; √(1 − e² sin²φ)
    double sbeta, cbeta, t;    // authalic latitude: sin, cos, tan(β/2)
  };

  /// q(φ) of Snyder eq. 3-12 from sin φ (the atanh form of its logarithm).
  double q(double sphi) const {
    const double s = 1 - e2_ * sphi * sphi;
    if (e_ == 0) return 2 * sphi;
    return (1 - e2_) * (sphi / s + std::atanh(e_ * sphi) / e_);
  }

  Vertex vertex(double lat_deg) const {
    Vertex v;
    GeographicLib::Math::sincosd(lat_deg, v.sphi, v.cphi);
    v.w = std::sqrt(1 - e2_ * v.sphi * v.sphi);
    authalic(v.sphi, v);
    return v;
  }

  void authalic(double sphi, Vertex& v) const {
    v.sbeta = std::clamp(q(sphi) / qp_, -1.0, 1.0);
    v.cbeta = std::sqrt((1 - v.sbeta) * (1 + v.sbeta));
    v.t = v.sbeta / (1 + v.cbeta);
  }

  bool edge(const Coord& c1, const Vertex& v1, const Coord& c2, const Vertex& v2, Edge& out) const {
    constexpr double d2r = M_PI / 180;
    // The difference of nearby longitudes is exact (Sterbenz); across the antimeridian AngDiff keeps it exact.
    double dlam_deg = c2.x - c1.x;
    if (std::fabs(dlam_deg) > 180) dlam_deg = GeographicLib::Math::AngDiff(c1.x, c2.x);
    if (std::fabs(dlam_deg) > 90) return false;
    const double dlam = dlam_deg * d2r;
    const double half_dphi = 0.5 * (c2.y - c1.y) * d2r;
    const double phibar = 0.5 * (c1.y + c2.y) * d2r;
    const double sh = std::sin(half_dphi);
    const double sbar = std::sin(phibar), cbar = std::cos(phibar);
    // Differences without cancellation: cos φ2 − cos φ1, sin φ2 − sin φ1, W2 − W1.
    const double dcos = -2 * sbar * sh, dsin = 2 * cbar * sh;
    const double dw = -e2_ * dsin * (v1.sphi + v2.sphi) / (v1.w + v2.w);
    const double w12 = v1.w * v2.w;
    // Distance from the axis p = a cos φ / W and height Z = a (1 − e²) sin φ / W, and their differences.
    const double dp = a_ * (dcos * v1.w - v1.cphi * dw) / w12;
    const double dz = a_ * (1 - e2_) * (dsin * v1.w - v1.sphi * dw) / w12;
    const double p1 = a_ * v1.cphi / v1.w, p2 = a_ * v2.cphi / v2.w, z1 = a_ * (1 - e2_) * v1.sphi / v1.w;
    const double shl = std::sin(0.5 * dlam), chl = std::cos(0.5 * dlam);
    // The chord in P1's meridian frame (x outward from the axis, y east, z along the axis).
    const double dx = dp - 2 * p2 * shl * shl, dy = 2 * p2 * shl * chl;
    const double chord2 = dx * dx + dy * dy + dz * dz, c = std::sqrt(chord2);
    if (!(c >= kMinChordM && c <= kMaxChordM)) return false;
    // Start azimuth: the chord in P1's east-north plane.
    const double east = dy, north = -v1.sphi * dx + v1.cphi * dz;
    const double en = std::sqrt(east * east + north * north);
    out.sin_azi = east / en;
    out.cos_azi = north / en;
    // Length: the normal section as an arc of Euler's radius at the mid-latitude.
    const double wm2 = 1 - e2_ * sbar * sbar;
    const double m = a_ * (1 - e2_) / (wm2 * std::sqrt(wm2)), nr = a_ / std::sqrt(wm2);
    const double k = out.cos_azi * out.cos_azi / m + out.sin_azi * out.sin_azi / nr;  // 1 / R_α
    const double x2 = chord2 * k * k;
    out.s12 = c * (1 + x2 / 24 + 3 * x2 * x2 / 640);
    // Midpoint: the foot of the chord's midpoint on the ellipsoid (Bowring 1976).
    const double mx = p1 + 0.5 * dx, my = 0.5 * dy, mz = z1 + 0.5 * dz;
    const double pm = std::sqrt(mx * mx + my * my);
    const double ta = mz * a_, tb = pm * b_, tn = std::sqrt(ta * ta + tb * tb);
    const double st = ta / tn, ct = tb / tn;
    const double num = mz + ep2_ * b_ * st * st * st, den = pm - e2_ * a_ * ct * ct * ct;
    const double nd = std::sqrt(num * num + den * den);
    const double sphim = num / nd;
    const double lam_m = std::atan2(my, mx);
    double lon_m = c1.x + lam_m / d2r;
    if (lon_m > 180) lon_m -= 360;
    else if (lon_m < -180) lon_m += 360;
    out.midpoint = {lon_m, std::atan2(num, den) / d2r};
    Vertex vm;
    authalic(sphim, vm);
    // Area between the arc of the images on the authalic sphere and the equator (exact spherical excess).
    const double excess = 2 * std::atan(shl / chl * (v1.t + v2.t) / (1 + v1.t * v2.t));
    // The bulge of the geodesic's image: offset of the midpoint's image from the great circle, in units of R_q.
    const double cos_dlam = 1 - 2 * shl * shl, sin_dlam = 2 * shl * chl;
    const double u1[3] = {v1.cbeta, 0, v1.sbeta};
    const double u2[3] = {v2.cbeta * cos_dlam, v2.cbeta * sin_dlam, v2.sbeta};
    const double um[3] = {vm.cbeta * mx / pm, vm.cbeta * my / pm, vm.sbeta};
    const double x[3] = {u1[1] * u2[2] - u1[2] * u2[1], u1[2] * u2[0] - u1[0] * u2[2], u1[0] * u2[1] - u1[1] * u2[0]};
    const double xn = std::sqrt(x[0] * x[0] + x[1] * x[1] + x[2] * x[2]);
    const double d[3] = {u2[0] - u1[0], u2[1] - u1[1], u2[2] - u1[2]};
    const double cq = std::sqrt(d[0] * d[0] + d[1] * d[1] + d[2] * d[2]);
    const double offset = xn > 0 ? (x[0] * um[0] + x[1] * um[1] + x[2] * um[2]) / xn : 0.0;
    out.area12 = rq2_ * (excess + 2.0 / 3.0 * cq * offset);
    return std::isfinite(out.s12) && std::isfinite(out.area12) && std::isfinite(out.midpoint.y);
  }

  double a_, e2_, e_, b_, ep2_, qp_, rq2_;
};

}  // namespace gridtruth::detail
