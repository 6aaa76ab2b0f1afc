/* el_survey_html: the overview page of a survey (DIR/index.html): every
 * log ranked by its margin, least first, with a small inline SVG figure of
 * the margin and its bounds; self-contained (no script, no external file). */
#ifndef EL_SURVEY_HTML_H
#define EL_SURVEY_HTML_H

#include "el_error.h"
#include "el_io.h"
#include "el_survey.h"

/* Appends the overview page of table t to out. Logs that failed are listed
 * first in a table of their own with exit status and error; the others
 * are ranked by decay rate of the least damped mode (the margin: negative
 * is unstable), least first, ties by file name; a log whose verdict is
 * ambiguous or marginal is flagged "undecided". Every row has an inline
 * SVG figure of the margin with its bounds on one axis shared by all rows.
 * reports_prefix non-NULL: each file links to reports_prefix + the name of
 * el_survey_report_name + ".html" (the `--reports` pages). The table is
 * not changed. EL_OK or EL_ERR_NOMEM (err set). */
el_status el_survey_html(const el_survey_table *t, const char *reports_prefix,
                         el_buf *out, el_error *err);

#endif
