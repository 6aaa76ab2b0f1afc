#!/bin/sh
# End-to-end: `eigenlog survey` over a folder of ~40 logs (the three demo
# logs, cuts of them, a gzip copy and a broken log): the three outputs, every
# row and JSON line equal to a single `eigenlog assess` of that log with the
# same options (compared with jq, an outside JSON reader), the broken log an
# error row, --jobs 1 and 2 the same table, a re-run skipping unchanged logs
# and redoing a changed one, shards by hand merged into the same table, a
# manifest with per-log options, --fail-on, and the overview page loaded in
# headless Chromium. Run by tests/run.sh with EIGENLOG set.
set -u
bin=${EIGENLOG:-build/rel/eigenlog}
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
passed=0
failed=0
check() { # check NAME CONDITION-EXIT-STATUS
    if [ "$2" -eq 0 ]; then passed=$((passed + 1)); else failed=$((failed + 1)); echo "FAIL $1"; fi
}
finish() {
    echo "e2e_survey: $passed passed, $failed failed"
    [ "$failed" -eq 0 ]
    exit
}
if ! command -v jq >/dev/null 2>&1; then
    failed=$((failed + 1))
    echo "FAIL jq is not installed: this test needs Debian's jq (run: make deps)"
    finish
fi
# Few replicates keep the test fast; the numbers must match whatever count.
opts="--boot 100 --seed 7"

# ---- the logs: ~40 small ones made cheaply from the demo logs
logs=$tmp/logs
mkdir -p "$logs/site_a" "$logs/site_b/deep"
cp datasets/booster_pump.csv datasets/rig_test.csv datasets/fan_warmup.csv "$logs/"
for n in 1500 2000 2500 3000 3500 4000 5000 6000 7000 8000 9000 10000; do
    head -n "$n" datasets/booster_pump.csv >"$logs/site_a/pump_$n.csv"
done
for n in 1200 1600 2400 3200 4800 6400 8000 8800; do
    head -n "$n" datasets/rig_test.csv >"$logs/site_b/rig_$n.csv"
done
for n in 2000 3000 4000 6000 9000 12000 16000 20000; do
    head -n "$n" datasets/fan_warmup.csv >"$logs/site_b/deep/fan_$n.csv"
done
# Later halves too (other operating windows of the same machines).
for n in 3000 6000; do
    { head -n 1 datasets/booster_pump.csv; tail -n "$n" datasets/booster_pump.csv; } >"$logs/site_a/pump_tail_$n.csv"
    { head -n 1 datasets/fan_warmup.csv; tail -n "$n" datasets/fan_warmup.csv; } >"$logs/site_b/fan_tail_$n.csv"
done
gzip -c datasets/rig_test.csv >"$logs/site_b/rig_packed.csv.gz"
printf 'time,a,b\n0,1,2\n1,x,3\n2,1,2\n' >"$logs/site_a/broken.csv"
echo "not a log" >"$logs/site_a/notes.txt"
n_logs=$(find "$logs" -name '*.csv' -o -name '*.csv.gz' | wc -l)
[ "$n_logs" -ge 30 ]
check "made at least 30 logs ($n_logs)" $?

