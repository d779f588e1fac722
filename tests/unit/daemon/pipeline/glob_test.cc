#include <string>

#include <gtest/gtest.h>

#include "daemon/pipeline/channel_name.h"
#include "daemon/pipeline/glob.h"

namespace bayline::pipeline {
namespace {

TEST(GlobTest, StarStaysWithinOneSegment) {
  EXPECT_TRUE(GlobMatch("site3/*", "site3/freezer2"));
  EXPECT_FALSE(GlobMatch("site3/*", "site3/freezer2/probe7"));
  EXPECT_TRUE(GlobMatch("site3/*/probe*", "site3/freezer2/probe7"));
  EXPECT_FALSE(GlobMatch("site3/*/probe*", "site3/freezer2/door1"));
  EXPECT_TRUE(GlobMatch("*", "a"));
  EXPECT_TRUE(GlobMatch("*", ""));
  EXPECT_FALSE(GlobMatch("*", "a/b"));
}

TEST(GlobTest, DoubleStarCrossesSegments) {
  EXPECT_TRUE(GlobMatch("**", "site3/freezer2/probe7"));
  EXPECT_TRUE(GlobMatch("site3/**", "site3/freezer2/probe7"));
  EXPECT_FALSE(GlobMatch("site3/**", "site4/freezer2/probe7"));
  EXPECT_TRUE(GlobMatch("**/probe7", "site3/freezer2/probe7"));
  EXPECT_TRUE(GlobMatch("site3/**/probe7", "site3/probe7"));  // zero segments
  EXPECT_TRUE(GlobMatch("site3/**/probe7", "site3/a/b/c/probe7"));
  EXPECT_FALSE(GlobMatch("site3/**/probe7", "site3/a/b/c/probe8"));
  EXPECT_TRUE(GlobMatch("line**", "line1/scale/weight"));
}

TEST(GlobTest, QuestionMarkIsOneCharacterNotSlash) {
  EXPECT_TRUE(GlobMatch("probe?", "probe7"));
  EXPECT_FALSE(GlobMatch("probe?", "probe17"));
  EXPECT_FALSE(GlobMatch("a?b", "a/b"));
  EXPECT_TRUE(GlobMatch("k\xC3\xBChl?", "k\xC3\xBChl\xC3\xA4"));  // one multi-byte code point
  EXPECT_TRUE(GlobMatch("exact/name", "exact/name"));
  EXPECT_FALSE(GlobMatch("exact/name", "exact/names"));
}

TEST(ChannelNameTest, HashIsFnv1a64) {
  // FNV-1a 64-bit test vectors (common practice, no source; values from memory).
  EXPECT_EQ(ChannelHash(""), 0xcbf29ce484222325ull);
  EXPECT_EQ(ChannelHash("a"), 0xaf63dc4c8601ec8cull);
}

TEST(ChannelNameTest, RejectsEmptyLongInvalidUtf8AndControlCharacters) {
  EXPECT_EQ(CheckChannelName("site3/freezer2/probe7", 256), ChannelNameProblem::kOk);
  EXPECT_EQ(CheckChannelName("k\xC3\xBChlhaus/f\xC3\xBChler", 256), ChannelNameProblem::kOk);
  EXPECT_EQ(CheckChannelName("", 256), ChannelNameProblem::kEmpty);
  EXPECT_EQ(CheckChannelName(std::string(257, 'a'), 256), ChannelNameProblem::kTooLong);
  EXPECT_EQ(CheckChannelName(std::string(256, 'a'), 256), ChannelNameProblem::kOk);
  EXPECT_EQ(CheckChannelName("bad\xFF", 256), ChannelNameProblem::kInvalid);
  EXPECT_EQ(CheckChannelName("trunc\xC3", 256), ChannelNameProblem::kInvalid);
  EXPECT_EQ(CheckChannelName("overlong\xC0\xAF", 256), ChannelNameProblem::kInvalid);
  EXPECT_EQ(CheckChannelName("surrogate\xED\xA0\x80", 256), ChannelNameProblem::kInvalid);
  EXPECT_EQ(CheckChannelName("tab\there", 256), ChannelNameProblem::kInvalid);
}

}  // namespace
}  // namespace bayline::pipeline
