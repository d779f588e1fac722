// threshold: from the false-alarm rate a user accepts (--arl0: mean observations between false
// alarms) and the shift to catch (--shift, sd units), the settings the daemon would calibrate for
// any detector of estimators/detect that alarms on an N(0,1)-in-control score (cusum, ewma,
// page_hinkley, glr, bocpd; calibrated by pipeline::CalibrateDetector, so exactly as a rule with
// these arl0 / shift / direction would be), the config line that sets them raw, and the ARL they
// achieve:
//   cusum, ewma          exact (Markov chain, arl.h), zero-state ARL at each shift in --shifts.
//   glr                  simulated zero-state ARL at each shift (--runs runs, seed kCheckSeed,
//                        independent of the calibration's), with its 95 % half-width.
//   page_hinkley, bocpd  simulated detection delay after a mean step at observation kChangeAt + 1
//                        (both judge against what they learnt since the start, so a step present
//                        from the first observation is no change to them: arl.h
//                        SimulatePageHinkleyDelay, calibration.h SimulateBocpdDelay); at shift 0
//                        the in-control ARL. Same runs, seed and half-width as above.
// With --channels, --rate-per-day (or --interval) and --false-alarms-per-day the ARL0 is the one a
// fleet budget gives each channel (daemon/pipeline/fleet_budget.h: ARL0 = N r / B).
// The in-control ARL achieved (shift 0) and the ARL at the design shift are always printed, also
// when --shifts lacks them. The 95 % half-width of a simulated ARL is 1.96 standard errors, from
// the runs' sample sd.
#include <google/protobuf/struct.pb.h>
#include <google/protobuf/text_format.h>

#include <cmath>
#include <cstdio>
#include <functional>
#include <iostream>
#include <memory>

#include "bayline/v1/config.pb.h"
#include "clients/cli/command_support.h"
#include "clients/cli/commands.h"
#include "clients/cli/json_render.h"
#include "clients/cli/number_parsing.h"
#include "clients/cli/observation_mapping.h"
#include "clients/cli/text_format.h"
#include "daemon/pipeline/detector_setup.h"
#include "daemon/pipeline/fleet_budget.h"
#include "estimators/detect/arl.h"
#include "estimators/detect/calibration.h"

