#!/bin/sh
# bench_assess: memory and growth of `eigenlog assess` (issue 13, items 2
# and 3), each target printed beside the measured figure:
#   - peak RSS / raw data (rows x channels x 8 bytes) of `assess --boot 0`
#     at 1e6 and 4e6 rows x 8 channels, and of `assess` with its default
#     bootstrap at 1e6 (target: at most 3x);
#   - CPU time (user + system) of `assess --boot 0` at 4e6 rows over 1e6
#     rows (target: at most 4.5x);
#   - CPU time of `assess --boot 0` over that of `eigenlog scan` of the
#     same 1e6-row file, the ingest measure (target: at most 3x).
# CPU time, not wall: the machine is shared. Peak RSS and CPU come from
# GNU time (/usr/bin/time -f "%U %S %M"); each figure is the best (least
# CPU) of RUNS runs (default 3, as the README's figures; scan: 3). The logs are written by bench_ingest (a
# stable random linear system, 8 channels, 1 ms steps).
# usage: sh bench/bench_assess.sh [EIGENLOG [RUNS]]   (make bench runs it)
set -e
bin=${1:-build/rel/eigenlog}
runs=${2:-3}
gen=$(dirname "$bin")/bench/bench_ingest
if [ ! -x /usr/bin/time ] || [ ! -x "$gen" ]; then
    echo "bench_assess: needs GNU time (/usr/bin/time) and $gen; skipped"
    exit 0
fi
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT

# best N CMD...: sets cpu (s, best of N) and rss (KiB, of the same run).
best() {
    n=$1
    shift
    cpu=
    rss=
    k=0
    while [ "$k" -lt "$n" ]; do
        /usr/bin/time -f "%U %S %M" -o "$tmp/time" "$@" >/dev/null 2>"$tmp/err" || {
            cat "$tmp/err" >&2
            exit 1
        }
        read -r u s m <"$tmp/time"
        c=$(awk "BEGIN{print $u + $s}")
        if [ -z "$cpu" ] || awk "BEGIN{exit !($c < $cpu)}"; then
            cpu=$c
            rss=$m
        fi
        k=$((k + 1))
    done
}

# "before": the tree when issue 13 was filed; "then": the tree before the
# round that streamed validation, chunked the instrument step's rows and
# took the block Hankel from lagged products (2026-12-04, quiet machine,
# OPENBLAS_NUM_THREADS=1).
for rows in 1000000 4000000; do
    "$gen" "$tmp/log$rows.csv" "$rows" >/dev/null
done
raw1=$((1000000 * 8 * 8))
raw4=$((4000000 * 8 * 8))
best 3 "$bin" scan "$tmp/log1000000.csv"
scan_cpu=$cpu
# The estimator --method auto ended with (the first "method" of the JSON is
# the model's): the two sizes may end with different ones (hankel, or iv
# when hankel finds no persistent mode), which the CPU ratio then includes.
method() { grep -o '"method": *"[a-z]*"' "$1" | head -n 1 | sed 's/.*"\([a-z]*\)"$/\1/'; }
best "$runs" "$bin" assess "$tmp/log1000000.csv" --boot 0 --quiet --json "$tmp/a.json"
cpu1=$cpu
rss1=$rss
m1=$(method "$tmp/a.json")
best "$runs" "$bin" assess "$tmp/log4000000.csv" --boot 0 --quiet --json "$tmp/a.json"
cpu4=$cpu
rss4=$rss
m4=$(method "$tmp/a.json")
best 1 "$bin" assess "$tmp/log1000000.csv" --quiet --json "$tmp/a.json"
rssb=$rss
cpub=$cpu
awk -v r1="$rss1" -v r4="$rss4" -v rb="$rssb" -v raw1="$raw1" -v raw4="$raw4" \
    -v c1="$cpu1" -v c4="$cpu4" -v cb="$cpub" -v cs="$scan_cpu" -v m1="$m1" -v m4="$m4" 'BEGIN {
    printf "assess memory, 1e6 x 8 (raw %.0f MB), --boot 0: peak RSS %.0f MiB = %.2fx raw (target <= 3x; before 17.1x, then 4.3x)\n", raw1 / 1e6, r1 / 1024, r1 * 1024 / raw1
    printf "assess memory, 4e6 x 8 (raw %.0f MB), --boot 0: peak RSS %.0f MiB = %.2fx raw (target <= 3x; before 13.7x, then 3.5x)\n", raw4 / 1e6, r4 / 1024, r4 * 1024 / raw4
    printf "assess memory, 1e6 x 8, default bootstrap: peak RSS %.0f MiB = %.2fx raw (target <= 3x; before 20.7x); CPU %.2f s\n", rb / 1024, rb * 1024 / raw1, cb
    printf "assess --boot 0 CPU: 1e6 rows %.2f s (%s), 4e6 rows %.2f s (%s): ratio %.2f (target <= 4.5; before 5.0, then 5.2-5.8)\n", c1, m1, c4, m4, c4 / c1
    printf "assess --boot 0 CPU / scan CPU, 1e6 x 8: %.2f s / %.2f s = %.1fx (target <= 3x; before 33x, then 3.6 s CPU)\n", c1, cs, c1 / cs
}'
