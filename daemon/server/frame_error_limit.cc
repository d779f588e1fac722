#include "daemon/server/frame_error_limit.h"

namespace bayline::server {

void FrameErrorLimit::Begin(uint64_t frame, int64_t time_ns) {
  if (open_ && frame == frame_) return;
  End();
  open_ = true;
  frame_ = frame;
  time_ns_ = time_ns;
  published_ = 0;
}

void FrameErrorLimit::End() {
  if (!open_) return;
  open_ = false;
  if (held_back_ == 0) return;
  std::string message =
      std::to_string(held_back_) + " further input errors of this frame not published one by one: ";
  bool first = true;
  for (const auto& [reason, count] : held_back_by_reason_) {
    message.append(first ? "" : ", ").append(reason).append("=").append(std::to_string(count));
    first = false;
  }
  auto* e = summary_.mutable_input_error();
  e->set_channel("");
  e->set_seq(0);
  e->set_time_ns(time_ns_);
  e->set_reason("summarized");
  e->set_message(std::move(message));
  held_back_ = 0;
  held_back_by_reason_.clear();
  sink_.Publish("input_error/", summary_);
}

void FrameErrorLimit::Publish(const std::string& topic,
                              const bayline::v1::Publication& publication) {
  if (open_ && publication.has_input_error()) {
    if (published_ >= kIndividual) {
      ++held_back_;
      ++held_back_by_reason_[publication.input_error().reason()];
      return;
    }
    ++published_;
  }
  sink_.Publish(topic, publication);
}

}  // namespace bayline::server
