/* el_fit: the local linear model z[k+1] = Ad z[k] + B u[k] + c fitted to
 * snapshot pairs of a uniform series (affine least squares / exact DMD with
 * rank truncation, DMD with control, and the noise-robust estimators of
 * el_estimators), its fixed point, and one-step fit statistics. */
#ifndef EL_FIT_H
#define EL_FIT_H

#include <stddef.h>

#include "el_error.h"
#include "el_timebase.h"

/* Estimators (docs/method-estimators.md; el_estimators.h for the details):
 * ls  affine least squares / exact DMD (Tu et al. 2014); with inputs DMD
 *     with control (Proctor, Brunton & Kutz 2016);
 * fb  forward-backward DMD (Dawson, Hemati, Williams & Rowley 2016);
 * tls total-least-squares DMD (Hemati, Rowley, Deem & Cattafesta 2017);
 * iv  instrumental variables with lagged measurements as instruments
 *     (Soderstrom & Stoica 1983); takes inputs;
 * ssi covariance-driven stochastic subspace identification (Van Overschee
 *     & De Moor 1996; Peeters & De Roeck 1999). */
typedef enum {
    EL_METHOD_LS = 0,
    EL_METHOD_FB = 1,
    EL_METHOD_TLS = 2,
    EL_METHOD_IV = 3,
    EL_METHOD_SSI = 4
} el_method;

#define EL_METHOD_COUNT 5

#define EL_RANK_FULL 0L
#define EL_RANK_AUTO (-1L)

typedef struct {
    size_t lags;              /* K delay copies: state z[k] = [x[k]; x[k-1]; ...; x[k-K]] */
    long rank;                /* r > 0, EL_RANK_FULL or EL_RANK_AUTO (ls: Gavish & Donoho
                                 2014; fb, tls: the test of the canonical correlations of
                                 iv and ssi when the record allows it); iv and ssi take
                                 the test's rank for FULL and AUTO alike */
    el_method method;
    size_t depth;             /* iv, ssi: block rows of past measurements x[k-K-1..k-K-depth]
                                 in the instrument / block-Hankel step; 0 = K + 1 (a square
                                 block Hankel: as many past as present block rows) */
    const el_series *inputs;  /* measured inputs u (--input), NULL = none: a series on the
                                 same grid (n_samples equal) whose channels enter as
                                 z[k+1] = Ad z[k] + B u[k] + c; ls and iv only. Read by
                                 el_fit and el_fit_plan_execute; must outlive the plan */
} el_fit_options;

/* Fills opt with the defaults: no lags, full rank, least squares, depth
 * by the rule above, no inputs. */
void el_fit_defaults(el_fit_options *opt);

/* Short name of a method as the command line spells it ("ls", "fb", "tls",
 * "iv", "ssi"); "?" for a value outside the enum. Never NULL. */
const char *el_method_name(el_method m);

/* The method's name for people ("instrumental variables", ...). Static
 * text, never NULL. */
const char *el_method_description(el_method m);

/* Parses a method name as written after --method (exact, lower case).
 * Returns EL_OK and sets *m, or EL_ERR_USAGE (option "--method", hint
 * listing the names) for an unknown name. */
el_status el_method_parse(const char *text, el_method *m, el_error *err);

/* The fitted model. Coordinates: channel c is scaled as
 * s_c = (x_c - channel_mean[c]) / channel_scale[c] (equal variance for the
 * fit); the state stacks the scaled channels at lags 0..K (state index
 * j*n_channels + c is channel c at lag j). All matrices column-major.
 * channel_mean and channel_scale are the mean and the population standard
 * deviation (divisor n_samples) over the whole window. Snapshot pair p
 * (p = 0..n_pairs-1) is X column p = z[K + p], Y column p = z[K + p + 1].
 * Storage: every array is allocated for the largest rank (state_dim), so a
 * model can be refilled by el_fit_plan_execute without allocating; the
 * rank-dependent matrices use their leading part (basis and lift are
 * state_dim x rank with leading dimension state_dim, a_reduced is rank x
 * rank with leading dimension rank). */
