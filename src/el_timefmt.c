/* el_timefmt: ISO 8601 date-times (parse and format, pure integer calendar
 * arithmetic, no timegm or locale) and the units of time a log may use. */
#include "el_timefmt.h"

#include <stdio.h>
#include <string.h>

#include "el_text.h"

static int is_digit(char c)
{
    return c >= '0' && c <= '9';
}

/* Days since 1970-01-01 of a proleptic Gregorian date (the days-from-civil
 * algorithm of H. Hinnant, "chrono-Compatible Low-Level Date Algorithms"):
 * pure integer arithmetic, valid for any year, no timegm or locale. */
static int64_t days_from_civil(int64_t y, int m, int d)
{
    y -= m <= 2;
    int64_t era = (y >= 0 ? y : y - 399) / 400;
    int64_t yoe = y - era * 400;
    int64_t doy = (153 * (m + (m > 2 ? -3 : 9)) + 2) / 5 + d - 1;
    int64_t doe = yoe * 365 + yoe / 4 - yoe / 100 + doy;
    return era * 146097 + doe - 719468;
}

/* Inverse of days_from_civil (same source). */
static void civil_from_days(int64_t z, int64_t *y, int *m, int *d)
{
    z += 719468;
    int64_t era = (z >= 0 ? z : z - 146096) / 146097;
    int64_t doe = z - era * 146097;
    int64_t yoe = (doe - doe / 1460 + doe / 36524 - doe / 146096) / 365;
    int64_t doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    int64_t mp = (5 * doy + 2) / 153;
    *d = (int)(doy - (153 * mp + 2) / 5 + 1);
    *m = (int)(mp < 10 ? mp + 3 : mp - 9);
    *y = era * 400 + yoe + (*m <= 2);
}

static int days_in_month(int64_t y, int m)
{
    static const int days[] = {31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31};
    int leap = (y % 4 == 0 && y % 100 != 0) || y % 400 == 0;
    return m == 2 && leap ? 29 : days[m - 1];
}

/* Reads count digits at s[*i]; 0 when they are not there. */
static int read_digits(const char *s, size_t n, size_t *i, int count, int *value)
{
    int v = 0;
    for (int k = 0; k < count; k++, (*i)++) {
        if (*i >= n || !is_digit(s[*i]))
            return 0;
        v = v * 10 + (s[*i] - '0');
    }
    *value = v;
    return 1;
}

/* A cell that starts like a date (YYYY-M, or YYYY/M as some loggers
 * write it) is taken for a date-time, so that its errors speak of dates
 * rather than of numbers. Not YYYY.M: that is a number (decimal years). */
int el_iso_looks(const char *s, size_t n)
{
    return n >= 6 && is_digit(s[0]) && is_digit(s[1]) && is_digit(s[2]) &&
           is_digit(s[3]) && (s[4] == '-' || s[4] == '/') && is_digit(s[5]);
}

/* Reads ":SS[.fraction]" at s[*i] when there (else second 0, fraction 0):
 * NULL, or what is wrong (shape when the digits are missing). ISO 8601
 * allows a comma before the fraction too. Up to 18 digits count (exact in
 * uint64; 1e18 is exact in a double). */
static const char *read_seconds(const char *s, size_t n, size_t *i, int *second,
                                double *frac_s, const char *shape)
{
    *second = 0;
    *frac_s = 0.0;
    if (*i >= n || s[*i] != ':')
        return NULL;
    (*i)++;
    if (!read_digits(s, n, i, 2, second))
        return shape;
    if (*second > 60)
        return "second out of range 0-60";
    if (*i < n && (s[*i] == '.' || s[*i] == ',')) {
        size_t f = ++*i;
        uint64_t num = 0;
        double scale = 1.0;
        for (; *i < n && is_digit(s[*i]); (*i)++)
            if (*i - f < 18) {
                num = num * 10 + (uint64_t)(s[*i] - '0');
                scale *= 10.0;
            }
        if (*i == f)
            return "expected digits after the decimal point of the seconds";
        *frac_s = (double)num / scale;
    }
    return NULL;
}

static const char *parse_zone(const char *s, size_t n, size_t *i, el_iso_time *out)
{
    if (*i == n)
        return NULL;
    if (s[*i] == 'Z' || s[*i] == 'z') {
        (*i)++;
        out->has_zone = 1;
        return NULL;
    }
    if (s[*i] != '+' && s[*i] != '-')
        return "unexpected text after the seconds";
    int sign = s[(*i)++] == '-' ? -1 : 1, hh, mm;
    if (!read_digits(s, n, i, 2, &hh))
        return "zone offset must be +HH:MM, -HH:MM or +HHMM";
    if (*i < n && s[*i] == ':')
        (*i)++;
    if (!read_digits(s, n, i, 2, &mm))
        return "zone offset must be +HH:MM, -HH:MM or +HHMM";
    if (hh > 23 || mm > 59)
        return "zone offset out of range (hours 0-23, minutes 0-59)";
    out->zone_minutes = sign * (hh * 60 + mm);
    out->has_zone = 1;
    return NULL;
}

