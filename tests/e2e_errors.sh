#!/bin/sh
# End-to-end: every kind of bad input gets the documented exit status, a
# message with its location and a hint, and leaves no output file behind.
# Run by tests/run.sh with EIGENLOG set to the program under test.
set -u
bin=${EIGENLOG:-build/rel/eigenlog}
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
passed=0
failed=0

# expect NAME STATUS LOCATION_REGEX -- ARGS...: runs assess with --json and
# checks status, the location pattern and a hint in stderr, and no JSON file.
expect() {
    name=$1 want=$2 where=$3
    shift 4
    rm -f "$tmp/out.json"
    "$bin" "$@" >"$tmp/stdout" 2>"$tmp/stderr"
    got=$?
    problem=""
    [ "$got" -eq "$want" ] || problem="exit status $got, want $want"
    grep -q -E -e "$where" "$tmp/stderr" || problem="$problem; no location matching '$where'"
    grep -q "hint:" "$tmp/stderr" || problem="$problem; no hint"
    [ -e "$tmp/out.json" ] && problem="$problem; output file left behind"
    ls "$tmp" | grep -q 'out.json.tmp' && problem="$problem; temporary file left behind"
    if [ -z "$problem" ]; then
        passed=$((passed + 1))
    else
        failed=$((failed + 1))
        echo "FAIL $name: $problem"
        sed 's/^/    stderr: /' "$tmp/stderr"
    fi
}

f=$tmp/good.csv
{
    echo "t,a,b"
    i=0
    while [ $i -lt 60 ]; do
        echo "$i,$(( (i * 37) % 11 )).5,$(( (i * 53) % 7 )).25"
        i=$((i + 1))
    done
} >"$f"

expect "missing file" 4 "nosuch\.csv" -- assess "$tmp/nosuch.csv" --json "$tmp/out.json"
: >"$tmp/empty.csv"
expect "empty file" 2 "empty\.csv" -- assess "$tmp/empty.csv" --json "$tmp/out.json"
printf 't,a,b\n' >"$tmp/header.csv"
expect "header only" 2 "header\.csv" -- assess "$tmp/header.csv" --json "$tmp/out.json"
{ head -n 5 "$f"; echo "5,1.0"; tail -n +7 "$f"; } >"$tmp/ragged.csv"
expect "ragged row" 2 "ragged\.csv:6:" -- assess "$tmp/ragged.csv" --json "$tmp/out.json"
{ head -n 4 "$f"; echo "3,1.0,abc"; tail -n +6 "$f"; } >"$tmp/text.csv"
expect "non-numeric cell" 2 "text\.csv:5:7:" -- assess "$tmp/text.csv" --json "$tmp/out.json"
{ head -n 4 "$f"; echo "3,inf,1"; tail -n +6 "$f"; } >"$tmp/inf.csv"
expect "infinite cell" 2 "inf\.csv:5:3:" -- assess "$tmp/inf.csv" --json "$tmp/out.json"
{ head -n 10 "$f"; echo "3,1.0,2.0"; tail -n +12 "$f"; } >"$tmp/back.csv"
expect "time backwards" 2 "back\.csv:11" -- assess "$tmp/back.csv" --json "$tmp/out.json"
{ head -n 10 "$f"; echo "8,1.0,2.0"; tail -n +11 "$f"; } >"$tmp/repeat.csv"
expect "repeated time" 2 "repeat\.csv:1[01]" -- assess "$tmp/repeat.csv" --json "$tmp/out.json"
awk -F, 'BEGIN{OFS=","} NR==1{print; next} {$3="4.0"; print}' "$f" >"$tmp/const.csv"
# A constant default channel is left out with a warning; named in
# --channels it stops the run.
expect "constant channel" 2 "const\.csv.*b" -- assess "$tmp/const.csv" --channels a,b \
    --json "$tmp/out.json"
expect "unknown channel" 1 "--channels" -- assess "$f" --channels a,zz --json "$tmp/out.json"
head -n 4 "$f" >"$tmp/short.csv"
expect "too few rows" 2 "short\.csv" -- assess "$tmp/short.csv" --lags 2 --json "$tmp/out.json"
{ head -n 10 "$f"; for i in 9 10 11 12 13 14 15 16; do echo "$i,NA,1.0"; done; tail -n +19 "$f"; } >"$tmp/gap.csv"
expect "gap longer than max-gap" 2 "gap\.csv" -- assess "$tmp/gap.csv" --max-gap 5 --json "$tmp/out.json"
printf 't,a\n\000\001\002\003binary\377\376\n' >"$tmp/binary.csv"
expect "binary file" 2 "binary\.csv" -- assess "$tmp/binary.csv" --json "$tmp/out.json"
expect "unwritable json path" 4 "no/such/dir" -- assess "$f" --json "$tmp/no/such/dir/out.json"
expect "bad option value" 1 "--lags" -- assess "$f" --lags -3 --json "$tmp/out.json"
expect "unknown option" 1 "--bogus" -- assess "$f" --bogus --json "$tmp/out.json"

# A row repeated exactly (a logger's retry) is left out with a warning;
# the same time with another value is an error at that line.
awk 'NR == 12 {print; print; next} {print}' "$f" >"$tmp/dup.csv"
"$bin" assess "$tmp/dup.csv" --boot 0 --json "$tmp/dup.json" >/dev/null 2>"$tmp/stderr"
if [ $? -eq 0 ] && grep -q '"code": *"repeated_rows_dropped"' "$tmp/dup.json" \
    && grep -q 'line 13 of' "$tmp/dup.json"; then
    passed=$((passed + 1))
else
    failed=$((failed + 1))
    echo "FAIL an exactly repeated row is left out with a warning naming its line"
fi
awk -F, 'BEGIN{OFS=","} NR == 12 {print; $2 = $2 + 1; print; next} {print}' "$f" >"$tmp/dupval.csv"
expect "repeated time, other value" 2 "dupval\.csv:13:1" -- assess "$tmp/dupval.csv" --json "$tmp/out.json"

echo "e2e_errors: $passed passed, $failed failed"
[ "$failed" -eq 0 ]
