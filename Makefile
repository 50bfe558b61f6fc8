# SPDX-License-Identifier: GPL-3.0-or-later
# weft: one Makefile, no autotools.  Output goes to build/.
#
#   make            build weftd (build/weftd) and the client (build/weft)
#   make check      unit tests, integration tests, reference checks
#   make check-unit unit tests only
#   make demo       build, start weftd on demo.db with the demo network
#   make clean

CC       ?= cc
PYTHON   ?= /usr/bin/python3
BUILD    ?= build
PREFIX   ?= /usr/local
SANITIZER ?=

PKGS     := libmicrohttpd jansson sqlite3 libsystemd
WARN     := -Wall -Wextra -Wpedantic -Wshadow -Wstrict-prototypes \
            -Wmissing-prototypes -Wformat=2 -Wno-format-nonliteral
CFLAGS   ?= -O2 -g
CFLAGS   += -std=c11 -D_GNU_SOURCE $(WARN) -MMD -MP -pthread
ifneq ($(WERROR),)
CFLAGS   += -Werror
endif
ifneq ($(SANITIZER),)
CFLAGS   += -fsanitize=$(SANITIZER) -fno-omit-frame-pointer
LDFLAGS  += -fsanitize=$(SANITIZER)
# UBSan only prints by default: make undefined behaviour fail the tests.
export UBSAN_OPTIONS ?= halt_on_error=1:print_stacktrace=1
endif
PKG_CFLAGS := $(shell pkg-config --cflags $(PKGS) 2>/dev/null)
PKG_LIBS   := $(shell pkg-config --libs $(PKGS) 2>/dev/null)
LDLIBS   += $(PKG_LIBS) -lz -lglpk -lm -pthread

