#!/bin/sh
# make bench: prints speed figures (not a pass/fail test).
set -e
bin=build/rel/eigenlog
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
echo "machine: $(nproc) cores, $(awk '/MemTotal/{printf "%.0f GiB", $2/1048576}' /proc/meminfo), $(uname -m), $(${CC:-cc} --version | head -n 1)"
build/rel/bench/bench_ingest "$tmp/big.csv" 1000000
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
exit 0
