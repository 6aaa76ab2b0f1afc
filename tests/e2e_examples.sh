#!/bin/sh
# End-to-end: every program in examples/ runs and shows what its header
# says: the rig gate says GO for the booster-pump demo log and STOP for the
# rig-test one and exits 5 (datasets/README.md: stable / unstable); the
# Python reader prints the verdict of a JSON result; the C example, built
# against this flavour's in-tree library, prints the booster pump's
# verdict (stable spiral sink); the track example writes its HTML and JSON
# with the fan warm-up's shrinking margin. Every example starts with a
# "Shows:" line. Run by tests/run.sh with EIGENLOG set.
set -u
bin=${EIGENLOG:-build/rel/eigenlog}
flavour_dir=$(dirname "$bin")
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
passed=0
failed=0
check() { # check NAME CONDITION-EXIT-STATUS
    if [ "$2" -eq 0 ]; then passed=$((passed + 1)); else failed=$((failed + 1)); echo "FAIL $1"; fi
}
export EIGENLOG="$bin"
python=/usr/bin/python3
[ -x "$python" ] || python=python3

for f in examples/rig_gate.sh examples/read_json.py examples/assess_from_c.c \
         examples/track_long_log.sh examples/watch_logger.service examples/on_alarm.sh; do
    head -4 "$f" | grep -q "Shows: "
    check "$f says what it shows at its top" $?
done

sh examples/rig_gate.sh >"$tmp/gate.txt" 2>&1
status=$?
[ "$status" -eq 5 ]
check "rig_gate.sh exits 5 when a log is unstable (got $status)" $?
grep -q '^GO    datasets/booster_pump.csv' "$tmp/gate.txt" &&
    grep -q '^STOP  datasets/rig_test.csv' "$tmp/gate.txt"
check "rig_gate.sh: GO for the pump, STOP for the rig" $?
sh examples/rig_gate.sh datasets/booster_pump.csv >/dev/null 2>&1
check "rig_gate.sh exits 0 when every log may go" $?
sh examples/rig_gate.sh "$tmp/missing.csv" >"$tmp/gate_err.txt" 2>&1
status=$?
[ "$status" -eq 4 ] && grep -q '^ERROR' "$tmp/gate_err.txt"
check "rig_gate.sh passes an I/O error through as status 4 (got $status)" $?

"$bin" assess datasets/rig_test.csv --boot 200 --json "$tmp/rig.json" --quiet
"$python" examples/read_json.py "$tmp/rig.json" >"$tmp/py.txt"
check "read_json.py runs" $?
grep -q '^verdict:  unstable' "$tmp/py.txt" && grep -q '^least damped mode: 0.800 Hz' "$tmp/py.txt"
check "read_json.py: rig unstable, least damped mode 0.800 Hz (datasets/README.md)" $?
"$python" examples/read_json.py - <"$tmp/rig.json" | cmp -s - "$tmp/py.txt"
check "read_json.py reads stdin too" $?

make -s --no-print-directory "$flavour_dir/examples/assess_from_c" >"$tmp/make.txt" 2>&1
check "assess_from_c.c builds against $flavour_dir/libeigenlog.a" $?
cat "$tmp/make.txt"
"$flavour_dir/examples/assess_from_c" >"$tmp/c.txt" 2>&1
check "assess_from_c runs" $?
grep -q '^verdict: stable (spiral sink)$' "$tmp/c.txt"
check "assess_from_c: booster pump stable spiral sink (datasets/README.md)" $?
"$flavour_dir/examples/assess_from_c" "$tmp/missing.csv" >/dev/null 2>&1
status=$?
[ "$status" -eq 4 ]
check "assess_from_c: a missing file exits 4 (got $status)" $?

sh examples/track_long_log.sh "$tmp/fan" >"$tmp/track.txt" 2>&1
check "track_long_log.sh runs" $?
grep -q '<svg' "$tmp/fan/track.html" 2>/dev/null && grep -q '"class": "shrinking"' "$tmp/fan/track.json" 2>/dev/null
check "track_long_log.sh writes the HTML page and the JSON, margin shrinking (datasets/README.md)" $?

# The service unit needs systemd; its ExecStart options are checked here
# (track accepts them), and the alarm script is run as --on-alarm runs it.
opts=$(sed -n '/^ExecStart=/,/^[A-Z]/p' examples/watch_logger.service | tr -d '\\\n' |
    sed 's/^ExecStart=[^ ]* track [^ ]* //; s/Environment=.*//; s/--html [^ ]*//; s/--json [^ ]*//; s/--on-alarm "[^"]*"//')
# shellcheck disable=SC2086
eval "\"$bin\" track - $opts --quiet" <datasets/booster_pump.csv >/dev/null 2>&1
check "watch_logger.service: track accepts its ExecStart options" $?
cat datasets/fan_warmup.csv | ALARM_LOG="$tmp/alarms.log" "$bin" track - --follow --window 300 \
    --boot 200 --alarm shrinking --on-alarm "sh examples/on_alarm.sh" --quiet 2>/dev/null
check "on_alarm.sh: follow on the fan log runs" $?
[ "$(grep -c ' ALARM shrinking on <stdin>: window .* margin 0\.[0-9]* \[.*P(stable) .*never replaces' "$tmp/alarms.log" 2>/dev/null)" -eq 1 ]
check "on_alarm.sh: one line per episode with the facts (fan log shrinks, datasets/README.md)" $?

echo "e2e_examples: $passed passed, $failed failed"
[ "$failed" -eq 0 ]
