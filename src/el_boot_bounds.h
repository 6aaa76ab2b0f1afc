/* el_boot_bounds: the bootstrap's result (el_boot_result: percentile
 * bounds of every mode, P(stable), the trace-determinant plane) and how it
 * is summarised from the replicates' records. The verdict reads this
 * result; nothing here knows the verdict. */
#ifndef EL_BOOT_BOUNDS_H
#define EL_BOOT_BOUNDS_H

#include <stddef.h>
#include <stdint.h>

#include "el_error.h"
#include "el_modes.h"
#include "el_plane.h"

typedef enum { EL_RESAMPLE_BLOCKS = 0, EL_RESAMPLE_MODEL } el_resample_kind;

typedef struct {
    double lo, hi;
} el_interval;

typedef struct {
    el_interval re, im, frequency_hz, damping_ratio, decay_rate;
    /* A possible repeated root (el_boot_summarise): 1 when this real mode
     * and its partner (the real mode nearest in Re) were one complex pair
     * in enough replicates that the data cannot tell two distinct real
     * roots from a double one; re, decay_rate and damping_ratio then also
     * hold the bounds of the pair's mean Re. */
    int repeated_root;
    size_t repeated_partner;      /* the partner's mode index (when merged_fraction > 0) */
    double merged_fraction;       /* fraction of replicates in which this real mode and
                                     its partner were one complex pair (0: never, or no
                                     partner) */
    el_interval re_pair_mean;     /* bounds of the pair's mean Re (NaN when
                                     merged_fraction is 0) */
    el_interval re_own;           /* the mode's own percentile bounds of Re lambda
                                     (== re unless repeated_root widened them) */
    /* A point pair that may be one repeated real root (el_boot_summarise):
     * split_fraction is the share of replicates in which its two slots were
     * two real roots (0 for a real mode, or when the records keep no
     * discriminants); re_double_root the bounds of the double root read
     * from the replicates' slot mean and discriminant (NaN when none was
     * computed). repeated_root is then 1 with repeated_partner the mode
     * itself, and re, decay_rate and damping_ratio also hold re_double_root. */
    double split_fraction;
    el_interval re_double_root;
    double double_root_slope;     /* the slope of the slot mean on the discriminant
                                     over the replicates (0 when not computed) */
} el_mode_bounds;

/* The share of (1 - level) at which the replicates are taken not to
 * exclude a double root (el_boot_summarise): at level 0.95, two real modes
 * merged into one pair in at least 0.5 % of the replicates. A tenth, not
 * the interval's own tail (1 - level) / 2: a log of a true double root
 * whose pair is not widened loses its coverage outright, so the test must
 * pass on nearly every such log (docs/uncertainty.md, "Repeated roots"). */
#define EL_BOOT_REPEATED_TAIL 0.1

/* A real mode that grows by c = Re lambda x duration e-foldings over the
 * log (its point estimate) gets basic (reflected) bounds about the replicates'
 * median (el_boot_summarise) in full from c = EL_BOOT_REFLECT_FULL,
 * percentile bounds up to c = EL_BOOT_REFLECT_FROM, and the linear blend
 * of the two between (no jump). The ends as el_boot_growth_weight's: up
 * to one e-folding the log is still near a unit root (stationary logs
 * keep their bounds bit for bit); from three the growth dominates
 * (docs/uncertainty.md, "Bounds at a Jordan block and on growing
 * modes"). */
#define EL_BOOT_REFLECT_FROM 1.0
#define EL_BOOT_REFLECT_FULL 3.0

/* The share of the reflected form in a mode's Re bounds for a growth of
 * efolds e-foldings over the log (EL_BOOT_REFLECT_FROM/FULL): 0 up to
 * FROM (and for a non-finite argument), 1 from FULL, linear between. */
double el_boot_reflect_weight(double efolds);

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
    int bias_corrected;           /* 1: replicates were bias-corrected */
    size_t bias_replicates;       /* model-based replicates that measured the bias */
    size_t block_length_pw;       /* automatic: the Politis-White length before the
                                     EL_BOOT_MAX_BLOCKS floor (0 when given) */
    double setup_seconds;         /* wall time: states, full-sample refit, block
                                     length, engine (the one pass over the data) */
    double bias_seconds;          /* wall time of the bias round (0 when none) */
    double replicate_seconds;     /* wall time of the replicates themselves */
    int bias_refused;             /* 1: the bias round ran, was judged and refused its
                                     correction (the model does not reproduce its own
                                     data: sensor noise or a misfit; el_resample.c) */
    double bias_refused_spreads;  /* when refused: the largest shift of a refused mode
                                     in spreads (|median - point| / (IQR / 1.349)) */
} el_boot_result;

/* Frees what the result owns and zeroes it. NULL is a no-op. */
void el_boot_free(el_boot_result *result);

/* Quantile p in [0, 1] of sorted[0..n) (ascending, n >= 1) by linear
 * interpolation between order statistics (Hyndman & Fan 1996, type 7:
 * h = (n - 1) p, x[floor h] + (h - floor h) (x[floor h + 1] - x[floor h])). */
