# Makefile - build, test, demo, bench and install henrybench
#
#   make            build ./henrybench
#   make check      build and run every test (SANITIZE=1: under ASan + UBSan;
#                   CC=clang: built with clang in build-clang/), one test
#                   program per core at once (HB_TEST_JOBS=N to choose)
#   make memcheck   the same tests under valgrind
#   make demo       run the main job on the simulated bench
#   make bench      benchmarks (ratios measured in one run; not tests)
#   make install    PREFIX=/usr/local DESTDIR=
#   make man        regenerate henrybench.1 from the option tables (commit it)
#
# Missing Debian packages are installed by scripts/ensure-deps (as root) or
# named in one apt-get line (otherwise) before anything is compiled.

PREFIX     ?= /usr/local
DESTDIR    ?=
BINDIR      = $(PREFIX)/bin
DATADIR     = $(PREFIX)/share/henrybench
MANDIR      = $(PREFIX)/share/man/man1
VERSION    := 0.1.0

CC         ?= cc

PKGS       := libserialport gsl sqlite3 inih plplot jansson libcrypto libpcre2-8 libpq
TEST_PKGS  := cmocka

# The compiler decides the warning flags and has its own build folder, so
# that `make CC=clang` never links objects another compiler left behind.
# By name first, so that it holds before the deps step has installed clang.
CC_IS_CLANG := $(or $(filter clang%,$(notdir $(CC))),$(shell $(CC) --version 2>/dev/null | grep -qi clang && echo 1))
CC_TAG     := $(if $(CC_IS_CLANG),-clang)

ifeq ($(SANITIZE),1)
BUILD      ?= build$(CC_TAG)-san
SANFLAGS   := -fsanitize=address,undefined -fno-omit-frame-pointer -fno-sanitize-recover=undefined
OPT        ?= -O1
else
BUILD      ?= build$(CC_TAG)
SANFLAGS   :=
OPT        ?= -O2
endif

# Recursive '=' on purpose: pkg-config runs when a recipe needs it, after
# the deps step has had its chance to install what is missing.
PKG_CFLAGS  = $(shell pkg-config --cflags $(PKGS))
PKG_LIBS    = $(shell pkg-config --libs $(PKGS))
TEST_CFLAGS = $(shell pkg-config --cflags $(TEST_PKGS))
TEST_LIBS   = $(shell pkg-config --libs $(TEST_PKGS))

# Fixed-size text fields (IDN strings, part numbers) are cut on purpose, so
# snprintf truncation is not an error here. Older clang has no such check and
# would reject the flag itself under -Werror; newer clang has it.
WARN       := -Wall -Wextra -Werror
ifneq ($(CC_IS_CLANG),)
WARN       += -Wno-unknown-warning-option
endif
WARN       += -Wno-format-truncation
# `make CC=clang` on a machine without clang: the deps step installs it.
DEPS_TOOLS := $(if $(filter clang%,$(notdir $(CC))),clang:clang)
CPPFLAGS   += -D_POSIX_C_SOURCE=200809L -D_DEFAULT_SOURCE \
              -DHB_VERSION='"$(VERSION)"' -DHB_PROFILE_DIR='"$(DATADIR)/profiles"' -I.
CFLAGS     ?= $(OPT) -g
ALL_CFLAGS  = -std=c11 $(WARN) $(CFLAGS) $(SANFLAGS) $(PKG_CFLAGS) -MMD -MP
LDLIBS_ALL  = $(PKG_LIBS) -lm -lpthread

LIB_SRCS   := $(wildcard common/*.c drivers/*.c drivers/sim/*.c fit/*.c db/*.c) \
              $(filter-out src/cli/main.c,$(wildcard src/*/*.c))
LIB_ASMS   := $(wildcard db/*.S drivers/*.S src/*/*.S)
LIB_OBJS   := $(LIB_SRCS:%.c=$(BUILD)/%.o) $(LIB_ASMS:%.S=$(BUILD)/%.o)
MAIN_OBJ   := $(BUILD)/src/cli/main.o
TEST_SRCS  := $(wildcard tests/test_*.c)
TEST_BINS  := $(TEST_SRCS:tests/%.c=$(BUILD)/tests/%)
BENCH_SRCS := $(wildcard bench/bench_*.c)
BENCH_BINS := $(BENCH_SRCS:bench/%.c=$(BUILD)/bench/%)
LIBHB      := $(BUILD)/libhb.a

# Quiet by default; `make V=1` prints every command.
ifeq ($(V),1)
Q :=
say = @true
else
Q := @
say = @echo "  $(1) $(2)"
endif

.PHONY: all deps check memcheck demo bench install uninstall clean man
# Keep test objects between runs.
.SECONDARY: $(TEST_SRCS:tests/%.c=$(BUILD)/tests/%.o)
.DEFAULT_GOAL := all

all: henrybench

deps:
	@HB_EXTRA_TOOLS="$(DEPS_TOOLS)" sh scripts/ensure-deps

ifeq ($(SANITIZE),1)
henrybench: $(BUILD)/henrybench
else
henrybench: $(BUILD)/henrybench
	@cp $< $@
endif

$(BUILD)/henrybench: $(MAIN_OBJ) $(LIBHB)
	$(call say,LD,$@)
	$(Q)$(CC) $(SANFLAGS) -o $@ $(MAIN_OBJ) $(LIBHB) $(LDLIBS_ALL)

