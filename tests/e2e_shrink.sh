#!/bin/sh
# End-to-end: a log file cut short by another program while eigenlog reads
# it (a logger rotating its file, `> file` in another shell). Regular files
# are read through a memory map, and touching a page past the new end
# raises SIGBUS: the program must not die of it but say which file shrank,
# give a hint, exit with status 4 (input/output) and leave no output file.
# The cut is made at a fixed point, not by a racing background job: a
# preloaded stand-in for posix_madvise (tests/data/shrink_preload.c,
# compiled here) truncates the file right after it was mapped, before the
# first byte is read. Run by tests/run.sh with EIGENLOG set.
set -u
bin=${EIGENLOG:-build/rel/eigenlog}
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
passed=0
failed=0

if ! ${CC:-cc} -shared -fPIC -O1 -o "$tmp/shrink.so" tests/data/shrink_preload.c 2>"$tmp/cc.txt"; then
    echo "e2e_shrink: cannot build the preload library (skipped):"
    cat "$tmp/cc.txt"
    exit 0
fi
# Under AddressSanitizer a preloaded library comes before its runtime.
ASAN_OPTIONS="${ASAN_OPTIONS:+$ASAN_OPTIONS:}verify_asan_link_order=0"
export ASAN_OPTIONS

# A log of several pages (400 KB): most of it lies past a cut at 100 bytes.
awk 'BEGIN { print "t [s],a [V],b [V]";
             for (i = 0; i < 20000; i++) printf "%.3f,%.6f,%.6f\n", i * 0.01, sin(i * 0.1), cos(i * 0.07) }' \
    >"$tmp/log.src"

check() {
    name=$1 cut=$2
    shift 2
    cp "$tmp/log.src" "$tmp/log.csv"
    rm -f "$tmp/out.json"
    EL_TEST_SHRINK="$tmp/log.csv" EL_TEST_SHRINK_TO=$cut LD_PRELOAD="$tmp/shrink.so" \
        "$bin" "$@" >"$tmp/stdout" 2>"$tmp/stderr"
    got=$?
    problem=""
    [ "$got" -eq 4 ] || problem="exit status $got, want 4"
    grep -q "log.csv: the file shrank while it was being read" "$tmp/stderr" ||
        problem="$problem; no message naming the file"
    grep -q "hint:" "$tmp/stderr" || problem="$problem; no hint"
    [ -e "$tmp/out.json" ] && problem="$problem; output file left behind"
    ls "$tmp" | grep -q '\.tmp' && problem="$problem; temporary file left behind"
    [ -s "$tmp/stdout" ] && problem="$problem; a partial report on standard output"
    if [ -z "$problem" ]; then
        passed=$((passed + 1))
    else
        failed=$((failed + 1))
        echo "FAIL $name: $problem"
        sed 's/^/  stderr: /' "$tmp/stderr" | head -n 5
    fi
}

check "scan, file emptied" 0 scan "$tmp/log.csv" --json "$tmp/out.json"
check "scan, file cut after its header" 100 scan "$tmp/log.csv" --json "$tmp/out.json"
check "assess, file emptied" 0 assess "$tmp/log.csv" --boot 0 --json "$tmp/out.json"
check "spectrum, file cut" 100 spectrum "$tmp/log.csv" --json "$tmp/out.json"

# The preload alone changes nothing: without EL_TEST_SHRINK the log reads.
cp "$tmp/log.src" "$tmp/log.csv"
if LD_PRELOAD="$tmp/shrink.so" "$bin" scan "$tmp/log.csv" >"$tmp/stdout" 2>"$tmp/stderr" &&
    grep -q "rows         20000" "$tmp/stdout"; then
    passed=$((passed + 1))
else
    failed=$((failed + 1))
    echo "FAIL the preload library alone: the log did not read"
fi

echo "e2e_shrink: $passed passed, $failed failed"
[ "$failed" -eq 0 ]
