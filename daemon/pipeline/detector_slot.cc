#include "daemon/pipeline/detector_slot.h"

#include <cmath>
#include <type_traits>

#include "daemon/pipeline/packing.h"

namespace bayline::pipeline {
namespace {

using est::ErrorCode;
using est::Status;

Status BadState(const char* why) { return Status::Error(ErrorCode::kInvalidState, why); }

}  // namespace

DetectorSlot::Impl DetectorSlot::MakeImpl(const DetectorSetup& d) {
  switch (d.kind) {
    case DetectorKind::kCusum:
      return Impl(std::in_place_type<est::Cusum>, d.cusum);
    case DetectorKind::kEwma:
      return Impl(std::in_place_type<est::Ewma>, d.ewma);
    case DetectorKind::kPageHinkley:
      return Impl(std::in_place_type<est::PageHinkley>, d.page_hinkley);
    case DetectorKind::kGlr:
      return Impl(Boxed<est::Glr>(est::Glr(d.glr)));
    case DetectorKind::kBocpd:
      return Impl(Boxed<est::Bocpd>(est::Bocpd(d.bocpd)));
    case DetectorKind::kRecursiveCusum:
      return Impl(std::in_place_type<est::RecursiveCusum>, d.recursive_cusum);
    case DetectorKind::kRecursiveCusumSquares:
      return Impl(
          Boxed<est::RecursiveCusumSquares>(est::RecursiveCusumSquares(d.recursive_cusum_squares)));
    case DetectorKind::kBand:
      return Impl(std::in_place_type<est::ToleranceBand>, d.band);
  }
  return Impl(std::in_place_type<est::Cusum>, d.cusum);
}

void DetectorSlot::SetThreshold(double head_start_fraction, double threshold, Impl* impl) {
  if (auto* c = std::get_if<est::Cusum>(impl)) {
    est::CusumOptions o = c->options();
    o.h = threshold;
    o.head_start = head_start_fraction * threshold;
    const est::Cusum::State state = c->state();
    *c = est::Cusum(o);
    (void)c->Restore(state);  // the state was valid and does not depend on h: cannot fail
  } else if (auto* e = std::get_if<est::Ewma>(impl)) {
    est::EwmaOptions o = e->options();
    o.L = threshold;
    const est::Ewma::State state = e->state();
    *e = est::Ewma(o);
    (void)e->Restore(state);  // as above
  }
}

bool DetectorSlot::ExactScoreFamily(Model model, est::ScoreFamily* family) {
  switch (model) {
    case Model::kPoisson:
      *family = est::ScoreFamily::kPoisson;
      return true;
    case Model::kBinomial:
      *family = est::ScoreFamily::kBinomial;
      return true;
    case Model::kExponential:
      *family = est::ScoreFamily::kExponential;
      return true;
    case Model::kGamma:
      *family = est::ScoreFamily::kGamma;
      return true;
    case Model::kLogistic:
      *family = est::ScoreFamily::kLogistic;
      return true;
    case Model::kPoissonRegression:
      *family = est::ScoreFamily::kPoissonRegression;
      return true;
    case Model::kLinear:
    case Model::kGaussian:
    case Model::kLognormal:
      break;
  }
  return false;
}

bool DetectorSlot::ReadsZ(const DetectorSetup& setup) {
  return setup.kind != DetectorKind::kRecursiveCusum &&
         setup.kind != DetectorKind::kRecursiveCusumSquares && setup.kind != DetectorKind::kBand;
}

DetectorSlot::Source DetectorSlot::SourceFor(const DetectorSetup& setup, Model model,
                                             EstimatorKind watched_kind) {
  est::ScoreFamily family;
  const bool exact = ExactScoreFamily(model, &family);
  const bool regression_family =
      family == est::ScoreFamily::kLogistic || family == est::ScoreFamily::kPoissonRegression;
  if (setup.phase2) return exact && !regression_family ? Source::kExactScore : Source::kPhase2;
  if (exact) return Source::kExactScore;
  if (watched_kind == EstimatorKind::kLs) return Source::kLsResidual;
  if (watched_kind == EstimatorKind::kMl && model == Model::kGaussian) return Source::kSelfStarting;
  if (watched_kind == EstimatorKind::kMl && model == Model::kLognormal)
    return Source::kSelfStartingLog;
  return Source::kInnovation;
}

bool DetectorSlot::ReadsInnovation(const DetectorSetup& setup, Model model,
                                   EstimatorKind watched_kind) {
  if (!ReadsZ(setup)) return false;
  const Source source = SourceFor(setup, model, watched_kind);
  est::ScoreFamily family;
  return source == Source::kInnovation ||
         (source == Source::kExactScore && !setup.phase2 && ExactScoreFamily(model, &family) &&
          (family == est::ScoreFamily::kLogistic ||
           family == est::ScoreFamily::kPoissonRegression));
}

DetectorSlot::DetectorSlot(const DetectorSetup& setup, Model model, EstimatorKind watched_kind,
                           uint64_t score_seed)
    : impl_(MakeImpl(setup)), source_(SourceFor(setup, model, watched_kind)) {
  if (setup.fleet != nullptr) {
    fleet_ = std::make_unique<FleetChannelState>(*setup.fleet);
    SetThreshold(fleet_->head_start_fraction(), fleet_->threshold(), &impl_);
  }
  if (!ReadsZ(setup)) return;  // detectors that do not read z keep no standardizer
  switch (source_) {
    case Source::kLsResidual:
      standardizer_.emplace<est::RecursiveResidualStandardizer>();
      break;
    case Source::kSelfStarting:
    case Source::kSelfStartingLog:
      standardizer_.emplace<est::SelfStartingStandardizer>();
      break;
    case Source::kExactScore: {
      est::ExactScoreOptions o;
      ExactScoreFamily(model, &o.family);
      o.known = setup.phase2;
      o.mean = setup.target_mean;
      o.sd = setup.target_sd;
      // Resolution refuses targets that do not fit the family; should one get here, its scores
      // are NaN (the detector stays silent) rather than undefined.
      if (o.Validate().ok()) standardizer_.emplace<est::ExactScoreStandardizer>(o, score_seed);
      break;
    }
    case Source::kPhase2:
    case Source::kInnovation:
      break;
  }
}

double DetectorSlot::StandardizedValue(const DetectorSetup& setup, const DetectorInput& in) {
  double z = est::kNaN;
  switch (source_) {
    case Source::kPhase2:
      z = (in.sample->y - setup.target_mean) / setup.target_sd;
      break;
    case Source::kLsResidual:
      if (auto* s = std::get_if<est::RecursiveResidualStandardizer>(&standardizer_)) {
        if (!s->Update(in.rr->valid ? in.rr->value : est::kNaN, &z).ok()) z = est::kNaN;
      }
      break;
    case Source::kSelfStarting:
    case Source::kSelfStartingLog:
      if (auto* s = std::get_if<est::SelfStartingStandardizer>(&standardizer_)) {
        const double y =
            source_ == Source::kSelfStartingLog ? std::log(in.sample->y) : in.sample->y;
        if (!s->Update(y, &z).ok()) z = est::kNaN;
      }
      break;
    case Source::kInnovation:
      if (in.innovation->valid) z = in.innovation->standardized;
      break;
    case Source::kExactScore:
      if (auto* s = std::get_if<est::ExactScoreStandardizer>(&standardizer_)) {
        const double predicted = in.innovation != nullptr && in.innovation->valid
                                     ? in.innovation->prediction
                                     : est::kNaN;
        if (!s->Update(*in.sample, predicted, &z).ok()) z = est::kNaN;
      }
      break;
  }
  return z;
}

Status DetectorSlot::Update(const DetectorSetup& setup, const DetectorInput& in,
                            est::DetectorEvent* event) {
  *event = est::DetectorEvent();
  const Standardizer saved = standardizer_;  // small: undone if the detector fails
  if (fleet_ != nullptr && fleet_->Observe(*setup.fleet, in.sample->time)) {
    // cusum / ewma: their Update below cannot fail, so nothing needs undoing.
    SetThreshold(fleet_->head_start_fraction(), fleet_->threshold(), &impl_);
  }
  const double z = StandardizedValue(setup, in);
  Status s = std::visit(
      [&](auto& slot) -> Status {
        using T = std::decay_t<decltype(slot)>;
        auto& d = Unwrap(slot);
        if constexpr (std::is_same_v<T, est::Cusum> || std::is_same_v<T, est::Ewma> ||
                      std::is_same_v<T, est::PageHinkley> || std::is_same_v<T, Boxed<est::Glr>>) {
          *event = d.Update(z, in.mark);
          return Status::Ok();
        } else if constexpr (std::is_same_v<T, Boxed<est::Bocpd>>) {
          if (!std::isfinite(z)) return Status::Ok();
          est::Sample zs;
          zs.y = z;
          zs.time = in.sample->time;
          return d.Update(zs, in.mark, event);
        } else if constexpr (std::is_same_v<T, est::ToleranceBand>) {
          return d.Update(in.watched->Report(in.level), in.mark, event);
        } else {  // recursive-residual tests read the raw recursive residual of ls
          if (!in.rr->valid || !std::isfinite(in.rr->value)) return Status::Ok();
          return d.Update(in.rr->value, in.mark, event);
        }
      },
      impl_);
  if (!s.ok()) {
    standardizer_ = saved;
    *event = est::DetectorEvent();
    return s;
  }
  if (std::isfinite(event->statistic)) last_statistic_ = event->statistic;
  if (std::isfinite(event->threshold)) last_threshold_ = event->threshold;
  return Status::Ok();
}

const LastAlarm& DetectorSlot::last_alarm() const {
  static const LastAlarm kNone;
  return last_alarm_ ? *last_alarm_ : kNone;
}

void DetectorSlot::RecordAlarm(const LastAlarm& alarm) {
  if (!last_alarm_) last_alarm_ = std::make_unique<LastAlarm>();
  *last_alarm_ = alarm;
  ++alarms_raised_;
}

bool DetectorSlot::alarm_active() const {
  return std::visit(
      [](const auto& slot) -> bool {
        using T = std::decay_t<decltype(slot)>;
        if constexpr (std::is_same_v<T, est::Cusum> || std::is_same_v<T, est::Ewma> ||
                      std::is_same_v<T, est::PageHinkley>) {
          return slot.state().cycle.active;
        } else if constexpr (std::is_same_v<T, Boxed<est::Glr>>) {
          return slot->state().cycle.active;
        } else if constexpr (std::is_same_v<T, Boxed<est::RecursiveCusumSquares>> ||
                             std::is_same_v<T, Boxed<est::Bocpd>>) {
          return slot->state().alarm_active;
        } else {
          return slot.state().alarm_active;
        }
      },
      impl_);
}

void DetectorSlot::Pack(std::vector<double>* out) const {
  std::size_t section = BeginSection(out);
  PutU64(out, alarms_raised_);
  out->push_back(last_statistic_);
  out->push_back(last_threshold_);
  const LastAlarm& a = last_alarm();
  PutU64(out, a.seq);
  PutU64(out, static_cast<uint64_t>(a.time_ns));
  PutU64(out, a.onset_seq);
  PutU64(out, static_cast<uint64_t>(a.onset_time_ns));
  out->push_back(a.statistic);
  out->push_back(a.threshold);
  out->push_back(a.shift);
  out->push_back(a.trigger_y);
  out->push_back(a.direction);
  EndSection(out, section);

  section = BeginSection(out);
  est::StateWriter w(out);
  if (const auto* s = std::get_if<est::SelfStartingStandardizer>(&standardizer_))
    s->state().Pack(w);
  if (const auto* s = std::get_if<est::RecursiveResidualStandardizer>(&standardizer_)) {
    s->state().Pack(w);
  }
  if (const auto* s = std::get_if<est::ExactScoreStandardizer>(&standardizer_)) s->state().Pack(w);
  EndSection(out, section);

  if (fleet_ != nullptr) {
    section = BeginSection(out);
    fleet_->values().Pack(w);
    EndSection(out, section);
  }

  std::visit([&](const auto& slot) { Unwrap(slot).state().Pack(w); }, impl_);
}

Status DetectorSlot::Unpack(std::span<const double> values) {
  std::size_t pos = 0;
  std::span<const double> book, std_values;
  if (!NextSection(values, &pos, &book) || !NextSection(values, &pos, &std_values)) {
    return BadState("detector state sections are malformed");
  }
  est::StateReader br(book);
  uint64_t raised = 0, seq = 0, time = 0, onset_seq = 0, onset_time = 0;
  double statistic = 0, threshold = 0, a_stat = 0, a_thr = 0, a_shift = 0, a_y = 0, a_dir = 0;
  GetU64(br, &raised) && br.Get(statistic) && br.Get(threshold) && GetU64(br, &seq) &&
      GetU64(br, &time) && GetU64(br, &onset_seq) && GetU64(br, &onset_time) && br.Get(a_stat) &&
      br.Get(a_thr) && br.Get(a_shift) && br.Get(a_y) && br.Get(a_dir);
  Status s = br.status();
  if (!s.ok()) return s;
  if (!(a_dir >= 0 && a_dir <= 3)) return BadState("alarm direction out of range");

  Standardizer standardizer = standardizer_;
  s = std::visit(
      [&](auto& st) -> Status {
        using T = std::decay_t<decltype(st)>;
        if constexpr (std::is_same_v<T, std::monostate>) {
          return std_values.empty() ? Status::Ok() : BadState("unexpected standardizer state");
        } else {
          return UnpackInto(st, std_values);
        }
      },
      standardizer);
  if (!s.ok()) return s;

  Impl impl = impl_;
  FleetChannelState::Values fleet;
  if (fleet_ != nullptr) {
    std::span<const double> fleet_values;
    if (!NextSection(values, &pos, &fleet_values)) return BadState("fleet budget state is missing");
    est::StateReader fr(fleet_values);
    s = fleet.Unpack(fr);
    if (s.ok()) s = fr.status();
    if (!s.ok()) return s;
    SetThreshold(fleet_->head_start_fraction(), fleet.threshold, &impl);
  }
  s = std::visit([&](auto& slot) { return UnpackInto(Unwrap(slot), values.subspan(pos)); }, impl);
  if (!s.ok()) return s;

  impl_ = std::move(impl);
  if (fleet_ != nullptr) fleet_->set_values(fleet);
  standardizer_ = std::move(standardizer);
  alarms_raised_ = raised;
  last_statistic_ = statistic;
  last_threshold_ = threshold;
  const LastAlarm restored{seq,
                           static_cast<int64_t>(time),
                           onset_seq,
                           static_cast<int64_t>(onset_time),
                           a_stat,
                           a_thr,
                           a_shift,
                           a_y,
                           static_cast<uint8_t>(a_dir)};
  if (raised > 0) {
    if (!last_alarm_) last_alarm_ = std::make_unique<LastAlarm>();
    *last_alarm_ = restored;
  } else {
    last_alarm_.reset();
  }
  return Status::Ok();
}

}  // namespace bayline::pipeline
