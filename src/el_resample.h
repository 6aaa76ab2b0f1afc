/* el_resample: bootstrap replicates of the fit (moving-block resampling of
 * snapshot pairs, or model-based residual resampling) and the distributions
 * of the modes they give: percentile bounds, p_stable, region fractions. */
#ifndef EL_RESAMPLE_H
#define EL_RESAMPLE_H

#include <stddef.h>
#include <stdint.h>

#include "el_error.h"
#include "el_fit.h"
#include "el_modes.h"
#include "el_timebase.h"
#include "el_verdict.h"

typedef enum { EL_RESAMPLE_BLOCKS = 0, EL_RESAMPLE_MODEL } el_resample_kind;

typedef struct {
    size_t replicates;            /* 0 = no bootstrap (default 1000) */
    el_resample_kind kind;        /* default EL_RESAMPLE_BLOCKS */
    size_t block_length;          /* 0 = automatic (Politis & White 2004, corrected 2009) */
    double level;                 /* two-sided level of the bounds (default 0.95) */
    uint64_t seed;                /* default 1 */
    size_t threads;               /* 0 = all cores */
    /* Called from the calling thread now and then; may be NULL. */
    void (*progress)(void *ctx, size_t done, size_t total);
    void *progress_ctx;
} el_boot_options;

/* Fills opt with the defaults listed above. */
void el_boot_defaults(el_boot_options *opt);

typedef struct {
    double lo, hi;
} el_interval;

typedef struct {
    el_interval re, im, frequency_hz, damping_ratio, decay_rate;
} el_mode_bounds;

typedef struct el_boot_result {
    size_t replicates;            /* replicates that gave a model */
    size_t failed_replicates;     /* replicates whose refit failed (left out) */
    el_resample_kind kind;
    size_t block_length;
    int block_was_auto;
    double level;
    uint64_t seed;
    size_t threads_used;
    size_t n_modes;               /* == the point estimate's n_modes */
    el_mode_bounds *bounds;       /* n_modes, owned */
    double p_stable;              /* fraction with least-damped Re lambda < 0 */
    size_t ambiguous_matches;     /* replicates in which two modes could swap */
    double *lambda_re;            /* replicates * n_modes: matched lambda, [r * n_modes + m] */
    double *lambda_im;
    int has_plane;
    el_interval trace, determinant, discriminant;
    double region_probability[EL_REGION_COUNT];
    double *trace_samples;        /* replicates (only when has_plane) */
    double *det_samples;
} el_boot_result;

/* Runs the bootstrap for the model fitted to series with opt_fit (the same
 * lags, rank and method go through every replicate) and fills *result
 * (zero-initialised or freed). Replicate r draws from random stream r of
 * the seed, so the numbers do not depend on the thread count. Errors:
 * EL_ERR_USAGE for a block length longer than the series; EL_ERR_NUMERIC
 * when fewer than half of the replicates give a model; EL_ERR_NOMEM. */
el_status el_boot_run(const el_series *series, const el_fit_options *opt_fit,
                      const el_model *model, const el_modes *modes,
                      const el_boot_options *opt, el_boot_result *result,
                      el_warnings *warnings, el_error *err);

/* Frees what the result owns and zeroes it. NULL is a no-op. */
void el_boot_free(el_boot_result *result);

#endif
