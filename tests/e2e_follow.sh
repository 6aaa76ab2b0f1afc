#!/bin/sh
# End-to-end: `track --follow` on a live log. A writer process appends the
# drifting fan log (datasets/fan_warmup.csv, datasets/README.md: its margin
# shrinks) in accelerated time; each window's JSON line must equal the
# offline `track` of the same rows, the shrinking alarm must fire within one
# window of the offline shrinking call and stay quiet on the steady pump log,
# a truncating and a rotating writer must be followed, SIGTERM must give
# exit 0 and a final trend, bad rows are skipped or stop the run.
# Run by tests/run.sh with EIGENLOG set; needs jq (make deps).
set -u
bin=${EIGENLOG:-build/rel/eigenlog}
tmp=$(mktemp -d)
pids=""
cleanup() {
    for p in $pids; do kill "$p" 2>/dev/null; done
    for p in $pids; do wait "$p" 2>/dev/null; done
    rm -rf "$tmp"
}
trap cleanup EXIT
trap 'exit 1' INT TERM
passed=0
failed=0
check() { # check NAME CONDITION-EXIT-STATUS
    if [ "$2" -eq 0 ]; then passed=$((passed + 1)); else failed=$((failed + 1)); echo "FAIL $1"; fi
}
fan=datasets/fan_warmup.csv
pump=datasets/booster_pump.csv
# 300 s windows of the 2400 s fan log: 8 windows; 200 replicates keep the
# script short (the numbers are compared run against run, not with truth).
opts="--window 300 --boot 200 --seed 3"

# window_numbers FILE: per window, the numbers of its object, one line
# each (from offline JSON or from JSON lines).
offline_numbers() {
    jq -r '.windows[] | [.from, .to, .margin, .margin_bounds[0], .margin_bounds[1],
        .damping_ratio, .frequency_hz, .p_stable, .replicates, .method, .stability,
        .warnings, .from_text, .to_text] | @tsv' "$1"
}
follow_numbers() {
    jq -r 'select(.record == "window") | .window | [.from, .to, .margin, .margin_bounds[0],
        .margin_bounds[1], .damping_ratio, .frequency_hz, .p_stable, .replicates, .method,
        .stability, .warnings, .from_text, .to_text] | @tsv' "$1"
}
# same_numbers A B: same lines, numbers within 1e-9 relative (the interval
# is refined over the whole log offline and over each window when
# following: they differ by the rounding of the written times, ~1e-15),
# words equal.
same_numbers() {
    [ "$(wc -l <"$1")" -eq "$(wc -l <"$2")" ] && [ "$(wc -l <"$1")" -gt 0 ] &&
        paste "$1" "$2" | awk -F'\t' '{
            n = NF / 2
            for (i = 1; i <= n; i++) {
                a = $i; b = $(i + n)
                if (a ~ /^-?[0-9.]+([eE][-+]?[0-9]+)?$/) {
                    d = a - b; if (d < 0) d = -d
                    s = a < 0 ? -a : a
                    if (d > 1e-9 * s + 1e-300) bad = 1
                } else if (a != b) bad = 1
            }
        } END { exit bad }'
}
# wait_windows FILE N: until FILE has N lines with "record":"window" (60 s
# at most: the sanitizer build is several times slower).
wait_windows() {
    i=0
    while [ "$i" -lt 600 ]; do
        [ -f "$1" ] && [ "$(grep -c '"record": "window"' "$1")" -ge "$2" ] && return 0
        sleep 0.1
        i=$((i + 1))
    done
    return 1
}

"$bin" track "$fan" $opts --json "$tmp/offline.json" >/dev/null
check "offline track runs" $?
offline_numbers "$tmp/offline.json" >"$tmp/off.tsv"

# --- A stream: cat LOG | track - --follow --json - -----------------------
cat "$fan" | "$bin" track - --follow $opts --json - >"$tmp/pipe.jsonl" 2>"$tmp/pipe.err"
check "stream follow exits 0 at the end of input" $?
[ "$(grep -c '"record": "window"' "$tmp/pipe.jsonl")" -eq 8 ]
check "one JSON line per window (8)" $?
jq -e -s 'all(.tool == "eigenlog" and .command == "track" and (.version | type) == "string")' \
    "$tmp/pipe.jsonl" >/dev/null
