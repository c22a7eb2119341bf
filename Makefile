# SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
# bandgap: the one build entry.  make | make test | make demo | make bench | make sanitize
# | make install | make clean.  See DEVELOPERS.md.

# ---- settings -------------------------------------------------------------------------------
VERSION  = 0.1.0
CC      ?= cc
PYTHON   = /usr/bin/python3
BUILD   ?= build
PREFIX  ?= /usr/local
prefix  ?= $(PREFIX)
WARN     = -Wall -Wextra -Werror -Wshadow -Wconversion -Wstrict-prototypes \
           -Wmissing-prototypes -Werror=implicit-function-declaration
STD      = -std=c11 -D_POSIX_C_SOURCE=200809L
OPT     ?= -O2 -g
SANFLAGS = -fsanitize=address,undefined,float-cast-overflow -fno-sanitize-recover=all \
           -fno-omit-frame-pointer
ifeq ($(SAN),1)
OPT      = -O1 -g $(SANFLAGS)
endif
# Expanded when a recipe runs, i.e. after 'deps' has installed what was missing.
PKG_CFLAGS = $(shell pkg-config --cflags gsl sqlite3 nettle inih libpq 2>/dev/null)
PKG_LIBS   = $(shell pkg-config --libs gsl sqlite3 nettle inih 2>/dev/null) -lm
CMOCKA     = $(shell pkg-config --cflags --libs cmocka 2>/dev/null)
CFLAGS_ALL = $(STD) $(WARN) $(OPT) -fvisibility=hidden -Iinclude -DBG_VERSION='"$(VERSION)"' \
             $(PKG_CFLAGS)
DEBIAN_PKGS = libgsl-dev libsqlite3-dev nettle-dev libinih-dev libcmocka-dev pkg-config python3-numpy python3-scipy python3-mpmath \
              mandoc sqlite3 clang libclang-rt-14-dev chromium chromium-driver libxml2-utils time \
              gcc-avr avr-libc simavr gcc-arm-none-eabi libnewlib-arm-none-eabi qemu-system-arm \
              libpq-dev postgresql

