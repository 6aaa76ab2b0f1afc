#!/bin/sh
# End-to-end: a wide log's repeated warnings in the text and HTML reports.
# A ring of 24 coupled, damped channels driven by noise (the wide-log
# generator of bench/bench_track.sh at 24 channels and 2,000 rows, so the
# run takes seconds) gets one "not determined by the data" warning per
# mode with wide bounds and one "residuals strongly correlated" warning
# per channel. The text and HTML reports give each kind on one line that
# lists the modes or channels (el_warnlines_fold); JSON keeps every
# warning, unchanged, and the heading's count is the JSON's. Before, the
# text report printed one paragraph per mode and per channel. Run by
# tests/run.sh with EIGENLOG set.
set -u
bin=${EIGENLOG:-build/rel/eigenlog}
py=/usr/bin/python3
[ -x "$py" ] || py=python3
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
passed=0
failed=0
check() { # check NAME CONDITION-EXIT-STATUS
    if [ "$2" -eq 0 ]; then passed=$((passed + 1)); else failed=$((failed + 1)); echo "FAIL $1"; fi
}

awk -v nc=24 -v n=2000 -f tests/data/ring_log.awk >"$tmp/ring.csv"
"$bin" assess "$tmp/ring.csv" --boot 100 --json "$tmp/ring.json" --html "$tmp/ring.html" \
    >"$tmp/ring.txt" 2>"$tmp/ring.err"
check "ring of 24 channels: exit 0" $?

# What JSON holds: the counts the reports must fold.
"$py" - "$tmp/ring.json" >"$tmp/counts" <<'PY'
import json, re, sys
w = [x["message"] for x in json.load(open(sys.argv[1]))["warnings"]]
modes = [m for m in w if re.match(r"mode \d+ \([^)]*\) is not determined by the data", m)]
chans = [m for m in w if m.startswith("residuals strongly correlated") and "on channel " in m]
print(len(w), len(modes), len(chans))
PY
read -r n_all n_modes n_chans <"$tmp/counts"
[ "$n_modes" -ge 3 ] && [ "$n_chans" -ge 3 ]
check "JSON keeps one warning per mode ($n_modes) and per channel ($n_chans)" $?

# Text: no per-mode paragraph is left, one "modes ..." line instead, one
# "on channels" line; the heading counts every warning.
! grep -q '^  ! mode [0-9]* (.*) is not determined by the data' "$tmp/ring.txt"
check "text: no single-mode 'not determined' paragraph left" $?
[ "$(grep -c '^  ! modes [0-9].* are not determined by the data' "$tmp/ring.txt")" -eq 1 ]
check "text: one 'modes ... are not determined by the data' line" $?
[ "$(grep -c '^  ! residuals strongly correlated (Ljung-Box p .* on channels s000, s001' "$tmp/ring.txt")" -eq 1 ] &&
    ! grep -q 'on channel s0' "$tmp/ring.txt"
check "text: one 'on channels' line for the per-channel residual warnings" $?
grep -q "^Warnings ($n_all, on [0-9]* lines)" "$tmp/ring.txt"
check "text: the heading counts all $n_all warnings" $?

# HTML: the same lines.
[ "$(grep -c '<li>modes [0-9].* are not determined by the data' "$tmp/ring.html")" -eq 1 ] &&
    ! grep -q '<li>mode [0-9]* (.*) is not determined by the data' "$tmp/ring.html" &&
    grep -q "<h2>Warnings ($n_all, on [0-9]* lines)</h2>" "$tmp/ring.html"
check "HTML: one 'modes ...' item, no single-mode item, the count of all" $?

# Every mode named in the JSON warnings is in the folded line's list.
"$py" - "$tmp/ring.json" "$tmp/ring.txt" <<'PY'
import json, re, sys
w = [x["message"] for x in json.load(open(sys.argv[1]))["warnings"]]
want = sorted(int(m.split()[1]) for m in w if re.match(r"mode \d+ \([^)]*\) is not determined", m))
text = open(sys.argv[2]).read().replace("\n    ", " ")
line = re.search(r"! modes ([0-9, -]+) \(", text).group(1)
got = []
for part in line.split(", "):
    a, _, b = part.partition("-")
    got += range(int(a), int(b or a) + 1)
assert got == want, (got, want)
PY
check "text: the folded line lists exactly the modes of the JSON warnings" $?

echo "e2e_wide_report: $passed passed, $failed failed"
[ "$failed" -eq 0 ]
