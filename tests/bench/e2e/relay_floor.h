// The latency floor of baylined's thread structure, measured without baylined: a relay in its own
// ZeroMQ context (so with its own I/O thread, as a separate daemon has) that receives on a PULL
// socket in an ingest thread, hands each frame to a worker thread through the daemon's own
// WorkQueue, and publishes three two-part messages per frame on a PUB socket (as baylined does
// for the three estimators of a default-rule channel). No decoding, no estimation.
//
// Send -> publication latency through it is what any daemon with that structure (two ZeroMQ hops
// over tcp loopback, one thread hand-off between them) pays before doing any work of its own, so
// baylined's latency minus this floor is the cost of baylined's own work.
#pragma once

#include <functional>
#include <string>
#include <zmq.hpp>

#include "tests/bench/e2e/load.h"

namespace bayline::bench {

// Starts the relay (without the worker thread when !hand_off: the ingest thread publishes, so only
// the two ZeroMQ hops remain), subscribes to it from `ctx`, calls send(ingest endpoint) (which
// must send two-part [8-byte wall-clock ns stamp, frame] messages and return when done), and
// returns the latency percentiles from stamp to the first of the three publications of each frame.
Percentiles RelayLatency(zmq::context_t& ctx, bool hand_off,
                         const std::function<void(const std::string&)>& send);

}  // namespace bayline::bench
