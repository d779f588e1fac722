// Number parsing, channel globs and text formatting used by the CLI.
#include <gtest/gtest.h>

#include "clients/cli/channel_glob.h"
#include "clients/cli/csv_line.h"
#include "clients/cli/number_parsing.h"
#include "clients/cli/text_format.h"

namespace bayline::cli {
namespace {

TEST(NumberParsingTest, FiniteDoublesOnly) {
  EXPECT_EQ(ParseFiniteDouble(" 2.5 "), 2.5);
  EXPECT_EQ(ParseFiniteDouble("+1e-3"), 1e-3);
  EXPECT_FALSE(ParseFiniteDouble("nan"));
  EXPECT_FALSE(ParseFiniteDouble("inf"));
  EXPECT_FALSE(ParseFiniteDouble("1.5x"));
  EXPECT_FALSE(ParseFiniteDouble(""));
}

TEST(NumberParsingTest, IntegersExactOrRefused) {
  EXPECT_EQ(ParseUnsigned("18446744073709551615"), 18446744073709551615ull);
  EXPECT_EQ(ParseUnsigned("12.0"), 12u);
  EXPECT_FALSE(ParseUnsigned("12.5"));
  EXPECT_FALSE(ParseUnsigned("-1"));
  EXPECT_EQ(ParseSigned("-5"), -5);
}

TEST(NumberParsingTest, SecondsToNanosIsExact) {
  EXPECT_EQ(ParseSecondsToNanos("1733130000.123456789"), 1733130000123456789);
  EXPECT_EQ(ParseSecondsToNanos("1.5"), 1500000000);
  EXPECT_EQ(ParseSecondsToNanos("-0.25"), -250000000);
  EXPECT_EQ(ParseSecondsToNanos("2e3"), 2000000000000);
  EXPECT_FALSE(ParseSecondsToNanos("12:30"));
}

TEST(ChannelGlobTest, StarStaysInSegmentDoubleStarCrosses) {
  EXPECT_TRUE(GlobMatch("", "anything/at/all"));
  EXPECT_TRUE(GlobMatch("site1/*", "site1/probe1"));
  EXPECT_FALSE(GlobMatch("site1/*", "site1/room2/probe1"));
  EXPECT_TRUE(GlobMatch("site1/**", "site1/room2/probe1"));
  EXPECT_TRUE(GlobMatch("**/probe?", "site1/room2/probe7"));
  EXPECT_FALSE(GlobMatch("**/probe?", "site1/room2/probe17"));
  EXPECT_TRUE(GlobMatch("**x*y", "a/xb/xcy"));  // needs '**' to backtrack past a '*'
  EXPECT_FALSE(GlobMatch("site?", "site/"));
  EXPECT_EQ(LiteralPrefix("site1/*/probe?"), "site1/");
  EXPECT_EQ(LiteralPrefix("exact/name"), "exact/name");
}

TEST(TextFormatTest, AlignsColumnsAndFormatsValues) {
  auto lines = AlignColumns({{"A", "BB"}, {"ccc", "d"}});
  EXPECT_EQ(lines[0], "A    BB");
  EXPECT_EQ(lines[1], "ccc  d");
  EXPECT_EQ(FormatNumber(1.002134), "1.0021");
  EXPECT_EQ(FormatTimeNs(1733130000123000000), "2024-12-02T09:00:00.123Z");
  EXPECT_EQ(FormatTimeNs(0), "-");
}

TEST(CsvLineTest, TrailingDelimiterGivesEmptyField) {
  std::vector<std::string> f;
  EXPECT_FALSE(SplitCsvLine("a,b,", ',', &f));
  EXPECT_EQ(f, (std::vector<std::string>{"a", "b", ""}));
  EXPECT_FALSE(SplitCsvLine("\"he said \"\"hi\"\"\",2", ',', &f));
  EXPECT_EQ(f[0], "he said \"hi\"");
  EXPECT_TRUE(SplitCsvLine("\"a\"b,2", ',', &f));
}

}  // namespace
}  // namespace bayline::cli
