#!/bin/sh
# End-to-end: no idle OpenBLAS worker thread in any command. The OpenBLAS
# built for threads starts one worker per extra core in its library
# constructor, before main, unless OPENBLAS_NUM_THREADS says otherwise, and
# an idle worker spins for about 0.1 s of CPU (main.c). main.c therefore
# executes the program again with OPENBLAS_NUM_THREADS=1 when the variable
# is unset; `scan`, which calls no BLAS, stops the workers in place instead
# (no second start). Checked on `assess -` and `scan -` waiting for their
# input on a FIFO (no thread of eigenlog's own runs then): the process has
# one thread, assess's environment says OPENBLAS_NUM_THREADS=1, both keep
# their name, and a value the user set is left alone. A thread count, not a time: it does not
# depend on the load of the machine. Skipped on one core (OpenBLAS starts
# no worker there, so the check could not fail). Linux only (/proc).
set -u
bin=${EIGENLOG:-build/rel/eigenlog}
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
passed=0
failed=0
check() { # check NAME CONDITION-EXIT-STATUS
    if [ "$2" -eq 0 ]; then passed=$((passed + 1)); else failed=$((failed + 1)); echo "FAIL $1"; fi
}
if [ "$(nproc)" -lt 2 ] || [ ! -r /proc/self/status ]; then
    echo "e2e_blas_threads: skip: one core or no /proc (OpenBLAS starts no worker then)"
    exit 0
fi

# Starts `eigenlog SUBCOMMAND -` reading the FIFO with the environment
# given as arguments (env syntax), waits (at most 20 s, in steps of 0.05 s) until it sits in
# read(2) on its standard input, the only thing it does then, and records
# its thread count, name and OPENBLAS_NUM_THREADS in $tmp/$1.*; then closes
# the FIFO, so it ends (exit 2: no data).
probe() { # probe TAG SUBCOMMAND ENV-ASSIGNMENTS...
    tag=$1
    sub=$2
    shift 2
    rm -f "$tmp/fifo"
    mkfifo "$tmp/fifo"
    env -u OPENBLAS_NUM_THREADS "$@" "$bin" "$sub" - <"$tmp/fifo" >/dev/null 2>&1 &
    pid=$!
    exec 3>"$tmp/fifo"
    i=0
    # /proc/PID/syscall: "0 0x0 ..." = read(2) on descriptor 0, reached
    # only after the re-exec, the library constructors and main's start.
    while [ $i -lt 400 ]; do
        case $(cat "/proc/$pid/syscall" 2>/dev/null) in "0 0x0 "*) break ;; esac
        sleep 0.05
        i=$((i + 1))
    done
    sed -n 's/^Threads:[[:space:]]*//p' "/proc/$pid/status" >"$tmp/$tag.threads"
    cat "/proc/$pid/comm" >"$tmp/$tag.comm"
    tr '\0' '\n' <"/proc/$pid/environ" | sed -n 's/^OPENBLAS_NUM_THREADS=//p' >"$tmp/$tag.env"
    exec 3>&-
    wait $pid
}

probe default assess
[ "$(cat "$tmp/default.threads")" = 1 ]
check "assess waiting for input runs 1 thread (got $(cat "$tmp/default.threads"); an idle OpenBLAS worker would make 2)" $?
[ "$(cat "$tmp/default.env")" = 1 ]
check "OPENBLAS_NUM_THREADS=1 is set for assess (got '$(cat "$tmp/default.env")')" $?
[ "$(cat "$tmp/default.comm")" = "$(basename "$bin")" ]
check "the process keeps its name after the re-exec (got '$(cat "$tmp/default.comm")')" $?

# scan stops the workers without the re-exec: one thread, no variable set.
probe scan scan
[ "$(cat "$tmp/scan.threads")" = 1 ]
check "scan waiting for input runs 1 thread (got $(cat "$tmp/scan.threads"); an idle OpenBLAS worker would make 2)" $?
[ "$(cat "$tmp/scan.comm")" = "$(basename "$bin")" ]
check "scan keeps its name (got '$(cat "$tmp/scan.comm")')" $?
# (This project links the OpenBLAS built for threads, which has the
# shutdown: a scan that was started twice would show the variable.)
[ -z "$(cat "$tmp/scan.env")" ]
check "scan runs without the re-exec (got OPENBLAS_NUM_THREADS='$(cat "$tmp/scan.env")')" $?

# A value the user set is kept (and OpenBLAS starts the workers it asks for).
probe user scan OPENBLAS_NUM_THREADS=2
[ "$(cat "$tmp/user.env")" = 2 ]
check "a user's OPENBLAS_NUM_THREADS=2 is left as set (got '$(cat "$tmp/user.env")')" $?
[ "$(cat "$tmp/user.threads")" = 2 ]
check "with OPENBLAS_NUM_THREADS=2 OpenBLAS's worker exists (got $(cat "$tmp/user.threads")): the probe can see one" $?

# The same output either way.
"$bin" scan datasets/booster_pump.csv --json "$tmp/a.json" >/dev/null 2>&1
env OPENBLAS_NUM_THREADS=1 "$bin" scan datasets/booster_pump.csv --json "$tmp/b.json" >/dev/null 2>&1
cmp -s "$tmp/a.json" "$tmp/b.json" && [ -s "$tmp/a.json" ]
check "scan --json: same bytes with and without the re-exec" $?

echo "e2e_blas_threads: $passed passed, $failed failed"
[ "$failed" -eq 0 ]
