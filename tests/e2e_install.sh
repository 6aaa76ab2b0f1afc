#!/bin/sh
# End-to-end: `make install` into a DESTDIR gives the program, the man page
# (every subcommand and option of --help in it, renders without warnings),
# the bash completion (offers what --help lists), the public header, the
# static and shared library (soname) and eigenlog.pc; a C program built with
# pkg-config against the installed files, linked static and shared, runs an
# assess of the booster-pump demo log (datasets/README.md: stable, spiral
# sink); PREFIX is honoured; `make uninstall` leaves no file behind.
# Always installs the rel build (also when run for the san flavour: the
# installed program is the one users get). Run by tests/run.sh.
set -u
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
passed=0
failed=0
check() { # check NAME CONDITION-EXIT-STATUS
    if [ "$2" -eq 0 ]; then passed=$((passed + 1)); else failed=$((failed + 1)); echo "FAIL $1"; fi
}
mk() { make -s --no-print-directory "$@"; }

dest=$tmp/dest
prefix=/usr/local
p=$dest$prefix
mk install DESTDIR="$dest" PREFIX="$prefix" >"$tmp/install.log" 2>&1
check "make install DESTDIR=... exits 0" $?
[ -s "$tmp/install.log" ] && sed 's/^/  install: /' "$tmp/install.log" | tail -5

bin=$p/bin/eigenlog
version=$(sed -n 's/^#define EL_VERSION "\(.*\)"/\1/p' src/el_report.h)
[ -x "$bin" ] && [ "$("$bin" --version)" = "eigenlog $version" ]
check "program installed in PREFIX/bin and runs (eigenlog $version)" $?

# --- man page: generated from --help, so every subcommand and every option
# of every subcommand's --help must be in it.
man1=$p/share/man/man1/eigenlog.1
[ -f "$man1" ]
check "man page installed in PREFIX/share/man/man1" $?
for sec in NAME SYNOPSIS DESCRIPTION SUBCOMMANDS "EXIT STATUS" CAUTION; do
    grep -q "^\.SH \"*$sec\"*\$" "$man1"
    check "man page has section $sec" $?
done
subs=$("$bin" --help | awk '/^subcommands:/ { on = 1; next } /^$/ { on = 0 } on && /^  [^ ]/ { print $1 }')
[ -n "$subs" ]
check "main --help lists subcommands" $?
missing=""
for s in $subs; do
    grep -q "^\.SS \"$s\"" "$man1" || missing="$missing $s"
    for o in $("$bin" "$s" --help | grep -o -- '^  --[a-z-]*' | sed 's/^ *//'); do
        grep -q -F "\\fB$(printf '%s' "$o" | sed 's/-/\\-/g')\\fR" "$man1" || missing="$missing $s:$o"
    done
done
[ -z "$missing" ]
check "man page has every subcommand and option of --help (missing:$missing)" $?
if command -v groff >/dev/null 2>&1; then
    groff -man -Tutf8 -ww -z "$man1" >"$tmp/groff.err" 2>&1 && [ ! -s "$tmp/groff.err" ]
    check "groff renders the man page without warnings" $?
    groff -man -Tutf8 -P-cbou "$man1" 2>/dev/null | grep -q "^EXIT STATUS"
    check "rendered man page shows EXIT STATUS" $?
fi

# --- bash completion, generated from --help.
comp=$p/share/bash-completion/completions/eigenlog
[ -f "$comp" ] && bash -n "$comp"
check "bash completion installed and parses" $?
complete_words() { # complete_words WORD... : prints the completions of the last word
    bash -c '. "$0"; COMP_WORDS=("$@"); COMP_CWORD=$(($# - 1)); _eigenlog; echo "${COMPREPLY[*]}"' \
        "$comp" eigenlog "$@"
}
[ "$(complete_words tr)" = "track" ]
check "completion: 'tr' -> track" $?
got=$(complete_words assess --)
want=$("$bin" assess --help | grep -o -- '^  --[a-z-]*' | sed 's/^ *//' | tr '\n' ' ')
miss=""
for o in $want; do case " $got " in *" $o "*) ;; *) miss="$miss $o" ;; esac; done
[ -z "$miss" ]
check "completion offers every assess option of --help (missing:$miss)" $?
[ "$(complete_words assess --method "")" = "auto ls fb tls iv ssi hankel" ]
check "completion: assess --method -> the estimators" $?
[ "$(complete_words demo "")" = "booster-pump rig-test fan-warmup" ]
check "completion: demo -> the scenario names" $?

