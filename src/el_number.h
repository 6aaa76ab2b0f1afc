/* el_number: plain decimal numbers of a log's cells, read exactly. */
#ifndef EL_NUMBER_H
#define EL_NUMBER_H

#include <stddef.h>

/* What el_number_parse found. */
enum { EL_NUM_OK, EL_NUM_SYNTAX, EL_NUM_RANGE };

/* Parses a plain decimal [+-]digits[.digits][(e|E)[+-]digits] spanning all
 * of s[0..n) (the caller trims blanks) into *out: the correctly rounded
 * double, bit for bit what strtod gives for the same text. Returns
 * EL_NUM_OK; EL_NUM_SYNTAX for anything else (hex, inf, nan, trailing
 * text, no digit; *out untouched); EL_NUM_RANGE when the value overflows a
 * double (or no memory for a very long number). The decimal separator is
 * *decimal ('.' or ','); when *decimal is 0 it is not decided yet: a '.'
 * is one, and a ',' is one when delim (the cell delimiter, 0 = not known)
 * is neither ',' nor 0; the first separator met is stored in *decimal. A
 * value below the smallest subnormal rounds as strtod does (to 0). */
int el_number_parse(const char *s, size_t n, char *decimal, char delim, double *out);

/* The scan of the fused row reader: reads the longest plain decimal at s
 * ([+-]digits[sep digits][(e|E)[+-]digits], sep as in el_number_parse
 * with decimal and delim; decimal 0 = not decided) and returns the first
 * byte after it (the caller decides whether that byte ends the cell), with
 * *out the value el_number_parse gives for exactly s[0..returned) (bit for
 * bit: the same fast path, else el_number_parse itself) and *point_out the
 * separator met (0: none; the caller records the decision). NULL when no
 * number starts at s, an exponent has no digits, or the value is out of
 * range: the caller then reads the cell the slow way. Reads bytes from s
 * up to the first that is not part of a number, so s's text must hold such
 * a byte (a line end); bytes before lim may be loaded 8 at a time. */
const char *el_number_scan(const char *s, const char *lim, char decimal, char delim,
                           double *out, char *point_out);

/* The row loop of the fused reader: reads the row of n numbers at p,
 * separated by delim and ended by LF or CRLF, each with el_number_scan (a
 * '\n' must lie at or after p before lim), into dst[0], dst[stride], ...
 * Returns the byte after the line end, or NULL when the row is anything
 * else (blanks, quotes, missing or text cells, too few or too many cells;
 * dst then holds junk and *decimal is unchanged). *decimal as in
 * el_number_parse: 0 = not decided, then set by the first separator met,
 * cell by cell from the left. Touches nothing else, so threads may call
 * it at once. Here so that the scan of each cell is inlined into the
 * loop. */
const char *el_number_scan_row(const char *p, const char *lim, size_t n, char delim,
                               char *decimal, double *dst, size_t stride);

/* Rows by el_number_scan_row's rule, one after another: from p while p
 * < stop (p and stop at line starts) and fewer than max_rows were read,
 * row r into dst[r], dst[stride + r], ...; stops before the first row
 * el_number_scan_row refuses. Sets *rows to the rows read and returns
 * where it stopped (stop, or the start of the row not read); *decimal as
 * there (decided by the first separator when 0). Bytes before lim may be
 * loaded. The same rows and values as el_number_scan_row row by row;
 * faster where the CPU has 16-byte vectors (the cells' ends found from a
 * mask of the separators 64 bytes at a time). Writes nothing but those
 * rows' cells (and junk in the row it stopped at), so threads may read
 * different parts at once. */
const char *el_number_scan_rows(const char *p, const char *stop, const char *lim, size_t n,
                                char delim, char *decimal, double *dst, size_t stride,
                                size_t max_rows, size_t *rows);

/* The row readers el_number_scan_rows chooses from, slowest first: cell
 * by cell (any CPU), the cells' ends from separator masks (SSE2: every
 * x86-64), and that with the common cells made four at a time (AVX2 and
 * BMI2, chosen at run time). All give the same rows and the same doubles. */
enum { EL_ROWS_PLAIN, EL_ROWS_MASKED, EL_ROWS_BATCHED };

/* 1 when this build and CPU can run row reader path (EL_ROWS_*), else 0. */
int el_number_rows_path_available(int path);

/* el_number_scan_rows with the row reader given (tests and benchmarks
 * compare them): a path this CPU cannot run is taken as the next slower
 * one that it can (EL_ROWS_BATCHED as EL_ROWS_MASKED, that as
 * EL_ROWS_PLAIN). Otherwise el_number_scan_rows's contract. */
const char *el_number_scan_rows_using(int path, const char *p, const char *stop,
                                      const char *lim, size_t n, char delim, char *decimal,
                                      double *dst, size_t stride, size_t max_rows, size_t *rows);

/* 1 when the trimmed cell s[0..n) is a missing value: empty, NA or NaN in
 * any case; else 0. */
int el_number_is_missing(const char *s, size_t n);

/* 1 when s[0..n) holds only a sign (first), digits and the separators
 * '.' and ',', with at least one digit: a numeral that a log with the
 * other decimal separator (15.00 among decimal commas) or a thousands
 * separator (1,250.5) fails to read, whose hint is then the number's. */
int el_number_numeral_like(const char *s, size_t n);

/* The hint for a cell s[0..n) that el_number_parse refused (range: 1 when
 * it said EL_NUM_RANGE), given the file's delimiter and decimal separator
 * (0 = not decided): why it was refused and how to write it. Static text. */
const char *el_number_hint(const char *s, size_t n, char delim, char decimal, int range);

#endif
