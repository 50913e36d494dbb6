// Internal: the candidate datum operations between an auditor's source CRS and its target, and PROJ's own
// per-point choice among them (used by lib/audit/auditor.cpp and audit.cpp).
#pragma once

#include <map>
#include <mutex>
#include <optional>
#include <string>
#include <vector>

#include "gridtruth/audit.hpp"
#include "core/proj_handles.hpp"

namespace gridtruth::detail {

/// Built once per Auditor and shared read-only (behind a mutex) by its clones.
class DatumCandidates {
 public:
  /// Lists the candidates from src_geog (geographic) to tgt (projected), objects of context c: all of them
  /// (grids known or not) for the report, and those PROJ can apply with the installed grids for the choice.
  /// Throws Error(no_transformation) when none is usable.
  DatumCandidates(PJ_CONTEXT* c, const PJ* src_geog, const PJ* tgt);
  ~DatumCandidates();
  DatumCandidates(const DatumCandidates&) = delete;
  DatumCandidates& operator=(const DatumCandidates&) = delete;

  const std::vector<DatumOperation>& operations() const noexcept { return operations_; }
  /// The pipeline (PROJ string, longitude-latitude order in, easting-northing out) of operations()[i]; "" when
  /// that candidate is not usable.
  const std::string& pipeline(std::size_t i) const { return pipelines_[i]; }
  /// The first usable candidate in PROJ's order.
  std::size_t first_usable() const noexcept { return first_usable_; }
  /// The usable candidate PROJ's own default applies to a feature with this bounding box (source longitude,
  /// latitude, degrees): proj_create_crs_to_crs with the box as area of interest, proj_trans at its centre.
  /// nullopt when PROJ names none of the candidates. Cached by how the box lies in the candidates' areas.
  std::optional<std::size_t> choose(double west_deg, double south_deg, double east_deg, double north_deg) const;
  /// The candidate that is, or has as one step (possibly inverted), the database operation AUTH:CODE. Throws
  /// Error(no_transformation) when there is none or it lacks a grid, Error(invalid_argument) for an unknown code.
  std::size_t find(const std::string& auth_code) const;
  /// DatumOperation's warning for the candidates used (see Auditor::datum_warnings).
  std::vector<std::string> warnings(const std::vector<std::size_t>& used) const;

 private:
  std::optional<std::size_t> ask_proj(double west_deg, double south_deg, double east_deg, double north_deg) const;

  Context ctx_;
  Pj from_, to_;  // the CRSs, in ctx_
  std::vector<DatumOperation> operations_;
  std::vector<std::string> pipelines_;
  std::size_t first_usable_ = 0;
  mutable std::mutex mutex_;  // ctx_ and cache_
  mutable std::map<std::string, std::optional<std::size_t>> cache_;
};

}  // namespace gridtruth::detail
