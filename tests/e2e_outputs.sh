#!/bin/sh
# End-to-end: outputs never destroy anything (docs/cli.md, "Output files").
# For assess, track and spectrum: an output naming the input, two outputs
# to one file, two outputs to standard output are refused with exit 1
# before the log is read, the input intact; an output through a symbolic
# link updates the link's target and leaves the link; /dev/null and a FIFO
# are written in place, never replaced; when one of two outputs fails (a
# file size limit) neither is written and an existing one is unchanged.
# demo -o creates its folder. Run by tests/run.sh with EIGENLOG set.
set -u
bin=${EIGENLOG:-build/rel/eigenlog}
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
passed=0
failed=0
check() { # check NAME CONDITION-EXIT-STATUS
    if [ "$2" -eq 0 ]; then passed=$((passed + 1)); else failed=$((failed + 1)); echo "FAIL $1"; fi
}

cp datasets/booster_pump.csv "$tmp/in.csv"
in=$tmp/in.csv
# The two outputs of each subcommand and the quick options that produce them.
run() { # run SUBCOMMAND [ARGS...]: the subcommand on $in with quick settings
    sub=$1
    shift
    case $sub in
        assess) "$bin" assess "$in" --boot 0 --quiet "$@" ;;
        track) "$bin" track "$in" --window 120 --boot 100 --quiet "$@" ;;
        spectrum) "$bin" spectrum "$in" --quiet "$@" ;;
    esac
}
second_option() { if [ "$1" = spectrum ]; then echo --csv; else echo --html; fi; }

# The unit of `ulimit -f` differs between shells (512 or 1024 bytes): probe.
(ulimit -f 1 && head -c 1500 /dev/zero >"$tmp/probe"; true) 2>/dev/null
block=$(wc -c <"$tmp/probe")

