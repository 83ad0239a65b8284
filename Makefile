# Thin wrapper over CMake. The two set-up commands of the README are
# `make demo` and `make test`; both install what is missing first.
BUILD ?= build
JOBS ?= 2
CMAKE_FLAGS ?=
# `make install PREFIX=/opt/ellipsa` (DESTDIR=/staging is honoured for packaging).
PREFIX ?= /usr/local

.PHONY: all deps build test demo bench docs clean sanitize gnumeric-plugin calc-addin install

all: build

deps:
	@scripts/install-deps.sh

$(BUILD)/CMakeCache.txt:
	cmake -S . -B $(BUILD) $(CMAKE_FLAGS)

build: deps $(BUILD)/CMakeCache.txt
	cmake --build $(BUILD) -j$(JOBS)

test: build
	cd $(BUILD) && ctest --output-on-failure -j$(JOBS)

# Library (libellipsa.so.0), header, batch tool, CMake package and pkg-config
# file under PREFIX (cmake/install.cmake; tested by tests/install/).
install: build
	DESTDIR="$(DESTDIR)" cmake --install $(BUILD) --prefix "$(PREFIX)"

demo: build
	@examples/run-demo.sh $(BUILD)

# Benchmarks are off in a plain build (make test does not compile them); this
# turns them on in $(BUILD) (the setting stays in its CMake cache).
bench: deps $(BUILD)/CMakeCache.txt
	cmake -S . -B $(BUILD) -DELLIPSA_BENCHMARKS=ON
	cmake --build $(BUILD) -j$(JOBS)
	@scripts/run-benchmarks.sh $(BUILD)

gnumeric-plugin: build
	@scripts/install-gnumeric-plugin.sh $(BUILD)

calc-addin: build
	@scripts/install-calc-addin.sh $(BUILD)

docs: deps
	doxygen docs/Doxyfile

clean:
	rm -rf $(BUILD)
