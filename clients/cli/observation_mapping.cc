#include "clients/cli/observation_mapping.h"

#include "clients/cli/input_error.h"
#include "clients/cli/number_parsing.h"

namespace bayline::cli {

std::vector<std::string> SplitList(const std::string& text) {
  std::vector<std::string> out;
  std::string item;
  auto flush = [&] {
    size_t b = item.find_first_not_of(" \t");
    if (b != std::string::npos) {
      size_t e = item.find_last_not_of(" \t");
      out.push_back(item.substr(b, e - b + 1));
    }
    item.clear();
  };
  for (char c : text) {
    if (c == ',') {
      flush();
    } else {
      item += c;
    }
  }
  flush();
  return out;
}

std::string ChannelNameFromPath(const std::string& path) {
  if (path == "-") return "stdin";
  std::string base = path.substr(path.find_last_of('/') + 1);
  size_t dot = base.find_last_of('.');
  if (dot != std::string::npos && dot > 0) base = base.substr(0, dot);
  return base;
}

ObservationMapper::ObservationMapper(ColumnMapping mapping, std::string source_name)
    : mapping_(std::move(mapping)), source_(std::move(source_name)) {
  time_column_ = mapping_.time;
  const std::string suffix = ":ns";
  if (time_column_.size() > suffix.size() &&
      time_column_.compare(time_column_.size() - suffix.size(), suffix.size(), suffix) == 0) {
    time_column_.resize(time_column_.size() - suffix.size());
    time_in_ns_ = true;
  }
}

void ObservationMapper::CheckHeader(const std::vector<std::string>& header, int64_t header_line) {
  auto has = [&](const std::string& c) {
    for (const auto& h : header) {
      if (h == c) return true;
    }
    return false;
  };
  auto require = [&](const std::string& c, const char* role) {
    if (c.empty() || has(c)) return;
    std::string columns;
    for (const auto& h : header) columns += (columns.empty() ? "" : ", ") + h;
    ThrowAtLine(source_, header_line,
                std::string("no column '") + c + "' (" + role +
                    ") in the header (columns: " + columns + ")");
  };
  channel_decided_ = true;
  channel_from_column_ = has(mapping_.channel);
  if (mapping_.channel_explicit) require(mapping_.channel, "--channel");
  require(mapping_.y, "--y");
  for (const auto& x : mapping_.x) require(x, "--x");
  require(mapping_.seq, "--seq");
  require(time_column_, "--time");
  require(mapping_.trials, "--trials");
  require(mapping_.exposure, "--exposure");
  require(mapping_.weight, "--weight");
}

const Field& ObservationMapper::Require(const Record& r, const std::string& column) const {
  const Field* f = r.Find(column);
  if (f == nullptr) ThrowAtColumn(source_, r.line, 0, column, "missing");
  return *f;
}

double ObservationMapper::Number(const Record& r, const Field& f) const {
  if (f.value.kind != Cell::Kind::kText && f.value.kind != Cell::Kind::kNumber) {
    ThrowAtColumn(source_, r.line, f.column, f.name, "expected a number");
  }
  auto v = ParseFiniteDouble(f.value.text);
  if (!v) {
    ThrowAtColumn(source_, r.line, f.column, f.name, "not a finite number: '" + f.value.text + "'");
  }
  return *v;
}

bool ObservationMapper::OptionalNumber(const Record& r, const std::string& column,
                                       double* value) const {
  if (column.empty()) return false;
  const Field& f = Require(r, column);
  if (f.value.kind == Cell::Kind::kNull) return false;
  *value = Number(r, f);
  return true;
}

void ObservationMapper::Map(const Record& r, bayline::v1::Observation* obs) {
  obs->Clear();
  // Channel.
  const Field* channel = r.Find(mapping_.channel);
  bool use_column = channel_decided_ ? channel_from_column_ : channel != nullptr;
  if (mapping_.channel_explicit && channel == nullptr) {
    ThrowAtColumn(source_, r.line, 0, mapping_.channel, "missing");
  }
  if (use_column) {
    if (channel == nullptr || channel->value.kind == Cell::Kind::kNull ||
        channel->value.text.empty()) {
      ThrowAtColumn(source_, r.line, channel ? channel->column : 0, mapping_.channel,
                    "empty channel name");
    }
    if (channel->value.kind != Cell::Kind::kText) {
      ThrowAtColumn(source_, r.line, channel->column, mapping_.channel,
                    "channel name must be a string");
    }
    obs->set_channel(channel->value.text);
  } else {
    obs->set_channel(mapping_.default_channel);
  }

  // Response and regressors.
  double value = 0;
  if (OptionalNumber(r, mapping_.y, &value)) obs->set_y(value);
  for (const std::string& column : mapping_.x) {
    const Field& f = Require(r, column);
    if (f.value.kind == Cell::Kind::kList) {
      for (const std::string& item : f.value.items) {
        auto v = ParseFiniteDouble(item);
        if (!v) ThrowAtColumn(source_, r.line, f.column, f.name, "not a finite number: " + item);
        obs->add_x(*v);
      }
    } else if (f.value.kind == Cell::Kind::kNull) {
      ThrowAtColumn(source_, r.line, f.column, f.name, "empty regressor value");
    } else {
      obs->add_x(Number(r, f));
    }
  }
  if (OptionalNumber(r, mapping_.trials, &value)) obs->set_trials(value);
  if (OptionalNumber(r, mapping_.exposure, &value)) obs->set_exposure(value);
  if (OptionalNumber(r, mapping_.weight, &value)) obs->set_weight(value);

  // Time.
  if (!time_column_.empty()) {
    const Field& f = Require(r, time_column_);
    if (f.value.kind != Cell::Kind::kNull) {
      if (f.value.kind != Cell::Kind::kText && f.value.kind != Cell::Kind::kNumber) {
        ThrowAtColumn(source_, r.line, f.column, f.name, "expected a time");
      }
      auto t = time_in_ns_ ? ParseSigned(f.value.text) : ParseSecondsToNanos(f.value.text);
      if (!t || *t < 0) {
        ThrowAtColumn(source_, r.line, f.column, f.name,
                      std::string("not a time in ") + (time_in_ns_ ? "integer ns" : "seconds") +
                          " since the epoch: '" + f.value.text + "'");
      }
      obs->set_time_ns(*t);
    }
  }

  // Sequence number.
  // The row counter is committed last, so a rejected record leaves the numbering unchanged.
  auto counter = rows_per_channel_.find(obs->channel());
  uint64_t row = (counter == rows_per_channel_.end() ? 0 : counter->second) + 1;
  if (!mapping_.seq.empty()) {
    const Field& f = Require(r, mapping_.seq);
    auto s = f.value.kind == Cell::Kind::kNull ? std::nullopt : ParseUnsigned(f.value.text);
    if (!s || *s == 0) {
      ThrowAtColumn(source_, r.line, f.column, f.name,
                    "not a sequence number (an integer >= 1): '" + f.value.text + "'");
    }
    obs->set_seq(*s);
  } else if (mapping_.seq_policy == SeqPolicy::kRowNumber) {
    obs->set_seq(row);
  }
  rows_per_channel_[obs->channel()] = row;
}

}  // namespace bayline::cli