LIB_SRC = $(wildcard src/lib/*/*.c)
LIB_INT = $(wildcard src/lib/*/*_int.h src/lib/*/*_priv.h)
CLI_SRC = $(wildcard src/cli/*.c)
LIB_OBJ = $(LIB_SRC:src/lib/%.c=$(BUILD)/obj/lib/%.o) $(BUILD)/obj/lib/migrations.o \
          $(BUILD)/obj/lib/pg_migrations.o
# The shared library is built from position-independent copies of the same objects, so the
# static library and the program keep their code as it was.
PIC_OBJ = $(LIB_OBJ:$(BUILD)/obj/lib/%.o=$(BUILD)/pic/lib/%.o)
SOMAJOR  = 0
SONAME   = libbandgap.so.$(SOMAJOR)
SOFILE   = libbandgap.so.$(VERSION)
CLI_OBJ = $(CLI_SRC:src/cli/%.c=$(BUILD)/obj/cli/%.o) $(BUILD)/obj/cli/demo_data.o
TESTS   = $(patsubst tests/%.c,$(BUILD)/tests/%,$(wildcard tests/test_*.c))
HEADERS = $(wildcard include/bandgap/*.h)
DEMO_CSV = $(sort $(wildcard db/demo/*.csv))
MIGRATIONS = $(sort $(wildcard db/[0-9][0-9][0-9]-*.sql))
PG_MIGRATIONS = $(sort $(wildcard db/pg/[0-9][0-9][0-9]-*.sql))

.PHONY: all deps test check sanitize demo bench bench-firmware bench-lots bench-pg install uninstall clean headers fmt fuzz \
        fuzz-replay install-check

# The sanitizer build makes no shared library (its runtime is linked into programs only).
SHARED = $(if $(filter 1,$(SAN)),,$(BUILD)/$(SOFILE))
all: deps $(BUILD)/libbandgap.a $(SHARED) $(BUILD)/bandgap

# ---- dependencies: install the Debian packages that are missing, or say how -----------------
deps:
	@missing=""; \
	for p in gsl sqlite3 nettle inih cmocka libpq; do pkg-config --exists $$p 2>/dev/null || missing=yes; done; \
	$(PYTHON) -c 'import numpy, scipy, mpmath' 2>/dev/null || missing=yes; \
	for c in mandoc sqlite3 clang chromium chromedriver xmllint avr-gcc simavr arm-none-eabi-gcc \
	  qemu-system-arm; do \
	  command -v $$c >/dev/null 2>&1 || missing=yes; done; \
	[ -x /usr/bin/time ] || missing=yes; \
	[ -f /usr/lib/avr/include/avr/pgmspace.h ] && [ -f /usr/lib/arm-none-eabi/newlib/libm.a ] || \
	  missing=yes; \
	ls /usr/lib/postgresql/*/bin/initdb >/dev/null 2>&1 || missing=yes; \
	if [ -n "$$missing" ]; then \
	  if [ "$$(id -u)" = 0 ]; then SUDO=""; \
	  elif command -v sudo >/dev/null 2>&1 && sudo -n true 2>/dev/null; then SUDO="sudo"; \
	  else echo "bandgap: missing build or test packages; run:" >&2; \
	       echo "  sudo apt-get update && sudo apt-get install -y $(DEBIAN_PKGS)" >&2; exit 1; fi; \
	  echo "installing: $(DEBIAN_PKGS)"; \
	  $$SUDO apt-get update -qq && \
	  DEBIAN_FRONTEND=noninteractive $$SUDO apt-get install -y -qq $(DEBIAN_PKGS) >/dev/null; \
	fi

# ---- library and program --------------------------------------------------------------------
$(BUILD)/obj/lib/%.o: src/lib/%.c $(HEADERS) $(LIB_INT) | deps
	@mkdir -p $(@D)
	$(CC) $(CFLAGS_ALL) -Isrc/lib -c $< -o $@

$(BUILD)/pic/lib/%.o: src/lib/%.c $(HEADERS) $(LIB_INT) | deps
	@mkdir -p $(@D)
	$(CC) $(CFLAGS_ALL) -fPIC -Isrc/lib -c $< -o $@

# Per-file flags.  fit_batch.c's lane loops vectorise only when the compiler may evaluate both
# sides of a select without regard to floating-point exception flags (no code of bandgap reads
# them) and call no errno-setting sqrt: -fno-trapping-math -fno-math-errno.  Neither changes a
# value (no contraction, no reassociation: ISO C mode keeps -ffp-contract=off), so the batch
# still gives the per-probe path's numbers bit for bit (tests/test_fit.c, both builds).
BATCH_FLAGS = -fno-trapping-math -fno-math-errno
$(BUILD)/obj/lib/fit/fit_batch.o $(BUILD)/pic/lib/fit/fit_batch.o: CFLAGS_ALL += $(BATCH_FLAGS)

$(BUILD)/obj/cli/%.o: src/cli/%.c $(HEADERS) src/cli/cli.h | deps
	@mkdir -p $(@D)
	$(CC) $(CFLAGS_ALL) -c $< -o $@

# The invented demo data, embedded in the program as C strings.
$(BUILD)/demo_data.c: $(DEMO_CSV) tests/embed.awk
	@mkdir -p $(@D)
	awk -v type='struct demo_file' -v var=demo_files -v hdr=cli.h -f tests/embed.awk \
	    $(DEMO_CSV) > $@

# The schema migrations, embedded in the library.
$(BUILD)/migrations.c: $(MIGRATIONS) tests/embed.awk Makefile
	@mkdir -p $(@D)
	awk -v type='struct bgi_sql_file' -v var=bgi_migrations -v hdr=store/store_int.h \
	    -f tests/embed.awk $(MIGRATIONS) > $@

# The PostgreSQL backend's migrations (db/pg/, numbered as the SQLite ones).
$(BUILD)/pg_migrations.c: $(PG_MIGRATIONS) tests/embed.awk Makefile
	@mkdir -p $(@D)
	awk -v type='struct bgi_sql_file' -v var=bgi_pg_migrations -v hdr=store/store_int.h \
	    -f tests/embed.awk $(PG_MIGRATIONS) > $@

$(BUILD)/obj/lib/pg_migrations.o: $(BUILD)/pg_migrations.c src/lib/store/store_int.h | deps
	@mkdir -p $(@D)
	$(CC) $(CFLAGS_ALL) -Isrc/lib -c $< -o $@

$(BUILD)/pic/lib/pg_migrations.o: $(BUILD)/pg_migrations.c src/lib/store/store_int.h | deps
	@mkdir -p $(@D)
	$(CC) $(CFLAGS_ALL) -fPIC -Isrc/lib -c $< -o $@

$(BUILD)/obj/lib/migrations.o: $(BUILD)/migrations.c src/lib/store/store_int.h | deps
	@mkdir -p $(@D)
	$(CC) $(CFLAGS_ALL) -Isrc/lib -c $< -o $@

$(BUILD)/pic/lib/migrations.o: $(BUILD)/migrations.c src/lib/store/store_int.h | deps
	@mkdir -p $(@D)
	$(CC) $(CFLAGS_ALL) -fPIC -Isrc/lib -c $< -o $@

$(BUILD)/obj/cli/demo_data.o: $(BUILD)/demo_data.c | deps
	@mkdir -p $(@D)
	$(CC) $(CFLAGS_ALL) -Isrc/cli -c $< -o $@

$(BUILD)/libbandgap.a: $(LIB_OBJ)
	rm -f $@
	ar rcs $@ $^

# The shared library: a soname for the ABI, and a version script (src/lib/bandgap.map) that
# exports the bg_ names; with -fvisibility=hidden those are exactly the BG_API declarations
# (tests/symbols.sh compares the two lists).
$(BUILD)/$(SOFILE): $(PIC_OBJ) src/lib/bandgap.map
	$(CC) $(OPT) -shared -Wl,-soname,$(SONAME) -Wl,--version-script=src/lib/bandgap.map \
	    -Wl,--no-undefined -o $@ $(PIC_OBJ) $(PKG_LIBS)
	ln -sf $(SOFILE) $(BUILD)/$(SONAME)
	ln -sf $(SONAME) $(BUILD)/libbandgap.so

$(BUILD)/bandgap: $(CLI_OBJ) $(BUILD)/libbandgap.a
	$(CC) $(OPT) -o $@ $(CLI_OBJ) $(BUILD)/libbandgap.a $(PKG_LIBS)

# ---- tests ----------------------------------------------------------------------------------
$(BUILD)/tests/%: tests/%.c tests/testutil.h $(BUILD)/libbandgap.a
	@mkdir -p $(@D)
	$(CC) $(CFLAGS_ALL) -Wno-conversion -Itests -DREF_DIR='"tests/ref"' $< -o $@ \
	    $(BUILD)/libbandgap.a $(CMOCKA) $(PKG_LIBS)

# Each public header compiles on its own.
headers: | deps
	@mkdir -p $(BUILD)/hdr
	@for h in $(HEADERS); do \
	  echo "#include \"bandgap/$$(basename $$h)\"" > $(BUILD)/hdr/one.c; \
	  $(CC) $(STD) $(WARN) -Iinclude -c $(BUILD)/hdr/one.c -o $(BUILD)/hdr/one.o || exit 1; \
	done

check: all headers $(if $(filter 1,$(SAN)),,install-check) $(TESTS)
	@BUILD=$(BUILD) SAN=$(if $(filter 1,$(SAN)),1,0) RUN_ALL=$(RUN_ALL) PYTHON=$(PYTHON) sh tests/run.sh

# Install into a scratch folder and build a program from the installed headers, library and
# pkg-config file alone, once against the shared library and once against the static one;
# each must print T(3000 ohm) = 25.507 degC (refdata section 1), the shared one must need
# libbandgap.so.0 and the static one must not.
STAGE = $(abspath $(BUILD))/stage
STAGE_PC = PKG_CONFIG_SYSROOT_DIR=$(STAGE) PKG_CONFIG_PATH=$(STAGE)/usr/lib/pkgconfig pkg-config
install-check: all
	@rm -rf $(BUILD)/stage
	@$(MAKE) --no-print-directory install PREFIX=/usr DESTDIR=$(STAGE) >/dev/null
	@$(CC) $(STD) $(WARN) tests/install_check.c -o $(STAGE)/check_shared \
	    $$($(STAGE_PC) --cflags --libs bandgap) -Wl,-rpath,$(STAGE)/usr/lib
	@$(CC) $(STD) $(WARN) tests/install_check.c -o $(STAGE)/check_static \
	    $$($(STAGE_PC) --cflags --libs --static bandgap | sed 's/-lbandgap/-l:libbandgap.a/')
	@test "$$($(STAGE)/check_shared)" = 25.507 && test "$$($(STAGE)/check_static)" = 25.507
	@ldd $(STAGE)/check_shared | grep -q 'libbandgap.so.$(SOMAJOR) => $(STAGE)/usr/lib/'
	@! ldd $(STAGE)/check_static | grep -q libbandgap
	@echo "install-check: ok (shared $(SONAME) and static)"

sanitize: deps
	@$(MAKE) --no-print-directory BUILD=build-san SAN=1 check
	@$(MAKE) --no-print-directory BUILD=build-san SAN=1 fuzz-replay

# ---- fuzzing: libFuzzer with clang; the committed corpus is replayed by the sanitizer suite --
# Targets (tests/fuzz/fuzz_NAME.c): csv, units (parsers); options (the program's option and
# list parsers: links the program's files but main.c and the demo); fit (CSV -> every model
# -> curve and a small table); store (a database with hostile rows read back every way);
# writers (hostile texts and numbers through the HTML, C and JSON writers, which must stay
# well formed).  The library is compiled once for all of them into $(BUILD)/fuzz/obj.
FUZZ_TIME ?= 60
FUZZ_TARGETS = csv units options fit store writers
FUZZ_LIB = $(LIB_SRC) $(BUILD)/migrations.c $(BUILD)/pg_migrations.c
FUZZ_CLI = $(filter-out src/cli/main.c src/cli/cmd_demo.c,$(CLI_SRC))
FUZZ_SRC_options = $(FUZZ_CLI)
CLANG ?= $(shell command -v clang-14 || command -v clang)
FUZZ_CFLAGS = -std=c11 -D_POSIX_C_SOURCE=200809L -g -O1 -Iinclude -Isrc/lib -Isrc/cli \
              -DBG_VERSION='"$(VERSION)"' $(PKG_CFLAGS) -fno-sanitize-recover=all
FUZZ_OBJ = $(patsubst %.c,$(BUILD)/fuzz/obj/%.o,$(FUZZ_LIB:$(BUILD)/%=%))
# The program's objects the options target links in the replay (gcc) build.
FUZZ_CLI_OBJ_options = $(FUZZ_CLI:src/cli/%.c=$(BUILD)/obj/cli/%.o)
# The objects are kept between runs (make would delete them as intermediate files).
.SECONDARY: $(FUZZ_OBJ) $(FUZZ_CLI:src/%.c=$(BUILD)/fuzz/obj/src/%.o)

$(BUILD)/fuzz/obj/src/%.o: src/%.c $(HEADERS) $(LIB_INT) src/cli/cli.h | deps
	@mkdir -p $(@D)
	@$(CLANG) $(FUZZ_CFLAGS) -fsanitize=fuzzer-no-link,address,undefined -c $< -o $@

$(BUILD)/fuzz/obj/migrations.o: $(BUILD)/migrations.c | deps
	@mkdir -p $(@D)
	@$(CLANG) $(FUZZ_CFLAGS) -fsanitize=fuzzer-no-link,address,undefined -c $< -o $@

$(BUILD)/fuzz/obj/pg_migrations.o: $(BUILD)/pg_migrations.c | deps
	@mkdir -p $(@D)
	@$(CLANG) $(FUZZ_CFLAGS) -fsanitize=fuzzer-no-link,address,undefined -c $< -o $@

$(BUILD)/fuzz/fuzz_%: tests/fuzz/fuzz_%.c tests/fuzz/fuzz_util.h $(FUZZ_OBJ) | deps
	@test -n "$(CLANG)" || { echo "make fuzz needs clang (apt-get install clang)"; exit 1; }
	$(CLANG) $(FUZZ_CFLAGS) -fsanitize=fuzzer,address,undefined $< $(FUZZ_OBJ) \
	    $(patsubst src/%.c,$(BUILD)/fuzz/obj/src/%.o,$(FUZZ_SRC_$*)) -o $@ $(PKG_LIBS)

# The program's objects a target needs are built by the same rule as the library's.
$(BUILD)/fuzz/fuzz_options: $(FUZZ_CLI:src/%.c=$(BUILD)/fuzz/obj/src/%.o)

# Each committed input of each target, through the sanitizer build (gcc), with replay.c.
# The writers target also leaves the C files it wrote in $(BUILD)/fuzz/c-writers, and each
# must compile (cc -fsyntax-only).
fuzz-replay: $(BUILD)/libbandgap.a $(CLI_OBJ)
	@mkdir -p $(BUILD)/fuzz
	@for t in $(FUZZ_TARGETS); do \
	  case $$t in options) extra="$(FUZZ_CLI_OBJ_options)";; *) extra="";; esac; \
	  $(CC) $(CFLAGS_ALL) -Isrc/lib -Isrc/cli tests/fuzz/fuzz_$$t.c tests/fuzz/replay.c \
	      -o $(BUILD)/fuzz/replay_$$t $$extra $(BUILD)/libbandgap.a $(PKG_LIBS) || exit 1; \
	  rm -rf $(BUILD)/fuzz/c-$$t; mkdir -p $(BUILD)/fuzz/c-$$t; \
	  FUZZ_C_DIR=$(BUILD)/fuzz/c-$$t $(BUILD)/fuzz/replay_$$t tests/fuzz/corpus/$$t/* \
	      || exit 1; \
	  for c in $(BUILD)/fuzz/c-$$t/*.c; do \
	    [ -f "$$c" ] || continue; \
	    $(CC) -std=c99 -Wall -Werror -fsyntax-only $$c || { echo "$$c: does not compile"; exit 1; }; \
	  done; \
	done

# Each target runs FUZZ_TIME seconds (default 60) on a copy of its corpus; any crash, leak,
# sanitizer report or input slower than FUZZ_TIMEOUT seconds fails.  New inputs found are left
# in $(BUILD)/fuzz/corpus-* to look at.
FUZZ_TIMEOUT ?= 30
fuzz: $(FUZZ_TARGETS:%=$(BUILD)/fuzz/fuzz_%)
	@for t in $(FUZZ_TARGETS); do \
	  rm -rf $(BUILD)/fuzz/corpus-$$t; cp -R tests/fuzz/corpus/$$t $(BUILD)/fuzz/corpus-$$t; \
	  echo "fuzzing $$t for $(FUZZ_TIME) s"; \
	  $(BUILD)/fuzz/fuzz_$$t -max_total_time=$(FUZZ_TIME) -max_len=4096 \
	      -timeout=$(FUZZ_TIMEOUT) -artifact_prefix=$(BUILD)/fuzz/ $(BUILD)/fuzz/corpus-$$t \
	      > $(BUILD)/fuzz/$$t.log 2>&1 || { tail -40 $(BUILD)/fuzz/$$t.log; exit 1; }; \
	  tail -1 $(BUILD)/fuzz/$$t.log; \
	done

# make test: the plain suite, the sanitizer suite, and each fuzz target for TEST_FUZZ_TIME
# seconds: 10 in CI (where CI=true), 5 elsewhere: the six targets fuzz for a minute together
# in CI (half a minute elsewhere), besides building them, which keeps the whole of make test
# near ten minutes on two cores now that it also runs the firmware, server and sequence suites.
# The plain and the sanitizer suites build and run side by side, one on each core (their
# builds, temporary files, servers and simulators are their own); each line of their output
# carries the suite's name, and each suite's whole log is kept in build*/test.log.
TEST_FUZZ_TIME = $(if $(CI),10,5)
test: deps
	@mkdir -p build build-san; rm -f build/test.rc build-san/test.rc
	@{ { $(MAKE) --no-print-directory check 2>&1; echo $$? > build/test.rc; } \
	    | tee build/test.log | sed -u 's/^/[plain] /'; } & \
	 { { $(MAKE) --no-print-directory sanitize 2>&1; echo $$? > build-san/test.rc; } \
	    | tee build-san/test.log | sed -u 's/^/[sanitize] /'; } & \
	 wait; \
	 for s in build build-san; do \
	   test "$$(cat $$s/test.rc 2>/dev/null)" = 0 || { echo "make test: the suite in $$s failed"; \
	     grep -E '^(tests:|failing:)' $$s/test.log; exit 1; }; \
	 done
	@$(MAKE) --no-print-directory fuzz FUZZ_TIME=$(TEST_FUZZ_TIME)
	@cat build/summary build-san/summary | awk '{ p += $$1; f += $$2 } \
	    END { print "plain and sanitizer suites together; fuzz targets clean"; \
	          printf "total: %d passed, %d failed\n", p, f }'

