#include "clients/cli/record_reader.h"

#include <gtest/gtest.h>

#include "clients/cli/input_error.h"
#include "tests/unit/clients/test_files.h"

namespace bayline::cli {
namespace {

using testing::TempDir;

std::vector<Record> ReadAll(const std::string& path, InputFormat format = InputFormat::kAuto) {
  RecordReader reader(path, format);
  std::vector<Record> out;
  Record r;
  while (reader.Next(&r)) out.push_back(r);
  return out;
}

// The message of the InputError that reading `path` throws ("" when none).
std::string ReadError(const std::string& path) {
  try {
    ReadAll(path);
  } catch (const InputError& e) {
    return e.what();
  }
  return "";
}

TEST(CsvReaderTest, ReadsHeaderAndRowsWithLineNumbers) {
  TempDir dir;
  auto path = dir.Write("probes.csv",
                        "channel,y,x\n"
                        "site1/probe1,4.25,4.0\n"
                        "\n"
                        "# a comment line\n"
                        "site1/probe2, -1e-3 ,\"3,5\"\r\n");
  RecordReader reader(path, InputFormat::kAuto);
  ASSERT_TRUE(reader.is_csv());
  EXPECT_EQ(reader.header(), (std::vector<std::string>{"channel", "y", "x"}));
  Record r;
  ASSERT_TRUE(reader.Next(&r));
  EXPECT_EQ(r.line, 2);
  EXPECT_EQ(r.Find("y")->value.text, "4.25");
  EXPECT_EQ(r.Find("x")->column, 3);
  ASSERT_TRUE(reader.Next(&r));
  EXPECT_EQ(r.line, 5);
  EXPECT_EQ(r.Find("channel")->value.text, "site1/probe2");
  EXPECT_EQ(r.Find("y")->value.text, "-1e-3");
  EXPECT_EQ(r.Find("x")->value.text, "3,5");  // quoted delimiter kept, \r dropped
  EXPECT_FALSE(reader.Next(&r));
}

TEST(CsvReaderTest, EmptyCellIsNull) {
  TempDir dir;
  auto rows = ReadAll(dir.Write("a.csv", "y,x\n,2\n"));
  ASSERT_EQ(rows.size(), 1u);
  EXPECT_EQ(rows[0].Find("y")->value.kind, Cell::Kind::kNull);
  EXPECT_EQ(rows[0].Find("x")->value.kind, Cell::Kind::kText);
}

TEST(CsvReaderTest, RaggedRowNamesFileLineAndColumn) {
  TempDir dir;
  auto path = dir.Write("short.csv", "channel,y,x\na,1,2\nb,3\n");
  std::string error = ReadError(path);
  EXPECT_NE(error.find(path + ":3: column 3 (x)"), std::string::npos) << error;
  EXPECT_NE(error.find("ragged row"), std::string::npos) << error;

  auto longer = dir.Write("long.csv", "channel,y\na,1,2\n");
  error = ReadError(longer);
  EXPECT_NE(error.find(longer + ":2: column 3"), std::string::npos) << error;
}

TEST(CsvReaderTest, UnterminatedQuoteAndDuplicateHeaderAreErrors) {
  TempDir dir;
  std::string error = ReadError(dir.Write("q.csv", "a,b\n\"x,1\n"));
  EXPECT_NE(error.find("q.csv:2: unterminated quoted field"), std::string::npos) << error;
  error = ReadError(dir.Write("d.csv", "y,y\n1,2\n"));
  EXPECT_NE(error.find("d.csv:1: column 2 (y): duplicate column name"), std::string::npos) << error;
}

TEST(JsonLinesReaderTest, ReadsFlatObjectsKeepingNumberText) {
  TempDir dir;
  auto path =
      dir.Write("obs.jsonl",
                "{\"channel\": \"site2/door\", \"y\": 3, \"time_ns\": 1733130000123456789}\n"
                "{\"channel\":\"caf\\u00e9\",\"x\":[1.5,-2e3],\"y\":null,\"ok\":true}\n");
  auto rows = ReadAll(path);
  ASSERT_EQ(rows.size(), 2u);
  EXPECT_EQ(rows[0].Find("time_ns")->value.text, "1733130000123456789");
  EXPECT_EQ(rows[0].Find("y")->value.kind, Cell::Kind::kNumber);
  EXPECT_EQ(rows[1].Find("channel")->value.text, "caf\xc3\xa9");
  EXPECT_EQ(rows[1].Find("x")->value.items, (std::vector<std::string>{"1.5", "-2e3"}));
  EXPECT_EQ(rows[1].Find("y")->value.kind, Cell::Kind::kNull);
  EXPECT_EQ(rows[1].line, 2);
}

TEST(JsonLinesReaderTest, MalformedLineNamesFileAndLine) {
  TempDir dir;
  auto path = dir.Write("bad.jsonl", "{\"y\": 1}\n{\"y\": }\n");
  std::string error = ReadError(path);
  EXPECT_NE(error.find(path + ":2: not a JSON object"), std::string::npos) << error;
  EXPECT_NE(ReadError(dir.Write("n.jsonl", "{\"a\": {\"b\": 1}}\n")).find("nested"),
            std::string::npos);
  EXPECT_NE(ReadError(dir.Write("t.jsonl", "{\"a\": 1} x\n")).find("after the closing"),
            std::string::npos);
  EXPECT_NE(ReadError(dir.Write("k.jsonl", "{\"a\": 1, \"a\": 2}\n")).find("duplicate key"),
            std::string::npos);
}

TEST(RecordReaderTest, FormatChosenByContentWhenForcedOrUnknown) {
  TempDir dir;
  // A .txt file holding JSON Lines is read as CSV unless the format is forced.
  auto path = dir.Write("data.txt", "{\"y\": 2}\n");
  auto rows = ReadAll(path, InputFormat::kJsonLines);
  ASSERT_EQ(rows.size(), 1u);
  EXPECT_EQ(rows[0].Find("y")->value.text, "2");
  EXPECT_THROW(ParseInputFormat("xml"), InputError);
}

TEST(RecordReaderTest, MissingFileIsAnInputError) {
  EXPECT_THROW(RecordReader("/nonexistent/dir/none.csv", InputFormat::kAuto), InputError);
}

}  // namespace
}  // namespace bayline::cli
