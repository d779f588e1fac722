#include "clients/cli/live_table.h"

#include <sys/ioctl.h>
#include <unistd.h>

#include "clients/cli/control_format.h"
#include "clients/cli/text_format.h"

namespace bayline::cli {
namespace {

// Cuts a UTF-8 line to `width` code points.
std::string Cut(const std::string& line, int width) {
  if (static_cast<int>(DisplayWidth(line)) <= width) return line;
  std::string out;
  int shown = 0;
  for (size_t i = 0; i < line.size(); ++i) {
    unsigned char c = static_cast<unsigned char>(line[i]);
    if ((c & 0xC0) != 0x80 && ++shown > width) break;
    out += line[i];
  }
  return out;
}

}  // namespace

void LiveTable::Absorb(const bayline::v1::Publication& p) {
  ++publications_;
  switch (p.kind_case()) {
    case bayline::v1::Publication::kEstimate:
      estimates_[{p.estimate().channel(), p.estimate().estimator()}] = p.estimate();
      break;
    case bayline::v1::Publication::kAlarm:
      if (p.alarm().state() == "raised") {
        ++alarms_;
        alarms_by_channel_[p.alarm().channel()] = {p.alarm(), 0};
      } else if (auto it = alarms_by_channel_.find(p.alarm().channel());
                 it != alarms_by_channel_.end()) {
        it->second.cleared_seq = p.alarm().seq();
      }
      break;
    case bayline::v1::Publication::kInputError:
      ++input_errors_;
      last_input_error_ =
          (p.input_error().channel().empty() ? "(frame)" : p.input_error().channel()) + " #" +
          std::to_string(p.input_error().seq()) + " " + p.input_error().reason() + ": " +
          p.input_error().message();
      break;
    case bayline::v1::Publication::kPrediction: {
      const auto& q = p.prediction();
      last_prediction_ = q.channel() + " " + q.estimator() + " " + FormatNumber(q.mean()) + " [" +
                         FormatNumber(q.lower()) + ", " + FormatNumber(q.upper()) + "]";
      break;
    }
    default:
      break;
  }
}

std::vector<std::string> LiveTable::Render(const std::string& title, int width, int height) const {
  size_t max_params = 0;
  for (const auto& [key, e] : estimates_) max_params = std::max<size_t>(max_params, e.names_size());
  std::vector<std::vector<std::string>> rows;
  std::vector<std::string> header = {"CHANNEL", "EST", "N"};
  for (size_t i = 0; i < max_params; ++i) header.push_back("PARAMETER " + std::to_string(i + 1));
  header.push_back("LAST ALARM");
  rows.push_back(header);
  std::string previous_channel;
  for (const auto& [key, e] : estimates_) {
    const bool first_of_channel = key.first != previous_channel;
    previous_channel = key.first;
    std::vector<std::string> row = {first_of_channel ? key.first : "", key.second,
                                    std::to_string(e.accepted())};
    for (size_t i = 0; i < max_params; ++i) {
      row.push_back(static_cast<int>(i) < e.names_size() ? FormatParameter(e, static_cast<int>(i))
                                                         : "");
    }
    auto alarm = alarms_by_channel_.find(key.first);
    std::string alarm_text;
    if (first_of_channel && alarm != alarms_by_channel_.end()) {
      const AlarmView& view = alarm->second;
      alarm_text = view.cleared_seq == 0 ? "! " + FormatAlarm(view.raised)
                                         : FormatAlarm(view.raised) + ", cleared #" +
                                               std::to_string(view.cleared_seq);
    }
    row.push_back(alarm_text);
    rows.push_back(std::move(row));
  }
  std::vector<std::string> lines = {title + "   publications " + std::to_string(publications_) +
                                    "   alarms " + std::to_string(alarms_) +
                                    " raised   input errors " + std::to_string(input_errors_)};
  std::vector<std::string> table = AlignColumns(rows);
  int footer = (last_input_error_.empty() ? 0 : 1) + (last_prediction_.empty() ? 0 : 1);
  int room = std::max(2, height - 2 - footer);
  if (static_cast<int>(table.size()) > room) {
    size_t hidden = table.size() - static_cast<size_t>(room - 1);
    table.resize(static_cast<size_t>(room - 1));
    table.push_back("... " + std::to_string(hidden) + " more rows");
  }
  for (auto& l : table) lines.push_back(std::move(l));
  if (!last_prediction_.empty()) lines.push_back("last prediction: " + last_prediction_);
  if (!last_input_error_.empty()) lines.push_back("last input error: " + last_input_error_);
  for (auto& l : lines) l = Cut(l, width);
  return lines;
}

void Painter::Paint(const std::vector<std::string>& lines) {
  std::string out;
  if (painted_ > 0) out += "\r\x1b[" + std::to_string(painted_) + "A";  // back to the first line
  for (const auto& l : lines) out += l + "\x1b[K\n";  // rewrite, clear the rest of the line
  out += "\x1b[J";                                    // clear below (a previous, longer block)
  std::fwrite(out.data(), 1, out.size(), out_);
  std::fflush(out_);
  painted_ = lines.size();
}

std::pair<int, int> TerminalSize(int fd) {
  struct winsize ws {};
  if (ioctl(fd, TIOCGWINSZ, &ws) == 0 && ws.ws_col > 0 && ws.ws_row > 0) {
    return {ws.ws_col, ws.ws_row};
  }
  return {120, 40};
}

}  // namespace bayline::cli