# ---- 1. the survey with two jobs
out=$tmp/out2
"$bin" survey "$logs" --out "$out" --jobs 2 $opts >"$tmp/run1.txt" 2>"$tmp/run1.err"
status=$?
[ "$status" -eq 2 ]
check "survey with a broken log exits 2 (got $status)" $?
[ -s "$out/survey.csv" ] && [ -s "$out/survey.jsonl" ] && [ -s "$out/index.html" ]
check "survey.csv, survey.jsonl and index.html written" $?
[ "$(wc -l <"$out/survey.jsonl")" -eq "$n_logs" ]
check "one JSON line per log" $?
[ "$(jq -s length "$out/survey.jsonl")" -eq "$n_logs" ]
check "every JSON line is JSON (jq reads $n_logs)" $?
head -n 1 "$out/survey.csv" | grep -q '^file,status,exit_code,error,rows_used,verdict,ambiguous,type,frequency_hz,frequency_hz_lo,frequency_hz_hi,damping_ratio,damping_ratio_lo,damping_ratio_hi,decay_rate,decay_rate_lo,decay_rate_hi,p_stable,warnings,estimator$'
check "survey.csv header is the documented one (docs/cli.md)" $?
[ "$(grep -c "" "$out/survey.csv")" -eq $((n_logs + 1)) ]
check "survey.csv: header and one row per log" $?
grep -q '/fan_warmup.csv,ok,0,,24000,undecided,true,' "$out/survey.csv"
check "survey.csv: the drifting fan log's verdict column says undecided" $?
grep -q "site_a/notes.txt" "$out/survey.csv"
[ $? -ne 0 ]
check "a file not named *.csv / *.csv.gz in a folder is not a log" $?
[ -z "$(find "$out" -name '*.tmp*' -o -name 'tmp-*')" ]
check "no temporary file left behind" $?

cores=$(nproc)
per_log=$((cores / 2))
[ "$per_log" -ge 1 ] || per_log=1
[ -z "$(jq -r 'select(.resampling) | .resampling.threads' "$out/survey.jsonl" | grep -vx "$per_log")" ]
check "--jobs 2 on $cores cores: each log's bootstrap got $per_log thread(s)" $?
[ ! -s "$tmp/run1.err" ]
check "no progress line when standard error is not a terminal" $?

# The rows are in listing order: the folder's paths sorted (byte order).
find "$logs" \( -name '*.csv' -o -name '*.csv.gz' \) | LC_ALL=C sort >"$tmp/expect_order"
tail -n +2 "$out/survey.csv" | cut -d, -f1 >"$tmp/got_order"
cmp -s "$tmp/expect_order" "$tmp/got_order"
check "rows in sorted path order" $?

# ---- 2. each line and row equals a single assess of that log
canon() { jq -cS 'del(.resampling.threads)'; }
line=0
mismatch=""
rowbad=""
while IFS= read -r f; do
    line=$((line + 1))
    got=$(sed -n "${line}p" "$out/survey.jsonl" | canon)
    case $f in
    *.gz) want=$(gzip -dc "$f" | "$bin" assess - $opts --json - 2>/dev/null | canon) ;;
    *broken.csv) continue ;;
    *) want=$("$bin" assess "$f" $opts --json - 2>/dev/null | canon) ;;
    esac
    [ "$got" = "$want" ] || mismatch="$mismatch $f"
    # The row's values are the JSON's (compared as numbers by awk: both
    # texts parse to the same double when they are the same value).
    row=$(grep -F "$f,ok," "$out/survey.csv")
    printf '%s\n' "$want" | jq -r '[.input.rows_used, .verdict.stability, .verdict.type,
        .modes[0].frequency_hz, .modes[0].bounds.frequency_hz[0], .modes[0].damping_ratio,
        .modes[0].decay_rate, .modes[0].bounds.decay_rate[1], .verdict.p_stable,
        ((.input.warnings | length) + (.verdict.warnings | length)), .model.method] | @csv' \
        | tr -d '"' >"$tmp/want_row"
    printf '%s\n' "$row" | awk -F, '{print $5","$6","$8","$9","$10","$12","$15","$17","$18","$19","$20}' >"$tmp/got_row"
    paste -d, "$tmp/want_row" "$tmp/got_row" | awk -F, '{
        for (i = 1; i <= 11; i++) if (i == 2 || i == 3 || i == 11) { if ($i != $(i + 11)) exit 1 }
        else if ($i + 0 != $(i + 11) + 0) exit 1 }' || rowbad="$rowbad $f"
done <"$tmp/got_order"
[ -z "$mismatch" ]
check "every JSON line equals assess --json of its log (jq -cS, threads aside)${mismatch:+:$mismatch}" $?
[ -z "$rowbad" ]
check "every ok row holds its JSON's values${rowbad:+:$rowbad}" $?

