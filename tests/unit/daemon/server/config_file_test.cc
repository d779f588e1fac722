// Config files: text-format parsing with located errors, merging over a base, field locations.
#include "daemon/server/config_file.h"

#include <gtest/gtest.h>
#include <sys/stat.h>

#include <filesystem>
#include <fstream>
#include <random>

namespace bayline::server {
namespace {

namespace fs = std::filesystem;

class ConfigFileTest : public ::testing::Test {
 protected:
  ConfigFileTest() {
    std::random_device rd;
    dir_ = fs::temp_directory_path() / ("bayline-config-test-" + std::to_string(rd()));
    fs::create_directories(dir_);
  }
  ~ConfigFileTest() override { fs::remove_all(dir_); }
  fs::path Write(const std::string& name, const std::string& text) {
    fs::path p = dir_ / name;
    std::ofstream(p) << text;
    return p;
  }
  fs::path dir_;
};

TEST_F(ConfigFileTest, ParsesAColdStorageConfig) {
  fs::path p = Write("site.conf",
                     "snapshot_every_s: 30\n"
                     "rules {\n"
                     "  name: \"freezer probes\"\n"
                     "  match: \"coldstore/*/probe*\"\n"
                     "  spec { model: \"linear\" regressors: \"reference\" }\n"
                     "}\n");
  bayline::v1::DaemonConfig config;
  FieldLocator locator;
  std::string error;
  ASSERT_TRUE(ParseConfigFile(p, &config, &locator, &error)) << error;
  EXPECT_EQ(config.snapshot_every_s(), 30);
  ASSERT_EQ(config.rules_size(), 1);
  EXPECT_EQ(config.rules(0).spec().regressors(0), "reference");
  EXPECT_EQ(locator.LineOf("snapshot_every_s"), 1);
  EXPECT_EQ(locator.LineOf("rules[0].spec.model"), 5);
  EXPECT_EQ(locator.LineOf("rules[0].match"), 4);
  // A field the file did not set resolves to the deepest ancestor it did set.
  EXPECT_EQ(locator.LineOf("rules[0].spec.detectors[0].arl0"), 5);
  EXPECT_EQ(locator.LineOf("limits.max_channels"), 0);
}

TEST_F(ConfigFileTest, SyntaxErrorsNameFileLineAndColumn) {
  fs::path p = Write("broken.conf", "workers: 2\nrules {\n  match: \"a/**\"\n  nonsense: 3\n}\n");
  bayline::v1::DaemonConfig config;
  std::string error;
  EXPECT_FALSE(ParseConfigFile(p, &config, nullptr, &error));
  EXPECT_NE(error.find(p.string() + ":4:"), std::string::npos) << error;
  EXPECT_NE(error.find("nonsense"), std::string::npos) << error;
}

TEST_F(ConfigFileTest, MissingFileIsAnErrorNamingIt) {
  bayline::v1::DaemonConfig config;
  std::string error;
  EXPECT_FALSE(ParseConfigFile(dir_ / "absent.conf", &config, nullptr, &error));
  EXPECT_NE(error.find("absent.conf"), std::string::npos) << error;
}

TEST_F(ConfigFileTest, FilesThatSetNothingOrAreNotFilesAreRefused) {
  bayline::v1::DaemonConfig config;
  std::string error;
  for (const char* text : {"", "\n  \t\n", "# rules follow\n# later\n"}) {
    EXPECT_FALSE(ParseConfigFile(Write("empty.conf", text), &config, nullptr, &error)) << text;
    EXPECT_NE(error.find("empty.conf: empty"), std::string::npos) << error;
  }
  fs::create_directory(dir_ / "a-directory.conf");
  EXPECT_FALSE(ParseConfigFile(dir_ / "a-directory.conf", &config, nullptr, &error));
  EXPECT_NE(error.find("a-directory.conf: is a directory"), std::string::npos) << error;
  ASSERT_EQ(::mkfifo((dir_ / "fifo.conf").c_str(), 0600), 0);
  EXPECT_FALSE(ParseConfigFile(dir_ / "fifo.conf", &config, nullptr, &error));  // not waited on
  EXPECT_NE(error.find("not a regular file"), std::string::npos) << error;
  EXPECT_TRUE(ParseConfigFile(Write("one.conf", "# a comment\nworkers: 2 # two\n"), &config,
                              nullptr, &error))
      << error;
  EXPECT_EQ(config.workers(), 2u);
}

TEST(MergeConfigTest, OverlayReplacesWhatItSetsAndKeepsTheRest) {
  bayline::v1::DaemonConfig base;
  base.mutable_endpoints()->add_pull_bind("tcp://127.0.0.1:1");
  base.mutable_endpoints()->set_publish_bind("tcp://127.0.0.1:2");
  base.mutable_limits()->set_max_channels(100);
  base.mutable_limits()->set_max_frame_bytes(1000);
  base.add_rules()->set_match("**");
  base.set_snapshot_every_s(60);

  bayline::v1::DaemonConfig overlay;
  overlay.mutable_endpoints()->add_pull_bind("ipc:///tmp/a");
  overlay.mutable_endpoints()->add_pull_bind("ipc:///tmp/b");
  overlay.mutable_limits()->set_max_channels(5);
  overlay.add_rules()->set_match("line/*");
  overlay.add_rules()->set_match("**");

  MergeConfigOver(overlay, &base);
  ASSERT_EQ(base.endpoints().pull_bind_size(), 2);
  EXPECT_EQ(base.endpoints().pull_bind(1), "ipc:///tmp/b");
  EXPECT_EQ(base.endpoints().publish_bind(), "tcp://127.0.0.1:2");
  EXPECT_EQ(base.limits().max_channels(), 5u);
  EXPECT_EQ(base.limits().max_frame_bytes(), 1000u);
  ASSERT_EQ(base.rules_size(), 2);
  EXPECT_EQ(base.rules(0).match(), "line/*");
  EXPECT_EQ(base.snapshot_every_s(), 60);
}

TEST(ConfigDigestTest, ChangesWithRulesButNotWithEndpoints) {
  bayline::v1::DaemonConfig a;
  a.add_rules()->set_match("**");
  bayline::v1::DaemonConfig b = a;
  b.mutable_endpoints()->set_publish_bind("tcp://127.0.0.1:9");
  EXPECT_EQ(ConfigDigest(a), ConfigDigest(b));
  b.mutable_rules(0)->mutable_spec()->set_model("gaussian");
  EXPECT_NE(ConfigDigest(a), ConfigDigest(b));
}

}  // namespace
}  // namespace bayline::server