BASE_SRC    := $(wildcard daemon/base/*.c)
# Fault injection points (daemon/base/fault.h) exist only in test builds:
# make FAULTS=1 BUILD=build-faults (see check-faults).
ifneq ($(FAULTS),)
CFLAGS   += -DWEFT_FAULTS
else
BASE_SRC    := $(filter-out daemon/base/fault.c,$(BASE_SRC))
endif
ENGINE_SRC  := $(wildcard daemon/engine/*.c)
STORAGE_SRC := $(wildcard storage/*.c)
API_SRC     := $(wildcard api/*.c)
DAEMON_SRC  := $(wildcard daemon/*.c)
SCHEMA_SQL  := $(sort $(wildcard storage/schema/*.sql))

obj = $(patsubst %.c,$(BUILD)/obj/%.o,$(1))

LIBBASE    := $(BUILD)/libbase.a
LIBENGINE  := $(BUILD)/libengine.a
LIBSTORAGE := $(BUILD)/libstorage.a
LIBAPI     := $(BUILD)/libapi.a
WEFTD      := $(BUILD)/weftd
WEFT       := $(BUILD)/weft
SCHEMA_C   := $(BUILD)/gen/schema_sql.c

all: $(WEFTD) $(WEFT)

# A change of flags rebuilds everything.
$(BUILD)/flags: FORCE
	@mkdir -p $(BUILD)
	@echo '$(CC) $(CFLAGS) $(PKG_CFLAGS) $(LDFLAGS)' | cmp -s - $@ || \
	    echo '$(CC) $(CFLAGS) $(PKG_CFLAGS) $(LDFLAGS)' > $@

$(BUILD)/obj/%.o: %.c $(BUILD)/flags
	@mkdir -p $(dir $@)
	$(CC) $(CFLAGS) $(PKG_CFLAGS) -c $< -o $@

# The schema migrations are compiled in: each .sql file becomes one string.
$(SCHEMA_C): $(SCHEMA_SQL) storage/embed.sh
	@mkdir -p $(dir $@)
	sh storage/embed.sh $(SCHEMA_SQL) > $@

$(BUILD)/obj/gen/schema_sql.o: $(SCHEMA_C) $(BUILD)/flags
	@mkdir -p $(dir $@)
	$(CC) $(CFLAGS) -c $< -o $@

# The network map page (api/web/) is compiled in too: each file one array.
WEB_FILES := $(sort $(wildcard api/web/*))
WEB_C     := $(BUILD)/gen/web_files.c
$(WEB_C): $(WEB_FILES) api/web_embed.sh
	@mkdir -p $(dir $@)
	sh api/web_embed.sh $(WEB_FILES) > $@.tmp && mv $@.tmp $@

$(BUILD)/obj/gen/web_files.o: $(WEB_C) $(BUILD)/flags
	@mkdir -p $(dir $@)
	$(CC) $(CFLAGS) -c $< -o $@

$(LIBBASE): $(call obj,$(BASE_SRC))
	$(AR) rcs $@ $^
$(LIBENGINE): $(call obj,$(ENGINE_SRC))
	$(AR) rcs $@ $^
$(LIBSTORAGE): $(call obj,$(STORAGE_SRC)) $(BUILD)/obj/gen/schema_sql.o
	$(AR) rcs $@ $^
$(LIBAPI): $(call obj,$(API_SRC)) $(BUILD)/obj/gen/web_files.o
	$(AR) rcs $@ $^

$(WEFTD): $(call obj,$(DAEMON_SRC)) $(LIBAPI) $(LIBSTORAGE) $(LIBENGINE) $(LIBBASE)
	$(CC) $(LDFLAGS) -o $@ $^ $(LDLIBS)

# ---- the client, weft (api/client/): libcurl and jansson ----
# Its offline mode (weft solve) links the engine and, of the API layer,
# only the plan codec and the number writer it needs: the rest of
# libapi.a would pull in libmicrohttpd and the service.
CLIENT_SRC  := $(wildcard api/client/*.c)
CLIENT_OBJ  := $(call obj,$(CLIENT_SRC)) $(BUILD)/obj/api/codec_plan.o \
               $(BUILD)/obj/api/codec_json.o
CLIENT_CFLAGS := $(shell pkg-config --cflags libcurl 2>/dev/null)
CLIENT_LIBS := $(shell pkg-config --libs libcurl jansson 2>/dev/null)
$(BUILD)/obj/api/client/%.o: api/client/%.c $(BUILD)/flags
	@mkdir -p $(dir $@)
	$(CC) $(CFLAGS) $(PKG_CFLAGS) $(CLIENT_CFLAGS) -c $< -o $@
$(WEFT): $(CLIENT_OBJ) $(LIBENGINE) $(LIBBASE)
	$(CC) $(LDFLAGS) -o $@ $^ $(CLIENT_LIBS) -lglpk -lm -pthread

# ---- weft-mpisweep (daemon/mpisweep/): a sweep on MPI ranks ----
# Not part of all: built by make mpi and make check-mpi, with mpicc
# (Open MPI: openmpi-bin, libopenmpi-dev) driving $(CC).  It links the
# sweep's scenarios (daemon/sweepset.o, as weftd does), the snapshot and
# sweep codecs, storage, engine and base; never http.c or the service.
MPICC      ?= mpicc
MPISWEEP   := $(BUILD)/weft-mpisweep
MPI_SRC    := $(wildcard daemon/mpisweep/*.c)
MPI_OBJ    := $(call obj,$(MPI_SRC) daemon/sweepset.c api/codec_snapshot.c \
              api/codec_sweep.c api/codec_model.c api/codec_strict.c \
              api/codec_json.c)
$(BUILD)/obj/daemon/mpisweep/%.o: daemon/mpisweep/%.c $(BUILD)/flags
	@mkdir -p $(dir $@)
	OMPI_CC=$(CC) $(MPICC) $(CFLAGS) $(PKG_CFLAGS) -c $< -o $@
$(MPISWEEP): $(MPI_OBJ) $(LIBSTORAGE) $(LIBENGINE) $(LIBBASE)
	OMPI_CC=$(CC) $(MPICC) $(LDFLAGS) -o $@ $^ \
	    $(shell pkg-config --libs jansson sqlite3 2>/dev/null) -lglpk -lm -pthread
mpi: $(MPISWEEP)
.PHONY: mpi

# ---- unit tests: a layer's tests link only that layer and those below ----
UNIT_BASE    := $(patsubst tests/unit/%.c,$(BUILD)/tests/%,$(wildcard tests/unit/base/*_test.c))
UNIT_ENGINE  := $(patsubst tests/unit/%.c,$(BUILD)/tests/%,$(wildcard tests/unit/engine/*_test.c))
UNIT_STORAGE := $(patsubst tests/unit/%.c,$(BUILD)/tests/%,$(wildcard tests/unit/storage/*_test.c))
UNIT_API     := $(patsubst tests/unit/%.c,$(BUILD)/tests/%,$(wildcard tests/unit/api/*_test.c))
UNIT_ALL     := $(UNIT_BASE) $(UNIT_ENGINE) $(UNIT_STORAGE) $(UNIT_API)

$(UNIT_BASE): $(BUILD)/tests/%: $(BUILD)/obj/tests/unit/%.o $(LIBBASE)
	@mkdir -p $(dir $@)
	$(CC) $(LDFLAGS) -o $@ $^ -lm -pthread
$(UNIT_ENGINE): $(BUILD)/tests/%: $(BUILD)/obj/tests/unit/%.o $(LIBENGINE) $(LIBBASE)
	@mkdir -p $(dir $@)
	$(CC) $(LDFLAGS) -o $@ $^ -lglpk -lm -pthread
$(UNIT_STORAGE): $(BUILD)/tests/%: $(BUILD)/obj/tests/unit/%.o $(LIBSTORAGE) $(LIBENGINE) $(LIBBASE)
	@mkdir -p $(dir $@)
	$(CC) $(LDFLAGS) -o $@ $^ $(shell pkg-config --libs sqlite3) -lglpk -lm -pthread
$(UNIT_API): $(BUILD)/tests/%: $(BUILD)/obj/tests/unit/%.o $(LIBAPI) $(LIBENGINE) $(LIBBASE)
	@mkdir -p $(dir $@)
	$(CC) $(LDFLAGS) -o $@ $^ $(LDLIBS)

# The /metrics texts render the daemon's counters (daemon/stats.c).
$(BUILD)/tests/api/metrics_test: $(BUILD)/obj/daemon/stats.o

# The engine's timing driver (tests/bench): not part of make check.
$(BUILD)/tests/bench/engine_bench: $(BUILD)/obj/tests/bench/engine_bench.o $(LIBENGINE) $(LIBBASE)
	@mkdir -p $(dir $@)
	$(CC) $(LDFLAGS) -o $@ $^ -lglpk -lm -pthread

check-unit: $(UNIT_ALL)
	@fail=0; for t in $(UNIT_ALL); do \
	    echo "== $$t"; $$t || fail=1; \
	done; exit $$fail

check-integration: $(WEFTD)
	WEFTD=$(abspath $(WEFTD)) $(PYTHON) tests/integration/run.py
	WEFTD=$(abspath $(WEFTD)) $(PYTHON) tests/integration/plan_pages.py

check-reference: $(WEFTD)
	WEFTD=$(abspath $(WEFTD)) $(PYTHON) tests/reference/run.py

check: check-unit check-integration check-reference check-client check-monitoring check-browser check-openapi fuzz-ci check-durability check-faults check-security check-service check-asan-unit check-mpi

# Bearer tokens (weftd token), roles per route, the audit log, HTTPS with
# a self-signed certificate (openssl) checked by curl.
check-security: $(WEFTD)
	WEFTD=$(abspath $(WEFTD)) $(PYTHON) tests/integration/security.py
.PHONY: check-security

# /metrics scraped by a real Prometheus, ETag/304, long polls, event streams.
check-monitoring: $(WEFTD)
	WEFTD=$(abspath $(WEFTD)) $(PYTHON) tests/integration/monitoring.py
.PHONY: check-monitoring

# The network map page in headless Chromium (Debian's chromium,
# chromium-driver, python3-selenium); screenshots go to build/artifacts/.
check-browser: $(WEFTD)
	WEFTD=$(abspath $(WEFTD)) $(PYTHON) tests/browser/map_test.py
.PHONY: check-browser

# weft-mpisweep under mpirun -np 2 (127.0.0.1, loopback and shared memory
# only) against the daemon's own sweeps; --db read back over HTTP; bad
# arguments and snapshots (Open MPI: openmpi-bin, libopenmpi-dev).
check-mpi: $(MPISWEEP) $(WEFT) $(WEFTD)
	WEFT=$(abspath $(WEFT)) WEFTD=$(abspath $(WEFTD)) \
	    WEFT_MPISWEEP=$(abspath $(MPISWEEP)) $(PYTHON) tests/integration/mpisweep.py
.PHONY: check-mpi

# The client against its own daemon, its offline solve against HiGHS.
check-client: $(WEFT) $(WEFTD)
	WEFT=$(abspath $(WEFT)) WEFTD=$(abspath $(WEFTD)) $(PYTHON) tests/integration/client.py

# docs/openapi.yaml: npm ci of the pinned validator (tests/openapi, npm's
# cache in build/npm-cache), the document validated, compared with
# api/routes.c, and real replies of a daemon checked against it.
check-openapi: $(WEFTD)
	WEFTD=$(abspath $(WEFTD)) $(PYTHON) tests/openapi/check.py
.PHONY: check-openapi

# ---- fuzzing: one libFuzzer target per parser of untrusted input ----
# tests/fuzz/fuzz_<target>.c, built with clang into build-fuzz/ (coverage,
# ASan, UBSan) by a make of its own.  make fuzz fuzzes each target for
# FUZZ_SECONDS on a copy of its seed corpus (tests/fuzz/corpus/<target>/);
# make fuzz-ci (part of check) first replays tests/fuzz/regress/ and the
# seeds, then fuzzes FUZZ_CI_SECONDS each.  Crashes: build-fuzz/artifacts/.
FUZZ_BUILD      := build-fuzz
FUZZ_TARGETS    := json sndlib csv query config
FUZZ_SECONDS    ?= 60
FUZZ_CI_SECONDS ?= 10
FUZZ_RSS_MB     ?= 2048
FUZZ_DAEMON_OBJ := $(call obj,$(filter-out daemon/main.c,$(DAEMON_SRC)))

$(BUILD)/fuzz/fuzz_%: $(BUILD)/obj/tests/fuzz/fuzz_%.o $(FUZZ_DAEMON_OBJ) \
    $(LIBAPI) $(LIBSTORAGE) $(LIBENGINE) $(LIBBASE)
	@mkdir -p $(dir $@)
	$(CC) $(LDFLAGS) -fsanitize=fuzzer -o $@ $^ $(LDLIBS)

fuzz-build:
	$(MAKE) BUILD=$(FUZZ_BUILD) CC=clang WERROR= \
	    SANITIZER=fuzzer-no-link,address,undefined \
	    $(patsubst %,$(FUZZ_BUILD)/fuzz/fuzz_%,$(FUZZ_TARGETS))

fuzz: fuzz-build
	sh tests/fuzz/run.sh $(FUZZ_BUILD) $(FUZZ_SECONDS) $(FUZZ_RSS_MB) \
	    $(FUZZ_TARGETS)

fuzz-ci: fuzz-build
	sh tests/fuzz/run.sh --replay $(FUZZ_BUILD) $(FUZZ_CI_SECONDS) \
	    $(FUZZ_RSS_MB) $(FUZZ_TARGETS)
.PHONY: fuzz fuzz-ci fuzz-build

# ---- sanitizers and valgrind ----
# The unit tests under ASan + UBSan (build-asan/): a minute or two, so part
# of check; the integration suite under them takes longer (DEVELOPERS.md).
check-asan-unit:
	$(MAKE) BUILD=build-asan SANITIZER=address,undefined check-unit
.PHONY: check-asan-unit

# Not part of check (minutes each):
# Threads under ThreadSanitizer: the integration suite (concurrent reads
# during re-plans, bursts, what-ifs, sweeps, restarts; a few minutes) on
# build-tsan/weftd; TSAN_CASES="concurrent whatif sweep" picks cases by
# name.  GLPK is not instrumented: tests/sanitize/tsan.supp says what may be
# suppressed and why.  Every daemon started writes its reports to
# build-tsan/tsan-report.*.
TSAN_CASES ?=
check-tsan:
	$(MAKE) BUILD=build-tsan SANITIZER=thread WERROR= build-tsan/weftd
	rm -f build-tsan/tsan-report.*
	TSAN_OPTIONS="suppressions=$(abspath tests/sanitize/tsan.supp) \
	    second_deadlock_stack=1 log_path=$(abspath build-tsan)/tsan-report" \
	    WEFTD=$(abspath build-tsan/weftd) \
	    $(PYTHON) tests/integration/run.py $(TSAN_CASES)
	@if ls build-tsan/tsan-report.* >/dev/null 2>&1; then \
	    cat build-tsan/tsan-report.*; \
	    echo "check-tsan: ThreadSanitizer reports above"; exit 1; \
	else echo "check-tsan: no ThreadSanitizer reports"; fi

# A whole daemon session (start, import, plan, what-if, sweep, SIGTERM)
# under valgrind's memcheck; fails on memory errors and on definite or
# indirect leaks.
check-valgrind: $(WEFTD)
	WEFTD=$(abspath $(WEFTD)) $(PYTHON) tests/sanitize/valgrind_session.py
.PHONY: check-tsan check-valgrind

# The benchmark (tests/bench/README.md): takes minutes; not part of check.
# make bench BENCH_ARGS="--quick" (or instance names, --runs N, ...).
# Then the MPI sweep's speed-up from 1 to 2 ranks (tests/bench/mpisweep.py;
# make bench MPI_BENCH_ARGS="--runs 5 --kind links") and the full matrices
# on the Kdl topology (tests/bench/scale.py; SCALE_BENCH_ARGS="--sites
# 100,300"); every part runs even when one before it fails.
bench: $(WEFTD) $(WEFT) $(MPISWEEP) $(BUILD)/tests/bench/engine_bench
	rc=0; WEFTD=$(abspath $(WEFTD)) $(PYTHON) tests/bench/run.py $(BENCH_ARGS) || rc=1; \
	WEFTD=$(abspath $(WEFTD)) WEFT=$(abspath $(WEFT)) \
	    WEFT_MPISWEEP=$(abspath $(MPISWEEP)) \
	    $(PYTHON) tests/bench/mpisweep.py $(MPI_BENCH_ARGS) || rc=1; \
	WEFTD=$(abspath $(WEFTD)) $(PYTHON) tests/bench/scale.py $(SCALE_BENCH_ARGS) || rc=1; \
	exit $$rc
.PHONY: bench

# SIGKILL at seeded random moments under a stream of writes: nothing
# acknowledged is lost, the file passes SQLite's integrity check, the
# restarted daemon plans (about a minute).
check-durability: $(WEFTD)
	WEFTD=$(abspath $(WEFTD)) $(PYTHON) tests/integration/durability.py

# Injected database and solver faults, in a test build of its own with
# the injection points compiled in (FAULTS=1, in $(FAULTS_BUILD)/), and a
# read-only database file.
FAULTS_BUILD ?= $(BUILD)-faults
check-faults:
	$(MAKE) FAULTS=1 BUILD=$(FAULTS_BUILD) $(FAULTS_BUILD)/weftd
	WEFTD=$(abspath $(FAULTS_BUILD)/weftd) $(PYTHON) tests/integration/faults.py
.PHONY: check-durability check-faults

# Readers under load (wrk) while a writer changes links and the daemon
# re-plans, against nginx serving the same bytes: not part of check
# (sh deploy/install-deps.sh --load installs wrk and nginx).
# make load LOAD_ARGS="--duration 5 --instance brain".
load: $(WEFTD)
	WEFTD=$(abspath $(WEFTD)) $(PYTHON) tests/load/run.py $(LOAD_ARGS)
.PHONY: load

demo: $(WEFTD)
	sh deploy/demo.sh $(WEFTD)

# make install [PREFIX=/usr/local] [DESTDIR=...] [SYSCONFDIR=/etc]: the
# daemon, the client and its manual, the systemd unit (its paths rewritten
# for PREFIX and SYSCONFDIR), weft.conf as an example, and as
# SYSCONFDIR/weft/weft.conf only when there is none (an operator's file is
# never overwritten).  docs/operations.md has the steps around it.
SYSCONFDIR ?= /etc
UNITDIR    ?= $(PREFIX)/lib/systemd/system
install: $(WEFTD) $(WEFT)
	install -d $(DESTDIR)$(PREFIX)/bin $(DESTDIR)$(PREFIX)/share/man/man1 \
	    $(DESTDIR)$(PREFIX)/share/doc/weft $(DESTDIR)$(UNITDIR) \
	    $(DESTDIR)$(SYSCONFDIR)/weft
	install -m 755 $(WEFTD) $(DESTDIR)$(PREFIX)/bin/weftd
	install -m 755 $(WEFT) $(DESTDIR)$(PREFIX)/bin/weft
	install -m 644 docs/weft.1 $(DESTDIR)$(PREFIX)/share/man/man1/weft.1
	install -m 644 deploy/weft.conf $(DESTDIR)$(PREFIX)/share/doc/weft/weft.conf
	sed -e 's|/usr/local/bin/|$(PREFIX)/bin/|' \
	    -e 's|/etc/weft/|$(SYSCONFDIR)/weft/|' deploy/weftd.service \
	    > $(BUILD)/weftd.service
	install -m 644 $(BUILD)/weftd.service $(DESTDIR)$(UNITDIR)/weftd.service
	test -e $(DESTDIR)$(SYSCONFDIR)/weft/weft.conf || \
	    install -m 644 deploy/weft.conf $(DESTDIR)$(SYSCONFDIR)/weft/weft.conf

# The service: readiness and watchdog over a notify socket, SIGTERM during
# a solve, online backup and restore, migrations from every earlier schema,
# weft.conf against weftd -T, the unit (systemd-analyze), make install.
check-service: $(WEFTD) $(WEFT)
	WEFTD=$(abspath $(WEFTD)) MAKE="$(MAKE)" BUILD=$(BUILD) \
	    $(PYTHON) tests/integration/service.py
.PHONY: check-service

clean:
	rm -rf $(BUILD) $(FAULTS_BUILD)

FORCE:
.PHONY: all check check-unit check-integration check-reference demo install clean FORCE
.PHONY: check-client
.SECONDARY:

-include $(shell find $(BUILD)/obj -name '*.d' 2>/dev/null)
