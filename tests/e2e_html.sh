#!/bin/sh
# End-to-end: `eigenlog assess --html` writes a page that headless Chromium
# (Debian's `chromium`, installed by `make deps`) loads without a console
# message, whose DOM holds every figure with data, and which renders to a
# screenshot; `eigenlog track --html` likewise (section 5). Run by
# tests/run.sh with EIGENLOG set to the program under test.
# EL_SAVE_SCREENSHOT=1 saves the screenshots as docs/report.png and
# docs/track.png (the README shows them); otherwise they stay in the
# temporary folder.
set -u
bin=${EIGENLOG:-build/rel/eigenlog}
log=datasets/booster_pump.csv
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
passed=0
failed=0

ok() { passed=$((passed + 1)); }
bad() { failed=$((failed + 1)); echo "FAIL $1"; }
check() { if eval "$2"; then ok; else bad "$1"; fi; }
finish() {
    echo "e2e_html: $passed passed, $failed failed"
    [ "$failed" -eq 0 ]
    exit
}

browser=$(command -v chromium || true)
if [ -z "$browser" ]; then
    bad "chromium is not installed: this test needs Debian's chromium package (run: make deps, or apt-get install -y chromium)"
    finish
fi

# 1. The report itself.
"$bin" assess "$log" --html "$tmp/report.html" --boot 200 --quiet >"$tmp/stdout" 2>"$tmp/stderr"
status=$?
if [ "$status" -ne 0 ]; then
    bad "eigenlog assess --html failed (exit $status)"
    sed 's/^/    stderr: /' "$tmp/stderr"
    finish
fi
html=$tmp/report.html
check "report written" '[ -s "$html" ]'
# Small enough: a 12,000-sample log stays well under a megabyte because
# long lines are downsampled (el_html.h).
size=$(wc -c <"$html")
check "report under 1 MB ($size bytes)" '[ "$size" -lt 1000000 ]'
# Same input, same bytes (no date, no randomness, threads do not matter).
"$bin" assess "$log" --html "$tmp/again.html" --boot 200 --quiet >/dev/null 2>&1
check "same bytes on a second run" 'cmp -s "$html" "$tmp/again.html"'
check "no script in the report" '! grep -q "<script" "$html"'
check "no reference outside the file" '! grep -q -E "(src|href)=|url\\((http|file|//)|https?:" "$html"'

# 2. Chromium: a fresh profile each run; no network features. The log
# goes to stderr at verbosity 0.
run_browser() {
    profile=$(mktemp -d "$tmp/profile.XXXXXX")
    timeout 60 "$browser" --headless --no-sandbox --disable-gpu --disable-quic --no-first-run \
        --disable-background-networking --disable-component-update --disable-sync \
        --user-data-dir="$profile" --enable-logging=stderr --v=0 "$@"
}
# load_dom NAME WHAT: Chromium parses $tmp/NAME.html into $tmp/DOM, where
# DOM is dom.html for the assess page and NAME_dom.html otherwise.
# Console messages: Chromium writes every message a page sends to the
# console (script errors, and its own complaints about the page such as
# "Error: <path> attribute d: Expected number") as a log line tagged
# ":CONSOLE" (e.g. "[pid:tid:date:INFO:CONSOLE:1] "Error: ...", source: file://...").
# The report has no script, so any such line is a fault of the page. Other
# log lines (D-Bus, GPU sandbox) are about the headless machine, not the page.
load_dom() {
    dom=$tmp/$1_dom.html
    [ "$1" = report ] && dom=$tmp/dom.html
    run_browser --dump-dom "file://$(cd "$tmp" && pwd)/$1.html" >"$dom" 2>"$dom.log"
    check "chromium dumped the $2 DOM" '[ -s "$dom" ] && grep -q "</html>" "$dom"'
    if grep -q ":CONSOLE" "$dom.log"; then
        bad "console messages while loading the $2:"
        grep ":CONSOLE" "$dom.log" | sed 's/^/    /' | head -n 10
    else
        ok
    fi
}
load_dom report "assess page"

# 3. Every figure in the parsed DOM, each with data. figure_text ID [DOM]
# prints the DOM (default: the assess page's) from the figure's opening
# tag to its </figure>.
figure_text() {
    awk -v id="id=\"$1\"" 'index($0, id) { on = 1 } on { print } on && /<\/figure>/ { exit }' \
        "${2:-$tmp/dom.html}"
}
# Points of the first <path class="CLS" ...> in a figure: cloud dots are
# "M" commands of its d attribute.
cloud_points() {
    figure_text "$1" | tr '>' '\n' | grep -m 1 "<path class=\"$2\"" |
        sed 's/.* d="\([^"]*\)".*/\1/' | tr -cd 'M' | wc -c
}
# Coordinate pairs of the first line path of class CLS in a figure.
line_points() {
    figure_text "$1" | tr '>' '\n' | grep -m 1 "<path class=\"line $2\"" |
        sed 's/.* d="\([^"]*\)".*/\1/' | tr 'M' ' ' | wc -w | awk '{ print int($1 / 2) }'
}

