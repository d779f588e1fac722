// The ingest frame scanner: every frame it accepts decodes with protobuf to exactly the
// observations it returns; everything unusual is left to protobuf.
#include "daemon/server/frame_scan.h"

#include <gtest/gtest.h>

#include <cmath>
#include <limits>
#include <random>
#include <string>
#include <vector>

#include "bayline/v1/observation.pb.h"

namespace bayline::server {
namespace {

using bayline::v1::IngestFrame;
using bayline::v1::Observation;

// Protobuf's reading of a frame: its observations serialized, or false if it does not decode.
bool ProtobufObservations(const std::string& frame, std::vector<std::string>* out) {
  IngestFrame f;
  if (!f.ParseFromString(frame)) return false;
  out->clear();
  if (f.has_observation()) out->push_back(f.observation().SerializeAsString());
  if (f.has_batch()) {
    for (const auto& o : f.batch().observations()) out->push_back(o.SerializeAsString());
  }
  return true;
}

// Checks the scanner's contract on one frame; returns whether the scanner accepted it.
bool CheckAgainstProtobuf(const std::string& frame) {
  std::vector<ScannedObservation> scanned;
  if (!ScanIngestFrame(frame, &scanned)) return false;
  std::vector<std::string> expected;
  EXPECT_TRUE(ProtobufObservations(frame, &expected)) << "accepted a frame protobuf refuses";
  EXPECT_EQ(scanned.size(), expected.size());
  for (size_t i = 0; i < std::min(scanned.size(), expected.size()); ++i) {
    Observation o;
    EXPECT_TRUE(o.ParseFromArray(scanned[i].bytes.data(), int(scanned[i].bytes.size())));
    EXPECT_EQ(o.SerializeAsString(), expected[i]) << "observation " << i;
    EXPECT_EQ(scanned[i].channel, o.channel()) << "observation " << i;
  }
  return true;
}

Observation Full(const std::string& channel, uint64_t seq) {
  Observation o;
  o.set_channel(channel);
  o.set_seq(seq);
  o.set_time_ns(-1);  // a 10-byte varint
  o.set_y(-0.0);
  o.add_x(1.5);
  o.add_x(std::numeric_limits<double>::quiet_NaN());
  o.set_trials(3);
  o.set_exposure(2);
  o.set_weight(0.5);
  return o;
}

std::string SingleFrame(const Observation& o) {
  IngestFrame f;
  *f.mutable_observation() = o;
  return f.SerializeAsString();
}

std::string BatchFrame(const std::vector<Observation>& observations) {
  IngestFrame f;
  f.mutable_batch();  // an empty batch is still a batch
  for (const auto& o : observations) *f.mutable_batch()->add_observations() = o;
  return f.SerializeAsString();
}

TEST(FrameScanTest, SplitsPlainSingleAndBatchFrames) {
  Observation minimal;
  minimal.set_channel("site3/freezer2/probe7");
  minimal.set_y(1.25);
  EXPECT_TRUE(CheckAgainstProtobuf(SingleFrame(minimal)));
  EXPECT_TRUE(CheckAgainstProtobuf(SingleFrame(Full("a/b", ~uint64_t(0)))));
  EXPECT_TRUE(
      CheckAgainstProtobuf(SingleFrame(Observation())));  // no channel: the pipeline says so
  std::vector<Observation> batch;
  for (int i = 0; i < 300; ++i) batch.push_back(Full("bench/c" + std::to_string(i), uint64_t(i)));
  EXPECT_TRUE(CheckAgainstProtobuf(BatchFrame(batch)));
  EXPECT_TRUE(CheckAgainstProtobuf(BatchFrame({})));

  std::vector<ScannedObservation> scanned;
  const std::string frame = BatchFrame(batch);  // the scanned views point into it
  ASSERT_TRUE(ScanIngestFrame(frame, &scanned));
  ASSERT_EQ(scanned.size(), 300u);
  EXPECT_EQ(scanned[299].channel, "bench/c299");
}

TEST(FrameScanTest, UnpackedRegressorsAndARepeatedChannelAreReadAsProtobufDoes) {
  std::string obs;
  obs.append(
      "\x0a\x01"
      "a");            // channel "a"
  obs.append("\x29");  // x, unpacked
  obs.append(8, '\x01');
  obs.append(
      "\x0a\x02"
      "bc");  // channel again: the last one wins
  std::string frame(1, '\x0a');
  frame.push_back(char(obs.size()));
  frame.append(obs);
  EXPECT_TRUE(CheckAgainstProtobuf(frame));
  std::vector<ScannedObservation> scanned;
  ASSERT_TRUE(ScanIngestFrame(frame, &scanned));
  EXPECT_EQ(scanned[0].channel, "bc");
}

TEST(FrameScanTest, LeavesUnusualFramesToProtobuf) {
  std::vector<ScannedObservation> scanned;
  const std::string plain = SingleFrame(Full("a/b", 1));
  EXPECT_FALSE(ScanIngestFrame("", &scanned));              // empty: no payload
  EXPECT_FALSE(ScanIngestFrame("\x0a\xff\xff", &scanned));  // truncated
  EXPECT_FALSE(ScanIngestFrame(plain + plain, &scanned));   // repeated payload: merged
  EXPECT_FALSE(ScanIngestFrame(plain.substr(0, plain.size() - 1), &scanned));
  std::string extra_field = plain;
  extra_field.append("\x18\x01");
  EXPECT_FALSE(ScanIngestFrame(extra_field, &scanned));         // an unknown field of the frame
  EXPECT_FALSE(ScanIngestFrame("\x0a\x02\x48\x01", &scanned));  // unknown field 9
  EXPECT_FALSE(ScanIngestFrame("\x0a\x02\x20\x01", &scanned));  // y with a varint wire type
  EXPECT_FALSE(
      ScanIngestFrame("\x0a\x09\x2a\x07"
                      "1234567",
                      &scanned));  // packed x, 7 bytes
  EXPECT_FALSE(ScanIngestFrame(SingleFrame(Full("caf\xc3\xa9", 1)), &scanned));  // UTF-8
  EXPECT_FALSE(ScanIngestFrame(SingleFrame(Full("bad\xff", 1)), &scanned));
  // Protobuf takes these too, or refuses them; the daemon gets its answer either way.
  std::vector<std::string> ignored;
  EXPECT_TRUE(ProtobufObservations(SingleFrame(Full("caf\xc3\xa9", 1)), &ignored));
}

TEST(FrameScanTest, EveryAcceptedMutationDecodesIdenticallyWithProtobuf) {
  std::mt19937_64 rng(11);
  std::vector<Observation> batch;
  for (int i = 0; i < 4; ++i) batch.push_back(Full("s/c" + std::to_string(i), uint64_t(i + 1)));
  Observation sparse;
  sparse.set_channel("s/sparse");
  sparse.set_y(2);
  batch.push_back(sparse);
  const std::vector<std::string> seeds = {SingleFrame(Full("x/y", 7)), SingleFrame(sparse),
                                          BatchFrame(batch)};
  int accepted = 0, refused = 0;
  for (int round = 0; round < 200000; ++round) {
    std::string frame = seeds[size_t(round) % seeds.size()];
    const int edits = 1 + int(rng() % 3);
    for (int e = 0; e < edits && !frame.empty(); ++e) {
      const size_t at = size_t(rng() % frame.size());
      switch (rng() % 4) {
        case 0:
          frame[at] = char(rng());
          break;  // any byte
        case 1:
          frame[at] = char(frame[at] ^ (1 << (rng() % 8)));
          break;  // one bit
        case 2:
          frame.erase(at, 1 + size_t(rng() % 4));
          break;
        default:
          frame.insert(at, 1, char(rng()));
          break;
      }
    }
    if (CheckAgainstProtobuf(frame)) {
      ++accepted;
    } else {
      ++refused;
    }
    if (::testing::Test::HasFailure()) {
      ADD_FAILURE() << "round " << round;
      break;
    }
  }
  // Both sides of the contract were exercised.
  EXPECT_GT(accepted, 1000);
  EXPECT_GT(refused, 1000);
}

}  // namespace
}  // namespace bayline::server