check "every JSON line parses and carries tool, version, command" $?
follow_numbers "$tmp/pipe.jsonl" >"$tmp/pipe.tsv"
same_numbers "$tmp/off.tsv" "$tmp/pipe.tsv"
check "each window equals offline track (same rows, same seed)" $?
off_slope=$(jq '.trend.slope' "$tmp/offline.json")
fol_slope=$(jq -s 'map(select(.record == "trend" and .final)) | .[0].trend.slope' "$tmp/pipe.jsonl")
awk -v a="$off_slope" -v b="$fol_slope" 'BEGIN { d = a - b; if (d < 0) d = -d; s = a < 0 ? -a : a; exit !(d <= 1e-9 * s) }'
check "the final trend equals offline track's" $?
[ "$(grep -c '"record": "trend"' "$tmp/pipe.jsonl")" -eq 7 ]
check "a trend line per window from the third, and the final one (7)" $?

# --- A sensor that sticks part-way: offline and followed windows alike --
# vib_vertical frozen from 1500 s: windows 6-8 are fitted without it (as
# assess fits any of them) and say so, instead of failing.
awk -F, 'NR > 1 && $1 + 0 >= 1500 { $3 = "0.120" } { print }' OFS=, "$fan" >"$tmp/stuck.csv"
"$bin" track "$tmp/stuck.csv" $opts --json "$tmp/stuck_off.json" >/dev/null
check "offline track of a log whose sensor sticks mid-way: exit 0" $?
[ "$(jq '[.windows[] | select(.ok and .channels_left_out == ["vib_vertical"])] | length' \
    "$tmp/stuck_off.json")" -eq 3 ]
check "offline: the three windows after the sensor stuck are fitted without it" $?
cat "$tmp/stuck.csv" | "$bin" track - --follow $opts --json - >"$tmp/stuck.jsonl" 2>/dev/null
check "followed: exit 0" $?
[ "$(jq -s '[.[] | select(.record == "window" and .window.ok
    and .window.channels_left_out == ["vib_vertical"])] | length' "$tmp/stuck.jsonl")" -eq 3 ]
check "followed: the same three windows fitted without the stuck sensor" $?
offline_numbers "$tmp/stuck_off.json" >"$tmp/stuck_off.tsv"
follow_numbers "$tmp/stuck.jsonl" >"$tmp/stuck_fol.tsv"
same_numbers "$tmp/stuck_off.tsv" "$tmp/stuck_fol.tsv"
check "followed windows equal the offline ones when a sensor sticks" $?

# --- Times of day without a date, across midnight ------------------------
# The fan log's times written as times of day from 23:40:00: the clock
# passes midnight in window 5; a stream arrives in pieces, each read on its
# own, and each must follow the last across midnight as the offline read
# does (el_clock_shift).
awk -F, 'NR == 1 { print; next } { ms = (int($1 * 1000 + 0.5) + 85200000) % 86400000
    $1 = sprintf("%02d:%02d:%02d.%03d", int(ms / 3600000), int(ms / 60000) % 60,
                 int(ms / 1000) % 60, ms % 1000); print }' OFS=, "$fan" >"$tmp/clock.csv"
"$bin" track "$tmp/clock.csv" $opts --json "$tmp/clock_off.json" >/dev/null
check "offline track of a log of times of day across midnight: exit 0" $?
[ "$(jq -r '.windows[4].from_text' "$tmp/clock_off.json")" = "00:00:00.000 (+1d)" ]
check "offline: window 5 starts at midnight of the next day" $?
offline_numbers "$tmp/clock_off.json" >"$tmp/clock_off.tsv"
cut -f 1-12 "$tmp/off.tsv" >"$tmp/off12.tsv"
cut -f 1-12 "$tmp/clock_off.tsv" >"$tmp/clock_off12.tsv"
same_numbers "$tmp/off12.tsv" "$tmp/clock_off12.tsv"
check "times of day give the numbered log's windows" $?
cat "$tmp/clock.csv" | "$bin" track - --follow $opts --json - >"$tmp/clock.jsonl" 2>/dev/null
check "followed: exit 0" $?
follow_numbers "$tmp/clock.jsonl" >"$tmp/clock_fol.tsv"
same_numbers "$tmp/clock_off.tsv" "$tmp/clock_fol.tsv"
check "followed windows equal the offline ones across midnight" $?

