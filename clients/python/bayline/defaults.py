"""Default daemon endpoints: the same values as daemon/defaults.h (a test checks they agree)."""

DEFAULT_INGEST_ENDPOINT = "tcp://127.0.0.1:7601"   # daemon's PULL (bound)
DEFAULT_PUBLISH_ENDPOINT = "tcp://127.0.0.1:7602"  # daemon's PUB (bound)
DEFAULT_CONTROL_ENDPOINT = "tcp://127.0.0.1:7603"  # daemon's REP (bound)
