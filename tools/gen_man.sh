#!/bin/sh
# gen_man.sh BINARY > eigenlog.1
# Writes the eigenlog(1) man page from the program's own --help texts (the
# main help, then every subcommand's, in the order the main help lists
# them), converted by tools/help2roff.awk, plus the caution that goes with
# every result. The page is made at build time, so it cannot drift from
# --help. Fails (status 1) when the program gives no help.
set -eu
# The help unwrapped, whatever terminal width the build runs in.
export COLUMNS=1000
bin=$1
here=$(dirname "$0")
tmp=$(mktemp)
trap 'rm -f "$tmp"' EXIT
{
    echo "@@ -"
    "$bin" --help
    subs=$("$bin" --help | awk '/^subcommands:/ { on = 1; next } /^$/ { on = 0 } on && /^  [^ ]/ { print $1 }')
    [ -n "$subs" ] || { echo "gen_man.sh: no subcommands in '$bin --help'" >&2; exit 1; }
    for s in $subs; do
        echo "@@ $s"
        "$bin" "$s" --help
    done
} >"$tmp"
awk -f "$here/help2roff.awk" "$tmp"
cat <<'ROFF'
.SH FILES
Input is a CSV file with a header row: a time column (seconds or ISO 8601)
and one column per channel; \fB\-\fR reads standard input.
Output files (\fB\-\-json\fR, \fB\-\-html\fR, \fB\-\-csv\fR, ...) are written
whole or not at all.
.SH CAUTION
Every result is a statistical, local, linear estimate from the logged
window: it describes small motions near the operating point seen in that
window. It is not a substitute for the equipment maker's limits, local
codes and licensed engineering judgement.
.SH SEE ALSO
The project's docs/cli.md (every option and JSON key), docs/method.md
(the mathematics and its sources) and datasets/README.md (the demo logs).
ROFF
