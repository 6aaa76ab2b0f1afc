/* el_report: the assess result as text for a terminal and as JSON for
 * machines (keys and envelope: docs/json.md). */
#ifndef EL_REPORT_H
#define EL_REPORT_H

#include "el_assess.h"
#include "el_io.h"
#include "el_json.h"

#define EL_VERSION "0.1.0"

/* Appends the terminal summary of r to out: window and data, model,
 * operating point, mode table (with bounds when a bootstrap ran), type,
 * verdict, margin, warnings and the caution. Returns EL_OK or
 * EL_ERR_NOMEM. */
el_status el_report_text(const el_assessment *r, const el_assess_options *opt,
                         el_buf *out);

/* Appends the JSON document of r to out (docs/json.md; values that
 * do not exist are null). Returns EL_OK, EL_ERR_NOMEM or EL_ERR_INTERNAL. */
el_status el_report_json(const el_assessment *r, const el_assess_options *opt,
                         el_buf *out);

/* Appends a CSV of every bootstrap replicate's matched eigenvalues to out:
 * header `replicate,mode,lambda_re,lambda_im,frequency_hz,damping_ratio`.
 * EL_ERR_USAGE when no bootstrap ran. */
el_status el_report_replicates_csv(const el_assessment *r, el_buf *out,
                                   el_error *err);

/* Appends the mode table as CSV to out, one row per mode, least damped
 * first (docs/cli.md, "--modes-csv"): header
 * `mode,lambda_re,lambda_im,frequency_hz,damping_ratio,decay_rate,
 * time_constant_s,time_constant_kind,level,re_lo,re_hi,frequency_hz_lo,
 * frequency_hz_hi,damping_ratio_lo,damping_ratio_hi,decay_rate_lo,
 * decay_rate_hi`; numbers with 10 significant digits, an empty field for a
 * value that does not exist (no bootstrap: every bound and the level).
 * EL_OK or EL_ERR_NOMEM. */
el_status el_report_modes_csv(const el_assessment *r, el_buf *out);

/* ------------------------------------------------ the JSON envelope
 * Every subcommand's JSON starts with the same envelope (docs/json.md):
 * `tool`, `version`, `command`, `input` {`file`, `files`, `channel_names`,
 * `channels`, `time_unit`, ...}, `warnings` / `warning_details` (lists of
 * {`code`, `message`}), then its own body. */

/* The stable code of a warning message (docs/json.md, "Warning codes"):
 * the first row of a fixed table whose phrase the message contains, else
 * "other". Static text; NULL gives "other". */
const char *el_warning_code(const char *message);

/* Writes `tool` ("eigenlog"), `version` (EL_VERSION) and `command` into the
 * open top-level object of j. */
void el_envelope_head(el_json *j, const char *command);

/* Writes, into the open `input` object of j, `files` (paths[0..n), or
 * [first] when n is 0; first may be NULL: "") and `channel_names`
 * (names[0..n_names)). The caller writes `file` and `channels` itself,
 * because their types differ in the subcommands that had them first. */
void el_envelope_input(el_json *j, const char *first, const char *const *paths, size_t n,
                       char *const *names, size_t n_names);

/* Writes array key of {code, message} objects: the warnings of lists[0..n)
 * in order (NULL lists skipped). */
void el_envelope_warnings(el_json *j, const char *key, const el_warnings *const *lists,
                          size_t n);

#endif
