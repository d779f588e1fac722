#include "clients/cli/observation_mapping.h"

#include <gtest/gtest.h>

#include "clients/cli/input_error.h"
#include "clients/cli/record_reader.h"
#include "tests/unit/clients/test_files.h"

namespace bayline::cli {
namespace {

using testing::TempDir;

// Maps every record of `path`; throws what the reader or mapper throws.
std::vector<bayline::v1::Observation> MapAll(const std::string& path, ColumnMapping mapping) {
  RecordReader reader(path, InputFormat::kAuto);
  if (mapping.default_channel.empty()) mapping.default_channel = ChannelNameFromPath(path);
  ObservationMapper mapper(mapping, reader.display_name());
  if (reader.is_csv()) mapper.CheckHeader(reader.header());
  std::vector<bayline::v1::Observation> out;
  Record r;
  bayline::v1::Observation obs;
  while (reader.Next(&r)) {
    mapper.Map(r, &obs);
    out.push_back(obs);
  }
  return out;
}

std::string MapError(const std::string& path, const ColumnMapping& mapping) {
  try {
    MapAll(path, mapping);
  } catch (const InputError& e) {
    return e.what();
  }
  return "";
}

TEST(ObservationMappingTest, MapsColumnsAndNumbersRowsPerChannel) {
  TempDir dir;
  auto path = dir.Write("cal.csv",
                        "probe,reading,reference,ambient,t\n"
                        "room1/p1,4.1,4.0,12,1733130000.5\n"
                        "room1/p2,3.9,4.0,12,1733130001\n"
                        "room1/p1,,5.0,13,1733130002.000000001\n");
  ColumnMapping m;
  m.channel = "probe";
  m.channel_explicit = true;
  m.y = "reading";
  m.x = {"reference", "ambient"};
  m.time = "t";
  auto obs = MapAll(path, m);
  ASSERT_EQ(obs.size(), 3u);
  EXPECT_EQ(obs[0].channel(), "room1/p1");
  EXPECT_EQ(obs[0].seq(), 1u);
  EXPECT_DOUBLE_EQ(obs[0].y(), 4.1);
  EXPECT_EQ(obs[0].x_size(), 2);
  EXPECT_DOUBLE_EQ(obs[0].x(1), 12.0);
  EXPECT_EQ(obs[0].time_ns(), 1733130000500000000);
  EXPECT_EQ(obs[1].seq(), 1u);   // first row of room1/p2
  EXPECT_EQ(obs[2].seq(), 2u);   // second row of room1/p1
  EXPECT_FALSE(obs[2].has_y());  // empty y with regressors: a prediction request
  EXPECT_EQ(obs[2].time_ns(), 1733130002000000001);  // exact to the nanosecond
}

TEST(ObservationMappingTest, FileWithoutChannelColumnIsOneChannelNamedAfterIt) {
  TempDir dir;
  auto path = dir.Write("door_events.csv", "y,seq,exp\n3,7,1.5\n0,8,\n");
  ColumnMapping m;
  m.seq = "seq";
  m.exposure = "exp";
  auto obs = MapAll(path, m);
  ASSERT_EQ(obs.size(), 2u);
  EXPECT_EQ(obs[0].channel(), "door_events");
  EXPECT_EQ(obs[0].seq(), 7u);
  EXPECT_DOUBLE_EQ(obs[0].exposure(), 1.5);
  EXPECT_FALSE(obs[1].has_exposure());
}

TEST(ObservationMappingTest, UnnumberedPolicyLeavesSeqZeroAndNsSuffixReadsIntegers) {
  TempDir dir;
  auto path = dir.Write("a.jsonl", "{\"y\": 1, \"ts\": 1733130000000000007}\n");
  ColumnMapping m;
  m.time = "ts:ns";
  m.seq_policy = SeqPolicy::kUnnumbered;
  auto obs = MapAll(path, m);
  ASSERT_EQ(obs.size(), 1u);
  EXPECT_EQ(obs[0].seq(), 0u);
  EXPECT_EQ(obs[0].time_ns(), 1733130000000000007);
  EXPECT_EQ(obs[0].channel(), "a");
}

TEST(ObservationMappingTest, JsonArrayRegressorExpands) {
  TempDir dir;
  auto path = dir.Write("r.jsonl", "{\"channel\": \"c\", \"y\": 2, \"x\": [1, 2, 3]}\n");
  ColumnMapping m;
  m.x = {"x"};
  auto obs = MapAll(path, m);
  ASSERT_EQ(obs[0].x_size(), 3);
  EXPECT_DOUBLE_EQ(obs[0].x(2), 3.0);
}

TEST(ObservationMappingTest, MissingColumnInHeaderNamesFileAndColumns) {
  TempDir dir;
  auto path = dir.Write("p.csv", "channel,value\na,1\n");
  std::string error = MapError(path, ColumnMapping{});
  EXPECT_NE(error.find(path + ":1: no column 'y' (--y) in the header (columns: channel, value)"),
            std::string::npos)
      << error;
}

TEST(ObservationMappingTest, NonNumericValueNamesFileLineAndColumn) {
  TempDir dir;
  auto path = dir.Write("p.csv", "channel,y\na,1\na,warm\n");
  std::string error = MapError(path, ColumnMapping{});
  EXPECT_NE(error.find(path + ":3: column 2 (y): not a finite number: 'warm'"), std::string::npos)
      << error;
  EXPECT_NE(MapError(dir.Write("n.csv", "y\nnan\n"), ColumnMapping{}).find("n.csv:2: column 1 (y)"),
            std::string::npos);
}

TEST(ObservationMappingTest, BadSeqTimeAndMissingJsonKeyAreErrors) {
  TempDir dir;
  ColumnMapping with_seq;
  with_seq.seq = "s";
  EXPECT_NE(MapError(dir.Write("s.csv", "y,s\n1,0\n"), with_seq).find("column 2 (s)"),
            std::string::npos);
  EXPECT_NE(MapError(dir.Write("s2.csv", "y,s\n1,-3\n"), with_seq).find("sequence number"),
            std::string::npos);
  ColumnMapping with_time;
  with_time.time = "t";
  EXPECT_NE(MapError(dir.Write("t.csv", "y,t\n1,yesterday\n"), with_time).find("not a time"),
            std::string::npos);
  std::string error = MapError(dir.Write("k.jsonl", "{\"y\": 1}\n{\"z\": 2}\n"), ColumnMapping{});
  EXPECT_NE(error.find("k.jsonl:2: column (y): missing"), std::string::npos) << error;
  ColumnMapping explicit_channel;
  explicit_channel.channel = "probe";
  explicit_channel.channel_explicit = true;
  EXPECT_NE(MapError(dir.Write("c.csv", "y\n1\n"), explicit_channel).find("no column 'probe'"),
            std::string::npos);
}

TEST(ObservationMappingTest, HelpersSplitListsAndNameChannels) {
  EXPECT_EQ(SplitList("a, b,,c "), (std::vector<std::string>{"a", "b", "c"}));
  EXPECT_EQ(ChannelNameFromPath("/data/site3.freezer.csv"), "site3.freezer");
  EXPECT_EQ(ChannelNameFromPath("-"), "stdin");
  EXPECT_EQ(ChannelNameFromPath(".hidden"), ".hidden");
}

}  // namespace
}  // namespace bayline::cli