namespace bayline::cli {
namespace {

constexpr std::uint64_t kCheckSeed = 97531;  // differs from the calibration's SimulationBudget seed
constexpr int kChangeAt = 100;

struct ThresholdOptions {
  double arl0 = est::kDefaultArl0;
  double shift = 1;
  std::string detector = "cusum";
  std::string direction = "both";
  std::string shifts = "0,0.25,0.5,0.75,1,1.5,2,2.5,3";
  int runs = 1000;
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

// A calibrated detector: its settings and how to get its ARL at a shift.
struct Calibrated {
  std::vector<std::pair<std::string, double>> settings;
  bayline::v1::DetectorSpec raw;  // the config line that sets them raw
  bool simulated = false;
  bool delay = false;  // ARL at a shift = delay after kChangeAt in-control observations
  // ARL (or delay) at a shift; *se its standard error (from the runs' sample sd; 0 when exact).
  std::function<double(double, double* se)> arl;
};

Calibrated Calibrate(const ThresholdOptions& o, const est::SimulationBudget& check) {
  bayline::v1::DetectorSpec spec;
  spec.set_kind(o.detector);
  spec.set_direction(o.direction);
  spec.set_arl0(o.arl0);
  spec.set_shift(o.shift);
  pipeline::DetectorSetup d;
  est::Status status = pipeline::CalibrateDetector(spec, "threshold", &d);
  if (!status.ok()) throw CommandError(kExitBadInput, status.message());
  Calibrated c;
  c.raw.set_kind(o.detector);
  c.raw.set_direction(o.direction);
  switch (d.kind) {
    case pipeline::DetectorKind::kCusum:
      c.settings = {{"k", d.cusum.k}, {"h", d.cusum.h}};
      c.raw.set_k(d.cusum.k);
      c.raw.set_h(d.cusum.h);
      c.arl = [o = d.cusum](double shift, double* se) {
        *se = 0;
        return est::CusumArl(o, shift);
      };
      break;
    case pipeline::DetectorKind::kEwma:
      c.settings = {{"lambda", d.ewma.lambda}, {"limit", d.ewma.L}};
      c.raw.set_lambda(d.ewma.lambda);
      c.raw.set_limit(d.ewma.L);
      c.arl = [o = d.ewma](double shift, double* se) {
        *se = 0;
        return est::EwmaArl(o, shift);
      };
      break;
    case pipeline::DetectorKind::kPageHinkley:
      c.settings = {{"delta", d.page_hinkley.delta}, {"threshold", d.page_hinkley.threshold}};
      c.raw.set_delta(d.page_hinkley.delta);
      c.raw.set_threshold(d.page_hinkley.threshold);
      c.simulated = true;
      c.delay = true;
      c.arl = [o = d.page_hinkley, check](double shift, double* se) {
        return est::SimulatePageHinkleyDelay(o, shift, kChangeAt, check, se);
      };
      break;
    case pipeline::DetectorKind::kGlr:
      c.settings = {{"window", static_cast<double>(d.glr.window)}, {"threshold", d.glr.threshold}};
      c.raw.set_window(static_cast<std::uint32_t>(d.glr.window));
      c.raw.set_threshold(d.glr.threshold);
      c.simulated = true;
      c.arl = [o = d.glr, check](double shift, double* se) {
        return est::SimulateGlrArl(o, shift, check, se);
      };
      break;
    case pipeline::DetectorKind::kBocpd:
      c.settings = {{"hazard", d.bocpd.hazard},
                    {"recent", static_cast<double>(d.bocpd.window)},
                    {"threshold", d.bocpd.threshold}};
      c.raw.set_hazard(d.bocpd.hazard);
      c.raw.set_recent(static_cast<std::uint32_t>(d.bocpd.window));
      c.raw.set_threshold(d.bocpd.threshold);
      c.simulated = true;
      c.delay = true;
      c.arl = [o = d.bocpd, check](double shift, double* se) {
        return est::SimulateBocpdDelay(o, shift, kChangeAt, check, se);
      };
      break;
    default:
      throw CommandError(kExitBadInput, "threshold: no calibration for " + o.detector);
  }
  return c;
}

int RunThreshold(ThresholdOptions o) {
  const bool fleet = ApplyFleetBudget(&o);
  std::vector<double> shifts;
  for (const auto& item : SplitList(o.shifts)) {
    auto v = ParseFiniteDouble(item);
    if (!v) throw CommandError(kExitBadInput, "--shifts: not a number: '" + item + "'");
    shifts.push_back(*v);
  }
  if (o.runs < 100) throw CommandError(kExitBadInput, "--runs must be >= 100");
  const bool bocpd = o.detector == "bocpd";
  const bool simulated_calibration = bocpd || o.detector == "page_hinkley" || o.detector == "glr";
  if (simulated_calibration && o.arl0 > pipeline::kMaxSimulatedArl0) {
    throw CommandError(kExitBadInput,
                       "--arl0: simulated calibration (" + o.detector +
                           ") is limited to arl0 <= " + FormatNumber(pipeline::kMaxSimulatedArl0));
  }
  if (bocpd && o.direction != "both")
    throw CommandError(kExitBadInput, "--direction: bocpd alarms on a change either way (both)");
  const est::SimulationBudget check{.runs = o.runs, .seed = kCheckSeed};
  const Calibrated c = Calibrate(o, check);
  // The table, then shift 0 and the design shift (not simulated again when in --shifts).
  std::vector<double> arls, half;
  for (double s : shifts) {
    double se = 0;
    arls.push_back(c.arl(s, &se));
    half.push_back(1.96 * se);
  }
  auto arl_at = [&](double shift, double* half_width) {
    for (std::size_t i = 0; i < shifts.size(); ++i) {
      if (shifts[i] == shift) {
        *half_width = half[i];
        return arls[i];
      }
    }
    double se = 0;
    const double arl = c.arl(shift, &se);
    *half_width = 1.96 * se;
    return arl;
  };
  double arl0_half = 0, design_half = 0;
  const double arl0_achieved = arl_at(0.0, &arl0_half);
  const double arl_design = arl_at(o.shift, &design_half);
  const char* method = !c.simulated ? "markov_chain" : c.delay ? "simulation_delay" : "simulation";

  if (o.json) {
    google::protobuf::Struct out;
    auto& f = *out.mutable_fields();
    f["detector"].set_string_value(o.detector);
    f["direction"].set_string_value(o.direction);
    f["arl0"].set_number_value(o.arl0);
    f["shift"].set_number_value(o.shift);
    for (const auto& [name, value] : c.settings) f[name].set_number_value(value);
    f["arl_method"].set_string_value(method);
    if (fleet) {
      f["channels"].set_number_value(o.channels);
      f["rate_per_day"].set_number_value(o.rate_per_day);
      f["false_alarms_per_day"].set_number_value(o.false_alarms_per_day);
    }
    if (c.simulated) {
      f["runs"].set_number_value(o.runs);
      f["seed"].set_number_value(static_cast<double>(kCheckSeed));
    }
    if (c.delay) f["change_at"].set_number_value(kChangeAt);
    f["arl0_achieved"].set_number_value(arl0_achieved);
    f["arl0_half_width"].set_number_value(arl0_half);
    f["arl_at_shift"].set_number_value(arl_design);
    f["arl_at_shift_half_width"].set_number_value(design_half);
    auto* profile = f["arl"].mutable_list_value();
    for (size_t i = 0; i < shifts.size(); ++i) {
      auto* point = profile->add_values()->mutable_struct_value()->mutable_fields();
      (*point)["shift"].set_number_value(shifts[i]);
      (*point)["arl"].set_number_value(arls[i]);
      if (c.simulated) (*point)["half_width"].set_number_value(half[i]);
    }
    std::cout << MessageJsonLine(out) << "\n";
    return 0;
  }
  auto with_ci = [&](double arl, double half_width) {
    char text[64];
    if (c.simulated)
      std::snprintf(text, sizeof text, "%.1f +- %.1f", arl, half_width);
    else
      std::snprintf(text, sizeof text, "%.1f", arl);
    return std::string(text);
  };
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
  for (const auto& [name, value] : c.settings) {
    values += (values.empty() ? "" : "   ") + name + " = " + FormatNumber(value);
  }
  std::cout << "settings: " << values << "\n";
  std::string text;
  google::protobuf::TextFormat::Printer printer;
  printer.SetSingleLineMode(true);
  printer.PrintToString(c.raw, &text);
  std::cout << "config:   detectors { " << text << "}\n";
  if (fleet) {
    std::cout << "budget:   detectors { kind: \"" << o.detector
              << "\" false_alarms_per_day: " << FormatNumber(o.false_alarms_per_day)
              << " }  (each channel's ARL0 from its own rate; cusum and ewma only)\n";
  }
  if (!c.simulated) {
    std::cout << "ARL:      exact (Markov chain), zero-state\n";
  } else {
    std::cout << "ARL:      simulated, " << o.runs << " runs, seed " << kCheckSeed
              << " (independent of the calibration), +- 95 % half-width\n";
  }
  if (c.delay) {
    std::cout << "          shift > 0: observations from a mean step after " << kChangeAt
              << " in-control observations to the alarm\n";
  }
  std::cout << "in control: " << with_ci(arl0_achieved, arl0_half) << "   at shift "
            << FormatNumber(o.shift) << ": " << with_ci(arl_design, design_half) << "\n\n";
  std::vector<std::vector<std::string>> rows = {
      {"SHIFT (sd)",
       c.delay ? "ARL / DELAY (observations to alarm)" : "ARL (observations to alarm)"}};
  for (size_t i = 0; i < shifts.size(); ++i)
    rows.push_back({FormatNumber(shifts[i]), with_ci(arls[i], half[i])});
  for (const auto& line : AlignColumns(rows)) std::cout << line << "\n";
  return 0;
}

}  // namespace

Subcommand AddThresholdCommand(CLI::App& app) {
  auto o = std::make_shared<ThresholdOptions>();
  CLI::App* sub = app.add_subcommand(
      "threshold", "detector settings for a false-alarm rate and a shift, with the ARL they give");
  o->arl0_option = sub->add_option("--arl0", o->arl0,
                                   "in-control ARL: mean observations between false alarms, in "
                                   "[2, 1e7] (simulated calibrations: <= 1e4)")
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
  sub->add_option("--detector", o->detector, "cusum, ewma, page_hinkley, glr or bocpd")
      ->check(CLI::IsMember({"cusum", "ewma", "page_hinkley", "glr", "bocpd"}))
      ->capture_default_str();
  sub->add_option("--direction", o->direction, "both, up or down (bocpd: both only)")
      ->check(CLI::IsMember({"both", "up", "down"}))
      ->capture_default_str();
  sub->add_option("--shifts", o->shifts, "comma-separated shifts (sd units) for the ARL table")
      ->capture_default_str();
  sub->add_option("--runs", o->runs,
                  "simulated runs per ARL (page_hinkley, glr, bocpd), >= 100; the 95 % half-width "
                  "shrinks as 1 / sqrt(runs)")
      ->capture_default_str();
  sub->add_flag("--json", o->json, "one JSON line instead of the table");
  return {sub, [o] { return RunThreshold(*o); }};
}

}  // namespace bayline::cli
