/* el_number: the plain decimal numbers of a log's cells, read exactly
 * (the correctly rounded double, as strtod gives) without locale. */
#include "el_number.h"

#include <errno.h>
#include <float.h>
#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "el_text.h"

/* Numbers up to this many characters are copied to the stack for strtod;
 * longer ones (rare: 17 significant digits need 25) to the heap. */
#define NUMTEXT_STACK 96

static int is_digit(char c)
{
    return c >= '0' && c <= '9';
}

int el_number_is_missing(const char *s, size_t n)
{
    return n == 0 || el_text_equals_nocase(s, n, "na") || el_text_equals_nocase(s, n, "nan");
}

/* Hands the text to strtod (after the syntax check made that safe): a
 * NUL-terminated copy with a decimal comma made a point. */
static int parse_strtod(const char *s, size_t n, char point, double *out)
{
    char local[NUMTEXT_STACK];
    char *text = n < sizeof local ? local : malloc(n + 1);
    if (text == NULL)
        return EL_NUM_RANGE;
    memcpy(text, s, n);
    text[n] = '\0';
    if (point == ',')
        *strchr(text, ',') = '.';
    errno = 0;
    char *end;
    double v = strtod(text, &end);
    int ok = end == text + n && isfinite(v);
    if (text != local)
        free(text);
    if (!ok)
        return EL_NUM_RANGE;
    /* Underflow (ERANGE with a tiny result) keeps the nearest value, 0 or
     * subnormal: a reading that small is zero for every later stage. */
    *out = v;
    return EL_NUM_OK;
}

/* Parses a plain decimal [+-]digits[.digits][(e|E)[+-]digits] spanning all
 * of s[0..n). Hex, inf, nan and anything else are syntax errors: strtod
 * alone would accept them. Clinger's fast path gives the correctly rounded
 * result without strtod when the significand fits in 53 bits and the
 * power of ten is exact (|e| <= 22): one IEEE operation on exact operands.
 * Otherwise strtod (which the syntax check has made safe) does the work;
 * it assumes the C locale's decimal point, the library never changes it. */
int el_number_parse(const char *s, size_t n, char *decimal, char delim, double *out)
{
    static const double pow10[] = {1e0,  1e1,  1e2,  1e3,  1e4,  1e5,  1e6,  1e7,
                                   1e8,  1e9,  1e10, 1e11, 1e12, 1e13, 1e14, 1e15,
                                   1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22};
    size_t i = 0;
    int negative = 0;
    if (i < n && (s[i] == '+' || s[i] == '-'))
        negative = s[i++] == '-';
    /* Digits accumulate without checks (uint64 wraps, which is defined);
     * the count of significant digits below says whether mant is exact. */
    uint64_t mant = 0;
    size_t first = i;
    for (; i < n && is_digit(s[i]); i++)
        mant = mant * 10 + (uint64_t)(s[i] - '0');
    size_t digits = i - first;
    long exp10 = 0;
    char point = 0;
    if (i < n && (s[i] == *decimal ||
                  (*decimal == 0 &&
                   (s[i] == '.' || (s[i] == ',' && delim != ',' && delim != 0))))) {
        point = s[i];
        size_t frac = ++i;
        for (; i < n && is_digit(s[i]); i++)
            mant = mant * 10 + (uint64_t)(s[i] - '0');
        digits += i - frac;
        exp10 = -(long)(i - frac);
    }
    if (digits == 0)
        return EL_NUM_SYNTAX;
    int exact = 1;
    if (digits > 19) {
        size_t zeros = 0;
        for (size_t k = first; k < i && (s[k] == '0' || s[k] == '.'); k++)
            zeros += s[k] == '0';
        exact = digits - zeros <= 19;
    }
    if (i < n && (s[i] == 'e' || s[i] == 'E')) {
        i++;
        int eneg = 0;
        if (i < n && (s[i] == '+' || s[i] == '-'))
            eneg = s[i++] == '-';
        if (i == n || !is_digit(s[i]))
            return EL_NUM_SYNTAX;
        long e = 0;
        for (; i < n && is_digit(s[i]); i++)
            if (e < 100000)
                e = e * 10 + (s[i] - '0');
        exp10 += eneg ? -e : e;
    }
    if (i != n)
        return EL_NUM_SYNTAX;
    if (point != 0 && *decimal == 0)
        *decimal = point;
#if FLT_EVAL_METHOD == 0
    if (mant == 0) {
        *out = negative ? -0.0 : 0.0;
        return EL_NUM_OK;
    }
    if (exact && mant <= ((uint64_t)1 << 53) && exp10 >= -22 && exp10 <= 22) {
        double v = (double)mant;
        v = exp10 < 0 ? v / pow10[-exp10] : v * pow10[exp10];
        *out = negative ? -v : v;
        return EL_NUM_OK;
    }
#else
    (void)exact;
    (void)pow10;
#endif
    return parse_strtod(s, n, point, out);
}

/* Says why a cell that is not a plain decimal was refused. */
const char *el_number_hint(const char *s, size_t n, char delim, char decimal, int range)
{
    if (range)
        return "the value is beyond the range of a double (about 1.8e308); "
               "check the cell, or write NA for a missing value";
    size_t i = (n > 0 && (s[0] == '+' || s[0] == '-')) ? 1 : 0;
    const char *rest = s + i;
    size_t rest_n = n - i;
    if (el_text_equals_nocase(rest, rest_n, "inf") ||
        el_text_equals_nocase(rest, rest_n, "infinity"))
        return "infinite values are not allowed; write NA for a missing or invalid "
               "reading";
    if (n - i >= 2 && s[i] == '0' && el_text_lower(s[i + 1]) == 'x')
        return "hexadecimal numbers are not accepted; write the value in decimal";
    if (el_text_equals_nocase(rest, rest_n, "nan") ||
        (rest_n > 3 && el_text_equals_nocase(rest, 4, "nan(")))
        return "write NA (or NaN, without sign or payload) for a missing value";
    if (decimal == ',' && memchr(s, '.', n) != NULL)
        return "this log's numbers use a decimal comma (found in an earlier cell): write "
               "1,5, not 1.5, or give --decimal . if the point is right";
    if (delim != ',' && memchr(s, ',', n) != NULL)
        return "an earlier cell used a decimal point: write every number alike, or give "
               "--decimal , for a decimal comma";
    if (delim == ',' && memchr(s, ',', n) != NULL)
        return "with commas between cells a decimal comma needs the cell in quotes "
               "(\"1,5\") and --decimal ,";
    if (i < n && (is_digit(s[i]) || s[i] == '.'))
        return "remove the text after the number (units belong in the header as "
               "\"name [unit]\"), or write NA for a missing value";
    return "use NA for a missing value; any other cell must be a decimal number "
           "such as 1.5 or -2e-3";
}
