// replay: run the pipeline library offline over a CSV or JSON Lines file, with no daemon, and
// print every publication as one JSON line (json_line.h, as `bayline follow` prints what the
// daemon publishes). With --output FILE the lines go to FILE.tmp, renamed to FILE only when the
// whole input was processed; on an input error nothing is left behind.
#include <unistd.h>

#include <chrono>
#include <cstdio>
#include <filesystem>
#include <iostream>
#include <memory>

#include "clients/cli/command_support.h"
#include "clients/cli/commands.h"
#include "clients/cli/input_error.h"
#include "clients/cli/json_line.h"
#include "clients/cli/mapping_options.h"
#include "clients/cli/progress_bar.h"
#include "clients/cli/record_reader.h"
#include "clients/cli/replay_spec.h"
#include "daemon/pipeline/pipeline.h"
#include "daemon/pipeline/publication_sink.h"

namespace bayline::cli {
namespace {

// A fleet budget anywhere in `config`: at the top level or on a detector of a rule.
bool BudgetsFalseAlarmsPerDay(const bayline::v1::DaemonConfig& config) {
  if (config.false_alarms_per_day() > 0) return true;
  for (const auto& rule : config.rules()) {
    for (const auto& detector : rule.spec().detectors()) {
      if (detector.false_alarms_per_day() > 0) return true;
    }
  }
  return false;
}

struct ReplayOptions {
  std::string input;
  std::string output;
  std::string config_file;
  MappingFlags flags;
  ReplaySpecFlags spec;
  CLI::Option* spec_options[10] = {};
};

class JsonLinesSink : public bayline::pipeline::PublicationSink {
 public:
  explicit JsonLinesSink(std::FILE* out) : out_(out) {}
  void Publish(const std::string&, const bayline::v1::Publication& publication) override {
    line_ = ToJsonLine(publication);
    line_ += '\n';
    if (std::fwrite(line_.data(), 1, line_.size(), out_) != line_.size()) failed_ = true;
  }
  bool failed() const { return failed_; }

 private:
  std::FILE* out_;
  std::string line_;
  bool failed_ = false;
};

// The output file, written under a temporary name and renamed on Commit().
class OutputFile {
 public:
  explicit OutputFile(const std::string& path) : path_(path) {
    if (path_.empty() || path_ == "-") {
      file_ = stdout;
      return;
    }
    temp_ = path_ + ".tmp";
    file_ = std::fopen(temp_.c_str(), "wb");
    if (file_ == nullptr) throw InputError(path_ + ": cannot write the output file");
  }
  ~OutputFile() {
    if (file_ != stdout && file_ != nullptr) {
      std::fclose(file_);
      std::remove(temp_.c_str());
    }
  }
  std::FILE* get() { return file_; }
  void Commit() {
    if (file_ == stdout) {
      std::fflush(stdout);
      return;
    }
    bool ok = std::fflush(file_) == 0 && fsync(fileno(file_)) == 0;
    ok = std::fclose(file_) == 0 && ok;
    file_ = nullptr;
    if (!ok || std::rename(temp_.c_str(), path_.c_str()) != 0) {
      std::remove(temp_.c_str());
      throw InputError(path_ + ": writing the output file failed");
    }
  }

