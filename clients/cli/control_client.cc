#include "clients/cli/control_client.h"

#include "clients/cli/command_support.h"

namespace bayline::cli {

bayline::v1::Reply CallDaemon(const std::string& endpoint, const bayline::v1::Request& request,
                              int timeout_ms) {
  zmq::socket_t socket(ZmqContext(), zmq::socket_type::req);
  socket.set(zmq::sockopt::linger, 0);
  socket.set(zmq::sockopt::rcvtimeo, timeout_ms);
  socket.set(zmq::sockopt::sndtimeo, timeout_ms);
  try {
    socket.connect(endpoint);
  } catch (const zmq::error_t& e) {
    throw CommandError(kExitBadInput, "bad control endpoint '" + endpoint + "': " + e.what());
  }
  std::string bytes = request.SerializeAsString();
  std::string waited = std::to_string(timeout_ms / 1000.0);
  waited.erase(waited.find_last_not_of('0') + 1);
  if (waited.back() == '.') waited.pop_back();
  const std::string no_daemon = "no reply from the daemon at " + endpoint + " within " + waited +
                                " s (is baylined running? --control sets the endpoint)";
  if (!socket.send(zmq::buffer(bytes), zmq::send_flags::none)) {
    throw CommandError(kExitNoDaemon, no_daemon);
  }
  zmq::message_t message;
  if (!socket.recv(message, zmq::recv_flags::none)) {
    throw CommandError(kExitNoDaemon, no_daemon);
  }
  bayline::v1::Reply reply;
  if (!reply.ParseFromArray(message.data(), static_cast<int>(message.size()))) {
    throw CommandError(kExitBadInput, "undecodable reply from " + endpoint);
  }
  return reply;
}

}  // namespace bayline::cli
