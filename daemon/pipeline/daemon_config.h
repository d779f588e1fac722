// The daemon configuration (bayline.v1.DaemonConfig, config.proto) as the pipeline reads it:
// validation, the embedded default, and the digest stored in snapshots.
//   config_validation.cc  ValidateConfig
//   default_config.cc     DefaultConfig, ConfigDigest
#pragma once

#include <string>

#include "bayline/v1/config.pb.h"
#include "estimators/core/status.h"

namespace bayline::pipeline {

// Ok, or kInvalidConfig whose message names the field path, e.g.
// "rules[2].spec.detectors[0].arl0: must be in [2, 1e7], got 1". Checks everything that can be
// checked without data (threshold calibration runs when a Pipeline is built or reconfigured).
bayline::est::Status ValidateConfig(const bayline::v1::DaemonConfig& config);

// The embedded default configuration: loopback endpoints from daemon/defaults.h, default limits,
// and one rule "default": match "**", model "auto", all estimators the model allows, a
// self-starting CUSUM with the default arl0 (est::kDefaultArl0, 500) watching the first estimator.
bayline::v1::DaemonConfig DefaultConfig();

// Digest (16 hex digits) of a configuration (deterministic serialization), stored in snapshots.
std::string ConfigDigest(const bayline::v1::DaemonConfig& config);

}  // namespace bayline::pipeline
