#!/bin/sh
# make bench: prints speed figures (not a pass/fail test).
set -e
bin=build/rel/eigenlog
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
echo "machine: $(nproc) cores, $(awk '/MemTotal/{printf "%.0f GiB", $2/1048576}' /proc/meminfo), $(uname -m), $(${CC:-cc} --version | head -n 1)"
# Ingest: in process, then `eigenlog scan` beside `cat` of the same warm
# file (issue 13's target: within 8x cat; the figure before was 34x).
build/rel/bench/bench_ingest "$tmp/big.csv" 1000000 "$bin"
start=$(date +%s.%N)
"$bin" assess "$tmp/big.csv" --boot 0 --quiet --json "$tmp/out.json"
end=$(date +%s.%N)
echo "assess (1,000,000 rows x 8 channels, point fit, no bootstrap): $(awk "BEGIN{printf \"%.2f\", $end - $start}") s wall"
start=$(date +%s.%N)
"$bin" assess "$tmp/big.csv" --quiet --json "$tmp/out.json"
end=$(date +%s.%N)
echo "assess (same log, 1000 bootstrap replicates): $(awk "BEGIN{printf \"%.2f\", $end - $start}") s wall"
for t in build/rel/bench/bench_boot; do
    [ -x "$t" ] && "$t" && "$t" hankel
done
# track --follow: latency from a window's last row to its result, then
# memory over a simulated stream piped in at full speed. The 24 h check
# runs at 50 Hz (4.3 million rows of 8 channels; 1 kHz would be 86 million)
# and assesses a 60 s window every 600 s, so the reading of every row and
# the dropping of rows are what runs, in a minute rather than an hour.
build/rel/bench/bench_follow latency
for hours in 1 24; do
    rss=$( { build/rel/bench/bench_follow gen 50 $hours 8 |
        /usr/bin/time -f "%M" "$bin" track - --follow --window 60 --step 600 --boot 100 \
            --quiet; } 2>&1 | tail -n 1)
    echo "track --follow memory: $hours h of 8 channels at 50 Hz through a pipe (60 s windows every 600 s, 100 replicates): peak RSS $rss KiB"
done
exit 0
