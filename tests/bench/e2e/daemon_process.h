// The end-to-end benchmark's handle on a real baylined child process: starts it with the given
// flags (its sockets bound to tcp://127.0.0.1:* so nothing collides), reads the resolved endpoints
// from its "ready" log line, asks its control socket for stats, reads its resident memory, and
// stops it.
#pragma once

#include <sys/types.h>

#include <memory>
#include <string>
#include <thread>
#include <vector>
#include <zmq.hpp>

#include "bayline/v1/control.pb.h"

namespace bayline::bench {

class DaemonProcess {
 public:
  // Starts `baylined` with `args` plus loopback binds and a fresh state dir under `work_dir`.
  // Throws std::runtime_error when it does not report ready within 30 s.
  DaemonProcess(zmq::context_t& context, const std::string& baylined, const std::string& work_dir,
                const std::vector<std::string>& args);
  ~DaemonProcess();  // SIGKILL if still running (benchmarks need no final snapshot)

  const std::string& pull_endpoint() const { return pull_; }
  const std::string& publish_endpoint() const { return publish_; }

  // One control request on a REQ socket kept for the daemon's lifetime (a new connection per poll
  // would add connection set-up work to the daemon being measured).
  bayline::v1::Stats Stats();
  // Polls stats until observations_accepted >= n (bounded by timeout_s); returns the last stats.
  bayline::v1::Stats WaitAccepted(uint64_t n, double timeout_s);
  // Resident set size in bytes (/proc/<pid>/status VmRSS).
  uint64_t RssBytes() const;
  // CPU time (user + system, all threads) the daemon used so far, in seconds (/proc/<pid>/stat):
  // a cost per observation that does not depend on how busy the rest of the machine is.
  double CpuSeconds() const;

 private:
  zmq::context_t& context_;
  pid_t pid_ = -1;
  int stderr_fd_ = -1;
  std::thread log_drain_;
  std::string pull_, publish_, control_;
  std::unique_ptr<zmq::socket_t> req_;
};

}  // namespace bayline::bench
