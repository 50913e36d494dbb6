// gridtruth — the projection's scale over the features' extent, sampled and contoured for the report.
#include "scale_field.hpp"

#include <algorithm>
#include <cmath>
#include <unordered_map>
#include <utility>

namespace gridtruth::detail {

ScaleField::ScaleField(const Auditor& auditor, Metric metric, const Bounds& source, int samples)
    : auditor_(&auditor), metric_(metric) {
  if (source.empty()) return;
  n_ = std::max(4, samples);
  const double mx = std::max(0.25 * (source.x1 - source.x0), 0.05);
  const double my = std::max(0.25 * (source.y1 - source.y0), 0.05);
  x0_ = source.x0 - mx;
  y0_ = source.y0 - my;
  double y_top = source.y1 + my;
  if (auditor.source().kind == CrsKind::geographic) y0_ = std::max(y0_, -89.9), y_top = std::min(y_top, 89.9);
  dx_ = (source.x1 + mx - x0_) / (n_ - 1);
  dy_ = (y_top - y0_) / (n_ - 1);
  value_.resize(static_cast<std::size_t>(n_) * n_);
  for (int j = 0; j < n_; ++j)
    for (int i = 0; i < n_; ++i) value_[static_cast<std::size_t>(j) * n_ + i] = value(x0_ + i * dx_, y0_ + j * dy_);
  for (const double v : value_)
    if (std::isfinite(v)) lo_ = std::min(lo_, v), hi_ = std::max(hi_, v);
}

double ScaleField::value(double x, double y) const {
  const PointFactors f = auditor_->factors(x, y);
  return metric_ == Metric::area ? f.areal_scale : f.parallel_scale;
}

Coord ScaleField::crossing(long key, double level) const {
  const int n = n_;
  const long cell = key / 2;
  const int i = static_cast<int>(cell % n), j = static_cast<int>(cell / n);
  const bool vertical = key % 2 == 1;
  auto point = [&](double t) {
    return Coord{x0_ + (i + (vertical ? 0 : t)) * dx_, y0_ + (j + (vertical ? t : 0)) * dy_};
  };
  // The crossing on the edge: linear interpolation between the samples, refined by regula falsi with the
  // Illinois modification (Dowell & Jarratt 1971) on the field itself, so a curved field (a conic's scale near
  // a standard parallel) is contoured where it is, not where a straight line between samples puts it.
  double ta = 0, tb = 1, fa = at(i, j) - level, fb = (vertical ? at(i, j + 1) : at(i + 1, j)) - level;
  double t = std::clamp(fa / (fa - fb), 0.0, 1.0);
  int side = 0;
  for (int iteration = 0; iteration < 8 && fa != fb; ++iteration) {
    const Coord c = point(t);
    const double ft = value(c.x, c.y) - level;
    if (!std::isfinite(ft) || ft == 0) break;
    if ((ft < 0) == (fa < 0)) {
      ta = t, fa = ft;
      if (side == -1) fb /= 2;
      side = -1;
    } else {
      tb = t, fb = ft;
      if (side == 1) fa /= 2;
      side = 1;
    }
    t = std::clamp(ta + fa * (tb - ta) / (fa - fb), 0.0, 1.0);
    if (tb - ta < 1e-9) break;
  }
  const Coord c = point(t);
  return auditor_->project(c.x, c.y);
}

std::vector<std::pair<long, long>> ScaleField::crossed_edges(double level) const {
  const int n = n_;
  std::vector<std::pair<long, long>> segments;
  for (int j = 0; j + 1 < n; ++j) {
    for (int i = 0; i + 1 < n; ++i) {
      const double v[4] = {at(i, j), at(i + 1, j), at(i + 1, j + 1), at(i, j + 1)};
      if (!std::isfinite(v[0]) || !std::isfinite(v[1]) || !std::isfinite(v[2]) || !std::isfinite(v[3])) continue;
      const int c = (v[0] >= level ? 1 : 0) | (v[1] >= level ? 2 : 0) | (v[2] >= level ? 4 : 0) |
                    (v[3] >= level ? 8 : 0);
      if (c == 0 || c == 15) continue;
      const long bottom = 2L * (static_cast<long>(j) * n + i), top = 2L * (static_cast<long>(j + 1) * n + i);
      const long left = 2L * (static_cast<long>(j) * n + i) + 1, right = 2L * (static_cast<long>(j) * n + i + 1) + 1;
      const double centre = 0.25 * (v[0] + v[1] + v[2] + v[3]);
      switch (c) {
        case 1: case 14: segments.push_back({left, bottom}); break;
        case 2: case 13: segments.push_back({bottom, right}); break;
        case 3: case 12: segments.push_back({left, right}); break;
        case 4: case 11: segments.push_back({right, top}); break;
        case 6: case 9: segments.push_back({bottom, top}); break;
        case 7: case 8: segments.push_back({left, top}); break;
        case 5:
          if (centre >= level) segments.push_back({left, top}), segments.push_back({bottom, right});
          else segments.push_back({left, bottom}), segments.push_back({right, top});
          break;
        case 10:
          if (centre >= level) segments.push_back({left, bottom}), segments.push_back({right, top});
          else segments.push_back({left, top}), segments.push_back({bottom, right});
          break;
        default: break;
      }
    }
  }
  return segments;
}

std::vector<Path> ScaleField::trace(double level) const {
  std::vector<Path> out;
  if (n_ < 2) return out;
  const std::vector<std::pair<long, long>> segments = crossed_edges(level);
  // Join segments sharing an edge crossing into polylines.
  std::unordered_multimap<long, std::size_t> at;
  for (std::size_t k = 0; k < segments.size(); ++k) {
    at.emplace(segments[k].first, k);
    at.emplace(segments[k].second, k);
  }
  std::vector<char> used(segments.size(), 0);
  auto take_next = [&](long key) -> long {
    auto range = at.equal_range(key);
    for (auto it = range.first; it != range.second; ++it) {
      if (used[it->second]) continue;
      used[it->second] = 1;
      const auto& s = segments[it->second];
      return s.first == key ? s.second : s.first;
    }
    return -1;
  };
  for (std::size_t k = 0; k < segments.size(); ++k) {
    if (used[k]) continue;
    used[k] = 1;
    std::vector<long> keys = {segments[k].first, segments[k].second};
    for (long next; (next = take_next(keys.back())) >= 0;) keys.push_back(next);
    std::vector<long> head;
    for (long next; (next = take_next(keys.front())) >= 0;) keys.insert(keys.begin(), next);
    Path p;
    for (const long key : keys) {
      const Coord c = crossing(key, level);
      if (std::isfinite(c.x) && std::isfinite(c.y)) p.push_back(c);
    }
    if (p.size() >= 2) out.push_back(std::move(p));
  }
  return out;
}

}  // namespace gridtruth::detail
