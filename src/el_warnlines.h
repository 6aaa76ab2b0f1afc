/* el_warnlines: the warnings as the text and HTML reports print them:
 * a kind of warning repeated for many modes or channels (a wide log's
 * hundred near-identical paragraphs) on one line that lists them. JSON
 * keeps every warning as it is. */
#ifndef EL_WARNLINES_H
#define EL_WARNLINES_H

#include <stddef.h>

#include "el_error.h"

/* Channel names listed on a folded line before "and N more". */
#define EL_WARNLINES_MAX_NAMES 12

/* The lines a person reads for the warnings of lists[0..n_lists) (NULL
 * lists skipped), appended to *out (zero-initialised; the caller frees it
 * with el_warnings_free): every warning in order, except that warnings of
 * one kind about single modes, "mode N (F Hz) is REST" with the same REST
 * (F Hz may also be "real" or "at the Nyquist limit"), are given once, at
 * the first one's place, as "modes 3, 7-12 (0.2-4.9 Hz; 1 real) are
 * REST"; and warnings that name one channel ("... channel NAME ...")
 * and differ only in that name and in numbers are given once with
 * "channels A, B, ..." (the first EL_WARNLINES_MAX_NAMES, then "and N
 * more") and each number that differs as "LOWEST to HIGHEST" as written:
 * a wide log's hundred near-identical paragraphs become one line. The
 * text and HTML reports print these lines; JSON keeps every warning
 * as it is. *n_collapsed (may be NULL) gets the number of warnings folded
 * into another's line. EL_OK or EL_ERR_NOMEM. */
el_status el_warnlines_fold(const el_warnings *const *lists, size_t n_lists,
                            el_warnings *out, size_t *n_collapsed);

/* The heading over those lines: "Warnings (N)" when none was folded, else
 * "Warnings (N, on K lines)" ("line" for one), into buf (size bytes,
 * NUL-terminated, cut short when it does not fit). Returns buf. */
char *el_warnlines_heading(size_t n_warnings, size_t n_lines, size_t n_folded, char *buf,
                           size_t size);

#endif