typedef struct {
    size_t n_channels;
    size_t lags;
    size_t state_dim;         /* n_channels * (lags + 1) */
    size_t n_pairs;           /* snapshot pairs used */
    size_t rank;              /* rank used (== state_dim for a full-rank fit) */
    int rank_was_auto;        /* 1: rank chosen from the data (hard threshold, or the
                                 test of the canonical correlations) */
    el_method method;
    size_t depth;             /* past block rows used by the instrument step (iv, ssi;
                                 fb/tls with --rank auto); 0 when it did not run */
    size_t n_canonical;       /* number of canonical correlations below (0: not computed) */
    double *canonical_corr;   /* iv/ssi (and fb/tls with --rank auto): canonical
                                 correlations between the state z[k]
                                 and the past x[k-K-1..k-K-depth], descending (state_dim
                                 allocated; n_canonical used) */
    size_t n_inputs;          /* measured inputs (0 = none) */
    double *input_mean;       /* n_inputs, physical units (NULL without inputs) */
    double *input_scale;      /* n_inputs, physical units (standard deviation) */
    double *input_b_scaled;   /* state_dim x n_inputs: B in scaled coordinates */
    double *input_b;          /* state_dim x n_inputs: B in physical units (state unit per
                                 input unit); rows 0..n_channels-1 are the effect on the
                                 channels (ls: the lag rows are 0 to rounding) */
    double dt;                /* sample interval, table time units */
    double *channel_mean;     /* n_channels, physical units */
    double *channel_scale;    /* n_channels, physical units (standard deviation) */
    double *singular_values;  /* state_dim: of the centred, scaled snapshot matrix X */
    double *basis;            /* state_dim x rank, orthonormal: leading left singular vectors
                                 U_r of X (ls, fb, tls) or of the state-past cross-
                                 covariance (iv, ssi; see el_estimators.h) */
    double *a_reduced;        /* rank x rank: U_r' Ad_s U_r (eigenvalues = the model's mu) */
    double *lift;             /* state_dim x rank: ls: Yc V_r S_r^-1 (exact DMD modes =
                                 lift * W); other methods: U_r a_reduced (projected modes) */
    double *ad_scaled;        /* state_dim x state_dim: Ad in scaled coordinates */
    double *offset_scaled;    /* state_dim: c in scaled coordinates */
    double *ad;               /* state_dim x state_dim: Ad in physical units */
    double *offset;           /* state_dim: c in physical units */
    double *operating_point;  /* state_dim: z* = (I - Ad)^-1 (B u_mean + c), physical units
                                 (inputs held at their mean); ssi: the channel mean */
    int operating_point_ok;   /* 0 when I - Ad is singular to working precision */
    double rcond_i_minus_a;   /* reciprocal condition number of I - Ad (scaled) */
    double fit_r2;            /* one-step R^2 over all channels (lag-0 rows, scaled
                                 coordinates): 1 - sum SS_res / sum SS_tot */
    double *channel_r2;       /* n_channels: one-step R^2 per channel; NaN (null) when
                                 the channel does not vary over the fitted pairs */
    double *residual_rms;     /* n_channels: one-step residual RMS, physical units */
} el_model;

/* Fits the model to the series. Centres X (z[k], k = K..N-2) and Y (z[k+1])
 * by their means (affine least squares == regression of centred Y on
 * centred X), takes the thin SVD of the centred scaled X by LAPACK (an
 * orthogonal method, never normal equations), truncates to the rank asked
 * for (or the Gavish-Donoho threshold), and sets Ad = Yc V S^-1 U', c =
 * mean(Y) - Ad mean(X), z* = (I - Ad)^-1 c. Singular values at or below
 * max(n_pairs, state_dim) * DBL_EPSILON * the largest (the numpy lstsq
 * cut-off) are never inverted: the rank is lowered to the numerical rank
 * with a warning (linearly dependent channels or lags), so a full-rank fit
 * is the minimum-norm least-squares solution. Adds warnings for: I - Ad
 * near singular (rcond < 1e-8: an eigenvalue near 1), rank truncated, few
 * pairs per parameter (< 10 per coefficient of a row, common practice).
 * The operating point is not reported (operating_point_ok = 0, values 0)
 * when I - Ad is singular to working precision: rcond below 1e3 * state_dim
 * * DBL_EPSILON * cond(X_r), where rounding alone can move z* by more than
 * 0.1%.
 * Other methods (opt->method): fb and tls use the same basis U_r and rank
 * rule and replace the regression by their estimator in the reduced
 * coordinates; iv and ssi choose basis and rank from the canonical
 * correlations of the state with the past measurements; see el_estimators.h
 * for each estimator, its warnings and its failures. The reduced matrix is
 * computed exactly as the bootstrap provider of el_estimators.h would from
 * the reduced states, so a bootstrap replicate over all pairs reproduces it.
 * Inputs (opt->inputs, ls and iv): each input is scaled like a channel;
 * ls regresses Y on [X_r; U] (DMD with control, Proctor et al. 2016: exact
 * DMD when there is no input), B and c are reported in physical units and
 * the operating point holds the inputs at their mean.
 * Errors: EL_ERR_DATA when a channel or input is constant (std == 0 or
 * std <= 1e-12 |mean|; names it; hint: leave it out with --channels) or not
 * finite, an input is a linear combination of the state, the instruments
 * predict nothing (iv, ssi), or there are fewer snapshot pairs than
 * 2 * (state_dim + 1) (iv, ssi: fewer instrument windows; hint: longer
 * window, fewer lags); EL_ERR_USAGE (option "--rank", "--lags", "--method",
 * "--depth" or "--input") when rank > state_dim, rank < -1, the method is
 * unknown, depth is too large for the series, or inputs are given to a
 * method that takes none or do not match the series; EL_ERR_NUMERIC when
 * LAPACK fails or the estimator's system is singular (fb: backward model
 * not invertible or no real square root; tls: no total-least-squares
 * solution; iv/ssi: instruments too weak); EL_ERR_NOMEM. *model must be
 * zero-initialised or freed; on error it is left empty. */
