#!/bin/sh
# End-to-end: the main job on the bundled demo logs through the command line:
# demo files regenerate byte for byte, assess gives the documented verdicts
# (datasets/README.md), JSON is complete and NaN-free, stdin works, and
# --fail-on sets exit status 5. Run by tests/run.sh with EIGENLOG set.
set -u
bin=${EIGENLOG:-build/rel/eigenlog}
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
passed=0
failed=0
check() { # check NAME CONDITION-EXIT-STATUS
    if [ "$2" -eq 0 ]; then passed=$((passed + 1)); else failed=$((failed + 1)); echo "FAIL $1"; fi
}

"$bin" demo -o "$tmp" >/dev/null
check "demo exits 0" $?
cmp -s "$tmp/booster_pump.csv" datasets/booster_pump.csv
check "booster_pump.csv regenerates byte for byte" $?
cmp -s "$tmp/rig_test.csv" datasets/rig_test.csv
check "rig_test.csv regenerates byte for byte" $?
cmp -s "$tmp/fan_warmup.csv" datasets/fan_warmup.csv
check "fan_warmup.csv regenerates byte for byte" $?

"$bin" scan datasets/booster_pump.csv >"$tmp/scan.txt"
check "scan exits 0" $?
grep -q "discharge_pressure" "$tmp/scan.txt" && grep -q "12000" "$tmp/scan.txt"
check "scan lists channels and rows" $?

"$bin" assess datasets/booster_pump.csv --boot 300 --json "$tmp/pump.json" >"$tmp/pump.txt"
check "assess booster pump exits 0" $?
grep -q '"stability": "stable"' "$tmp/pump.json"
check "booster pump is stable (datasets/README.md truth)" $?
grep -q '"region": "spiral sink"' "$tmp/pump.json"
check "booster pump is a spiral sink" $?
grep -q '"ambiguous": false' "$tmp/pump.json"
check "booster pump verdict is not ambiguous" $?
grep -q -E '(:|\[|,) *-?(nan|inf|NaN|Inf|Infinity)\b' "$tmp/pump.json"
[ $? -ne 0 ]
check "JSON holds no NaN or Inf" $?
for key in '"eigenlog"' '"input"' '"model"' '"operating_point"' '"modes"' '"plane"' \
           '"verdict"' '"resampling"' '"p_stable"' '"bounds"' '"shape"' '"caution"'; do
    grep -q "$key" "$tmp/pump.json"
    check "JSON has $key" $?
done
grep -q "Caution" "$tmp/pump.txt" && grep -q "SPIRAL SINK\|spiral sink" "$tmp/pump.txt"
check "text report has the type and the caution" $?

"$bin" assess datasets/rig_test.csv --boot 300 --json "$tmp/rig.json" --fail-on unstable >/dev/null
status=$?
[ "$status" -eq 5 ]
check "rig test is unstable and --fail-on unstable exits 5 (got $status)" $?
grep -q '"stability": "unstable"' "$tmp/rig.json"
check "rig test verdict unstable (datasets/README.md truth)" $?

"$bin" assess - --boot 0 --json - <datasets/booster_pump.csv >"$tmp/stdin.json"
check "assess reads stdin and writes JSON to stdout" $?
grep -q '"file": "<stdin>"' "$tmp/stdin.json" && grep -q '"p_stable": null' "$tmp/stdin.json"
check "stdin JSON names <stdin>; no bootstrap -> p_stable null" $?

"$bin" assess datasets/booster_pump.csv --help >/dev/null
check "assess --help exits 0" $?

echo "e2e_assess: $passed passed, $failed failed"
[ "$failed" -eq 0 ]
