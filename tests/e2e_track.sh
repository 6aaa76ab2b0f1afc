#!/bin/sh
# End-to-end: `eigenlog track` through the command line: a log whose
# margin falls linearly (simulated below, true margin known) is called
# shrinking and --fail-on shrinking exits 5, as is the fan-warmup demo; the
# steady booster-pump demo is not called shrinking; JSON is complete and NaN-free; bad options exit 1
# naming the option. Run by tests/run.sh with EIGENLOG set.
set -u
bin=${EIGENLOG:-build/rel/eigenlog}
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
passed=0
failed=0
check() { # check NAME CONDITION-EXIT-STATUS
    if [ "$2" -eq 0 ]; then passed=$((passed + 1)); else failed=$((failed + 1)); echo "FAIL $1"; fi
}

# A 0.5 Hz oscillator at dt = 0.05 s whose decay rate goes from 0.5 to 0.1
# 1/s over 800 s (step k: e^(-sigma_k dt) times a rotation, plus noise of
# sd 0.1). Noise: Park-Miller generator (16807 x mod 2^31 - 1, exact in
# awk's doubles) and Box-Muller.
awk 'BEGIN {
    pi = 3.14159265358979; dt = 0.05; om = 2 * pi * 0.5; n = 16000; m = 2147483647
    s = 12345; x = 1; y = 0
    print "t,x,y"
    for (k = 0; k < n; k++) {
        printf "%.2f,%.9f,%.9f\n", k * dt, x + 3, y - 1
        sg = 0.5 + (0.1 - 0.5) * k / (n - 1); g = exp(-sg * dt)
        s = (16807 * s) % m; u1 = s / m; s = (16807 * s) % m; u2 = s / m
        r = sqrt(-2 * log(u1)); e1 = r * cos(2 * pi * u2); e2 = r * sin(2 * pi * u2)
        xn = g * (cos(om * dt) * x - sin(om * dt) * y) + 0.1 * e1
        y = g * (sin(om * dt) * x + cos(om * dt) * y) + 0.1 * e2; x = xn
    }
}' >"$tmp/drift.csv"

"$bin" track "$tmp/drift.csv" --window 100 --boot 300 --json "$tmp/drift.json" \
    --fail-on shrinking >"$tmp/drift.txt"
status=$?
[ "$status" -eq 5 ]
check "falling margin: --fail-on shrinking exits 5 (got $status)" $?
grep -q '"class": "shrinking"' "$tmp/drift.json"
check "falling margin is called shrinking" $?
grep -q "SHRINKING MARGIN" "$tmp/drift.txt" && grep -q "Caution" "$tmp/drift.txt"
check "text report has the verdict and the caution" $?
# Text is wrapped to 80 columns: search the words with the line breaks folded.
tr '\n' ' ' <"$tmp/drift.txt" | tr -s ' ' >"$tmp/drift_flat.txt"
grep -q "covers the windows shown only" "$tmp/drift_flat.txt" &&
    grep -q "straight-line extrapolation: the margin may be lost sooner" "$tmp/drift_flat.txt" &&
    ! grep -q "window only" "$tmp/drift_flat.txt"
check "track cautions: the windows shown only, time to zero may come sooner, no 'window only'" $?
jq -e '(.cautions | length == 3) and (.caution | test("window only") | not)' "$tmp/drift.json" >/dev/null
check "track JSON: cautions[] and a caution for many windows" $?
for key in '"command": "track"' '"windowing"' '"windows"' '"margin_bounds"' '"trend"' \
           '"slope_bounds"' '"p_shrinking"' '"time_to_zero"' '"caution"'; do
    grep -q "$key" "$tmp/drift.json"
    check "JSON has $key" $?
done
grep -q -E '(:|\[|,) *-?(nan|inf|NaN|Inf|Infinity)\b' "$tmp/drift.json"
[ $? -ne 0 ]
check "JSON holds no NaN or Inf" $?

"$bin" track datasets/fan_warmup.csv --window 300 --boot 300 --json "$tmp/fan.json" \
    >"$tmp/fan.txt"
check "fan-warmup demo: track exits 0" $?
grep -q "1/s per s" "$tmp/fan.txt" && grep -q '"time_unit": "s"' "$tmp/fan.json"
check "fan-warmup demo: the time column's unit (time [s]) labels the slope" $?
grep -q '"class": "shrinking"' "$tmp/fan.json"
check "fan-warmup demo: margin shrinking (datasets/README.md truth)" $?

