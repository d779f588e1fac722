// What every subcommand shares: the process-wide ZeroMQ context, the stop flag set by SIGINT /
// SIGTERM, and the exceptions that map to exit statuses.
//
// Exit statuses of `bayline`: 0 success; 1 bad input, bad usage or an error reply from the daemon;
// 2 the daemon did not answer or did not take data within the timeout; 3 an external program
// (python3 for `plot`) failed.
#pragma once

#include <atomic>
#include <stdexcept>
#include <string>
#include <zmq.hpp>

namespace bayline::cli {

// A failure with its exit status; the message is printed as "bayline <command>: <message>".
class CommandError : public std::runtime_error {
 public:
  CommandError(int exit_status, const std::string& message)
      : std::runtime_error(message), exit_status_(exit_status) {}
  int exit_status() const { return exit_status_; }

 private:
  int exit_status_;
};

inline constexpr int kExitBadInput = 1;
inline constexpr int kExitNoDaemon = 2;
inline constexpr int kExitExternal = 3;

zmq::context_t& ZmqContext();

// Installs SIGINT / SIGTERM handlers (once) that set the flag; the handler does nothing else.
const std::atomic<bool>& StopRequested();

}  // namespace bayline::cli
