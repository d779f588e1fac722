// SIGTERM, SIGINT and SIGHUP delivered as readable events on a file descriptor (signalfd), so the
// supervisor's poll loop handles them like any message: no code runs in signal context at all.
//
// Construct it before any other thread starts (including ZeroMQ's I/O threads): it blocks the three
// signals in the calling thread, and threads created afterwards inherit the mask, so the signals
// stay pending until the supervisor reads them.
#pragma once

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

 private:
  int fd_ = -1;
};

}  // namespace bayline::server
