// Reading a DaemonConfig from a protobuf text-format file, merging it over a base configuration,
// and mapping a field path named by a validation error ("rules[2].spec.detectors[0].arl0") back to
// the line of the file that set it, so every error names file, line and field.
#pragma once

#include <google/protobuf/text_format.h>

#include <filesystem>
#include <memory>
#include <string>
#include <string_view>

#include "bayline/v1/config.pb.h"

namespace bayline::server {

inline constexpr size_t kMaxConfigFileBytes = size_t{16} << 20;

// Where each field of a parsed file came from.
class FieldLocator {
 public:
  FieldLocator();
  ~FieldLocator();
  FieldLocator(const FieldLocator&) = delete;
  FieldLocator& operator=(const FieldLocator&) = delete;

  // 1-based line of the deepest element of `field_path` (dot-separated, repeated fields indexed as
  // name[i]) that the file set; 0 when the file set none of it (e.g. it came from the defaults).
  int LineOf(std::string_view field_path) const;

  google::protobuf::TextFormat::ParseInfoTree* tree() { return tree_.get(); }

 private:
  std::unique_ptr<google::protobuf::TextFormat::ParseInfoTree> tree_;
};

// Parses `path` (text format) into *out, which is cleared first. On failure returns false and
// *error holds one line per problem, "FILE:LINE:COLUMN: message" (1-based). `locator` may be null.
// Refused before parsing, with "FILE: reason": anything but a regular file (a directory, a FIFO),
// a read error, a file over kMaxConfigFileBytes, and a file that sets nothing (empty, or only
// whitespace and comments), which is what an editor's half-written file or a truncation leaves.
bool ParseConfigFile(const std::filesystem::path& path, bayline::v1::DaemonConfig* out,
                     FieldLocator* locator, std::string* error);

// Overlays the fields `overlay` sets onto *base. Scalars and strings replace when non-zero /
// non-empty; limits field by field; a non-empty repeated field (endpoint list, rules) replaces the
// base's list as a whole, because rules are ordered and the first match wins.
void MergeConfigOver(const bayline::v1::DaemonConfig& overlay, bayline::v1::DaemonConfig* base);

// Digest (FNV-1a 64 of the deterministic serialization) of the parts of a configuration that shape
// channel state: rules and limits. Stored in snapshot headers.
uint64_t ConfigDigest(const bayline::v1::DaemonConfig& config);

}  // namespace bayline::server
