/* el_datecols: a date and a time of day in two columns (el_datecols.h). */
#include "el_datecols.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "el_timefmt.h"

static int digit(char c) { return c >= '0' && c <= '9'; }

/* YYYY-MM-DD or YYYY/MM/DD, exactly. */
static int year_first_date(const char *s, size_t n)
{
    static const char pattern[] = "dddd-dd-dd";
    if (n != sizeof pattern - 1 || (s[4] != '-' && s[4] != '/') || s[7] != s[4])
        return 0;
    for (size_t i = 0; i < n; i++)
        if (pattern[i] == 'd' && !digit(s[i]))
            return 0;
    return 1;
}

int el_datecols_is_date(const char *s, size_t n)
{
    if (year_first_date(s, n))
        return 1;
    /* D.M.YYYY and the like end at the year: four digits after the second
     * separator, nothing after them. */
    if (n < 8 || n > 10 || !el_local_looks(s, n))
        return 0;
    for (size_t i = n - 4; i < n; i++)
        if (!digit(s[i]))
            return 0;
    return !digit(s[n - 5]);
}

int el_datecols_is_clock(const char *s, size_t n)
{
    size_t i = 0;
    if (n < 4 || !digit(s[0]))
        return 0;
    i = digit(s[1]) ? 2 : 1;
    if (i + 3 > n || s[i] != ':' || !digit(s[i + 1]) || !digit(s[i + 2]))
        return 0;
    for (i += 3; i < n; i++)
        if (!digit(s[i]) && (s[i] == '\0' || strchr(":.,+- AaPpMmZ", s[i]) == NULL))
            return 0;
    return 1;
}

/* Reads the digits at s[*i..n) into *v (at most max_digits of them, at
 * least one); returns how many were read. */
static size_t read_digits(const char *s, size_t n, size_t *i, size_t max_digits, long *v)
{
    size_t k = 0;
    *v = 0;
    while (*i < n && k < max_digits && digit(s[*i])) {
        *v = *v * 10 + (s[*i] - '0');
        (*i)++;
        k++;
    }
    return k;
}

/* A trailing " AM" / " PM" (either case, blanks before it optional):
 * 1 AM, 2 PM, 0 none; *end is where the clock time proper ends. */
static int meridiem(const char *s, size_t n, size_t *end)
{
    *end = n;
    if (n < 2 || (s[n - 1] != 'M' && s[n - 1] != 'm'))
        return 0;
    char c = s[n - 2];
    int kind = c == 'A' || c == 'a' ? 1 : c == 'P' || c == 'p' ? 2 : 0;
    if (kind == 0)
        return 0;
    size_t e = n - 2;
    while (e > 0 && s[e - 1] == ' ')
        e--;
    *end = e;
    return kind;
}

const char *el_datecols_clock_seconds(const char *s, size_t n, long *whole_s, double *frac_s)
{
    size_t end, i = 0;
    int half = meridiem(s, n, &end);
    long h, m, sec = 0;
    if (read_digits(s, end, &i, 2, &h) == 0 || i >= end || s[i++] != ':' ||
        read_digits(s, end, &i, 2, &m) != 2)
        return "not a time of day like HH:MM:SS";
    if (i < end && s[i] == ':') {
        i++;
        if (read_digits(s, end, &i, 2, &sec) != 2)
            return "not a time of day like HH:MM:SS";
    }
    double frac = 0.0;
    if (i < end && (s[i] == '.' || s[i] == ',')) {
        if (++i >= end || !digit(s[i]))
            return "a decimal separator with no digits after it";
        /* One division, so 00:00:00.250 is 0.25 exactly; digits beyond
         * the ninth (below a nanosecond) are read but not counted. */
        long v = 0, scale = 1;
        for (; i < end && digit(s[i]); i++)
            if (scale < 1000000000L) {
                v = v * 10 + (s[i] - '0');
                scale *= 10;
            }
        frac = (double)v / (double)scale;
    }
    if (i != end)
        return s[i] == 'Z' || s[i] == '+' || s[i] == '-' ? "a zone on a time of day without a date"
                                                         : "not a time of day like HH:MM:SS";
    if (half != 0 && (h < 1 || h > 12))
        return "an hour outside 1-12 before AM or PM";
    if (h > 23 || m > 59 || sec > 59)
        return "an hour above 23, or minutes or seconds above 59";
    if (half != 0)
        h = h % 12 + (half == 2 ? 12 : 0);
    *whole_s = h * 3600 + m * 60 + sec;
    *frac_s = frac;
    return NULL;
}

double el_clock_run_next(el_clock_run *run, long whole_s, double frac_s)
{
    if (!run->started)
        run->origin_s = whole_s;
    else if (whole_s + run->day_s < run->last_s - 43200) {
        run->day_s += 86400;
        run->midnights++;
    }
    run->started = 1;
    run->last_s = whole_s + run->day_s;
    return (double)(run->last_s - run->origin_s) + frac_s;
}

double el_clock_shift(double last_s, double first_s)
{
    double shift = floor(last_s / 86400.0) * 86400.0;
    return first_s + shift < last_s - 43200.0 ? shift + 86400.0 : shift;
}

size_t el_datecols_join(const char *date, size_t n_date, const char *clock, size_t n_clock,
                        char *buf, size_t size)
{
    if (n_date + 1 + n_clock >= size)
        return 0;
    memcpy(buf, date, n_date);
    buf[n_date] = ' ';
    memcpy(buf + n_date + 1, clock, n_clock);
    buf[n_date + 1 + n_clock] = '\0';
    return n_date + 1 + n_clock;
}

const char *el_datecols_row_time(const char *date, size_t n_date, const char *clock,
                                 size_t n_clock, char *buf, size_t size, size_t *n,
                                 int *at_clock, const char **hint)
{
    *at_clock = 1;
    *hint = "the date and the time of day are in two columns: write every row's time of "
            "day like HH:MM:SS";
    if (!el_datecols_is_clock(clock, n_clock))
        return "not a time of day like the first row's";
    *n = el_datecols_join(date, n_date, clock, n_clock, buf, size);
    if (*n == 0)
        return "too long for a time of day";
    *at_clock = 0;
    *hint = "the date and the time of day are in two columns: write every row's date in "
            "the first row's form";
    return el_datecols_is_date(date, n_date) ? NULL : "not a date like the first row's";
}

char *el_datecols_name(const char *date_name, const char *clock_name)
{
    size_t len = strlen(date_name) + strlen(clock_name) + 4;
    char *both = malloc(len);
    if (both != NULL)
        snprintf(both, len, "%s + %s", date_name, clock_name);
    return both;
}
