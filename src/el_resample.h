/* el_resample: bootstrap replicates of the fit (moving-block resampling of
 * snapshot pairs, or model-based residual resampling) and the distributions
 * of the modes they give: percentile bounds, p_stable, region fractions. */
#ifndef EL_RESAMPLE_H
#define EL_RESAMPLE_H

#include <stddef.h>
#include <stdint.h>

#include "el_error.h"
#include "el_boot_bounds.h"
#include "el_boot_engine.h"
#include "el_boot_match.h"
#include "el_boot_model.h"
#include "el_estimator.h"
#include "el_model.h"
#include "el_modes.h"
#include "el_reduced.h"
#include "el_timebase.h"

/* Most blocks one moving-block replicate is made of when the block length
 * is automatic: the Politis-White length is raised to ceil(pairs / this)
 * when it is shorter, so a replicate costs O(EL_BOOT_MAX_BLOCKS) block
 * sums whatever the log length (a block longer than the optimum keeps the
 * moving-block variance estimate consistent: its bias falls as 1/L and its
 * variance grows as L/n = 1/EL_BOOT_MAX_BLOCKS; Kunsch 1989). */
#define EL_BOOT_MAX_BLOCKS 400

/* Default el_boot_options.wide_states: above the IV_MAX_ROWS = 120 rows
 * the automatic horizon builds, so only logs of about 128 channels or
 * more take the wide path and narrower ones keep their bits. */
#define EL_BOOT_WIDE_STATES 128

/* Fewest replicates from which the pipeline (el_assess, el_track) reports
 * bounds and P(stable). Below it the 2.5% tail of a 95% percentile
 * interval holds fewer than 2.5 replicates and P(stable) moves in steps of
 * more than 1%: common practice asks for at least a hundred replicates for
 * standard errors and about a thousand for percentile intervals (Efron &
 * Tibshirani 1993, "An Introduction to the Bootstrap", ch. 6 and 13;
 * recalled from memory). el_boot_run itself runs any count. */
#define EL_BOOT_MIN_REPLICATES 100

typedef struct el_boot_options {
    size_t replicates;            /* 0 = no bootstrap (default 1000) */
    el_resample_kind kind;        /* default EL_RESAMPLE_BLOCKS */
    size_t block_length;          /* 0 = automatic (Politis & White 2004, corrected 2009) */
    double level;                 /* two-sided level of the bounds (default 0.95) */
    uint64_t seed;                /* default 1 */
    size_t threads;               /* 0 = all cores */
    /* Called from the calling thread now and then; may be NULL. */
    void (*progress)(void *ctx, size_t done, size_t total);
    void *progress_ctx;
    /* 1 (default): bias-correct every replicate's reduced matrix by the
     * bias that a first round of model-based replicates measures
     * (bootstrap-after-bootstrap, Kilian 1998); see docs/uncertainty.md. */
    int bias_correct;
    /* Reduced states from which a model-based replicate simulates the
     * whole series first and sums its features by the provider's matrix
     * products (EL_BOOT_WIDE_STATES when 0): the same sums to rounding,
     * several times faster for wide states; below it the pair-by-pair
     * path keeps the bits it always gave. Tests set 1 to compare them.
     * From it on, moving blocks also use the wide engine
     * (el_boot_engine_create_wide: float block tables, no prefix table). */
    size_t wide_states;
    /* Most residual cells (pairs x reduced states) stored for the
     * automatic block length when no model-based replicate reads them
     * (2^21, 16 MiB, when 0); above it each component is made again for
     * its Politis-White length, the same doubles without the array (a
     * 1e6 x 8 log: 64 MB less). Tests set 1 to compare the two. */
    size_t resid_store_cells;
} el_boot_options;

/* Fills opt with the defaults listed above. */
void el_boot_defaults(el_boot_options *opt);

/* Runs the bootstrap for the model fitted to series with opt_fit (the same
 * lags, rank and method go through every replicate; the model records
 * them) and fills *result (zero-initialised or freed). A model with
 * measured inputs (ls, iv) takes them from opt_fit->inputs: every
 * replicate refits A and B together on resampled pairs, the inputs staying
 * attached to their pairs (model-based replicates keep the inputs as
 * measured and regenerate the state through A, B and c). Replicate r draws
 * from random stream r of the seed, so the numbers do not depend on the
 * thread count. Errors: EL_ERR_USAGE for a block length longer than the
 * series, or model-based resampling with a method other than ls;
 * EL_ERR_NUMERIC when fewer than half of the replicates give a model;
 * EL_ERR_INTERNAL when the model has inputs and opt_fit gives none (or
 * other ones); EL_ERR_NOMEM. */
el_status el_boot_run(const el_series *series, const el_fit_options *opt_fit,
                      const el_model *model, const el_modes *modes,
                      const el_boot_options *opt, el_boot_result *result,
                      el_warnings *warnings, el_error *err);

#endif
