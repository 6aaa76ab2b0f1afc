#!/bin/sh
# Time forms a logger export may use, end to end: the bundled pump log
# (ISO 8601 date-times with a zone) rewritten with its dates day first
# (14.03.2026 08:00:00,050) and month first on a 12-hour clock (3/14/2026
# 8:00:00.050 AM), both without the zone, must give the same modes as the
# ISO log without its zone, and so must the date and the time of day
# written in two columns, and written as times of day without a date
# across midnight; the rig log with its units moved from the
# header into a row of units must give the same modes as the original.
# The reference is the same log in the plain form (the readers are
# compared with each other, not with stored numbers). Also: --date-order
# with a bad value, and a first date that reads both ways.
# usage: EIGENLOG=build/rel/eigenlog sh tests/e2e_time_forms.sh
set -u
bin=${EIGENLOG:-build/rel/eigenlog}
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
passed=0
failed=0
check() { # check NAME CONDITION-EXIT-STATUS
    if [ "$2" -eq 0 ]; then passed=$((passed + 1)); else failed=$((failed + 1)); echo "FAIL $1"; fi
}
flat() { tr -d ' \n' <"$1"; }
modes() { flat "$1" | grep -o '"lambda":{[^}]*}' | head -n 4; }

pump=datasets/booster_pump.csv
# ISO without the zone, day first, month first (12-hour clock).
awk -F, 'NR == 1 { print; next } { sub(/\+01:00$/, "", $1); print $1 "," $2 "," $3 }' "$pump" >"$tmp/iso.csv"
awk -F, 'NR == 1 { print; next } {
    split($1, dt, "T"); split(dt[1], d, "-"); sub(/\+01:00$/, "", dt[2]); sub(/\./, ",", dt[2])
    print d[3] "." d[2] "." d[1] " " dt[2] ";" $2 ";" $3 }' "$pump" | sed '1s/,/;/g' >"$tmp/dmy.csv"
awk -F, 'NR == 1 { print; next } {
    split($1, dt, "T"); split(dt[1], d, "-"); sub(/\+01:00$/, "", dt[2])
    split(dt[2], hms, ":"); h = hms[1] + 0; ap = h < 12 ? "AM" : "PM"; h = h % 12; if (h == 0) h = 12
    print (d[2] + 0) "/" (d[3] + 0) "/" d[1] " " h ":" hms[2] ":" hms[3] " " ap "," $2 "," $3 }' "$pump" >"$tmp/mdy.csv"
# The date and the time of day in two columns, as spreadsheet exports
# write them (day first, decimal comma, semicolons), and ISO dates beside
# their times, under a units row that labels the date-times UTC.
awk -F, 'NR == 1 { print "Datum;Uhrzeit;" $2 ";" $3; next } {
    split($1, dt, "T"); split(dt[1], d, "-"); sub(/\+01:00$/, "", dt[2]); sub(/\./, ",", dt[2])
    print d[3] "." d[2] "." d[1] ";" dt[2] ";" $2 ";" $3 }' "$pump" >"$tmp/cols.csv"
awk -F, 'NR == 1 { print "date,time," $2 "," $3; print "UTC,hh:mm:ss,,"; next } {
    split($1, dt, "T"); sub(/\+01:00$/, "", dt[2])
    print dt[1] "," dt[2] "," $2 "," $3 }' "$pump" >"$tmp/isocols.csv"
# Times of day without a date (some loggers write no date), moved to
# 23:55:00 so that the log crosses midnight.
awk -F, 'NR == 1 { print; next } {
    split($1, dt, "T"); sub(/\+01:00$/, "", dt[2]); split(dt[2], hms, ":")
    ms = (hms[1] * 3600000 + hms[2] * 60000 + int(hms[3] * 1000 + 0.5) + 57300000) % 86400000
    printf "%02d:%02d:%02d.%03d,%s,%s\n", int(ms / 3600000), int(ms / 60000) % 60,
           int(ms / 1000) % 60, ms % 1000, $2, $3 }' "$pump" >"$tmp/clock.csv"
for f in iso dmy mdy cols isocols clock; do
    "$bin" assess "$tmp/$f.csv" --boot 0 --quiet --json "$tmp/$f.json" 2>"$tmp/$f.err"
    check "assess of the $f form runs" $?
done
modes "$tmp/iso.json" >"$tmp/iso.modes"
[ -s "$tmp/iso.modes" ]
check "the ISO log has modes" $?
for f in dmy mdy cols isocols clock; do
    modes "$tmp/$f.json" | cmp -s - "$tmp/iso.modes"
    check "the $f form gives the ISO form's modes" $?