for sub in assess track spectrum; do
    opt2=$(second_option "$sub")
    d=$tmp/$sub
    mkdir "$d"

    run "$sub" --json "$in" 2>"$d/err"
    status=$?
    [ "$status" -eq 1 ] && grep -q -- "--json" "$d/err" && grep -q "hint" "$d/err"
    check "$sub: --json IN refused with exit 1, naming --json with a hint (got $status)" $?
    cmp -s "$in" datasets/booster_pump.csv
    check "$sub: input intact" $?

    ln -s "$in" "$d/link_to_input.csv"
    run "$sub" --json "$d/link_to_input.csv" 2>/dev/null
    [ $? -eq 1 ] && cmp -s "$in" datasets/booster_pump.csv
    check "$sub: an output that is a symbolic link to the input is refused" $?

    ln "$in" "$d/hard_link.csv"
    run "$sub" $opt2 "$d/hard_link.csv" 2>/dev/null
    [ $? -eq 1 ] && cmp -s "$in" datasets/booster_pump.csv
    check "$sub: an output that is a hard link to the input is refused" $?

    run "$sub" --json "$d/x" $opt2 "$d/x" 2>"$d/err"
    status=$?
    [ "$status" -eq 1 ] && [ ! -e "$d/x" ] && grep -q "same file" "$d/err"
    check "$sub: --json x $opt2 x refused (got $status), nothing written" $?
    run "$sub" --json "$d/y" $opt2 "$d/../$sub/y" 2>/dev/null
    [ $? -eq 1 ] && [ ! -e "$d/y" ]
    check "$sub: two spellings of one path refused" $?

    run "$sub" --json - $opt2 - >"$d/out" 2>"$d/err"
    status=$?
    [ "$status" -eq 1 ] && [ ! -s "$d/out" ] && grep -q "standard output" "$d/err"
    check "$sub: --json - $opt2 - refused (got $status), nothing on stdout" $?

    echo old >"$d/target.json"
    ln -s target.json "$d/link.json"
    run "$sub" --json "$d/link.json" >/dev/null
    check "$sub: writing through a symbolic link exits 0" $?
    [ -L "$d/link.json" ] && grep -q '"eigenlog"' "$d/target.json"
    check "$sub: the link stays a link and its target holds the JSON" $?
    ln -s new_target.json "$d/dangling.json"
    run "$sub" --json "$d/dangling.json" >/dev/null
    [ -L "$d/dangling.json" ] && grep -q '"eigenlog"' "$d/new_target.json"
    check "$sub: a dangling link creates the file it names" $?

    run "$sub" --json /dev/null $opt2 "$d/second" >/dev/null
    check "$sub: --json /dev/null exits 0" $?
    [ -c /dev/null ] && [ -s "$d/second" ]
    check "$sub: /dev/null is still a character device, the other output written" $?

    mkfifo "$d/fifo"
    # The reader gives up after 30 s, so a program that replaced the FIFO
    # instead of writing it fails this check rather than hanging the test.
    timeout 30 cat "$d/fifo" >"$d/from_fifo" &
    reader=$!
    run "$sub" --json "$d/fifo" >/dev/null
    status=$?
    wait "$reader"
    [ "$status" -eq 0 ] && [ -p "$d/fifo" ] && grep -q '"eigenlog"' "$d/from_fifo"
    check "$sub: a FIFO is written in place (got $status)" $?

    # A size limit between the two outputs' sizes: the larger one fails.
    run "$sub" --json "$d/full.json" $opt2 "$d/full.2" >/dev/null
    s1=$(wc -c <"$d/full.json")
    s2=$(wc -c <"$d/full.2")
    small=$s1 && large=$s2
    [ "$s1" -gt "$s2" ] && small=$s2 && large=$s1
    limit=$(((small + large) / 2 / block))
    [ $((limit * block)) -gt "$small" ] && [ $((limit * block)) -lt "$large" ]
    check "$sub: a size limit fits between the outputs ($small, $large bytes)" $?
    mkdir "$d/lim"
    (ulimit -f "$limit" && run "$sub" --json "$d/lim/a.json" $opt2 "$d/lim/b.out") 2>"$d/err"
    status=$?
    [ "$status" -eq 4 ] && [ -z "$(ls -A "$d/lim")" ]
    check "$sub: size limit: exit 4 (got $status), no file left at all" $?
    echo old-a >"$d/lim/a.json"
    echo old-b >"$d/lim/b.out"
    (ulimit -f "$limit" && run "$sub" --json "$d/lim/a.json" $opt2 "$d/lim/b.out") 2>/dev/null
    [ $? -eq 4 ] && [ "$(cat "$d/lim/a.json")" = old-a ] && [ "$(cat "$d/lim/b.out")" = old-b ] &&
        [ "$(ls -A "$d/lim" | wc -l)" -eq 2 ]
    check "$sub: size limit: existing outputs unchanged, no temporary file left" $?
done

"$bin" assess "$in" --boot 0 --html - >"$tmp/stdout.html"
[ $? -eq 0 ] && head -c 15 "$tmp/stdout.html" | grep -q -i "<!doctype html" &&
    ! grep -q "Caution:" "$tmp/stdout.html"
check "assess --html -: the page alone on standard output, no text report mixed in" $?
"$bin" track "$in" --window 120 --boot 100 --html - >"$tmp/stdout.html"
[ $? -eq 0 ] && head -c 15 "$tmp/stdout.html" | grep -q -i "<!doctype html" &&
    ! grep -q "Caution:" "$tmp/stdout.html"
check "track --html -: the page alone on standard output" $?

"$bin" demo booster-pump -o "$tmp/demo/a/b" >/dev/null
[ $? -eq 0 ] && cmp -s "$tmp/demo/a/b/booster_pump.csv" datasets/booster_pump.csv
check "demo -o creates missing folders" $?
: >"$tmp/afile"
"$bin" demo -o "$tmp/afile/sub" >/dev/null 2>"$tmp/err"
[ $? -eq 4 ] && grep -q "hint" "$tmp/err"
check "demo -o under a file fails with exit 4 and a hint" $?

"$bin" demo -o "" >/dev/null 2>"$tmp/err"
[ $? -eq 1 ] && grep -q -- "--output" "$tmp/err"
check "demo -o '' is a usage error naming --output" $?

echo "e2e_outputs: $passed passed, $failed failed"
[ "$failed" -eq 0 ]
