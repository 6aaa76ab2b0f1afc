#!/bin/sh
# End-to-end: assess --modes-csv (one row per mode with bounds, the same
# numbers as the JSON, refused when it clashes with another output or an
# input, nothing written then); track --fail-on unstable|shrinking|undecided
# (exit status 5 only when the run matches); track --boot 0 (bounds off:
# the trend's slope is the ordinary least-squares slope through the windows'
# point margins, recomputed here from the JSON by the closed form
# sum (t - tm)(y - ym) / sum (t - tm)^2; no P(shrinking), no class).
# Run by tests/run.sh with EIGENLOG set.
set -u
bin=${EIGENLOG:-build/rel/eigenlog}
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
passed=0
failed=0
check() { # check NAME CONDITION-EXIT-STATUS
    if [ "$2" -eq 0 ]; then passed=$((passed + 1)); else failed=$((failed + 1)); echo "FAIL $1"; fi
}

# ---- assess --modes-csv
"$bin" assess datasets/rig_test.csv --boot 100 --quiet --json "$tmp/rig.json" --modes-csv "$tmp/rig_modes.csv"
check "assess --modes-csv exits 0" $?
# The 17 columns, then per channel the scaled shape and participation
# columns appended by issue 10 item 6 (docs/cli.md).
head -1 "$tmp/rig_modes.csv" | grep -qx 'mode,lambda_re,lambda_im,frequency_hz,damping_ratio,decay_rate,time_constant_s,time_constant_kind,level,re_lo,re_hi,frequency_hz_lo,frequency_hz_hi,damping_ratio_lo,damping_ratio_hi,decay_rate_lo,decay_rate_hi,shape_scaled_magnitude_accel_a,shape_scaled_magnitude_accel_b,shape_scaled_magnitude_strain_c,shape_scaled_magnitude_disp_d,shape_scaled_phase_deg_accel_a,shape_scaled_phase_deg_accel_b,shape_scaled_phase_deg_strain_c,shape_scaled_phase_deg_disp_d,participation_accel_a,participation_accel_b,participation_strain_c,participation_disp_d'
check "modes CSV header as documented" $?
[ "$(($(wc -l <"$tmp/rig_modes.csv") - 1))" -eq "$(jq '.modes | length' "$tmp/rig.json")" ]
check "one row per mode of the JSON" $?
# Every mode: lambda, frequency and the Re bounds agree with the JSON to 1e-8
# relative (the CSV prints 10 significant digits, the JSON 17).
jq -r '.modes[] | [.lambda.re, .lambda.im, (.frequency_hz // "x"), .bounds.re[0], .bounds.re[1]] | @tsv' \
    "$tmp/rig.json" >"$tmp/j.tsv"
tail -n +2 "$tmp/rig_modes.csv" | awk -F, 'BEGIN { OFS = "\t" } { print $2, $3, ($4 == "" ? "x" : $4), $10, $11 }' >"$tmp/c.tsv"
paste "$tmp/j.tsv" "$tmp/c.tsv" | awk -F'\t' '
    function far(a, b) { if (a == "x" || b == "x") return a != b; d = a - b; if (d < 0) d = -d;
                         m = a < 0 ? -a : a; return d > 1e-8 * (m > 1e-12 ? m : 1e-12) }
    { for (i = 1; i <= 5; i++) if (far($i, $(i + 5))) bad++ } END { exit bad > 0 }'
check "modes CSV numbers equal the JSON's (lambda, frequency, Re bounds)" $?
"$bin" assess datasets/booster_pump.csv --boot 0 --quiet --modes-csv "$tmp/pump0.csv"
tail -n +2 "$tmp/pump0.csv" | awk -F, '{ for (i = 9; i <= 17; i++) if ($i != "") bad++ } END { exit bad > 0 }'
check "--boot 0: level and bounds empty" $?
"$bin" assess datasets/booster_pump.csv --boot 100 --modes-csv "$tmp/same.csv" --json "$tmp/same.csv" 2>"$tmp/err"
[ $? -eq 1 ] && grep -q -- '--modes-csv' "$tmp/err" && [ ! -e "$tmp/same.csv" ]
check "--modes-csv onto --json's file: usage error, nothing written" $?
cp datasets/booster_pump.csv "$tmp/in2.csv"
"$bin" assess datasets/booster_pump.csv "$tmp/in2.csv" --modes-csv "$tmp/in2.csv" 2>/dev/null
[ $? -eq 1 ] && cmp -s datasets/booster_pump.csv "$tmp/in2.csv"
check "--modes-csv onto the second input: refused, input untouched" $?

