#include "daemon/server/signals.h"

#include <fcntl.h>
#include <poll.h>
#include <pthread.h>
#include <signal.h>
#include <sys/eventfd.h>
#include <sys/signalfd.h>
#include <unistd.h>

#include <cerrno>
#include <cstdint>
#include <cstdlib>

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
  StopForceThread();
  if (fd_ >= 0) close(fd_);
}

void SignalWatcher::ForceExitOnStopSignal(std::function<void(int)> on_force) {
  StopForceThread();
  if (fd_ < 0) return;
  wake_fd_ = eventfd(0, EFD_CLOEXEC);
  if (wake_fd_ < 0) return;
  force_thread_ = std::thread([this, on_force = std::move(on_force)] {
    pthread_setname_np(pthread_self(), "bl-signals");
    pollfd fds[] = {{fd_, POLLIN, 0}, {wake_fd_, POLLIN, 0}};
    for (;;) {
      if (poll(fds, 2, -1) < 0 && errno != EINTR) return;
      if (fds[1].revents & POLLIN) return;
      for (int signal : TakePending()) {
        if (signal == SIGTERM || signal == SIGINT) {
          on_force(signal);
          std::_Exit(ForcedExitCode(signal));
        }
      }
    }
  });
}

void SignalWatcher::StopForceThread() {
  if (!force_thread_.joinable()) return;
  const uint64_t one = 1;
  while (write(wake_fd_, &one, sizeof one) < 0 && errno == EINTR) {
  }
  force_thread_.join();
  close(wake_fd_);
  wake_fd_ = -1;
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
