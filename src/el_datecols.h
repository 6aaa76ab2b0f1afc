/* el_datecols: a date and a time of day written in two columns
 * ("14.03.2026;08:00:00,250", "2026-03-14,08:00:00"), as spreadsheet and
 * many logger exports write them: telling such a pair from other cells,
 * and joining it into the one date-time the reader parses; and times of
 * day written without any date ("08:30:00.250"), read on one running
 * clock that counts the midnights it crosses. */
#ifndef EL_DATECOLS_H
#define EL_DATECOLS_H

#include <stddef.h>

/* 1 when s[0..n) is a date and nothing else: YYYY-MM-DD or YYYY/MM/DD
 * (digits at the places of that pattern), or a date with the year last
 * (D.M.YYYY, D/M/YYYY, D-M-YYYY: el_local_looks) ending at its year. No
 * range check: the joined date-time's parser does that. */
int el_datecols_is_date(const char *s, size_t n);

/* 1 when s[0..n) starts like a time of day: one or two digits, ':', two
 * digits, and then only characters a clock time may hold (digits, ':',
 * '.', ',', a blank, AM/PM, Z, + or - of a zone). */
int el_datecols_is_clock(const char *s, size_t n);

/* A time of day written alone: H:MM, H:MM:SS or H:MM:SS.fff (a decimal
 * comma too), hours 0-23, or 1-12 followed by a blank and AM or PM
 * (12-hour clock: 12 AM is midnight). Sets *whole_s (whole seconds after
 * midnight) and *frac_s (the fraction, [0, 1): kept apart so that times
 * taken from the first row's whole second are as exact as ISO times) and
 * returns NULL, or returns what is wrong (a zone, a field out of range,
 * anything else) with both unchanged. Pure. */
const char *el_datecols_clock_seconds(const char *s, size_t n, long *whole_s, double *frac_s);

/* Times of day read in row order (zero-initialised before the first). */
typedef struct {
    long origin_s;      /* the first row's whole seconds after midnight */
    long day_s;         /* seconds of the midnights crossed */
    long last_s;        /* the previous row's whole seconds, days included */
    size_t midnights;   /* midnights crossed */
    int started;        /* 1 after the first row */
} el_clock_run;

/* The time of a row whose time of day is whole_s + frac_s
 * (el_datecols_clock_seconds) in seconds after the first row's whole
 * second (run->origin_s, set by the first row), advancing run. A clock
 * that goes back by more than 12 hours crossed midnight; a smaller step
 * back is returned as it is, for the time base to refuse as time going
 * back. A pause of a day or more cannot be seen in times of day. */
double el_clock_run_next(el_clock_run *run, long whole_s, double frac_s);

/* The whole days (in seconds) to add to a part of times of day read on its
 * own, whose first time is first_s after its own first midnight, so that
 * it follows a part whose last time is last_s after that part's first
 * midnight, by the rule of el_clock_run_next: joined files, a followed
 * log's new rows. Pure. */
double el_clock_shift(double last_s, double first_s);

/* Writes date[0..n_date), a blank and clock[0..n_clock) into buf (size
 * bytes) and returns the length written; 0 when it does not fit (buf is
 * then unchanged). */
size_t el_datecols_join(const char *date, size_t n_date, const char *clock, size_t n_clock,
                        char *buf, size_t size);

/* The time text of one row of such a log: date[0..n_date) and
 * clock[0..n_clock) (trimmed cells) joined into buf (size bytes), its
 * length in *n. Returns NULL, or what is wrong with a hint in *hint and
 * *at_clock 1 when the time-of-day cell is at fault (0: the date's). */
const char *el_datecols_row_time(const char *date, size_t n_date, const char *clock,
                                 size_t n_clock, char *buf, size_t size, size_t *n,
                                 int *at_clock, const char **hint);

/* "date_name + clock_name", the name reports give the joined time
 * (malloc'd: the caller frees it); NULL when out of memory. */
char *el_datecols_name(const char *date_name, const char *clock_name);

#endif
