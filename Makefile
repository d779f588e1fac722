# bayline: top-level entry points. `make demo` and `make test` work on a fresh Debian 12 machine:
# they install whatever Debian packages are missing, configure, build and run.
BUILD      ?= build
BUILD_TYPE ?= Release
JOBS       ?= $(shell nproc)
SUDO       := $(shell [ "$$(id -u)" = 0 ] || echo sudo)

DEB_PACKAGES := cmake ninja-build g++ make pkg-config \
  libeigen3-dev libzmq3-dev cppzmq-dev protobuf-compiler libprotobuf-dev \
  libspdlog-dev libcli11-dev libgtest-dev libgmock-dev libbenchmark-dev \
  python3 python3-zmq python3-protobuf python3-matplotlib python3-numpy \
  python3-scipy python3-statsmodels python3-mpmath python3-pytest r-base-core r-cran-spc

.PHONY: deps configure build test bench demo clean

deps:
	@missing=$$(for p in $(DEB_PACKAGES); do \
	  dpkg-query -W -f='$${Status}\n' $$p 2>/dev/null | grep -q 'install ok installed' || echo $$p; done); \
	if [ -n "$$missing" ]; then \
	  echo "installing missing Debian packages:" $$missing; \
	  $(SUDO) apt-get update -qq && \
	  DEBIAN_FRONTEND=noninteractive $(SUDO) apt-get install -y -qq --no-install-recommends $$missing >/dev/null; \
	fi

configure: deps
	@cmake -S . -B $(BUILD) -G Ninja -DCMAKE_BUILD_TYPE=$(BUILD_TYPE) -DBAYLINE_STRICT=ON >/dev/null

build: configure
	cmake --build $(BUILD) -j $(JOBS)

test: build
	cd $(BUILD) && ctest --output-on-failure -j $(JOBS) --timeout 1500

bench: build
	@for b in $(BUILD)/tests/bench/*/bayline_bench_*; do [ -x "$$b" ] && "$$b" --benchmark_min_time=0.2; done; true

demo: build
	clients/demo/run_demo.sh $(BUILD)

clean:
	rm -rf $(BUILD)
