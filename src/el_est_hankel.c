/* el_est_hankel: the data-driven block-Hankel subspace stage (el_subspace.h:
 * CVA weighting, automatic horizon in time, model order from the
 * stabilisation across orders) as an estimator behind el_estimator_type,
 * with a block bootstrap of its own built from the stage's per-block sums.
 *
 * The model. The stage gives A (order x order) and C (channels x order) of
 * x[t+1] = A x[t], y[t] = C x[t] in the scaled channels. Only the poles the
 * stabilisation labels physical are kept (all of them when --order is
 * given): their real modal blocks give A_p (n_k x n_k) and C_p = C T. The
 * fit's state is the lagged measurement z[k] = [y_k; ...; y_k-K], which a
 * noise-free realisation maps from x[k] by G = [C_p; C_p A_p^-1; ...;
 * C_p A_p^-K]; with G = Q R (QR) the basis is Q and the reduced matrix
 * R A_p R^-1 (the same eigenvalues), so the projected mode Q R phi = G phi
 * has C_p phi, the subspace shape, in its lag-0 rows, the one-step
 * predictor is C_p A_p G^+ z[k] and the fixed point is the channel mean (a
 * stationary signal, as for ssi). The prepare hook sets the lags K to the
 * fewest with (K + 1) channels >= n_k, so the data are read twice (once
 * for the order, once for the fit): the point fit costs two stage runs. */
#include "el_estimator.h"
#include "el_hankel_keep.h"
#include "el_modes.h"
#include "el_resample.h"
#include "el_stats.h"
#include "el_subspace.h"

#include <cblas.h>
#include <lapacke.h>
#include <math.h>
#include <pthread.h>
#include <stdatomic.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <unistd.h>

/* Most cells (runs of consecutive windows whose block sums are stored) of
 * the bootstrap: a replicate sums at most this many records whatever the
 * log length (the same cap as EL_BOOT_MAX_BLOCKS for the engine). */
#define HK_MAX_CELLS 400

/* Fewest blocks of one replicate the automatic block length aims at
 * (auto_block). A rule of thumb of ours. */
#define HK_MIN_BLOCKS 20

/* One run of the subspace stage. */
typedef struct {
    el_subspace_plan *plan;
    el_subspace_result res;
    el_subspace_horizon hz;
} hk_stage;

static void stage_free(hk_stage *s)
{
    el_subspace_plan_destroy(s->plan);
    memset(s, 0, sizeof *s);
}

static el_status stage_run(const el_series *series, double horizon_time, size_t order,
                           const el_subspace_acf *acf, hk_stage *out, el_error *err)
{
    memset(out, 0, sizeof *out);
    /* The same stage kept from the preparation (el_subspace_keep). */
    if (el_subspace_take(acf, series, horizon_time, order, &out->plan, &out->res, &out->hz))
        return EL_OK;
    el_subspace_options o;
    el_subspace_defaults(&o);
    o.horizon_time = horizon_time;
    o.order = order;
    o.acf = acf;   /* the series' autocorrelation when the caller has it */
    el_status st = el_subspace_choose_horizon(series, &o, &out->hz, err);
    if (st == EL_OK)
        st = el_subspace_plan_create(series->n_channels, series->n_samples, out->hz.rows,
                                     o.max_order, &out->plan, err);
    if (st == EL_OK)
        st = el_subspace_execute(out->plan, series, &o, &out->res, err);
    if (st != EL_OK)
        stage_free(out);
    return st;
}

/* The poles kept: with the order given, all of that order's; automatic:
 * the chains el_hankel_keep_chains keeps, at the lowest order that holds
 * them all (el_subspace_set_order). Writes the kept poles' indices (into
 * the model order's poles) to keep and returns their count (0: none);
 * *n_eig receives their eigenvalue count. */
static size_t kept_poles(hk_stage *s, size_t *keep, size_t *n_eig, el_error *err)
{
    el_subspace_result *res = &s->res;
    *n_eig = 0;
    if (res->order == 0)
        return 0;
    size_t chains[EL_HANKEL_KEEP_MAX], n_chains = 0;
    if (res->order_was_auto) {
        size_t lowest = 0, e = 0;
        n_chains = el_hankel_keep_chains(res, chains, &lowest, &e);
        if (n_chains == 0)
            return 0;
        if (lowest != res->order && el_subspace_set_order(s->plan, lowest, res, err) != EL_OK)
            return 0;
    }
    size_t nk = 0;
    for (size_t k = 0; k < res->n_order_poles; k++) {
        const el_subspace_pole *q = &res->poles[res->first_pole + k];
        int take = !res->order_was_auto;
        for (size_t c = 0; !take && c < n_chains; c++)
            take = q->chain == chains[c];
        if (!take)
            continue;
        keep[nk++] = k;
        *n_eig += q->mu_im > 0.0 ? 2 : 1;
    }
    return nk;
}

