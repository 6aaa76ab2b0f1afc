/* el_model: the local linear model z[k+1] = Ad z[k] + B u[k] + c (el_model),
 * the fit options, and the pieces every estimator shares: the fit's
 * workspace (el_fit_plan: centred scaled snapshots, their SVD, inputs),
 * the rank rules and the full-state model of a reduced one. Below the
 * estimator interface (el_estimator.h) and the estimators; el_fit drives
 * them. */
#ifndef EL_MODEL_H
#define EL_MODEL_H

#include <stddef.h>

#include "el_error.h"
#include "el_timebase.h"

struct el_subspace_acf;   /* el_subspace.h */

/* Estimators (docs/method-estimators.md; el_est_common.h for the details):
 * ls  affine least squares / exact DMD (Tu et al. 2014); with inputs DMD
 *     with control (Proctor, Brunton & Kutz 2016);
 * fb  forward-backward DMD (Dawson, Hemati, Williams & Rowley 2016);
 * tls total-least-squares DMD (Hemati, Rowley, Deem & Cattafesta 2017);
 * iv  instrumental variables with lagged measurements as instruments
 *     (Soderstrom & Stoica 1983); takes inputs;
 * ssi covariance-driven stochastic subspace identification (Van Overschee
 *     & De Moor 1996; Peeters & De Roeck 1999);
 * hankel data-driven block-Hankel subspace identification with CVA
 *     weighting, an automatic horizon in time and the model order from
 *     stabilisation across orders (el_subspace.h, el_est_hankel.h). */
typedef enum {
    EL_METHOD_LS = 0,
    EL_METHOD_FB = 1,
    EL_METHOD_TLS = 2,
    EL_METHOD_IV = 3,
    EL_METHOD_SSI = 4,
    EL_METHOD_HANKEL = 5
} el_method;

#define EL_METHOD_COUNT 6
/* ls .. ssi: the estimators of lagged snapshot pairs (a pair provider each). */
#define EL_METHOD_PAIR_COUNT 5

/* Rank options: a positive rank, or
 *   EL_RANK_FULL (the default): every state for ls, fb and tls; iv and ssi
 *     keep the directions the rank test of the canonical correlations
 *     supports;
 *   EL_RANK_AUTO (--rank auto): the hard threshold (ls) or the rank test;
 *   EL_RANK_ALL (--rank full given): every state with every method (capped
 *     at the numerical rank), with a warning when the rank test supports
 *     fewer. */
#define EL_RANK_FULL 0L
#define EL_RANK_AUTO (-1L)
#define EL_RANK_ALL (-2L)

typedef struct {
    size_t lags;              /* K delay copies: state z[k] = [x[k]; x[k-1]; ...; x[k-K]] */
    long rank;                /* r > 0, EL_RANK_FULL, EL_RANK_AUTO or EL_RANK_ALL (ls: Gavish & Donoho
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
    double horizon_time;      /* hankel: future = past horizon in the series' time unit
                                 (--horizon); 0 = automatic (el_subspace_choose_horizon) */
    size_t order;             /* hankel: model order of the subspace stage (--order);
                                 0 = automatic from the stabilisation across orders */
    const struct el_subspace_acf *acf;  /* NULL, or the mean autocorrelation of exactly
                                 the series fitted (el_subspace_acf_compute), which the
                                 hankel and iv preparations' automatic horizon then
                                 read instead of computing it again (hankel's plan
                                 keeps the pointer: it must outlive the plan; it is
                                 read only while it is the fitted series', by its
                                 values pointer and sizes); borrowed */
} el_fit_options;

/* Fills opt with the defaults: no lags, full rank, least squares, depth
 * by the rule above, no inputs. */
void el_fit_defaults(el_fit_options *opt);

/* One pole of the subspace stage's stabilisation across model orders
 * (hankel only; el_subspace_pole has the full record). A complex pair is
 * one pole (frequency > 0 shown); a real eigenvalue is one pole. */
typedef struct {
    size_t order;             /* model order it belongs to (1 .. max order) */
    double frequency_hz;      /* damped frequency Im lambda / 2 pi (per time unit of
                                 the series); NaN at the Nyquist limit */
    double natural_hz;        /* |lambda| / 2 pi; NaN at the Nyquist limit */
    double damping_ratio;     /* -Re lambda / |lambda|; NaN when undefined */
    double contribution;      /* share of its order's modal contributions, 0..1 */
    int stable;               /* 1: matches a pole of order - 1 (frequency, damping,
                                 shape: the stabilisation criteria) */
    int physical;             /* 1: persistent (a chain over enough consecutive orders,
                                 with a large enough contribution); 0: spurious */
    int in_model;             /* 1: its chain is one of the modes the model kept */
    size_t chain;             /* chain id: poles matched across consecutive orders
                                 share it (ids are not ordered) */
} el_model_pole;

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
    size_t tested_rank;       /* iv/ssi: the rank the test of the canonical correlations
                                 supports, also when --rank sets another (0: no test) */
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
                                 covariance (iv, ssi; see el_est_common.h) */
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
    /* hankel only (0 otherwise): the subspace stage's model order (all its
     * poles, physical or not; rank counts the physical eigenvalues kept),
     * its horizon in block rows and in time, and its count of physical
     * modes. */
    size_t subspace_order, subspace_rows, subspace_physical;
    double subspace_horizon_time;
    /* hankel only: every pole of the stabilisation across orders 1 ..
     * subspace_max_order, order 1 first (within an order, the stage's
     * order), for the reports. Allocated by the hankel fit (capacity
     * subspace_poles_cap, reused when the model is refilled); NULL and 0
     * otherwise. */
    size_t subspace_max_order, subspace_n_poles, subspace_poles_cap;
    el_model_pole *subspace_poles;
} el_model;

