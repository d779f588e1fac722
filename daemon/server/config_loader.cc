#include "daemon/server/config_loader.h"

#include "daemon/pipeline/daemon_config.h"
#include "daemon/server/config_file.h"

namespace bayline::server {
namespace {

// "FILE:LINE: " for the field a validation message starts with, or "FILE: " / "" when unknown.
std::string WhereIs(const std::string& message, const std::string& file,
                    const FieldLocator& locator) {
  if (file.empty()) return "";
  const size_t colon = message.find(": ");
  const int line = colon == std::string::npos ? 0 : locator.LineOf(message.substr(0, colon));
  std::string where = file;
  if (line > 0) where.append(":").append(std::to_string(line));
  return where.append(": ");
}

// A file sets rules, or says it wants the default rule: never both, never neither (config.proto).
bool RulesIntended(const bayline::v1::DaemonConfig& from_file, const std::string& file,
                   const FieldLocator& locator, std::string* error) {
  if (from_file.rules_size() > 0 && from_file.use_default_rules()) {
    *error = WhereIs("use_default_rules: ", file, locator) +
             "use_default_rules: true, but the file also sets " +
             std::to_string(from_file.rules_size()) + " rules";
    return false;
  }
  if (from_file.rules_size() == 0 && !from_file.use_default_rules()) {
    *error = file +
             ": sets no rules (a file cut short?); refused. A file meant to run the embedded "
             "default rule says so with `use_default_rules: true`";
    return false;
  }
  return true;
}

}  // namespace

bool LoadDaemonConfig(const DaemonOptions& options, const std::string& config_file,
                      bayline::v1::DaemonConfig* out, std::string* error) {
  *out = pipeline::DefaultConfig();
  FieldLocator locator;
  bayline::v1::DaemonConfig from_file;
  if (!config_file.empty()) {
    if (!ParseConfigFile(config_file, &from_file, &locator, error)) return false;
    MergeConfigOver(from_file, out);
  }
  ApplyOptionOverrides(options, out);

  // Settings only the daemon interprets; the origin is the flag when one was given.
  auto origin = [&](const std::string& flag_value, const char* flag, const char* field) {
    if (!flag_value.empty()) return std::string(flag) + ": ";
    if (config_file.empty()) return std::string(field) + ": ";
    std::string where = config_file;
    if (const int line = locator.LineOf(field); line > 0) {
      where.append(":").append(std::to_string(line));
    }
    return where.append(": ").append(field).append(": ");
  };
  Shard shard;
  std::string why;
  if (!ParseShard(out->shard(), &shard, &why)) {
    *error = origin(options.shard, "--shard", "shard") + why;
    return false;
  }
  if (!out->log_level().empty() && !IsLogLevelName(out->log_level())) {
    *error = origin(options.log_level, "--log-level", "log_level") + "unknown log level \"" +
             out->log_level() + "\" (trace, debug, info, warn, error)";
    return false;
  }
  if (out->snapshot_every_s() < 0) {
    *error = origin("", "", "snapshot_every_s") + "must be >= 0 (0 = default 60)";
    return false;
  }
  const auto& e = out->endpoints();
  if (e.pull_bind_size() == 0 && e.sub_connect_size() == 0) {
    *error = origin("", "", "endpoints") + "no ingest endpoint (pull_bind or sub_connect)";
    return false;
  }
  const bayline::est::Status status = pipeline::ValidateConfig(*out);
  if (!status.ok()) {
    *error = WhereIs(status.message(), config_file, locator) + status.message();
    return false;
  }
  if (!config_file.empty() && !RulesIntended(from_file, config_file, locator, error)) return false;
  if (out->state_dir().empty()) out->set_state_dir(DefaultStateDir());
  return true;
}

}  // namespace bayline::server
