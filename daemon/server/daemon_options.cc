#include "daemon/server/daemon_options.h"

#include <CLI/CLI.hpp>
#include <charconv>
#include <cstdlib>

#include "daemon/defaults.h"

namespace bayline::server {
namespace {

constexpr const char* kDescription =
    "baylined: streaming statistical estimation daemon.\n"
    "Receives bayline.v1.IngestFrame messages (an Observation or an ObservationBatch) on ZeroMQ\n"
    "PULL (bound) and/or SUB (connected) sockets, keeps per-channel estimators and detectors, and\n"
    "publishes [topic, bayline.v1.Publication] on a PUB socket; topic = <kind>/<channel> with\n"
    "kind estimate, alarm, input_error or prediction. A REP socket answers bayline.v1.Request\n"
    "(list, ask, reset, stats, snapshot, reload).\n"
    "With no arguments it runs the embedded default configuration on loopback:\n"
    "  ingest tcp://127.0.0.1:7601 (PULL), publish tcp://127.0.0.1:7602 (PUB),\n"
    "  control tcp://127.0.0.1:7603 (REP).";

constexpr const char* kFooter =
    "Configuration: --config FILE is protobuf text format (bayline.v1.DaemonConfig) merged over\n"
    "the defaults; flags override both. --check-config FILE validates and exits 0 (valid) or 1.\n"
    "State directory: --state-dir, else state_dir in the config, else $BAYLINE_STATE_DIR, else\n"
    "$XDG_STATE_HOME/bayline, else $HOME/.local/state/bayline. Snapshots snapshot-<n>.bls are\n"
    "written there every snapshot_every_s seconds (default 60), on the control request\n"
    "`snapshot` and at shutdown; the newest two are kept and the newest good one is restored at\n"
    "start. A file that cannot be restored is logged as an error and moved into damaged/ there\n"
    "(never pruned); when none restores the daemon starts empty with an error line, or with\n"
    "--strict-state refuses to start. Entries of the directory are never followed as links;\n"
    "names that are not a snapshot generation in [1, 2^48] are ignored.\n"
    "Signals: SIGTERM/SIGINT stop ingest, drain the workers, write a snapshot and exit 0;\n"
    "a second one during that exits at once with 128 + its number (no final snapshot).\n"
    "SIGHUP re-reads the config file (rules, log_level, snapshot_every_s); channels whose spec\n"
    "changed are reset with a warning; an invalid, empty or unreadable file, or one without rules\n"
    "(unless it says use_default_rules: true), is rejected and the old config kept.\n"
    "Exit codes: 0 clean stop, 1 invalid configuration or start-up failure (or refused state),\n"
    "2 bad command line, 3 stopped but the final snapshot could not be written (logged).";

}  // namespace

std::optional<int> ParseDaemonOptions(int argc, char** argv, DaemonOptions* out) {
  CLI::App app(kDescription, "baylined");
  app.footer(kFooter);
  app.add_option("--config", out->config_file, "Configuration file (protobuf text format)");
  app.add_option("--check-config", out->check_config_file,
                 "Validate a configuration file and exit 0 (valid) or 1 (errors name file, line "
                 "and field)");
  app.add_option("--state-dir", out->state_dir, "Directory for snapshots");
  app.add_option("--pull-bind", out->pull_bind,
                 "Bind a PULL ingest socket here (repeatable; replaces the config's list)");
  app.add_option("--sub-connect", out->sub_connect,
                 "Connect a SUB ingest socket to a producer's PUB endpoint (repeatable)");
  app.add_option("--publish-bind", out->publish_bind, "Bind the PUB socket for publications here");
  app.add_option("--control-bind", out->control_bind, "Bind the REP control socket here");
  app.add_option("--workers", out->workers, "Estimation threads (default: number of cores)")
      ->check(CLI::Range(1u, 1024u));
  app.add_option("--shard", out->shard,
                 "i/N: keep only channels with hash(name) % N == i (several daemons share the "
                 "producers)");
  app.add_flag("--strict-state", out->strict_state,
               "Refuse to start (exit 1) when the state directory holds snapshot files and none "
               "can be restored, instead of moving them into damaged/ and starting empty");
  app.add_option("--log-level", out->log_level, "trace, debug, info (default), warn, error")
      ->check([](const std::string& v) {
        return IsLogLevelName(v) ? std::string() : "unknown log level: " + v;
      });
  try {
    app.parse(argc, argv);
  } catch (const CLI::ParseError& e) {
    const int code = app.exit(e);  // prints help, or the error and a usage hint
    return code == 0 ? 0 : 2;
  }
  return std::nullopt;
}

void ApplyOptionOverrides(const DaemonOptions& options, bayline::v1::DaemonConfig* config) {
  auto* endpoints = config->mutable_endpoints();
  if (!options.pull_bind.empty()) {
    endpoints->clear_pull_bind();
    for (const auto& e : options.pull_bind) endpoints->add_pull_bind(e);
  }
  if (!options.sub_connect.empty()) {
    endpoints->clear_sub_connect();
    for (const auto& e : options.sub_connect) endpoints->add_sub_connect(e);
  }
  if (!options.publish_bind.empty()) endpoints->set_publish_bind(options.publish_bind);
  if (!options.control_bind.empty()) endpoints->set_control_bind(options.control_bind);
  if (!options.state_dir.empty()) config->set_state_dir(options.state_dir);
  if (options.workers != 0) config->set_workers(options.workers);
  if (!options.shard.empty()) config->set_shard(options.shard);
  if (!options.log_level.empty()) config->set_log_level(options.log_level);
}

bool ParseShard(std::string_view text, Shard* out, std::string* error) {
  if (text.empty()) {
    *out = Shard{};
    return true;
  }
  size_t slash = text.find('/');
  Shard shard;
  auto parse = [](std::string_view digits, uint32_t* value) {
    if (digits.empty()) return false;
    auto [end, ec] = std::from_chars(digits.data(), digits.data() + digits.size(), *value);
    return ec == std::errc() && end == digits.data() + digits.size();
  };
  if (slash == std::string_view::npos || !parse(text.substr(0, slash), &shard.index) ||
      !parse(text.substr(slash + 1), &shard.count) || shard.count == 0 ||
      shard.index >= shard.count) {
    *error = "shard: expected i/N with 0 <= i < N, got \"" + std::string(text) + "\"";
    return false;
  }
  *out = shard;
  return true;
}

std::string DefaultStateDir() {
  if (const char* dir = std::getenv(kStateDirEnv); dir != nullptr && *dir != '\0') return dir;
  if (const char* xdg = std::getenv("XDG_STATE_HOME"); xdg != nullptr && *xdg != '\0')
    return std::string(xdg) + "/bayline";
  if (const char* home = std::getenv("HOME"); home != nullptr && *home != '\0')
    return std::string(home) + "/.local/state/bayline";
  return "bayline-state";
}

bool IsLogLevelName(std::string_view name) {
  return name == "trace" || name == "debug" || name == "info" || name == "warn" ||
         name == "error" || name == "critical" || name == "off";
}

}  // namespace bayline::server