static el_status no_mode_error(el_error *err)
{
    el_error_set(err, EL_ERR_NUMERIC,
                 "hankel: no mode persists across model orders: the log shows no "
                 "dynamics the subspace stage can tell from noise");
    el_error_option(err, "--method");
    el_error_hint(err, "check the window (--from/--to), give --order N, or use "
                       "--method iv");
    return EL_ERR_NUMERIC;
}

/* Lags for n_eig eigenvalues of p channels: the fewest with (K + 1) p >= n. */
static size_t lags_for(size_t n_eig, size_t p)
{
    return n_eig > p ? (n_eig + p - 1) / p - 1 : 0;
}

static el_status hankel_prepare(const el_series *series, el_fit_options *opt, el_error *err)
{
    if (series == NULL || opt == NULL)
        return el_error_set(err, EL_ERR_INTERNAL, "hankel: NULL argument");
    if (opt->inputs != NULL)
        return EL_OK; /* the fit reports that hankel takes no inputs */
    hk_stage s;
    el_status st = stage_run(series, opt->horizon_time, opt->order, opt->acf, &s, err);
    if (st != EL_OK)
        return st;
    size_t keep[2 * EL_SUBSPACE_MAX_ORDER + 2], n_eig = 0;
    size_t nk = kept_poles(&s, keep, &n_eig, err);
    /* The fit runs this stage again on the same series: kept for it when
     * the series' autocorrelation can keep it (issue 13 item 3). */
    if (nk == 0 || !el_subspace_keep(opt->acf, series, opt->horizon_time, opt->order,
                                     s.plan, &s.res, &s.hz))
        stage_free(&s);
    if (nk == 0)
        return no_mode_error(err);
    size_t k = lags_for(n_eig, series->n_channels);
    if (k > opt->lags)
        opt->lags = k;
    return EL_OK;
}

/* ------------------------------------------------------------------ */
/* The fit. */

typedef struct {
    double horizon_time;
    size_t order;
    const el_subspace_acf *acf;   /* el_fit_options.acf: read only when it is the
                                     fitted series' (el_subspace_choose_horizon checks) */
} hk_plan;

static el_status hankel_plan_create(const el_fit_options *opt, size_t n_samples,
                                    size_t n_channels, size_t n_inputs, void **state,
                                    el_error *err)
{
    (void)n_samples;
    (void)n_channels;
    (void)n_inputs;
    if (opt->horizon_time < 0.0 || !isfinite(opt->horizon_time)) {
        el_error_set(err, EL_ERR_USAGE, "the horizon must be a positive time");
        el_error_option(err, "--horizon");
        el_error_hint(err, "give a time in the log's unit, or leave --horizon out");
        return EL_ERR_USAGE;
    }
    hk_plan *p = calloc(1, sizeof *p);
    if (p == NULL)
        return el_error_set(err, EL_ERR_NOMEM, "out of memory (hankel plan)");
    p->horizon_time = opt->horizon_time;
    p->order = opt->order;
    p->acf = opt->acf;
    *state = p;
    return EL_OK;
}

static void hankel_plan_destroy(void *state)
{
    free(state);
}

/* Real modal form of the kept poles: T (order x n_eig) and A_p (n_eig x
 * n_eig, block diagonal). Returns 0, or 1 when the eigenvectors fail. */
static int modal_blocks(const el_subspace_result *res, const size_t *keep, size_t nk,
                        size_t n_eig, double *t, double *ap, double *work)
{
    size_t n = res->order;
    double *a = work, *wr = a + n * n, *wi = wr + n, *vr = wi + n;
    int *used = (int *)(vr + n * n);
    memcpy(a, res->a, n * n * sizeof(double));
    if (LAPACKE_dgeev(LAPACK_COL_MAJOR, 'N', 'V', (lapack_int)n, a, (lapack_int)n, wr, wi,
                      NULL, 1, vr, (lapack_int)n) != 0)
        return 1;
    memset(used, 0, n * sizeof(int));
    memset(ap, 0, n_eig * n_eig * sizeof(double));
    size_t col = 0;
    for (size_t q = 0; q < nk; q++) {
        const el_subspace_pole *pole = &res->poles[res->first_pole + keep[q]];
        int pair = pole->mu_im > 0.0;
        size_t best = n;
        double bd = INFINITY;
        for (size_t j = 0; j < n; j++) {
            if (used[j] || (pair ? !(wi[j] > 0.0) : wi[j] != 0.0))
                continue;
            double d = hypot(wr[j] - pole->mu_re, wi[j] - pole->mu_im);
            if (d < bd) {
                bd = d;
                best = j;
            }
        }
        if (best == n || col + (pair ? 2u : 1u) > n_eig)
            return 1;
        used[best] = 1;
        memcpy(t + col * n, vr + best * n, n * sizeof(double));
        if (pair) {
            used[best + 1] = 1;
            memcpy(t + (col + 1) * n, vr + (best + 1) * n, n * sizeof(double));
            /* A [vr vi] = [vr vi] [a b; -b a] for mu = a + i b. */
            ap[col + col * n_eig] = wr[best];
            ap[col + (col + 1) * n_eig] = wi[best];
            ap[col + 1 + col * n_eig] = -wi[best];
            ap[col + 1 + (col + 1) * n_eig] = wr[best];
            col += 2;
        } else {
            ap[col + col * n_eig] = wr[best];
            col += 1;
        }
    }
    return col == n_eig ? 0 : 1;
}

