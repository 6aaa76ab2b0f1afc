#!/bin/sh
# End-to-end: the mode shapes in units of each channel's standard deviation
# and the participation factors (docs/method.md section 8) do not depend on
# the units a channel is logged in, while the raw-unit shape does; the
# modes CSV keeps its first 17 columns and appends the new ones; the text
# report shows the scaled shape and the participation. Run by tests/run.sh
# with EIGENLOG set to the program under test.
set -u
bin=${EIGENLOG:-build/rel/eigenlog}
py=/usr/bin/python3
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
passed=0
failed=0
check() { # check NAME CONDITION-EXIT-STATUS
    if [ "$2" -eq 0 ]; then passed=$((passed + 1)); else failed=$((failed + 1)); echo "FAIL $1"; fi
}

# rig_test.csv with strain_c (column 4) in units 1e4 times smaller: the
# same signal, every value times 1e4 (exact in decimal: the digits move).
awk -F, 'BEGIN { OFS = "," } NR == 1 { print; next } { $4 = sprintf("%.17g", $4 * 10000); print }' \
    datasets/rig_test.csv >"$tmp/rig_units.csv"
"$bin" assess datasets/rig_test.csv --boot 0 --json "$tmp/a.json" \
    --modes-csv "$tmp/a_modes.csv" >"$tmp/a.txt" 2>&1
check "assess rig_test exits 0" $?
"$bin" assess "$tmp/rig_units.csv" --boot 0 --quiet --json "$tmp/b.json" >/dev/null 2>&1
check "assess of the rescaled log exits 0" $?

# Tolerance 1e-6: the two logs are the same after each channel is divided
# by its standard deviation up to the rounding of that division (1e-16
# relative), amplified by the fit; any unit dependence would show at the
# scale of the factor 1e4 itself.
"$py" - "$tmp/a.json" "$tmp/b.json" <<'PY'
import json, sys
a, b = (json.load(open(p)) for p in sys.argv[1:3])
assert len(a["modes"]) == len(b["modes"]) >= 2, "mode counts"
for ma, mb in zip(a["modes"], b["modes"]):
    for sa, sb in zip(ma["shape_scaled"], mb["shape_scaled"]):
        assert abs(sa["magnitude"] - sb["magnitude"]) <= 1e-6, (sa, sb)
        assert abs(sa["participation"] - sb["participation"]) <= 1e-6, (sa, sb)
        d = (sa["phase_deg"] - sb["phase_deg"] + 180) % 360 - 180
        assert abs(d) <= 1e-4, (sa, sb)
    # The participation factors are shares: they sum to 1 (rounding only).
    assert abs(sum(s["participation"] for s in ma["shape_scaled"]) - 1) <= 1e-12
    assert max(s["magnitude"] for s in ma["shape_scaled"]) == 1
PY
check "scaled shapes and participation do not change with a channel's unit" $?
"$py" - "$tmp/a.json" "$tmp/b.json" <<'PY'
import json, sys
a, b = (json.load(open(p)) for p in sys.argv[1:3])
# Raw units: strain_c, the largest raw entry of mode 2 in both logs, is
# 1e4 times larger in the second, so every other channel's raw magnitude
# relative to it is 1e4 times smaller (1e-6 relative: rounding, as above).
ra = [s["magnitude"] for s in a["modes"][1]["shape"]]
rb = [s["magnitude"] for s in b["modes"][1]["shape"]]
assert ra[2] == 1 and rb[2] == 1, (ra, rb)
for c in (0, 1, 3):
    assert abs(rb[c] - 1e-4 * ra[c]) <= 1e-6 * 1e-4 * ra[c], (ra, rb)
PY
check "the raw-unit shape does change with the unit" $?

head -n 1 "$tmp/a_modes.csv" | cut -d, -f1-17 >"$tmp/head17"
[ "$(cat "$tmp/head17")" = "mode,lambda_re,lambda_im,frequency_hz,damping_ratio,decay_rate,time_constant_s,time_constant_kind,level,re_lo,re_hi,frequency_hz_lo,frequency_hz_hi,damping_ratio_lo,damping_ratio_hi,decay_rate_lo,decay_rate_hi" ]
check "modes CSV keeps its first 17 columns" $?
n=$(head -n 1 "$tmp/a_modes.csv" | tr ',' '\n' | wc -l)
[ "$n" -eq 29 ] && head -n 1 "$tmp/a_modes.csv" | cut -d, -f18,22,26 |
    grep -qx 'shape_scaled_magnitude_accel_a,shape_scaled_phase_deg_accel_a,participation_accel_a'
check "modes CSV appends 3 x 4 channel columns (got $n columns)" $?
awk -F, 'NR > 1 && NF != 29 { bad = 1 } END { exit bad }' "$tmp/a_modes.csv"
check "every modes CSV row has 29 fields" $?
grep -q "shape (x channel std): accel_a" "$tmp/a.txt" && grep -q "participation: accel_a 0" "$tmp/a.txt"
check "text report shows the scaled shape and the participation" $?

echo "e2e_shapes: $passed passed, $failed failed"
[ "$failed" -eq 0 ]
