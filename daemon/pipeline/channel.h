// Channel: everything the pipeline keeps for one channel. The name is the registry's key.
// Per-channel footprint for a gaussian channel with the default rule: the three estimators inline
// in one vector block, the CUSUM with its standardizer in another, a shared pointer to the rule's
// resolved spec, and a few counters (tests/bench/pipeline measures the resident bytes).
#pragma once

#include <cstdint>
#include <memory>
#include <vector>

#include "daemon/pipeline/detector_slot.h"
#include "daemon/pipeline/estimator_slot.h"
#include "daemon/pipeline/resolved_spec.h"
#include "daemon/pipeline/seq_window.h"

namespace bayline::pipeline {

// Publish policy state: observations since the last estimate publication and its time.
struct PublishState {
  uint64_t since_publish = 0;
  int64_t last_publish_ns = 0;
  bool published = false;
};

struct Channel {
  explicit Channel(std::shared_ptr<const ResolvedSpec> resolved) : spec(std::move(resolved)) {
    estimators.reserve(spec->estimators.size());
    for (EstimatorKind k : spec->estimators) estimators.emplace_back(*spec, k);
    detectors.reserve(spec->detectors.size());
    for (const DetectorSetup& d : spec->detectors) {
      detectors.emplace_back(d, spec->model, spec->estimators[static_cast<std::size_t>(d.watch)]);
    }
  }

  bool alarm_active() const {
    for (const auto& d : detectors) {
      if (d.alarm_active()) return true;
    }
    return false;
  }

  std::shared_ptr<const ResolvedSpec> spec;
  std::vector<EstimatorSlot> estimators;  // in spec->estimators order
  std::vector<DetectorSlot> detectors;    // in spec->detectors order
  SeqWindow seq;
  uint64_t accepted = 0;
  int64_t last_time_ns = 0;
  PublishState publish;
};

}  // namespace bayline::pipeline