/* Inverse of the block-diagonal A_p. Returns 1 for an eigenvalue 0. */
static int block_inverse(const double *ap, size_t n, double *inv)
{
    memset(inv, 0, n * n * sizeof(double));
    for (size_t j = 0; j < n;) {
        int pair = j + 1 < n && ap[j + (j + 1) * n] != 0.0;
        if (pair) {
            double a = ap[j + j * n], b = ap[j + (j + 1) * n], m2 = a * a + b * b;
            if (!(m2 > 0.0))
                return 1;
            inv[j + j * n] = a / m2;
            inv[j + (j + 1) * n] = -b / m2;
            inv[j + 1 + j * n] = b / m2;
            inv[j + 1 + (j + 1) * n] = a / m2;
            j += 2;
        } else {
            if (ap[j + j * n] == 0.0)
                return 1;
            inv[j + j * n] = 1.0 / ap[j + j * n];
            j += 1;
        }
    }
    return 0;
}

static el_status realisation_error(el_error *err)
{
    el_error_set(err, EL_ERR_NUMERIC,
                 "hankel: the subspace model cannot be written in the lagged "
                 "measurements (a mode at zero, or modes the channels cannot tell apart)");
    el_error_hint(err, "give --lags K with more lags, or --order N");
    return EL_ERR_NUMERIC;
}

/* basis = Q and a_reduced = R A_p R^-1 from G = [C_p; C_p A_p^-1; ...]. */
static el_status write_model(const el_fit_plan *plan, const double *cp, const double *ap,
                             size_t ne, el_model *m, double *work, el_error *err)
{
    size_t d = plan->state_dim, p = plan->n_channels, K = plan->lags;
    double *g = work, *inv = g + d * ne, *blk = inv + ne * ne, *tau = blk + p * ne;
    double *x = tau + ne;
    if (block_inverse(ap, ne, inv))
        return realisation_error(err);
    memcpy(blk, cp, p * ne * sizeof(double));
    for (size_t j = 0; j <= K; j++) {
        for (size_t c = 0; c < ne; c++)
            memcpy(g + j * p + c * d, blk + c * p, p * sizeof(double));
        cblas_dgemm(CblasColMajor, CblasNoTrans, CblasNoTrans, (int)p, (int)ne, (int)ne,
                    1.0, g + j * p, (int)d, inv, (int)ne, 0.0, blk, (int)p);
    }
    if (LAPACKE_dgeqrf(LAPACK_COL_MAJOR, (lapack_int)d, (lapack_int)ne, g, (lapack_int)d,
                       tau) != 0)
        return realisation_error(err);
    double rmax = 0.0, rmin = INFINITY;
    for (size_t i = 0; i < ne; i++) {
        rmax = fmax(rmax, fabs(g[i + i * d]));
        rmin = fmin(rmin, fabs(g[i + i * d]));
    }
    /* R's diagonal: below 1e-10 of its largest the lagged measurements
     * do not resolve the states (rounding would dominate R^-1). */
    if (!(rmin > 1e-10 * rmax))
        return realisation_error(err);
    /* x = R A_p, then x R^-1. */
    for (size_t j = 0; j < ne; j++)
        for (size_t i = 0; i < ne; i++) {
            double v = 0.0;
            for (size_t k = i; k < ne; k++)
                v += g[i + k * d] * ap[k + j * ne];
            x[i + j * ne] = v;
        }
    cblas_dtrsm(CblasColMajor, CblasRight, CblasUpper, CblasNoTrans, CblasNonUnit, (int)ne,
                (int)ne, 1.0, g, (int)d, x, (int)ne);
    memcpy(m->a_reduced, x, ne * ne * sizeof(double));
    if (LAPACKE_dorgqr(LAPACK_COL_MAJOR, (lapack_int)d, (lapack_int)ne, (lapack_int)ne, g,
                       (lapack_int)d, tau) != 0)
        return realisation_error(err);
    memcpy(m->basis, g, d * ne * sizeof(double));
    return EL_OK;
}

