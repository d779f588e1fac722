// The configuration of the fuzz targets that hold channels: all_models.conf (its path compiled in
// as BAYLINE_FUZZ_CONFIG) loaded as baylined loads a config file. Aborts if it does not load: the
// harness is then broken, which is not a finding.
#pragma once

#include <cstdio>
#include <cstdlib>
#include <string>

#include "bayline/v1/config.pb.h"
#include "daemon/server/config_loader.h"
#include "daemon/server/daemon_options.h"

namespace bayline::fuzz {

inline bayline::v1::DaemonConfig AllModelsConfig() {
  bayline::server::DaemonOptions options;
  bayline::v1::DaemonConfig config;
  std::string error;
  if (!bayline::server::LoadDaemonConfig(options, BAYLINE_FUZZ_CONFIG, &config, &error)) {
    std::fprintf(stderr, "fuzz config: %s\n", error.c_str());
    std::abort();
  }
  return config;
}

}  // namespace bayline::fuzz
