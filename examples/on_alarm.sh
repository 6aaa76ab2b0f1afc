#!/bin/sh
# Shows: the script `track --follow --on-alarm` runs once per alarm episode:
# it reads the facts from the EIGENLOG_* variables and appends one line to
# an alarm log (ALARM_LOG, default ./eigenlog_alarms.log); a site would
# send a message or raise a ticket here instead.
#
# Usage: track LOG --follow --window W --alarm shrinking --on-alarm "sh examples/on_alarm.sh"
# The alarm supports, never replaces, the machine's protection.
set -eu
log=${ALARM_LOG:-./eigenlog_alarms.log}
printf '%s ALARM %s on %s: window %s .. %s (#%s), margin %s [%s, %s] 1/%s, P(stable) %s, trend %s P(shrinking) %s. Check the machine; the alarm supports, never replaces, its protection.\n' \
    "$(date -u +%Y-%m-%dT%H:%M:%SZ)" "${EIGENLOG_ALARM:?not run by eigenlog}" \
    "${EIGENLOG_LOG:-?}" "${EIGENLOG_WINDOW_START:-?}" "${EIGENLOG_WINDOW_END:-?}" \
    "${EIGENLOG_WINDOW_INDEX:-?}" "${EIGENLOG_MARGIN:-?}" "${EIGENLOG_MARGIN_LO:-?}" \
    "${EIGENLOG_MARGIN_HI:-?}" "${EIGENLOG_TIME_UNIT:-s}" "${EIGENLOG_P_STABLE:-?}" \
    "${EIGENLOG_TREND:-n/a}" "${EIGENLOG_P_SHRINKING:-n/a}" >>"$log"
