// gridtruth — streaming, parallel audit of a whole input.
#pragma once

#include <cstddef>
#include <functional>
#include <vector>

#include "gridtruth/audit.hpp"
#include "gridtruth/io.hpp"

namespace gridtruth {

/// How run_audit() spreads the work.
struct RunOptions {
  unsigned threads = 0;             ///< worker threads; 0 = every hardware thread
  std::size_t batch_features = 256;  ///< features per batch handed to a worker
};

/// Receives each feature and its result, in input order, on one thread at a time.
using ResultSink = std::function<void(const InputFeature& feature, const AuditResult& result)>;

/// Reads every feature of `reader`, audits it with a clone of `auditor` per worker thread (at the feature's own
/// height when the reader gives one, InputFeature::height_m), and hands the
/// (feature, result) pairs to `sink` in input order. A feature the reader could not understand gets an
/// `invalid` result carrying the reader's message; so every feature read yields exactly one call of `sink`.
///
/// Memory stays bounded whatever the input size: at most about 2 × threads + 2 batches are alive at once.
/// Cutting the features out of the input (FeatureReader::next_raw()) and the sink run on one thread at a time (in
/// order); parsing the features (FeatureReader::parse(); CSV records are parsed as they are cut) and the audits
/// run on all workers.
/// Throws what the reader throws (Error(parse) for an unreadable container) after the features before the fault
/// have been handed to the sink; a sink that throws stops the run with its exception.
/// Returns the number of features read.
std::size_t run_audit(FeatureReader& reader, const Auditor& auditor, const RunOptions& options,
                      const ResultSink& sink);

/// Audits features already in memory (e.g. handed over by the Python binding) on the workers of run_audit(): a
/// clone of `auditor` per worker thread, each feature at its own height when it has one (InputFeature::height_m),
/// a feature without a geometry `invalid` with its `error` (as run_audit() gives it). Result i belongs to feature i; each
/// result depends only on its feature, so every thread count gives the same results. Thread-safe for distinct
/// auditors; `auditor` is only cloned. Features are handed to workers in batches of options.batch_features.
std::vector<AuditResult> audit_features(const std::vector<InputFeature>& features, const Auditor& auditor,
                                        const RunOptions& options);

}  // namespace gridtruth