"$bin" track datasets/booster_pump.csv --boot 200 --json "$tmp/pump.json" --quiet \
    --fail-on shrinking
check "steady demo: track exits 0 (not shrinking)" $?
grep -q '"assessed": 8' "$tmp/pump.json"
check "steady demo: 8 windows assessed" $?

# The same log with ISO 8601 times (first 240 s): windows are labelled as the
# log writes times, and JSON times are Unix seconds.
awk -F, 'NR == 1 { print "time,x,y"; next }
         NR <= 4801 { t = $1; m = int(t / 60); s = t - 60 * m
                      printf "2026-11-30T08:%02d:%05.2fZ,%s,%s\n", m, s, $2, $3 }' \
    "$tmp/drift.csv" >"$tmp/drift_iso.csv"
"$bin" track "$tmp/drift_iso.csv" --window 60 --boot 200 --json "$tmp/iso.json" \
    >"$tmp/iso.txt"
check "ISO log: track exits 0" $?
grep -q '"time_format": "iso8601"' "$tmp/iso.json" && \
    grep -q '"from_text": "2026-11-30T08:01:00' "$tmp/iso.json" && \
    grep -q '"from": 1796025660' "$tmp/iso.json"
check "ISO log: window times as written and in Unix seconds" $?
grep -q "2026-11-30T08:03:00" "$tmp/iso.txt"
check "ISO log: text report labels windows with ISO times" $?

"$bin" track datasets/booster_pump.csv --window 5000 2>"$tmp/err.txt"
status=$?
[ "$status" -eq 1 ] && grep -q -- "--window" "$tmp/err.txt"
check "window longer than the log: exit 1 naming --window (got $status)" $?
"$bin" track datasets/booster_pump.csv --boot 50 2>"$tmp/err.txt"
status=$?
[ "$status" -eq 1 ] && grep -q -- "--boot" "$tmp/err.txt"
check "too few replicates: exit 1 naming --boot (got $status)" $?
"$bin" track datasets/booster_pump.csv --step -3 2>"$tmp/err.txt"
[ $? -eq 1 ] && grep -q -- "--step" "$tmp/err.txt"
check "negative step: exit 1 naming --step" $?
"$bin" track datasets/booster_pump.csv --rank 5 --boot 100 2>"$tmp/err.txt"
[ $? -eq 1 ] && grep -q -- "--rank" "$tmp/err.txt"
check "an option no window can take stops the run: exit 1 naming --rank" $?
"$bin" track datasets/booster_pump.csv --json /nonexistent/dir/x.json 2>"$tmp/err.txt"
status=$?
[ "$status" -eq 4 ] && [ ! -e /nonexistent/dir/x.json ]
check "unwritable JSON path: exit 4 before any work (got $status)" $?
"$bin" track --help >/dev/null
check "track --help exits 0" $?

# Pure white noise (three channels of independent Gaussian samples, Park-Miller
# and Box-Muller as above): no window shows dynamics, so there is no trend
# to draw; track stops with an error naming the windows (exit 3, no JSON
# left behind) instead of a line through margins that describe noise.
awk 'BEGIN {
    pi = 3.14159265358979; m = 2147483647; s = 777
    print "t [s],a,b,c"
    for (k = 0; k < 8000; k++) {
        printf "%.2f", k * 0.01
        for (c = 0; c < 3; c++) {
            s = (16807 * s) % m; u1 = s / m; s = (16807 * s) % m; u2 = s / m
            printf ",%.6f", sqrt(-2 * log(u1)) * cos(2 * pi * u2)
        }
        printf "\n"
    }
}' >"$tmp/white.csv"
"$bin" track "$tmp/white.csv" --window 10 --boot 100 --json "$tmp/white.json" \
    >"$tmp/white.txt" 2>"$tmp/white.err"
status=$?
[ "$status" -eq 3 ] && grep -q "show no dynamics" "$tmp/white.err" && [ ! -e "$tmp/white.json" ]
check "white noise: no trend from noise, an error naming the windows (got $status)" $?

echo "e2e_track: $passed passed, $failed failed"
[ "$failed" -eq 0 ]
