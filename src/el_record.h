/* el_record: where one record (one row, quoted line ends included) of a
 * CSV text ends, resumable across buffer refills: blank lines, comment
 * lines and RFC 4180 quoting. The reader (el_ingest) splits the record it
 * finds into cells. */
#ifndef EL_RECORD_H
#define EL_RECORD_H

#include <stddef.h>

/* What the record at the start of the text is. */
enum { EL_RECORD_UNKNOWN, EL_RECORD_BLANK, EL_RECORD_COMMENT, EL_RECORD_DATA };

/* Resumable state of the search for the end of the record at buf[beg]:
 * offsets are relative to beg so they survive the buffer being moved.
 * Start with {0, EL_RECORD_UNKNOWN, 0, 0, 0, 0, (size_t)-1}. */
typedef struct {
    size_t scan;        /* bytes examined so far */
    int kind;           /* EL_RECORD_*: decided by its first non-blank byte */
    int in_quote;
    int has_quote;
    long newlines;      /* newlines inside quoted fields */
    size_t open_quote;  /* quote that opened the field still open */
    size_t last_close;  /* offset just past the last closing quote */
} el_record_scan_state;

/* Finds the end of the record at p[0..n): returns 1 and its '\n' offset in
 * *stop, or 0 when more data is needed (call again with the same state
 * and the text grown; *s remembers how far it looked). A '"' toggles
 * quoting wherever it stands (so a doubled quote leaves quoting on), which
 * is how RFC 4180 fields delimit; stray quotes inside unquoted fields are
 * refused later by the field splitter, so the two never disagree about a
 * valid file. A line whose first non-blank byte is '#' is a comment
 * (quotes in it are not looked at); a line of blanks is blank. */
int el_record_scan(const char *p, size_t n, el_record_scan_state *s, size_t *stop);

/* The delimiter of a header row text[0..length): the one of comma,
 * semicolon and tab that occurs most often outside quotes (names rarely
 * contain any of them, while the delimiter occurs n_columns - 1 times). On
 * a tie the tab wins, then the semicolon: a tab in a name is almost
 * unheard of, and a semicolon-separated file may carry a comma inside a
 * unit ("[m,s]") whereas the reverse is rarer. No candidate at all means
 * one column (','). */
char el_record_delimiter(const char *text, size_t length);

#endif
