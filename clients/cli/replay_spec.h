// The `bayline replay` configuration: either the daemon's config file (--config, protobuf text
// format, the daemon's rules apply) or a one-channel-spec built from flags, turned into a validated
// DaemonConfig for the pipeline library.
#pragma once

#include <string>
#include <vector>

#include "bayline/v1/config.pb.h"
#include "estimators/detect/calibration.h"

namespace bayline::cli {

struct ReplaySpecFlags {
  std::string model = "auto";
  std::vector<std::string> regressors;  // the --x column names
  bool no_intercept = false;
  std::string estimators;        // comma-separated subset of ls, ml, map; "" = all the model allows
  double forgetting = 0;         // lambda in (0, 1]; 0 = unset
  double half_life_s = 0;        // > 0: forget by elapsed time
  std::string detect = "cusum";  // comma-separated detector kinds, or "none"
  double arl0 = est::kDefaultArl0;
  double shift = 1;
  bool has_target = false;
  double target_mean = 0;
  double target_sd = 0;
  int every = 1;
};

// One rule "replay" matching every channel ("**") with the spec the flags describe.
bayline::v1::DaemonConfig ConfigFromFlags(const ReplaySpecFlags& flags);

// Parses a text-format DaemonConfig file. Throws InputError "FILE:LINE:COLUMN: problem" when it
// does not parse.
bayline::v1::DaemonConfig ReadConfigFile(const std::string& path);

// Throws InputError when the pipeline library's ValidateConfig refuses `config`; `origin` (the
// file name or "flags") prefixes the message that names the field path.
void CheckConfig(const bayline::v1::DaemonConfig& config, const std::string& origin);

}  // namespace bayline::cli