# ---- track --fail-on
# A log whose oscillation grows in every window: x = e^(0.02 t) sin(2 pi 0.5 t),
# y its quarter-period lag, plus a small deterministic dither (LCG).
awk 'BEGIN { print "t [s],x,y"; s = 12345;
             for (k = 0; k < 6000; k++) { t = k * 0.05;
               s = (s * 1103515245 + 12345) % 2147483648; n1 = s / 2147483648 - 0.5;
               s = (s * 1103515245 + 12345) % 2147483648; n2 = s / 2147483648 - 0.5;
               g = exp(0.02 * t); printf "%.2f,%.6f,%.6f\n", t, g * sin(3.14159265 * t) + 0.01 * n1,
                                                              g * cos(3.14159265 * t) + 0.01 * n2 } }' >"$tmp/grow.csv"
"$bin" track "$tmp/grow.csv" --window 60 --boot 100 --quiet --fail-on unstable
check "track --fail-on unstable: a growing log exits 5 (got $?)" $([ $? -eq 5 ]; echo $?)
"$bin" track datasets/booster_pump.csv --boot 100 --quiet --fail-on unstable
check "track --fail-on unstable: the stable pump log exits 0" $?
"$bin" track datasets/fan_warmup.csv --window 300 --boot 100 --quiet --fail-on shrinking
check "track --fail-on shrinking: the warming fan exits 5 as before" $([ $? -eq 5 ]; echo $?)
"$bin" track datasets/fan_warmup.csv --boot 0 --quiet --fail-on undecided
check "track --fail-on undecided: windows without bounds exit 5" $([ $? -eq 5 ]; echo $?)
"$bin" track datasets/booster_pump.csv --boot 100 --quiet --fail-on undecided --json "$tmp/pump_t.json"
code=$?
n_und=$(jq '[.windows[] | select(.ok == false or .ambiguous or .p_stable == null
                              or (.stability != "stable" and .stability != "unstable"))] | length' "$tmp/pump_t.json")
if [ "$n_und" -gt 0 ]; then [ $code -eq 5 ]; else [ $code -eq 0 ]; fi
check "track --fail-on undecided: exit $code matches $n_und undecided windows in the JSON" $?
"$bin" track datasets/fan_warmup.csv --boot 0 --fail-on shrinking 2>"$tmp/err"
[ $? -eq 1 ] && grep -q 'needs bounds' "$tmp/err"
check "track --fail-on shrinking --boot 0: usage error" $?

# ---- track --boot 0
"$bin" track datasets/fan_warmup.csv --window 300 --boot 0 --json "$tmp/t0.json" >"$tmp/t0.txt"
check "track --boot 0 runs (exit 0)" $?
jq -e '.trend.p_shrinking == null and .trend.slope_bounds == null and .trend.class == "undecided"
       and .trend.time_to_zero == null and ([.windows[].margin_bounds] | all(. == null))' "$tmp/t0.json" >/dev/null
check "track --boot 0: no bounds, no P(shrinking), not classified, no time to zero" $?
ols=$(jq -r '.windows[] | select(.ok) | "\((.from + .to) / 2) \(.margin)"' "$tmp/t0.json" |
      awk '{ t[NR] = $1; y[NR] = $2; st += $1; sy += $2 } END { n = NR; tm = st / n; ym = sy / n;
            for (i = 1; i <= n; i++) { a += (t[i] - tm) * (y[i] - ym); b += (t[i] - tm) ^ 2 }
            printf "%.12g", a / b }')
slope=$(jq -r '.trend.slope' "$tmp/t0.json")
awk -v a="$ols" -v b="$slope" 'BEGIN { d = a - b; if (d < 0) d = -d; m = a < 0 ? -a : a; exit !(d <= 1e-9 * m) }'
check "track --boot 0: slope $slope is the OLS slope $ols of the point margins (1e-9 relative: rounding only)" $?
grep -q 'NOT CLASSIFIED' "$tmp/t0.txt" && grep -q 'P(shrinking) = n/a' "$tmp/t0.txt"
check "track --boot 0 text: not classified, P(shrinking) n/a" $?
jq -e '[.warning_details[] | select(.code == "no_bounds")] | length == 1' "$tmp/t0.json" >/dev/null
check "track --boot 0: one no_bounds warning" $?

echo "e2e_gates: $passed passed, $failed failed"
[ "$failed" -eq 0 ]
