# lopside: `make` builds build/lopside; `make demo` and `make test` first install
# what is missing (as root with apt-get, otherwise they print the command).

PREFIX  ?= /usr/local
DESTDIR ?=
BUILD   ?= build
CC      ?= cc
OPT     ?= -O2 -g
SAN     ?=
PYTHON  ?= /usr/bin/python3

# pkg-config name:Debian package, for the program and for its tests.
BUILD_DEPS := gsl:libgsl-dev xlsxwriter:libxlsxwriter-dev inih:libinih-dev \
              jansson:libjansson-dev nettle:nettle-dev
TEST_DEPS  := check:check
# Debian packages the tests use outside pkg-config (reference computations).
TEST_DEBS  := python3-scipy python3-numpy python3-openpyxl
# The benchmark's numpy reference uses an optimized BLAS, as a scientist's would.
BENCH_DEBS := libopenblas0-pthread

PKGS      = $(foreach d,$(BUILD_DEPS),$(firstword $(subst :, ,$(d))))
PKG_CFLAGS = $(shell pkg-config --cflags $(PKGS))
PKG_LIBS   = $(shell pkg-config --libs $(PKGS))
CHECK_CFLAGS = $(shell pkg-config --cflags check)
CHECK_LIBS   = $(shell pkg-config --libs check)

WARN     := -std=c11 -Wall -Wextra -Wpedantic -Werror
ALL_CFLAGS = $(WARN) $(OPT) $(SAN) -fopenmp -Iinclude -D_POSIX_C_SOURCE=200809L \
             $(PKG_CFLAGS) $(CFLAGS)
ALL_LDLIBS = $(PKG_LIBS) -lm $(LDLIBS)

