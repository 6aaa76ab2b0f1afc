# eigenlog build. `make` builds the library and program; `make test` installs
# what is missing, builds, runs every test, then runs them again under
# AddressSanitizer + UndefinedBehaviorSanitizer. See DEVELOPERS.md.

CC      ?= cc
PKGS    := lapacke openblas fftw3 zlib
# Debian packages the build and the tests need (make deps installs the missing).
DEB_PKGS := build-essential pkg-config liblapacke-dev libopenblas-dev \
            libfftw3-dev libcmocka-dev zlib1g-dev chromium fonts-dejavu-core \
            jq slurm-wlm munge python3-jsonschema time

PKG_CFLAGS := $(shell pkg-config --cflags $(PKGS) 2>/dev/null)
PKG_LIBS   := $(shell pkg-config --libs $(PKGS) 2>/dev/null || echo -llapacke -lopenblas -lfftw3 -lz)
CMOCKA_CFLAGS := $(shell pkg-config --cflags cmocka 2>/dev/null)
CMOCKA_LIBS   := $(shell pkg-config --libs cmocka 2>/dev/null || echo -lcmocka)

WARN    := -Wall -Wextra -Wpedantic -Werror -Wshadow -Wstrict-prototypes \
           -Wmissing-prototypes -Wformat=2
BASE_CFLAGS := -std=c11 -D_POSIX_C_SOURCE=200809L -D_XOPEN_SOURCE=700 $(WARN) $(PKG_CFLAGS) -Isrc -MMD -MP
OPT_CFLAGS  ?= -O3 -g
SAN_CFLAGS  := -O1 -g -fno-omit-frame-pointer -fsanitize=address,undefined \
               -fno-sanitize-recover=all
LDLIBS_ALL  = $(PKG_LIBS) -lpthread -lm

