// The effective daemon configuration: pipeline::DefaultConfig(), then the config file (if any)
// merged over it, then the command-line flags over both; validated as a whole.
#pragma once

#include <string>

#include "bayline/v1/config.pb.h"
#include "daemon/server/daemon_options.h"

namespace bayline::server {

// Builds and validates the configuration from `options` and `config_file` ("" = none). On success
// fills *out (state_dir resolved to DefaultStateDir() when unset) and returns true. On failure
// returns false and *error names the file, line and field, e.g.
//   "site.conf:12: rules[0].spec.detectors[0].arl0: must be in [2, 1e7], got 1"
// or the flag ("--shard: ..."); *out is unspecified.
bool LoadDaemonConfig(const DaemonOptions& options, const std::string& config_file,
                      bayline::v1::DaemonConfig* out, std::string* error);

}  // namespace bayline::server
