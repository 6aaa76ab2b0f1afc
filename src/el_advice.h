/* el_advice: what a verdict means for the reader, in words: one line of
 * reason and one of next step chosen from the verdict's cause, the
 * bootstrap support as a count, and the cautions that go with the verdict
 * (docs/method.md, "Verdict words"). Text only: the decisions are made by
 * el_verdict and el_assess. */
#ifndef EL_ADVICE_H
#define EL_ADVICE_H

#include <stddef.h>

#include "el_assess.h"

#define EL_ADVICE_TEXT_MAX 480
#define EL_ADVICE_MAX_CAUTIONS 5

typedef struct {
    char reason[EL_ADVICE_TEXT_MAX];     /* one sentence: why this word */
    char next_step[EL_ADVICE_TEXT_MAX];  /* one sentence: what to do next */
    char support[160];                   /* "bootstrap support 998 of 1000 replicates
                                            (model error not included)", or why none */
    size_t n_cautions;
    char cautions[EL_ADVICE_MAX_CAUTIONS][EL_ADVICE_TEXT_MAX];
} el_advice;

/* Fills *out for the assessment r (as after el_assess_run) at the level
 * the bounds were asked at (--level; NaN: the bootstrap's own, else 0.95).
 * Cautions, in this order: by verdict (unstable: follow your site's
 * procedures and inform the responsible engineer; stable: not a licence
 * to raise load, change settings or bypass protection; undecided or
 * marginal: treat the margin as unknown), the excitation note when inputs
 * were given or the next step asks for more excitation, and always the
 * general caution (el_assess_caution, which defers to the maker's limits,
 * local codes and licensed practice). Can't fail: texts are truncated to
 * their buffers. NULL r or out is a no-op. */
void el_advice_assess(const el_assessment *r, double level, el_advice *out);

/* The cautions of a track report into out (up to EL_ADVICE_MAX_CAUTIONS
 * strings of EL_ADVICE_TEXT_MAX): the track covers the windows shown only;
 * when shrinking is 1, the time-to-zero note ("the margin may be lost
 * sooner; a straight-line extrapolation"), with zero_unix_s (the Unix time
 * the line reaches zero; NaN when unknown) written as a UTC clock time when
 * time_is_iso is 1; and the general caution for many windows (deferring to
 * the maker's limits, local codes and licensed practice). Returns the
 * count (at most 3). Can't fail. */
size_t el_advice_track_cautions(int shrinking, int time_is_iso, double zero_unix_s,
                                char out[][EL_ADVICE_TEXT_MAX]);

/* The excitation note: tests that excite running plant need site
 * authorisation. Static text. */
const char *el_advice_excitation_caution(void);

#endif