# ---- 3. the broken log: an error row with assess's own message
"$bin" assess "$logs/site_a/broken.csv" $opts --quiet 2>"$tmp/broken.err"
want_code=$?
want_msg=$(head -n 1 "$tmp/broken.err" | sed 's/^eigenlog: //')
row=$(grep -F "$logs/site_a/broken.csv," "$out/survey.csv")
case $row in
"$logs/site_a/broken.csv,error,$want_code,"*) true ;;
*) false ;;
esac
check "broken log: error row with assess's exit status $want_code" $?
jq -r 'select(.survey_error) | .survey_error.message' "$out/survey.jsonl" >"$tmp/got_msg"
[ "$(cat "$tmp/got_msg")" = "$want_msg" ] && [ -n "$want_msg" ]
check "broken log: its JSON line holds assess's first error line" $?
grep -q "Logs that could not be assessed (1)" "$out/index.html"
check "overview page lists the failed log" $?

# ---- 4. one job gives the same table
out1=$tmp/out1
"$bin" survey "$logs" --out "$out1" --jobs 1 $opts >/dev/null 2>&1
cmp -s "$out/survey.csv" "$out1/survey.csv"
check "--jobs 1 and --jobs 2: survey.csv byte for byte" $?
jq -cS 'del(.resampling.threads)' "$out/survey.jsonl" >"$tmp/j2"
jq -cS 'del(.resampling.threads)' "$out1/survey.jsonl" >"$tmp/j1"
cmp -s "$tmp/j1" "$tmp/j2"
check "--jobs 1 and --jobs 2: the same JSON lines (threads aside)" $?
cmp -s "$out/index.html" "$out1/index.html"
check "--jobs 1 and --jobs 2: the same overview page" $?

# ---- 5. shards by hand, then merge: the same table
sh_dir=$tmp/sharded
"$bin" survey --out "$sh_dir" --merge "$sh_dir" >/dev/null 2>&1
[ $? -eq 4 ] && [ ! -e "$sh_dir/survey.csv" ]
check "--merge without shards: exit 4, no output" $?
"$bin" survey "$logs" --out "$sh_dir" --shard 1/3 $opts >/dev/null 2>&1
"$bin" survey "$logs" --out "$sh_dir" --shard 3/3 $opts >/dev/null 2>&1
"$bin" survey --merge "$sh_dir" >/dev/null 2>"$tmp/merge.err"
[ $? -eq 4 ] && grep -q "shards/2" "$tmp/merge.err" && [ ! -e "$sh_dir/survey.csv" ]
check "--merge with shard 2 of 3 missing: exit 4 naming it, no output" $?
"$bin" survey "$logs" --out "$sh_dir" --shard 2/3 $opts >/dev/null 2>&1
"$bin" survey --merge "$sh_dir" >/dev/null 2>&1
status=$?
[ "$status" -eq 2 ]
check "--merge exits 2 as the local run did (got $status)" $?
cmp -s "$sh_dir/survey.csv" "$out/survey.csv"
check "three shards merged: the same table as a local run" $?