# src/LAYER/*.c: each layer includes only the layers below it (tests/check_layers.py).
LIB_SRC  := $(filter-out src/app/%,$(wildcard src/*/*.c))
LIB_OBJ  := $(patsubst src/%.c,$(BUILD)/obj/%.o,$(LIB_SRC)) $(BUILD)/obj/demo_problem.o
UNIT_SRC := $(wildcard tests/unit/*.c)
UNIT_OBJ := $(patsubst tests/unit/%.c,$(BUILD)/unit/%.o,$(UNIT_SRC))
HEADERS  := $(wildcard include/lopside/*/*.h) $(wildcard src/*/*.h) $(wildcard tests/unit/*.h)

.PHONY: all demo test check-asan bench install clean deps deps-test build-tests run-tests \
        random-search

all: $(BUILD)/lopside

# V=1 shows the whole compiler command lines.
Q := $(if $(V),,@)

$(BUILD)/obj/%.o: src/%.c $(HEADERS) | $(BUILD)/obj
	@echo "  CC      $<"
	@mkdir -p $(dir $@)
	$(Q)$(CC) $(ALL_CFLAGS) -c $< -o $@

# The demo problem is compiled in, so `lopside demo` works from any folder.
$(BUILD)/demo_problem.c: examples/tone_detection.ini | $(BUILD)/obj
	$(Q)awk 'BEGIN { print "#include \"lopside/input/demo.h\""; \
	             print "const char lop_demo_name[] = \"tone_detection.ini\";"; \
	             print "const char *const lop_demo_lines[] = {" } \
	     { gsub(/\\/, "\\\\"); gsub(/"/, "\\\""); printf "    \"%s\\n\",\n", $$0 } \
	     END { print "    NULL,"; print "};" }' $< > $@

$(BUILD)/obj/demo_problem.o: $(BUILD)/demo_problem.c include/lopside/input/demo.h
	@echo "  CC      $<"
	$(Q)$(CC) $(ALL_CFLAGS) -c $< -o $@

$(BUILD)/lopside: $(BUILD)/obj/app/main.o $(LIB_OBJ)
	@echo "  LINK    $@"
	$(Q)$(CC) $(ALL_CFLAGS) $^ -o $@ $(ALL_LDLIBS)

$(BUILD)/unit/%.o: tests/unit/%.c $(HEADERS) | $(BUILD)/unit
	@echo "  CC      $<"
	$(Q)$(CC) $(ALL_CFLAGS) $(CHECK_CFLAGS) -c $< -o $@

$(BUILD)/unit_tests: $(UNIT_OBJ) $(LIB_OBJ)
	@echo "  LINK    $@"
	$(Q)$(CC) $(ALL_CFLAGS) $^ -o $@ $(ALL_LDLIBS) $(CHECK_LIBS)

$(BUILD)/obj $(BUILD)/unit:
	mkdir -p $@

build-tests: $(BUILD)/lopside $(BUILD)/unit_tests

run-tests: build-tests
	LOPSIDE=$(BUILD)/lopside UNIT_TESTS=$(BUILD)/unit_tests PYTHON=$(PYTHON) \
	    sh tests/run_all.sh

demo: deps
	$(MAKE) --no-print-directory all
	$(BUILD)/lopside demo

test: deps deps-test
	$(MAKE) --no-print-directory run-tests

# The same tests, built with AddressSanitizer and UndefinedBehaviorSanitizer.
check-asan: deps deps-test
	ASAN_OPTIONS=detect_leaks=1:abort_on_error=1 UBSAN_OPTIONS=halt_on_error=1:print_stacktrace=1 \
	$(MAKE) --no-print-directory BUILD=build/asan OPT="-O1 -g -fno-omit-frame-pointer" \
	    SAN="-fsanitize=address,undefined -fno-sanitize-recover=all" run-tests

# Timings of an optimized build on problems of our own (tests/bench/run.sh).
bench: deps deps-test
	$(call install_missing,,$(BENCH_DEBS))
	$(MAKE) --no-print-directory BUILD=build/bench OPT="-O3 -march=native -g" build/bench/lopside
	$(CC) -std=c11 -O3 -march=native -fopenmp -D_POSIX_C_SOURCE=200809L tests/bench/floor.c \
	    -o build/bench/floor -lm
	LOPSIDE=build/bench/lopside FLOOR=build/bench/floor PYTHON=$(PYTHON) sh tests/bench/run.sh

# A longer seeded random search against the continuous model than the tests run:
# make random-search N=1000 SEED=7 prints each failure and the worst error per group.
N    ?= 300
SEED ?= 2
random-search: deps deps-test
	$(MAKE) --no-print-directory all
	LOPSIDE=$(BUILD)/lopside $(PYTHON) tests/reference/check_continuous.py --only random \
	    --random $(N) --seed $(SEED) --details 0

install: all
	install -D -m 755 $(BUILD)/lopside $(DESTDIR)$(PREFIX)/bin/lopside
	install -d $(DESTDIR)$(PREFIX)/share/doc/lopside/examples
	install -m 644 examples/*.ini $(DESTDIR)$(PREFIX)/share/doc/lopside/examples/

clean:
	rm -rf build

# Installs what pkg-config cannot find (as root), or prints the command to do it.
define install_missing
	@missing=""; \
	command -v pkg-config >/dev/null 2>&1 || missing="pkg-config"; \
	for pair in $(1); do \
	    pkg-config --exists "$${pair%%:*}" 2>/dev/null || missing="$$missing $${pair#*:}"; \
	done; \
	for deb in $(2); do \
	    dpkg-query -W -f='$${Status}' "$$deb" 2>/dev/null | grep -q 'ok installed' || \
	        missing="$$missing $$deb"; \
	done; \
	if [ -z "$$missing" ]; then exit 0; fi; \
	echo "lopside needs:$$missing"; \
	if [ "$$(id -u)" = 0 ]; then \
	    apt-get update -qq && DEBIAN_FRONTEND=noninteractive apt-get install -y -qq $$missing; \
	else \
	    echo "run: sudo apt-get install -y$$missing"; exit 1; \
	fi
endef

deps:
	$(call install_missing,$(BUILD_DEPS),)

deps-test:
	$(call install_missing,$(TEST_DEPS),$(TEST_DEBS))
