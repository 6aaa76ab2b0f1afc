/* el_subspace: data-driven block-Hankel subspace identification of the
 * output-only model x[t+1] = A x[t] + w[t], y[t] = C x[t] + v[t] (Van
 * Overschee & De Moor 1996, "Subspace Identification for Linear Systems",
 * Kluwer; Peeters & De Roeck 1999, "Reference-based stochastic subspace
 * identification for output-only modal analysis", Mech. Syst. Signal
 * Process. 13(6)), with a stabilisation analysis across model orders and
 * the per-block sums a block bootstrap needs. docs/subspace.md has the
 * method, its choices and the measured accuracy.
 *
 * Data: the channels centred by their means and divided by their standard
 * deviations (every channel weighs the same whatever its unit). With
 * horizon h (block rows, future and past alike) and p channels:
 *   future f_t = [y_t; y_t+1; ...; y_t+h-1]      (hp)
 *   past   p_t = [y_t-1; y_t-2; ...; y_t-h]      (hp)
 * over the one range t = h .. N - h (m = N - 2h + 1 windows), and
 *   H = (1/m) sum_t (f_t - fbar)(p_t - pbar)',
 * the window vectors centred by their own means over the range (then a
 * constant offset such as a transient's fixed point minus the window mean
 * drops out exactly, and no eigenvalue appears at 1 for it). Lag 0 never
 * enters H (the closest future/past samples are one step apart), so white
 * sensor noise does not bias it. Weighting (default: canonical variate
 * analysis, CVA): W1 = Sff^-1/2, W2 = Spp^-1/2 with Sff, Spp the centred
 * Grams (1/m) sum (f - fbar)(f - fbar)' and the same for the past
 * (pseudo-inverse roots: eigenvalues below 1e-10 of the largest are
 * dropped); unweighted: W1 = W2 = I. SVD W1 H W2 = U S V' (with CVA the
 * singular values are the canonical correlations of future and past); for
 * order n the observability matrix O = W1^-1 U_n S_n^(1/2), C = its first
 * block row, and A from shift invariance by least squares over h - 1
 * block rows: A = O_up^+ O_down (Householder QR, LAPACK dgels; no
 * pivoting). All orders come from the one SVD (nested columns of O). */
#ifndef EL_SUBSPACE_H
#define EL_SUBSPACE_H

#include <stddef.h>

#include "el_error.h"
#include "el_timebase.h"

/* Default cost cap of the automatic horizon: h * n_channels <= this. */
#define EL_SUBSPACE_MAX_ROWS 200
/* Default largest model order of the stabilisation analysis. */
#define EL_SUBSPACE_MAX_ORDER 30

/* Weighting of the block Hankel before its SVD. */
typedef enum {
    EL_SUBSPACE_UNWEIGHTED = 0,   /* SVD of H itself */
    EL_SUBSPACE_CVA = 1           /* canonical variate analysis: SVD of
                                     Sff^-1/2 H Spp^-1/2 (singular values =
                                     canonical correlations), O = Sff^1/2 U S^1/2 */
} el_subspace_weighting;

/* The mean autocorrelation the automatic horizon reads, computed once per
 * series and shared by every choice of the horizon on that series (auto's
 * choice of estimator, the hankel and iv preparations): the mean over the
 * channels of r_c(k), k = 0 .. lags. Tied to one series by its values
 * pointer and sizes; valid only while that series' values are unchanged. */
typedef struct el_subspace_acf {
    const double *values;  /* the series it was computed from (identity) */
    size_t n_samples, n_channels;
    size_t lags;           /* r[0 .. lags] */
    int unusable;          /* 1: a channel is constant or not finite */
    double *r;             /* lags + 1 (owned) */
    size_t capacity;       /* doubles allocated at r */
    struct el_subspace_kept *kept;   /* owned: a stage run on this series, kept
                                        for its next run (el_subspace_keep) */
} el_subspace_acf;

typedef struct {
    const el_subspace_acf *acf;   /* NULL, or the mean autocorrelation of exactly
                                     the series passed (el_subspace_acf_compute):
                                     the automatic horizon then reads it instead
                                     of computing it; the same h bit for bit */
    double horizon_time;   /* future = past horizon in the series' time unit;
                              0 = automatic (el_subspace_choose_horizon) */
    int crossing_test;     /* 1: rule (b) of the automatic horizon counts a zero
                              crossing only when its lobe is EL_HORIZON_LOBE_SE
                              standard errors deep (iv's state); 0 (default): any
                              crossing counts (hankel's horizon and auto's choice,
                              whose sink logs need the longer horizon) */
    size_t max_rows;       /* automatic horizon: h * n_channels <= max_rows
                              (0 = EL_SUBSPACE_MAX_ROWS) */
    size_t max_order;      /* stabilisation up to this order (0 = default
                              EL_SUBSPACE_MAX_ORDER), lowered to (h-1) p / 2 */
    size_t order;          /* model order; 0 = automatic from stabilisation */
    double stab_freq_rel;  /* consecutive orders: natural frequency within (0.01) */
    double stab_damp_rel;  /* damping ratio within this relative (0.05) ... */
    double stab_damp_abs;  /* ... or this absolute difference (0.005) */
    double stab_mac_min;   /* shape correlation (MAC) at least (0.98) */
    size_t stab_min_run;   /* a mode is physical when it persists over at
                              least this many consecutive orders (5) */
    el_subspace_weighting weighting;   /* default EL_SUBSPACE_CVA */
    double stab_min_share; /* a physical pole also carries at least this share
                              of its order's modal contributions (0.003) */
} el_subspace_options;

