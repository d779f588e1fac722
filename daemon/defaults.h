// Defaults shared by the daemon (baylined) and its clients (bayline CLI, Python client), so that
// `baylined &`, `bayline send data.csv`, `bayline ask CHANNEL` work with no flags.
#pragma once

namespace bayline {

// Loopback endpoints of the embedded default configuration.
inline constexpr const char* kDefaultIngestEndpoint = "tcp://127.0.0.1:7601";   // PULL (bound)
inline constexpr const char* kDefaultPublishEndpoint = "tcp://127.0.0.1:7602";  // PUB (bound)
inline constexpr const char* kDefaultControlEndpoint = "tcp://127.0.0.1:7603";  // REP (bound)

// State directory when neither --state-dir nor the config sets one:
// $BAYLINE_STATE_DIR, else $XDG_STATE_HOME/bayline, else $HOME/.local/state/bayline.
inline constexpr const char* kStateDirEnv = "BAYLINE_STATE_DIR";

}  // namespace bayline
