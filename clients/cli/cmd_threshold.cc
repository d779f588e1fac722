// threshold: from the false-alarm rate a user accepts (--arl0: mean observations between false
// alarms) and the shift to catch (--shift, sd units), the detector settings (calibration.h), the
// config lines that set them, and the ARL over a range of shifts (arl.h). With --channels,
// --rate-per-day (or --interval) and --false-alarms-per-day the ARL0 is the one a fleet budget
// gives each channel (daemon/pipeline/fleet_budget.h: ARL0 = N r / B).
#include <google/protobuf/struct.pb.h>
#include <google/protobuf/text_format.h>

#include <cmath>
#include <iostream>
#include <memory>

#include "bayline/v1/config.pb.h"
#include "clients/cli/command_support.h"
#include "clients/cli/commands.h"
#include "clients/cli/json_render.h"
#include "clients/cli/number_parsing.h"
#include "clients/cli/observation_mapping.h"
#include "clients/cli/text_format.h"
#include "daemon/pipeline/fleet_budget.h"
#include "estimators/detect/arl.h"
#include "estimators/detect/calibration.h"

namespace bayline::cli {
namespace {

struct ThresholdOptions {
  double arl0 = 500;
  double shift = 1;
  std::string detector = "cusum";
  std::string direction = "both";
  std::string shifts = "0,0.25,0.5,0.75,1,1.5,2,2.5,3";
  bool json = false;
  // Fleet budget (all three, or none): channels N, per-channel rate r, false alarms per day B.
  double channels = 0, rate_per_day = 0, interval_s = 0, false_alarms_per_day = 0;
  CLI::Option* arl0_option = nullptr;
};

// The fleet's ARL0 into o->arl0 when the fleet flags are given; a CommandError when they are
// incomplete or clash.
bool ApplyFleetBudget(ThresholdOptions* o) {
  const bool any = o->channels != 0 || o->rate_per_day != 0 || o->interval_s != 0 ||
                   o->false_alarms_per_day != 0;
  if (!any) return false;
  auto bad = [](const std::string& why) { throw CommandError(kExitBadInput, why); };
  if (o->arl0_option != nullptr && o->arl0_option->count() > 0)
    bad("--arl0 and --false-alarms-per-day exclude each other (the budget gives the ARL0)");
  if (!(o->channels >= 1 && std::isfinite(o->channels))) bad("--channels: must be >= 1");
  if (!(o->false_alarms_per_day > 0 && std::isfinite(o->false_alarms_per_day)))
    bad("--false-alarms-per-day: must be finite and > 0");
  if ((o->rate_per_day != 0) == (o->interval_s != 0))
    bad("give the channel's rate as one of --rate-per-day or --interval");
  if (o->interval_s != 0) o->rate_per_day = 86400.0 / o->interval_s;
  if (!(o->rate_per_day > 0 && std::isfinite(o->rate_per_day)))
    bad("--rate-per-day / --interval: must be finite and > 0");
  o->arl0 = bayline::pipeline::FleetArl0(o->channels, o->rate_per_day, o->false_alarms_per_day);
  if (!(o->arl0 >= 2 && o->arl0 <= 1e7)) {
    bad("the fleet gives each channel ARL0 = N r / B = " + FormatNumber(o->arl0) +
        " observations, outside [2, 1e7] (the daemon clamps it to [" +
        FormatNumber(bayline::pipeline::kFleetMinArl0) + ", " +
        FormatNumber(bayline::pipeline::kFleetMaxArl0) + "])");
  }
  return true;
}

est::Direction ToDirection(const std::string& d) {
  if (d == "up") return est::Direction::kUp;
  if (d == "down") return est::Direction::kDown;
  return est::Direction::kBoth;
}

int RunThreshold(ThresholdOptions o) {
  const bool fleet = ApplyFleetBudget(&o);
  std::vector<double> shifts;
  for (const auto& item : SplitList(o.shifts)) {
    auto v = ParseFiniteDouble(item);
    if (!v) throw CommandError(kExitBadInput, "--shifts: not a number: '" + item + "'");
    shifts.push_back(*v);
  }
  est::AlarmTarget target{o.arl0, o.shift};
  bayline::v1::DetectorSpec spec;  // the settings, as the config file writes them
  spec.set_kind(o.detector);
  spec.set_direction(o.direction);
  std::vector<double> arls;
  std::vector<std::pair<std::string, double>> settings;
  if (o.detector == "cusum") {
    est::CusumOptions cusum;
    cusum.direction = ToDirection(o.direction);
    est::Status status = est::CalibrateCusum(target, &cusum);
    if (!status.ok()) throw CommandError(kExitBadInput, status.message());
    arls = est::CusumArlProfile(cusum, shifts);
    settings = {{"k", cusum.k}, {"h", cusum.h}};
    spec.set_k(cusum.k);
    spec.set_h(cusum.h);
  } else {
    est::EwmaOptions ewma;
    ewma.direction = ToDirection(o.direction);
    est::Status status = est::CalibrateEwma(target, &ewma);
    if (!status.ok()) throw CommandError(kExitBadInput, status.message());
    arls = est::EwmaArlProfile(ewma, shifts);
    settings = {{"lambda", ewma.lambda}, {"limit", ewma.L}};
    spec.set_lambda(ewma.lambda);
    spec.set_limit(ewma.L);
  }

  if (o.json) {
    google::protobuf::Struct out;
    auto& f = *out.mutable_fields();
    f["detector"].set_string_value(o.detector);
    f["direction"].set_string_value(o.direction);
    f["arl0"].set_number_value(o.arl0);
    f["shift"].set_number_value(o.shift);
    for (const auto& [name, value] : settings) f[name].set_number_value(value);
    if (fleet) {
      f["channels"].set_number_value(o.channels);
      f["rate_per_day"].set_number_value(o.rate_per_day);
      f["false_alarms_per_day"].set_number_value(o.false_alarms_per_day);
    }
    auto* profile = f["arl"].mutable_list_value();
    for (size_t i = 0; i < shifts.size(); ++i) {
      auto* point = profile->add_values()->mutable_struct_value()->mutable_fields();
      (*point)["shift"].set_number_value(shifts[i]);
      (*point)["arl"].set_number_value(arls[i]);
    }
    std::cout << MessageJsonLine(out) << "\n";
    return 0;
  }
  if (fleet) {
    std::cout << "fleet: " << FormatNumber(o.channels) << " channels x "
              << FormatNumber(o.rate_per_day) << " observations/day, "
              << FormatNumber(o.false_alarms_per_day)
              << " false alarms/day in all: ARL0 = N r / B = " << FormatNumber(o.arl0)
              << " observations per channel\n";
  }
  std::cout << o.detector << " (" << o.direction << ") for one false alarm per "
            << FormatNumber(o.arl0) << " observations in control, tuned to a shift of "
            << FormatNumber(o.shift) << " sd\n";
  std::string values;
  for (const auto& [name, value] : settings) {
    values += (values.empty() ? "" : "   ") + name + " = " + FormatNumber(value);
  }
  std::cout << "settings: " << values << "\n";
  std::string text;
  google::protobuf::TextFormat::Printer printer;
  printer.SetSingleLineMode(true);
  printer.PrintToString(spec, &text);
  std::cout << "config:   detectors { " << text << "}\n";
  if (fleet) {
    std::cout << "budget:   detectors { kind: \"" << o.detector
              << "\" false_alarms_per_day: " << FormatNumber(o.false_alarms_per_day)
              << " }  (each channel's ARL0 from its own rate)\n";
  }
  std::cout << "\n";
  std::vector<std::vector<std::string>> rows = {{"SHIFT (sd)", "ARL (observations to alarm)"}};
  for (size_t i = 0; i < shifts.size(); ++i) {
    char arl[32];
    std::snprintf(arl, sizeof arl, "%.1f", arls[i]);
    rows.push_back({FormatNumber(shifts[i]), arl});
  }
  for (const auto& line : AlignColumns(rows)) std::cout << line << "\n";
  return 0;
}

}  // namespace

Subcommand AddThresholdCommand(CLI::App& app) {
  auto o = std::make_shared<ThresholdOptions>();
  CLI::App* sub = app.add_subcommand(
      "threshold", "detector settings for a false-alarm rate and a shift, with the ARL they give");
  o->arl0_option =
      sub->add_option("--arl0", o->arl0,
                      "in-control ARL: mean observations between false alarms, in [2, 1e7]")
          ->capture_default_str();
  sub->add_option("--channels", o->channels, "fleet budget: number of channels N");
  sub->add_option("--rate-per-day", o->rate_per_day,
                  "fleet budget: a channel's observations per day r");
  sub->add_option("--interval", o->interval_s,
                  "fleet budget: seconds between a channel's observations (r = 86400 / interval)");
  sub->add_option("--false-alarms-per-day", o->false_alarms_per_day,
                  "fleet budget: false alarms per day B over all N channels (ARL0 = N r / B)");
  sub->add_option("--shift", o->shift, "shift to detect quickly, in sd units (> 0)")
      ->capture_default_str();
  sub->add_option("--detector", o->detector, "cusum or ewma")
      ->check(CLI::IsMember({"cusum", "ewma"}))
      ->capture_default_str();
  sub->add_option("--direction", o->direction, "both, up or down")
      ->check(CLI::IsMember({"both", "up", "down"}))
      ->capture_default_str();
  sub->add_option("--shifts", o->shifts, "comma-separated shifts (sd units) for the ARL table")
      ->capture_default_str();
  sub->add_flag("--json", o->json, "one JSON line instead of the table");
  return {sub, [o] { return RunThreshold(*o); }};
}

}  // namespace bayline::cli
