// Bounds the input errors one ingest frame can produce on one worker: a frame of a million bad
// observations would otherwise publish a million InputErrors (and crowd out every other
// publication at the subscribers' high-water marks).
//
// Between Begin(frame) and End(): the first kIndividual InputErrors are passed on to the sink as
// they come; later ones are only counted by reason, and End() publishes one summary InputError
// (channel "", reason "summarized", message "<n> further input errors of this frame not published
// one by one: <reason>=<count>, ...", reasons in alphabetical order). Every other publication,
// and every InputError outside Begin/End, passes unchanged. The pipeline's counters
// (Stats.rejected_by_reason) still count each error: only publishing is summarised.
// A frame's observations are split over the workers by channel, so a frame yields at most
// kIndividual + 1 InputErrors per worker.
// Thread safety: none; owned by one worker thread.
#pragma once

#include <cstdint>
#include <map>
#include <string>

#include "daemon/pipeline/pipeline.h"

namespace bayline::server {

class FrameErrorLimit : public pipeline::PublicationSink {
 public:
  static constexpr uint64_t kIndividual = 16;

  explicit FrameErrorLimit(pipeline::PublicationSink& sink) : sink_(sink) {}

  // Starts limiting for `frame`; the same frame again continues its count (a frame can span
  // several batches). Another frame ends the open one first.
  void Begin(uint64_t frame, int64_t time_ns);
  // Publishes the summary of the open frame, if anything was held back, and stops limiting.
  void End();
  bool open() const { return open_; }
  uint64_t frame() const { return frame_; }

  void Publish(const std::string& topic, const bayline::v1::Publication& publication) override;

 private:
  pipeline::PublicationSink& sink_;
  bool open_ = false;
  uint64_t frame_ = 0;
  int64_t time_ns_ = 0;
  uint64_t published_ = 0;
  uint64_t held_back_ = 0;
  std::map<std::string, uint64_t> held_back_by_reason_;
  bayline::v1::Publication summary_;
};

}  // namespace bayline::server
