/* el_term: text for a terminal of a given width: long lines wrapped at
 * spaces with a hanging indent, so reports stay readable in 80 columns
 * (or whatever the terminal has) without changing what they say. */
#ifndef EL_TERM_H
#define EL_TERM_H

#include <stddef.h>

#include "el_error.h"
#include "el_io.h"

/* The narrowest width el_term_wrap honours; below it lines are wrapped
 * at this width (a hanging indent needs room for some text). */
#define EL_TERM_MIN_WIDTH 30

/* Appends text to out with every line longer than width columns (bytes;
 * a UTF-8 character counts as one column) broken at spaces. A
 * continuation line is indented to where the first line's text starts
 * after its label: the leading spaces, then a label of at most 16
 * columns and a run of two or more spaces ("  estimator    iv, ..."
 * continues under "iv"), or after "! " / "Caution: "; else the leading
 * spaces plus 2 (none for a line without leading spaces), and likewise
 * when the indent would leave less than half the width. A word longer than the room left
 * is cut at the width. Lines that fit are copied unchanged; so is the
 * end: text without a final newline gets none. width below
 * EL_TERM_MIN_WIDTH counts as EL_TERM_MIN_WIDTH. Returns EL_OK or
 * EL_ERR_NOMEM (out marked failed). */
el_status el_term_wrap(const char *text, size_t width, el_buf *out);

#endif
