#include "clients/cli/control_format.h"

#include <algorithm>
#include <cstdio>
#include <initializer_list>
#include <string_view>
#include <vector>

#include "clients/cli/text_format.h"

namespace bayline::cli {
namespace {

std::string Join(const std::vector<std::string>& lines) {
  std::string out;
  for (const auto& l : lines) out += l + "\n";
  return out;
}

// Shift estimates are rough: three significant digits say all they can.
// Joins pieces by appending. (`"literal" + std::string&&` inserts at the front, for which GCC 12
// at -O3 reports a false -Wrestrict warning.)
std::string Cat(std::initializer_list<std::string_view> parts) {
  std::string out;
  for (std::string_view p : parts) out.append(p);
  return out;
}

std::string SignedNumber(double v) {
  char buffer[32];
  std::snprintf(buffer, sizeof buffer, "%+.3g", v);
  return buffer;
}

}  // namespace

std::string FormatParameter(const bayline::v1::Estimate& e, int i) {
  std::string cell = e.names(i) + " " + FormatNumber(e.value(i));
  if (i < e.lower_size() && i < e.upper_size()) {
    cell += Cat({" [", FormatNumber(e.lower(i)), ", ", FormatNumber(e.upper(i)), "]"});
  }
  return cell;
}

std::string FormatAlarm(const bayline::v1::Alarm& a) {
  std::string text = a.detector() + " " + a.state() + " #" + std::to_string(a.seq());
  if (a.state() == "raised") {
    std::vector<std::string> detail;
    if (a.onset_seq() != 0) detail.push_back(Cat({"onset #", std::to_string(a.onset_seq())}));
    if (a.shift() != 0) detail.push_back(Cat({"shift ", SignedNumber(a.shift())}));
    if (!detail.empty()) {
      text += " (";
      for (size_t i = 0; i < detail.size(); ++i) text += (i ? ", " : "") + detail[i];
      text += ")";
    }
  }
  return text;
}

std::string FormatChannelList(const bayline::v1::ChannelList& list) {
  std::vector<std::vector<std::string>> rows = {
      {"CHANNEL", "MODEL", "RULE", "ACCEPTED", "LAST SEQ", "LAST TIME", "ALARM"}};
  std::vector<bayline::v1::ChannelInfo> sorted(list.channels().begin(), list.channels().end());
  std::sort(sorted.begin(), sorted.end(),
            [](const auto& a, const auto& b) { return a.name() < b.name(); });
  for (const auto& c : sorted) {
    rows.push_back({c.name(), c.model(), c.rule(), std::to_string(c.accepted()),
                    std::to_string(c.last_seq()), FormatTimeNs(c.last_time_ns()),
                    c.alarm_active() ? "ACTIVE" : "-"});
  }
  std::string out = Join(AlignColumns(rows));
  out += std::to_string(sorted.size()) + (sorted.size() == 1 ? " channel\n" : " channels\n");
  return out;
}

std::string FormatChannelReport(const bayline::v1::ChannelReport& report) {
  const auto& info = report.info();
  std::string out = "channel   " + info.name() + "\n";
  out += Cat({"model     ", info.model(),
              info.rule().empty() ? std::string() : Cat({"   (rule ", info.rule(), ")"}), "\n"});
  out += "accepted  " + std::to_string(info.accepted()) + "   last seq " +
         std::to_string(info.last_seq()) + "   last time " + FormatTimeNs(info.last_time_ns()) +
         "\n\n";
  std::vector<std::vector<std::string>> rows = {
      {"ESTIMATOR", "PARAMETER", "VALUE", "STD ERROR", "INTERVAL", "EFFECTIVE N"}};
  for (const auto& e : report.estimates()) {
    std::string level = FormatNumber(100 * e.level()) + "%";
    for (int i = 0; i < e.names_size(); ++i) {
      std::string interval =
          i < e.lower_size() && i < e.upper_size()
              ? Cat({"[", FormatNumber(e.lower(i)), ", ", FormatNumber(e.upper(i)), "] ", level})
              : "-";
      rows.push_back({i == 0 ? e.estimator() : "", e.names(i),
                      i < e.value_size() ? FormatNumber(e.value(i)) : "-",
                      i < e.std_error_size() ? FormatNumber(e.std_error(i)) : "-", interval,
                      i == 0 ? FormatNumber(e.effective_n()) : ""});
    }
    if (!e.identifiable()) rows.push_back({"", "(not yet identifiable)"});
  }
  out += Join(AlignColumns(rows));
  if (report.detectors_size() > 0) {
    std::vector<std::vector<std::string>> det = {
        {"DETECTOR", "WATCHES", "STATISTIC", "THRESHOLD", "ALARM", "RAISED", "LAST ALARM"}};
    for (const auto& d : report.detectors()) {
      det.push_back({d.detector(), d.watched(), FormatNumber(d.statistic()),
                     FormatNumber(d.threshold()), d.alarm_active() ? "ACTIVE" : "-",
                     std::to_string(d.alarms_raised()),
                     d.has_last_alarm() ? FormatAlarm(d.last_alarm()) : "-"});
    }
    out += "\n";
    out += Join(AlignColumns(det));
  }
  return out;
}

std::string FormatStats(const bayline::v1::Stats& s) {
  std::vector<std::vector<std::string>> rows = {
      {"uptime", FormatNumber(s.uptime_s()) + " s"},
      {"frames received", std::to_string(s.frames_received())},
      {"observations received", std::to_string(s.observations_received())},
      {"observations accepted", std::to_string(s.observations_accepted())},
      {"observations per second", FormatNumber(s.observations_per_second())},
      {"channels", std::to_string(s.channels())},
      {"publications", std::to_string(s.publications())},
      {"seq gaps", std::to_string(s.seq_gaps())},
      {"seq duplicates", std::to_string(s.seq_duplicates())},
      {"seq reordered", std::to_string(s.seq_reordered())},
      {"snapshots written", std::to_string(s.snapshots_written())},
  };
  std::vector<std::pair<std::string, uint64_t>> rejected(s.rejected_by_reason().begin(),
                                                         s.rejected_by_reason().end());
  std::sort(rejected.begin(), rejected.end());
  for (const auto& [reason, count] : rejected) {
    rows.push_back({"rejected: " + reason, std::to_string(count)});
  }
  std::string depths;
  for (uint64_t d : s.worker_queue_depth()) {
    if (!depths.empty()) depths += ' ';
    depths += std::to_string(d);
  }
  if (!depths.empty()) rows.push_back({"worker queue depths", depths});
  return Join(AlignColumns(rows));
}

std::string FormatSnapshotInfo(const bayline::v1::SnapshotInfo& info) {
  return "snapshot written: " + info.path() + " (" + std::to_string(info.channels()) +
         " channels, " + std::to_string(info.bytes()) + " bytes)\n";
}

}  // namespace bayline::cli
