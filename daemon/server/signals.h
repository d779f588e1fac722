// SIGTERM, SIGINT and SIGHUP delivered as readable events on a file descriptor (signalfd), so the
// supervisor's poll loop handles them like any message: no code runs in signal context at all.
//
// Construct it before any other thread starts (including ZeroMQ's I/O threads): it blocks the three
// signals in the calling thread, and threads created afterwards inherit the mask, so the signals
// stay pending until the supervisor reads them.
//
// During shutdown the supervisor no longer polls: ForceExitOnStopSignal() hands the descriptor to a
// thread of its own, which ends the process at once (std::_Exit(128 + signal number): 143 for
// SIGTERM, 130 for SIGINT) when another SIGTERM or SIGINT arrives, as an operator who asks twice
// expects. Nothing is flushed or saved then: files written atomically (snapshots) keep their
// previous complete version.
#pragma once

#include <functional>
#include <thread>
#include <vector>

namespace bayline::server {

class SignalWatcher {
 public:
  SignalWatcher();
  ~SignalWatcher();
  SignalWatcher(const SignalWatcher&) = delete;
  SignalWatcher& operator=(const SignalWatcher&) = delete;

  // -1 if the signalfd could not be created (then signals keep their default action).
  int fd() const { return fd_; }

  // Signals received since the last call (never blocks).
  std::vector<int> TakePending();

  // From now on a SIGTERM or SIGINT calls `on_force(signal)` (say, to log it) and then ends the
  // process with std::_Exit(ForcedExitCode(signal)); SIGHUP is ignored. Runs on a thread that the
  // destructor (or a second call) stops. With no signalfd it does nothing.
  void ForceExitOnStopSignal(std::function<void(int)> on_force);
  static int ForcedExitCode(int signal) { return 128 + signal; }

 private:
  void StopForceThread();

  int fd_ = -1;
  int wake_fd_ = -1;  // eventfd that ends the force-exit thread
  std::thread force_thread_;
};

}  // namespace bayline::server