for id in fig-eigenvalues fig-plane fig-timeseries-0 fig-timeseries-1 fig-spectrum fig-modes; do
    check "figure $id in the DOM" 'figure_text "$id" | grep -q .'
done
check "no third channel figure" '! grep -q "fig-timeseries-2" "$tmp/dom.html"'
check "verdict before the figures" \
    'awk "/id=\"verdict\"/ { v = NR } /id=\"fig-eigenvalues\"/ { f = NR } END { exit !(v && f && v <= f) }" "$tmp/dom.html"'

# Booster pump: 2 channels, one oscillatory mode, 200 replicates. Cloud
# rule: 200 x 1 <= 4000, so every replicate is a dot (a replicate whose
# eigenvalue is not finite would be left out; none is expected here).
n=$(cloud_points fig-eigenvalues cloud)
check "eigenvalue cloud has 200 dots (got $n)" '[ "$n" -eq 200 ]'
n=$(cloud_points fig-plane cloud)
check "plane cloud has 200 dots (got $n)" '[ "$n" -eq 200 ]'
check "stability boundary drawn" 'figure_text fig-eigenvalues | grep -q "class=\"boundary\""'
check "stable side shaded" 'figure_text fig-eigenvalues | grep -q "class=\"stable-side\""'
check "discriminant parabola drawn" 'figure_text fig-plane | grep -q "class=\"parabola\""'
# 12,000 samples: 750 runs x (min, max) = at most 1500 points per line.
for c in 0 1; do
    for cls in measured one-step free-run; do
        n=$(line_points "fig-timeseries-$c" "$cls")
        check "channel $c $cls line has 2..1500 points (got $n)" '[ "$n" -ge 2 ] && [ "$n" -le 1500 ]'
    done
done
n=$(line_points fig-spectrum psd)
check "spectrum line has points (got $n)" '[ "$n" -ge 2 ] && [ "$n" -le 1500 ]'
check "mode frequency marked on the spectrum" 'figure_text fig-spectrum | grep -q "class=\"modeline\""'
check "mode table has mode 1" 'figure_text fig-modes | grep -q "id=\"mode-1\""'
# The booster pump has two sensors: --method auto fits hankel, so the page
# shows the poles of every model order (el_html_stab.h).
check "figure fig-orders in the DOM" 'figure_text fig-orders | grep -q .'
n=$(figure_text fig-orders | tr '>' '\n' | grep -c '<circle class="pole ')
check "fig-orders has poles (got $n)" '[ "$n" -ge 2 ]'
check "fig-orders marks the model order and a kept pole" \
    'figure_text fig-orders | grep -q "class=\"chosen-order\"" && figure_text fig-orders | grep -q "class=\"pole in-model\""'
check "no non-finite number in the page" \
    '! grep -q -i -w -E "nan|inf|infinity" "$tmp/dom.html"'

# 4. Screenshot.
if [ "${EL_SAVE_SCREENSHOT:-0}" = 1 ]; then
    mkdir -p docs
    png=$(pwd)/docs/report.png
else
    png=$tmp/report.png
fi
rm -f "$png"
run_browser --screenshot="$png" --window-size=1280,5100 --hide-scrollbars \
    "file://$(cd "$tmp" && pwd)/report.html" >"$tmp/shot.out" 2>"$tmp/shot.log"
check "screenshot written" '[ -s "$png" ]'
# A PNG of 1280 x 5100 (the whole page, down to the poles across model
# orders and the details): signature, then the IHDR width and height.
sig=$(od -A n -t x1 -N 8 "$png" 2>/dev/null | tr -d ' \n')
check "screenshot is a PNG" '[ "$sig" = "89504e470d0a1a0a" ]'
dims=$(od -A n -t u1 -j 16 -N 8 "$png" 2>/dev/null |
    awk '{ print $1 * 16777216 + $2 * 65536 + $3 * 256 + $4 "x" $5 * 16777216 + $6 * 65536 + $7 * 256 + $8 }')
check "screenshot is 1280x5100 (got $dims)" '[ "$dims" = "1280x5100" ]'
# A blank page compresses to a few kilobytes; the figures make it large.
psize=$(wc -c <"$png")
check "screenshot is not blank ($psize bytes)" '[ "$psize" -gt 100000 ]'
check "no console messages while rendering" '! grep -q ":CONSOLE" "$tmp/shot.log"'

# 5. The track page: the fan-warmup demo, whose margin shrinks
# (datasets/README.md), cut into 8 windows of 300 s.
track_html=$tmp/track.html
track_dom=$tmp/track_dom.html
"$bin" track datasets/fan_warmup.csv --window 300 --boot 200 --html "$track_html" --quiet \
    >"$tmp/track.out" 2>"$tmp/track.err"
status=$?
check "eigenlog track --html exits 0 (got $status)" '[ "$status" -eq 0 ]'
sed 's/^/    stderr: /' "$tmp/track.err"
check "track report written" '[ -s "$track_html" ]'
"$bin" track datasets/fan_warmup.csv --window 300 --boot 200 --html "$tmp/track2.html" --quiet \
    >/dev/null 2>&1