# ---- 6. resuming: unchanged logs are skipped, a changed one redone
cp "$out/survey.csv" "$tmp/before.csv"
"$bin" survey "$logs" --out "$out" --jobs 2 $opts >"$tmp/run2.txt" 2>&1
grep -q "(0 assessed now, $n_logs unchanged)" "$tmp/run2.txt"
check "re-run over the same folder assesses nothing" $?
cmp -s "$tmp/before.csv" "$out/survey.csv"
check "re-run writes the same table" $?
head -n 2200 datasets/rig_test.csv >"$logs/site_b/rig_1200.csv"   # new content, same name
"$bin" survey "$logs" --out "$out" --jobs 2 $opts >"$tmp/run3.txt" 2>&1
grep -q "(1 assessed now, $((n_logs - 1)) unchanged)" "$tmp/run3.txt"
check "a changed log is assessed again, the others not" $?
grep -F "$logs/site_b/rig_1200.csv,ok," "$out/survey.csv" | cut -d, -f5 | grep -qx 2199
check "the changed log's row is new (2199 rows used)" $?
rec=$(grep -l "^path $logs/rig_test.csv\$" "$out"/cache/*.rec)
sed -i 's/^json {/json {broken/' "$rec"
"$bin" survey "$logs" --out "$out" --jobs 2 $opts >"$tmp/run5.txt" 2>&1
grep -q "(1 assessed now, $((n_logs - 1)) unchanged)" "$tmp/run5.txt" && grep -q "^json {\"" "$rec"
check "a cache record whose JSON cannot be read is redone and rewritten" $?

# ---- 7. a manifest with per-log options; --fail-on
cat >"$tmp/campaign.txt" <<EOF
# rig run, the first two accelerometers only; the pump's first five minutes
logs/rig_test.csv --channels accel_a,accel_b
logs/fan_warmup.csv
logs/booster_pump.csv --to=2026-03-14T08:05:00+01:00
EOF
"$bin" survey "$tmp/campaign.txt" --out "$tmp/man" $opts --fail-on unstable >/dev/null 2>&1
status=$?
# The rig's two accelerometers see its growing 0.8 Hz mode (datasets/
# README.md: the rig is unstable); the default estimator for two sensors
# (the subspace stage) resolves its four states from two channels.
[ "$status" -eq 5 ]
check "manifest survey, the unstable rig log, --fail-on unstable: exit 5 (got $status)" $?
"$bin" survey "$tmp/campaign.txt" --out "$tmp/man" $opts --fail-on ambiguous >"$tmp/man.txt" 2>&1
status=$?
[ "$status" -eq 5 ] && grep -q "(0 assessed now, 3 unchanged)" "$tmp/man.txt"
check "the undecided fan log matches --fail-on ambiguous: exit 5 (got $status), from the cache" $?
want=$("$bin" assess "$logs/rig_test.csv" $opts --channels accel_a,accel_b --json - | canon)
got=$(sed -n 1p "$tmp/man/survey.jsonl" | canon)
[ "$got" = "$want" ] && [ -n "$want" ]
check "per-log --channels of a manifest applied as assess applies it" $?
want=$("$bin" assess "$logs/booster_pump.csv" $opts --to 2026-03-14T08:05:00+01:00 --json - | canon)
got=$(sed -n 3p "$tmp/man/survey.jsonl" | canon)
[ "$got" = "$want" ] && [ -n "$want" ]
check "per-log --to of a manifest applied" $?
"$bin" survey "$tmp/campaign.txt" --out "$tmp/man" $opts --level 0.9 >"$tmp/man.txt" 2>&1
grep -q "(3 assessed now, 0 unchanged)" "$tmp/man.txt"
check "changed options: every log assessed again" $?
printf 'logs/rig_test.csv --boot 5\n' >"$tmp/bad_manifest.txt"
"$bin" survey "$tmp/bad_manifest.txt" --out "$tmp/badman" 2>"$tmp/badman.err"
[ $? -eq 1 ] && grep -q "bad_manifest.txt:1:19" "$tmp/badman.err" && [ ! -e "$tmp/badman/survey.csv" ]
check "a manifest with a non per-log option: usage error at line:column, no output" $?

# The survey's own folder inside the searched one: its tables are not logs.
mkdir -p "$tmp/inner"
cp "$logs"/site_b/rig_1600.csv "$logs"/site_b/rig_2400.csv "$tmp/inner/"
"$bin" survey "$tmp/inner" --out "$tmp/inner/campaign" $opts --quiet
"$bin" survey "$tmp/inner" --out "$tmp/inner/campaign" $opts >"$tmp/inner.txt" 2>&1
grep -q "^survey: 2 logs (0 assessed now, 2 unchanged)" "$tmp/inner.txt"
check "an output folder inside the searched folder is not searched" $?

# A .csv.gz that gzip cannot decompress: an error row saying so, not what
# assess made of a cut stream.
mkdir -p "$tmp/gz"
head -n 2000 datasets/booster_pump.csv | gzip -c >"$tmp/gz/good.csv.gz"
head -c 3000 "$logs/site_b/rig_packed.csv.gz" >"$tmp/gz/cut.csv.gz"
"$bin" survey "$tmp/gz" --out "$tmp/gzout" $opts --quiet
status=$?
grep -q "^$tmp/gz/cut.csv.gz,error,2,gzip could not decompress" "$tmp/gzout/survey.csv" &&
    grep -q "^$tmp/gz/good.csv.gz,ok,0,," "$tmp/gzout/survey.csv" && [ "$status" -eq 2 ]
check "a truncated .csv.gz is an error row naming gzip; the good one is assessed" $?

# The progress line, on a terminal (script(1) gives the run one).
if command -v script >/dev/null 2>&1; then
    mkdir -p "$tmp/ttylogs"
    cp "$logs"/site_b/rig_1600.csv "$logs"/site_b/rig_2400.csv "$tmp/ttylogs/"
    script -qec "$bin survey $tmp/ttylogs --out $tmp/tty $opts" /dev/null >"$tmp/tty.txt" 2>&1
    tr '\r' '\n' <"$tmp/tty.txt" | grep -q "^survey: 2 of 2 logs done, 0 failed, 0:00:[0-9][0-9] elapsed"
    check "on a terminal: one progress line (done of total, failed, elapsed)" $?
fi

# ---- 7b. --log-timeout: a log over the limit is stopped, its row says so,
# nothing of it is left or cached, and the other logs are assessed.
mkdir -p "$tmp/slow"
cp datasets/rig_test.csv "$tmp/slow/quick.csv"
# About 300,000 rows: ingest alone takes longer than the 0.3 s limit here.
awk 'BEGIN { print "time,a,b,c"; for (i = 0; i < 300000; i++)
             printf "%.3f,%.6f,%.6f,%.6f\n", i * 0.001, sin(i * 0.01), cos(i * 0.013), sin(i * 0.007) }' \
    >"$tmp/slow/big.csv"
start=$(date +%s)
"$bin" survey "$tmp/slow/big.csv" --out "$tmp/slowout" --log-timeout 0.3 --reports --boot 1000 \
    --quiet >/dev/null 2>&1
status=$?
took=$(( $(date +%s) - start ))
grep -q "^$tmp/slow/big.csv,error,124,assess was stopped after the --log-timeout of 0.3 s," "$tmp/slowout/survey.csv" &&
    [ "$status" -eq 2 ] && [ "$took" -le 20 ]
check "--log-timeout 0.3: the slow log is an error row with code 124 and the limit (exit $status, ${took} s)" $?
[ -z "$(find "$tmp/slowout" -name '*.tmp*' -o -name 'tmp-*')" ] &&
    [ -z "$(find "$tmp/slowout/cache" -type f)" ]
check "--log-timeout: no temporary file and no cached record of the stopped log" $?
"$bin" survey "$tmp/slow/quick.csv" --out "$tmp/slowout2" --log-timeout 60 $opts --quiet >/dev/null 2>&1
status=$?
grep -q "^$tmp/slow/quick.csv,ok,0,," "$tmp/slowout2/survey.csv" && [ "$status" -eq 0 ]
check "--log-timeout 60: a quick log is assessed as usual (exit $status)" $?
"$bin" survey "$tmp/slow/quick.csv" --out "$tmp/slowout3" --log-timeout 0 >/dev/null 2>"$tmp/to.err"
[ $? -eq 1 ] && grep -q "log-timeout" "$tmp/to.err" && [ ! -e "$tmp/slowout3/survey.csv" ]
check "--log-timeout 0: a usage error naming the option, no output" $?

# ---- 8. usage errors
"$bin" survey "$logs" >/dev/null 2>&1
check "no --out: exit 1" $(( $? == 1 ? 0 : 1 ))
mkdir -p "$tmp/empty"
"$bin" survey "$tmp/empty" --out "$tmp/o" >/dev/null 2>&1
check "a folder without logs: exit 1" $(( $? == 1 ? 0 : 1 ))
"$bin" survey "$logs" --out "$tmp/o" --boot x >/dev/null 2>&1
check "a bad assess option: one usage error (exit 1)" $(( $? == 1 ? 0 : 1 ))
"$bin" survey --help | grep -q -- "--shard K/N"
check "survey --help lists --shard" $?

# ---- 9. reports and the page in Chromium
"$bin" survey "$logs/site_a" "$logs/rig_test.csv" --out "$tmp/rep" $opts --reports --quiet >/dev/null 2>&1
n_ok=$(grep -c ',ok,' "$tmp/rep/survey.csv")
[ "$(ls "$tmp/rep/reports" | wc -l)" -eq "$n_ok" ]
check "--reports: one report per assessed log ($n_ok)" $?
missing=0
for href in $(grep -o 'href="reports/[^"]*"' "$tmp/rep/index.html" | sed 's/href="//; s/"$//'); do
    [ -s "$tmp/rep/$href" ] || missing=$((missing + 1))
done
[ "$missing" -eq 0 ] && [ "$(grep -c 'href="reports/' "$tmp/rep/index.html")" -eq "$n_ok" ]
check "every link of the page leads to a report" $?
grep -q -i -E '<script|src="http|href="http' "$tmp/rep/index.html"
[ $? -ne 0 ]
check "page self-contained: no script, no outside resource" $?

browser=$(command -v chromium || true)
if [ -z "$browser" ]; then
    failed=$((failed + 1))
    echo "FAIL chromium is not installed: this test needs Debian's chromium (run: make deps)"
    finish
fi
profile=$(mktemp -d "$tmp/profile.XXXXXX")
timeout 60 "$browser" --headless --no-sandbox --disable-gpu --disable-quic --no-first-run \
    --disable-background-networking --disable-component-update --disable-sync \
    --user-data-dir="$profile" --enable-logging=stderr --v=0 \
    --dump-dom "file://$out/index.html" >"$tmp/dom.html" 2>"$tmp/dom.log"
[ -s "$tmp/dom.html" ] && grep -q "</html>" "$tmp/dom.html"
check "chromium loads the overview page" $?
# Chromium tags every message a page sends to the console ":CONSOLE"; the
# page has no script, so any such line is a fault of the page.
grep -q ":CONSOLE" "$tmp/dom.log"
[ $? -ne 0 ]
check "no console message while loading the page" $?
[ "$(grep -o '<circle class="margin"' "$tmp/dom.html" | wc -l)" -eq $((n_logs - 1)) ]
check "the parsed page holds a margin figure per assessed log" $?
first=$(grep -o '<tr class="log"><td class="n">1</td><td>[^<]*' "$tmp/dom.html" | sed 's/.*<td>//')
least=$(tail -n +2 "$out/survey.csv" | awk -F, '$2 == "ok" { print $15 "," $1 }' | sort -t, -k1,1g | head -n 1 | cut -d, -f2)
[ -n "$first" ] && [ "$first" = "$least" ]
check "ranked first: the log with the least decay rate ($least)" $?
profile=$(mktemp -d "$tmp/profile.XXXXXX")
timeout 60 "$browser" --headless --no-sandbox --disable-gpu --disable-quic --no-first-run \
    --disable-background-networking --disable-component-update --disable-sync \
    --user-data-dir="$profile" --window-size=1400,900 --screenshot="$tmp/survey.png" \
    "file://$out/index.html" >/dev/null 2>&1
[ -s "$tmp/survey.png" ]
check "chromium renders the page to a screenshot" $?

finish