/* Fills opt with the defaults above. opt must not be NULL. Can't fail. */
void el_subspace_defaults(el_subspace_options *opt);

/* The automatic horizon and why. */
typedef struct {
    size_t rows;           /* h, block rows of the future and of the past */
    double time;           /* h dt, series time unit */
    size_t scale_lags;     /* the data's slowest time scale seen (samples) */
    int capped;            /* 1: the cost cap or the record length set h */
    size_t crossing_lags;  /* the autocorrelation's first zero crossing (lag;
                              0: none seen, or a manual horizon) */
    double crossing_se;    /* depth of its negative lobe in standard errors
                              of r (Bartlett); rule (b) counts the crossing
                              from 3 on */
    char reason[400];      /* one sentence for a report */
} el_subspace_horizon;

/* Chooses the horizon h. Manual (opt->horizon_time > 0): h =
 * round(horizon_time / dt). Automatic: from the mean over the channels of
 * their autocorrelations r(k), k = 0 .. L (L = the cost cap + 1), the
 * slowest time scale seen is the larger of (a) the first lag at which the
 * envelope max_{k' >= k} |r(k')| falls below 1/e (the correlation time of
 * the least damped mode) and (b) four times the first zero crossing of r
 * (about one period of the dominant slow oscillation), with
 * opt->crossing_test only when the negative lobe after it reaches 3
 * standard errors of r below zero (Bartlett's formula; a shallower lobe is
 * the noise of a positive, decaying r and is reported in
 * out->crossing_lags / crossing_se, not counted); h is that many
 * samples, capped at max_rows / n_channels. Either way h is raised to
 * h_min = max(3, 1 + ceil(24 / p)) (24 rows in the shift equations: room
 * for orders up to 12) and must leave m >= 4 h p windows (automatic: lowered to
 * that; manual: an error). Errors: EL_ERR_INTERNAL for NULL arguments;
 * EL_ERR_DATA when a channel is constant or the record is too short even
 * for h_min (hint: a longer window); EL_ERR_USAGE (option "--horizon")
 * when a manual horizon leaves too few windows. */
el_status el_subspace_choose_horizon(const el_series *series,
                                     const el_subspace_options *opt,
                                     el_subspace_horizon *out, el_error *err);

/* Computes into acf (whose r is reused or grown; zero-initialise it before
 * the first call) the mean autocorrelation of series at the lags an
 * automatic horizon with at most max_rows rows (0 = EL_SUBSPACE_MAX_ROWS)
 * reads; any smaller max_rows reads a prefix of it. A constant or
 * non-finite channel is recorded (acf->unusable), not an error: the
 * horizon's choice reports it. Errors: EL_ERR_INTERNAL for NULL arguments,
 * EL_ERR_NOMEM. */
el_status el_subspace_acf_compute(const el_series *series, size_t max_rows,
                                  el_subspace_acf *acf, el_error *err);

/* Frees acf->r and any stage it keeps, and clears acf; NULL is fine. */
void el_subspace_acf_free(el_subspace_acf *acf);

/* One pole of the stabilisation analysis (a complex pair is one pole,
 * Im lambda > 0 shown; a real eigenvalue is a pole of its own). */
typedef struct {
    size_t order;          /* model order it belongs to */
    double mu_re, mu_im;   /* discrete eigenvalue */
    double lambda_re, lambda_im;  /* ln(mu) / dt */
    double frequency_hz;   /* damped: lambda_im / 2 pi (per time unit) */
    double natural_hz;     /* |lambda| / 2 pi */
    double damping_ratio;  /* -Re lambda / |lambda| (NaN when lambda = 0 or not finite) */
    int stable;            /* 1: matches a pole of order - 1 by the criteria */
    double contribution;   /* share of the order's modal contributions to
                              the (weighted) block Hankel (a pair counts
                              both members), 0..1 */
    int physical;          /* 1: on a chain of >= stab_min_run consecutive
                              orders and contribution >= stab_min_share */
    size_t chain;          /* chain id (poles linked across consecutive orders) */
    size_t shape_offset;   /* its shape: shape_re/im[shape_offset + c], c < p */
} el_subspace_pole;

