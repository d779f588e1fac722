// One control request to the daemon: a fresh REQ socket per call (a REQ socket whose reply never
// came cannot be reused), a receive timeout, and no lingering on close.
#pragma once

#include <string>

#include "bayline/v1/control.pb.h"

namespace bayline::cli {

// Sends `request` to `endpoint` and returns the reply. Throws CommandError(kExitNoDaemon) when
// no reply arrives within timeout_ms ("no reply from the daemon at <endpoint> within 5 s (is
// baylined running?)"), CommandError(kExitBadInput) when the reply cannot be decoded. A reply with
// ok = false is returned as is.
bayline::v1::Reply CallDaemon(const std::string& endpoint, const bayline::v1::Request& request,
                              int timeout_ms);

}  // namespace bayline::cli