# ---- demo and benchmarks --------------------------------------------------------------------
demo: all
	$(BUILD)/bandgap demo --dir demo-out
	sh tests/instruments/demo.sh $(BUILD)/bandgap demo-out $(PYTHON)

bench: all
	@sh tests/bench/run.sh $(BUILD) $(PYTHON) $(CC) "$(CFLAGS_ALL)" "$(PKG_LIBS)"
	@sh tests/pg/server.sh sh tests/pg/bench.sh $(BUILD)/bandgap

# The lot commands' part of the bench alone (tests/bench/lots.sh; BENCH_PROBES, BENCH_DB_DIR).
bench-lots: all
	@sh tests/bench/lots.sh $(BUILD) $(PYTHON) $(CC) "$(CFLAGS_ALL)" "$(PKG_LIBS)"

# The PostgreSQL backend's benchmark alone (a throwaway server, as the tests start it).
bench-pg: all
	@sh tests/pg/server.sh sh tests/pg/bench.sh $(BUILD)/bandgap

# the firmware part of the bench alone: cycles, instructions and flash on the targets
bench-firmware: all
	@PYTHON=$(PYTHON) sh tests/firmware/cost.sh $(BUILD)/bandgap $(BUILD)/bench/firmware

# ---- install --------------------------------------------------------------------------------
# GNU directory variables; DESTDIR only prefixes the installed paths, never their contents.
bindir     ?= $(prefix)/bin
libdir     ?= $(prefix)/lib
includedir ?= $(prefix)/include
mandir     ?= $(prefix)/share/man

