#include "clients/cli/mapping_options.h"

namespace bayline::cli {

void AddMappingOptions(CLI::App* sub, MappingFlags* f) {
  sub->add_option("--channel", f->mapping.channel,
                  "column holding the channel name (without it in the input: one channel named "
                  "after the file, or --name)")
      ->capture_default_str();
  sub->add_option("--name", f->channel_name,
                  "channel name for an input without a channel column (default: the file's base "
                  "name without extension; 'stdin' for -)");
  sub->add_option("--y", f->mapping.y, "response column; an empty cell with x = prediction request")
      ->capture_default_str();
  sub->add_option("--x", f->x_list, "comma-separated regressor columns, in order");
  sub->add_option("--seq", f->mapping.seq, "sequence-number column (integers >= 1)");
  sub->add_option("--time", f->mapping.time,
                  "time column: seconds since the Unix epoch (decimal); write COL:ns for integer "
                  "nanoseconds");
  sub->add_option("--trials", f->mapping.trials, "binomial / logistic trials column");
  sub->add_option("--exposure", f->mapping.exposure, "poisson exposure column");
  sub->add_option("--weight", f->mapping.weight, "observation weight column (> 0)");
  sub->add_option("--format", f->format,
                  "input format: auto (by extension; for stdin by the first line), csv or jsonl")
      ->check(CLI::IsMember({"auto", "csv", "jsonl"}))
      ->capture_default_str();
}

ColumnMapping ResolveMapping(const MappingFlags& f, const std::string& path, SeqPolicy seq) {
  ColumnMapping m = f.mapping;
  m.x = SplitList(f.x_list);
  m.channel_explicit = m.channel != "channel";
  m.default_channel = f.channel_name.empty() ? ChannelNameFromPath(path) : f.channel_name;
  m.seq_policy = seq;
  return m;
}

}  // namespace bayline::cli
