// The daemon's configuration file as baylined --check-config reads it: text-format parsing with
// field locations, merging over the defaults, and validation (LoadDaemonConfig). Every input must
// either load or fail with an error text.
#include <cstdint>
#include <cstdlib>
#include <string>

#include "daemon/server/config_loader.h"
#include "daemon/server/daemon_options.h"
#include "tests/fuzz/memory_file.h"

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* data, size_t size) {
  static bayline::fuzz::MemoryFile file;
  const std::string& path = file.Write(data, size);
  bayline::server::DaemonOptions options;
  bayline::v1::DaemonConfig config;
  std::string error;
  if (!bayline::server::LoadDaemonConfig(options, path, &config, &error) && error.empty()) {
    std::abort();
  }
  return 0;
}