/* The result of el_subspace_execute. Every array belongs to the plan and
 * stays valid until the next execute on that plan or its destruction. */
typedef struct {
    size_t n_channels, horizon, n_windows;
    double dt;
    const double *channel_mean;    /* p */
    const double *channel_scale;   /* p: standard deviations */
    size_t n_singular;             /* h p */
    const double *singular;        /* of W1 H W2, descending (CVA: the canonical
                                      correlations of future and past) */
    size_t max_order;              /* stabilisation ran for orders 1 .. max_order */
    size_t order;                  /* chosen (0: no persistent mode found and
                                      no order given: a, c are empty) */
    int order_was_auto;
    size_t n_physical;             /* physical modes (distinct chains) */
    const double *a;               /* order x order, column-major */
    const double *c_scaled;        /* p x order: C for the scaled channels */
    const double *c_raw;           /* p x order: diag(channel_scale) C */
    size_t n_poles;                /* all orders */
    const el_subspace_pole *poles; /* order 1 first; within an order, dgeev order */
    const double *shape_re, *shape_im;  /* C phi in scaled units, largest
                                           magnitude 1 with phase 0 */
    size_t first_pole, n_order_poles;   /* the chosen order's poles */
} el_subspace_result;

typedef struct el_subspace_plan el_subspace_plan;

/* Sizes and allocates everything for records of up to max_samples samples
 * of n_channels channels with horizon h (from el_subspace_choose_horizon)
 * and stabilisation up to max_order (0: EL_SUBSPACE_MAX_ORDER; lowered to
 * (h - 1) n_channels / 2: orders near the row count of the shift
 * equations fit the noise, with poles near the unit circle that can
 * persist across orders). Execute, block sums and replicate solves then
 * allocate nothing. *out is NULL on error. Errors: EL_ERR_INTERNAL for
 * NULL out, n_channels == 0, h < 2 or max_samples < 2 h + 1;
 * EL_ERR_NUMERIC when a LAPACK workspace query fails; EL_ERR_NOMEM. */
el_status el_subspace_plan_create(size_t n_channels, size_t max_samples,
                                  size_t horizon, size_t max_order,
                                  el_subspace_plan **out, el_error *err);

/* Frees the plan. NULL is a no-op. */
void el_subspace_plan_destroy(el_subspace_plan *plan);

/* Identifies the model of series (n_channels as the plan, n_samples <=
 * the plan's and >= 2 h + 1): scales the channels, accumulates H (and the
 * Grams for CVA), the SVD, the models of orders 1 .. max_order with their
 * poles, the stabilisation labels, the order (opt->order, or automatic:
 * the smallest order at which the largest number of physical poles is
 * present at once; 0 when no pole is physical: no model from nothing) and
 * that order's A and C. Stabilisation: a pole of order n is stable when a
 * pole of order n - 1 of the same kind (pair or real) matches it within
 * stab_freq_rel in natural frequency, max(stab_damp_rel relative,
 * stab_damp_abs) in damping ratio and stab_mac_min in MAC of the scaled
 * shapes (one to one, nearest frequency first); matched poles form
 * chains; a pole is physical when its chain spans >= stab_min_run orders
 * (or reaches the last order that has a model when the orders above it
 * have none: exact data) and its modal contribution (the Frobenius norm of its part of H in the
 * scaled channels, as a share of its order's total) is >= stab_min_share.
 * opt NULL = defaults (the horizon fields are not read: the plan has the
 * horizon). Keeps the scaled data, the weights and the projection of the
 * past V2 = W2 V_nv (hp x n_v, V the leading right singular vectors; n_v
 * as el_subspace_sum_doubles) for el_subspace_block_sums. Errors: EL_ERR_INTERNAL for NULL or mismatched
 * arguments; EL_ERR_DATA for a constant or non-finite channel;
 * EL_ERR_USAGE (option "--order") for an order above max_order;
 * EL_ERR_NUMERIC when LAPACK fails or the order's shift equations are
 * rank deficient. */
el_status el_subspace_execute(el_subspace_plan *plan, const el_series *series,
                              const el_subspace_options *opt,
                              el_subspace_result *result, el_error *err);

/* After an execute: the model of another order (1 <= order <= max_order)
 * from the same SVD: A and C of that order (result->a, c_scaled, c_raw
 * overwritten) and result->order, first_pole, n_order_poles set to it;
 * the poles and their labels (all orders) are unchanged. Used to take the
 * lowest order that holds a chosen set of physical modes. Errors:
 * EL_ERR_INTERNAL before an execute or for an order out of range;
 * EL_ERR_NUMERIC when that order's shift equations are rank deficient. */