# --- A writer appending in accelerated time; alarm; on-alarm; html ------
# The offline call: the first window count whose trend is "shrinking".
first_shrinking=""
for n in 3 4 5 6 7 8; do
    class=$("$bin" track "$fan" $opts --to $((n * 300)) --json - | jq -r '.trend.class')
    if [ "$class" = shrinking ]; then first_shrinking=$((n - 1)); break; fi
done
[ -n "$first_shrinking" ]
check "offline track calls the fan log shrinking on a prefix" $?
head -1 "$fan" >"$tmp/live.csv"
export ALARM_OUT="$tmp/alarm.env"
# 24000 rows in 12 bursts of 2000 rows, 0.15 s apart: 2400 s of log in ~2 s.
(tail -n +2 "$fan" | awk '{ print } NR % 2000 == 0 { fflush(); system("sleep 0.15") }' \
    >>"$tmp/live.csv") &
writer=$!
pids="$pids $writer"
"$bin" track "$tmp/live.csv" --follow $opts --poll 0.05 --json "$tmp/live.jsonl" \
    --html "$tmp/live.html" --alarm shrinking \
    --on-alarm 'env | grep -E "^(EIGENLOG_|OPENBLAS_NUM_THREADS=|EL_BLAS)" | sort >>"$ALARM_OUT"' \
    >"$tmp/live.txt" 2>"$tmp/live.err" &
follower=$!
pids="$pids $follower"
wait "$writer"
wait_windows "$tmp/live.jsonl" 8
check "the follower writes all 8 windows of the appended log" $?
sleep 0.3
kill -TERM "$follower"
wait "$follower"
check "SIGTERM: exit 0" $?
grep -q '"final": true' "$tmp/live.jsonl"
check "SIGTERM: a final trend line" $?
grep -q '^Trend ' "$tmp/live.txt" && [ "$(grep -c ' iv$\| ls$\| fb$\| tls$\| ssi$\| hankel$' "$tmp/live.txt")" -eq 8 ]
check "a text line per window and the final trend on the terminal" $?
follow_numbers "$tmp/live.jsonl" >"$tmp/live.tsv"
same_numbers "$tmp/off.tsv" "$tmp/live.tsv"
check "the followed file gives the offline windows" $?
alarm_index=$(jq -s 'map(select(.record == "alarm" and .event == "start")) | .[0].index' "$tmp/live.jsonl")
[ "$alarm_index" != null ] && [ $((alarm_index - first_shrinking)) -ge 0 ] &&
    [ $((alarm_index - first_shrinking)) -le 1 ]
check "the shrinking alarm fires within one window of the offline call ($first_shrinking, alarm $alarm_index)" $?
grep -q "ALARM shrinking: window .*margin .* \[.*\].*P(stable).*never replaces" "$tmp/live.err"
check "the alarm line gives the evidence and the caution" $?
[ "$(grep -c '^EIGENLOG_ALARM=shrinking$' "$tmp/alarm.env" 2>/dev/null)" -eq 1 ] &&
    grep -q '^EIGENLOG_MARGIN=[0-9]' "$tmp/alarm.env" && grep -q '^EIGENLOG_P_STABLE=' "$tmp/alarm.env"
check "--on-alarm runs once per episode with the facts in EIGENLOG_*" $?
# eigenlog sets OPENBLAS_NUM_THREADS=1 for its own start (src/main.c);
# the hook gets the environment the user gave (here: the variable unset).
if [ -z "${OPENBLAS_NUM_THREADS:-}" ]; then
    ! grep -q -E '^(OPENBLAS_NUM_THREADS|EL_BLAS)' "$tmp/alarm.env"
    check "--on-alarm does not inherit eigenlog's own OPENBLAS_NUM_THREADS" $?
fi
grep -q 'id="caution-follow"' "$tmp/live.html" && grep -q 'never replaces' "$tmp/live.html" &&
    ! ls "$tmp"/.*tmp* >/dev/null 2>&1