/* The stage's poles of every order into the model for the reports
 * (el_model_pole), those of the kept chains marked in_model. Allocates
 * the list once per model (reused when the model is refilled). */
static el_status expose_poles(const el_subspace_result *res, const size_t *keep, size_t nk,
                              el_model *m, el_error *err)
{
    if (res->n_poles > m->subspace_poles_cap) {
        el_model_pole *q = realloc(m->subspace_poles, res->n_poles * sizeof *q);
        if (q == NULL)
            return el_error_set(err, EL_ERR_NOMEM, "out of memory (hankel poles)");
        m->subspace_poles = q;
        m->subspace_poles_cap = res->n_poles;
    }
    for (size_t k = 0; k < res->n_poles; k++) {
        const el_subspace_pole *p = &res->poles[k];
        el_model_pole *q = &m->subspace_poles[k];
        q->order = p->order;
        q->frequency_hz = p->frequency_hz;
        q->natural_hz = p->natural_hz;
        q->damping_ratio = p->damping_ratio;
        q->contribution = p->contribution;
        q->stable = p->stable;
        q->physical = p->physical;
        q->chain = p->chain;
        q->in_model = 0;
        for (size_t j = 0; j < nk; j++)
            if (res->poles[res->first_pole + keep[j]].chain == p->chain)
                q->in_model = 1;
    }
    m->subspace_n_poles = res->n_poles;
    m->subspace_max_order = res->max_order;
    return EL_OK;
}

static el_status hankel_fit(el_fit_plan *plan, const el_series *series,
                            const el_series *inputs, el_model *model,
                            el_warnings *warnings, el_error *err)
{
    (void)inputs;
    (void)warnings;
    const hk_plan *hp = plan->est;
    hk_stage s;
    el_status st = stage_run(series, hp->horizon_time, hp->order, hp->acf, &s, err);
    if (st != EL_OK)
        return st;
    size_t keep[2 * EL_SUBSPACE_MAX_ORDER + 2], ne = 0;
    size_t nk = kept_poles(&s, keep, &ne, err);
    size_t n = s.res.order, p = plan->n_channels, d = plan->state_dim;
    if (nk == 0) {
        stage_free(&s);
        return no_mode_error(err);
    }
    if (ne > d) {
        stage_free(&s);
        el_error_set(err, EL_ERR_USAGE,
                     "hankel: %zu eigenvalues need a state of at least %zu, but %zu lags "
                     "of %zu channels give %zu", ne, ne, plan->lags, p, d);
        el_error_option(err, "--lags");
        el_error_hint(err, "give --lags %zu or more (the assess command sets it itself)",
                      lags_for(ne, p));
        return EL_ERR_USAGE;
    }
    size_t nwork = n * n * 2 + 2 * n + n + n * ne + ne * ne + p * ne + d * ne + ne * ne +
                   p * ne + ne + ne * ne + 16;
    double *work = malloc(nwork * sizeof(double));
    if (work == NULL) {
        stage_free(&s);
        return el_error_set(err, EL_ERR_NOMEM, "out of memory (hankel fit)");
    }
    double *t = work, *ap = t + n * ne, *cp = ap + ne * ne, *rest = cp + p * ne;
    if (modal_blocks(&s.res, keep, nk, ne, t, ap, rest)) {
        st = realisation_error(err);
    } else {
        /* C_p = C T in the stage's scaled channels (the fit's scaling: the
         * mean and population standard deviation of the window). */
        cblas_dgemm(CblasColMajor, CblasNoTrans, CblasNoTrans, (int)p, (int)ne, (int)n, 1.0,
                    s.res.c_scaled, (int)p, t, (int)n, 0.0, cp, (int)p);
        st = write_model(plan, cp, ap, ne, model, rest, err);
    }
    if (st == EL_OK) {
        model->rank = ne;
        model->rank_was_auto = s.res.order_was_auto;
        model->depth = s.res.horizon;
        size_t nc = s.res.n_singular < d ? s.res.n_singular : d;
        memcpy(model->canonical_corr, s.res.singular, nc * sizeof(double));
        model->n_canonical = nc;
        model->subspace_order = n;
        model->subspace_rows = s.res.horizon;
        model->subspace_physical = s.res.n_physical;
        model->subspace_horizon_time = (double)s.res.horizon * series->dt;
        el_fit_projected_model(plan, model, 1);
        st = expose_poles(&s.res, keep, nk, model, err);
    }
    free(work);
    stage_free(&s);
    return st;
}

/* ------------------------------------------------------------------ */
/* The bootstrap: moving blocks of windows on a grid of cells. */

