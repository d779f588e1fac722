#include "clients/cli/command_support.h"

#include <csignal>

namespace bayline::cli {
namespace {

std::atomic<bool> g_stop{false};

extern "C" void OnStopSignal(int) { g_stop.store(true); }

}  // namespace

zmq::context_t& ZmqContext() {
  static zmq::context_t context(1);
  return context;
}

const std::atomic<bool>& StopRequested() {
  static bool installed = [] {
    struct sigaction action {};
    action.sa_handler = OnStopSignal;
    sigemptyset(&action.sa_mask);
    sigaction(SIGINT, &action, nullptr);
    sigaction(SIGTERM, &action, nullptr);
    return true;
  }();
  (void)installed;
  return g_stop;
}

}  // namespace bayline::cli