check "--html is written (with the follow caution), no temporary left" $?

# --- Steady log: the alarm stays quiet ----------------------------------
cat "$pump" | "$bin" track - --follow --window 60 --boot 200 --alarm shrinking,unstable \
    --json - >"$tmp/pump.jsonl" 2>"$tmp/pump.err"
check "steady pump log: exit 0" $?
[ "$(grep -c '"record": "window"' "$tmp/pump.jsonl")" -eq 10 ] &&
    ! grep -q '"record": "alarm"' "$tmp/pump.jsonl" && ! grep -q ALARM "$tmp/pump.err"
check "steady pump log: 10 windows, no alarm" $?
# ISO 8601 times (the pump log): windows as offline track's too.
"$bin" track "$pump" --window 60 --boot 200 --json "$tmp/pump_off.json" >/dev/null
offline_numbers "$tmp/pump_off.json" >"$tmp/pump_off.tsv"
follow_numbers "$tmp/pump.jsonl" >"$tmp/pump.tsv"
same_numbers "$tmp/pump_off.tsv" "$tmp/pump.tsv"
check "ISO 8601 log: each window equals offline track" $?

# --- --fail-on alarm: exit 5 at the first alarm --------------------------
cat "$fan" | "$bin" track - --follow $opts --alarm shrinking --fail-on alarm --json - \
    >"$tmp/fail.jsonl" 2>/dev/null
check "--fail-on alarm exits 5" $([ $? -eq 5 ] && echo 0 || echo 1)
[ "$(grep -c '"record": "window"' "$tmp/fail.jsonl")" -lt 8 ] && grep -q '"final": true' "$tmp/fail.jsonl"
check "--fail-on alarm stops at the first alarm, with the final trend" $?

# --- Truncation and rotation --------------------------------------------
head -1 "$fan" >"$tmp/rot.csv"
(
    sed -n '2,7001p' "$fan" >>"$tmp/rot.csv"      # rows 0 .. 699.9 s
    sleep 0.6
    mv "$tmp/rot.csv" "$tmp/rot.1.csv"            # rotation: a new file
    sleep 0.3
    { head -1 "$fan"; sed -n '7002,14001p' "$fan"; } >"$tmp/rot.csv"
    # A truncation is seen when the file is found shorter than what was
    # read: truncate only once the follower has read this file (its 4th
    # window ends at 1200 s), so a slow run cannot miss it.
    wait_windows "$tmp/rot.jsonl" 4
    sleep 0.3
    : >"$tmp/rot.csv"                             # truncation in place
    sleep 0.6
    { head -1 "$fan"; sed -n '14002,24001p' "$fan"; } >>"$tmp/rot.csv"
) &
writer=$!
pids="$pids $writer"
"$bin" track "$tmp/rot.csv" --follow $opts --poll 0.05 --json "$tmp/rot.jsonl" \
    >/dev/null 2>"$tmp/rot.err" &
follower=$!
pids="$pids $follower"
wait "$writer"
wait_windows "$tmp/rot.jsonl" 8
check "rotated and truncated: all 8 windows" $?
kill -TERM "$follower"
wait "$follower"
check "rotated and truncated: exit 0 on SIGTERM" $?
grep -q "rotated" "$tmp/rot.err" && grep -q "truncated" "$tmp/rot.err"
check "the rotation and the truncation are said on stderr" $?
follow_numbers "$tmp/rot.jsonl" >"$tmp/rot.tsv"
same_numbers "$tmp/off.tsv" "$tmp/rot.tsv"
check "through rotation and truncation the windows equal offline track" $?

# --- SIGTERM while waiting on a pipe ------------------------------------
mkfifo "$tmp/fifo"
"$bin" track - --follow $opts --json "$tmp/term.jsonl" <"$tmp/fifo" >/dev/null 2>&1 &
follower=$!
pids="$pids $follower"
exec 7>"$tmp/fifo"
sed -n '1,6001p' "$fan" >&7
wait_windows "$tmp/term.jsonl" 2
kill -TERM "$follower"
wait "$follower"
check "SIGTERM on a waiting stream: exit 0" $?
exec 7>&-
grep -q '"final": true' "$tmp/term.jsonl"
check "SIGTERM on a waiting stream: final trend line" $?

