# bayline: top-level entry points. `make demo` and `make test` work on a fresh Debian 12 machine:
# they call `make deps`, which installs missing Debian packages (with sudo, the only step that
# needs root, and only when something is missing), then configure, build and run.
BUILD      ?= build
BUILD_TYPE ?= Release
ASAN_BUILD ?= build-asan
JOBS       ?= $(shell nproc)
SUDO       := $(shell [ "$$(id -u)" = 0 ] || echo sudo)
# Debian's clang-format: the tree's .clang-format is checked with this version.
CLANG_FORMAT ?= /usr/bin/clang-format
# The C++ sources held to .clang-format (generated code lives in the build trees, not here).
FORMAT_FILES  = $(shell find estimators daemon clients tests -type f \( -name '*.h' -o -name '*.cc' \) | sort)

DEB_PACKAGES := cmake ninja-build g++ make pkg-config \
  libeigen3-dev libzmq3-dev cppzmq-dev protobuf-compiler libprotobuf-dev \
  libspdlog-dev libcli11-dev libgtest-dev libgmock-dev libbenchmark-dev clang-format \
  clang libclang-rt-14-dev \
  python3 python3-zmq python3-protobuf python3-matplotlib python3-numpy \
  python3-scipy python3-statsmodels python3-mpmath python3-pytest r-base-core r-cran-spc

.PHONY: deps configure build test check format format-check bench demo clean fuzz fuzz-build fuzz-short

deps:
	@missing=$$(for p in $(DEB_PACKAGES); do \
	  dpkg-query -W -f='$${Status}\n' $$p 2>/dev/null | grep -q 'install ok installed' || echo $$p; done); \
	if [ -n "$$missing" ]; then \
	  echo "installing missing Debian packages:" $$missing; \
	  $(SUDO) apt-get update -qq && \
	  DEBIAN_FRONTEND=noninteractive $(SUDO) apt-get install -y -qq --no-install-recommends $$missing >/dev/null; \
	fi

configure: deps
	@cmake -S . -B $(BUILD) -G Ninja -DCMAKE_BUILD_TYPE=$(BUILD_TYPE) >/dev/null

build: configure
	cmake --build $(BUILD) -j $(JOBS)

test: format-check build
	cd $(BUILD) && ctest --output-on-failure -j $(JOBS) --timeout 1500
	$(MAKE) fuzz-short

# Debug build with AddressSanitizer and UndefinedBehaviorSanitizer in its own tree; runs the unit and
# integration tests except those that replace the allocator (label no_sanitizer). The tests' waits
# stretch six-fold (BAYLINE_TEST_TIME_SCALE): this build runs several times slower.
check: deps
	@cmake -S . -B $(ASAN_BUILD) -G Ninja -DCMAKE_BUILD_TYPE=Debug -DBAYLINE_SANITIZE=ON \
	  -DBAYLINE_BUILD_BENCH=OFF >/dev/null
	cmake --build $(ASAN_BUILD) -j $(JOBS)
	cd $(ASAN_BUILD) && UBSAN_OPTIONS=print_stacktrace=1 BAYLINE_TEST_TIME_SCALE=6 \
	  ctest --output-on-failure -j $(JOBS) --timeout 1500 -L 'unit|integration' -LE no_sanitizer

# Rewrites the C++ sources in place to the tree's .clang-format.
format: deps
	@$(CLANG_FORMAT) -i --style=file $(FORMAT_FILES)

# Lists every C++ source that `make format` would change and fails if there is one.
format-check: deps
	@bad=$$(for f in $(FORMAT_FILES); do \
	  $(CLANG_FORMAT) --style=file "$$f" | cmp -s - "$$f" || echo "$$f"; done); \
	if [ -n "$$bad" ]; then \
	  echo "not formatted (run make format):"; echo "$$bad" | sed 's/^/  /'; exit 1; fi

bench: build
	@for b in $(BUILD)/tests/bench/*/bayline_bench_*; do [ -x "$$b" ] && "$$b" --benchmark_min_time=0.2; done; true

demo: build
	clients/demo/run_demo.sh $(BUILD)

clean:
	rm -rf $(BUILD) $(ASAN_BUILD) $(FUZZ_BUILD)

# Fuzzing (tests/fuzz): a separate clang build of only the fuzz targets and what they link, every
# part with AddressSanitizer and UndefinedBehaviorSanitizer. `make fuzz` runs each target for
# FUZZ_SECONDS (new inputs go to $(FUZZ_BUILD)/tests/fuzz/corpus/<target>, findings to
# $(FUZZ_BUILD)/tests/fuzz/artifacts); `make fuzz-short` (part of `make test`) runs each for
# a few seconds from the seed corpus, as ctest label `fuzz`.
FUZZ_BUILD   ?= build-fuzz
FUZZ_SECONDS ?= 600
FUZZ_TARGETS := fuzz_ingest_frame fuzz_control_request fuzz_config_text fuzz_snapshot_restore \
  fuzz_cli_csv fuzz_cli_jsonl

# clang and its sanitizer/libFuzzer runtimes (libclang-rt-14-dev) come with `make deps`.
fuzz-build: deps
	@cmake -S . -B $(FUZZ_BUILD) -G Ninja -DCMAKE_BUILD_TYPE=FuzzO1 -DCMAKE_CXX_FLAGS_FUZZO1=-O1 \
	  -DCMAKE_CXX_COMPILER=clang++ -DBAYLINE_FUZZ=ON -DBAYLINE_BUILD_TESTS=OFF \
	  -DBAYLINE_BUILD_BENCH=OFF >/dev/null
	cmake --build $(FUZZ_BUILD) -j $(JOBS) --target bayline_fuzz_targets

fuzz-short: fuzz-build
	cd $(FUZZ_BUILD) && ctest --output-on-failure -L fuzz

fuzz: fuzz-build
	@set -e; for t in $(FUZZ_TARGETS); do \
	  echo "== $$t: $(FUZZ_SECONDS) s"; \
	  $(FUZZ_BUILD)/tests/fuzz/$$t -max_total_time=$(FUZZ_SECONDS) -timeout=10 -rss_limit_mb=2048 \
	    -print_final_stats=1 -artifact_prefix=$(FUZZ_BUILD)/tests/fuzz/artifacts/$$t- \
	    $(FUZZ_BUILD)/tests/fuzz/corpus/$$t tests/fuzz/corpus/$$t 2>&1 | \
	    grep -E '^(#[0-9]+ +DONE|stat::|==[0-9]+==|SUMMARY|artifact_prefix|Test unit written)' || true; \
	  ls $(FUZZ_BUILD)/tests/fuzz/artifacts/$$t-* >/dev/null 2>&1 && { echo "$$t: findings above"; exit 1; }; \
	done; true
