#!/bin/sh
# Shows: `track` on a long log (the 40-minute fan warm-up demo): the margin
# of each 5-minute window, its trend, and the same as an HTML page.
#
# Usage: sh examples/track_long_log.sh [OUT_DIR]   (default: the current folder)
# Set EIGENLOG to the program (default: eigenlog on PATH). Writes
# OUT_DIR/fan_warmup.csv (the demo log), OUT_DIR/track.html, OUT_DIR/track.json.
set -eu
eigenlog=${EIGENLOG:-eigenlog}
out=${1:-.}
mkdir -p "$out"
"$eigenlog" demo fan-warmup -o "$out" >/dev/null
# --window 300: 5-minute windows (8 over the log); --boot 200 keeps it quick.
"$eigenlog" track "$out/fan_warmup.csv" --window 300 --boot 200 \
    --html "$out/track.html" --json "$out/track.json"
echo "open $out/track.html in a browser for the page"
