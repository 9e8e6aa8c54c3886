# sillwatch — hydrostatic screening of hinged flap gates.
# Targets: all (default), check, bench, install, uninstall, clean,
#          check-sanitize, check-valgrind, fuzz, dist, distcheck.  See DEVELOPERS.md.

VERSION   := 0.1.0
PREFIX    ?= /usr/local
DESTDIR   ?=
BUILD     ?= build
CC        ?= cc

# Warnings are errors in CI (CI=true) and when asked for (WERROR=1).
ifneq ($(filter true 1,$(CI) $(WERROR)),)
WERROR_FLAG := -Werror
endif

PKGS      := gsl inih nettle jansson netcdf
WARN      := -Wall -Wextra -Wpedantic -Wshadow -Wconversion -Wstrict-prototypes \
             -Wmissing-prototypes -Wformat=2
CFLAGS    ?= -O2 -g
# CPPFLAGS, CFLAGS and LDFLAGS are the user's (a distribution's hardening
# flags, say): every compile takes CPPFLAGS and CFLAGS, every link LDFLAGS.
ALL_CFLAGS = -std=c11 -D_POSIX_C_SOURCE=200809L $(WARN) $(WERROR_FLAG) \
             -Iinclude -DSW_VERSION=\"$(VERSION)\" $(CPPFLAGS) $(CFLAGS) $(EXTRA_CFLAGS) \
             $(shell pkg-config --cflags $(PKGS) 2>/dev/null)
# Recursive (=) so that pkg-config runs after tools/check-deps.sh has
# installed it on a new machine; the fallbacks are Debian's link lines.
# libnetcdf is not linked: src/netcdfload.c loads it by its SONAME at
# the first NetCDF file (it and its HDF5 and curl cost every process
# 9 MiB); its headers are still compiled against.
LINK_PKGS := gsl inih nettle jansson
LDLIBS_ALL = $(shell pkg-config --libs $(LINK_PKGS) 2>/dev/null || echo -lgsl -lgslcblas -linih -lnettle -ljansson) -pthread \
             -lcsv -lm -ldl $(EXTRA_LDFLAGS)
NETCDF_SONAME = $(shell objdump -p "$$(pkg-config --variable=libdir netcdf 2>/dev/null)/libnetcdf.so" 2>/dev/null | awk '/SONAME/ { print $$2 }')
TEST_LIBS  = $(shell pkg-config --libs cmocka 2>/dev/null || echo -lcmocka) \
             $(shell pkg-config --libs netcdf 2>/dev/null || echo -lnetcdf)

