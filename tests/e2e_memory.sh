#!/bin/sh
# End-to-end: `assess --boot 0` of a mid-size log (300,000 rows x 8
# channels: two damped oscillations seen by every channel, plus noise)
# stays within 3x the raw data (rows x channels x 8 bytes, issue 13's
# target) in peak resident memory, beyond what the same command needs for
# a 3,000-row log of the same kind (the program, its libraries and fixed
# plans: measured the same way, so the difference is what grows with the
# log). Peak RSS from getrusage(RUSAGE_CHILDREN) of one subprocess each
# (python3's resource module). Under ASan/UBSan (build/san) memory is the
# sanitiser's, so the check is skipped there. Run by tests/run.sh with
# EIGENLOG set to the program under test.
set -u
bin=${EIGENLOG:-build/rel/eigenlog}
case $bin in
*san*)
    echo "e2e_memory: skipped under the sanitisers (their memory, not ours)"
    exit 0
    ;;
esac
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
passed=0
failed=0
check() { # check NAME CONDITION-EXIT-STATUS
    if [ "$2" -eq 0 ]; then passed=$((passed + 1)); else failed=$((failed + 1)); echo "FAIL $1"; fi
}

# gen ROWS FILE: 1 ms steps; modes at 7 Hz (decay 3/s) and 31 Hz (decay
# 11/s) driven by a fixed-seed noise, each channel a different mix.
gen() {
    awk -v n="$1" 'BEGIN {
        srand(12345); dt = 0.001; pi = 3.14159265358979
        r1 = exp(-3 * dt); w1 = 2 * pi * 7 * dt; r2 = exp(-11 * dt); w2 = 2 * pi * 31 * dt
        a1 = 2 * r1 * cos(w1); b1 = -r1 * r1; a2 = 2 * r2 * cos(w2); b2 = -r2 * r2
        printf "t"; for (c = 1; c <= 8; c++) printf ",ch%d", c; printf "\n"
        x1 = y1 = x2 = y2 = 0
        for (k = 0; k < n; k++) {
            u1 = a1 * x1 + b1 * y1 + (rand() - 0.5); y1 = x1; x1 = u1
            u2 = a2 * x2 + b2 * y2 + (rand() - 0.5); y2 = x2; x2 = u2
            printf "%.3f", k * dt
            for (c = 1; c <= 8; c++)
                printf ",%.6g", x1 * cos(c) + x2 * sin(2 * c) + 0.05 * (rand() - 0.5)
            printf "\n"
        }
    }' >"$2"
}

# peak RSS (KiB) of one assess run
peak() {
    python3 -c '
import resource, subprocess, sys
r = subprocess.run(sys.argv[1:], stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
if r.returncode != 0:
    sys.exit("assess failed: %d" % r.returncode)
print(resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss)' \
        "$bin" assess "$1" --boot 0 --quiet --json "$tmp/out.json"
}

rows=300000
gen "$rows" "$tmp/big.csv"
gen 3000 "$tmp/small.csv"
small=$(peak "$tmp/small.csv")
check "assess runs on the small log" $?
big=$(peak "$tmp/big.csv")
check "assess runs on the mid-size log" $?
raw_kib=$((rows * 8 * 8 / 1024))
grow=$((big - small))
echo "e2e_memory: peak RSS $big KiB (small log $small KiB): $grow KiB over $raw_kib KiB of data"
[ "$grow" -le $((3 * raw_kib)) ]
check "peak RSS grows by at most 3x the raw data ($grow KiB, limit $((3 * raw_kib)) KiB)" $?

echo "e2e_memory: $passed passed, $failed failed"
[ "$failed" -eq 0 ]
