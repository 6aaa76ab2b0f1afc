/* el_datecols: a date and a time of day written in two columns
 * ("14.03.2026;08:00:00,250", "2026-03-14,08:00:00"), as spreadsheet and
 * many logger exports write them: telling such a pair from other cells,
 * and joining it into the one date-time the reader parses. */
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
