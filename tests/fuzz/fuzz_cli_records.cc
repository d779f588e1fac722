// The CLI's input readers: a file read by RecordReader as CSV (target fuzz_cli_csv) or as JSON
// Lines (fuzz_cli_jsonl, built with BAYLINE_FUZZ_JSONL), every record mapped to an Observation by
// ObservationMapper, as `bayline send` and `bayline replay` do. Malformed input must end in
// InputError; nothing else may escape.
#include <cstdint>
#include <cstdlib>
#include <string>

#include "bayline/v1/observation.pb.h"
#include "clients/cli/input_error.h"
#include "clients/cli/observation_mapping.h"
#include "clients/cli/record_reader.h"
#include "tests/fuzz/memory_file.h"

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* data, size_t size) {
  using namespace bayline::cli;
#ifdef BAYLINE_FUZZ_JSONL
  constexpr InputFormat kFormat = InputFormat::kJsonLines;
#else
  constexpr InputFormat kFormat = InputFormat::kCsv;
#endif
  static bayline::fuzz::MemoryFile file;
  const std::string& path = file.Write(data, size);
  ColumnMapping mapping;
  mapping.default_channel = "fuzz";
  mapping.x = {"x"};
  mapping.time = "t";
  mapping.weight = "w";
  try {
    RecordReader reader(path, kFormat);
    ObservationMapper mapper(mapping, path);
    if (reader.is_csv()) mapper.CheckHeader(reader.header());
    Record record;
    bayline::v1::Observation obs;
    for (int i = 0; i < 100000 && reader.Next(&record); ++i) {
      try {
        mapper.Map(record, &obs);
      } catch (const InputError&) {  // a bad cell: the record is refused, reading goes on
      }
    }
  } catch (const InputError&) {
  }
  return 0;
}
