# Top-level wrapper around CMake. `make check` and `make demo` each do the whole set-up on
# a fresh Debian machine: install missing packages, configure, build, then test or demo.
BUILD ?= build
JOBS ?= $(shell nproc 2>/dev/null || echo 2)
CMAKE_FLAGS ?=

.PHONY: all deps configure build check demo clean bench

all: build

deps:
	@scripts/deps.sh

$(BUILD)/CMakeCache.txt: | deps
	cmake -S . -B $(BUILD) $(CMAKE_FLAGS)

configure: deps $(BUILD)/CMakeCache.txt

build: configure
	cmake --build $(BUILD) -j $(JOBS)

check: build
	cd $(BUILD) && ctest --output-on-failure -j $(JOBS)

demo: build
	@scripts/demo.sh $(BUILD)/dipolize

bench: build
	benchmarks/run.sh $(BUILD)

clean:
	rm -rf $(BUILD)
