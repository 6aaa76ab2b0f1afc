#!/bin/sh
# Runs every test program of one build flavour (rel or san) and every
# end-to-end script, then prints one closing line "tests: N passed, N failed".
flavour=${1:-rel}
dir=build/$flavour
passed=0
failed=0
failed_names=""
for t in "$dir"/tests/test_*; do
    [ -x "$t" ] || continue
    if "$t"; then passed=$((passed + 1)); else failed=$((failed + 1)); failed_names="$failed_names $(basename "$t")"; fi
done
for s in tests/e2e_*.sh; do
    [ -f "$s" ] || continue
    if EIGENLOG="$dir/eigenlog" sh "$s"; then passed=$((passed + 1)); else failed=$((failed + 1)); failed_names="$failed_names $(basename "$s")"; fi
done
echo "[$flavour] test programs and scripts:"
[ -n "$failed_names" ] && echo "[$flavour] failed:$failed_names"
echo "tests: $passed passed, $failed failed"
[ "$failed" -eq 0 ]
