/* el_timefmt: ISO 8601 date-times as logs write them (parse, format) and
 * the units of time a log's time numbers may be written in. Pure text and
 * integer calendar arithmetic: no timegm, no locale, no time zone database. */
#ifndef EL_TIMEFMT_H
#define EL_TIMEFMT_H

#include <stddef.h>
#include <stdint.h>

/* One parsed date-time. */
typedef struct {
    int64_t unix_s;     /* whole seconds, zone applied (no zone: as if UTC) */
    double frac_s;      /* [0, 1) */
    int zone_minutes;   /* offset written in the text (0 when none) */
    int has_zone;       /* 1: Z or an offset was written */
} el_iso_time;

/* 1 when s[0..n) starts like a date (YYYY-M or YYYY/M), so that a cell is
 * taken for a date-time and its errors speak of dates rather than of
 * numbers. */
int el_iso_looks(const char *s, size_t n);

/* Parses YYYY-MM-DD(T| )HH:MM[:SS[.fraction]][Z|+HH:MM|-HH:MM|+HHMM]
 * (also YYYY/MM/DD for the date, as some loggers write it) spanning all
 * of s[0..n) (fraction: '.' or ',', up to 18 digits count)
 * into *out. Returns NULL on success, else a static text saying what is
 * wrong (*out then partly written). A time without zone is computed as if
 * UTC; second 60 (a leap second) lands on the next minute's second 0. */
const char *el_iso_parse(const char *s, size_t n, el_iso_time *out);

/* As el_iso_parse, and "YYYY-MM-DD" alone (n == 10) is that midnight. */
const char *el_iso_parse_or_date(const char *s, size_t n, el_iso_time *out);

/* Orders of a date whose day and month are numbers before the year. */
enum { EL_DATE_DMY = 'd', EL_DATE_MDY = 'm' };

/* 1 when s[0..n) starts like a date with the year last: one or two digits,
 * a separator ('.', '/' or '-'), one or two digits, the same separator,
 * four digits (05.12.2026, 12/5/2026, 5-12-2026). */
int el_local_looks(const char *s, size_t n);

/* The order such a date settles by itself: EL_DATE_DMY for a dot (the dot
 * form is written day first) or a first field above 12, EL_DATE_MDY for a
 * second field above 12; 0 when both fields could be the month. */
int el_local_order(const char *s, size_t n);

/* Parses D.M.YYYY, D/M/YYYY or D-M-YYYY (order EL_DATE_DMY; EL_DATE_MDY:
 * month first), then ',' optional, ' ' or 'T', H[H]:MM[:SS[.fraction]]
 * and an optional AM/PM (12-hour clock; hour 1-12), spanning all of
 * s[0..n), into *out (no zone: as if UTC, has_zone 0). Returns NULL on
 * success, else a static text saying what is wrong. */
const char *el_local_parse(const char *s, size_t n, int order, el_iso_time *out);

/* As el_local_parse for a time typed by a person (--from/--to): the
 * date's own order when it settles one (a dot, a field above 12), else
 * order (0: an error saying it reads both ways); a date alone is that
 * midnight. */
const char *el_local_parse_or_date(const char *s, size_t n, int order, el_iso_time *out);

/* Reads one cell s[0..n) of a date-time column: ISO 8601 (local 0,
 * el_iso_parse) or a date with the year last (local 1, el_local_parse in
 * *date_order; when *date_order is 0 the cell settles it if it can,
 * el_local_order, and *date_order is set: a log keeps the order its first
 * settling date gave). Returns NULL and fills *out, or a static text of
 * what is wrong with *hint (static) saying what to do, e.g. give
 * --date-order when the first date reads both ways. */
const char *el_datetime_read(int local, char *date_order, const char *s, size_t n,
                             el_iso_time *out, const char **hint);

/* Writes local_ms (milliseconds since 1970-01-01 on the local clock, that
 * is Unix time plus the zone offset) as "YYYY-MM-DDTHH:MM:SS.mmm" into
 * buf[0..size), followed by "+HH:MM"/"-HH:MM" of zone_minutes when
 * zone_known. Truncated to size, always NUL-terminated (size > 0). */
void el_iso_format(int64_t local_ms, int zone_minutes, int zone_known, char *buf,
                   size_t size);

/* Reads a unit of time: s, sec, second(s), ms, msec, millisecond(s), us,
 * \u00b5s, usec, microsecond(s), ns, min, minute(s), h, hr, hour(s), d, day(s),
 * y, yr, year(s) (Julian year, 365.25 d), any case. On success *scale_s is
 * seconds per unit and *name the canonical name ("s", "ms", "us", "ns",
 * "min", "h", "d", "year"; static) and returns 1; 0 when text is not a
 * unit of time (outputs untouched). NULL text: 0. */
int el_time_unit_parse(const char *text, double *scale_s, const char **name);

/* As el_time_unit_parse for s[0..n) taken exactly (no trimming). */
int el_time_unit_lookup(const char *s, size_t n, double *scale_s, const char **name);

/* The unit a numeric time column's name carries: "t (s)", "time/ms"
 * (*how = "header": a written unit), "time_s" or a name that is itself a
 * unit such as "hours" (*how = "column name"). Returns 1 and fills
 * *scale_s, *unit (canonical, static) and *how (static); 0 when the name
 * carries no unit (outputs untouched). name must not be NULL. */
int el_time_unit_from_name(const char *name, double *scale_s, const char **unit,
                           const char **how);

#endif
