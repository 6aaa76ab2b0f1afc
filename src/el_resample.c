/* el_resample: bootstrap replicates of the fit assembled from additive
 * per-block statistics, eigenvalue matching and the bounds they give. */
#include "el_resample.h"

#include "el_boot_bounds.h"
#include "el_boot_engine.h"
#include "el_boot_match.h"
#include "el_boot_resid.h"
#include "el_chunks.h"
#include "el_eig.h"
#include "el_estimator.h"
#include "el_reduced.h"
#include "el_bigmem.h"
#include "el_sort.h"

#include <cblas.h>
#include <float.h>
#include <lapacke.h>
#include <math.h>
#include <pthread.h>
#include <stdatomic.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <unistd.h>
/* Model-based replicates that measure the bias (a mean of a few hundred
 * replicates leaves a Monte Carlo error far below the bootstrap spread),
 * drawn from streams far above any replicate index. */
#define BOOT_BIAS_STREAM ((uint64_t)1 << 62)
/* The largest small-sample bias of Re lambda the bias round accepts, in
 * units of (r + 1) / T: least squares on an AR(1) near a unit root is
 * biased by about -(1 + 3 rho) / n per step, -4 / T in Re lambda, and on
 * a VAR(r) by a sum of such terms over the modes (Pope 1990, J. Time
 * Series Anal. 11(3); recalled from memory); 5 (r + 1) leaves room for
 * that. In the calibration, shifts that sensor noise causes were 19 / T
 * and more at 500 samples (r = 2), growing with T (docs/uncertainty.md). */
#define BOOT_BIAS_PLAUSIBLE_T 5.0

void el_boot_defaults(el_boot_options *opt)
{
    memset(opt, 0, sizeof *opt);
    opt->replicates = 1000;
    opt->kind = EL_RESAMPLE_BLOCKS;
    opt->block_length = 0;
    opt->level = 0.95;
    opt->seed = 1;
    opt->threads = 0;
    opt->bias_correct = 1;
}

