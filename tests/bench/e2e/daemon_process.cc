#include "tests/bench/e2e/daemon_process.h"

#include <signal.h>
#include <sys/wait.h>
#include <unistd.h>

#include <chrono>
#include <fstream>
#include <map>
#include <sstream>
#include <stdexcept>

namespace bayline::bench {

DaemonProcess::DaemonProcess(zmq::context_t& context, const std::string& baylined,
                             const std::string& work_dir, const std::vector<std::string>& args)
    : context_(context) {
  std::vector<std::string> argv_strings = {baylined,
                                           "--pull-bind",
                                           "tcp://127.0.0.1:*",
                                           "--publish-bind",
                                           "tcp://127.0.0.1:*",
                                           "--control-bind",
                                           "tcp://127.0.0.1:*",
                                           "--state-dir",
                                           work_dir + "/state"};
  argv_strings.insert(argv_strings.end(), args.begin(), args.end());
  std::vector<char*> argv;  // built before fork: the child only calls async-signal-safe functions
  for (auto& s : argv_strings) argv.push_back(s.data());
  argv.push_back(nullptr);
  int pipe_fds[2];
  if (pipe(pipe_fds) != 0) throw std::runtime_error("pipe failed");
  pid_ = fork();
  if (pid_ == 0) {
    dup2(pipe_fds[1], STDERR_FILENO);
    close(pipe_fds[0]);
    close(pipe_fds[1]);
    execv(argv[0], argv.data());
    _exit(127);
  }
  close(pipe_fds[1]);
  stderr_fd_ = pipe_fds[0];
  // Read log lines until "ready: key=value ..." (blocking reads; the daemon prints it in
  // milliseconds, and an exec failure closes the pipe).
  std::string buffer, ready;
  char chunk[4096];
  while (ready.empty()) {
    ssize_t n = read(stderr_fd_, chunk, sizeof chunk);
    if (n <= 0) throw std::runtime_error("baylined exited before it was ready:\n" + buffer);
    buffer.append(chunk, size_t(n));
    size_t at = buffer.find("ready: ");
    if (at != std::string::npos && buffer.find('\n', at) != std::string::npos) {
      ready = buffer.substr(at + 7, buffer.find('\n', at) - at - 7);
    }
  }
  std::map<std::string, std::string> fields;
  std::istringstream words(ready);
  for (std::string kv; words >> kv;) {
    size_t eq = kv.find('=');
    if (eq != std::string::npos) fields[kv.substr(0, eq)] = kv.substr(eq + 1);
  }
  pull_ = fields["pull"];
  publish_ = fields["publish"];
  control_ = fields["control"];
  // Keep draining the log so the daemon never blocks on a full pipe.
  log_drain_ = std::thread([fd = stderr_fd_] {
    char sink[4096];
    while (read(fd, sink, sizeof sink) > 0) {
    }
  });
}

DaemonProcess::~DaemonProcess() {
  req_.reset();
  if (pid_ > 0) {
    kill(pid_, SIGKILL);
    waitpid(pid_, nullptr, 0);
  }
  if (log_drain_.joinable()) log_drain_.join();
  if (stderr_fd_ >= 0) close(stderr_fd_);
}

bayline::v1::Stats DaemonProcess::Stats() {
  if (!req_) {
    req_ = std::make_unique<zmq::socket_t>(context_, zmq::socket_type::req);
    req_->set(zmq::sockopt::linger, 0);
    req_->set(zmq::sockopt::rcvtimeo, 30000);
    req_->connect(control_);
  }
  bayline::v1::Request request;
  request.mutable_stats();
  req_->send(zmq::buffer(request.SerializeAsString()), zmq::send_flags::none);
  zmq::message_t reply_bytes;
  if (!req_->recv(reply_bytes)) throw std::runtime_error("no stats reply from baylined");
  bayline::v1::Reply reply;
  reply.ParseFromArray(reply_bytes.data(), int(reply_bytes.size()));
  return reply.stats();
}

bayline::v1::Stats DaemonProcess::WaitAccepted(uint64_t n, double timeout_s) {
  const auto deadline = std::chrono::steady_clock::now() + std::chrono::duration<double>(timeout_s);
  for (;;) {
    bayline::v1::Stats stats = Stats();
    if (stats.observations_accepted() >= n) return stats;
    if (std::chrono::steady_clock::now() > deadline) {
      throw std::runtime_error("baylined accepted " +
                               std::to_string(stats.observations_accepted()) + " of " +
                               std::to_string(n) + " observations in time");
    }
    std::this_thread::sleep_for(std::chrono::milliseconds(2));
  }
}

uint64_t DaemonProcess::RssBytes() const {
  std::ifstream status("/proc/" + std::to_string(pid_) + "/status");
  for (std::string line; std::getline(status, line);) {
    if (line.rfind("VmRSS:", 0) == 0) return std::stoull(line.substr(6)) * 1024;
  }
  return 0;
}

double DaemonProcess::CpuSeconds() const {
  std::ifstream stat("/proc/" + std::to_string(pid_) + "/stat");
  std::string content((std::istreambuf_iterator<char>(stat)), std::istreambuf_iterator<char>());
  // Fields after the parenthesised command name: state is field 3, utime 14, stime 15.
  std::istringstream fields(content.substr(content.rfind(')') + 2));
  std::string field;
  double utime = 0, stime = 0;
  for (int index = 3; fields >> field; ++index) {
    if (index == 14) utime = std::stod(field);
    if (index == 15) {
      stime = std::stod(field);
      break;
    }
  }
  return (utime + stime) / double(sysconf(_SC_CLK_TCK));
}

}  // namespace bayline::bench