el_status el_subspace_set_order(el_subspace_plan *plan, size_t order,
                                el_subspace_result *result, el_error *err);

/* A stage run twice on one series (hankel's preparation runs the stage
 * to size the model's lags, and its fit then runs the same stage again)
 * is kept in between by the series' shared autocorrelation, which is tied
 * to that series. el_subspace_keep hands an executed plan (with its result
 * and horizon; horizon_time and order the options it ran with) to acf and
 * returns 1: acf then owns the plan (a stage kept before is destroyed).
 * It returns 0 and keeps nothing when acf is NULL, is not series'
 * (el_subspace_acf_compute of exactly this series) or has no room (its
 * record could not be allocated): the caller still owns the plan.
 * el_subspace_take gives back a stage kept for exactly this series and
 * these options (returns 1; the caller owns *plan, and the result is set
 * back to the order the execute chose, as if just executed) or returns 0
 * and changes nothing. el_subspace_drop_kept destroys a kept stage (NULL
 * or none: nothing). The stage is the same bit for bit as a new execute on
 * the unchanged series: valid only while series' values are unchanged,
 * like acf itself; el_subspace_acf_compute drops it. Can't fail. */
int el_subspace_keep(const el_subspace_acf *acf, const el_series *series,
                     double horizon_time, size_t order, el_subspace_plan *plan,
                     const el_subspace_result *result, const el_subspace_horizon *hz);
int el_subspace_take(const el_subspace_acf *acf, const el_series *series,
                     double horizon_time, size_t order, el_subspace_plan **plan,
                     el_subspace_result *result, el_subspace_horizon *hz);
void el_subspace_drop_kept(const el_subspace_acf *acf);

/* Length of one block-sum record (doubles) for the plan after its last
 * execute: 1 + hp + n_v + hp n_v, with n_v the weighted past directions a
 * record carries: all hp of them when hp >= 0.5 sqrt(windows) (the
 * left-out directions' noise, of second order, is then not small) and
 * hp * hp <= EL_SUBSPACE_MAX_ROWS * EL_SUBSPACE_MAX_ORDER (a record no
 * larger than the largest automatic plan's); else the plan's max_order.
 * With all hp a replicate redoes the whole SVD of its weighted block
 * Hankel. Before any execute: the max_order size. */
size_t el_subspace_sum_doubles(const el_subspace_plan *plan);

/* The bootstrap's additive features over the windows t_begin <= w < t_end
 * (window w is t = h + w; 0 <= t_begin <= t_end <= n_windows of the last
 * execute), with g_w = V2' p_w (V2 = W2 V of el_subspace_execute, p_w the
 * scaled past, in the plan's internal row order): sum[0] = count, then
 * sum f_w (hp), then sum g_w (n_v), then sum f_w g_w' (hp x n_v,
 * column-major). Adding the records of several runs gives the record of
 * their union (with weights: a weighted sum), so a block bootstrap sums
 * the records of its drawn blocks. sum has el_subspace_sum_doubles(plan)
 * doubles and is overwritten. Errors: EL_ERR_INTERNAL without a previous
 * execute or for a bad range. */
el_status el_subspace_block_sums(const el_subspace_plan *plan, size_t t_begin,
                                 size_t t_end, double *sum, el_error *err);

/* Doubles of workspace el_subspace_replicate_solve needs (for any execute
 * of the plan). */
size_t el_subspace_replicate_work(const el_subspace_plan *plan);

/* A replicate's model of the given order (1 <= order <= max_order) from a
 * (weighted) sum of block-sum records: the centred cross-product
 * Hv = (S_fg - sum_f sum_g' / count) / count (= H W2 V over those
 * windows), the SVD of W1 Hv = U S W' (the point estimate's weights, kept
 * fixed across replicates), O = W1^-1 U_n S_n^(1/2), A = O_up^+ O_down,
 * and A's eigenvalues. With the records of all windows once this is the
 * point estimate (W1 H W2 V = U S on the point data: the same singular
 * values and vectors up to sign, so the same A up to a diagonal sign
 * similarity and the same eigenvalues to rounding). Outputs: a (order x
 * order, column-major), mu_re and mu_im (order each, dgeev order); each may be
 * NULL. work: el_subspace_replicate_work(plan) doubles (caller-owned, so
 * threads may share one plan with their own work). Returns EL_OK;
 * EL_ERR_INTERNAL for bad arguments; EL_ERR_NUMERIC when the count is not
 * positive, LAPACK fails or the shift equations are rank deficient (the
 * replicate is then dropped); EL_ERR_INTERNAL also before any execute.
 * err may be NULL (hot loop). */
el_status el_subspace_replicate_solve(const el_subspace_plan *plan, const double *sum,
                                      size_t order, double *a, double *mu_re,
                                      double *mu_im, double *work, el_error *err);

#endif