# --- header, libraries, pkg-config file.
[ -f "$p/include/eigenlog.h" ]
check "eigenlog.h installed in PREFIX/include" $?
bad=""
for h in $(sed -n 's/^#include "\(.*\)"/\1/p' "$p/include/eigenlog.h"); do
    [ -f "$p/include/$h" ] || bad="$bad $h"
done
[ -z "$bad" ] && grep -q '^#include "eigenlog/el_assess.h"' "$p/include/eigenlog.h"
check "eigenlog.h includes eigenlog/el_*.h, all installed (missing:$bad)" $?
[ -f "$p/lib/libeigenlog.a" ] && [ -L "$p/lib/libeigenlog.so" ] && [ -L "$p/lib/libeigenlog.so.0" ]
check "libeigenlog.a, libeigenlog.so and libeigenlog.so.0 installed" $?
readelf -d "$p/lib/libeigenlog.so.$version" 2>/dev/null | grep -q 'SONAME.*\[libeigenlog\.so\.0\]'
check "shared library has soname libeigenlog.so.0" $?
export PKG_CONFIG_PATH="$p/lib/pkgconfig"
# The .pc names the final PREFIX; point it at the DESTDIR copy.
pc() { pkg-config --define-variable=prefix="$p" "$@"; }
[ "$(pc --modversion eigenlog)" = "$version" ]
check "pkg-config --modversion eigenlog = $version" $?
grep -q "^prefix=$prefix\$" "$PKG_CONFIG_PATH/eigenlog.pc" &&
    grep -q '^Requires.private: lapacke openblas fftw3 zlib$' "$PKG_CONFIG_PATH/eigenlog.pc"
check "eigenlog.pc names PREFIX and the private dependencies" $?

# --- a program built against the installed library, shared and static.
cflags="-std=c11 -Wall -Wextra -Wpedantic -Werror"
cc $cflags examples/assess_from_c.c $(pc --cflags --libs eigenlog openblas) \
    -o "$tmp/shared" 2>"$tmp/cc.err"
check "example builds with pkg-config --cflags --libs eigenlog (shared)" $?
cat "$tmp/cc.err"
LD_LIBRARY_PATH="$p/lib" "$tmp/shared" >"$tmp/shared.out" 2>&1
check "shared build runs with LD_LIBRARY_PATH" $?
grep -q '^verdict: stable (spiral sink)$' "$tmp/shared.out"
check "shared build: booster pump stable spiral sink (datasets/README.md)" $?
readelf -d "$tmp/shared" | grep -q 'NEEDED.*libeigenlog\.so\.0'
check "shared build needs libeigenlog.so.0" $?
static_libs=$(pc --static --libs eigenlog openblas | sed 's/-leigenlog/-l:libeigenlog.a/')
cc $cflags examples/assess_from_c.c $(pc --cflags eigenlog openblas) $static_libs \
    -o "$tmp/static" 2>"$tmp/cc.err"
check "example builds against libeigenlog.a (pkg-config --static)" $?
cat "$tmp/cc.err"
! readelf -d "$tmp/static" | grep -q libeigenlog
check "static build does not need libeigenlog.so" $?
"$tmp/static" >"$tmp/static.out" 2>&1 && cmp -s "$tmp/static.out" "$tmp/shared.out"
check "static build runs and prints what the shared one does" $?
# The library and the installed program give the same answer on the same log.
"$bin" demo booster-pump -o "$tmp" >/dev/null &&
    "$bin" assess "$tmp/booster_pump.csv" --boot 200 --json "$tmp/pump.json" --quiet &&
    grep -q '"stability": "stable"' "$tmp/pump.json"
check "installed program agrees: booster pump stable" $?

# --- another PREFIX, then uninstall of both.
dest2=$tmp/dest2
mk install DESTDIR="$dest2" PREFIX=/opt/eigenlog >/dev/null 2>&1 &&
    [ -x "$dest2/opt/eigenlog/bin/eigenlog" ] &&
    grep -q '^prefix=/opt/eigenlog$' "$dest2/opt/eigenlog/lib/pkgconfig/eigenlog.pc"
check "PREFIX=/opt/eigenlog is honoured" $?
mk uninstall DESTDIR="$dest" PREFIX="$prefix" >/dev/null 2>&1 &&
    mk uninstall DESTDIR="$dest2" PREFIX=/opt/eigenlog >/dev/null 2>&1
check "make uninstall exits 0" $?
left=$(find "$dest" "$dest2" ! -type d | head -5)
[ -z "$left" ]
check "uninstall leaves no file behind (left: $left)" $?

echo "e2e_install: $passed passed, $failed failed"
[ "$failed" -eq 0 ]
