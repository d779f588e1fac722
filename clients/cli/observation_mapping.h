// ObservationMapper: turns input Records into bayline.v1.Observation messages by a column
// mapping (shared by `bayline send` and `bayline replay`).
//
//   channel  column with the channel name (default "channel"). When the input has no such column
//            and it was not named explicitly, every record goes to `default_channel` (the file's
//            base name without extension).
//   y        response column (default "y"); an empty / null cell means "no y" (with regressors:
//            a prediction request).
//   x        regressor columns, in order; a JSON array cell contributes all its numbers.
//   seq      optional; without it, SeqPolicy decides (row number within the channel, or 0 =
//            let the daemon number it).
//   time     optional; seconds since the Unix epoch (decimal, exact to the ns). Writing the
//            column as "NAME:ns" reads integer nanoseconds instead.
//   trials, exposure, weight   optional numeric columns; empty cells are absent.
// Every problem is an InputError naming file, line and column; nothing is produced for that record.
#pragma once

#include <map>
#include <string>
#include <vector>

#include "bayline/v1/observation.pb.h"
#include "clients/cli/record.h"

namespace bayline::cli {

enum class SeqPolicy {
  kRowNumber,   // 1-based row number within the channel (replay)
  kUnnumbered,  // seq = 0: the daemon numbers it after the channel's last one (send)
};

struct ColumnMapping {
  std::string channel = "channel";
  bool channel_explicit = false;
  std::string default_channel;  // used when the channel column is absent
  std::string y = "y";
  std::vector<std::string> x;
  std::string seq;
  std::string time;  // "NAME" (seconds) or "NAME:ns"
  std::string trials;
  std::string exposure;
  std::string weight;
  SeqPolicy seq_policy = SeqPolicy::kRowNumber;
};

// Splits "a,b, c" into {"a", "b", "c"} (empty items dropped).
std::vector<std::string> SplitList(const std::string& text);

// "dir/site3.probe.csv" -> "site3.probe"; "-" -> "stdin".
std::string ChannelNameFromPath(const std::string& path);

class ObservationMapper {
 public:
  ObservationMapper(ColumnMapping mapping, std::string source_name);

  // CSV: checks that every mapped column is in the header (line `header_line`); throws
  // InputError "<file>:<line>: no column 'temp' in the header (columns: a, b)" otherwise.
  void CheckHeader(const std::vector<std::string>& header, int64_t header_line = 1);

  // Fills *obs (cleared first) from one record; throws InputError on a bad or missing cell.
  void Map(const Record& record, bayline::v1::Observation* obs);

 private:
  const Field& Require(const Record& r, const std::string& column) const;
  double Number(const Record& r, const Field& f) const;
  bool OptionalNumber(const Record& r, const std::string& column, double* value) const;

  ColumnMapping mapping_;
  std::string source_;
  std::string time_column_;
  bool time_in_ns_ = false;
  bool channel_from_column_ = true;
  bool channel_decided_ = false;
  std::map<std::string, uint64_t> rows_per_channel_;
};

}  // namespace bayline::cli
