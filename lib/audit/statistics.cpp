// gridtruth — the statistics of a run (include/gridtruth/statistics.hpp).
#include "gridtruth/statistics.hpp"

#include <algorithm>
#include <cmath>

#include "core/geometry_kind.hpp"

namespace gridtruth {

namespace {

using detail::is_areal;
using detail::is_linear;

bool worse(const WorstFeature& a, const WorstFeature& b) {
  const double fa = std::fabs(a.error_ppm), fb = std::fabs(b.error_ppm);
  if (fa != fb) return fa > fb;
  return a.position < b.position;
}

}  // namespace

void RunStatistics::add(std::string_view id, std::size_t position, const AuditResult& r) {
  ++read_;
  switch (r.status) {
    case Status::ok: ++ok_; break;
    case Status::invalid: ++invalid_; break;
    case Status::unmeasurable: ++unmeasurable_; break;
  }
  if (r.verdict == Verdict::pass) ++pass_;
  if (r.verdict == Verdict::fail) ++fail_;
  if (r.status != Status::ok) return;
  if (r.datum_operation) ++datum_use_[*r.datum_operation];
  const Budget* b = nullptr;
  std::string measure;
  if (is_areal(r.type) && r.area) {
    ++area_features_;
    b = &*r.area, measure = "area";
    true_area_m2_.add(b->reference);
    grid_area_m2_.add(b->grid);
  } else if (is_linear(r.type) && r.length) {
    ++length_features_;
    b = &*r.length, measure = "length";
    true_length_m_.add(b->reference);
    grid_length_m_.add(b->grid);
  } else if (!is_areal(r.type) && !is_linear(r.type)) {
    ++point_features_;
  }
  if (!b || !std::isfinite(b->error_ppm)) return;
  const double ref = b->reference;
  worst_.push_back({std::string(id), position, r.type, measure, b->error_ppm, b->error,
                    {1e6 * b->from_edges / ref, 1e6 * b->from_scale / ref, 1e6 * b->from_datum / ref,
                     1e6 * b->from_height / ref},
                    r.verdict});
  if (worst_.size() > 4 * worst_count_ + 4) {
    std::partial_sort(worst_.begin(), worst_.begin() + static_cast<std::ptrdiff_t>(worst_count_), worst_.end(),
                      worse);
    worst_.resize(worst_count_);
  }
}

void RunStatistics::add_unread() {
  ++read_;
  ++invalid_;
}

std::vector<WorstFeature> RunStatistics::worst() const {
  std::vector<WorstFeature> w = worst_;
  std::sort(w.begin(), w.end(), worse);
  if (w.size() > worst_count_) w.resize(worst_count_);
  return w;
}

}  // namespace gridtruth
