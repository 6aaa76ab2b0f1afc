#!/bin/sh
# End-to-end: `eigenlog spectrum` on the rig-test demo log through the
# command line: the damped mode's peak near its true 2.397 Hz
# (datasets/README.md; tolerance 0.08 Hz as in tests/test_spectrum.c) with
# its half-power band and resolution in the JSON; every sample used and
# said so; power units written with the unit in parentheses, squared, per
# Hz. Run by tests/run.sh with EIGENLOG set.
set -u
bin=${EIGENLOG:-build/rel/eigenlog}
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
passed=0
failed=0
check() { # check NAME CONDITION-EXIT-STATUS
    if [ "$2" -eq 0 ]; then passed=$((passed + 1)); else failed=$((failed + 1)); echo "FAIL $1"; fi
}

"$bin" spectrum datasets/rig_test.csv --json "$tmp/rig.json" --csv "$tmp/rig.csv" >"$tmp/rig.txt"
check "spectrum exits 0" $?
grep -q 'all 9000 samples used' "$tmp/rig.txt"
check "text says every sample was used" $?
grep -q 'total power .* (m/s2)^2$' "$tmp/rig.txt" && grep -q '(PSD in (m/s2)^2/Hz)' "$tmp/rig.txt" &&
    grep -q '(PSD in mm^2/Hz)' "$tmp/rig.txt"
check "text writes (m/s2)^2, (m/s2)^2/Hz and mm^2/Hz" $?
! grep -q 'm/s2^2\|mm^2[^/]' "$tmp/rig.txt"
check "text no longer writes m/s2^2" $?
head -1 "$tmp/rig.csv" | grep -q '^frequency_hz,"accel_a \[(m/s2)^2/Hz\]",.*"disp_d \[mm^2/Hz\]"$'
check "CSV headers carry the PSD unit" $?
grep -q '"samples": 9000' "$tmp/rig.json" && grep -q '"samples_unused": 0' "$tmp/rig.json"
check "JSON: samples 9000, none unused" $?
grep -q '"psd_unit": "(m/s2)^2/Hz"' "$tmp/rig.json"
check "JSON: psd_unit" $?
# Frequencies of the peaks that carry a half-power band, one per line.
awk '/"frequency_hz": [0-9]/ { f = $2; sub(/,$/, "", f) }
     /"half_power_band_hz": \[/ { print f }' "$tmp/rig.json" >"$tmp/f.txt"
n_near=$(awk '$1 > 2.317 && $1 < 2.477' "$tmp/f.txt" | wc -l)
[ "$n_near" -eq 4 ]
check "each of the 4 channels has a banded peak within 0.08 Hz of 2.397 (got $n_near)" $?
n_off=$(awk '$1 > 2.477 && $1 < 2.8' "$tmp/f.txt" | wc -l)
[ "$n_off" -eq 0 ]
check "no peak at the 2.58 Hz noise spike" $?
grep -q '"resolution_hz": 0.048828125' "$tmp/rig.json"
check "JSON: resolution_hz = 1 / (2048 x 0.01 s)" $?

echo "e2e_spectrum: $passed passed, $failed failed"
[ "$failed" -eq 0 ]
