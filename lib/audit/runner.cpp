#include "gridtruth/runner.hpp"

#include <tbb/blocked_range.h>
#include <tbb/enumerable_thread_specific.h>
#include <tbb/global_control.h>
#include <tbb/parallel_for.h>
#include <tbb/parallel_pipeline.h>
#include <tbb/task_arena.h>

#include <algorithm>
#include <exception>
#include <memory>
#include <thread>
#include <utility>
#include <vector>

#include "runner_detail.hpp"

namespace gridtruth {

AuditResult detail::unread_result(const InputFeature& feature) {
  AuditResult r;
  r.status = Status::invalid;
  r.message = feature.error.empty() ? "the feature has no geometry" : feature.error;
  if (feature.declared_type) r.type = *feature.declared_type;
  return r;
}

namespace {

/// A feature's audit as every runner does it: unread, at its own height, or at the auditor's.
AuditResult audit_feature(const Auditor& auditor, const InputFeature& f) {
  return !f.geometry ? detail::unread_result(f) : f.height_m ? auditor.audit(*f.geometry, *f.height_m) : auditor.audit(*f.geometry);
}

unsigned thread_count(const RunOptions& options) {
  return options.threads == 0 ? std::max(1U, std::thread::hardware_concurrency()) : options.threads;
}

/// One auditor per worker thread, cloned on first use: PROJ objects are not thread-safe. The prototype is only
/// read (clone()).
tbb::enumerable_thread_specific<std::unique_ptr<Auditor>> per_thread(const Auditor& auditor) {
  return tbb::enumerable_thread_specific<std::unique_ptr<Auditor>>(
      [&auditor] { return std::make_unique<Auditor>(auditor.clone()); });
}

/// Features travel through the pipeline as raw text (cut serially), are parsed and audited in the parallel stage
/// and handed to the sink in order.
struct Batch {
  std::vector<RawFeature> raws;
  std::vector<InputFeature> features;
  std::vector<AuditResult> results;
};

}  // namespace

std::size_t run_audit(FeatureReader& reader, const Auditor& auditor, const RunOptions& options,
                      const ResultSink& sink) {
  const unsigned threads = thread_count(options);
  const std::size_t batch_size = std::max<std::size_t>(1, options.batch_features);
  std::size_t count = 0;

  auto local = per_thread(auditor);
  bool done = false;
  std::exception_ptr reader_failure;
  tbb::task_arena arena(static_cast<int>(threads));
  arena.execute([&] {
    tbb::parallel_pipeline(
        2 * threads + 2,
        tbb::make_filter<void, std::shared_ptr<Batch>>(
            tbb::filter_mode::serial_in_order,
            [&](tbb::flow_control& flow) -> std::shared_ptr<Batch> {
              if (done) {
                flow.stop();
                return nullptr;
              }
              auto batch = std::make_shared<Batch>();
              batch->raws.reserve(batch_size);
              try {
                while (batch->raws.size() < batch_size) {
                  std::optional<RawFeature> f = reader.next_raw();
                  if (!f) {
                    done = true;
                    break;
                  }
                  batch->raws.push_back(std::move(*f));
                }
              } catch (...) {
                // Finish the features read so far, then rethrow once the pipeline has drained.
                reader_failure = std::current_exception();
                done = true;
              }
              if (batch->raws.empty()) {
                flow.stop();
                return nullptr;
              }
              return batch;
            }) &
            tbb::make_filter<std::shared_ptr<Batch>, std::shared_ptr<Batch>>(
                tbb::filter_mode::parallel,
                [&](std::shared_ptr<Batch> batch) {
                  std::unique_ptr<Auditor>& mine = local.local();
                  batch->features.reserve(batch->raws.size());
                  for (RawFeature& raw : batch->raws) batch->features.push_back(reader.parse(std::move(raw)));
                  batch->raws = std::vector<RawFeature>();
                  batch->results.reserve(batch->features.size());
                  for (const InputFeature& f : batch->features) batch->results.push_back(audit_feature(*mine, f));
                  return batch;
                }) &
            tbb::make_filter<std::shared_ptr<Batch>, void>(tbb::filter_mode::serial_in_order,
                                                            [&](std::shared_ptr<Batch> batch) {
                                                              for (std::size_t i = 0; i < batch->features.size();
                                                                   ++i) {
                                                                sink(batch->features[i], batch->results[i]);
                                                              }
                                                              count += batch->features.size();
                                                            }));
  });
  if (reader_failure) std::rethrow_exception(reader_failure);
  return count;
}

std::vector<AuditResult> audit_features(const std::vector<InputFeature>& features, const Auditor& auditor,
                                        const RunOptions& options) {
  const unsigned threads = thread_count(options);
  const std::size_t batch_size = std::max<std::size_t>(1, options.batch_features);
  std::vector<AuditResult> results(features.size());
  if (threads == 1) {  // no clone, no arena: the caller's auditor on the caller's thread
    for (std::size_t i = 0; i < features.size(); ++i) results[i] = audit_feature(auditor, features[i]);
    return results;
  }
  auto local = per_thread(auditor);
  tbb::task_arena arena(static_cast<int>(threads));
  arena.execute([&] {
    tbb::parallel_for(tbb::blocked_range<std::size_t>(0, features.size(), batch_size),
                      [&](const tbb::blocked_range<std::size_t>& range) {
                        const Auditor& mine = *local.local();
                        for (std::size_t i = range.begin(); i != range.end(); ++i) {
                          results[i] = audit_feature(mine, features[i]);
                        }
                      });
  });
  return results;
}

}  // namespace gridtruth