typedef struct {
    const el_subspace_plan *plan;
    const double *cells;         /* n_cells records of rec doubles */
    const double *blocks;        /* n_starts records: the sum of the block_cells
                                    cells from each grid start (a full block is
                                    one record instead of block_cells) */
    size_t n_starts, block_cells;
    size_t n_cells, cell, rec, m, block, order, n_point, n_modes, max_blocks, total;
    const double *point_re, *point_im;   /* the point's eigenvalues (both of a pair) */
    double dt;
    uint64_t seed;
    unsigned char *ok, *amb, *stable;
    double *mode_re, *mode_im;
    double *mode_disc;            /* total x n_modes: each point pair's discriminant
                                     (el_boot_match_discriminants) */
    int has_plane;                /* a two-state model: trace and determinant */
    double *trace, *det;
    atomic_size_t next;
    const el_modes *modes;
    el_status worker_status;
} hk_boot;

typedef struct {
    hk_boot *b;
    el_boot_matcher *matcher;
    el_boot_block *blocks;
    double *sum, *work, *mre, *mim, *lre, *lim, *sre, *sim;
    unsigned char *used;
} hk_worker;

static void worker_free(hk_worker *w)
{
    el_boot_matcher_destroy(w->matcher);
    free(w->blocks);
    free(w->sum);
    free(w->work);
    free(w->mre);
    free(w->used);
    memset(w, 0, sizeof *w);
}

static el_status worker_init(hk_worker *w, hk_boot *b, el_error *err)
{
    memset(w, 0, sizeof *w);
    w->b = b;
    el_status st = el_boot_matcher_create(b->modes, &w->matcher, err);
    if (st != EL_OK)
        return st;
    size_t n = b->order;
    w->blocks = malloc(b->max_blocks * sizeof(el_boot_block));
    w->sum = malloc(b->rec * sizeof(double));
    w->work = malloc(el_subspace_replicate_work(b->plan) * sizeof(double));
    w->mre = malloc((4 * n + 2 * b->n_point) * sizeof(double));
    w->used = malloc(n + 1);
    if (!w->blocks || !w->sum || !w->work || !w->mre || !w->used) {
        worker_free(w);
        return el_error_set(err, EL_ERR_NOMEM, "out of memory (hankel bootstrap)");
    }
    w->mim = w->mre + n;
    w->lre = w->mim + n;
    w->lim = w->lre + n;
    w->sre = w->lim + n;
    w->sim = w->sre + b->n_point;
    return EL_OK;
}

/* Rows of unit weight replicate_sum holds before it adds them
 * (el_stats_add_rows; a stack array: a replicate has about 20-100 such
 * rows, at most HK_MAX_CELLS). */
#define HK_SUM_ROWS 64

/* The replicate's record: its full blocks from the block table, a cut
 * last block from its cells, a cut last cell weighted by the share of its
 * windows taken. Reading one record per block instead of one per cell was
 * the largest saving of `track` on multi-sensor logs (the cells' daxpy was
 * a third of a window's time; docs/uncertainty.md). The records of weight
 * 1 are gathered and added eight at a time by el_stats_add_rows, bit for
 * bit the sums of one daxpy of weight 1 each (which were a quarter of
 * track's time); a weighted cell still goes through cblas_daxpy, in its
 * place in the order. (replicate_sum is helper s's, the rest of this file
 * helper h's this round.) */
static void replicate_sum(hk_worker *w, size_t nb)
{
    const hk_boot *b = w->b;
    const double *rows[HK_SUM_ROWS];
    size_t n_rows = 0;
    memset(w->sum, 0, b->rec * sizeof(double));
    for (size_t i = 0; i < nb; i++) {
        size_t c = w->blocks[i].start / b->cell, left = w->blocks[i].length;
        if (b->blocks != NULL && left == b->block && w->blocks[i].start % b->cell == 0 &&
            c < b->n_starts) {
            if (n_rows == HK_SUM_ROWS) {
                el_stats_add_rows(w->sum, b->rec, rows, n_rows);
                n_rows = 0;
            }
            rows[n_rows++] = b->blocks + c * b->rec;
            continue;
        }
        while (left > 0 && c < b->n_cells) {
            size_t len = c + 1 < b->n_cells ? b->cell : b->m - c * b->cell;
            if (n_rows == HK_SUM_ROWS || (left < len && n_rows > 0)) {
                el_stats_add_rows(w->sum, b->rec, rows, n_rows);
                n_rows = 0;
            }
            if (left >= len)
                rows[n_rows++] = b->cells + c * b->rec;
            else
                cblas_daxpy((int)b->rec, (double)left / (double)len, b->cells + c * b->rec, 1,
                            w->sum, 1);
            left = left >= len ? left - len : 0;
            c++;
        }
    }
    el_stats_add_rows(w->sum, b->rec, rows, n_rows);
}

/* Picks, of the replicate's eigenvalues, the ones nearest the point's
 * (greedy on the distance in the lambda plane, one to one). */
