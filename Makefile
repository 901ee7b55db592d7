# covey — the two set-up commands (`make demo`, `make test`) plus `make bench`.
# Each installs the Debian packages that are missing (apt-get update only when needed),
# configures a Release build in build/, builds, and runs.

DEBIAN_PACKAGES := cmake g++ make pkg-config libeigen3-dev libboost-random-dev libtbb-dev \
  libhdf5-dev hdf5-tools libcli11-dev nlohmann-json3-dev libgtest-dev libbenchmark-dev \
  python3 python3-numpy python3-scipy python3-h5py r-base-core r-cran-posterior r-cran-mass \
  libcairo2-dev graphviz libgraphviz-dev fonts-dejavu-core chromium clang \
  openmpi-bin libopenmpi-dev pybind11-dev python3-pybind11 python3-pandas python3-pytest
JOBS ?= $(shell nproc 2>/dev/null || echo 2)
SUDO := $(shell [ "$$(id -u)" -eq 0 ] || echo sudo)
CMAKE_FLAGS ?=

.PHONY: deps build build-asan check test unit-test asan-test fuzz-smoke fuzz demo bench format cli-docs install clean python

deps:
	@missing=$$(for p in $(DEBIAN_PACKAGES); do \
	  dpkg-query -W -f='$${Status}' $$p 2>/dev/null | grep -q 'install ok installed' || echo $$p; \
	done); \
	if [ -n "$$missing" ]; then \
	  echo "installing missing Debian packages:" $$missing; \
	  $(SUDO) apt-get update -qq && \
	  DEBIAN_FRONTEND=noninteractive $(SUDO) apt-get install -y -qq --no-install-recommends $$missing; \
	fi

build: deps
	cmake -S . -B build -DCMAKE_BUILD_TYPE=Release $(CMAKE_FLAGS) >/dev/null
	cmake --build build -j $(JOBS)

# The sanitizer build uses clang, whose libFuzzer the fuzz targets also need.
build-asan: deps
	CC=clang CXX=clang++ cmake -S . -B build-asan -DCMAKE_BUILD_TYPE=RelWithDebInfo -DCOVEY_SANITIZE=ON -DCOVEY_FUZZ=ON $(CMAKE_FLAGS) >/dev/null
	cmake --build build-asan -j $(JOBS) --target covey covey_tests covey_fuzz_targets

# The fast unit group alone (tests/CMakeLists.txt lists the groups): builds only what it needs.
check: deps
	cmake -S . -B build -DCMAKE_BUILD_TYPE=Release $(CMAKE_FLAGS) >/dev/null
	cmake --build build -j $(JOBS) --target covey_unit_tests
	cd build && ctest --output-on-failure -j $(JOBS) -L unit

unit-test: build
	cd build && ctest --output-on-failure -j $(JOBS)

# The ten-kill crash test (about 2 minutes under ASan) and the peak-memory test (ASan inflates
# every allocation, so its RSS says nothing of the release build) run in the Release suite only, to keep
# `make test` well under 20 minutes on a 2-core machine.
ASAN_SKIP := TenRandomKillsThenResumeEqualsStraightRun|CoverSamplerMemory.CheckMatchesThePeakOfBuildSaveAndLoad
asan-test: build-asan
	cd build-asan && ASAN_OPTIONS=detect_leaks=1 UBSAN_OPTIONS=print_stacktrace=1 \
	  ctest --output-on-failure -j $(JOBS) -E '$(ASAN_SKIP)'

# libFuzzer targets of the readers (tests/fuzz/): FUZZ_SMOKE_SECONDS each in `make test`,
# FUZZ_SECONDS each in `make fuzz`.
FUZZ_SMOKE_SECONDS ?= 20
FUZZ_SECONDS ?= 600
fuzz-smoke: build-asan
	FUZZ_SEED=1 tests/fuzz/run_fuzz.sh build-asan $(FUZZ_SMOKE_SECONDS)

fuzz: build-asan
	tests/fuzz/run_fuzz.sh build-asan $(FUZZ_SECONDS)

test: unit-test asan-test fuzz-smoke

# The Python module (python/) in build/python: PYTHONPATH=build/python /usr/bin/python3, then
# `import covey`; its pytest suite (tests/python/) runs with the other tests (label python).
python: deps
	cmake -S . -B build -DCMAKE_BUILD_TYPE=Release $(CMAKE_FLAGS) >/dev/null
	cmake --build build -j $(JOBS) --target covey covey_python
	cd build && ctest --output-on-failure -L python

demo: build
	bash examples/run_demo.sh

bench: build
	build/bench/covey_bench --benchmark_counters_tabular=true

# Installs headers, libraries, the covey binary, the CMake package and covey.pc under PREFIX.
PREFIX ?= /usr/local
install: build
	cmake --install build --prefix $(PREFIX)

cli-docs: build
	docs/generate_cli_reference.sh build/covey > docs/cli.md

format:
	clang-format -i $$(git ls-files '*.cpp' '*.hpp')

clean:
	rm -rf build build-asan
