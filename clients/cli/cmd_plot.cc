// plot: renders a channel's history from replay / follow JSON Lines into an SVG or PNG. The work
// is done by the Python package (bayline.plot, matplotlib with the Agg backend); this command runs
//   $BAYLINE_PYTHON (default /usr/bin/python3) -m bayline.plot <the same arguments>
// with PYTHONPATH pointing at the package, found in this order:
//   1. $BAYLINE_PYTHONPATH (a directory holding bayline/), if set;
//   2. <dir of this executable>/../python            (build tree: <build>/clients/python)
//   3. <dir of this executable>/../share/bayline/python  (installed: <prefix>/bin/bayline)
//   4. the source tree this executable was built from (<source>/clients/python).
#include <spawn.h>
#include <sys/wait.h>
#include <unistd.h>

#include <cstdlib>
#include <filesystem>
#include <memory>
#include <vector>

#include "clients/cli/command_support.h"
#include "clients/cli/commands.h"

extern char** environ;

namespace bayline::cli {
namespace {

struct PlotOptions {
  std::string input, channel, output, observations, y_label, x_label, units, title, x_axis = "seq";
};

std::filesystem::path FindPythonPackageDir() {
  namespace fs = std::filesystem;
  if (const char* env = std::getenv("BAYLINE_PYTHONPATH")) return env;
  std::error_code ec;
  fs::path exe = fs::read_symlink("/proc/self/exe", ec);
  std::vector<fs::path> candidates;
  if (!ec) {
    candidates.push_back(exe.parent_path() / ".." / "python");
    candidates.push_back(exe.parent_path() / ".." / "share" / "bayline" / "python");
  }
  candidates.push_back(fs::path(BAYLINE_CLIENTS_SOURCE_DIR) / "python");
  for (const auto& c : candidates) {
    if (fs::exists(c / "bayline" / "plot.py", ec)) return fs::weakly_canonical(c, ec);
  }
  throw CommandError(kExitExternal,
                     "cannot find the bayline Python package (set BAYLINE_PYTHONPATH to the "
                     "directory that holds bayline/plot.py)");
}

int RunPlot(const PlotOptions& o) {
  std::string python =
      std::getenv("BAYLINE_PYTHON") ? std::getenv("BAYLINE_PYTHON") : "/usr/bin/python3";
  std::string path = FindPythonPackageDir().string();
  if (const char* old = std::getenv("PYTHONPATH"); old != nullptr && *old != '\0') {
    path += ":" + std::string(old);
  }
  setenv("PYTHONPATH", path.c_str(), 1);
  setenv("MPLBACKEND", "Agg", 1);
  std::vector<std::string> args = {python,   "-m",        "bayline.plot", "--input",
                                   o.input,  "--channel", o.channel,      "--output",
                                   o.output, "--x-axis",  o.x_axis};
  auto add = [&](const char* flag, const std::string& v) {
    if (!v.empty()) {
      args.push_back(flag);
      args.push_back(v);
    }
  };
  add("--observations", o.observations);
  add("--y-label", o.y_label);
  add("--x-label", o.x_label);
  add("--units", o.units);
  add("--title", o.title);
  std::vector<char*> argv;
  for (auto& a : args) argv.push_back(a.data());
  argv.push_back(nullptr);
  pid_t pid = 0;
  if (posix_spawn(&pid, python.c_str(), nullptr, nullptr, argv.data(), environ) != 0) {
    throw CommandError(kExitExternal, "cannot run " + python);
  }
  int status = 0;
  while (waitpid(pid, &status, 0) < 0) {
    if (errno != EINTR) throw CommandError(kExitExternal, "lost the python3 child process");
  }
  if (!WIFEXITED(status)) throw CommandError(kExitExternal, python + " was killed");
  // bayline.plot exits 1 for bad input (its message is already on stderr).
  return WEXITSTATUS(status) == 0 ? 0 : (WEXITSTATUS(status) == 1 ? kExitBadInput : kExitExternal);
}

}  // namespace

Subcommand AddPlotCommand(CLI::App& app) {
  auto o = std::make_shared<PlotOptions>();
  CLI::App* sub = app.add_subcommand(
      "plot", "plot a channel's estimates, intervals and alarms from replay / follow JSON Lines");
  sub->add_option("--input", o->input, "JSON Lines from bayline replay or bayline follow")
      ->required();
  sub->add_option("--channel", o->channel, "channel to plot")->required();
  sub->add_option("--output", o->output, "output image: .svg or .png")->required();
  sub->add_option("--observations", o->observations,
                  "the input data (CSV or JSON Lines with columns channel, y and optionally seq) "
                  "to draw above the estimates");
  sub->add_option("--y-label", o->y_label, "label of the observations (or parameter) axes");
  sub->add_option("--x-label", o->x_label, "label of the horizontal axis");
  sub->add_option("--units", o->units, "units of the observations, shown in the labels");
  sub->add_option("--title", o->title, "figure title (default: the channel name)");
  sub->add_option("--x-axis", o->x_axis, "seq (observation number) or time")
      ->check(CLI::IsMember({"seq", "time"}))
      ->capture_default_str();
  return {sub, [o] { return RunPlot(*o); }};
}

}  // namespace bayline::cli
