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
    /* Only an exact mant: more than 19 digits can wrap it to 0 (2^64). */
    if (exact && mant == 0) {
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

/* ------------------------------------------------------------------ */
/* The fast scan of the fused row reader                              */

#if defined(__BYTE_ORDER__) && __BYTE_ORDER__ == __ORDER_LITTLE_ENDIAN__ && \
    (defined(__GNUC__) || defined(__clang__))
#define EL_SWAR 1
/* The digit loop runs once or twice per cell: inlined, the compiler keeps
 * mant and the digit count in registers across the whole number. */
#define HOT_INLINE __attribute__((always_inline)) inline
#else
#define EL_SWAR 0
#define HOT_INLINE inline
#endif

static const uint64_t POW10_U64[] = {1u,
                                     10u,
                                     100u,
                                     1000u,
                                     10000u,
                                     100000u,
                                     1000000u,
                                     10000000u,
                                     100000000u,
                                     1000000000u,
                                     10000000000u,
                                     100000000000u,
                                     1000000000000u,
                                     10000000000000u,
                                     100000000000000u,
                                     1000000000000000u};

#if EL_SWAR
/* SWAR ("SIMD within a register"): eight characters in one 64-bit word,
 * the first character in the lowest byte (little-endian load). */
static HOT_INLINE uint64_t load8(const char *p)
{
    uint64_t v;
    memcpy(&v, p, sizeof v);
    return v;
}

/* How many of the 8 bytes (from the lowest) are ASCII digits, 0..8. With
 * d = v ^ '0' in every byte, a digit byte is 0..9: d + 0x76 keeps its top
 * bit clear exactly then, and d's own top bit catches bytes >= 0x80. A
 * carry out of a byte only reaches bytes above the first non-digit, so
 * the lowest flagged byte is always right. */
static HOT_INLINE unsigned digit_run(uint64_t d)
{
    uint64_t m = (d | (d + 0x7676767676767676u)) & 0x8080808080808080u;
    return m != 0 ? (unsigned)__builtin_ctzll(m) >> 3 : 8u;
}

/* The value of the first k (1..8) digit bytes of d (digit values 0..9):
 * shifted up so they become the low digits of an 8-digit number with
 * leading zeros, then combined pairwise (10a + b), by pairs of pairs (100)
 * and by halves (10^4) in three multiplications, the usual word-parallel
 * decimal conversion. */
static HOT_INLINE uint64_t digits_value(uint64_t d, unsigned k)
{
    d <<= 8 * (8 - k);
    d = (d * (1 + (10u << 8))) >> 8;
    d = ((d & 0x00FF00FF00FF00FFu) * (1 + (100u << 16))) >> 16;
    return ((d & 0x0000FFFF0000FFFFu) * (1 + ((uint64_t)10000 << 32))) >> 32;
}
#endif

/* Reads the digits at p into *mant (wrapping, as the exact parser does)
 * and counts them in *digits; returns the first non-digit. lim: bytes
 * before it may be loaded eight at a time. */
static HOT_INLINE const char *scan_digits(const char *p, const char *lim, uint64_t *mant,
                                          size_t *digits)
{
#if EL_SWAR
    while (lim - p >= 8) {
        uint64_t d = load8(p) ^ 0x3030303030303030u;
        unsigned k = digit_run(d);
        if (k == 0)
            return p;
        *mant = *mant * POW10_U64[k] + digits_value(d, k);
        *digits += k;
        p += k;
        if (k < 8)
            return p;
    }
#else
    (void)lim;
#endif
    for (; is_digit(*p); p++, (*digits)++)
        *mant = *mant * 10 + (uint64_t)(*p - '0');
    return p;
}

#if EL_SWAR && FLT_EVAL_METHOD == 0
#define EL_SCAN16 1
/* How far ahead of a cell scan16 may load: its 16-byte window and, for
 * the digit runs, 8-byte loads starting inside it. */
#define SCAN16_READS 32

/* The value of the first k (0..8) digits at p (ASCII digits; the bytes
 * after them may be anything): digits_value, with k = 0 giving 0 (two
 * shifts of at most 32 bits each, so no shift by 64). */
static HOT_INLINE uint64_t lead_value(uint64_t d, unsigned k)
{
    unsigned half = 4 * (8 - k);
    d = (d << half) << half;
    d = (d * (1 + (10u << 8))) >> 8;
    d = ((d & 0x00FF00FF00FF00FFu) * (1 + (100u << 16))) >> 16;
    return ((d & 0x0000FFFF0000FFFFu) * (1 + ((uint64_t)10000 << 32))) >> 32;
}

static HOT_INLINE uint64_t lead_digits(const char *p, unsigned k)
{
    return lead_value(load8(p) ^ 0x3030303030303030u, k);
}

/* The value of the k (0..16) digits at p. */
static HOT_INLINE uint64_t run_value(const char *p, unsigned k)
{
    if (k <= 8)
        return lead_digits(p, k);
    return lead_digits(p, 8) * POW10_U64[k - 8] + lead_digits(p + 8, k - 8);
}

/* Index (0..15) of the lowest flagged byte of the 16-byte mask lo, hi;
 * 16 when none is. */
static HOT_INLINE unsigned first_flag(uint64_t lo, uint64_t hi)
{
    if (lo != 0)
        return (unsigned)__builtin_ctzll(lo) >> 3;
    return hi != 0 ? 8 + ((unsigned)__builtin_ctzll(hi) >> 3) : 16;
}

/* The common cell in one step: [+-]digits[sep digits] ending inside the
 * 16 bytes at s (the caller checked SCAN16_READS bytes may be loaded).
 * Where it ends comes from one mask of non-digit bytes over the whole
 * window (the first flagged byte, or the second when the first is the
 * separator), not from digit runs read one after another: the next cell
 * need not wait for this one's digits, and the cells of a row overlap in
 * the CPU. The stop byte is the same as the general scan's (a second
 * separator, like any other byte, ends the number). Returns the end, or
 * NULL when the cell needs the general scan (an exponent, no digit, no
 * end inside the window). The value is Clinger's (at most 15 digits: the
 * significand is below 2^53 and 10^frac exact): the same operands and
 * the same operation as el_number_parse, so the same double. */
static HOT_INLINE const char *scan16(const char *s, unsigned char dec, double *out,
                                     char *point_out)
{
    static const double pow10[] = {1e0, 1e1, 1e2,  1e3,  1e4,  1e5,  1e6, 1e7,
                                   1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15};
    const uint64_t zeros = 0x3030303030303030u, top = 0x8080808080808080u;
    uint64_t d0 = load8(s) ^ zeros, d1 = load8(s + 8) ^ zeros;
    unsigned sign = s[0] == '-' || s[0] == '+';
    /* Non-digit bytes; a sign is allowed in byte 0 only. */
    uint64_t nd0 = (d0 | (d0 + 0x7676767676767676u)) & top & ~(uint64_t)(sign << 7);
    uint64_t nd1 = (d1 | (d1 + 0x7676767676767676u)) & top;
    unsigned first = first_flag(nd0, nd1), end = first, nfrac = 0;
    if (first < 16 && (unsigned char)s[first] == dec) {
        if (nd0 != 0)
            nd0 &= nd0 - 1;
        else
            nd1 &= nd1 - 1;
        end = first_flag(nd0, nd1);
        nfrac = end - first - 1;
    }
    unsigned nint = first - sign;
    if (end >= 16 || nint + nfrac == 0 || (s[end] | 0x20) == 'e')
        return NULL;
    uint64_t mant;
    if (end - sign <= 8) {
        /* The whole cell in one word: the separator byte taken out, the
         * digits after it moved down one byte, one conversion. */
        uint64_t d = load8(s + sign) ^ zeros;
        if (end != first) {
            uint64_t below = ((uint64_t)1 << (8 * nint)) - 1; /* nint <= 7 */
            d = (d & below) | ((d >> 8) & ~below);
        }
        mant = lead_value(d, nint + nfrac);
    } else {
        mant = run_value(s + sign, nint) * POW10_U64[nfrac] + run_value(s + first + 1, nfrac);
    }
    double v = (double)mant / pow10[nfrac];
    *out = sign && s[0] == '-' ? -v : v;
    *point_out = end != first ? (char)dec : 0;
    return s + end;
}
#else
#define EL_SCAN16 0
#endif

/* The scan of any plain decimal, digit run by digit run. */
static const char *scan_general(const char *s, const char *lim, char decimal, char delim,
                                double *out, char *point_out)
{
    static const double pow10[] = {1e0,  1e1,  1e2,  1e3,  1e4,  1e5,  1e6,  1e7,
                                   1e8,  1e9,  1e10, 1e11, 1e12, 1e13, 1e14, 1e15,
                                   1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22};
    const char *p = s;
    int negative = 0;
    if (*p == '+' || *p == '-')
        negative = *p++ == '-';
    uint64_t mant = 0;
    size_t digits = 0;
    p = scan_digits(p, lim, &mant, &digits);
    long exp10 = 0;
    char point = 0;
    if (*p == decimal ||
        (decimal == 0 && (*p == '.' || (*p == ',' && delim != ',' && delim != 0)))) {
        point = *p++;
        const char *frac = p;
        p = scan_digits(p, lim, &mant, &digits);
        exp10 = -(long)(p - frac);
    }
    if (digits == 0)
        return NULL;
    if (*p == 'e' || *p == 'E') {
        const char *e = p + 1;
        int eneg = 0;
        if (*e == '+' || *e == '-')
            eneg = *e++ == '-';
        if (!is_digit(*e))
            return NULL;
        long x = 0;
        for (; is_digit(*e); e++)
            if (x < 100000)
                x = x * 10 + (*e - '0');
        exp10 += eneg ? -x : x;
        p = e;
    }
    *point_out = point;
#if FLT_EVAL_METHOD == 0
    /* The same Clinger fast path as el_number_parse, on the same operands:
     * up to 19 digits the mantissa is exact in uint64. */
    if (digits <= 19) {
        if (mant == 0) {
            *out = negative ? -0.0 : 0.0;
            return p;
        }
        if (mant <= ((uint64_t)1 << 53) && exp10 >= -22 && exp10 <= 22) {
            double v = (double)mant;
            v = exp10 < 0 ? v / pow10[-exp10] : v * pow10[exp10];
            *out = negative ? -v : v;
            return p;
        }
    }
#else
    (void)pow10;
#endif
    /* Everything else (long mantissas, large exponents, subnormals) is
     * el_number_parse's, which is exact: the same text, the same double. */
    char dec = decimal;
    return el_number_parse(s, (size_t)(p - s), &dec, delim, out) == EL_NUM_OK ? p : NULL;
}

/* scan16 where it applies, else the general scan. */
static HOT_INLINE const char *scan_cell(const char *s, const char *lim, char decimal, char delim,
                                        double *out, char *point_out)
{
#if EL_SCAN16
    if (decimal != 0 && lim - s >= SCAN16_READS) {
        const char *e = scan16(s, (unsigned char)decimal, out, point_out);
        if (e != NULL)
            return e;
    }
#endif
    return scan_general(s, lim, decimal, delim, out, point_out);
}

const char *el_number_scan(const char *s, const char *lim, char decimal, char delim,
                           double *out, char *point_out)
{
    return scan_cell(s, lim, decimal, delim, out, point_out);
}

/* el_number_scan_row's loop, inlined into both row readers. */
static HOT_INLINE const char *scan_row_cells(const char *p, const char *lim, size_t n,
                                             char delim, char *decimal, double *dst,
                                             size_t stride)
{
    char dec = *decimal;
    for (size_t c = 0; c < n; c++, dst += stride) {
        char point;
        const char *e = scan_cell(p, lim, dec, delim, dst, &point);
        if (e == NULL)
            return NULL;
        if (c + 1 < n) {
            if (*e != delim)
                return NULL;
        } else if (*e != '\n') {
            if (*e != '\r' || e[1] != '\n')
                return NULL;
            e++;
        }
        /* The first separator decides, cell by cell as the general reader
         * (el_ingest's parse_row) does. */
        if (point != 0 && dec == 0)
            dec = point;
        p = e + 1;
    }
    *decimal = dec;
    return p;
}

const char *el_number_scan_row(const char *p, const char *lim, size_t n, char delim,
                               char *decimal, double *dst, size_t stride)
{
    return scan_row_cells(p, lim, n, delim, decimal, dst, stride);
}

#if EL_SCAN16 && defined(__SSE2__)
#include <emmintrin.h>
#define EL_ROWMASK 1
/* The rows' structure is found 64 bytes at a time, one bit per byte:
 * separators (the delimiter or a line end), decimal separators, and
 * bytes that are neither a digit nor the decimal separator. */
#define MASK_BYTES 64
/* Bytes a window needs before lim: its own and the loads of a cell
 * starting inside it (scan16's 32; the lean parse reads 24). */
#define MASK_READS (MASK_BYTES + SCAN16_READS)

typedef struct {
    uint64_t sep, point, other, newline;
} row_masks;

static HOT_INLINE row_masks window_masks(const char *p, __m128i delim, __m128i newline,
                                         __m128i dec)
{
    const __m128i zero = _mm_set1_epi8('0'), nine = _mm_set1_epi8(9);
    row_masks w = {0, 0, 0, 0};
    for (unsigned i = 0; i < MASK_BYTES / 16; i++) {
        __m128i x = _mm_loadu_si128((const __m128i *)(const void *)(p + 16 * i));
        __m128i v = _mm_sub_epi8(x, zero);
        __m128i digit = _mm_cmpeq_epi8(_mm_min_epu8(v, nine), v);
        __m128i point = _mm_cmpeq_epi8(x, dec);
        __m128i nl = _mm_cmpeq_epi8(x, newline);
        __m128i sep = _mm_or_si128(_mm_cmpeq_epi8(x, delim), nl);
        unsigned shift = 16 * i;
        w.sep |= (uint64_t)(unsigned)_mm_movemask_epi8(sep) << shift;
        w.newline |= (uint64_t)(unsigned)_mm_movemask_epi8(nl) << shift;
        w.point |= (uint64_t)(unsigned)_mm_movemask_epi8(point) << shift;
        w.other |= (uint64_t)(unsigned)(~_mm_movemask_epi8(_mm_or_si128(digit, point)) & 0xFFFF)
                   << shift;
    }
    return w;
}

/* The common cell from the masks: s[0..len) (len >= 1) at bit a of the
 * window is [+-]digits[sep digits] with 1 to 15 digits. Then *out is
 * mant / 10^nfrac with both exact (mant < 10^15 < 2^53, 10^15 exact):
 * one correctly rounded division, the value el_number_parse gives.
 * Returns 0 (nothing stored) for any other cell. Loads 16 bytes from s
 * plus one 8-byte word inside them. */
static HOT_INLINE int lean_cell(const char *s, unsigned a, unsigned len, const row_masks *w,
                                double *out)
{
    static const double pow10[] = {1e0, 1e1, 1e2,  1e3,  1e4,  1e5,  1e6, 1e7,
                                   1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15};
    unsigned char c0 = (unsigned char)s[0];
    unsigned sign = c0 == '-' || c0 == '+';
    unsigned k = len - sign; /* digits and point */
    if (k - 1 >= 16)
        return 0;
    uint64_t in = ((uint64_t)1 << k) - 1;
    uint64_t other = (w->other >> (a + sign)) & in, point = (w->point >> (a + sign)) & in;
    if (other != 0 || (point & (point - 1)) != 0)
        return 0;
    unsigned nint = point != 0 ? (unsigned)__builtin_ctzll(point) : k;
    unsigned nfrac = point != 0 ? k - nint - 1 : 0, digits = nint + nfrac;
    if (digits - 1 >= 15)
        return 0;
    const char *d = s + sign;
    uint64_t mant;
    if (k <= 8) {
        /* One word: the point byte taken out, the digits after it moved
         * down one byte, one conversion. */
        uint64_t x = load8(d) ^ 0x3030303030303030u;
        if (point != 0) {
            uint64_t below = ((uint64_t)1 << (8 * nint)) - 1; /* nint <= 7 */
            x = (x & below) | ((x >> 8) & ~below);
        }
        mant = lead_value(x, digits);
    } else if (point != 0) {
        mant = run_value(d, nint) * POW10_U64[nfrac] + run_value(d + nint + 1, nfrac);
    } else {
        mant = run_value(d, nint);
    }
    double v = (double)mant / pow10[nfrac];
    *out = c0 == '-' ? -v : v;
    return 1;
}

/* A cell the masks' common form does not cover (lean_cell said no):
 * scan16, else the general scan, which must end exactly at the cell's
 * separator e (or at the CR of a CRLF ending the row: last is 1 for the
 * row's last cell). Returns 1 when the cell is taken (*d its value). */
static HOT_INLINE int other_cell(const char *s, const char *e, const char *lim, char dec,
                                 char delim, int last, double *d)
{
    char point;
    const char *end = scan16(s, (unsigned char)dec, d, &point);
    if (end == NULL)
        end = scan_general(s, lim, dec, delim, d, &point);
    return end == e || (last && end != NULL && end + 1 == e && *end == '\r');
}

/* Rows with the decimal separator decided, the cells' ends found from
 * the separator mask (the lowest set bit, then cleared) rather than from
 * the scan of the cell before: the start of the next cell waits for two
 * bit operations instead of a whole number's scan, so the cells of a row
 * overlap in the CPU, and the common cell (lean_cell) costs a third of
 * scan_cell's instructions. A window is taken from the current cell's
 * start whenever the one before has no separator left, so a cell of up
 * to 64 bytes lies in one window. Any other cell goes to scan_cell and
 * must end exactly at its separator (or at the CR of a CRLF), so a row
 * is taken exactly when scan_row_cells takes it, with the same values.
 * Stops at stop, after max_rows rows (counting from *rows), at the first
 * row it does not take, or when fewer than MASK_READS bytes are left
 * before lim; returns the start of the row it stopped at. */
static const char *scan_rows_masked(const char *p, const char *stop, const char *lim, size_t n,
                                    char delim, char dec, double *dst, size_t stride,
                                    size_t max_rows, size_t *rows)
{
    const __m128i vdelim = _mm_set1_epi8(delim), vnewline = _mm_set1_epi8('\n'),
                  vdec = _mm_set1_epi8(dec);
    size_t r = *rows;
    const char *base = p;
    row_masks w = {0, 0, 0, 0};
    uint64_t m = 0;
    while (p < stop && r < max_rows) {
        const char *s = p;
        double *d = dst + r;
        for (size_t c = 0;; c++, d += stride) {
            if (m == 0) {
                if (lim - s < MASK_READS)
                    goto out;
                base = s;
                w = window_masks(base, vdelim, vnewline, vdec);
                m = w.sep;
                if (m == 0)
                    goto out; /* a cell longer than a window */
            }
            unsigned a = (unsigned)(s - base), b = (unsigned)__builtin_ctzll(m);
            const char *e = base + b;
            m &= m - 1;
            if (!lean_cell(s, a, b - a, &w, d) && !other_cell(s, e, lim, dec, delim, c + 1 == n, d))
                goto out;
            if (c + 1 < n) {
                if (*e != delim)
                    goto out;
                s = e + 1;
                continue;
            }
            if (*e != '\n')
                goto out;
            p = e + 1;
            r++;
            break;
        }
    }
out:
    *rows = r;
    return p;
}

#if defined(__x86_64__) && (defined(__GNUC__) || defined(__clang__))
#include <immintrin.h>
#define EL_ROWS_AVX2 1
#define AVX2_TARGET __attribute__((target("avx2,bmi,bmi2")))

/* The batched reader's queue: cells of the common short form
 * [+-]digits.digits, at most 8 bytes after the sign, whose values are
 * made four at a time. Per cell only what the scalar loop has at hand is
 * stored (the 8 bytes after the sign as loaded, and one code word: L =
 * bytes after the sign, and the sign); the point's place, the shifts and
 * the power of ten are worked out for four lanes at once in queue_flush.
 * Read back lane by lane (a 32-byte load of four 8-byte stores just made
 * would wait for them to reach the cache). */
typedef struct {
    uint64_t word[4]; /* the cell's 8 bytes after the sign, as loaded */
    uint64_t code[4]; /* L | (1 for '-') << 8 */
    double *dst[4];
} cell_queue;

/* A lane of the queue, loaded alone: the empty asm makes the compiler
 * keep it a scalar load (it would merge four into one 32-byte load,
 * which cannot take its bytes from the four recent 8-byte stores and
 * waits for them: that stall cost more than the conversion saved). */
static HOT_INLINE long long lane_u64(const uint64_t *p)
{
    long long v = (long long)*p;
    __asm__("" : "+r"(v));
    return v;
}

/* The values of the queued cells (all four lanes; unused ones hold
 * cells already done, or zeros, and are not stored): the point byte (the
 * one byte among the first L that is not a digit, 0x1E or 0x1C after
 * the '0' is taken off) found, the bytes below it kept, those above moved
 * down over it, and the digits right-aligned by a shift of 8 * (9 - L),
 * then the usual vector digit conversion (pairs
 * 10a + b by pmaddubsw, pairs of pairs by pmaddwd, halves by a 32x32
 * multiply) to an integer below 10^7, exact in an int32 and in a double,
 * divided by 10^(fraction digits) (from a table of floats, exact up to
 * 10^7), negated for a '-': the same exact operands and the same
 * correctly rounded division as lean_cell (a negative divisor gives
 * -(m / 10^f) exactly, -0.0 for 0), so the same double in every lane. */
static AVX2_TARGET HOT_INLINE void queue_flush(cell_queue *q, unsigned n)
{
    const __m256i zeros = _mm256_set1_epi8('0'), one = _mm256_set1_epi64x(1),
                  byte = _mm256_set1_epi64x(0xFF), ones = _mm256_set1_epi64x(-1);
    const __m256 pow10f = _mm256_setr_ps(1e0f, 1e1f, 1e2f, 1e3f, 1e4f, 1e5f, 1e6f, 1e7f);
    __m256i x = _mm256_xor_si256(
        _mm256_set_epi64x(lane_u64(&q->word[3]), lane_u64(&q->word[2]),
                          lane_u64(&q->word[1]), lane_u64(&q->word[0])),
        zeros);
    __m256i code = _mm256_set_epi64x(lane_u64(&q->code[3]), lane_u64(&q->code[2]),
                                     lane_u64(&q->code[1]), lane_u64(&q->code[0]));
    __m256i len = _mm256_and_si256(code, byte);
    __m256i neg = _mm256_slli_epi64(_mm256_srli_epi64(code, 8), 63);
    /* the first L bytes (L = 8: a shift by 64 gives 0, all bytes kept) */
    __m256i cell = _mm256_andnot_si256(_mm256_sllv_epi64(ones, _mm256_slli_epi64(len, 3)), ones);
    __m256i pt = _mm256_and_si256(_mm256_cmpgt_epi8(x, _mm256_set1_epi8(9)), cell);
    __m256i below = _mm256_andnot_si256(pt, _mm256_sub_epi64(pt, one)); /* bytes before it */
    /* integer digits: the count of bytes below the point */
    __m256i nint = _mm256_sad_epu8(_mm256_and_si256(below, _mm256_set1_epi8(1)),
                                   _mm256_setzero_si256());
    x = _mm256_or_si256(_mm256_and_si256(x, below),
                        _mm256_andnot_si256(below, _mm256_srli_epi64(x, 8)));
    /* 8 * (9 - L) = 72 - 8 L: the L - 1 digits to the top bytes; a shift
     * of 64 or more (an unused lane's L = 0) gives 0. */
    x = _mm256_sllv_epi64(x, _mm256_sub_epi64(_mm256_set1_epi64x(72), _mm256_slli_epi64(len, 3)));
    x = _mm256_maddubs_epi16(x, _mm256_set1_epi16(0x010A));  /* 10a + b */
    x = _mm256_madd_epi16(x, _mm256_set1_epi32(0x00010064)); /* 100a + b */
    x = _mm256_add_epi64(_mm256_mul_epu32(x, _mm256_set1_epi64x(10000)),
                         _mm256_srli_epi64(x, 32));
    const __m256i evens = _mm256_setr_epi32(0, 2, 4, 6, 0, 2, 4, 6);
    __m128i v32 = _mm256_castsi256_si128(_mm256_permutevar8x32_epi32(x, evens));
    /* fraction digits L - 1 - nint (0..7; an unused lane's index wraps
     * to 7 and divides 0 by 10^7: no exception flag) */
    __m256i nfrac = _mm256_sub_epi64(_mm256_sub_epi64(len, one), nint);
    __m256 p10 = _mm256_permutevar8x32_ps(pow10f, _mm256_permutevar8x32_epi32(nfrac, evens));
    __m256d divisor = _mm256_castsi256_pd(_mm256_xor_si256(
        _mm256_castpd_si256(_mm256_cvtps_pd(_mm256_castps256_ps128(p10))), neg));
    __m256d v = _mm256_div_pd(_mm256_cvtepi32_pd(v32), divisor);
    __m128d lo = _mm256_castpd256_pd128(v), hi = _mm256_extractf128_pd(v, 1);
    switch (n) {
    case 4: _mm_storeh_pd(q->dst[3], hi); /* fall through */
    case 3: _mm_storel_pd(q->dst[2], hi); /* fall through */
    case 2: _mm_storeh_pd(q->dst[1], lo); /* fall through */
    default: _mm_storel_pd(q->dst[0], lo);
    }
}

/* The masks of a window for the batched reader: row_masks (for lean_cell
 * and the cells' ends) from two 32-byte loads, and the bytes that are a
 * sign ('-' or '+') and a '-'. */
typedef struct {
    row_masks w;
    uint64_t sign, minus;
} batch_masks;

static AVX2_TARGET HOT_INLINE void batch_window(const char *p, __m256i delim, __m256i dec,
                                                batch_masks *b)
{
    const __m256i zero = _mm256_set1_epi8('0'), nine = _mm256_set1_epi8(9),
                  newline = _mm256_set1_epi8('\n'), minus = _mm256_set1_epi8('-'),
                  plus = _mm256_set1_epi8('+');
    uint32_t sep[2], point[2], other[2], nl[2], sign[2], neg[2];
    for (unsigned i = 0; i < 2; i++) {
        __m256i x = _mm256_loadu_si256((const __m256i *)(const void *)(p + 32 * i));
        __m256i v = _mm256_sub_epi8(x, zero);
        __m256i digit = _mm256_cmpeq_epi8(_mm256_min_epu8(v, nine), v);
        __m256i pt = _mm256_cmpeq_epi8(x, dec), n = _mm256_cmpeq_epi8(x, newline);
        __m256i m = _mm256_cmpeq_epi8(x, minus);
        sep[i] = (uint32_t)_mm256_movemask_epi8(_mm256_or_si256(_mm256_cmpeq_epi8(x, delim), n));
        nl[i] = (uint32_t)_mm256_movemask_epi8(n);
        point[i] = (uint32_t)_mm256_movemask_epi8(pt);
        other[i] = ~(uint32_t)_mm256_movemask_epi8(_mm256_or_si256(digit, pt));
        neg[i] = (uint32_t)_mm256_movemask_epi8(m);
        sign[i] = (uint32_t)_mm256_movemask_epi8(_mm256_or_si256(m, _mm256_cmpeq_epi8(x, plus)));
    }
    b->w.sep = sep[0] | (uint64_t)sep[1] << 32;
    b->w.newline = nl[0] | (uint64_t)nl[1] << 32;
    b->w.point = point[0] | (uint64_t)point[1] << 32;
    b->w.other = other[0] | (uint64_t)other[1] << 32;
    b->sign = sign[0] | (uint64_t)sign[1] << 32;
    b->minus = neg[0] | (uint64_t)neg[1] << 32;
}

/* The separators (bits of b->w.sep) that end a cell of the window made
 * of digits and exactly one point after an optional sign, all cells at
 * once (the window starts at a cell's start). Additions carry a flag
 * from a byte up to the next separator (through the run of ones of
 * ~sep; a separator is 0 there, so the carry stops on it and sets it):
 * the cells holding a stray byte (neither digit, point, separator nor a
 * sign at a cell's start), the cells holding a point, and the cells
 * holding a point whose nearest point or separator before it is a point
 * (a second point: the same carry through the bytes that are neither). */
static HOT_INLINE uint64_t queue_form_ends(const batch_masks *b)
{
    uint64_t sep = b->w.sep, point = b->w.point, between = ~sep;
    uint64_t stray = b->w.other & ~sep & ~(b->sign & ((sep << 1) | 1));
    uint64_t events = point | sep;
    uint64_t second = (~events + (point << 1)) & point;
    uint64_t bad = ((between + stray) | (between + second)) & sep;
    return (between + point) & sep & ~bad;
}

/* scan_rows_masked with the common cells queued and made four at a time
 * (queue_flush) on CPUs with AVX2: the same rows taken, the same values
 * (every other cell as scan_rows_masked reads it). A cell [a, b) of the
 * window (b its separator) is queued when it is [+-]digits.digits with 1
 * to 7 digits: its end is in queue_form_ends's mask (worked out once per
 * window) and L = b - a - sign is 2..8 (8 bytes after the sign at
 * most). That is the queue's form exactly (lean_cell's conditions,
 * narrowed to 8 bytes). The queue is emptied before it returns, so only
 * the rows' own cells are written. */
static AVX2_TARGET const char *scan_rows_avx2(const char *p, const char *stop, const char *lim,
                                              size_t n, char delim, char dec, double *dst,
                                              size_t stride, size_t max_rows, size_t *rows)
{
    const __m256i vdelim = _mm256_set1_epi8(delim), vdec = _mm256_set1_epi8(dec);
    size_t r = *rows;
    const char *base = p;
    batch_masks bm = {{0, 0, 0, 0}, 0, 0};
    uint64_t m = 0, good = 0;
    unsigned queued = 0;
    cell_queue q = {{0}, {0}, {NULL}};
    while (p < stop && r < max_rows) {
        const char *s = p;
        double *d = dst + r;
        for (size_t c = 0;; c++, d += stride) {
            if (m == 0) {
                if (lim - s < MASK_READS)
                    goto out;
                base = s;
                batch_window(base, vdelim, vdec, &bm);
                m = bm.w.sep;
                if (m == 0)
                    goto out;
                good = queue_form_ends(&bm);
            }
            unsigned a = (unsigned)(s - base), b = (unsigned)__builtin_ctzll(m);
            const char *e = base + b;
            m &= m - 1;
            unsigned sg = (unsigned)(bm.sign >> a) & 1u, len = b - a - sg;
            if (((good >> b) & 1u) != 0 && len - 2 < 7) {
                unsigned i = queued;
                q.word[i] = load8(s + sg);
                q.code[i] = len | ((bm.minus >> a) & 1u) << 8;
                q.dst[i] = d;
                queued = i + 1;
                if (queued == 4) {
                    queue_flush(&q, 4);
                    queued = 0;
                }
            } else if (!lean_cell(s, a, b - a, &bm.w, d) &&
                       !other_cell(s, e, lim, dec, delim, c + 1 == n, d)) {
                goto out;
            }
            if (c + 1 < n) {
                if (*e != delim)
                    goto out;
                s = e + 1;
                continue;
            }
            if (*e != '\n')
                goto out;
            p = e + 1;
            r++;
            break;
        }
    }
out:
    if (queued > 0)
        queue_flush(&q, queued);
    *rows = r;
    return p;
}
#else
#define EL_ROWS_AVX2 0
#endif
#else
#define EL_ROWMASK 0
#endif

int el_number_rows_path_available(int path)
{
    switch (path) {
    case EL_ROWS_PLAIN:
        return 1;
    case EL_ROWS_MASKED:
        return EL_ROWMASK;
    case EL_ROWS_BATCHED:
#if EL_ROWMASK && EL_ROWS_AVX2
        return __builtin_cpu_supports("avx2") && __builtin_cpu_supports("bmi2");
#else
        return 0;
#endif
    default:
        return 0;
    }
}

const char *el_number_scan_rows_using(int path, const char *p, const char *stop,
                                      const char *lim, size_t n, char delim, char *decimal,
                                      double *dst, size_t stride, size_t max_rows, size_t *rows)
{
    while (path > EL_ROWS_PLAIN && !el_number_rows_path_available(path))
        path--;
    char dec = *decimal;
    size_t r = 0;
    while (p < stop && r < max_rows) {
#if EL_ROWMASK
        if (dec != 0 && path != EL_ROWS_PLAIN) {
#if EL_ROWS_AVX2
            /* The batched reader's masks need the separator, the
             * decimal separator and the signs to be different bytes. */
            if (path == EL_ROWS_BATCHED && dec != delim && delim != '-' && delim != '+')
                p = scan_rows_avx2(p, stop, lim, n, delim, dec, dst, stride, max_rows, &r);
            else
#endif
                p = scan_rows_masked(p, stop, lim, n, delim, dec, dst, stride, max_rows, &r);
            if (p >= stop || r >= max_rows)
                break;
        }
#else
        (void)path;
#endif
        /* The rows before the separator is decided, the last ones before
         * lim, and the row the masked scan stopped at. */
        const char *next = scan_row_cells(p, lim, n, delim, &dec, dst + r, stride);
        if (next == NULL)
            break;
        p = next;
        r++;
    }
    *decimal = dec;
    *rows = r;
    return p;
}

const char *el_number_scan_rows(const char *p, const char *stop, const char *lim, size_t n,
                                char delim, char *decimal, double *dst, size_t stride,
                                size_t max_rows, size_t *rows)
{
    int path = el_number_rows_path_available(EL_ROWS_BATCHED)  ? EL_ROWS_BATCHED
               : el_number_rows_path_available(EL_ROWS_MASKED) ? EL_ROWS_MASKED
                                                               : EL_ROWS_PLAIN;
    return el_number_scan_rows_using(path, p, stop, lim, n, delim, decimal, dst, stride,
                                     max_rows, rows);
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
    /* Both separators in a cell of digits: a thousands separator
     * (1,250.5 or 1.250,5), which the decimal hints below would misread. */
    size_t plain = 0;   /* leading digits and separators (the cell is not NUL-ended) */
    while (plain < rest_n && (is_digit(rest[plain]) || rest[plain] == '.' || rest[plain] == ','))
        plain++;
    if (plain == rest_n && memchr(s, '.', n) != NULL && memchr(s, ',', n) != NULL)
        return "thousands separators are not read: write the number without them "
               "(1250.5, or 1250,5 in a log with decimal commas)";
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

int el_number_numeral_like(const char *s, size_t n)
{
    int digit = 0;
    for (size_t i = 0; i < n; i++) {
        char c = s[i];
        if (c >= '0' && c <= '9')
            digit = 1;
        else if (!(c == '.' || c == ',' || ((c == '+' || c == '-') && i == 0)))
            return 0;
    }
    return digit;
}