/* Parses YYYY-MM-DD(T| )HH:MM[:SS[.fraction]][Z|+HH:MM|-HH:MM|+HHMM] over
 * all of s[0..n). Returns NULL or what is wrong. A time without zone is
 * taken as UTC: the file's clock is used as written, with no local-time
 * rules (which would make the result depend on the machine). Second 60 (a
 * leap second) is accepted and, as in Unix time, lands on the next
 * minute's second 0. */
const char *el_iso_parse(const char *s, size_t n, el_iso_time *out)
{
    const char *const shape = "expected a date-time like 2026-03-14T08:00:00.250+01:00";
    size_t i = 0;
    int year, month, day, hour, minute, second = 0;
    /* The date's separator: '-' (ISO 8601) or '/' (2026/03/14, as some
     * loggers write it), the same twice. */
    char dsep = n > 4 ? s[4] : '-';
    if (dsep != '/')
        dsep = '-';
    if (!read_digits(s, n, &i, 4, &year) || i >= n || s[i++] != dsep ||
        !read_digits(s, n, &i, 2, &month) || i >= n || s[i++] != dsep ||
        !read_digits(s, n, &i, 2, &day) || i >= n)
        return shape;
    char sep = s[i++];
    if ((sep != 'T' && sep != 't' && sep != ' ') || !read_digits(s, n, &i, 2, &hour) ||
        i >= n || s[i++] != ':' || !read_digits(s, n, &i, 2, &minute))
        return shape;
    if (month < 1 || month > 12)
        return "month out of range 1-12";
    if (day < 1 || day > days_in_month(year, month))
        return "day does not exist in that month";
    if (hour > 23)
        return "hour out of range 0-23";
    if (minute > 59)
        return "minute out of range 0-59";
    out->zone_minutes = 0;
    out->has_zone = 0;
    const char *why_s = read_seconds(s, n, &i, &second, &out->frac_s, shape);
    if (why_s != NULL)
        return why_s;
    const char *why = parse_zone(s, n, &i, out);
    if (why != NULL)
        return why;
    if (i != n)
        return shape;
    out->unix_s = days_from_civil(year, month, day) * 86400 + hour * 3600 +
                  minute * 60 + second - (int64_t)out->zone_minutes * 60;
    return NULL;
}

/* Reads "YYYY-MM-DD" alone as midnight, so --from 2026-03-14 works. */
const char *el_iso_parse_or_date(const char *s, size_t n, el_iso_time *out)
{
    if (n == 10) {
        char full[20];
        memcpy(full, s, 10);
        memcpy(full + 10, "T00:00:00", 9);
        return el_iso_parse(full, 19, out);
    }
    return el_iso_parse(s, n, out);
}

/* ------------------------------------------------------------------ */
/* Dates with the day and month first (05.12.2026, 12/05/2026)        */

/* Reads one or two digits at s[*i]; 0 when there are none. */
static int read_1_2(const char *s, size_t n, size_t *i, int *value)
{
    if (*i >= n || !is_digit(s[*i]))
        return 0;
    int v = s[(*i)++] - '0';
    if (*i < n && is_digit(s[*i]))
        v = v * 10 + (s[(*i)++] - '0');
    *value = v;
    return 1;
}

/* The two leading fields and the separator of D{./-}M{same}YYYY; 0 when
 * s does not start so. */
static int local_fields(const char *s, size_t n, int *a, int *b, char *sep, size_t *i)
{
    int year;
    *i = 0;
    if (!read_1_2(s, n, i, a) || *i >= n)
        return 0;
    *sep = s[(*i)++];
    if ((*sep != '.' && *sep != '/' && *sep != '-') || !read_1_2(s, n, i, b) || *i >= n
        || s[(*i)++] != *sep || !read_digits(s, n, i, 4, &year))
        return 0;
    return *i == n || !is_digit(s[*i]);
}

int el_local_looks(const char *s, size_t n)
{
    int a, b;
    char sep;
    size_t i;
    return local_fields(s, n, &a, &b, &sep, &i);
}

int el_local_order(const char *s, size_t n)
{
    int a, b;
    char sep;
    size_t i;
    if (!local_fields(s, n, &a, &b, &sep, &i))
        return 0;
    if (sep == '.' || a > 12)
        return EL_DATE_DMY;
    return b > 12 ? EL_DATE_MDY : 0;
}

