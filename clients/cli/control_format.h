// Human-readable renderings of control replies (`bayline ask/list/stats/snapshot` without --json):
// aligned tables, numbers with 5 significant digits, times in UTC. Each returns the full text,
// ending in a newline.
#pragma once

#include <string>

#include "bayline/v1/control.pb.h"

namespace bayline::cli {

std::string FormatChannelList(const bayline::v1::ChannelList& list);
std::string FormatChannelReport(const bayline::v1::ChannelReport& report);
std::string FormatStats(const bayline::v1::Stats& stats);
std::string FormatSnapshotInfo(const bayline::v1::SnapshotInfo& info);

// One estimate's parameters as "name value [lower, upper]" cells (used by `ask` and `follow`).
std::string FormatParameter(const bayline::v1::Estimate& e, int i);
// "cusum raised #812 (onset #790, shift +1.9)" / "cusum cleared #830".
std::string FormatAlarm(const bayline::v1::Alarm& a);

}  // namespace bayline::cli
