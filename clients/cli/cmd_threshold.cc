// threshold: from the false-alarm rate a user accepts (--arl0: mean observations between false
// alarms) and the shift to catch (--shift, sd units), the detector settings (calibration.h), the
// config lines that set them, and the ARL over a range of shifts (arl.h).
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
};

est::Direction ToDirection(const std::string& d) {
  if (d == "up") return est::Direction::kUp;
  if (d == "down") return est::Direction::kDown;
  return est::Direction::kBoth;
}

int RunThreshold(const ThresholdOptions& o) {
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
    auto* profile = f["arl"].mutable_list_value();
    for (size_t i = 0; i < shifts.size(); ++i) {
      auto* point = profile->add_values()->mutable_struct_value()->mutable_fields();
      (*point)["shift"].set_number_value(shifts[i]);
      (*point)["arl"].set_number_value(arls[i]);
    }
    std::cout << MessageJsonLine(out) << "\n";
    return 0;
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
  std::cout << "config:   detectors { " << text << "}\n\n";
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
  sub->add_option("--arl0", o->arl0,
                  "in-control ARL: mean observations between false alarms, in [2, 1e7]")
      ->capture_default_str();
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
