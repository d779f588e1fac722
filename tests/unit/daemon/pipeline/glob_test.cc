#include "daemon/pipeline/glob.h"

#include <gtest/gtest.h>

#include <random>
#include <string>

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

TEST(GlobTest, BackslashMakesTheNextCharacterLiteral) {
  EXPECT_TRUE(GlobMatch("a\\*b", "a*b"));
  EXPECT_FALSE(GlobMatch("a\\*b", "axb"));
  EXPECT_TRUE(GlobMatch("what\\?", "what?"));
  EXPECT_FALSE(GlobMatch("what\\?", "whatx"));
  EXPECT_TRUE(GlobMatch("back\\\\slash", "back\\slash"));
  EXPECT_TRUE(GlobMatch("\\*\\*", "**"));
  EXPECT_FALSE(GlobMatch("\\*\\*", "a/b"));
  EXPECT_TRUE(GlobMatch("trailing\\", "trailing\\"));  // a final '\' matches itself
  EXPECT_TRUE(GlobMatch("\\a*", "abc"));               // an escaped ordinary character
}

// Reference: the glob definition of glob.h written as plain recursion (exponential in the worst
// case, fine for the short strings below).
bool ReferenceMatch(std::string_view p, std::string_view s) {
  if (p.empty()) return s.empty();
  if (p.substr(0, 3) == "**/") {
    if (ReferenceMatch(p.substr(3), s)) return true;
    for (std::size_t k = 0; k < s.size(); ++k) {
      if (s[k] == '/' && ReferenceMatch(p.substr(3), s.substr(k + 1))) return true;
    }
    return false;
  }
  if (p.substr(0, 2) == "**") {
    for (std::size_t k = 0; k <= s.size(); ++k) {
      if (ReferenceMatch(p.substr(2), s.substr(k))) return true;
    }
    return false;
  }
  if (p[0] == '*') {
    for (std::size_t k = 0; k <= s.size(); ++k) {
      if (ReferenceMatch(p.substr(1), s.substr(k))) return true;
      if (k < s.size() && s[k] == '/') break;
    }
    return false;
  }
  if (p[0] == '?') return !s.empty() && s[0] != '/' && ReferenceMatch(p.substr(1), s.substr(1));
  if (p[0] == '\\' && p.size() > 1) {
    return !s.empty() && s[0] == p[1] && ReferenceMatch(p.substr(2), s.substr(1));
  }
  return !s.empty() && s[0] == p[0] && ReferenceMatch(p.substr(1), s.substr(1));
}

TEST(GlobTest, AgreesWithTheDefinitionOnRandomPatterns) {
  // ASCII only (the reference treats '?' as one byte); no "***" runs (read as "**" by GlobMatch).
  std::mt19937_64 rng(20);
  const std::string pattern_alphabet[] = {"a", "b", "/", "*", "**", "**/", "?", "\\*", "\\a"};
  const char name_alphabet[] = {'a', 'b', '/', '*'};
  int matches = 0;
  for (int trial = 0; trial < 20000; ++trial) {
    std::string pattern, name;
    const int tokens = int(rng() % 6);
    for (int i = 0; i < tokens; ++i) {
      const std::string& piece = pattern_alphabet[rng() % std::size(pattern_alphabet)];
      if (piece[0] == '*' && !pattern.empty() && pattern.back() == '*') continue;
      pattern += piece;
    }
    const int length = int(rng() % 8);
    for (int i = 0; i < length; ++i) name += name_alphabet[rng() % std::size(name_alphabet)];
    const bool expected = ReferenceMatch(pattern, name);
    matches += expected;
    ASSERT_EQ(GlobMatch(pattern, name), expected)
        << "pattern \"" << pattern << "\" name \"" << name << "\"";
  }
  EXPECT_GT(matches, 1000);  // the trials exercise matches as well as mismatches
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

TEST(ChannelNameTest, ReplaceInvalidUtf8KeepsValidTextAndReplacesEachBadByte) {
  EXPECT_EQ(ReplaceInvalidUtf8("caf\xC3\xA9 ok"), "caf\xC3\xA9 ok");
  EXPECT_EQ(ReplaceInvalidUtf8("caf\xE9!"), "caf\xEF\xBF\xBD!");
  EXPECT_EQ(ReplaceInvalidUtf8("\xFF\xFE"), "\xEF\xBF\xBD\xEF\xBF\xBD");
  EXPECT_EQ(ReplaceInvalidUtf8("trunc\xC3"), "trunc\xEF\xBF\xBD");
  EXPECT_TRUE(IsValidUtf8(ReplaceInvalidUtf8("over\xC0\xAFlong\xED\xA0\x80")));
}

TEST(ChannelNameTest, RejectsC1ControlsAndBidirectionalControls) {
  EXPECT_EQ(CheckChannelName("c1\xC2\x80x", 256), ChannelNameProblem::kInvalid);       // U+0080
  EXPECT_EQ(CheckChannelName("c1\xC2\x9F", 256), ChannelNameProblem::kInvalid);        // U+009F
  EXPECT_EQ(CheckChannelName("nbsp\xC2\xA0ok", 256), ChannelNameProblem::kOk);         // U+00A0
  EXPECT_EQ(CheckChannelName("lre\xE2\x80\xAA", 256), ChannelNameProblem::kInvalid);   // U+202A
  EXPECT_EQ(CheckChannelName("rlo\xE2\x80\xAEx", 256), ChannelNameProblem::kInvalid);  // U+202E
  EXPECT_EQ(CheckChannelName("lri\xE2\x81\xA6", 256), ChannelNameProblem::kInvalid);   // U+2066
  EXPECT_EQ(CheckChannelName("pdi\xE2\x81\xA9", 256), ChannelNameProblem::kInvalid);   // U+2069
  EXPECT_EQ(CheckChannelName("dash\xE2\x80\x94ok", 256), ChannelNameProblem::kOk);     // U+2014
  EXPECT_EQ(CheckChannelName("nnbsp\xE2\x80\xAFok", 256), ChannelNameProblem::kOk);    // U+202F
  EXPECT_EQ(CheckChannelName("fn\xE2\x81\xA5ok", 256), ChannelNameProblem::kOk);       // U+2065
}

}  // namespace
}  // namespace bayline::pipeline