$(BUILD)/bandgap.pc: Makefile
	@mkdir -p $(@D)
	printf '%s\n' 'prefix=$(prefix)' 'libdir=$(libdir)' 'includedir=$(includedir)' '' \
	    'Name: bandgap' 'Description: calibration of NTC thermistors' 'Version: $(VERSION)' \
	    'Requires.private: gsl sqlite3 nettle inih' 'Libs: -L$${libdir} -lbandgap' 'Libs.private: -lm' \
	    'Cflags: -I$${includedir}' > $@

install: all $(BUILD)/bandgap.pc
	install -d $(DESTDIR)$(bindir) $(DESTDIR)$(libdir)/pkgconfig \
	    $(DESTDIR)$(includedir)/bandgap $(DESTDIR)$(mandir)/man1
	install -m 755 $(BUILD)/bandgap $(DESTDIR)$(bindir)/bandgap
	install -m 644 $(BUILD)/libbandgap.a $(DESTDIR)$(libdir)/libbandgap.a
	install -m 755 $(BUILD)/$(SOFILE) $(DESTDIR)$(libdir)/$(SOFILE)
	ln -sf $(SOFILE) $(DESTDIR)$(libdir)/$(SONAME)
	ln -sf $(SONAME) $(DESTDIR)$(libdir)/libbandgap.so
	install -m 644 $(HEADERS) $(DESTDIR)$(includedir)/bandgap/
	install -m 644 $(BUILD)/bandgap.pc $(DESTDIR)$(libdir)/pkgconfig/bandgap.pc
	install -m 644 docs/bandgap.1 $(DESTDIR)$(mandir)/man1/bandgap.1

uninstall:
	rm -f $(DESTDIR)$(bindir)/bandgap $(DESTDIR)$(libdir)/libbandgap.a
	rm -f $(DESTDIR)$(libdir)/$(SOFILE) $(DESTDIR)$(libdir)/$(SONAME) $(DESTDIR)$(libdir)/libbandgap.so
	rm -f $(DESTDIR)$(libdir)/pkgconfig/bandgap.pc $(DESTDIR)$(mandir)/man1/bandgap.1
	rm -rf $(DESTDIR)$(includedir)/bandgap

fmt:
	clang-format -i $(LIB_SRC) $(CLI_SRC) $(HEADERS) $(LIB_INT) src/cli/cli.h

clean:
	rm -rf build build-san demo-out