done
flat "$tmp/cols.json" | grep -q '"time_column":"Datum+Uhrzeit"'
check "the time is named by both columns" $?
flat "$tmp/cols.json" | grep -q '"channel_names":\["discharge_pressure","flow"\]'
check "the time of day is no channel" $?
! grep -q 'skipped' "$tmp/cols.err" && ! flat "$tmp/cols.json" | grep -q 'text_columns_skipped'
check "the time of day column gives no skipped-column note" $?
flat "$tmp/isocols.json" | grep -q '"time_zone_known":true'
check "a units row's UTC gives the zone-less date-times their zone" $?
printf 'Date,Time,x\n14.03.2026,08:00:00.0,1\n14.03.2026,08:00:00.1,2\n14.03.2026,08:00:0x,3\n' \
    >"$tmp/badclock.csv"
"$bin" scan "$tmp/badclock.csv" >/dev/null 2>"$tmp/badclock.err"
[ $? -eq 2 ] && grep -q 'badclock.csv:4:12:' "$tmp/badclock.err"
check "a bad time of day is an error at its own cell (line 4, column 12)" $?
flat "$tmp/clock.json" | grep -q '"time_of_day":true,"midnight_crossings":1' &&
    flat "$tmp/clock.json" | grep -q '"window_text":\["23:55:00.000","00:04:59.950(+1d)"\]'
check "times of day: one midnight crossing, the window shown as the log writes it" $?
"$bin" assess "$tmp/clock.csv" --boot 0 --quiet --json "$tmp/clock_from.json" \
    --from 00:01:00 --to 00:03:00 2>/dev/null &&
    flat "$tmp/clock_from.json" |
    grep -q '"window_text":\["00:01:00.000(+1d)","00:03:00.000(+1d)"\]'
check "--from/--to as times of day after midnight" $?
printf 't,x\n08:00:00,1\n08:00:01,2\n07:59:00,3\n08:00:03,4\n' >"$tmp/clockback.csv"
"$bin" assess "$tmp/clockback.csv" --boot 0 >/dev/null 2>"$tmp/clockback.err"
[ $? -eq 2 ] &&
    grep -q "clockback.csv:4:1: time goes backwards: 07:59:00.000 after 08:00:01.000" \
        "$tmp/clockback.err"
check "a time of day a minute back is time going back (line 4), not a midnight" $?
flat "$tmp/dmy.json" | grep -q '"date_order":"dmy"'
check "date_order dmy reported" $?
"$bin" assess "$tmp/mdy.csv" --boot 0 --quiet --json "$tmp/from.json" --from "3/14/2026 8:00:30 AM" 2>/dev/null
check "--from in the log's own form" $?
flat "$tmp/from.json" | grep -q '"window_text":\["2026-03-14T08:00:30.000"'
check "--from read month first" $?

# A first date that reads both ways stops at its cell; --date-order settles it.
printf 't,x\n05/12/2026 08:30:00,1\n05/12/2026 08:30:01,2\n' >"$tmp/amb.csv"
"$bin" scan "$tmp/amb.csv" >/dev/null 2>"$tmp/amb.err"
[ $? -eq 2 ] && grep -q 'amb.csv:2:1:' "$tmp/amb.err" && grep -q -- '--date-order' "$tmp/amb.err"
check "an ambiguous first date is an error at line 2 naming --date-order" $?
"$bin" scan "$tmp/amb.csv" --date-order dmy --json - 2>/dev/null | tr -d ' \n' | grep -q '"span_text":\["2026-12-05T08:30:00.000"'
check "--date-order dmy reads 5 December" $?
"$bin" scan "$tmp/amb.csv" --date-order ymd >/dev/null 2>"$tmp/bad.err"
[ $? -eq 1 ] && grep -q -- '--date-order' "$tmp/bad.err"
check "--date-order with a bad value is a usage error" $?

# The rig log with its units in a row under the header.
rig=datasets/rig_test.csv
{
    head -n 1 "$rig" | sed 's/ *\[[^]]*\]//g'
    head -n 1 "$rig" | tr ',' '\n' | sed 's/.*\[\(.*\)\].*/\1/' | paste -s -d ,
    tail -n +2 "$rig"
} >"$tmp/units.csv"
"$bin" assess "$rig" --boot 0 --quiet --json "$tmp/rig.json"
check "assess of the rig log" $?
"$bin" assess "$tmp/units.csv" --boot 0 --quiet --json "$tmp/units.json"
check "assess of the rig log with a row of units" $?
modes "$tmp/rig.json" >"$tmp/rig.json.modes"
[ -s "$tmp/rig.json.modes" ] && modes "$tmp/units.json" | cmp -s - "$tmp/rig.json.modes"
check "a row of units gives the header units' modes" $?
flat "$tmp/units.json" | grep -q '"units":\["m/s2","m/s2","ue","mm"\]'
check "the units row's units are the channels' units" $?
flat "$tmp/units.json" | grep -q '"time_unit_source":"unitsrow"'
check "the time unit came from the units row" $?

echo "e2e_time_forms: $passed passed, $failed failed"
[ "$failed" -eq 0 ]
