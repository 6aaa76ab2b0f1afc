#!/bin/sh
# Shows: a test-rig gate. Assess each log, stop on an unstable verdict via
# --fail-on and the exit status (0 go, 5 verdict matched, 1-4 an error).
#
# Usage: sh examples/rig_gate.sh LOG.csv...   (default: the two demo logs)
# Set EIGENLOG to the program (default: eigenlog on PATH). Exits 0 when every
# log may proceed, 5 when a log must stop, the program's status on an error.
# A gate like this only automates the first look: an unstable verdict means
# follow your site's procedures and tell the responsible engineer.
set -u
eigenlog=${EIGENLOG:-eigenlog}
[ $# -gt 0 ] || set -- datasets/booster_pump.csv datasets/rig_test.csv
worst=0
for log in "$@"; do
    # --boot 300: bounds good enough for a gate, and quick; --quiet: only the
    # exit status and the JSON matter here.
    "$eigenlog" assess "$log" --boot 300 --fail-on unstable --quiet
    status=$?
    case $status in
        0) echo "GO    $log: not unstable" ;;
        5) echo "STOP  $log: unstable verdict"; [ "$worst" -eq 0 ] && worst=5 ;;
        *) echo "ERROR $log: eigenlog exited $status (1 usage, 2 data, 3 numerical, 4 I/O)"
           worst=$status ;;
    esac
done
exit "$worst"
