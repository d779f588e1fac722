// The follow command's live table and the control replies' text renderings.
#include "clients/cli/live_table.h"

#include <gtest/gtest.h>

#include "clients/cli/control_format.h"

namespace bayline::cli {
namespace {

bayline::v1::Publication EstimateOf(const std::string& channel, const std::string& estimator,
                                    uint64_t accepted, double gain) {
  bayline::v1::Publication p;
  auto* e = p.mutable_estimate();
  e->set_channel(channel);
  e->set_estimator(estimator);
  e->set_accepted(accepted);
  e->add_names("intercept");
  e->add_names("reference");
  e->add_value(0.25);
  e->add_value(gain);
  e->add_lower(0.2);
  e->add_lower(gain - 0.01);
  e->add_upper(0.3);
  e->add_upper(gain + 0.01);
  return p;
}

TEST(LiveTableTest, OneRowPerChannelAndEstimatorWithLatestValuesAndAlarm) {
  LiveTable table;
  table.Absorb(EstimateOf("site/probe2", "ls", 10, 1.01));
  table.Absorb(EstimateOf("site/probe1", "ls", 10, 0.99));
  table.Absorb(EstimateOf("site/probe1", "map", 10, 0.98));
  table.Absorb(EstimateOf("site/probe1", "ls", 11, 1.05));  // replaces the earlier ls row
  bayline::v1::Publication alarm;
  alarm.mutable_alarm()->set_channel("site/probe1");
  alarm.mutable_alarm()->set_detector("cusum");
  alarm.mutable_alarm()->set_state("raised");
  alarm.mutable_alarm()->set_seq(11);
  alarm.mutable_alarm()->set_onset_seq(8);
  table.Absorb(alarm);

  auto lines = table.Render("title", 200, 40);
  ASSERT_EQ(lines.size(), 5u);  // title, header, 3 rows
  EXPECT_NE(lines[0].find("publications 5   alarms 1 raised"), std::string::npos) << lines[0];
  EXPECT_EQ(lines[1].rfind("CHANNEL", 0), 0u);
  EXPECT_EQ(lines[2].rfind("site/probe1", 0), 0u);
  EXPECT_NE(lines[2].find("reference 1.05 [1.04, 1.06]"), std::string::npos) << lines[2];
  EXPECT_NE(lines[2].find("! cusum raised #11 (onset #8)"), std::string::npos) << lines[2];
  EXPECT_NE(lines[3].find("map"), std::string::npos);
  EXPECT_EQ(lines[3].find("site/probe1"), std::string::npos);  // channel shown once
  EXPECT_EQ(lines[4].rfind("site/probe2", 0), 0u);
  // Columns line up: the EST column starts at the same offset in every row.
  EXPECT_EQ(lines[2].find(" ls "), lines[4].find(" ls "));
}

TEST(LiveTableTest, ClearedAlarmKeepsTheRaiseAndNamesTheClear) {
  LiveTable table;
  table.Absorb(EstimateOf("p", "ls", 5, 1.0));
  bayline::v1::Publication alarm;
  alarm.mutable_alarm()->set_channel("p");
  alarm.mutable_alarm()->set_detector("ewma");
  alarm.mutable_alarm()->set_state("raised");
  alarm.mutable_alarm()->set_seq(4);
  table.Absorb(alarm);
  alarm.mutable_alarm()->set_state("cleared");
  alarm.mutable_alarm()->set_seq(9);
  table.Absorb(alarm);
  auto lines = table.Render("t", 200, 40);
  EXPECT_NE(lines[2].find("ewma raised #4, cleared #9"), std::string::npos) << lines[2];
  EXPECT_EQ(lines[2].find("!"), std::string::npos);
}

TEST(LiveTableTest, CutsToTheTerminalSize) {
  LiveTable table;
  for (int i = 0; i < 30; ++i) {
    std::string name = std::to_string(100 + i);
    name.insert(0, 1, 'c');  // (not "c" + ...: GCC 12 warns falsely on that, -Wrestrict)
    table.Absorb(EstimateOf(name, "ls", 1, 1));
  }
  auto lines = table.Render("t", 30, 10);
  EXPECT_LE(lines.size(), 10u);
  EXPECT_NE(lines.back().find("more rows"), std::string::npos);
  for (const auto& l : lines) EXPECT_LE(l.size(), 30u);
}

TEST(ControlFormatTest, ChannelListIsSortedAndCounted) {
  bayline::v1::ChannelList list;
  auto* b = list.add_channels();
  b->set_name("b");
  b->set_model("gaussian");
  b->set_accepted(3);
  auto* a = list.add_channels();
  a->set_name("a");
  a->set_model("linear");
  a->set_alarm_active(true);
  std::string text = FormatChannelList(list);
  EXPECT_LT(text.find("\na "), text.find("\nb "));
  EXPECT_NE(text.find("ACTIVE"), std::string::npos);
  EXPECT_NE(text.find("2 channels"), std::string::npos);
}

}  // namespace
}  // namespace bayline::cli
