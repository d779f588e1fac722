// The column-mapping flags shared by `send` and `replay`: --channel, --name, --y, --x, --seq,
// --time, --trials, --exposure, --weight, --format.
#pragma once

#include <CLI/CLI.hpp>
#include <string>

#include "clients/cli/observation_mapping.h"

namespace bayline::cli {

struct MappingFlags {
  ColumnMapping mapping;
  std::string x_list;        // --x, comma-separated
  std::string channel_name;  // --name: channel for inputs without a channel column
  std::string format = "auto";
};

void AddMappingOptions(CLI::App* sub, MappingFlags* flags);

// The final mapping for input `path` (x split, channel_explicit and default_channel set).
ColumnMapping ResolveMapping(const MappingFlags& flags, const std::string& path, SeqPolicy seq);

}  // namespace bayline::cli