LIB_SRC  := $(sort $(wildcard src/el_*.c))
CLI_SRC  := src/main.c $(sort $(wildcard src/cli_*.c))
TEST_SRC := $(sort $(wildcard tests/test_*.c))
TOOL_SRC := $(sort $(wildcard bench/*.c))

# Two build flavours share one rule set: rel (optimised) and san (sanitizers).
define FLAVOUR
$(1)_DIR    := build/$(1)
$(1)_LIB    := build/$(1)/libeigenlog.a
$(1)_BIN    := build/$(1)/eigenlog
$(1)_OBJ    := $$(patsubst src/%.c,build/$(1)/obj/%.o,$$(LIB_SRC))
$(1)_CLIOBJ := $$(patsubst src/%.c,build/$(1)/obj/%.o,$$(CLI_SRC))
$(1)_TESTS  := $$(patsubst tests/%.c,build/$(1)/tests/%,$$(TEST_SRC))
$(1)_TOOLS  := $$(patsubst bench/%.c,build/$(1)/bench/%,$$(TOOL_SRC))

build/$(1)/obj/%.o: src/%.c Makefile
	@mkdir -p $$(dir $$@)
	$$(CC) $$(BASE_CFLAGS) $(2) -c $$< -o $$@

$$($(1)_LIB): $$($(1)_OBJ)
	@rm -f $$@
	$$(AR) rcs $$@ $$^

$$($(1)_BIN): $$($(1)_CLIOBJ) $$($(1)_LIB)
	$$(CC) $(2) $$($(1)_CLIOBJ) $$($(1)_LIB) $$(LDLIBS_ALL) -o $$@

build/$(1)/tests/%: tests/%.c tests/el_test.h $$($(1)_LIB)
	@mkdir -p $$(dir $$@)
	$$(CC) $$(BASE_CFLAGS) $$(CMOCKA_CFLAGS) $(2) -Itests $$< $$($(1)_LIB) \
	    $$(CMOCKA_LIBS) $$(LDLIBS_ALL) -o $$@

build/$(1)/bench/%: bench/%.c $$($(1)_LIB)
	@mkdir -p $$(dir $$@)
	$$(CC) $$(BASE_CFLAGS) $(2) $$< $$($(1)_LIB) $$(LDLIBS_ALL) -o $$@

-include $$($(1)_OBJ:.o=.d) $$($(1)_CLIOBJ:.o=.d)
endef

$(eval $(call FLAVOUR,rel,$(OPT_CFLAGS)))
$(eval $(call FLAVOUR,san,$(SAN_CFLAGS)))

.PHONY: all deps demo test check check-rel check-san bench calibrate accuracy clean fixtures
.DEFAULT_GOAL := all

all: $(rel_BIN) $(rel_LIB)

# Installs the Debian packages that are missing: with apt-get when root,
# otherwise prints the exact command to run.
deps:
	@missing=""; for p in $(DEB_PKGS); do \
	  dpkg-query -W -f='$${Status}' $$p 2>/dev/null | grep -q 'install ok installed' || missing="$$missing $$p"; \
	done; \
	if [ -z "$$missing" ]; then echo "deps: all present"; \
	elif [ "$$(id -u)" = 0 ]; then \
	  echo "deps: installing$$missing"; \
	  apt-get update -qq && DEBIAN_FRONTEND=noninteractive apt-get install -y -qq --no-install-recommends $$missing; \
	else \
	  echo "deps: missing$$missing; run:"; \
	  echo "  sudo apt-get install -y$$missing"; exit 1; \
	fi

demo: deps
	@$(MAKE) --no-print-directory all
	./build/rel/eigenlog assess datasets/booster_pump.csv

# Builds both flavours on every core first, then runs the tests one by one
# (so the last line printed is the closing count).
test: deps
	@$(MAKE) --no-print-directory -j$$(nproc) $(rel_BIN) $(rel_TESTS) $(san_BIN) $(san_TESTS)
	@$(MAKE) --no-print-directory check

check: check-rel check-san

check-rel: $(rel_BIN) $(rel_TESTS)
	@sh tests/run.sh rel

check-san: $(san_BIN) $(san_TESTS)
	@ASAN_OPTIONS=detect_leaks=1:abort_on_error=0 UBSAN_OPTIONS=print_stacktrace=1 \
	  sh tests/run.sh san

bench: deps
	@$(MAKE) --no-print-directory $(rel_BIN) $(rel_TOOLS)
	@sh bench/run.sh

# Monte Carlo coverage study of the bootstrap bounds (docs/uncertainty.md).
calibrate: deps
	@$(MAKE) --no-print-directory build/rel/bench/calibrate
	./build/rel/bench/calibrate

# Accuracy of every estimator and of --method auto on simulated logs of
# known systems across regimes and sensor noise (docs/accuracy.md).
accuracy: deps
	@$(MAKE) --no-print-directory build/rel/bench/accuracy
	./build/rel/bench/accuracy
	@$(MAKE) --no-print-directory build/rel/bench/subspace_study
	./build/rel/bench/subspace_study --family --boot 200

# Regenerates the numpy/scipy fixtures (needs Debian's python3-numpy and
# python3-scipy; not part of make test). Each script writes its own file.
fixtures:
	for s in tests/data/make_*.py; do /usr/bin/python3 $$s || exit 1; done

clean:
	rm -rf build

# ---------------------------------------------------------------------------
# Installing (docs/cli.md, "Installing"). `make install PREFIX=/usr DESTDIR=/tmp/x`
# installs the program, the eigenlog(1) man page and the bash completion
# (both generated from the program's --help by tools/, so they cannot
# drift from it), libeigenlog static and shared (soname libeigenlog.so.MAJOR,
# from -fPIC objects in build/rel/pic), the public header eigenlog.h with
# the stage headers in include/eigenlog/, and eigenlog.pc. Always the rel
# flavour. `make uninstall` with the same PREFIX/DESTDIR removes them.
# e2e_examples.sh runs the Python example; e2e_install.sh renders the man page.
DEB_PKGS     += python3 groff-base
VERSION      := $(shell sed -n 's/^\#define EL_VERSION "\(.*\)"/\1/p' src/el_report.h)
SOVERSION    := $(firstword $(subst ., ,$(VERSION)))
PREFIX       ?= /usr/local
BINDIR       ?= $(PREFIX)/bin
LIBDIR       ?= $(PREFIX)/lib
INCLUDEDIR   ?= $(PREFIX)/include
MANDIR       ?= $(PREFIX)/share/man
BASHCOMPDIR  ?= $(PREFIX)/share/bash-completion/completions
PKGCONFIGDIR ?= $(LIBDIR)/pkgconfig
INSTALL      ?= install

SHLIB_NAME   := libeigenlog.so.$(VERSION)
SHLIB_SONAME := libeigenlog.so.$(SOVERSION)
rel_PICOBJ   := $(patsubst src/%.c,build/rel/pic/%.o,$(LIB_SRC))
rel_SHLIB    := build/rel/$(SHLIB_NAME)
rel_MAN      := build/rel/eigenlog.1
rel_BASHCOMP := build/rel/eigenlog.bash
STAGE_HDRS   := $(sort $(wildcard src/el_*.h))

.PHONY: shared man completion install uninstall

build/rel/pic/%.o: src/%.c Makefile
	@mkdir -p $(dir $@)
	$(CC) $(BASE_CFLAGS) $(OPT_CFLAGS) -fPIC -c $< -o $@

$(rel_SHLIB): $(rel_PICOBJ)
	$(CC) -shared -Wl,-soname,$(SHLIB_SONAME) $(OPT_CFLAGS) $^ $(LDLIBS_ALL) -o $@
	ln -sf $(SHLIB_NAME) build/rel/$(SHLIB_SONAME)
	ln -sf $(SHLIB_SONAME) build/rel/libeigenlog.so

$(rel_MAN): $(rel_BIN) tools/gen_man.sh tools/help2roff.awk
	sh tools/gen_man.sh $(rel_BIN) >$@.tmp && mv $@.tmp $@

$(rel_BASHCOMP): $(rel_BIN) tools/gen_completion.sh
	sh tools/gen_completion.sh $(rel_BIN) >$@.tmp && mv $@.tmp $@

shared: $(rel_SHLIB)
man: $(rel_MAN)
completion: $(rel_BASHCOMP)

# The pkg-config file is written at install time, for the PREFIX given then.
install: $(rel_BIN) $(rel_LIB) $(rel_SHLIB) $(rel_MAN) $(rel_BASHCOMP)
	$(INSTALL) -d $(DESTDIR)$(BINDIR) $(DESTDIR)$(LIBDIR) $(DESTDIR)$(PKGCONFIGDIR) \
	    $(DESTDIR)$(INCLUDEDIR)/eigenlog $(DESTDIR)$(MANDIR)/man1 $(DESTDIR)$(BASHCOMPDIR)
	$(INSTALL) -m 755 $(rel_BIN) $(DESTDIR)$(BINDIR)/eigenlog
	$(INSTALL) -m 644 $(rel_LIB) $(DESTDIR)$(LIBDIR)/libeigenlog.a
	$(INSTALL) -m 755 $(rel_SHLIB) $(DESTDIR)$(LIBDIR)/$(SHLIB_NAME)
	ln -sf $(SHLIB_NAME) $(DESTDIR)$(LIBDIR)/$(SHLIB_SONAME)
	ln -sf $(SHLIB_SONAME) $(DESTDIR)$(LIBDIR)/libeigenlog.so
	$(INSTALL) -m 644 $(STAGE_HDRS) $(DESTDIR)$(INCLUDEDIR)/eigenlog/
	sed 's|^#include "\(el_[a-z_]*\.h\)"|#include "eigenlog/\1"|' src/eigenlog.h \
	    >$(DESTDIR)$(INCLUDEDIR)/eigenlog.h
	chmod 644 $(DESTDIR)$(INCLUDEDIR)/eigenlog.h
	sed -e 's|@PREFIX@|$(PREFIX)|' -e 's|@LIBDIR@|$(LIBDIR)|' \
	    -e 's|@INCLUDEDIR@|$(INCLUDEDIR)|' -e 's|@VERSION@|$(VERSION)|' \
	    -e 's|=$(PREFIX)/|=$${prefix}/|' tools/eigenlog.pc.in \
	    >$(DESTDIR)$(PKGCONFIGDIR)/eigenlog.pc
	chmod 644 $(DESTDIR)$(PKGCONFIGDIR)/eigenlog.pc
	$(INSTALL) -m 644 $(rel_MAN) $(DESTDIR)$(MANDIR)/man1/eigenlog.1
	$(INSTALL) -m 644 $(rel_BASHCOMP) $(DESTDIR)$(BASHCOMPDIR)/eigenlog

uninstall:
	rm -f $(DESTDIR)$(BINDIR)/eigenlog $(DESTDIR)$(LIBDIR)/libeigenlog.a \
	    $(DESTDIR)$(LIBDIR)/$(SHLIB_NAME) $(DESTDIR)$(LIBDIR)/$(SHLIB_SONAME) \
	    $(DESTDIR)$(LIBDIR)/libeigenlog.so $(DESTDIR)$(PKGCONFIGDIR)/eigenlog.pc \
	    $(DESTDIR)$(INCLUDEDIR)/eigenlog.h $(DESTDIR)$(MANDIR)/man1/eigenlog.1 \
	    $(DESTDIR)$(BASHCOMPDIR)/eigenlog \
	    $(patsubst src/%,$(DESTDIR)$(INCLUDEDIR)/eigenlog/%,$(STAGE_HDRS))
	-rmdir $(DESTDIR)$(INCLUDEDIR)/eigenlog 2>/dev/null

-include $(rel_PICOBJ:.o=.d)

# examples/ (tests/e2e_examples.sh runs them): the C example against the
# in-tree library of each flavour.
.PHONY: examples
examples: build/rel/examples/assess_from_c

build/rel/examples/assess_from_c: examples/assess_from_c.c src/eigenlog.h $(rel_LIB)
	@mkdir -p $(dir $@)
	$(CC) $(BASE_CFLAGS) $(OPT_CFLAGS) $< $(rel_LIB) $(LDLIBS_ALL) -o $@

build/san/examples/assess_from_c: examples/assess_from_c.c src/eigenlog.h $(san_LIB)
	@mkdir -p $(dir $@)
	$(CC) $(BASE_CFLAGS) $(SAN_CFLAGS) $< $(san_LIB) $(LDLIBS_ALL) -o $@
-include $(wildcard build/*/examples/*.d)
# --------------------------------------------------------------- end install