$(LIBHB): $(LIB_OBJS)
	@rm -f $@
	$(call say,AR,$@)
	$(Q)ar rcs $@ $^

$(BUILD)/%.o: %.c | deps
	@mkdir -p $(dir $@)
	$(call say,CC,$<)
	$(Q)$(CC) $(CPPFLAGS) $(ALL_CFLAGS) -c -o $@ $<

$(BUILD)/%.o: %.S | deps
	@mkdir -p $(dir $@)
	$(call say,AS,$<)
	$(Q)$(CC) $(CPPFLAGS) -MMD -MP -c -o $@ $<

# .incbin is invisible to -MMD: the embedded schemas are real prerequisites.
$(BUILD)/db/schema.o: db/schema.sql
$(BUILD)/db/schema_pg.o: db/schema_pg.sql

$(BUILD)/tests/%.o: tests/%.c | deps
	@mkdir -p $(dir $@)
	$(call say,CC,$<)
	$(Q)$(CC) $(CPPFLAGS) $(ALL_CFLAGS) $(TEST_CFLAGS) -c -o $@ $<

# A test may ask for link-time wrapping with a line "// LDFLAGS: -Wl,--wrap=sym".
$(BUILD)/tests/%: $(BUILD)/tests/%.o $(LIBHB)
	$(call say,LD,$@)
	$(Q)$(CC) $(SANFLAGS) -o $@ $< $(shell sed -n 's|^// LDFLAGS: ||p' tests/$*.c) $(LIBHB) $(TEST_LIBS) $(LDLIBS_ALL)

$(BUILD)/bench/%: bench/%.c $(LIBHB) | deps
	@mkdir -p $(dir $@)
	$(call say,CC,$<)
	$(Q)$(CC) $(CPPFLAGS) $(ALL_CFLAGS) -o $@ $< $(LIBHB) $(LDLIBS_ALL)

# The command-line tests run the binary of this build (the sanitized one
# under SANITIZE=1), not whatever ./henrybench happens to be; an explicit
# HENRYBENCH_BIN from the environment wins. The test programs run in
# parallel, up to one per core (HB_TEST_JOBS=N to choose).
HENRYBENCH_BIN ?= $(abspath $(BUILD)/henrybench)
RUN_TESTS   = HENRYBENCH_BIN="$(HENRYBENCH_BIN)" sh tests/run-tests $(BUILD) $(TEST_BINS)

check: deps
	@HB_EXTRA_TOOLS="chromium:chromium pdftotext:poppler-utils groff:groff-base zsh:zsh pg_ctlcluster:postgresql" sh scripts/ensure-deps
	@$(MAKE) --no-print-directory henrybench $(BUILD)/henrybench $(TEST_BINS)
	@$(RUN_TESTS)

# The tests under valgrind's memcheck: any error or definite leak fails the test. The truth
# tests' coverage statistics are the job of `make check`; here four seeds exercise the code.
memcheck: deps
	@HB_EXTRA_TOOLS="valgrind:valgrind" sh scripts/ensure-deps
	@$(MAKE) --no-print-directory henrybench $(BUILD)/henrybench $(TEST_BINS)
	@HB_TRUTH_RUNS=4 HB_TEST_WRAPPER="valgrind -q --error-exitcode=99 --leak-check=full --errors-for-leak-kinds=definite" \
		$(RUN_TESTS)

demo: deps
	@$(MAKE) --no-print-directory henrybench
	./henrybench demo --out demo-out

bench: deps
	@$(MAKE) --no-print-directory henrybench $(BENCH_BINS)
	@for b in $(BENCH_BINS); do echo "== $$b"; $$b || exit 1; done

# The man page is generated from the option tables and committed, so that
# `man ./henrybench.1` works in a fresh clone; test_manpage says when it is stale.
man: henrybench
	$(BUILD)/henrybench manpage > henrybench.1.tmp && mv henrybench.1.tmp henrybench.1

install: henrybench
	install -d $(DESTDIR)$(BINDIR) $(DESTDIR)$(DATADIR)/profiles $(DESTDIR)$(MANDIR) \
		$(DESTDIR)$(PREFIX)/share/bash-completion/completions $(DESTDIR)$(PREFIX)/share/zsh/vendor-completions
	install -m 755 $(BUILD)/henrybench $(DESTDIR)$(BINDIR)/henrybench
	install -m 644 drivers/profiles/*.ini $(DESTDIR)$(DATADIR)/profiles/
	install -m 644 henrybench.1 $(DESTDIR)$(MANDIR)/henrybench.1
	$(BUILD)/henrybench completion bash > $(DESTDIR)$(PREFIX)/share/bash-completion/completions/henrybench
	$(BUILD)/henrybench completion zsh > $(DESTDIR)$(PREFIX)/share/zsh/vendor-completions/_henrybench

uninstall:
	rm -f $(DESTDIR)$(BINDIR)/henrybench $(DESTDIR)$(MANDIR)/henrybench.1
	rm -f $(DESTDIR)$(PREFIX)/share/bash-completion/completions/henrybench
	rm -f $(DESTDIR)$(PREFIX)/share/zsh/vendor-completions/_henrybench
	rm -rf $(DESTDIR)$(DATADIR)

clean:
	rm -rf build build-san build-clang build-clang-san henrybench

-include $(shell find $(BUILD) -name '*.d' 2>/dev/null)
