// baylined: the streaming estimation daemon. See daemon.h for the threads and lifecycle, and
// `baylined --help` for flags, signals and the state directory.
#include <spdlog/sinks/stdout_sinks.h>
#include <spdlog/spdlog.h>

#include <cstdio>

#include "daemon/server/config_loader.h"
#include "daemon/server/daemon.h"
#include "daemon/server/daemon_options.h"

int main(int argc, char** argv) {
  using namespace bayline::server;
  DaemonOptions options;
  if (auto exit_code = ParseDaemonOptions(argc, argv, &options)) return *exit_code;

  auto logger = spdlog::stderr_logger_mt("baylined");
  logger->set_pattern("%Y-%m-%dT%H:%M:%S.%eZ %l %v", spdlog::pattern_time_type::utc);
  logger->flush_on(spdlog::level::trace);  // line-buffered: operators and tests read it live
  spdlog::set_default_logger(logger);

  if (!options.check_config_file.empty()) {
    bayline::v1::DaemonConfig config;
    std::string error;
    if (!LoadDaemonConfig(options, options.check_config_file, &config, &error)) {
      std::fprintf(stderr, "%s\n", error.c_str());
      return 1;
    }
    std::printf("%s: ok (%d rules)\n", options.check_config_file.c_str(), config.rules_size());
    return 0;
  }
  Daemon daemon(std::move(options));
  return daemon.Run();
}