/* Frees everything the model owns and zeroes it. NULL is a no-op. */
void el_model_free(el_model *model);

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

/* The workspace of a fit (el_fit_plan_create sizes it, el_fit_plan_execute
 * fills it window after window). Its fields are public for the estimators
 * (el_estimator.h). No matrix of the window's length is kept: the centred
 * scaled snapshots [X' U' Y'] (pairs in rows) are built a chunk of rows at
 * a time from the series and reduced by a chunked (tall-skinny) Householder
 * QR to their triangular factor rfac, whose leading d x d block R_x has the
 * singular values and right singular vectors of X' (X' = Q_x R_x). When an
 * estimator's fit runs: svd_vt holds the right singular vectors' of X' (U'
 * of X), svd_ur the left ones of R_x (the left singular vectors of X' are
 * Q_x svd_ur), rfac the factor (with Y' and U' only for the estimators that
 * regress on them, ls), xmean/ymean/umean the means; bred receives the
 * reduced B (rank x n_inputs) of an estimator that takes inputs.
 * Everything else is the fit's own. */
struct el_fit_plan {
    size_t n_samples, n_channels, lags, state_dim, n_pairs, n_inputs;
    long rank_opt;
    el_method method;
    const struct el_estimator_type *type; /* the method's estimator */
    void *est;                 /* its private workspace (type->plan_create) */
    const el_series *inputs;   /* from the options (el_fit_plan_execute) */
    double *umean;     /* n_inputs: means of the scaled inputs u[k], k = K..N-2 */
    double *bred;      /* d x n_inputs: B in basis coordinates */
    size_t rcols;      /* columns of rfac: d, or 2 d + n_inputs for [X' U' Y'] */
    double *rfac;      /* rcols x rcols upper triangle R of [X' (U' Y')] = Q R */
    double *svd_vt;    /* d x d: right singular vectors' of X' = U' of X */
    double *svd_ur;    /* d x d: left singular vectors of R_x */
    double *yv;        /* d x d: Yc V_r (ls) */
    size_t chunk_rows; /* rows of snapshots built at a time */
    double *qr_buf;    /* (rcols + chunk_rows) x rcols: R stacked over a chunk */
    double *qr_tau;    /* rcols */
    double *qr_work;
    int qr_lwork;
    double *chunk;     /* chunk_rows x (2 d + n_inputs): a chunk of [X' U' Y'] */
    double *chunk_res; /* chunk_rows x n_channels: its lag-0 residuals */
    double *stats;     /* 3 n_channels: residual and total sums of squares, offsets */
    double *xmean, *ymean;
    double *lu;        /* d x d: I - Ad_s, then its LU factors */
    double *rhs;       /* d */
    double *con_work;  /* 4 d (dgecon) */
    int *ipiv;         /* d (LAPACK integers: el_fit.c checks they are int) */
    int *iwork;        /* 8 d (dgesdd; dgecon needs d) */
    double *work;
    int lwork;
};
typedef struct el_fit_plan el_fit_plan;

/* The rank rule of ls, fb and tls: from plan->rank_opt and the singular
 * values in m (full, the Gavish-Donoho hard threshold for auto, or as
 * given), never above the numerical rank (singular values above 1e-7 of
 * the largest and above max(pairs, d) eps times it), with a warning when
 * the rank is lowered or truncated. Sets m->rank and m->rank_was_auto.
 * EL_ERR_DATA when the snapshots do not vary; EL_ERR_NOMEM for a warning. */
el_status el_fit_choose_rank(el_fit_plan *plan, el_model *m, el_warnings *w,
                             el_error *err);

/* m->basis = the leading m->rank left singular vectors of X (from
 * plan->svd_vt). Can't fail. */
void el_fit_svd_basis(el_fit_plan *plan, el_model *m);

/* The full-state model of a reduced one (m->basis, m->a_reduced and, with
 * inputs, plan->bred): lift = U_r A_r, Ad_s = lift U_r', B_s = U_r B_r and
 * c_s = mean(Y) - Ad_s mean(X) - B_s mean(U); zero_offset: c_s = 0 (a
 * stationary signal whose operating point is the channel mean). Can't
 * fail. */
void el_fit_projected_model(el_fit_plan *plan, el_model *m, int zero_offset);

#endif