/* " AM"/" PM" (any case, the blank optional) at s[*i]: 1 AM, 2 PM, 0 none. */
static int read_meridiem(const char *s, size_t n, size_t *i)
{
    size_t k = *i;
    if (k < n && s[k] == ' ')
        k++;
    if (k + 2 > n || (s[k + 1] != 'M' && s[k + 1] != 'm'))
        return 0;
    int which = s[k] == 'A' || s[k] == 'a' ? 1 : s[k] == 'P' || s[k] == 'p' ? 2 : 0;
    if (which != 0)
        *i = k + 2;
    return which;
}

const char *el_local_parse(const char *s, size_t n, int order, el_iso_time *out)
{
    const char *const shape = "expected a date-time like 05.12.2026 08:30:00 or "
                              "12/05/2026 8:30:00 AM";
    int a, b, year, hour, minute, second = 0;
    char sep;
    size_t i;
    if (!local_fields(s, n, &a, &b, &sep, &i))
        return shape;
    year = 0;
    for (size_t k = i - 4; k < i; k++)
        year = year * 10 + (s[k] - '0');
    int day = order == EL_DATE_MDY ? b : a, month = order == EL_DATE_MDY ? a : b;
    if (i < n && s[i] == ',')
        i++;
    if (i >= n || (s[i] != ' ' && s[i] != 'T' && s[i] != 't'))
        return shape;
    if (s[i] == 'T' || s[i] == 't')
        i++;
    else
        while (i < n && s[i] == ' ')
            i++;
    if (!read_1_2(s, n, &i, &hour) || i >= n || s[i++] != ':'
        || !read_digits(s, n, &i, 2, &minute))
        return shape;
    if (month < 1 || month > 12)
        return order == EL_DATE_MDY ? "month (the first field) out of range 1-12"
                                    : "month (the second field) out of range 1-12";
    if (day < 1 || day > days_in_month(year, month))
        return "day does not exist in that month";
    out->zone_minutes = 0;
    out->has_zone = 0;
    const char *why_s = read_seconds(s, n, &i, &second, &out->frac_s, shape);
    if (why_s != NULL)
        return why_s;
    int half = read_meridiem(s, n, &i);
    if (half != 0) {
        if (hour < 1 || hour > 12)
            return "hour out of range 1-12 before AM or PM";
        hour = hour % 12 + (half == 2 ? 12 : 0);
    } else if (hour > 23) {
        return "hour out of range 0-23";
    }
    if (minute > 59)
        return "minute out of range 0-59";
    if (i != n)
        return shape;
    out->unix_s = days_from_civil(year, month, day) * 86400 + hour * 3600 + minute * 60 + second;
    return NULL;
}

const char *el_datetime_read(int local, char *date_order, const char *s, size_t n,
                             el_iso_time *out, const char **hint)
{
    const char *why;
    if (!local) {
        why = el_iso_parse(s, n, out);
        *hint = "write the time as YYYY-MM-DDTHH:MM:SS[.fff][Z|+HH:MM] with a real "
                "calendar date";
        return why;
    }
    if (*date_order == 0)
        *date_order = (char)el_local_order(s, n);
    if (*date_order == 0) {
        *hint = "give --date-order dmy (day first) or --date-order mdy (month first)";
        return "the date reads both as day/month and as month/day";
    }
    why = el_local_parse(s, n, *date_order, out);
    *hint = *date_order == EL_DATE_MDY
                ? "dates are read month first (MM/DD/YYYY HH:MM:SS, --date-order mdy)"
                : "dates are read day first (DD.MM.YYYY or DD/MM/YYYY HH:MM:SS, "
                  "--date-order dmy)";
    return why;
}

const char *el_local_parse_or_date(const char *s, size_t n, int order, el_iso_time *out)
{
    int own = el_local_order(s, n);
    if (own != 0)
        order = own;
    if (order == 0)
        return "the date reads both as day/month and as month/day";
    int a, b;
    char sep;
    size_t i;
    if (local_fields(s, n, &a, &b, &sep, &i) && i == n && n + 9 < 32) {
        char full[32];
        memcpy(full, s, n);
        memcpy(full + n, " 00:00:00", 9);
        return el_local_parse(full, n + 9, order, out);
    }
    return el_local_parse(s, n, order, out);
}

static int64_t floor_div(int64_t a, int64_t b)
{
    int64_t q = a / b;
    return (a % b != 0 && (a < 0) != (b < 0)) ? q - 1 : q;
}

void el_iso_format(int64_t local_ms, int zone_minutes, int zone_known, char *buf,
                   size_t size)
{
    int64_t days = floor_div(local_ms, 86400000);
    int64_t in_day = local_ms - days * 86400000;
    int64_t y;
    int m, d;
    civil_from_days(days, &y, &m, &d);
    int za = zone_minutes < 0 ? -zone_minutes : zone_minutes;
    int k = snprintf(buf, size, "%04lld-%02d-%02dT%02d:%02d:%02d.%03d", (long long)y, m, d,
                     (int)(in_day / 3600000), (int)(in_day / 60000 % 60),
                     (int)(in_day / 1000 % 60), (int)(in_day % 1000));
    /* No offset for a log without zone: it is not UTC, only unknown. */
    if (zone_known && k > 0 && (size_t)k < size)
        snprintf(buf + k, size - (size_t)k, "%c%02d:%02d", zone_minutes < 0 ? '-' : '+',
                 za / 60, za % 60);
}

