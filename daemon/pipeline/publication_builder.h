// PublicationBuilder: builds the publication messages (Estimate, Alarm, InputError, Prediction)
// and hands them to a sink, counting them. One message object per kind is kept, so publishing
// reuses their storage (repeated fields keep their capacity) and the topic string.
#pragma once

#include <cstdint>
#include <span>
#include <string>
#include <string_view>

#include "bayline/v1/publication.pb.h"
#include "daemon/pipeline/counters.h"
#include "daemon/pipeline/detector_setup.h"
#include "daemon/pipeline/detector_slot.h"
#include "daemon/pipeline/publication_sink.h"
#include "daemon/pipeline/resolved_spec.h"
#include "estimators/core/report.h"
#include "estimators/detect/alarm.h"

namespace bayline::pipeline {

// Fills an Estimate from a report (also used by the control API's Ask).
void FillEstimate(std::string_view channel, const ResolvedSpec& spec, EstimatorKind kind,
                  const est::ParameterReport& report, uint64_t seq, int64_t time_ns,
                  uint64_t accepted, bayline::v1::Estimate* out);

// Seconds (detector marks) to nanoseconds; 0 when not finite.
int64_t SecondsToNs(double seconds);

class PublicationBuilder {
 public:
  explicit PublicationBuilder(Counters* counters) : counters_(counters) {}

  void InputError(PublicationSink& sink, std::string_view channel, uint64_t seq, int64_t time_ns,
                  std::string_view reason, std::string_view message);
  void Estimate(PublicationSink& sink, std::string_view channel, const ResolvedSpec& spec,
                EstimatorKind kind, const est::ParameterReport& report, uint64_t seq,
                int64_t time_ns, uint64_t accepted);
  // Publishes the raise or clear in `event` and returns the alarm as recorded for Ask.
  LastAlarm Alarm(PublicationSink& sink, std::string_view channel, const DetectorSetup& setup,
                  const ResolvedSpec& spec, const est::DetectorEvent& event, bool raised,
                  uint64_t seq, int64_t time_ns, double trigger_y);
  void Prediction(PublicationSink& sink, std::string_view channel, EstimatorKind kind,
                  std::span<const double> x, const est::Prediction& prediction, uint64_t seq,
                  int64_t time_ns);

 private:
  const std::string& Topic(std::string_view kind, std::string_view channel);

  Counters* counters_;
  std::string topic_;
  bayline::v1::Publication estimate_, alarm_, input_error_, prediction_;
};

}  // namespace bayline::pipeline