# --- SIGINT on a followed file -------------------------------------------
sed -n '1,7001p' "$fan" >"$tmp/int.csv"
"$bin" track "$tmp/int.csv" --follow $opts --poll 0.05 --json "$tmp/int.jsonl" \
    >/dev/null 2>&1 &
follower=$!
pids="$pids $follower"
wait_windows "$tmp/int.jsonl" 2
kill -INT "$follower"
wait "$follower"
check "SIGINT on a followed file: exit 0" $?
grep -q '"final": true' "$tmp/int.jsonl"
check "SIGINT on a followed file: final trend line" $?

# --- A bad appended row ---------------------------------------------------
awk 'NR == 5000 { print "499.9,abc,0.1"; next } { print }' "$fan" >"$tmp/bad.csv"
"$bin" track - --follow $opts --json - <"$tmp/bad.csv" >"$tmp/bad.jsonl" 2>"$tmp/bad.err"
check "bad row, --on-bad-row stop (default): exit 2" $([ $? -eq 2 ] && echo 0 || echo 1)
grep -q ":5000:" "$tmp/bad.err"
check "bad row: the message names line 5000" $?
"$bin" track - --follow $opts --on-bad-row skip --json - <"$tmp/bad.csv" >"$tmp/skip.jsonl" \
    2>"$tmp/skip.err"
check "bad row, --on-bad-row skip: exit 0" $?
grep -q ":5000:.*skipped" "$tmp/skip.err" && [ "$(grep -c '"record": "window"' "$tmp/skip.jsonl")" -eq 8 ]
check "bad row skipped: noted with its line, the windows go on" $?

# --- Memory stays flat ----------------------------------------------------
# A simulated 2-channel log at 50 Hz (a 0.8 Hz oscillation plus a linear
# congruential noise, Knuth's MMIX constants) piped in at full speed: the
# peak RSS after 3 h of data must not exceed the peak after 10 min by more
# than 10% + 2 MB (what the allocator's arenas may add; the rows held are
# one window, the trend keeps at most --trend-windows windows).
gen_log() { # gen_log ROWS
    awk -v n="$1" 'BEGIN {
        print "time [s],a,b"; s = 12345
        for (k = 0; k < n; k++) {
            s = (s * 1103515245 + 12345) % 2147483648; e = s / 2147483648 - 0.5
            x = sin(2 * 3.14159265 * 0.8 * k * 0.02)
            printf "%.2f,%.5f,%.5f\n", k * 0.02, x + 0.3 * e, 0.5 * x - 0.2 * e
        } }'
}
# Under AddressSanitizer freed memory waits in a quarantine (256 MB) that
# would look like growth: it is turned off for this check.
rss() { # rss ROWS: peak RSS (KiB) of a follow run on ROWS rows
    gen_log "$1" | ASAN_OPTIONS="${ASAN_OPTIONS:-}:quarantine_size_mb=0" \
        /usr/bin/time -f "%M" "$bin" track - --follow --window 60 --step 600 \
        --boot 100 --trend-windows 5 --quiet 2>&1 >/dev/null | tail -n 1
}
short=$(rss 30000)
long=$(rss 540000)
[ -n "$short" ] && [ -n "$long" ] && [ "$long" -le $((short + short / 10 + 2048)) ]
check "memory stays flat: peak RSS ${short} KiB after 10 min of data, ${long} KiB after 3 h" $?

# --- Usage --------------------------------------------------------------
"$bin" track "$fan" --alarm shrinking >/dev/null 2>&1
check "--alarm without --follow: exit 1" $([ $? -eq 1 ] && echo 0 || echo 1)
"$bin" track - --follow </dev/null >/dev/null 2>&1
check "--follow without --window: exit 1" $([ $? -eq 1 ] && echo 0 || echo 1)
"$bin" track "$fan" --help | grep -q "never replaces"
check "track --help carries the alarm caution" $?

echo "e2e_follow: $passed passed, $failed failed"
[ "$failed" -eq 0 ]
