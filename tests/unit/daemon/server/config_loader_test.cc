// The effective configuration: defaults, then the file, then the flags; errors located in the file.
#include "daemon/server/config_loader.h"

#include <gtest/gtest.h>

#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <random>

#include "daemon/defaults.h"

namespace bayline::server {
namespace {

namespace fs = std::filesystem;

class ConfigLoaderTest : public ::testing::Test {
 protected:
  ConfigLoaderTest() {
    std::random_device rd;
    dir_ = fs::temp_directory_path() / ("bayline-loader-test-" + std::to_string(rd()));
    fs::create_directories(dir_);
  }
  ~ConfigLoaderTest() override { fs::remove_all(dir_); }
  std::string Write(const std::string& text) {
    fs::path p = dir_ / "site.conf";
    std::ofstream(p) << text;
    return p.string();
  }
  fs::path dir_;
};

TEST_F(ConfigLoaderTest, NoFileGivesTheEmbeddedDefaults) {
  setenv("BAYLINE_STATE_DIR", "/srv/bayline-test", 1);
  bayline::v1::DaemonConfig config;
  std::string error;
  ASSERT_TRUE(LoadDaemonConfig(DaemonOptions{}, "", &config, &error)) << error;
  ASSERT_EQ(config.endpoints().pull_bind_size(), 1);
  EXPECT_EQ(config.endpoints().pull_bind(0), kDefaultIngestEndpoint);
  EXPECT_EQ(config.endpoints().publish_bind(), kDefaultPublishEndpoint);
  EXPECT_EQ(config.endpoints().control_bind(), kDefaultControlEndpoint);
  EXPECT_EQ(config.state_dir(), "/srv/bayline-test");
  ASSERT_GE(config.rules_size(), 1);
  EXPECT_EQ(config.rules(0).match(), "**");
  unsetenv("BAYLINE_STATE_DIR");
}

TEST_F(ConfigLoaderTest, FileOverDefaultsAndFlagsOverFile) {
  const std::string file = Write(
      "state_dir: \"/var/lib/coldstore\"\n"
      "endpoints { publish_bind: \"ipc:///tmp/coldstore-pub\" }\n"
      "rules { name: \"probes\" match: \"coldstore/**\" spec { model: \"gaussian\" } }\n");
  DaemonOptions options;
  options.state_dir = "/tmp/override";
  options.control_bind = "ipc:///tmp/coldstore-ctl";
  bayline::v1::DaemonConfig config;
  std::string error;
  ASSERT_TRUE(LoadDaemonConfig(options, file, &config, &error)) << error;
  EXPECT_EQ(config.state_dir(), "/tmp/override");
  EXPECT_EQ(config.endpoints().publish_bind(), "ipc:///tmp/coldstore-pub");
  EXPECT_EQ(config.endpoints().control_bind(), "ipc:///tmp/coldstore-ctl");
  EXPECT_EQ(config.endpoints().pull_bind(0), kDefaultIngestEndpoint);
  ASSERT_EQ(config.rules_size(), 1);
  EXPECT_EQ(config.rules(0).name(), "probes");
}

TEST_F(ConfigLoaderTest, ValidationErrorNamesFileLineAndFieldPath) {
  const std::string file = Write(
      "rules {\n"
      "  match: \"coldstore/**\"\n"
      "  spec {\n"
      "    model: \"gaussian\"\n"
      "    detectors { kind: \"cusum\" arl0: 1 }\n"
      "  }\n"
      "}\n");
  bayline::v1::DaemonConfig config;
  std::string error;
  ASSERT_FALSE(LoadDaemonConfig(DaemonOptions{}, file, &config, &error));
  EXPECT_EQ(error.rfind(file + ":5: rules[0].spec.detectors[0].arl0", 0), 0u) << error;
}

TEST_F(ConfigLoaderTest, AFileSetsRulesOrSaysItWantsTheDefaultRule) {
  bayline::v1::DaemonConfig config;
  std::string error;
  const std::string cut = Write("snapshot_every_s: 30\n");  // e.g. the rules not written yet
  ASSERT_FALSE(LoadDaemonConfig(DaemonOptions{}, cut, &config, &error));
  EXPECT_EQ(error.rfind(cut + ": sets no rules", 0), 0u) << error;
  EXPECT_NE(error.find("use_default_rules: true"), std::string::npos) << error;

  const std::string intended = Write("snapshot_every_s: 30\nuse_default_rules: true\n");
  ASSERT_TRUE(LoadDaemonConfig(DaemonOptions{}, intended, &config, &error)) << error;
  ASSERT_EQ(config.rules_size(), 1);
  EXPECT_EQ(config.rules(0).match(), "**");

  const std::string both = Write(
      "rules { name: \"probes\" match: \"coldstore/**\" spec { model: \"gaussian\" } }\n"
      "use_default_rules: true\n");
  ASSERT_FALSE(LoadDaemonConfig(DaemonOptions{}, both, &config, &error));
  EXPECT_EQ(error.rfind(both + ":2: use_default_rules", 0), 0u) << error;
}

TEST_F(ConfigLoaderTest, DaemonSettingsAreCheckedWithTheirOrigin) {
  bayline::v1::DaemonConfig config;
  std::string error;
  const std::string file = Write("workers: 2\nshard: \"3/2\"\n");
  ASSERT_FALSE(LoadDaemonConfig(DaemonOptions{}, file, &config, &error));
  EXPECT_EQ(error.rfind(file + ":2: shard:", 0), 0u) << error;

  DaemonOptions options;
  options.shard = "x";
  ASSERT_FALSE(LoadDaemonConfig(options, "", &config, &error));
  EXPECT_EQ(error.rfind("--shard: ", 0), 0u) << error;

  const std::string levels = Write("log_level: \"chatty\"\n");
  ASSERT_FALSE(LoadDaemonConfig(DaemonOptions{}, levels, &config, &error));
  EXPECT_NE(error.find(":1: log_level"), std::string::npos) << error;
}

}  // namespace
}  // namespace bayline::server