/* ------------------------------------------------------------------ */
/* Units of time                                                      */

typedef struct {
    const char *spelling;
    const char *name;
    double scale_s;
} time_unit_word;

/* The Julian year (365.25 d = 31,557,600 s) is the year of astronomy (IAU
 * 1976) and the mean length of a calendar year to 3 in 10^5 (the
 * Gregorian mean is 365.2425 d): a monthly or yearly series in decimal
 * years is converted with it. */
static const time_unit_word TIME_UNITS[] = {
    {"s", "s", 1.0},           {"sec", "s", 1.0},          {"secs", "s", 1.0},
    {"second", "s", 1.0},      {"seconds", "s", 1.0},
    {"ms", "ms", 1e-3},        {"msec", "ms", 1e-3},       {"msecs", "ms", 1e-3},
    {"millisecond", "ms", 1e-3}, {"milliseconds", "ms", 1e-3},
    {"us", "us", 1e-6},        {"\xc2\xb5s", "us", 1e-6},  {"\xce\xbcs", "us", 1e-6},
    {"usec", "us", 1e-6},      {"usecs", "us", 1e-6},
    {"microsecond", "us", 1e-6}, {"microseconds", "us", 1e-6},
    {"ns", "ns", 1e-9},        {"nsec", "ns", 1e-9},
    {"nanosecond", "ns", 1e-9}, {"nanoseconds", "ns", 1e-9},
    {"min", "min", 60.0},      {"mins", "min", 60.0},      {"minute", "min", 60.0},
    {"minutes", "min", 60.0},
    {"h", "h", 3600.0},        {"hr", "h", 3600.0},        {"hrs", "h", 3600.0},
    {"hour", "h", 3600.0},     {"hours", "h", 3600.0},
    {"d", "d", 86400.0},       {"day", "d", 86400.0},      {"days", "d", 86400.0},
    {"y", "year", 31557600.0}, {"yr", "year", 31557600.0}, {"yrs", "year", 31557600.0},
    {"year", "year", 31557600.0}, {"years", "year", 31557600.0},
};

int el_time_unit_lookup(const char *s, size_t n, double *scale_s, const char **name)
{
    for (size_t i = 0; i < sizeof TIME_UNITS / sizeof TIME_UNITS[0]; i++)
        if (el_text_equals_nocase(s, n, TIME_UNITS[i].spelling)) {
            *scale_s = TIME_UNITS[i].scale_s;
            *name = TIME_UNITS[i].name;
            return 1;
        }
    return 0;
}

int el_time_unit_parse(const char *text, double *scale_s, const char **name)
{
    if (text == NULL)
        return 0;
    const char *s = text;
    size_t n = strlen(text);
    el_text_trim(&s, &n);
    return el_time_unit_lookup(s, n, scale_s, name);
}

/* The unit a numeric time column's name carries: "t (s)", "time/ms",
 * "time_s", or a name that is itself a unit ("hours", "year", "ms").
 * Returns 1 and how it was found ("header" for a written unit, "column
 * name" for a name that only suggests one), else 0. */
int el_time_unit_from_name(const char *name, double *scale_s, const char **unit,
                           const char **how)
{
    size_t n = strlen(name);
    if (n > 2 && name[n - 1] == ')') {
        const char *open = NULL;
        for (size_t i = n - 1; i-- > 1;)
            if (name[i] == '(') {
                open = name + i;
                break;
            }
        if (open != NULL) {
            const char *u = open + 1;
            size_t un = (size_t)(name + n - 1 - u);
            el_text_trim(&u, &un);
            if (el_time_unit_lookup(u, un, scale_s, unit)) {
                *how = "header";
                return 1;
            }
        }
    }
    const char *slash = strrchr(name, '/');
    if (slash != NULL && slash > name) {
        const char *u = slash + 1;
        size_t un = strlen(u);
        el_text_trim(&u, &un);
        if (el_time_unit_lookup(u, un, scale_s, unit)) {
            *how = "header";
            return 1;
        }
    }
    const char *under = strrchr(name, '_');
    if (under != NULL && under > name &&
        el_time_unit_lookup(under + 1, strlen(under + 1), scale_s, unit)) {
        *how = "column name";
        return 1;
    }
    if (el_time_unit_lookup(name, n, scale_s, unit)) {
        *how = "column name";
        return 1;
    }
    return 0;
}

