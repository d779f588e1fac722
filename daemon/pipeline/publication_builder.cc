#include "daemon/pipeline/publication_builder.h"

#include <cmath>

namespace bayline::pipeline {

int64_t SecondsToNs(double seconds) {
  if (!std::isfinite(seconds)) return 0;
  return static_cast<int64_t>(std::llround(seconds * 1e9));
}

void FillEstimate(std::string_view channel, const ResolvedSpec& spec, EstimatorKind kind,
                  const est::ParameterReport& report, uint64_t seq, int64_t time_ns,
                  uint64_t accepted, bayline::v1::Estimate* e) {
  e->set_channel(channel.data(), channel.size());
  e->set_seq(seq);
  e->set_time_ns(time_ns);
  const std::string_view model = ModelName(spec.model);
  e->set_model(model.data(), model.size());
  const std::string_view estimator = EstimatorKindName(kind);
  e->set_estimator(estimator.data(), estimator.size());
  e->clear_names();
  for (const auto& n : spec.parameter_names) e->add_names(n);
  e->mutable_value()->Assign(report.value.begin(), report.value.end());
  e->mutable_std_error()->Assign(report.std_error.begin(), report.std_error.end());
  e->mutable_lower()->Assign(report.lower.begin(), report.lower.end());
  e->mutable_upper()->Assign(report.upper.begin(), report.upper.end());
  e->mutable_posterior_mean()->Assign(report.posterior_mean.begin(), report.posterior_mean.end());
  e->set_level(report.level);
  e->set_identifiable(report.identifiable);
  e->set_effective_n(report.effective_n);
  e->set_log_likelihood(report.log_likelihood);
  e->set_accepted(accepted);
}

const std::string& PublicationBuilder::Topic(std::string_view kind, std::string_view channel) {
  topic_.assign(kind);
  topic_.push_back('/');
  topic_.append(channel);
  return topic_;
}

void PublicationBuilder::InputError(PublicationSink& sink, std::string_view channel, uint64_t seq,
                                    int64_t time_ns, std::string_view reason,
                                    std::string_view message) {
  auto* e = input_error_.mutable_input_error();
  e->set_channel(channel.data(), channel.size());
  e->set_seq(seq);
  e->set_time_ns(time_ns);
  e->set_reason(reason.data(), reason.size());
  e->set_message(message.data(), message.size());
  ++counters_->rejected_total;
  ++counters_->rejected_by_reason[std::string(reason)];
  ++counters_->publications;
  sink.Publish(Topic("input_error", channel), input_error_);
}

void PublicationBuilder::Estimate(PublicationSink& sink, std::string_view channel,
                                  const ResolvedSpec& spec, EstimatorKind kind,
                                  const est::ParameterReport& report, uint64_t seq, int64_t time_ns,
                                  uint64_t accepted) {
  FillEstimate(channel, spec, kind, report, seq, time_ns, accepted, estimate_.mutable_estimate());
  ++counters_->publications;
  sink.Publish(Topic("estimate", channel), estimate_);
}

LastAlarm PublicationBuilder::Alarm(PublicationSink& sink, std::string_view channel,
                                    const DetectorSetup& setup, const ResolvedSpec& spec,
                                    const est::DetectorEvent& event, bool raised, uint64_t seq,
                                    int64_t time_ns, double trigger_y) {
  LastAlarm rec;
  rec.seq = seq;
  rec.time_ns = time_ns;
  rec.onset_seq = event.onset_seq > 0 ? static_cast<uint64_t>(event.onset_seq) : 0;
  rec.onset_time_ns = SecondsToNs(event.onset_time);
  rec.statistic = event.statistic;
  rec.threshold = event.threshold;
  rec.shift = std::isfinite(event.shift) ? event.shift : 0.0;
  rec.trigger_y = trigger_y;
  rec.direction = static_cast<uint8_t>(raised ? event.direction : setup.direction);

  auto* a = alarm_.mutable_alarm();
  a->set_channel(channel.data(), channel.size());
  a->set_seq(seq);
  a->set_time_ns(time_ns);
  const std::string_view detector = DetectorKindName(setup.kind);
  a->set_detector(detector.data(), detector.size());
  const std::string_view watched =
      EstimatorKindName(spec.estimators[static_cast<std::size_t>(setup.watch)]);
  a->set_watched(watched.data(), watched.size());
  a->set_state(raised ? "raised" : "cleared");
  a->set_statistic(rec.statistic);
  a->set_threshold(rec.threshold);
  const std::string_view direction = DirectionName(static_cast<est::Direction>(rec.direction));
  a->set_direction(direction.data(), direction.size());
  a->set_onset_seq(raised ? rec.onset_seq : 0);
  a->set_onset_time_ns(raised ? rec.onset_time_ns : 0);
  a->set_shift(raised ? rec.shift : 0.0);
  a->set_trigger_y(trigger_y);
  ++counters_->publications;
  sink.Publish(Topic("alarm", channel), alarm_);
  return rec;
}

void PublicationBuilder::Prediction(PublicationSink& sink, std::string_view channel,
                                    EstimatorKind kind, std::span<const double> x,
                                    const est::Prediction& prediction, uint64_t seq,
                                    int64_t time_ns) {
  auto* p = prediction_.mutable_prediction();
  p->set_channel(channel.data(), channel.size());
  p->set_seq(seq);
  p->set_time_ns(time_ns);
  const std::string_view estimator = EstimatorKindName(kind);
  p->set_estimator(estimator.data(), estimator.size());
  p->mutable_x()->Assign(x.begin(), x.end());
  p->set_mean(prediction.mean);
  p->set_sd(prediction.sd);
  p->set_lower(prediction.lower);
  p->set_upper(prediction.upper);
  p->set_level(prediction.level);
  ++counters_->publications;
  sink.Publish(Topic("prediction", channel), prediction_);
}

}  // namespace bayline::pipeline
