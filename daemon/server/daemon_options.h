// baylined's command line: parsing (CLI11), the flags' overrides of the configuration, the shard
// notation "i/N" and the default state directory.
#pragma once

#include <cstdint>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "bayline/v1/config.pb.h"

namespace bayline::server {

struct DaemonOptions {
  std::string config_file;        // --config: text-format DaemonConfig merged over the defaults
  std::string check_config_file;  // --check-config: validate and exit
  std::string state_dir;          // --state-dir
  std::vector<std::string> pull_bind;    // --pull-bind (repeatable)
  std::vector<std::string> sub_connect;  // --sub-connect (repeatable)
  std::string publish_bind;              // --publish-bind
  std::string control_bind;              // --control-bind
  uint32_t workers = 0;                  // --workers; 0 = unset
  std::string shard;                     // --shard i/N
  std::string log_level;                 // --log-level
  bool strict_state = false;  // --strict-state: refuse to start when no snapshot restores
};

// Process exit codes of baylined.
inline constexpr int kExitOk = 0;
inline constexpr int kExitStartFailed = 1;  // invalid configuration, refused state, bind failure
inline constexpr int kExitBadCommandLine = 2;
inline constexpr int kExitFinalSnapshotFailed = 3;  // stopped, but the state was not saved

// Parses argv. Returns nullopt to run, or the process exit code when parsing already finished the
// job (--help: 0) or failed (the error and usage are printed: 2).
std::optional<int> ParseDaemonOptions(int argc, char** argv, DaemonOptions* out);

// Applies the flags that were given over *config (flags win over the file and the defaults).
void ApplyOptionOverrides(const DaemonOptions& options, bayline::v1::DaemonConfig* config);

struct Shard {
  uint32_t index = 0;
  uint32_t count = 1;
};

// "" -> 0/1 (everything); "i/N" with 0 <= i < N; otherwise false with *error.
bool ParseShard(std::string_view text, Shard* out, std::string* error);

// $BAYLINE_STATE_DIR, else $XDG_STATE_HOME/bayline, else $HOME/.local/state/bayline, else
// ./bayline-state.
std::string DefaultStateDir();

// spdlog level names accepted by --log-level and log_level.
bool IsLogLevelName(std::string_view name);

}  // namespace bayline::server