static void select_nearest(hk_worker *w)
{
    const hk_boot *b = w->b;
    size_t n = b->order;
    memset(w->used, 0, n);
    unsigned char taken[4 * EL_SUBSPACE_MAX_ORDER + 4] = {0};
    for (size_t round = 0; round < b->n_point; round++) {
        double bd = INFINITY;
        size_t bp = 0, bq = 0;
        for (size_t pi = 0; pi < b->n_point; pi++) {
            if (taken[pi])
                continue;
            for (size_t q = 0; q < n; q++) {
                if (w->used[q])
                    continue;
                double dd = hypot(w->lre[q] - b->point_re[pi], w->lim[q] - b->point_im[pi]);
                if (dd < bd) {
                    bd = dd;
                    bp = pi;
                    bq = q;
                }
            }
        }
        taken[bp] = 1;
        w->used[bq] = 1;
        w->sre[bp] = w->lre[bq];
        w->sim[bp] = w->lim[bq];
    }
}

static void run_replicate(hk_worker *w, size_t rep)
{
    hk_boot *b = w->b;
    el_rng rng;
    el_rng_seed(&rng, b->seed, (uint64_t)rep);
    size_t nb = el_boot_draw_blocks_grid(&rng, b->m, b->block, b->cell, w->blocks);
    replicate_sum(w, nb);
    int fail = el_subspace_replicate_solve(b->plan, w->sum, b->order, NULL, w->mre, w->mim,
                                           w->work, NULL) != EL_OK;
    for (size_t q = 0; !fail && q < b->order; q++) {
        int nyq = 0;
        el_modes_lambda(w->mre[q], w->mim[q], b->dt, &w->lre[q], &w->lim[q], &nyq);
        if (!isfinite(w->lre[q]) || !isfinite(w->lim[q]))
            fail = 1;
    }
    int amb = 0;
    if (!fail) {
        select_nearest(w);
        fail = el_boot_match(w->matcher, w->sre, w->sim, b->n_point,
                             b->mode_re + rep * b->n_modes, b->mode_im + rep * b->n_modes,
                             &amb) != 0;
    }
    b->ok[rep] = (unsigned char)!fail;
    if (fail)
        return;
    el_boot_match_discriminants(w->matcher, b->mode_disc + rep * b->n_modes);
    b->amb[rep] = (unsigned char)amb;
    double top = -INFINITY;
    for (size_t q = 0; q < b->n_point; q++)
        top = fmax(top, w->sre[q]);
    b->stable[rep] = (unsigned char)(top < 0.0);
    if (b->has_plane) {
        b->trace[rep] = w->sre[0] + w->sre[1];
        b->det[rep] = w->sre[0] * w->sre[1] - w->sim[0] * w->sim[1];
    }
}

static void *worker_loop(void *arg)
{
    hk_worker *w = arg;
    for (;;) {
        size_t rep = atomic_fetch_add(&w->b->next, 1);
        if (rep >= w->b->total)
            break;
        run_replicate(w, rep);
    }
    return NULL;
}