check "track report: same bytes on a second run" 'cmp -s "$track_html" "$tmp/track2.html"'
check "no script in the track report" '! grep -q "<script" "$track_html"'
check "no reference outside the track report" \
    '! grep -q -E "(src|href)=|url\\((http|file|//)|https?:" "$track_html"'
load_dom track "track page"
for id in fig-margin fig-damping fig-windows; do
    check "track figure $id in the DOM" 'figure_text "$id" "$track_dom" | grep -q .'
done
n=$(figure_text fig-margin "$track_dom" | grep -o '<g class="window"' | wc -l)
check "fig-margin has 8 window groups (got $n)" '[ "$n" -eq 8 ]'
n=$(figure_text fig-margin "$track_dom" | grep -o 'class="window-failed"' | wc -l)
check "no failed window marked (got $n)" '[ "$n" -eq 0 ]'
for cls in trend trend-bound extrapolation zero-interval boundary; do
    check "fig-margin draws class $cls" 'figure_text fig-margin "$track_dom" | grep -q "class=\"$cls\""'
done
check "track verdict: shrinking margin" 'grep -q "SHRINKING MARGIN" "$track_dom"'
check "no non-finite number in the track page" \
    '! grep -q -i -w -E "nan|inf|infinity" "$track_dom"'
if [ "${EL_SAVE_SCREENSHOT:-0}" = 1 ]; then
    track_png=$(pwd)/docs/track.png
else
    track_png=$tmp/track.png
fi
rm -f "$track_png"
run_browser --screenshot="$track_png" --window-size=1280,2600 --hide-scrollbars \
    "file://$(cd "$tmp" && pwd)/track.html" >"$tmp/track_shot.out" 2>"$tmp/track_shot.log"
sig=$(od -A n -t x1 -N 8 "$track_png" 2>/dev/null | tr -d ' \n')
check "track screenshot is a PNG" '[ "$sig" = "89504e470d0a1a0a" ]'
# Blank, the page compresses to a few kilobytes; the figures make it large.
psize=$(wc -c <"$track_png" 2>/dev/null || echo 0)
check "track screenshot is not blank ($psize bytes)" '[ "$psize" -gt 100000 ]'
check "no console messages while rendering the track page" \
    '! grep -q ":CONSOLE" "$tmp/track_shot.log"'


# 6. The spectrum page: the rig-test demo (4 channels, peaks near 0.80 and
# 2.40 Hz: datasets/README.md), PSD per channel with banded peaks.
sp_html=$tmp/spectrum.html
sp_dom=$tmp/spectrum_dom.html
"$bin" spectrum datasets/rig_test.csv --html "$sp_html" --quiet >"$tmp/sp.out" 2>"$tmp/sp.err"
status=$?
check "eigenlog spectrum --html exits 0 (got $status)" '[ "$status" -eq 0 ]'
check "spectrum page written" '[ -s "$sp_html" ]'
"$bin" spectrum datasets/rig_test.csv --html "$tmp/spectrum2.html" --quiet >/dev/null 2>&1
check "spectrum page: same bytes on a second run" 'cmp -s "$sp_html" "$tmp/spectrum2.html"'
check "no script in the spectrum page" '! grep -q "<script" "$sp_html"'
check "no reference outside the spectrum page" \
    '! grep -q -E "(src|href)=|url\\((http|file|//)|https?:" "$sp_html"'
load_dom spectrum "spectrum page"
for k in 1 2 3 4; do
    check "spectrum figure fig-psd-$k in the DOM with a PSD line" \
        'figure_text "fig-psd-$k" "$sp_dom" | grep -q "class=\"line psd\""'
    n=$(figure_text "fig-psd-$k" "$sp_dom" | grep -o 'class="peak-band"' | wc -l)
    check "fig-psd-$k shades the half-power bands of its 2 peaks (got $n)" '[ "$n" -eq 2 ]'
    check "peak table peaks-$k in the DOM" 'figure_text "peaks-$k" "$sp_dom" | grep -q "<td"'
done
check "spectrum page carries the caution" 'grep -q "class=\"caution" "$sp_dom"'
check "no non-finite number in the spectrum page" \
    '! grep -q -i -w -E "nan|inf|infinity" "$sp_dom"'
if [ "${EL_SAVE_SCREENSHOT:-0}" = 1 ]; then
    sp_png=$(pwd)/docs/spectrum.png
else
    sp_png=$tmp/spectrum.png
fi
rm -f "$sp_png"
run_browser --screenshot="$sp_png" --window-size=1280,2200 --hide-scrollbars \
    "file://$(cd "$tmp" && pwd)/spectrum.html" >"$tmp/sp_shot.out" 2>"$tmp/sp_shot.log"
sig=$(od -A n -t x1 -N 8 "$sp_png" 2>/dev/null | tr -d ' \n')
check "spectrum screenshot is a PNG" '[ "$sig" = "89504e470d0a1a0a" ]'
psize=$(wc -c <"$sp_png" 2>/dev/null || echo 0)
check "spectrum screenshot is not blank ($psize bytes)" '[ "$psize" -gt 100000 ]'
check "no console messages while rendering the spectrum page" \
    '! grep -q ":CONSOLE" "$tmp/sp_shot.log"'

finish
