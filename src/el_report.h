/* el_report: the assess result as text for a terminal and as JSON for
 * machines (keys per DESIGN.md). */
#ifndef EL_REPORT_H
#define EL_REPORT_H

#include "el_assess.h"
#include "el_io.h"

#define EL_VERSION "0.1.0"

/* Appends the terminal summary of r to out: window and data, model,
 * operating point, mode table (with bounds when a bootstrap ran), type,
 * verdict, margin, warnings and the caution. Returns EL_OK or
 * EL_ERR_NOMEM. */
el_status el_report_text(const el_assessment *r, const el_assess_options *opt,
                         el_buf *out);

/* Appends the JSON document of r to out (DESIGN.md contract; values that
 * do not exist are null). Returns EL_OK, EL_ERR_NOMEM or EL_ERR_INTERNAL. */
el_status el_report_json(const el_assessment *r, const el_assess_options *opt,
                         el_buf *out);

/* Appends a CSV of every bootstrap replicate's matched eigenvalues to out:
 * header `replicate,mode,lambda_re,lambda_im,frequency_hz,damping_ratio`.
 * EL_ERR_USAGE when no bootstrap ran. */
el_status el_report_replicates_csv(const el_assessment *r, el_buf *out,
                                   el_error *err);

#endif