static double wall_seconds(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

/* Automatic block length in windows: the Politis-White length of the
 * slowest-correlated channel (the data's own dependence), raised to the
 * 2 h samples one window's future and past span (windows closer than that
 * share samples; without it the bounds were too narrow: a 40-s near-
 * marginal log was called stable), but not so far that fewer than
 * HK_MIN_BLOCKS blocks make a replicate (short logs with a long automatic
 * horizon had about ten, too few for percentile bounds of a nonlinear
 * statistic: 100-s two-sensor windows gave Re lambda bounds reaching -12
 * 1/s for a mode at -0.13); at least the cell. */
static el_status auto_block(const el_series *s, size_t rows, size_t m, size_t cell,
                            size_t *block, size_t *block_pw, el_error *err)
{
    double bmax = 1.0;
    for (size_t c = 0; c < s->n_channels; c++) {
        double bc = 1.0;
        el_status st = el_boot_pw_block_length(s->values + c * s->n_samples, s->n_samples,
                                               &bc, err);
        if (st != EL_OK)
            return st;
        bmax = fmax(bmax, bc);
    }
    size_t b = (size_t)ceil(bmax);
    *block_pw = b;
    size_t span = 2 * rows < m / HK_MIN_BLOCKS ? 2 * rows : m / HK_MIN_BLOCKS;
    if (b < span)
        b = span;
    if (b < cell)
        b = cell;
    *block = b;
    return EL_OK;
}

/* Point eigenvalues (both members of a pair) in continuous time. */
static size_t point_eigenvalues(const el_modes *modes, double *re, double *im)
{
    size_t k = 0;
    for (size_t q = 0; q < modes->n_modes; q++) {
        const el_mode *md = &modes->modes[q];
        double lre = isfinite(md->lambda_re) ? md->lambda_re : -1e300;
        re[k] = lre;
        im[k++] = md->lambda_im;
        if (md->pair) {
            re[k] = lre;
            im[k++] = -md->lambda_im;
        }
    }
    return k;
}

static el_status boot_replicates(hk_boot *b, const el_boot_options *opt,
                                 size_t *threads_used, el_error *err)
{
    size_t nt = opt->threads;
    if (nt == 0) {
        long c = sysconf(_SC_NPROCESSORS_ONLN);
        nt = c > 0 ? (size_t)c : 1;
    }
    if (nt > b->total)
        nt = b->total;
    if (nt > 64)
        nt = 64;
    if (nt < 1)
        nt = 1;
    hk_worker *ws = calloc(nt, sizeof *ws);
    pthread_t *tid = calloc(nt, sizeof *tid);
    el_status st = ws != NULL && tid != NULL ? EL_OK
                   : el_error_set(err, EL_ERR_NOMEM, "out of memory (hankel bootstrap)");
    size_t made = 0;
    for (; st == EL_OK && made < nt; made++)
        if ((st = worker_init(&ws[made], b, err)) != EL_OK)
            break;
    size_t started = 1;
    if (st == EL_OK) {
        atomic_store(&b->next, 0);
        for (size_t i = 1; i < nt; i++) {
            if (pthread_create(&tid[i], NULL, worker_loop, &ws[i]) != 0)
                break;
            started++;
        }
        worker_loop(&ws[0]);
        for (size_t i = 1; i < started; i++)
            pthread_join(tid[i], NULL);
    }
    for (size_t i = 0; ws != NULL && i < made; i++)
        worker_free(&ws[i]);
    free(ws);
    free(tid);
    *threads_used = started;
    return st;
}

static el_status boot_checks(const el_model *model, const el_modes *modes,
                             const el_boot_options *opt, el_error *err)
{
    if (opt->kind == EL_RESAMPLE_MODEL) {
        el_error_set(err, EL_ERR_USAGE, "model-based resampling works with --method ls only");
        el_error_option(err, "--resample");
        el_error_hint(err, "use --resample blocks (the default) with --method hankel");
        return EL_ERR_USAGE;
    }
    if (modes->n_modes == 0 || modes->n_eigenvalues != model->rank ||
        model->subspace_order == 0 || model->subspace_order > 2 * EL_SUBSPACE_MAX_ORDER ||
        model->rank > model->subspace_order)
        return el_error_set(err, EL_ERR_INTERNAL,
                            "hankel bootstrap: %zu eigenvalues for a rank-%zu model of "
                            "order %zu", modes->n_eigenvalues, model->rank,
                            model->subspace_order);
    return EL_OK;
}

static el_status hankel_boot_run(const el_series *series, const el_fit_options *opt_fit,
                                 const el_model *model, const el_modes *modes,
                                 const el_boot_options *opt, el_boot_result *result,
                                 el_warnings *warnings, el_error *err)
{
    (void)opt_fit;
    double t0 = wall_seconds();
    el_status st = boot_checks(model, modes, opt, err);
    if (st != EL_OK)
        return st;
    /* The point's stage again, at its horizon and order: its block sums. */
    hk_stage s;
    st = stage_run(series, (double)model->subspace_rows * model->dt, model->subspace_order,
                   NULL, &s, err);
    if (st != EL_OK)
        return st;
    hk_boot b;
    memset(&b, 0, sizeof b);
    b.plan = s.plan;
    b.m = s.res.n_windows;
    b.rec = el_subspace_sum_doubles(s.plan);
    b.cell = (b.m + HK_MAX_CELLS - 1) / HK_MAX_CELLS;
    b.n_cells = (b.m + b.cell - 1) / b.cell;
    b.order = model->subspace_order;
    b.dt = model->dt;
    b.seed = opt->seed;
    b.total = opt->replicates;
    b.modes = modes;
    b.n_modes = modes->n_modes;
    size_t block_pw = 0;
    int block_auto = opt->block_length == 0;
    if (block_auto) {
        st = auto_block(series, model->subspace_rows, b.m, b.cell, &b.block, &block_pw, err);
    } else {
        b.block = opt->block_length;
    }
    /* On the cell grid: a multiple of the cell, within the windows. */
    b.block = (b.block + b.cell - 1) / b.cell * b.cell;
    size_t top = b.m / b.cell * b.cell;
    if (b.block > top)
        b.block = top;
    b.max_blocks = el_boot_block_count(b.m, b.block);
    double *cells = malloc(b.n_cells * b.rec * sizeof(double));
    double *pts = malloc(2 * model->rank * sizeof(double));
    unsigned char *flags = calloc(3 * b.total, 1);
    double *rec = malloc((3 * b.n_modes + 2) * b.total * sizeof(double) + 1);
    if (st == EL_OK && (!cells || !pts || !flags || !rec))
        st = el_error_set(err, EL_ERR_NOMEM, "out of memory (hankel bootstrap)");
    for (size_t c = 0; st == EL_OK && c < b.n_cells; c++) {
        size_t e = (c + 1) * b.cell < b.m ? (c + 1) * b.cell : b.m;
        st = el_subspace_block_sums(s.plan, c * b.cell, e, cells + c * b.rec, err);
    }
    /* The block table: every full block starts on a cell (the grid) and
     * covers block / cell whole cells, since it ends by b.m. */
    double *table = NULL;
    if (st == EL_OK) {
        b.block_cells = b.block / b.cell;
        b.n_starts = b.m >= b.block ? (b.m - b.block) / b.cell + 1 : 0;
        if (b.block_cells > 1 && b.n_starts > 0 && b.n_starts + b.block_cells - 1 <= b.n_cells)
            table = malloc(b.n_starts * b.rec * sizeof(double));
        for (size_t c = 0; table != NULL && c < b.n_starts; c++) {
            double *row = table + c * b.rec;
            memcpy(row, cells + c * b.rec, b.rec * sizeof(double));
            for (size_t j = 1; j < b.block_cells; j++)
                cblas_daxpy((int)b.rec, 1.0, cells + (c + j) * b.rec, 1, row, 1);
        }
        b.blocks = table;  /* NULL (no memory, one-cell blocks): cells only */
    }
    size_t threads = 1;
    double t1 = wall_seconds();
    if (st == EL_OK) {
        b.cells = cells;
        b.n_point = point_eigenvalues(modes, pts, pts + model->rank);
        b.point_re = pts;
        b.point_im = pts + model->rank;
        b.ok = flags;
        b.amb = flags + b.total;
        b.stable = flags + 2 * b.total;
        b.mode_re = rec;
        b.mode_im = rec + b.n_modes * b.total;
        b.has_plane = model->state_dim == 2 && model->rank == 2;
        b.trace = rec + 2 * b.n_modes * b.total;
        b.det = b.trace + b.total;
        b.mode_disc = b.det + b.total;
        st = boot_replicates(&b, opt, &threads, err);
    }
    if (st == EL_OK) {
        memset(result, 0, sizeof *result);
        result->kind = opt->kind;
        result->level = opt->level;
        result->seed = opt->seed;
        result->n_modes = modes->n_modes;
        el_boot_records r = { b.total, b.n_modes, b.has_plane, b.ok, b.amb, b.stable,
                              b.mode_re, b.mode_im, b.trace, b.det, b.mode_disc,
                              0.0 /* percentile bounds on growing logs too: the
                                     block replicates' skew is not the estimate's
                                     (docs/uncertainty.md, "Bounds at a Jordan
                                     block and on growing modes") */ };
        st = el_boot_summarise(&r, modes, opt->level, result, err);
        result->setup_seconds = t1 - t0;
        result->replicate_seconds = wall_seconds() - t1;
        result->threads_used = threads;
        result->block_length = b.block;
        result->block_length_pw = block_auto ? block_pw : 0;
        result->block_was_auto = block_auto;
        result->has_plane = b.has_plane;
    }
    if (st == EL_OK && result->failed_replicates > 0)
        st = el_warnings_add(warnings,
                             "%zu of %zu bootstrap replicates gave no subspace model and "
                             "were left out", result->failed_replicates, b.total);
    if (st == EL_OK && result->ambiguous_matches * 10 > result->replicates)
        st = el_warnings_add(warnings,
                             "modes could swap in %zu of %zu replicates (eigenvalues "
                             "close together): their separate bounds mix them",
                             result->ambiguous_matches, result->replicates);
    if (st == EL_ERR_NOMEM && err != NULL && err->message[0] == '\0')
        el_error_set(err, EL_ERR_NOMEM, "out of memory for a warning");
    free(cells);
    free(table);
    free(pts);
    free(flags);
    free(rec);
    stage_free(&s);
    return st;
}

/* Hankel reads the data through its own stage: no lagged-pair provider. */
static el_status hankel_boot_states(const el_series *series, const el_series *inputs,
                                    const el_model *model, double **states,
                                    size_t *n_states, el_error *err)
{
    (void)series;
    (void)inputs;
    (void)model;
    if (states != NULL)
        *states = NULL;
    if (n_states != NULL)
        *n_states = 0;
    return el_error_set(err, EL_ERR_INTERNAL,
                        "hankel: the bootstrap reads block sums of the subspace stage, "
                        "not lagged pairs");
}

const el_estimator_type el_estimator_hankel = {
    EL_METHOD_HANKEL, "hankel", "block-Hankel subspace identification", 0, 0,
    hankel_plan_create, hankel_plan_destroy, hankel_fit, NULL, hankel_boot_states, 0,
    hankel_prepare, hankel_boot_run
};
