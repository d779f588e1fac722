#include "clients/cli/replay_spec.h"

#include <google/protobuf/io/tokenizer.h>
#include <google/protobuf/text_format.h>

#include <fstream>
#include <sstream>

#include "clients/cli/input_error.h"
#include "clients/cli/observation_mapping.h"
#include "daemon/pipeline/daemon_config.h"

namespace bayline::cli {
namespace {

class CollectErrors : public google::protobuf::io::ErrorCollector {
 public:
  explicit CollectErrors(std::string file) : file_(std::move(file)) {}
  void AddError(int line, google::protobuf::io::ColumnNumber column,
                const std::string& message) override {
    if (!text_.empty()) text_ += "\n";
    text_ +=
        file_ + ":" + std::to_string(line + 1) + ":" + std::to_string(column + 1) + ": " + message;
  }
  const std::string& text() const { return text_; }

 private:
  std::string file_;
  std::string text_;
};

}  // namespace

bayline::v1::DaemonConfig ConfigFromFlags(const ReplaySpecFlags& f) {
  bayline::v1::DaemonConfig config;
  auto* rule = config.add_rules();
  rule->set_name("replay");
  rule->set_match("**");
  auto* spec = rule->mutable_spec();
  spec->set_model(f.model);
  for (const auto& r : f.regressors) spec->add_regressors(r);
  if (f.no_intercept) spec->set_intercept(false);
  for (const auto& e : SplitList(f.estimators)) spec->add_estimators(e);
  if (f.forgetting != 0) spec->mutable_forgetting()->set_lambda(f.forgetting);
  if (f.half_life_s != 0) spec->mutable_forgetting()->set_half_life_s(f.half_life_s);
  if (f.detect != "none") {
    for (const auto& kind : SplitList(f.detect)) {
      auto* d = spec->add_detectors();
      d->set_kind(kind);
      d->set_arl0(f.arl0);
      d->set_shift(f.shift);
      if (f.has_target) {
        d->set_mode("phase2");
        d->set_target_mean(f.target_mean);
        d->set_target_sd(f.target_sd);
      }
    }
  }
  spec->mutable_publish()->set_every_n(static_cast<uint32_t>(f.every));
  return config;
}

bayline::v1::DaemonConfig ReadConfigFile(const std::string& path) {
  std::ifstream in(path);
  if (!in) throw InputError(path + ": cannot open the config file");
  std::stringstream text;
  text << in.rdbuf();
  bayline::v1::DaemonConfig config;
  google::protobuf::TextFormat::Parser parser;
  CollectErrors errors(path);
  parser.RecordErrorsTo(&errors);
  if (!parser.ParseFromString(text.str(), &config)) {
    throw InputError(errors.text().empty() ? path + ": not a valid config file" : errors.text());
  }
  return config;
}

void CheckConfig(const bayline::v1::DaemonConfig& config, const std::string& origin) {
  auto status = bayline::pipeline::ValidateConfig(config);
  if (!status.ok()) throw InputError(origin + ": invalid configuration: " + status.message());
}

}  // namespace bayline::cli