# The library: every src/*.c except the program's own files.
CLI_SRC   := src/main.c $(wildcard src/cmd_*.c)
LIB_SRC   := $(filter-out $(CLI_SRC),$(wildcard src/*.c))
LIB_OBJ   := $(LIB_SRC:src/%.c=$(BUILD)/obj/%.o)
CLI_OBJ   := $(CLI_SRC:src/%.c=$(BUILD)/obj/%.o)
LIB       := $(BUILD)/libsillwatch.a
PROG      := $(BUILD)/sillwatch

UNIT_SRC  := $(wildcard tests/unit/test_*.c)
UNIT_BIN  := $(UNIT_SRC:tests/unit/%.c=$(BUILD)/tests/%)
BENCH_SRC := $(wildcard tests/bench/bench_*.c)
BENCH_BIN := $(BENCH_SRC:tests/bench/%.c=$(BUILD)/bench/%)
DEPS_OK   := $(BUILD)/.deps-ok

.PHONY: demo all check bench install uninstall clean check-sanitize check-valgrind check-valgrind-all deps \
        fuzz fuzz-build dist distcheck

all: $(PROG)

# Install missing Debian packages before the first compile (tools/).
$(DEPS_OK): tools/check-deps.sh tools/install-deps.sh
	@mkdir -p $(@D)
	@CC="$(CC)" tools/check-deps.sh
	@touch $@

deps: $(DEPS_OK)

$(BUILD)/obj/%.o: src/%.c | $(DEPS_OK)
	@mkdir -p $(@D)
	$(CC) $(ALL_CFLAGS) -MMD -MP -c $< -o $@

# The netCDF library's file name, read from the library built against
# (Debian 12: libnetcdf.so.19); without it, the development link name.
$(BUILD)/obj/netcdfload.o: ALL_CFLAGS += $(if $(NETCDF_SONAME),-DSW_NETCDF_LIB=\"$(NETCDF_SONAME)\")

$(LIB): $(LIB_OBJ)
	@rm -f $@
	$(AR) rcs $@ $^

$(PROG): $(CLI_OBJ) $(LIB)
	$(CC) $(ALL_CFLAGS) $(LDFLAGS) -o $@ $(CLI_OBJ) $(LIB) $(LDLIBS_ALL)

$(BUILD)/tests/%: tests/unit/%.c tests/unit/testutil.h $(LIB) | $(DEPS_OK)
	@mkdir -p $(@D)
	$(CC) $(ALL_CFLAGS) $(LDFLAGS) -Itests/unit -o $@ $< $(LIB) $(TEST_LIBS) $(LDLIBS_ALL)

$(BUILD)/bench/%: tests/bench/%.c $(LIB) | $(DEPS_OK)
	@mkdir -p $(@D)
	$(CC) $(ALL_CFLAGS) -O2 $(LDFLAGS) -o $@ $< $(LIB) $(LDLIBS_ALL)

# The browser test's image reader (tests/browser/pngstat.c, libpng).
PNGSTAT   := $(BUILD)/tests/pngstat
$(PNGSTAT): tests/browser/pngstat.c | $(DEPS_OK)
	@mkdir -p $(@D)
	$(CC) $(ALL_CFLAGS) $(LDFLAGS) -o $@ $< $(shell pkg-config --libs libpng 2>/dev/null || echo -lpng)

# The decimal parser's tests again with x87 arithmetic (FLT_EVAL_METHOD 2,
# excess precision), where Clinger's fast path must stay off: x86-64 only.
ifeq ($(shell uname -m),x86_64)
X87_TEST  := $(BUILD)/tests/test_decimal_x87
endif
$(BUILD)/tests/test_decimal_x87: tests/unit/test_decimal.c src/decimal.c tests/unit/testutil.h | $(DEPS_OK)
	@mkdir -p $(@D)
	$(CC) $(ALL_CFLAGS) -mfpmath=387 -Itests/unit -o $@ tests/unit/test_decimal.c src/decimal.c $(LDFLAGS) $(TEST_LIBS) -lm $(EXTRA_LDFLAGS)

# The live watch's property test (tests/watch/watchchaos.c): writes a
# season in bursts while it kills and restarts the watch.
WATCHCHAOS := $(BUILD)/tests/watchchaos
$(WATCHCHAOS): tests/watch/watchchaos.c | $(DEPS_OK)
	@mkdir -p $(@D)
	$(CC) $(ALL_CFLAGS) $(LDFLAGS) -o $@ $< -lm $(EXTRA_LDFLAGS)

# The NetCDF cases' file writer (tests/netcdf/mknc.c, netCDF C library).
MKNC      := $(BUILD)/tests/mknc
$(MKNC): tests/netcdf/mknc.c | $(DEPS_OK)
	@mkdir -p $(@D)
	$(CC) $(ALL_CFLAGS) $(LDFLAGS) -o $@ $< $(shell pkg-config --libs netcdf 2>/dev/null || echo -lnetcdf)

check: $(PROG) $(UNIT_BIN) $(X87_TEST) $(PNGSTAT) $(MKNC) $(WATCHCHAOS)
	@tools/run-tests.sh $(BUILD) $(UNIT_BIN) $(X87_TEST)

bench: $(BENCH_BIN) $(PROG)
	@for b in $(BENCH_BIN); do echo "== $$b"; $$b || exit 1; done

# The demo: a season replayed, a forecast flood screened, an alarm table.
# Exit 1 from run or screen means "trouble found", which the demo shows.
DEMO = $(BUILD)/demo
demo: $(PROG)
	@rm -rf $(DEMO) && mkdir -p $(DEMO)
	$(PROG) run data/demo/velloran.ini -o $(DEMO)/season --by month --steps --report || test $$? -eq 1
	$(PROG) screen data/demo/velloran-forecast.ini -o $(DEMO)/forecast || test $$? -eq 1
	$(PROG) thresholds data/demo/velloran.ini --headwater 11.3:12.6:0.01 --simplify 0.005 -o $(DEMO)/alarm-table.csv
	@echo
	@echo "demo results: $(DEMO)/season (replay), $(DEMO)/forecast (screening),"
	@echo "              $(DEMO)/alarm-table.csv (thresholds by headwater)"
	@echo "season report (open in a browser): $(DEMO)/season/report.html"

# The whole suite under AddressSanitizer and UndefinedBehaviorSanitizer.
check-sanitize:
	$(MAKE) BUILD=$(BUILD)/san CFLAGS="-O1 -g" \
	  EXTRA_CFLAGS="-fsanitize=address,undefined -fno-sanitize-recover=all -fno-omit-frame-pointer" \
	  EXTRA_LDFLAGS="-fsanitize=address,undefined" check

# The CLI tests with every program run under valgrind memcheck.
# The example's and the demo's whole job under valgrind memcheck: any
# error or leak fails.
# tools/valgrind.supp: HDF5's own state, kept for the process's life
# (netCDF initialises it), never sillwatch's.
, := ,
VALGRIND = valgrind -q --error-exitcode=99 --leak-check=full --errors-for-leak-kinds=all \
           --suppressions=$(CURDIR)/tools/valgrind.supp
VALGRIND_FORKS = $(subst --errors-for-leak-kinds=all,--errors-for-leak-kinds=definite$(,)indirect,$(VALGRIND))
check-valgrind: $(PROG) $(MKNC)
	@rm -rf $(BUILD)/valgrind && mkdir -p $(BUILD)/valgrind
	$(VALGRIND) $(PROG) check data/example/quillbrook.ini > /dev/null
	$(VALGRIND) $(PROG) point data/example/quillbrook.ini --headwater 11.62 --tailwater 11.48 > /dev/null; test $$? -le 1
	$(VALGRIND) $(PROG) run data/example/quillbrook.ini -o $(BUILD)/valgrind --by month --steps -q; test $$? -le 1
	$(VALGRIND) $(PROG) run data/demo/velloran.ini -o $(BUILD)/valgrind/demo --by month --steps --report -q; test $$? -le 1
	$(VALGRIND) $(PROG) screen data/demo/velloran-forecast.ini -o $(BUILD)/valgrind/screen -q; test $$? -le 1
	$(MKNC) forecast $(BUILD)/valgrind/fc.nc
	sed -n '/^\[site\]/,$$p' tests/cli/netcdf_screen/site-nc.ini > $(BUILD)/valgrind/site-nc.ini
	$(VALGRIND) $(PROG) screen $(BUILD)/valgrind/site-nc.ini -o $(BUILD)/valgrind/nc --json -q; test $$? -le 1
	$(VALGRIND) $(PROG) thresholds data/example/quillbrook.ini --headwater 11.4:13.2:0.01 --simplify 0.005 -o $(BUILD)/valgrind/thresholds.csv > /dev/null
	$(VALGRIND) $(PROG) fleet $(BUILD)/valgrind $(BUILD)/valgrind/demo -o $(BUILD)/valgrind/fleet.csv > /dev/null; test $$? -le 1
	# sampled: the example with uncertain keys (as tests/cli/run_samples),
	# point on threads, run and thresholds on worker processes, which end
	# with _exit and leave the parent's memory they inherited reachable:
	# there only lost blocks count (every memory error still does)
	sed -e '/^mass = 1450/a mass_sd = 60' -e '/^cg_along = 0.86/a cg_along_sd = 0.02' \
	    -e '/^value_column = outfall/a offset = 0\noffset_sd = 0.01' \
	    -e 's|^file = |file = $(CURDIR)/data/example/|' \
	    data/example/quillbrook.ini > $(BUILD)/valgrind/sampled.ini
	$(VALGRIND) $(PROG) point $(BUILD)/valgrind/sampled.ini --headwater 11.62 --tailwater 11.48 --samples 200 -j 2 > /dev/null; test $$? -le 1
	$(VALGRIND_FORKS) $(PROG) run $(BUILD)/valgrind/sampled.ini -o $(BUILD)/valgrind/sampled --samples 4 -j 2 --steps -q; test $$? -le 1
	$(VALGRIND_FORKS) $(PROG) thresholds $(BUILD)/valgrind/sampled.ini --headwater 11.4:12.4:0.05 --confidence 0.9 --samples 20 -j 2 -o $(BUILD)/valgrind/thr-sampled.csv > /dev/null
	@echo "check-valgrind: no memory errors, no leaks"

# Every unit test and CLI case under valgrind (slow: tens of minutes).
check-valgrind-all: $(PROG) $(UNIT_BIN) $(MKNC) $(PNGSTAT)
	@SW_WRAPPER="$(VALGRIND)" tools/run-tests.sh $(BUILD) $(UNIT_BIN)

# Fuzzing with libFuzzer (clang's -fsanitize=fuzzer), not part of check:
# `make fuzz FUZZ_SECONDS=600`.  Each target runs for FUZZ_SECONDS on its
# working corpus build/fuzz/corpus-NAME, into which the seeds of
# tests/fuzz/corpus/NAME and the fixed findings of tests/fuzz/regressions/NAME
# are copied first (a run never writes into tests/); crashes go to
# build/fuzz/artifacts-NAME/.
FUZZ_CC      ?= clang-14
FUZZ_SECONDS ?= 60
FUZZ_DIR     := $(BUILD)/fuzz
FUZZ_NAMES   := site levels range zone
FUZZ_BIN     := $(FUZZ_NAMES:%=$(FUZZ_DIR)/fuzz_%)
FUZZ_SAN     := -fsanitize=address,undefined -fno-sanitize-recover=all \
                -fno-omit-frame-pointer
# -max_len per target: a site file of several sections; a level file of a
# header and a few dozen rows; a range is three short numbers.
FUZZ_MAXLEN_site   := 4096
FUZZ_MAXLEN_levels := 4096
FUZZ_MAXLEN_range  := 96
FUZZ_MAXLEN_zone   := 8192
# Memory limits per target (libFuzzer: the process's RSS, and any single
# allocation; RSS counts AddressSanitizer's quarantine, some 250 MB): the
# site file is fuzzed under a tight limit on each allocation, so that input
# that makes the reader grow (an endless line) is a finding.
FUZZ_MEM_site      := -rss_limit_mb=1024 -malloc_limit_mb=64

# The library, instrumented for the fuzzer, built by this Makefile itself.
# clang and its fuzzer runtime are needed by this target only, so they are
# installed here (Debian 12: clang-14, libclang-rt-14-dev), not by `make`.
$(FUZZ_DIR)/libsillwatch.a: $(LIB_SRC) $(wildcard include/sillwatch/*.h)
	@echo 'int LLVMFuzzerTestOneInput(const char *d, long n) { return 0; }' \
	  | $(FUZZ_CC) -fsanitize=fuzzer -x c - -o /dev/null 2>/dev/null \
	  || tools/install-deps.sh clang-14 libclang-rt-14-dev
	$(MAKE) BUILD=$(FUZZ_DIR) CC=$(FUZZ_CC) CFLAGS="-O1 -g" \
	  EXTRA_CFLAGS="-fsanitize=fuzzer-no-link $(FUZZ_SAN)" $@

$(FUZZ_DIR)/fuzz_%: tests/fuzz/fuzz_%.c $(FUZZ_DIR)/libsillwatch.a
	$(FUZZ_CC) -std=c11 -D_POSIX_C_SOURCE=200809L $(WARN) $(WERROR_FLAG) \
	  -Iinclude -O1 -g -fsanitize=fuzzer $(FUZZ_SAN) -o $@ $< \
	  $(FUZZ_DIR)/libsillwatch.a $(LDLIBS_ALL)

fuzz-build: $(FUZZ_BIN)

fuzz: $(FUZZ_NAMES:%=fuzz-run-%)

fuzz-run-%: $(FUZZ_DIR)/fuzz_%
	@mkdir -p $(FUZZ_DIR)/corpus-$* $(FUZZ_DIR)/artifacts-$*
	cp tests/fuzz/corpus/$*/* $(wildcard tests/fuzz/regressions/$*/*) \
	  $(FUZZ_DIR)/corpus-$*/
	$(FUZZ_DIR)/fuzz_$* -max_total_time=$(FUZZ_SECONDS) \
	  -max_len=$(FUZZ_MAXLEN_$*) -artifact_prefix=$(FUZZ_DIR)/artifacts-$*/ \
	  -print_final_stats=1 -timeout=10 $(FUZZ_MEM_$*) \
	  $(if $(wildcard tests/fuzz/$*.dict),-dict=tests/fuzz/$*.dict) \
	  $(FUZZ_DIR)/corpus-$*

# The program, its two manual pages and the bash completion script.
MANDIR    ?= $(PREFIX)/share/man
BASHCOMPDIR ?= $(PREFIX)/share/bash-completion/completions
install: $(PROG)
	install -d $(DESTDIR)$(PREFIX)/bin $(DESTDIR)$(MANDIR)/man1 \
	  $(DESTDIR)$(MANDIR)/man5 $(DESTDIR)$(BASHCOMPDIR)
	install -m 755 $(PROG) $(DESTDIR)$(PREFIX)/bin/sillwatch
	install -m 644 src/sillwatch.1 $(DESTDIR)$(MANDIR)/man1/sillwatch.1
	install -m 644 src/sillwatch-site.5 $(DESTDIR)$(MANDIR)/man5/sillwatch-site.5
	install -m 644 completion/sillwatch $(DESTDIR)$(BASHCOMPDIR)/sillwatch

uninstall:
	rm -f $(DESTDIR)$(PREFIX)/bin/sillwatch $(DESTDIR)$(MANDIR)/man1/sillwatch.1 \
	  $(DESTDIR)$(MANDIR)/man5/sillwatch-site.5 $(DESTDIR)$(BASHCOMPDIR)/sillwatch

# The source tarball sillwatch-VERSION.tar.gz: every file git tracks, as it
# is in the work tree, under sillwatch-VERSION/; reproducible (sorted names,
# no owners, every mtime the last commit's or SOURCE_DATE_EPOCH).
# `make distcheck` unpacks it in $(BUILD)/distcheck and runs `make check`
# there.  Needs a git checkout.
DISTNAME  := sillwatch-$(VERSION)
DISTDIR   ?= .
dist:
	@test "$$(git rev-parse --show-toplevel 2>/dev/null)" = "$$(pwd -P)" || \
	  { echo "make dist: needs a git checkout (it packs what git tracks)" >&2; exit 2; }
	git ls-files -z | tar --null -T - --sort=name --owner=0 --group=0 \
	  --numeric-owner --mode='u+rw,go+r,go-w' \
	  --mtime=@$${SOURCE_DATE_EPOCH:-$$(git log -1 --format=%ct)} \
	  --transform 's,^,$(DISTNAME)/,S' -cf - | gzip -n -9 > $(DISTDIR)/$(DISTNAME).tar.gz.tmp
	mv $(DISTDIR)/$(DISTNAME).tar.gz.tmp $(DISTDIR)/$(DISTNAME).tar.gz
	@echo "wrote $(DISTDIR)/$(DISTNAME).tar.gz"

distcheck:
	@rm -rf $(BUILD)/distcheck && mkdir -p $(BUILD)/distcheck
	$(MAKE) dist DISTDIR=$(BUILD)/distcheck
	cd $(BUILD)/distcheck && tar xzf $(DISTNAME).tar.gz && \
	  $(MAKE) -C $(DISTNAME) check
	@echo "distcheck: $(DISTNAME).tar.gz unpacks and passes make check"

clean:
	rm -rf $(BUILD)

-include $(LIB_OBJ:.o=.d) $(CLI_OBJ:.o=.d)