el_status el_fit(const el_series *series, const el_fit_options *opt,
                 el_model *model, el_warnings *warnings, el_error *err);

/* Frees everything the model owns and zeroes it. NULL is a no-op. */
void el_model_free(el_model *model);

/* Plan for fitting many series of the same size with the same options
 * (tracking windows): sizes, checks and every LAPACK workspace (queried
 * with lwork = -1) are fixed at creation; execute allocates nothing when
 * it refills a model it filled before. Opaque. A plan may be used by one
 * thread at a time; separate plans are independent. */
typedef struct el_fit_plan el_fit_plan;

/* Creates a plan for series of n_samples x n_channels fitted with opt
 * (NULL = defaults) and stores it in *plan (NULL on error). The plan keeps
 * opt->inputs (a pointer: the input series must outlive the plan; use
 * el_fit_plan_execute_inputs to pass another window's inputs of the same
 * size). Errors as el_fit for the sizes and options: EL_ERR_DATA for too
 * few snapshot pairs, EL_ERR_USAGE for a bad rank, depth, method or
 * inputs, EL_ERR_DATA when the sizes exceed LAPACK's integer range,
 * EL_ERR_NOMEM. Free with el_fit_plan_destroy. */
el_status el_fit_plan_create(size_t n_samples, size_t n_channels,
                             const el_fit_options *opt, el_fit_plan **plan,
                             el_error *err);

/* Fits series (which must have the plan's n_samples and n_channels, else
 * EL_ERR_INTERNAL) into *model: a zero-initialised model is allocated, a
 * model filled before by this plan or another of the same sizes is
 * overwritten in place without allocating. Same results, warnings and
 * errors as el_fit. On error the model keeps its allocation with
 * unspecified contents (refill or free it). */
el_status el_fit_plan_execute(el_fit_plan *plan, const el_series *series,
                              el_model *model, el_warnings *warnings,
                              el_error *err);

/* As el_fit_plan_execute, with the measured inputs of this window (same
 * n_samples as series, as many channels as the plan's inputs; NULL only
 * when the plan has none). EL_ERR_INTERNAL when the sizes differ. */
el_status el_fit_plan_execute_inputs(el_fit_plan *plan, const el_series *series,
                                     const el_series *inputs, el_model *model,
                                     el_warnings *warnings, el_error *err);

/* Frees the plan. NULL is a no-op. */
void el_fit_plan_destroy(el_fit_plan *plan);

/* Optimal hard threshold rank (Gavish & Donoho 2014, unknown noise level):
 * tau = omega(beta) * median(sv), beta = rows/cols (<= 1) of the matrix the
 * singular values sv[0..n) (descending) came from; returns the number of
 * singular values above tau (at least 1; 0 only when n == 0). */
size_t el_fit_hard_threshold_rank(const double *sv, size_t n, size_t rows,
                                  size_t cols);

/* The paper's cubic approximation of the threshold coefficient for an
 * unknown noise level, omega(beta) = 0.56 beta^3 - 0.95 beta^2 + 1.82 beta
 * + 1.43, with beta = min/max of the matrix dimensions in (0, 1]. */
double el_fit_hard_threshold_omega(double beta);

#endif
