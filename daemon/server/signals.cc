#include "daemon/server/signals.h"

#include <fcntl.h>
#include <pthread.h>
#include <signal.h>
#include <sys/signalfd.h>
#include <unistd.h>

namespace bayline::server {

SignalWatcher::SignalWatcher() {
  sigset_t set;
  sigemptyset(&set);
  sigaddset(&set, SIGTERM);
  sigaddset(&set, SIGINT);
  sigaddset(&set, SIGHUP);
  if (pthread_sigmask(SIG_BLOCK, &set, nullptr) != 0) return;
  fd_ = signalfd(-1, &set, SFD_NONBLOCK | SFD_CLOEXEC);
  signal(SIGPIPE, SIG_IGN);  // a vanished peer must not kill the daemon
}

SignalWatcher::~SignalWatcher() {
  if (fd_ >= 0) close(fd_);
}

std::vector<int> SignalWatcher::TakePending() {
  std::vector<int> signals;
  if (fd_ < 0) return signals;
  signalfd_siginfo info;
  while (read(fd_, &info, sizeof info) == ssize_t(sizeof info)) {
    signals.push_back(int(info.ssi_signo));
  }
  return signals;
}

}  // namespace bayline::server