double el_boot_quantile(const double *sorted, size_t n, double p);

/* The per-replicate records of a run, in replicate order (total of them):
 * ok (1: the replicate gave a model), amb (1: two modes could swap), stable
 * (1: its least damped mode has Re lambda < 0), the matched eigenvalues of
 * each point mode (mode_re/mode_im, total x n_modes, [i * n_modes + m]),
 * and with has_plane the trace and determinant of each replicate. */
typedef struct {
    size_t total, n_modes;
    int has_plane;
    const unsigned char *ok, *amb, *stable;
    const double *mode_re, *mode_im, *trace, *det;
    const double *mode_disc;      /* total x n_modes: each point pair's discriminant
                                     (el_boot_match_discriminants), NaN for real modes;
                                     NULL when the run keeps none */
    double duration_s;            /* the log's length in time (pairs x dt), for the
                                     form of a growing mode's bounds; 0: not known
                                     (percentile bounds for every mode) */
} el_boot_records;

/* Fills res (replicates, failed_replicates, ambiguous_matches, p_stable,
 * n_modes, bounds, lambda_re/im, and with a plane trace_samples, det_samples,
 * trace, determinant, discriminant and region_probability) from the
 * records of the replicates that gave a model, in replicate order (so the
 * thread count cannot change anything): two-sided percentile bounds at
 * level (el_boot_quantile), NaN for what the point mode does not have
 * (frequency at the Nyquist limit; Re, damping and decay of an
 * instantaneous mode). A possible repeated root: two real point modes
 * that are each other's nearest real mode in Re and are matched to one
 * and the same complex pair in at least EL_BOOT_REPEATED_TAIL x (1 - level)
 * of the replicates (and in one at least) get Re bounds that also hold
 * the percentile bounds of their mean (re_q + re_p) / 2 over the
 * replicates (decay rate and damping ratio
 * alike; repeated_root, repeated_partner, re_own): the bootstrap of
 * either root is not consistent at a double root, that of their mean is
 * (docs/uncertainty.md, "Repeated roots"). A point pair whose two slots
 * were two real roots in as many replicates (records->mode_disc given)
 * gets Re bounds that also hold those of the double root read through
 * its discriminant (a control variate: split_fraction, re_double_root,
 * double_root_slope). A real mode growing by more than
 * EL_BOOT_REFLECT_FROM e-foldings over records->duration_s gets basic
 * (reflected) Re and decay-rate bounds about the replicates' median,
 * blended by el_boot_reflect_weight (docs/uncertainty.md, "Bounds at a
 * Jordan block and on growing modes"). Point estimates, the matched
 * replicates and p_stable are not changed. Errors: EL_ERR_NUMERIC when
 * fewer than half of the replicates gave a model; EL_ERR_NOMEM. */
el_status el_boot_summarise(const el_boot_records *records, const el_modes *point,
                            double level, el_boot_result *res, el_error *err);

/* Adds one warning to w for each pair of modes whose bounds
 * el_boot_summarise widened for a possible repeated root (repeated_root):
 * which modes (numbered from 1, as in the reports), in what share of the
 * replicates they were one complex pair, and the bounds of their mean Re
 * that each mode's Re bounds now hold; for a point pair so widened, the
 * share of replicates in which it split into two reals and the double
 * root's bounds. Nothing when no bounds were widened or res holds no
 * bounds. Errors: EL_ERR_NOMEM. */
el_status el_boot_warn_repeated(const el_boot_result *res, el_warnings *w, el_error *err);

/* Judging a coverage study (bench/calibrate.c, tests/test_coverage.c):
 * of n independent logs, covered had the truth inside their nominal
 * bounds. el_boot_coverage_interval writes the exact (Clopper-Pearson)
 * two-sided interval at level (e.g. 0.95) of the true coverage to *lo and
 * *hi: the p at which P(X >= covered) and P(X <= covered) of a
 * binomial(n, p) are (1 - level) / 2 (0 and 1 at the ends; [0, 1] for n
 * = 0). el_boot_coverage_judge tests a nominal coverage against the
 * count: -1 when the count is too low for it (P(X <= covered) below
 * (1 - level) / 2 under binomial(n, nominal)), +1 when too high, 0 when
 * consistent (nominal inside the interval) or n = 0. el_boot_coverage_chance
 * gives, for a method whose true coverage is exactly nominal, the chance
 * that n logs fall outside [band_lo, band_hi] (*out_band) and that the
 * judge rejects (*reject). Exact sums of binomial terms (lgamma); no
 * allocation; cannot fail. */
void el_boot_coverage_interval(size_t covered, size_t n, double level, double *lo,
                               double *hi);
int el_boot_coverage_judge(size_t covered, size_t n, double nominal, double level);
void el_boot_coverage_chance(size_t n, double nominal, double band_lo, double band_hi,
                             double level, double *out_band, double *reject);

#endif