static double wall_seconds(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

/* ------------------------------------------------------------------ */
/* The run. */

typedef struct {
    /* read-only during the run */
    const el_boot_engine *engine;
    const el_boot_provider *prov;
    el_boot_dims dims;            /* of the least-squares states w0 */
    const double *w0;             /* (m + 1) * sw least-squares states: the first
                                     starts a model replicate, the inputs of all
                                     drive it (model kind) */
    const double *resid;          /* m * r centred residuals (model kind) */
    const double *a0, *b0, *c0;   /* point fit in reduced coordinates (b0: r x nu) */
    const el_modes *point;
    /* Bias correction: per point mode, and of trace and determinant,
     * subtracted from every replicate (NULL: none). */
    const double *bias_re, *bias_im;
    double bias_trace, bias_det;
    /* Spread (IQR / 1.349) of the bias round's model-based replicates: per
     * mode Re, per mode Im, trace, determinant (NULL: no accepted round). */
    const double *model_spread;
    double model_weight;   /* the bias round's weight B / 200, for the widening */
    size_t model_count;    /* its accepted replicates */
    int bias_phase;               /* 1: the run measures the bias */
    /* 1: the model round is the spread round (iv, ssi: the provider's
     * states through the method's own fit, smodel; widening only). */
    int spread_round;
    el_boot_state_model smodel;
    el_boot_bias_plan s_plan;     /* its replicates and weight (el_boot_spread_rule) */
    double *bias_rec;             /* bias phase: 2 n_modes + 2 per replicate */
    unsigned char *bias_ok;
    size_t r, sw, nu, m, block, block_pw, grid, n_modes, total, n_bias;
    size_t max_blocks;            /* blocks of one replicate */
    size_t nu_ls;                 /* inputs in the least-squares states */
    int wide;                     /* model replicates: simulate, then accumulate */
    size_t batch;                 /* block replicates summed together (wide engines) */
    size_t wide_from;             /* reduced states from which the wide paths apply */
    /* A round too small to judge by its own spread (fewer than
     * EL_BOOT_BIAS_MIN_JUDGED replicates): per mode, its median shift of Re
     * lambda, judged after the replicates by their spread (NULL: none). */
    double *bias_pending_shift;
    int bias_refused;             /* the bias round measured no small-sample bias */
    double bias_refused_spreads;  /* refused: the largest |shift| / spread of a mode
                                     that failed the plausibility test */
    el_resample_kind kind;
    uint64_t seed;
    double dt;
    int has_plane;
    /* per replicate, written by exactly one thread */
    unsigned char *ok, *amb, *stable;
    double *mode_re, *mode_im, *trace, *det;
    double *mode_disc;            /* n_modes per replicate: each point pair's discriminant
                                     (el_boot_match_discriminants; NaN for real modes) */
    double *eig_re;               /* r per replicate: Re lambda of each eigenvalue,
                                     bias-shifted, for P(stable) after the recentring */
    size_t *eig_mode;             /* r per replicate: its matched point mode */
    atomic_size_t next, done;
} boot_shared;

typedef struct {
    boot_shared *sh;
    el_boot_matcher *matcher;
    el_boot_block *blocks;        /* sh->max_blocks */
    double *work, *sum, *feat, *st;
    double *a, *ageev, *wr, *wi, *lre, *lim, *geev, *eig;
    double *path, *gwork;         /* wide model replicates: (m + 1) states, accumulate scratch */
    el_boot_block *bblocks;       /* sh->batch * sh->max_blocks: a batch's blocks */
    el_boot_block *sblocks;       /* spread round: blocks of n_pairs */
    double *spath;                /* spread round: n_pairs + 1 states, accumulate scratch */
    double *bsum;                 /* sh->batch * features: a batch's sums */
    lapack_int lwork;
    const el_boot_options *opt;  /* progress callback: main worker only */
    size_t reported;
} boot_worker;

static void worker_free(boot_worker *w)
{
    el_boot_matcher_destroy(w->matcher);
    free(w->blocks);
    free(w->work);
    free(w->sum);
    free(w->feat);
    free(w->st);
    free(w->a);
    free(w->ageev);
    free(w->wr);
    free(w->wi);
    free(w->lre);
    free(w->lim);
    free(w->geev);
    free(w->eig);
    free(w->path);
    free(w->gwork);
    free(w->bblocks);
    free(w->bsum);
    free(w->sblocks);
    free(w->spath);
    memset(w, 0, sizeof *w);
}

/* Block replicates of a wide engine summed together
 * (el_boot_engine_sum_many): each table row then comes from memory once
 * per batch instead of once per replicate. Eight: the batch's sums are
 * eight feature vectors per thread (2.6 MB each for iv at 200 states),
 * while eight replicates draw most rows of such a table (about 100 rows,
 * some 50 drawn by each replicate). */
#define EL_BOOT_MAX_BATCH 8

/* Everything a replicate needs, allocated once per thread. */
static el_status worker_init(boot_worker *w, boot_shared *sh, const el_modes *point,
                             el_error *err)
{
    memset(w, 0, sizeof *w);
    w->sh = sh;
    size_t r = sh->r, d = el_boot_engine_features(sh->engine);
    el_status st = el_boot_matcher_create(point, &w->matcher, err);
    if (st != EL_OK)
        return st;
    w->blocks = malloc(sh->max_blocks * sizeof(el_boot_block));
    w->work = malloc(el_boot_engine_work_doubles(sh->engine) * sizeof(double));
    w->sum = malloc(d * sizeof(double));
    w->feat = malloc(d * sizeof(double));
    w->st = malloc(2 * sh->sw * sizeof(double));
    w->a = malloc(r * r * sizeof(double));
    w->ageev = malloc(r * r * sizeof(double));
    w->wr = malloc(r * sizeof(double));
    w->wi = malloc(r * sizeof(double));
    w->lre = malloc(r * sizeof(double));
    w->lim = malloc(r * sizeof(double));
    w->eig = malloc(el_eig_work_doubles(r) * sizeof(double));
    if (!w->blocks || !w->work || !w->sum || !w->feat || !w->st || !w->a || !w->ageev
        || !w->wr || !w->wi || !w->lre || !w->lim || !w->eig) {
        worker_free(w);
        return el_error_set(err, EL_ERR_NOMEM, "out of memory (bootstrap workspace)");
    }
    if (sh->wide) {
        /* (m + 1) states of the simulated series; the accumulate scratch
         * as the engine gives it (features plus the provider's work). */
        w->path = malloc((sh->m + 1) * sh->sw * sizeof(double));
        w->gwork = malloc((d + sh->prov->work_doubles(&sh->dims)) * sizeof(double));
        if (w->path == NULL || w->gwork == NULL) {
            worker_free(w);
            return el_error_set(err, EL_ERR_NOMEM, "out of memory (bootstrap workspace)");
        }
    }
    if (sh->spread_round) {
        w->sblocks = malloc(el_boot_block_count(sh->smodel.n_pairs, sh->block)
                            * sizeof(el_boot_block));
        size_t path = (sh->smodel.n_pairs + 1) * sh->sw;
        w->spath = malloc((path + d + sh->prov->work_doubles(&sh->dims)) * sizeof(double));
        if (w->sblocks == NULL || w->spath == NULL) {
            worker_free(w);
            return el_error_set(err, EL_ERR_NOMEM, "out of memory (bootstrap workspace)");
        }
    }
    if (sh->batch > 1) {
        w->bblocks = malloc(sh->batch * sh->max_blocks * sizeof(el_boot_block));
        w->bsum = malloc(sh->batch * d * sizeof(double));
        if (w->bblocks == NULL || w->bsum == NULL) {
            worker_free(w);
            return el_error_set(err, EL_ERR_NOMEM, "out of memory (bootstrap workspace)");
        }
    }
    double q = 0.0;
    memset(w->ageev, 0, r * r * sizeof(double));
    lapack_int info = LAPACKE_dgeev_work(LAPACK_COL_MAJOR, 'N', 'N', (lapack_int)r,
                                         w->ageev, (lapack_int)r, w->wr, w->wi, NULL, 1,
                                         NULL, 1, &q, -1);
    w->lwork = info == 0 && q >= 1.0 ? (lapack_int)q : (lapack_int)(4 * r + 8);
    w->geev = malloc((size_t)w->lwork * sizeof(double));
    if (w->geev == NULL) {
        worker_free(w);
        return el_error_set(err, EL_ERR_NOMEM, "out of memory (bootstrap workspace)");
    }
    return EL_OK;
}

/* model_replicate for wide states: the whole series first, one
 * matrix-vector product per step, then its features summed by the
 * provider's accumulate (symmetric rank updates over runs of pairs)
 * instead of a feature vector per pair: at r = 200 the pair-by-pair sums
 * were 80,000 scalar products per step, most of the bias round's time. The
 * same recursion and the same draws, so the same series and sums to
 * rounding (tests/test_resample.c compares the two paths). */
static int model_replicate_wide(boot_worker *w, size_t nb)
{
    boot_shared *sh = w->sh;
    size_t r = sh->r, sw = sh->sw, nu = sh->nu, d = el_boot_engine_features(sh->engine);
    double *path = w->path;
    memcpy(path, sh->w0, sw * sizeof(double));
    size_t step = 0;
    for (size_t b = 0; b < nb; b++)
        for (size_t t = 0; t < w->blocks[b].length; t++, step++) {
            const double *e = sh->resid + (w->blocks[b].start + t) * r;
            const double *prev = path + step * sw;
            double *next = path + (step + 1) * sw;
            for (size_t i = 0; i < r; i++)
                next[i] = sh->c0[i] + e[i];
            cblas_dgemv(CblasColMajor, CblasNoTrans, (int)r, (int)r, 1.0, sh->a0, (int)r,
                        prev, 1, 1.0, next, 1);
            if (nu > 0)
                cblas_dgemv(CblasColMajor, CblasNoTrans, (int)r, (int)nu, 1.0, sh->b0,
                            (int)r, prev + r, 1, 1.0, next, 1);
            memcpy(next + r, sh->w0 + (step + 1) * sw + r, nu * sizeof(double));
        }
    memset(w->sum, 0, d * sizeof(double));
    sh->prov->accumulate(&sh->dims, path, step, w->sum, w->gwork);
    for (size_t f = 0; f < d; f++)
        if (!isfinite(w->sum[f]))
            return 1;
    return sh->prov->solve(&sh->dims, w->sum, w->a, NULL, NULL, w->work);
}

/* Residual bootstrap: regenerate the reduced series through the point
 * model with moving blocks of centred residuals and sum its features. */
static int model_replicate(boot_worker *w, el_rng *rng)
{
    boot_shared *sh = w->sh;
    size_t r = sh->r, sw = sh->sw, nu = sh->nu, d = el_boot_engine_features(sh->engine);
    size_t nb = el_boot_draw_blocks(rng, sh->m, sh->block, w->blocks);
    if (sh->wide)
        return model_replicate_wide(w, nb);
    double *prev = w->st, *next = w->st + sw;
    memcpy(prev, sh->w0, sw * sizeof(double));
    memset(w->sum, 0, d * sizeof(double));
    size_t step = 0;
    for (size_t b = 0; b < nb; b++)
        for (size_t t = 0; t < w->blocks[b].length; t++, step++) {
            const double *e = sh->resid + (w->blocks[b].start + t) * r;
            /* The measured inputs stay where they were (fixed regressors):
             * only the state is regenerated. */
            el_boot_model_step(r, nu, sh->a0, sh->b0, sh->c0, e, prev, next);
            memcpy(next + r, sh->w0 + (step + 1) * sw + r, nu * sizeof(double));
            sh->prov->features(&sh->dims, w->st, w->feat);
            for (size_t f = 0; f < d; f++)
                w->sum[f] += w->feat[f];
            memcpy(prev, next, sw * sizeof(double));
        }
    for (size_t f = 0; f < d; f++)
        if (!isfinite(w->sum[f]))
            return 1;
    return sh->prov->solve(&sh->dims, w->sum, w->a, NULL, NULL, w->work);
}

/* One replicate of the spread round: el_boot_state_model_sum on moving
 * blocks of the model's residuals, then the provider's solve. */
static int spread_replicate(boot_worker *w, el_rng *rng)
{
    boot_shared *sh = w->sh;
    size_t nb = el_boot_draw_blocks(rng, sh->smodel.n_pairs, sh->block, w->sblocks);
    size_t path = (sh->smodel.n_pairs + 1) * sh->sw;
    if (el_boot_state_model_sum(&sh->smodel, w->sblocks, nb, w->spath, w->sum, w->feat,
                                w->spath + path))
        return 1;
    return sh->prov->solve(&sh->dims, w->sum, w->a, NULL, NULL, w->work);
}

/* Continuous eigenvalues of the r x r reduced matrix a. Returns 0 or 1.
 * el_eig first (a third of LAPACK's time at r = 8, where LAPACK's call
 * overhead was the largest cost of a replicate); LAPACK when it reports a
 * failure. */
static int eigen_lambda(boot_worker *w, const double *a, size_t r, double dt)
{
    /* Wide states go to LAPACK first: its blocked Hessenberg reduction
     * and multishift QR take half el_eig's time at 200 states. Its order
     * of the eigenvalues differs, and the matcher breaks exact ties (two
     * real eigenvalues between two real modes cost the same either way
     * round) by that order: on such a log a mode's replicates then differ
     * as much as two equally good readings do (docs/uncertainty.md). */
    if (r >= w->sh->wide_from || el_eig_values(r, a, r, w->wr, w->wi, w->eig) != 0) {
        memcpy(w->ageev, a, r * r * sizeof(double));
        lapack_int info = LAPACKE_dgeev_work(LAPACK_COL_MAJOR, 'N', 'N', (lapack_int)r,
                                             w->ageev, (lapack_int)r, w->wr, w->wi, NULL, 1,
                                             NULL, 1, w->geev, w->lwork);
        if (info != 0)
            return 1;
    }
    for (size_t i = 0; i < r; i++) {
        int nyq = 0;
        el_modes_lambda(w->wr[i], w->wi[i], dt, &w->lre[i], &w->lim[i], &nyq);
        /* mu == 0 gives -inf: keep it finite at the smallest positive
         * |mu| so that sums and distances stay defined. */
        if (!isfinite(w->lre[i]))
            w->lre[i] = log(DBL_MIN) / dt;
        if (!isfinite(w->lim[i]))
            return 1;
    }
    return 0;
}

/* From the replicate's reduced matrix w->a: its modes matched to the point
 * estimate (mre, mim), the largest Re lambda, trace and determinant, all
 * shifted by the measured bias when there is one. Returns 0 or 1 (failed). */
static int replicate_modes(boot_worker *w, double *mre, double *mim, int *amb,
                           double *max_re, double *trace, double *det)
{
    boot_shared *sh = w->sh;
    size_t r = sh->r;
    if (eigen_lambda(w, w->a, r, sh->dt))
        return 1;
    if (el_boot_match(w->matcher, w->lre, w->lim, r, mre, mim, amb) != 0)
        return 1;
    const double *br = sh->bias_re, *bi = sh->bias_im;
    if (br != NULL)
        for (size_t q = 0; q < sh->n_modes; q++) {
            mre[q] -= br[q];
            mim[q] = fmax(0.0, mim[q] - bi[q]);
        }
    *max_re = -HUGE_VAL;
    for (size_t j = 0; j < r; j++) {
        double re = w->lre[j];
        if (br != NULL)
            re -= br[el_boot_matched_mode(w->matcher, j)];
        if (re > *max_re)
            *max_re = re;
    }
    if (sh->has_plane) {
        *trace = w->lre[0] + w->lre[1] - (br != NULL ? sh->bias_trace : 0.0);
        *det = w->lre[0] * w->lre[1] - w->lim[0] * w->lim[1]
               - (br != NULL ? sh->bias_det : 0.0);
    }
    return 0;
}

/* One model-based replicate of the bias round (uncorrected quantities). */
static void run_bias_replicate(boot_worker *w, size_t rep)
{
    boot_shared *sh = w->sh;
    size_t nm = sh->n_modes, stride = 2 * nm + 2;
    el_rng rng;
    el_rng_seed(&rng, sh->seed, BOOT_BIAS_STREAM + (uint64_t)rep);
    double *rec = sh->bias_rec + rep * stride, max_re = 0.0;
    int amb = 0;
    int fail = sh->spread_round ? spread_replicate(w, &rng) : model_replicate(w, &rng);
    if (!fail)
        fail = replicate_modes(w, rec, rec + nm, &amb, &max_re, rec + 2 * nm,
                               rec + 2 * nm + 1);
    sh->bias_ok[rep] = (unsigned char)!fail;
}

/* Everything after the refit: modes, matching and the records of
 * replicate rep (fail: the refit was singular). */
static void finish_replicate(boot_worker *w, size_t rep, int fail)
{
    boot_shared *sh = w->sh;
    size_t nm = sh->n_modes;
    int amb = 0;
    double max_re = 0.0, tr = 0.0, det = 0.0;
    if (!fail)
        fail = replicate_modes(w, sh->mode_re + rep * nm, sh->mode_im + rep * nm, &amb,
                               &max_re, &tr, &det);
    sh->ok[rep] = (unsigned char)!fail;
    if (fail)
        return;
    sh->amb[rep] = (unsigned char)amb;
    sh->stable[rep] = (unsigned char)(max_re < 0.0);
    el_boot_match_discriminants(w->matcher, sh->mode_disc + rep * nm);
    for (size_t j = 0; j < sh->r; j++) {
        size_t q = el_boot_matched_mode(w->matcher, j);
        sh->eig_mode[rep * sh->r + j] = q;
        sh->eig_re[rep * sh->r + j] = w->lre[j] - (sh->bias_re != NULL ? sh->bias_re[q] : 0.0);
    }
    if (sh->has_plane) {
        sh->trace[rep] = tr;
        sh->det[rep] = det;
    }
}

static void run_replicate(boot_worker *w, size_t rep)
{
    boot_shared *sh = w->sh;
    el_rng rng;
    el_rng_seed(&rng, sh->seed, (uint64_t)rep);
    int fail;
    if (sh->kind == EL_RESAMPLE_BLOCKS) {
        size_t nb = el_boot_draw_blocks_grid(&rng, sh->m, sh->block, sh->grid, w->blocks);
        fail = el_boot_engine_assemble(sh->engine, w->blocks, nb, w->a, NULL, w->work);
    } else {
        fail = model_replicate(w, &rng);
    }
    finish_replicate(w, rep, fail);
}

static void report_progress(boot_worker *w, int final);

/* Replicates [rep0, rep0 + count) of moving blocks with their sums made
 * together (el_boot_engine_sum_many: a wide engine's table rows read once
 * for the batch), then each refit and finished as run_replicate does:
 * the same draws, sums and records. */
static void run_replicate_batch(boot_worker *w, size_t rep0, size_t count)
{
    boot_shared *sh = w->sh;
    const el_boot_block *bl[EL_BOOT_MAX_BATCH];
    size_t nb[EL_BOOT_MAX_BATCH];
    double *sums[EL_BOOT_MAX_BATCH];
    size_t d = el_boot_engine_features(sh->engine);
    for (size_t k = 0; k < count; k++) {
        el_rng rng;
        el_rng_seed(&rng, sh->seed, (uint64_t)(rep0 + k));
        el_boot_block *blocks = w->bblocks + k * sh->max_blocks;
        nb[k] = el_boot_draw_blocks_grid(&rng, sh->m, sh->block, sh->grid, blocks);
        bl[k] = blocks;
        sums[k] = w->bsum + k * d;
    }
    el_boot_engine_sum_many(sh->engine, bl, nb, count, sums, w->work + d);
    for (size_t k = 0; k < count; k++) {
        int fail = el_boot_engine_solve(sh->engine, sums[k], w->a, NULL, w->work);
        finish_replicate(w, rep0 + k, fail);
        atomic_fetch_add(&sh->done, 1);
        report_progress(w, 0);
    }
}

static void report_progress(boot_worker *w, int final)
{
    const el_boot_options *opt = w->opt;
    if (opt == NULL || opt->progress == NULL)
        return;
    size_t done = atomic_load(&w->sh->done), total = w->sh->total;
    size_t step = total / 100 > 0 ? total / 100 : 1;
    if (final || done >= w->reported + step) {
        w->reported = done;
        opt->progress(opt->progress_ctx, done, total);
    }
}

static void worker_loop(boot_worker *w)
{
    boot_shared *sh = w->sh;
    size_t total = sh->bias_phase ? sh->n_bias : sh->total;
    if (!sh->bias_phase && sh->batch > 1) {
        for (;;) {
            size_t rep = atomic_fetch_add(&sh->next, sh->batch);
            if (rep >= total)
                break;
            size_t count = total - rep < sh->batch ? total - rep : sh->batch;
            run_replicate_batch(w, rep, count);
        }
        return;
    }
    for (;;) {
        size_t rep = atomic_fetch_add(&sh->next, 1);
        if (rep >= total)
            break;
        if (sh->bias_phase) {
            run_bias_replicate(w, rep);
            continue;
        }
        run_replicate(w, rep);
        atomic_fetch_add(&sh->done, 1);
        report_progress(w, 0);
    }
}

static void *worker_thread(void *arg)
{
    worker_loop(arg);
    return NULL;
}

static size_t thread_count(size_t asked, size_t replicates)
{
    size_t t = asked;
    if (t == 0) {
        long c = sysconf(_SC_NPROCESSORS_ONLN);
        t = c > 0 ? (size_t)c : 1;
    }
    if (t > replicates)
        t = replicates;
    if (t > 256)
        t = 256;
    return t < 1 ? 1 : t;
}

/* The automatic block length with its floor (EL_BOOT_MAX_BLOCKS). */
static size_t block_floor(size_t block, size_t pairs)
{
    size_t floor_len = (pairs + EL_BOOT_MAX_BLOCKS - 1) / EL_BOOT_MAX_BLOCKS;
    size_t b = block > floor_len ? block : floor_len;
    return b > pairs ? pairs : b;
}

static el_status check_options(const el_boot_options *opt, el_error *err)
{
    if (!(opt->level > 0.0 && opt->level < 1.0)) {
        el_error_set(err, EL_ERR_USAGE, "level %g is not between 0 and 1", opt->level);
        el_error_option(err, "--level");
        el_error_hint(err, "give the two-sided level as a fraction, e.g. --level 0.95");
        return EL_ERR_USAGE;
    }
    if (opt->kind != EL_RESAMPLE_BLOCKS && opt->kind != EL_RESAMPLE_MODEL) {
        el_error_set(err, EL_ERR_USAGE, "unknown resampling kind");
        el_error_option(err, "--resample");
        el_error_hint(err, "use --resample blocks or --resample model");
        return EL_ERR_USAGE;
    }
    return EL_OK;
}
/* The result from the per-replicate records (el_boot_summarise). */
static el_status summarise(const boot_shared *sh, const el_modes *point,
                           const el_boot_options *opt, el_boot_result *res,
                           el_error *err)
{
    el_boot_records rec = { sh->total, sh->n_modes, sh->has_plane, sh->ok, sh->amb,
                            sh->stable, sh->mode_re, sh->mode_im, sh->trace, sh->det,
                            sh->mode_disc, (double)sh->m * sh->dt };
    return el_boot_summarise(&rec, point, opt->level, res, err);
}

/* Largest distance between the engine's own full-sample eigenvalues and
 * the point estimate's, or -1 when they cannot be compared. */
static double point_mismatch(boot_worker *w, const boot_shared *sh, const el_modes *point)
{
    if (eigen_lambda(w, sh->a0, sh->r, sh->dt))
        return -1.0;
    double *re = w->feat, *im = w->feat + sh->n_modes; /* feat holds >= 2 r doubles */
    int amb = 0;
    if (el_boot_match(w->matcher, w->lre, w->lim, sh->r, re, im, &amb) != 0)
        return -1.0;
    double worst = 0.0;
    for (size_t q = 0; q < sh->n_modes; q++) {
        const el_mode *md = &point->modes[q];
        if (!isfinite(md->lambda_re))
            continue;
        double dist = hypot(re[q] - md->lambda_re, im[q] - fabs(md->lambda_im));
        double scale = hypot(md->lambda_re, md->lambda_im) + 1.0 / sh->dt;
        if (dist / scale > worst)
            worst = dist / scale;
    }
    return worst;
}

typedef struct {
    double *states, *resid, *a0, *b0, *c0, *pwork, *bias, *bias_samples, *spread, *pending;
    double *est_states;           /* the method's own states (non-ls methods) */
    double *s_fit;                /* spread round: A, B, c and residuals */
    unsigned char *bias_ok;
    el_boot_engine *engine;
    el_boot_engine *est_engine;   /* engine of the method's provider (non-ls) */
    boot_worker *workers;
    size_t n_workers;
    unsigned char *flags;
    double *rec;
    size_t *eig_mode;
} boot_buffers;

static void buffers_free(boot_buffers *b)
{
    for (size_t i = 0; i < b->n_workers; i++)
        worker_free(&b->workers[i]);
    free(b->workers);
    free(b->states);
    free(b->est_states);
    free(b->s_fit);
    el_boot_engine_destroy(b->est_engine);
    free(b->resid);
    free(b->a0);
    free(b->b0);
    free(b->c0);
    free(b->pwork);
    el_boot_engine_destroy(b->engine);
    free(b->flags);
    free(b->rec);
    free(b->eig_mode);
    free(b->bias);
    free(b->bias_samples);
    free(b->pending);
    free(b->bias_ok);
    free(b->spread);
}

/* Runs the current phase on every worker (the calling thread is worker 0)
 * and returns the number of threads that took part. */
static size_t run_phase(boot_buffers *bf)
{
    boot_shared *sh = bf->workers[0].sh;
    atomic_store(&sh->next, 0);
    pthread_t *tid = calloc(bf->n_workers, sizeof(pthread_t));
    size_t started = 1;
    if (tid != NULL)
        for (size_t i = 1; i < bf->n_workers; i++) {
            if (pthread_create(&tid[i], NULL, worker_thread, &bf->workers[i]) != 0)
                break;
            started++;
        }
    worker_loop(&bf->workers[0]);
    for (size_t i = 1; i < started; i++)
        pthread_join(tid[i], NULL);
    free(tid);
    return started;
}

/* Trace and determinant of the point estimate (2-state models). */
static void point_plane(const el_modes *point, double *trace, double *det)
{
    const el_mode *a = &point->modes[0];
    if (point->n_modes == 1) {
        *trace = 2.0 * a->lambda_re;
        *det = a->lambda_re * a->lambda_re + a->lambda_im * a->lambda_im;
    } else {
        const el_mode *b = &point->modes[1];
        *trace = a->lambda_re + b->lambda_re;
        *det = a->lambda_re * b->lambda_re - a->lambda_im * b->lambda_im;
    }
}

static int cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

/* Bias correction in the manner of the bootstrap-after-bootstrap (Kilian
 * 1998), taken per mode rather than on the matrix: the median of the matched
 * modes of model-based replicates minus the point estimate measures the
 * least-squares bias, which resampled pairs cannot see (they reproduce the
 * spread of the estimate but not its small-sample drift toward more
 * damping, about -(1 + 3 rho)/n per step for an AR(1), -5/T near a unit
 * root). Every replicate is then shifted by it, so the replicate
 * distribution is centred on the bias-corrected estimate. Per mode, not per
 * matrix entry: a strongly growing mode is estimated super-consistently and
 * must not inherit the Monte Carlo noise of the other modes' correction
 * (a matrix-level correction did exactly that in the calibration, halving
 * the coverage of saddles). Means are taken in replicate order, so they do
 * not depend on the thread count. */
static el_status measure_bias(boot_shared *sh, boot_buffers *bf, el_boot_bias_plan plan,
                             el_error *err)
{
    size_t nm = sh->n_modes, nb = plan.replicates, stride = 2 * nm + 2;
    double wgt = plan.weight;
    bf->bias = calloc(2 * nm, sizeof(double));
    bf->spread = calloc(stride, sizeof(double));
    bf->pending = calloc(nm + 1, sizeof(double));
    bf->bias_samples = malloc(nb * stride * sizeof(double));
    bf->bias_ok = calloc(nb, 1);
    if (!bf->bias || !bf->spread || !bf->pending || !bf->bias_samples || !bf->bias_ok)
        return el_error_set(err, EL_ERR_NOMEM, "out of memory (bootstrap bias)");
    sh->bias_rec = bf->bias_samples;
    sh->bias_ok = bf->bias_ok;
    sh->n_bias = nb;
    sh->bias_phase = 1;
    run_phase(bf);
    sh->bias_phase = 0;
    size_t n_ok = 0;
    for (size_t i = 0; i < nb; i++)
        n_ok += sh->bias_ok[i];
    if (2 * n_ok < nb)
        return EL_OK; /* too few model replicates: leave the replicates as they are */
    /* Medians, not means: the estimate of a growing mode has Cauchy-like
     * tails (a ratio of random amplitudes), and the mean of 200 of them
     * moves by more than the width of its bounds. */
    double *med = malloc(stride * sizeof(double)), *tmp = malloc(n_ok * sizeof(double));
    if (med == NULL || tmp == NULL) {
        free(med);
        free(tmp);
        return el_error_set(err, EL_ERR_NOMEM, "out of memory (bootstrap bias)");
    }
    int implausible = 0;
    for (size_t k = 0; k < stride; k++) {
        size_t c = 0;
        for (size_t i = 0; i < nb; i++)
            if (sh->bias_ok[i])
                tmp[c++] = sh->bias_rec[i * stride + k];
        qsort(tmp, c, sizeof(double), cmp_double);
        med[k] = el_boot_quantile(tmp, c, 0.5);
        bf->spread[k] = (el_boot_quantile(tmp, c, 0.75) - el_boot_quantile(tmp, c, 0.25)) / 1.349;
        /* A small-sample bias is O(1/T) in Re lambda (T the log's
         * duration), mostly far inside the O(1/sqrt(T)) spread. A median
         * shift of more than half the spread (IQR/1.349) that is also
         * larger than any such bias (BOOT_BIAS_PLAUSIBLE_T (r + 1) / T) is
         * not one: the model does not reproduce its own data (sensor
         * noise, a misfit), and shifting by it would move the bounds off
         * the estimate (measured: docs/accuracy.md, D3). Both tests are
         * needed: near a unit root the bias and the spread are both O(1/T)
         * (a saddle's growing mode, docs/uncertainty.md), and the spread
         * test alone refused exactly the correction that case needs. */
        if (k < nm) {
            double sd = (el_boot_quantile(tmp, c, 0.75) - el_boot_quantile(tmp, c, 0.25)) / 1.349;
            double shift = med[k] - sh->point->modes[k].lambda_re;
            double bias_cap = BOOT_BIAS_PLAUSIBLE_T * (double)(sh->r + 1)
                              / ((double)sh->m * sh->dt);
            /* With few replicates (a long log's tapered round) the median
             * itself is noisy: a shift within three of its Monte Carlo
             * standard errors (1.2533 sd / sqrt(c)) is no evidence of a
             * misfit. With the full 200 this is implied by the first test
             * (3 x 1.2533 / sqrt(200) = 0.27 < 0.5). Fewer than
             * EL_BOOT_BIAS_MIN_JUDGED replicates cannot show a spread at all;
             * their weight is then at most a tenth. */
            double mc_se = 1.2533 * sd / sqrt((double)c);
            if (c >= EL_BOOT_BIAS_MIN_JUDGED && isfinite(shift) && fabs(shift) > 0.5 * sd
                && fabs(shift) > bias_cap
                && fabs(shift) > 3.0 * mc_se) {
                implausible = 1;
                sh->bias_refused_spreads = fmax(sh->bias_refused_spreads, fabs(shift) / sd);
            }
        }
    }
    if (implausible || sh->spread_round) {
        free(med);
        free(tmp);
        /* A spread round whose median left the estimate (a model that
         * does not reproduce it) does not widen; else it only widens. */
        if (implausible) {
            sh->bias_refused = !sh->spread_round;
            return EL_OK;
        }
        sh->model_spread = bf->spread;
        sh->model_weight = wgt;
        sh->model_count = n_ok;
        return EL_OK;
    }
    if (n_ok < EL_BOOT_BIAS_MIN_JUDGED) {
        /* Too few replicates for a spread of their own: keep the shifts and
         * judge them against the replicates' spread (judge_small_round). */
        for (size_t q = 0; q < nm; q++)
            bf->pending[q] = med[q] - sh->point->modes[q].lambda_re;
        sh->bias_pending_shift = bf->pending;
    }
    for (size_t q = 0; q < nm; q++) {
        const el_mode *md_q = &sh->point->modes[q];
        double b_re = med[q] - md_q->lambda_re;
        double b_im = med[nm + q] - fabs(md_q->lambda_im);
        bf->bias[q] = isfinite(b_re) ? wgt * b_re : 0.0;
        /* A real mode's replicates fold onto Im >= 0: no frequency bias. */
        bf->bias[nm + q] = md_q->pair && isfinite(b_im) ? wgt * b_im : 0.0;
    }
    if (sh->has_plane) {
        double tr, det;
        point_plane(sh->point, &tr, &det);
        sh->bias_trace = isfinite(med[2 * nm] - tr) ? wgt * (med[2 * nm] - tr) : 0.0;
        sh->bias_det = isfinite(med[2 * nm + 1] - det) ? wgt * (med[2 * nm + 1] - det)
                                                        : 0.0;
    }
    free(med);
    free(tmp);
    sh->bias_re = bf->bias;
    sh->bias_im = bf->bias + nm;
    /* A tapered round widens with its weight (so the bounds do not jump at
     * EL_BOOT_BIAS_FULL_PAIRS), and not at all below EL_BOOT_BIAS_MIN_JUDGED
     * replicates: their IQR is too noisy, and taking the larger of two
     * spreads would turn that noise into wider bounds. */
    sh->model_spread = bf->spread;
    sh->model_weight = wgt;
    sh->model_count = n_ok;
    return EL_OK;
}

/* Block starts on a grid of about an eighth of the block (and the block a
 * multiple of it), so the prefix table an engine keeps is that much
 * smaller and a replicate's block sums hit the cache: measured 4x faster
 * on 100,000 pairs (bench_boot). Short blocks keep every start. The grid
 * is a multiple of base, the stride of an engine built before the block
 * length was known (grid_base; 1 when the engine waits for it): the
 * automatic block is at least pairs / EL_BOOT_MAX_BLOCKS, so an eighth of
 * it is at least base and the grid is an eighth rounded down to a
 * multiple of base (a finer grid: more starts, closer to the plain
 * moving-block bootstrap). */
static void choose_grid(boot_shared *sh, size_t pairs, size_t base)
{
    size_t grid = sh->block / 8;
    sh->grid = 1;
    if (base > 1)
        grid = grid < base ? base : grid / base * base;
    if (grid <= 1)
        return;
    size_t rounded = (sh->block + grid - 1) / grid * grid;
    if (rounded > pairs)
        return;
    sh->block = rounded;
    sh->grid = grid;
}

/* Stride of an engine built while the automatic block length is still
 * being chosen: the smallest grid choose_grid can pick for it. */
static size_t grid_base(size_t pairs)
{
    size_t b = pairs / (8 * (size_t)EL_BOOT_MAX_BLOCKS);
    return b < 1 ? 1 : b;
}

/* The block table of el_boot_engine_plan_blocks, when the block length
 * is a multiple of the engine's stride and the table stays within the
 * memory the prefix table may take (else blocks read two prefix rows;
 * the sums are the same to the last bit either way). Wide states have a
 * wide engine (el_boot_engine_create_wide), whose float tables of the
 * block and of the cut block replace its prefix table in the same memory:
 * always planned. */
static el_status plan_block_table(el_boot_engine *engine, size_t block, int wide,
                                  el_error *err)
{
    if (wide)
        return block <= el_boot_engine_pairs(engine)
                   ? el_boot_engine_plan_blocks(engine, block, err)
                   : EL_OK;
    size_t stride = el_boot_engine_stride(engine);
    double rows = (double)(el_boot_engine_pairs(engine) / stride + 1);
    double bytes = rows * (double)el_boot_engine_features(engine) * sizeof(double);
    if (block % stride != 0 || block > el_boot_engine_pairs(engine)
        || bytes > (double)EL_BOOT_DEFAULT_MAX_BYTES)
        return EL_OK;
    return el_boot_engine_plan_blocks(engine, block, err);
}

/* Building the engine is the longest step of the set-up and needs only the
 * states and a stride, not the block length: with two or more threads it
 * runs beside the full-sample refit, the residuals and the block length
 * selection. */
typedef struct {
    const el_boot_provider *prov;
    el_boot_dims dims;
    const double *states;
    size_t n_states, stride;
    el_boot_engine *engine;
    el_status st;
    el_error err;
    pthread_t tid;
    int on_thread;
    int wide;                     /* el_boot_engine_create_wide (wide states) */
} engine_job;

static void *engine_job_run(void *arg)
{
    engine_job *j = arg;
    el_error_clear(&j->err);
    if (j->wide)
        j->st = el_boot_engine_create_wide(j->prov, &j->dims, j->states, j->n_states,
                                           j->stride, &j->engine, &j->err);
    else
        j->st = el_boot_engine_create_strided(j->prov, &j->dims, j->states, j->n_states,
                                              j->stride, &j->engine, &j->err);
    return NULL;
}

/* Starts the job on a thread of its own when parallel, else runs it now
 * (also when no thread can be made). */
static void engine_job_start(engine_job *j, int parallel)
{
    j->on_thread = parallel && pthread_create(&j->tid, NULL, engine_job_run, j) == 0;
    if (!j->on_thread)
        engine_job_run(j);
}

/* Waits for the job; its engine then belongs to *engine (NULL on error,
 * the job's error copied to err). */
static el_status engine_job_finish(engine_job *j, el_boot_engine **engine, el_error *err)
{
    if (j->on_thread)
        pthread_join(j->tid, NULL);
    j->on_thread = 0;
    *engine = j->engine;
    j->engine = NULL;
    if (j->st != EL_OK && err != NULL)
        *err = j->err;
    return j->st;
}

/* The least-squares states: el_boot_reduced_states, or with inputs the
 * reference estimator's boot_states (the least-squares whitening: the
 * model's own method is not consulted for the scale). */
static el_status ls_states(const el_series *series, const el_series *inputs,
                           const el_model *model, size_t threads, double **states,
                           el_error *err)
{
    if (model->n_inputs == 0)
        return el_boot_reduced_states_threads(series, model, threads, states, err);
    size_t n_states = 0;
    return el_estimator_reference()->boot_states(series, inputs, model, states, &n_states,
                                                 err);
}

/* The states the engine resamples and the stride to build it with. The
 * least-squares states serve every estimator whose boot_states whiten the
 * same basis the same way (inputs included); an estimator with
 * own_boot_states (tls) gets its own. The stride: from a given block length its
 * grid, for an automatic one grid_base, for model-based resampling 1. */
static el_status engine_states(const el_series *series, const el_series *inputs,
                               const el_model *model, const el_boot_options *opt,
                               boot_shared *sh, boot_buffers *bf, engine_job *job,
                               el_error *err)
{
    const el_estimator_type *type = el_estimator_for(model->method);
    const el_boot_provider *prov = el_estimator_provider_for(model);
    if (prov == NULL)
        return el_error_set(err, EL_ERR_INTERNAL, "no bootstrap statistics for method %s",
                            el_method_name(model->method));
    el_boot_dims dims = el_estimator_boot_dims(model);
    size_t n_states = model->n_pairs + 1;
    const double *states = bf->states;
    sh->grid = 1;
    if (type->own_boot_states) {
        el_status st = type->boot_states(series, inputs, model, &bf->est_states, &n_states,
                                         err);
        if (st != EL_OK)
            return st;
        states = bf->est_states;
    }
    size_t span = prov->span(&dims);
    if (n_states < span)
        return el_error_set(err, EL_ERR_DATA, "too few samples for the %s bootstrap",
                            el_method_name(model->method));
    size_t pairs = n_states - span + 1;
    sh->m = pairs;
    sh->smodel = (el_boot_state_model){ prov, dims, states, n_states - 1,
                                        NULL, NULL, NULL, NULL };
    size_t stride = 1;
    if (opt->kind == EL_RESAMPLE_BLOCKS) {
        if (opt->block_length > 0) {
            sh->block = opt->block_length < pairs ? opt->block_length : pairs;
            choose_grid(sh, pairs, 1);
            stride = sh->grid;
        } else {
            stride = grid_base(pairs);
        }
    }
    memset(job, 0, sizeof *job);
    job->prov = prov;
    job->dims = dims;
    job->states = states;
    job->n_states = n_states;
    job->stride = stride;
    job->wide = dims.r >= sh->wide_from && prov->accumulate != NULL;
    sh->prov = prov;
    return EL_OK;
}

/* The block length: automatic from the least-squares residuals (every
 * method takes it from them: the dependence of the data does not depend on
 * the estimator), with its floor and grid for the engine's pairs. */
static el_status block_length(const el_boot_options *opt, boot_shared *sh, boot_buffers *bf,
                              size_t ls_pairs, size_t r, size_t engine_stride,
                              size_t threads, int *block_auto, el_error *err)
{
    *block_auto = opt->block_length == 0;
    if (!*block_auto) {
        if (opt->block_length > ls_pairs) {
            el_error_set(err, EL_ERR_USAGE,
                         "block length %zu is longer than the %zu snapshot pairs",
                         opt->block_length, ls_pairs);
            el_error_option(err, "--block");
            el_error_hint(err, "give a block length below %zu, or --block auto",
                          ls_pairs / 3 + 1);
            return EL_ERR_USAGE;
        }
        if (opt->kind != EL_RESAMPLE_BLOCKS)
            sh->block = opt->block_length;
        return EL_OK; /* blocks: engine_states set block and grid */
    }
    el_boot_resid_source src = { bf->states, bf->a0, bf->b0, bf->c0, ls_pairs, r, sh->nu_ls };
    el_status st = el_boot_auto_block(bf->resid, &src, ls_pairs, r, threads, &sh->block, err);
    if (st != EL_OK)
        return st;
    sh->block_pw = sh->block;
    sh->grid = 1;
    if (opt->kind == EL_RESAMPLE_BLOCKS) {
        sh->block = block_floor(sh->block, sh->m);
        choose_grid(sh, sh->m, engine_stride);
    }
    return EL_OK;
}

/* The spread round's size (el_boot_spread_rule) and model
 * (el_boot_state_model_fit); no round, or a fit that fails, leaves the
 * replicates as the blocks make them. */
static el_status prepare_spread_round(boot_shared *sh, boot_buffers *bf, size_t n_pairs,
                                      el_error *err)
{
    el_boot_state_model *sm = &sh->smodel;
    sh->s_plan = el_boot_spread_rule(n_pairs, sh->m, sh->prov->n_features(&sh->dims));
    if (sh->s_plan.replicates == 0)
        return EL_OK;
    int fitted = 0;
    el_status st = el_boot_state_model_fit(sm, &bf->s_fit, &fitted, err);
    if (st != EL_OK || !fitted)
        return st;
    sh->spread_round = 1;
    return EL_OK;
}

/* Everything before the replicates: the least-squares states, fit,
 * residuals and block length (every method takes its block length from
 * them; with inputs the fit is DMD with control), and the engine of the
 * model's own method, built beside them when there are threads to spare.
 * A method other than least squares resamples its own statistics (the
 * engine of its provider, el_estimator.h), so each replicate is that
 * estimator refitted; only moving blocks, because the model-based scheme
 * regenerates one-step pairs, which the lagged statistics of iv/ssi and
 * the backward fit of fb do not consist of. */
static el_status prepare(const el_series *series, const el_series *inputs,
                         const el_model *model, const el_boot_options *opt,
                         boot_shared *sh, boot_buffers *bf, int *block_auto,
                         el_error *err)
{
    size_t r = model->rank, m = model->n_pairs, nu = model->n_inputs;
    el_boot_dims dims = { r, nu, model->lags };
    const el_estimator_type *type = el_estimator_for(model->method);
    const el_estimator_type *ref = el_estimator_reference();
    if (type == NULL)
        return el_error_set(err, EL_ERR_INTERNAL, "no estimator for method %d",
                            (int)model->method);
    if (opt->kind == EL_RESAMPLE_MODEL && type->model_resampling != EL_MODEL_RESAMPLING_FULL) {
        el_error_set(err, EL_ERR_USAGE, "model-based resampling works with --method ls only");
        el_error_option(err, "--resample");
        el_error_hint(err, "use --resample blocks (the default) with --method %s",
                      el_method_name(model->method));
        return EL_ERR_USAGE;
    }
    size_t threads = thread_count(opt->threads, (size_t)-1);
    sh->wide_from = opt->wide_states > 0 ? opt->wide_states : EL_BOOT_WIDE_STATES;
    el_status st = ls_states(series, inputs, model, threads, &bf->states, err);
    if (st != EL_OK)
        return st;
    engine_job job;
    st = engine_states(series, inputs, model, opt, sh, bf, &job, err);
    if (st != EL_OK)
        return st;
    engine_job_start(&job, threads >= 2);
    const el_boot_provider *ls = ref->provider;
    size_t d = ls->n_features(&dims);
    bf->a0 = malloc(r * r * sizeof(double));
    bf->b0 = malloc((r * nu + 1) * sizeof(double));
    bf->c0 = malloc(r * sizeof(double));
    bf->pwork = malloc((4 * d + ls->work_doubles(&dims)) * sizeof(double));
    /* Residuals stored when model-based replicates (or the bias round)
     * read them, or when they are small; else made per component for the
     * block length only (EL_BOOT_RESID_STORE_MAX_CELLS). */
    const el_boot_bias_plan bias_plan = el_boot_bias_rule(model->n_pairs);
    int model_reads = opt->kind == EL_RESAMPLE_MODEL
                      || (opt->bias_correct
                          && type->model_resampling == EL_MODEL_RESAMPLING_FULL
                          && bias_plan.replicates > 0);
    size_t cap = opt->resid_store_cells > 0 ? opt->resid_store_cells
                                            : EL_BOOT_RESID_STORE_MAX_CELLS;
    int store = model_reads || (opt->block_length == 0 && (m + 1) * r <= cap);
    sh->nu_ls = nu;
    if (store)
        bf->resid = el_bigmem_alloc((m + 1) * r * sizeof(double));
    if (!bf->a0 || !bf->b0 || !bf->c0 || !bf->pwork || (store && !bf->resid)) {
        st = el_error_set(err, EL_ERR_NOMEM, "out of memory (bootstrap)");
    } else if (el_boot_full_sample_solve(ls, &dims, bf->states, m + 1, bf->a0, bf->b0, bf->c0,
                                 bf->pwork)) {
        el_error_set(err, EL_ERR_NUMERIC, "bootstrap: the full-sample refit is singular");
        el_error_hint(err, "use a lower --rank");
        st = EL_ERR_NUMERIC;
    }
    if (st == EL_OK && bf->resid != NULL)
        el_boot_reduced_residuals(bf->states, m, r, nu, bf->a0, bf->b0, bf->c0, bf->resid);
    /* The engine is done by now (it and the refit take about as long);
     * the block length then has every thread. */
    el_boot_engine *engine = NULL;
    el_status jst = engine_job_finish(&job, &engine, st == EL_OK ? err : NULL);
    /* Wide states: the engine re-adds pairs in runs, and an automatic
     * block's grid is the stride the engine really has (its memory cap
     * raises it above job.stride when one pair's features are many), so
     * that blocks start on stored prefixes instead of re-adding up to a
     * stride of pairs at both ends (most of a replicate's time at 200
     * channels). Narrower states keep the grid of job.stride. */
    size_t grid_stride = job.stride;
    if (jst == EL_OK && r >= sh->wide_from) {
        el_boot_engine_set_runs(engine, 1);
        grid_stride = el_boot_engine_stride(engine);
    }
    if (st == EL_OK && jst == EL_OK)
        st = block_length(opt, sh, bf, m, r, grid_stride, threads, block_auto, err);
    if (type == ref)
        bf->engine = engine;
    else
        bf->est_engine = engine;
    if (st != EL_OK)
        return st;
    if (jst != EL_OK)
        return jst;
    if (opt->kind == EL_RESAMPLE_BLOCKS) {
        st = plan_block_table(engine, sh->block, job.wide, err);
        if (st != EL_OK)
            return st;
    }
    sh->engine = engine;
    sh->dims = dims;
    sh->w0 = bf->states;
    sh->resid = bf->resid;
    sh->a0 = bf->a0;
    sh->b0 = bf->b0;
    sh->c0 = bf->c0;
    sh->r = r;
    sh->nu = nu;
    sh->sw = r + nu;
    if (type == ref)
        return EL_OK;
    /* The method's own full-sample refit: the point of the replicates. */
    double *grown = realloc(bf->pwork, el_boot_engine_work_doubles(engine) * sizeof(double));
    if (grown == NULL)
        return el_error_set(err, EL_ERR_NOMEM, "out of memory (bootstrap)");
    bf->pwork = grown;
    el_boot_block all = { 0, sh->m };
    if (el_boot_engine_assemble(engine, &all, 1, bf->a0, bf->c0, bf->pwork)) {
        el_error_set(err, EL_ERR_NUMERIC, "bootstrap: the full-sample %s refit is singular",
                     el_method_name(model->method));
        el_error_hint(err, "use a lower --rank");
        return EL_ERR_NUMERIC;
    }
    if (opt->bias_correct && opt->kind == EL_RESAMPLE_BLOCKS
        && type->model_resampling == EL_MODEL_RESAMPLING_SPREAD)
        return prepare_spread_round(sh, bf, model->n_pairs, err);
    return EL_OK;
}

/* Median and spread (IQR / 1.349, the standard deviation for a normal
 * law) of the finite values of v[i * stride] over the replicates that gave
 * a model (tmp: total doubles); NaN when none. */
static void replicate_location(const boot_shared *sh, const double *v, size_t stride,
                               double *tmp, double *median, double *spread)
{
    size_t c = 0;
    for (size_t i = 0; i < sh->total; i++)
        if (sh->ok[i] && isfinite(v[i * stride]))
            tmp[c++] = v[i * stride];
    *median = *spread = NAN;
    if (c == 0)
        return;
    el_sort_finite(tmp, c);
    *median = el_boot_quantile(tmp, c, 0.5);
    *spread = (el_boot_quantile(tmp, c, 0.75) - el_boot_quantile(tmp, c, 0.25)) / 1.349;
}

/* The factor that widens the block replicates of one quantity to the
 * spread the model-based replicates of the bias round found (1 when there
 * was no accepted round, for model-based replicates, or when the blocks
 * are already as wide). */
static double widen_factor(const boot_shared *sh, size_t k, double blocks_spread)
{
    /* Model-based replicates against model-based replicates: the ratio
     * would be Monte Carlo noise only. */
    if (sh->model_spread == NULL || sh->kind != EL_RESAMPLE_BLOCKS || !(blocks_spread > 0.0))
        return 1.0;
    double duration = (double)sh->m * sh->dt;
    return el_boot_widen_factor(sh->model_spread[k], blocks_spread,
                                sh->model_weight * el_boot_growth_share(sh->point, k, duration),
                                sh->model_count);
}

/* The refusal test of measure_bias for a round of fewer than
 * EL_BOOT_BIAS_MIN_JUDGED replicates (a long log's tapered round), whose own
 * quartiles are too noisy to measure a spread: the spread is taken from
 * the replicates of the run instead (hundreds, and the same quantity to
 * within the widening's Monte Carlo error when the model fits). The median
 * of c replicates is then compared with three of its Monte Carlo standard
 * errors (1.2533 sd / sqrt(c), conservative for small c: the median of one
 * draw has sd, not 1.25 sd), with half the spread and with the plausible
 * bias, as for a full round. Without it a 20,000-sample log with 30 %
 * sensor noise (12 bias replicates) kept its least-squares bounds 4 to 12
 * spreads off the truth and was never withheld (docs/uncertainty.md). On a
 * refusal the bias is dropped (the weight of such a round is at most
 * 20 / 200 anyway) and the run reports it as a full round's refusal. */
static void judge_small_round(boot_shared *sh, double *tmp)
{
    if (sh->bias_pending_shift == NULL)
        return;
    size_t nm = sh->n_modes, c = sh->model_count;
    double bias_cap = BOOT_BIAS_PLAUSIBLE_T * (double)(sh->r + 1) / ((double)sh->m * sh->dt);
    int refused = 0;
    for (size_t q = 0; q < nm && c > 0; q++) {
        double med, sd, shift = sh->bias_pending_shift[q];
        replicate_location(sh, sh->mode_re + q, nm, tmp, &med, &sd);
        double mc_se = 1.2533 * sd / sqrt((double)c);
        if (isfinite(shift) && sd > 0.0 && fabs(shift) > 0.5 * sd && fabs(shift) > bias_cap
            && fabs(shift) > 3.0 * mc_se) {
            refused = 1;
            sh->bias_refused_spreads = fmax(sh->bias_refused_spreads, fabs(shift) / sd);
        }
    }
    if (!refused)
        return;
    sh->bias_refused = 1;
    sh->bias_re = sh->bias_im = NULL;
    sh->bias_trace = sh->bias_det = 0.0;
    sh->model_spread = NULL;
}

/* Location of the replicate distribution (Kilian 1998, the second stage
 * of the bootstrap-after-bootstrap, centred on the bias-corrected
 * estimate). Resampled blocks of consecutive pairs keep part of the
 * dependence that makes least squares drift toward damping, so their
 * replicates are centred at theta_hat + b*, with b* somewhere between 0
 * (single pairs) and the full small-sample bias b (model-based
 * replicates, which regenerate the series); b* grows with the block
 * length (docs/uncertainty.md). The percentile interval needs the
 * replicates centred on theta_hat - b_hat (b_hat from the bias round, 0
 * without it). Kilian draws the second stage from the bias-corrected
 * model to get there; here every mode's replicates (and trace and
 * determinant) are shifted so that their median is that centre, which
 * agrees with it to first order and costs no second set of replicates.
 * The spread and skewness of the replicates are kept as they are. P(stable)
 * follows from the shifted eigenvalues. Medians in replicate order: the
 * same on any thread count. */
static el_status recentre(boot_shared *sh, el_error *err)
{
    size_t nm = sh->n_modes, r = sh->r, total = sh->total;
    double *tmp = malloc((total + 1) * sizeof(double));
    double *loc = malloc(6 * nm * sizeof(double) + 1); /* median, centre, factor */
    if (tmp == NULL || loc == NULL) {
        free(tmp);
        free(loc);
        return el_error_set(err, EL_ERR_NOMEM, "out of memory (bootstrap centre)");
    }
    judge_small_round(sh, tmp);
    double *med = loc, *ctr = loc + 2 * nm, *fac = loc + 4 * nm;
    for (size_t q = 0; q < nm; q++) {
        const el_mode *md = &sh->point->modes[q];
        double b_re = sh->bias_re != NULL ? sh->bias_re[q] : 0.0;
        double b_im = sh->bias_im != NULL ? sh->bias_im[q] : 0.0;
        double sp_re, sp_im;
        replicate_location(sh, sh->mode_re + q, nm, tmp, &med[q], &sp_re);
        replicate_location(sh, sh->mode_im + q, nm, tmp, &med[nm + q], &sp_im);
        ctr[q] = md->lambda_re - b_re;
        ctr[nm + q] = fabs(md->lambda_im) - b_im;
        fac[q] = widen_factor(sh, q, sp_re);
        fac[nm + q] = widen_factor(sh, nm + q, sp_im);
        if (!isfinite(med[q]) || !isfinite(ctr[q])) {
            med[q] = ctr[q] = 0.0;
            fac[q] = 1.0;
        }
        /* A real mode's replicates fold onto Im >= 0: left as they are. */
        if (!md->pair || !isfinite(med[nm + q]) || !isfinite(ctr[nm + q])) {
            med[nm + q] = ctr[nm + q] = 0.0;
            fac[nm + q] = 1.0;
        }
    }
    for (size_t i = 0; i < total; i++) {
        if (!sh->ok[i])
            continue;
        for (size_t q = 0; q < nm; q++) {
            double *re = &sh->mode_re[i * nm + q], *im = &sh->mode_im[i * nm + q];
            *re = ctr[q] + fac[q] * (*re - med[q]);
            *im = fmax(0.0, ctr[nm + q] + fac[nm + q] * (*im - med[nm + q]));
        }
        double top = -HUGE_VAL;
        for (size_t j = 0; j < r; j++) {
            size_t q = sh->eig_mode[i * r + j];
            top = fmax(top, ctr[q] + fac[q] * (sh->eig_re[i * r + j] - med[q]));
        }
        sh->stable[i] = (unsigned char)(top < 0.0);
    }
    if (sh->has_plane) {
        double tr, det, m_tr, m_det, s_tr, s_det;
        point_plane(sh->point, &tr, &det);
        replicate_location(sh, sh->trace, 1, tmp, &m_tr, &s_tr);
        replicate_location(sh, sh->det, 1, tmp, &m_det, &s_det);
        double f_tr = widen_factor(sh, 2 * nm, s_tr), f_det = widen_factor(sh, 2 * nm + 1, s_det);
        double c_tr = tr - sh->bias_trace, c_det = det - sh->bias_det;
        for (size_t i = 0; i < total; i++) {
            if (isfinite(m_tr) && isfinite(c_tr))
                sh->trace[i] = c_tr + f_tr * (sh->trace[i] - m_tr);
            if (isfinite(m_det) && isfinite(c_det))
                sh->det[i] = c_det + f_det * (sh->det[i] - m_det);
        }
    }
    free(tmp);
    free(loc);
    return EL_OK;
}

static el_status add_run_warnings(const boot_shared *sh, const el_model *model,
                                  double mismatch, el_boot_result *res,
                                  el_warnings *warnings)
{
    el_status st = EL_OK;
    if (model->rank < model->state_dim)
        st = el_warnings_add(warnings,
                             "bootstrap refits keep the rank-%zu basis of the point fit "
                             "fixed: the uncertainty of the basis itself is not in the bounds",
                             model->rank);
    if (st == EL_OK && res->failed_replicates > 0)
        st = el_warnings_add(warnings,
                             "%zu of %zu bootstrap replicates gave a singular refit and "
                             "were left out",
                             res->failed_replicates, sh->total);
    if (st == EL_OK && res->ambiguous_matches * 10 > res->replicates)
        st = el_warnings_add(warnings,
                             "modes could swap in %zu of %zu replicates (eigenvalues "
                             "close together): their separate bounds mix them",
                             res->ambiguous_matches, res->replicates);
    if (st == EL_OK && sh->bias_refused)
        st = el_warnings_add(warnings,
                             "bootstrap bounds are not bias-corrected: the model-based "
                             "replicates drift from the estimate by more than half their "
                             "spread, which no small-sample bias explains (sensor noise or "
                             "a model that does not fit; consider --method iv or auto)");
    if (st == EL_OK && (mismatch < 0.0 || mismatch > 1e-6))
        st = el_warnings_add(warnings,
                             "the bootstrap refit does not reproduce the point estimate's "
                             "eigenvalues exactly: the bounds describe method %s in "
                             "the model's reduced coordinates", el_method_name(model->method));
    return st;
}

el_status el_boot_run(const el_series *series, const el_fit_options *opt_fit,
                      const el_model *model, const el_modes *modes,
                      const el_boot_options *opt, el_boot_result *result,
                      el_warnings *warnings, el_error *err)
{
    /* The model records lags, rank and method; the refit reuses them and
     * takes only the measured inputs from opt_fit. */
    if (series == NULL || model == NULL || modes == NULL || opt == NULL || result == NULL)
        return el_error_set(err, EL_ERR_INTERNAL, "el_boot_run: NULL argument");
    const el_series *inputs = opt_fit != NULL ? opt_fit->inputs : NULL;
    if (model->n_inputs > 0
        && (inputs == NULL || inputs->values == NULL
            || inputs->n_channels != model->n_inputs
            || inputs->n_samples != series->n_samples))
        return el_error_set(err, EL_ERR_INTERNAL,
                            "el_boot_run: the model has %zu inputs but the fit options "
                            "do not give them", model->n_inputs);
    memset(result, 0, sizeof *result);
    el_status st = check_options(opt, err);
    if (st != EL_OK)
        return st;
    result->kind = opt->kind;
    result->level = opt->level;
    result->seed = opt->seed;
    result->n_modes = modes->n_modes;
    if (opt->replicates == 0)
        return EL_OK;
    /* An estimator with a bootstrap of its own (hankel: block sums of the
     * subspace stage) runs it under this contract. */
    const el_estimator_type *own = el_estimator_for(model->method);
    if (own != NULL && own->boot_run != NULL)
        return own->boot_run(series, opt_fit, model, modes, opt, result, warnings, err);
    if (modes->n_modes == 0 || modes->n_eigenvalues != model->rank)
        return el_error_set(err, EL_ERR_INTERNAL,
                            "el_boot_run: %zu eigenvalues for a rank-%zu model",
                            modes->n_eigenvalues, model->rank);
    boot_shared sh;
    memset(&sh, 0, sizeof sh);
    boot_buffers bf;
    memset(&bf, 0, sizeof bf);
    int block_auto = 0;
    double t_start = wall_seconds();
    st = prepare(series, inputs, model, opt, &sh, &bf, &block_auto, err);
    size_t total = opt->replicates, nm = modes->n_modes;
    sh.n_modes = nm;
    sh.total = total;
    sh.kind = opt->kind;
    sh.seed = opt->seed;
    sh.dt = model->dt;
    sh.has_plane = model->state_dim == 2 && model->rank == 2;
    sh.point = modes;
    atomic_init(&sh.next, 0);
    atomic_init(&sh.done, 0);
    if (st == EL_OK) {
        sh.max_blocks = el_boot_block_count(sh.m, sh.block);
        sh.wide = sh.prov != NULL && sh.prov->accumulate != NULL && sh.r >= sh.wide_from;
        sh.batch = opt->kind == EL_RESAMPLE_BLOCKS && el_boot_engine_is_wide(sh.engine)
                       ? EL_BOOT_MAX_BATCH : 1;
        bf.flags = calloc(3 * total, 1);
        bf.rec = malloc(((3 * nm + 2) * total + total * sh.r) * sizeof(double));
        bf.eig_mode = malloc(total * sh.r * sizeof(size_t) + 1);
        size_t nt = thread_count(opt->threads, total);
        bf.workers = calloc(nt, sizeof(boot_worker));
        if (!bf.flags || !bf.rec || !bf.eig_mode || !bf.workers) {
            st = el_error_set(err, EL_ERR_NOMEM, "out of memory (bootstrap)");
        } else {
            sh.ok = bf.flags;
            sh.amb = bf.flags + total;
            sh.stable = bf.flags + 2 * total;
            sh.mode_re = bf.rec;
            sh.mode_im = bf.rec + nm * total;
            sh.trace = bf.rec + 2 * nm * total;
            sh.det = sh.trace + total;
            sh.mode_disc = sh.det + total;
            sh.eig_re = sh.mode_disc + nm * total;
            sh.eig_mode = bf.eig_mode;
            for (size_t i = 0; i < nt && st == EL_OK; i++) {
                st = worker_init(&bf.workers[i], &sh, modes, err);
                if (st == EL_OK)
                    bf.n_workers++;
            }
        }
    }
    double mismatch = -1.0;
    if (st == EL_OK) {
        mismatch = point_mismatch(&bf.workers[0], &sh, modes);
        bf.workers[0].opt = opt;
        size_t started = 1;
        /* The bias round regenerates one-step pairs through the
         * least-squares model: it measures that estimator's bias only. */
        double t_bias = wall_seconds();
        result->setup_seconds = t_bias - t_start;
        const el_estimator_type *type = el_estimator_for(model->method);
        el_boot_bias_plan bias_plan = el_boot_bias_rule(model->n_pairs);
        if (sh.spread_round) {
            /* iv, ssi: the model round measures a spread only. */
            st = measure_bias(&sh, &bf, sh.s_plan, err);
        } else if (opt->bias_correct && type != NULL
                   && type->model_resampling == EL_MODEL_RESAMPLING_FULL
                   && bias_plan.replicates > 0) {
            st = measure_bias(&sh, &bf, bias_plan, err);
            result->bias_corrected = st == EL_OK && sh.bias_re != NULL;
            result->bias_replicates = sh.n_bias;
            result->bias_refused = sh.bias_refused;
            result->bias_refused_spreads = sh.bias_refused_spreads;
        }
        double t_rep = wall_seconds();
        result->bias_seconds = t_rep - t_bias;
        if (st == EL_OK) {
            started = run_phase(&bf);
            report_progress(&bf.workers[0], 1);
        }
        result->replicate_seconds = wall_seconds() - t_rep;
        result->threads_used = started;
        result->block_length = sh.block;
        result->block_length_pw = block_auto ? sh.block_pw : 0;
        result->block_was_auto = block_auto;
        result->has_plane = sh.has_plane;
        if (st == EL_OK)
            st = recentre(&sh, err);
        /* recentre judges a round too small to judge itself */
        result->bias_corrected = result->bias_corrected && !sh.bias_refused;
        result->bias_refused = sh.bias_refused;
        result->bias_refused_spreads = sh.bias_refused_spreads;
        if (st == EL_OK)
            st = summarise(&sh, modes, opt, result, err);
    }
    if (st == EL_OK)
        st = add_run_warnings(&sh, model, mismatch, result, warnings);
    buffers_free(&bf);
    if (st != EL_OK)
        el_boot_free(result);
    return st;
}
