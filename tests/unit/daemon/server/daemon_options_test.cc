// Command line and shard notation.
#include "daemon/server/daemon_options.h"

#include <gtest/gtest.h>

#include <cstdlib>

namespace bayline::server {
namespace {

std::optional<int> Parse(std::vector<std::string> args, DaemonOptions* out) {
  args.insert(args.begin(), "baylined");
  std::vector<char*> argv;
  for (auto& a : args) argv.push_back(a.data());
  return ParseDaemonOptions(int(argv.size()), argv.data(), out);
}

TEST(DaemonOptionsTest, FlagsOverrideTheConfiguration) {
  DaemonOptions options;
  ASSERT_FALSE(Parse({"--pull-bind", "ipc:///tmp/x", "--sub-connect", "tcp://127.0.0.1:5",
                      "--sub-connect", "tcp://127.0.0.1:6", "--workers", "3", "--shard", "1/2",
                      "--state-dir", "/tmp/s", "--log-level", "debug"},
                     &options)
                   .has_value());
  bayline::v1::DaemonConfig config;
  config.mutable_endpoints()->add_pull_bind("tcp://127.0.0.1:1");
  config.mutable_endpoints()->set_control_bind("tcp://127.0.0.1:3");
  ApplyOptionOverrides(options, &config);
  ASSERT_EQ(config.endpoints().pull_bind_size(), 1);
  EXPECT_EQ(config.endpoints().pull_bind(0), "ipc:///tmp/x");
  EXPECT_EQ(config.endpoints().sub_connect_size(), 2);
  EXPECT_EQ(config.endpoints().control_bind(), "tcp://127.0.0.1:3");
  EXPECT_EQ(config.workers(), 3u);
  EXPECT_EQ(config.shard(), "1/2");
  EXPECT_EQ(config.state_dir(), "/tmp/s");
  EXPECT_EQ(config.log_level(), "debug");
}

TEST(DaemonOptionsTest, BadFlagsExitWithUsageCode) {
  DaemonOptions options;
  EXPECT_EQ(Parse({"--workers", "0"}, &options), std::optional<int>(2));
  DaemonOptions more;
  EXPECT_EQ(Parse({"--log-level", "loud"}, &more), std::optional<int>(2));
  DaemonOptions unknown;
  EXPECT_EQ(Parse({"--no-such-flag"}, &unknown), std::optional<int>(2));
}

TEST(ShardTest, ParsesValidAndRejectsInvalidNotation) {
  Shard s;
  std::string error;
  ASSERT_TRUE(ParseShard("", &s, &error));
  EXPECT_EQ(s.count, 1u);
  ASSERT_TRUE(ParseShard("2/3", &s, &error));
  EXPECT_EQ(s.index, 2u);
  EXPECT_EQ(s.count, 3u);
  for (const char* bad : {"3/3", "1/0", "a/2", "1/", "/2", "1-2", "1/2/3", "-1/2"}) {
    EXPECT_FALSE(ParseShard(bad, &s, &error)) << bad;
    EXPECT_NE(error.find("shard"), std::string::npos);
  }
}

TEST(DefaultStateDirTest, FollowsTheEnvironmentInOrder) {
  setenv("BAYLINE_STATE_DIR", "/srv/bayline", 1);
  EXPECT_EQ(DefaultStateDir(), "/srv/bayline");
  unsetenv("BAYLINE_STATE_DIR");
  setenv("XDG_STATE_HOME", "/home/op/.state", 1);
  EXPECT_EQ(DefaultStateDir(), "/home/op/.state/bayline");
  unsetenv("XDG_STATE_HOME");
  setenv("HOME", "/home/op", 1);
  EXPECT_EQ(DefaultStateDir(), "/home/op/.local/state/bayline");
}

}  // namespace
}  // namespace bayline::server
