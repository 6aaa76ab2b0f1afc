/* el_datecols: a date and a time of day in two columns (el_datecols.h). */
#include "el_datecols.h"

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