 private:
  std::string path_, temp_;
  std::FILE* file_ = nullptr;
};

int RunReplay(ReplayOptions& o) {
  bool spec_flags_given = false;
  for (CLI::Option* opt : o.spec_options) {
    if (opt != nullptr && opt->count() > 0) spec_flags_given = true;
  }
  bayline::v1::DaemonConfig config;
  if (!o.config_file.empty()) {
    if (spec_flags_given) {
      throw InputError(
          "--config and the channel-spec flags (--model, --estimators, --forgetting, "
          "--half-life, --detect, --arl0, --shift, --target-*, --every, "
          "--no-intercept) exclude each other");
    }
    config = ReadConfigFile(o.config_file);
    CheckConfig(config, o.config_file);
    if (BudgetsFalseAlarmsPerDay(config) && o.flags.mapping.time.empty()) {
      throw InputError(o.config_file +
                       ": false_alarms_per_day sets each channel's threshold from its observation "
                       "rate, learned from elapsed time: it needs --time COL");
    }
  } else {
    if (o.spec.half_life_s > 0 && o.flags.mapping.time.empty()) {
      throw InputError("--half-life forgets by elapsed time: it needs --time COL");
    }
    if (o.spec.forgetting != 0 && o.spec.half_life_s != 0) {
      throw InputError("--forgetting and --half-life exclude each other");
    }
    o.spec.regressors = SplitList(o.flags.x_list);
    config = ConfigFromFlags(o.spec);
    CheckConfig(config, "replay flags");
  }

  RecordReader reader(o.input, ParseInputFormat(o.flags.format));
  ObservationMapper mapper(ResolveMapping(o.flags, o.input, SeqPolicy::kRowNumber),
                           reader.display_name());
  if (reader.is_csv()) mapper.CheckHeader(reader.header());

  bayline::pipeline::Pipeline pipeline(config);
  OutputFile output(o.output);
  JsonLinesSink sink(output.get());
  ProgressBar progress("replay " + reader.display_name());
  Record record;
  bayline::v1::Observation obs;
  uint64_t rows = 0;
  while (reader.Next(&record)) {
    mapper.Map(record, &obs);
    pipeline.Process(obs, /*arrival_ns=*/0, sink);
    if ((++rows & 1023) == 0) progress.Update(reader.Progress(), rows);
    if (sink.failed()) throw InputError("writing the output failed");
  }
  progress.Finish(rows);
  output.Commit();
  return 0;
}

}  // namespace

Subcommand AddReplayCommand(CLI::App& app) {
  auto o = std::make_shared<ReplayOptions>();
  CLI::App* sub = app.add_subcommand(
      "replay",
      "run the estimation pipeline offline over a file and print publications as JSON "
      "Lines (no daemon)");
  sub->add_option("--input", o->input, "CSV file with a header row, or .jsonl")->required();
  sub->add_option("--output", o->output, "output file (default stdout)");
  sub->add_option("--config", o->config_file,
                  "the daemon's config file (its rules apply) instead of the spec flags");
  AddMappingOptions(sub, &o->flags);
  ReplaySpecFlags& s = o->spec;
  int i = 0;
  o->spec_options[i++] =
      sub->add_option("--model", s.model,
                      "auto, linear, gaussian, lognormal, poisson, binomial, exponential, gamma, "
                      "logistic or poisson_regression")
          ->capture_default_str();
  o->spec_options[i++] =
      sub->add_flag("--no-intercept", s.no_intercept, "regression models: no intercept column");
  o->spec_options[i++] =
      sub->add_option("--estimators", s.estimators,
                      "comma-separated subset of ls, ml, map (default: all the model allows)");
  o->spec_options[i++] =
      sub->add_option("--forgetting", s.forgetting, "forgetting factor lambda in (0, 1]");
  o->spec_options[i++] = sub->add_option(
      "--half-life", s.half_life_s, "forget by elapsed time: half-life in seconds (needs --time)");
  o->spec_options[i++] =
      sub->add_option("--detect", s.detect,
                      "comma-separated detectors: cusum, ewma, page_hinkley, glr, bocpd, "
                      "recursive_cusum, recursive_cusum_sq, band; or none")
          ->capture_default_str();
  o->spec_options[i++] = sub->add_option("--arl0", s.arl0,
                                         "in-control average run length (observations between "
                                         "false alarms)")
                             ->capture_default_str();
  o->spec_options[i++] = sub->add_option("--shift", s.shift, "design shift to detect, in sd units")
                             ->capture_default_str();
  CLI::Option* mean = sub->add_option("--target-mean", s.target_mean,
                                      "Phase II: in-control mean of the watched innovations");
  CLI::Option* sd = sub->add_option("--target-sd", s.target_sd, "Phase II: in-control sd");
  mean->needs(sd);
  sd->needs(mean);
  o->spec_options[i++] = mean;
  o->spec_options[i++] =
      sub->add_option("--every", s.every, "publish an estimate every N observations")
          ->check(CLI::PositiveNumber)
          ->capture_default_str();
  return {sub, [o, mean] {
            o->spec.has_target = mean->count() > 0;
            return RunReplay(*o);
          }};
}

}  // namespace bayline::cli
