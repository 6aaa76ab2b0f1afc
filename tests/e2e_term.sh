#!/bin/sh
# End-to-end: terminal manners. Text output is wrapped to 80 columns when
# standard output is not a terminal, to COLUMNS when it is set, and to the
# terminal's own width on a pseudo-terminal (util-linux `script`, with
# `stty cols`); the wordings a reader misread are gone ("Windows 8 of
# 300", "stationary; p of no amplitude change"); progress shows on a
# terminal only, one label per stage (its count never goes back, the label
# never comes back after another), never with --quiet or when JSON goes
# to standard output. Run by tests/run.sh with EIGENLOG set.
set -u
bin=${EIGENLOG:-build/rel/eigenlog}
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
passed=0
failed=0
check() { # check NAME CONDITION-EXIT-STATUS
    if [ "$2" -eq 0 ]; then passed=$((passed + 1)); else failed=$((failed + 1)); echo "FAIL $1"; fi
}
widest() { awk '{ n = length($0); if (n > m) m = n } END { print m + 0 }' "$1"; }
unset COLUMNS

mkdir -p "$tmp/logs"
cp datasets/booster_pump.csv datasets/rig_test.csv "$tmp/logs/"
i=0
while read -r cmd; do
    i=$((i + 1))
    # shellcheck disable=SC2086
    eval "\"\$bin\" $cmd" >"$tmp/out80_$i.txt" 2>/dev/null
    w=$(widest "$tmp/out80_$i.txt")
    [ -s "$tmp/out80_$i.txt" ] && [ "$w" -le 80 ]
    check "not a terminal: $cmd is at most 80 columns wide (got $w)" $?
    # shellcheck disable=SC2086
    eval "COLUMNS=60 \"\$bin\" $cmd" >"$tmp/out60_$i.txt" 2>/dev/null
    w=$(widest "$tmp/out60_$i.txt")
    [ "$w" -le 60 ] && ! cmp -s "$tmp/out80_$i.txt" "$tmp/out60_$i.txt"
    check "COLUMNS=60: $cmd narrows to at most 60 columns (got $w)" $?
done <<'CMDS'
assess datasets/booster_pump.csv --boot 200
assess datasets/rig_test.csv --boot 200
assess datasets/fan_warmup.csv --boot 200
track datasets/fan_warmup.csv --window 300 --boot 200
spectrum datasets/rig_test.csv
scan datasets/booster_pump.csv
survey "$tmp/logs" --out "$tmp/sv" --boot 100 --jobs 1 --seed 2
CMDS
# Every --help, and demo's list of what it wrote.
for s in "" scan assess track spectrum survey demo; do
    # shellcheck disable=SC2086
    "$bin" $s --help >"$tmp/help.txt" 2>&1
    w=$(widest "$tmp/help.txt")
    [ "$w" -le 80 ]
    check "eigenlog $s --help is at most 80 columns wide (got $w)" $?
done
"$bin" demo -o "$tmp/demo" >"$tmp/demo.txt" 2>&1
w=$(widest "$tmp/demo.txt")
[ "$w" -le 80 ]
check "demo's report is at most 80 columns wide (got $w)" $?

# The words survive wrapping: the same text with line breaks made spaces.
tr -s ' \n' '  ' <"$tmp/out80_1.txt" >"$tmp/w80"
tr -s ' \n' '  ' <"$tmp/out60_1.txt" >"$tmp/w60"
cmp -s "$tmp/w80" "$tmp/w60"
check "wrapping at 60 or 80 columns keeps every word in order" $?

# A pseudo-terminal of 70 columns: the terminal's width is used.
if command -v script >/dev/null 2>&1; then
    script -qec "stty cols 70; \"$bin\" assess datasets/booster_pump.csv --boot 200" "$tmp/pty.txt" >/dev/null 2>&1
    # Carriage returns end the progress line: split there, not glue it on.
    tr '\r' '\n' <"$tmp/pty.txt" | grep -v '^Script ' >"$tmp/pty_clean.txt"
    w=$(widest "$tmp/pty_clean.txt")
    [ "$w" -le 70 ] && [ "$w" -gt 60 ] && grep -q 'Verdict' "$tmp/pty_clean.txt"
    check "on a 70-column terminal the report is at most 70 wide (got $w)" $?
else
    check "util-linux script is installed (make deps)" 1
fi

# Wordings.
grep -q '^Windows       8, each 300 s long, starting every 300 s from 0; 8 assessed' "$tmp/out80_4.txt"
check "track says '8, each 300 s long, starting every 300 s', not '8 of 300'" $?
! grep -q 'Windows .* of [0-9]* every' "$tmp/out80_4.txt"
check "no 'N of LEN every' wording" $?
! grep -q 'p of no amplitude change' "$tmp"/out80_*.txt
check "no 'p of no amplitude change' wording" $?
grep -q 'amplitude-change test p = [0-9.e-]* (a change: p < 0.01)' "$tmp/w80"
check "regime line names the level the p is held to" $?

# Progress: a bootstrap of 150000 replicates runs for over a tick (30000
# took 0.3 s here by 2026-12, too close to the tick).
# EIGENLOG_PROGRESS_DELAY=0 draws from the first tick: a fast machine may
# finish the replicates within the usual one-second delay.
EIGENLOG_PROGRESS_DELAY=0 script -qec "\"$bin\" assess datasets/rig_test.csv --method ls --boot 150000 >/dev/null" "$tmp/prog.txt" >/dev/null 2>&1
sed 's/\r/\n/g' "$tmp/prog.txt" | grep -o '^[a-z][a-z -]*: [0-9]* of [0-9]*\|^[a-z][a-z -]* \.\.\.' >"$tmp/prog_lines.txt"
grep -q '^bootstrap replicates: [0-9]* of 150000$' "$tmp/prog_lines.txt"
check "a terminal shows the bootstrap's progress" $?
sed 's/\r/\n/g' "$tmp/prog.txt" | grep -q '^[a-z][a-z -]* \.\.\. [0-9][0-9]* s *$'
check "a stage without counts shows its running seconds (wide logs: a long set-up)" $?
awk '{ label = $0; sub(/:.*| \.\.\.$/, "", label)
       if (label != last && (label in seen)) bad = 1
       if (label != last) prev = -1   # counts compare within a label only
       seen[label] = 1
       if (label == last && $0 ~ / of / && $(NF - 2) + 0 < prev) bad = 1
       if ($0 ~ / of /) prev = $(NF - 2) + 0; last = label }
     END { exit bad }' "$tmp/prog_lines.txt"
check "each stage one label: counts never go back, no label comes back" $?
script -qec "\"$bin\" assess datasets/rig_test.csv --method ls --boot 150000 --quiet" "$tmp/quiet.txt" >/dev/null 2>&1
! grep -q 'bootstrap' "$tmp/quiet.txt"
check "--quiet: no progress" $?
script -qec "\"$bin\" assess datasets/rig_test.csv --method ls --boot 150000 --json - >/dev/null" "$tmp/json.txt" >/dev/null 2>&1
! grep -q 'bootstrap replicates' "$tmp/json.txt"
check "--json -: no progress" $?
"$bin" assess datasets/rig_test.csv --method ls --boot 150000 >/dev/null 2>"$tmp/err.txt"
[ ! -s "$tmp/err.txt" ]
check "standard error not a terminal: no progress" $?

echo "e2e_term: $passed passed, $failed failed"
[ "$failed" -eq 0 ]
