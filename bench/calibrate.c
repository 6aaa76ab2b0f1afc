/* calibrate: Monte Carlo check of the bootstrap bounds and verdicts on
 * simulated logs of known linear systems (coverage of the nominal bounds
 * of the least-damped mode, rate of confident wrong stability verdicts).
 *
 * Usage: calibrate [--quick] [--logs N] [--boot N] [--threads N]
 *                  [--case NAME] [--resample blocks|model] [--block L]
 *                  [--method ls|fb|tls|iv|ssi|hankel|auto] [--length N]
 *                  [--no-bias-correction] [--verbose] [--misses] [--each]
 *                  [--horizon T] [--first-log K] [--horizons]
 * --horizons: no fits; one line per log (stderr) with the first zero
 * crossing of the mean autocorrelation, its lobe's depth in standard
 * errors and the horizon rows of hankel and of iv's multi-step state
 * under the automatic rule and under its old rule (b).
 * --method: the estimator of every log (default ls); auto: the one the
 * default (--method auto) picks for the log. --length: one log length.
 * --choices: only print which estimator auto picks per case and length
 * (no fits), so the default's coverage can be read off the per-method
 * tables of the same logs (same seeds). The cases are the same for every
 * method, so one estimator's table and another's come from the same logs.
 * --first-log K: the logs K .. K + N - 1 (their own seeds) instead of
 * 0 .. N - 1, to tell a cell's shortfall from the chance of its logs.
 * A log on which the tool withholds the class because the method cannot be
 * right there (el_verdict_method_fault: fb/tls on a stationary log, ls
 * with a refused bias round) is counted as withheld ("held"), not as
 * covered or missed: coverage is over the logs where bounds are given.
 * Full run (no arguments): 60 logs per case and length, 400 replicates
 * each, about 5-8 minutes on two cores. --quick: 20 logs, 200 replicates,
 * about 1-2 minutes. The figures in docs/uncertainty.md come from
 * --logs 100 --boot 500. */
#include <cblas.h>
#include <lapacke.h>
#include <math.h>
#include <pthread.h>
#include <stdatomic.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <unistd.h>

#include "el_assess.h"
#include "el_boot_bounds.h"
#include "el_estimator.h"
#include "el_fit.h"
#include "el_state_check.h"
#include "el_modes.h"
#include "el_regime.h"
#include "el_resample.h"
#include "el_rng.h"
#include "el_subspace.h"
#include "el_verdict.h"

#define MAX_STATES 4
#define CAL_PI 3.14159265358979323846

/* One 2x2 block of the true continuous system. */
typedef enum { BLOCK_PAIR, BLOCK_REALS, BLOCK_JORDAN } block_kind;

typedef struct {
    block_kind kind;
    double a, b;         /* PAIR: a +- i b; REALS: a and b; JORDAN: a twice */
    int a_grows;         /* 1: a is set from the growth over the log */
} true_block;

typedef struct {
    const char *name;
    const char *region;
    size_t n_blocks;     /* 1 -> 2 states, 2 -> 4 states */
    true_block blocks[2];
    double dt;
    double sensor_noise; /* measurement noise sd relative to the channel sd */
} cal_case;

/* Unstable cases are transient: the growing eigenvalue is set so that the
 * log grows by about e^GROWTH over its length, whatever the length. */
#define GROWTH 6.0

static const cal_case cases[] = {
    { "sink", "sink", 1, { { BLOCK_REALS, -0.5, -2.0, 0 } }, 0.1, 0.0 },
    { "spiral-sink", "spiral sink", 1, { { BLOCK_PAIR, -0.3, 2.0, 0 } }, 0.1, 0.0 },
    { "light-spiral", "spiral sink (zeta 0.03)", 1, { { BLOCK_PAIR, -0.05, 1.5, 0 } }, 0.1, 0.0 },
    { "degenerate", "degenerate node", 1, { { BLOCK_JORDAN, -0.8, 0.0, 0 } }, 0.1, 0.0 },
    { "saddle", "saddle", 1, { { BLOCK_REALS, 0.0, -1.0, 1 } }, 0.1, 0.0 },
    { "source", "source", 1, { { BLOCK_REALS, 0.0, 0.0, 1 } }, 0.1, 0.0 },
    { "spiral-source", "spiral source", 1, { { BLOCK_PAIR, 0.0, 1.5, 1 } }, 0.1, 0.0 },
    { "4-state", "two modes, zeta 0.04 and 0.24", 2,
      { { BLOCK_PAIR, -0.05, 1.2, 0 }, { BLOCK_PAIR, -1.0, 4.0, 0 } }, 0.05, 0.0 },
    { "sensor-noise", "spiral sink + 30% sensor noise", 1, { { BLOCK_PAIR, -0.3, 2.0, 0 } },
      0.1, 0.3 },
};
#define N_CASES (sizeof cases / sizeof cases[0])

static const size_t lengths[] = { 500, 2000, 5000, 20000 };
#define N_LENGTHS (sizeof lengths / sizeof lengths[0])

typedef struct {
    size_t logs, boot, threads, block;
    el_resample_kind kind;
    const char *only;
    int verbose;
    int misses;          /* --misses: print every log whose Re bounds miss the truth */
    int each;            /* --each: print every log's least-damped estimate and bounds */
    double horizon_s;    /* --horizon T: hankel's and iv's horizon in seconds (0 = automatic) */
    int bias;
    int method_auto;     /* --method auto: the default's choice (method_for) */
    el_method method;    /* else this estimator */
    size_t only_length;  /* 0 = every length */
    size_t first_log;    /* --first-log K: logs K .. K + logs - 1 (other seeds: is a
                            cell's shortfall the method's or its 240 logs'?) */
    int choices;         /* --choices: print auto's estimator per case and length, no fits */
    int horizons;        /* --horizons: print every log's horizons (rule and old rule), no fits */
    pthread_mutex_t *fftw_lock; /* the regime stage's FFTW plans are made one at a time */
} cal_options;

/* Result of one simulated log. */
typedef struct {
    int withheld;        /* the tool withholds the class: the method is inconsistent
                            for this log (el_verdict_method_fault); no bounds given */
    int ok, cover_re, above_re, cover_zeta, oscillatory, confident_wrong, confident;
    double p_stable, width_re, point_re;
    size_t block;
    el_method method;    /* the estimator used (auto: the one it chose) */
} log_result;

/* The true continuous eigenvalues of a case at a given log duration. */
typedef struct {
    size_t n;
    double re[MAX_STATES], im[MAX_STATES];
    double ad[MAX_STATES * MAX_STATES];
} truth;

static double grow_rate(double duration_s)
{
    return GROWTH / duration_s;
}

/* Builds Ad = T B T^-1 with B block-diagonal (exact discretisation of each
 * 2x2 block in closed form) and a fixed, well-conditioned mixing T. */
static int build_truth(const cal_case *c, size_t n_samples, truth *t)
{
    size_t n = 2 * c->n_blocks;
    double dt = c->dt, dur = (double)n_samples * dt;
    double bm[MAX_STATES * MAX_STATES] = { 0 };
    t->n = n;
    for (size_t k = 0; k < c->n_blocks; k++) {
        true_block b = c->blocks[k];
        if (b.a_grows) {
            if (b.kind == BLOCK_REALS && b.b == 0.0) {
                b.a = grow_rate(dur);
                b.b = 0.5 * b.a; /* a source: two growing reals */
            } else {
                b.a = grow_rate(dur);
            }
        }
        size_t o = 2 * k;
        double *p00 = &bm[o + o * n], *p10 = &bm[o + 1 + o * n];
        double *p01 = &bm[o + (o + 1) * n], *p11 = &bm[o + 1 + (o + 1) * n];
        if (b.kind == BLOCK_PAIR) {
            double g = exp(b.a * dt);
            *p00 = g * cos(b.b * dt);
            *p10 = g * sin(b.b * dt);
            *p01 = -*p10;
            *p11 = *p00;
            t->re[o] = t->re[o + 1] = b.a;
            t->im[o] = b.b;
            t->im[o + 1] = -b.b;
        } else if (b.kind == BLOCK_REALS) {
            *p00 = exp(b.a * dt);
            *p11 = exp(b.b * dt);
            t->re[o] = b.a;
            t->re[o + 1] = b.b;
            t->im[o] = t->im[o + 1] = 0.0;
        } else {
            double g = exp(b.a * dt);
            *p00 = g;
            *p11 = g;
            *p01 = g * dt; /* exp of [[a, 1], [0, a]] dt */
            t->re[o] = t->re[o + 1] = b.a;
            t->im[o] = t->im[o + 1] = 0.0;
        }
    }
    double tm[MAX_STATES * MAX_STATES], tb[MAX_STATES * MAX_STATES];
    for (size_t j = 0; j < n; j++)
        for (size_t i = 0; i < n; i++)
            tm[i + j * n] = (i == j ? 1.0 : 0.35 * sin(1.0 + (double)(3 * i + 7 * j)));
    for (size_t j = 0; j < n; j++)
        for (size_t i = 0; i < n; i++) {
            double s = 0.0;
            for (size_t k = 0; k < n; k++)
                s += tm[i + k * n] * bm[k + j * n];
            tb[i + j * n] = s;
        }
    /* Ad T = T B: solve T' Ad' = (T B)'. */
    double tt[MAX_STATES * MAX_STATES], rhs[MAX_STATES * MAX_STATES];
    lapack_int ipiv[MAX_STATES];
    for (size_t j = 0; j < n; j++)
        for (size_t i = 0; i < n; i++) {
            tt[i + j * n] = tm[j + i * n];
            rhs[i + j * n] = tb[j + i * n];
        }
    if (LAPACKE_dgesv(LAPACK_COL_MAJOR, (lapack_int)n, (lapack_int)n, tt, (lapack_int)n,
                      ipiv, rhs, (lapack_int)n) != 0)
        return 1;
    for (size_t j = 0; j < n; j++)
        for (size_t i = 0; i < n; i++)
            t->ad[i + j * n] = rhs[j + i * n];
    return 0;
}

static void simulate(const cal_case *c, const truth *t, size_t n_samples, el_rng *rng,
                     double *values)
{
    size_t n = t->n;
    double x[MAX_STATES] = { 0 }, y[MAX_STATES];
    int stable = 1;
    for (size_t i = 0; i < n; i++)
        if (t->re[i] >= 0.0)
            stable = 0;
    size_t burn = stable ? 3000 : 0;
    for (size_t k = 0; k < burn + n_samples; k++) {
        if (k >= burn)
            for (size_t i = 0; i < n; i++)
                values[i * n_samples + (k - burn)] = x[i];
        for (size_t i = 0; i < n; i++) {
            double s = el_rng_normal(rng);
            for (size_t j = 0; j < n; j++)
                s += t->ad[i + j * n] * x[j];
            y[i] = s;
        }
        memcpy(x, y, n * sizeof(double));
    }
    if (c->sensor_noise > 0.0)
        for (size_t i = 0; i < n; i++) {
            double *v = values + i * n_samples, mean = 0.0, ss = 0.0;
            for (size_t k = 0; k < n_samples; k++)
                mean += v[k];
            mean /= (double)n_samples;
            for (size_t k = 0; k < n_samples; k++)
                ss += (v[k] - mean) * (v[k] - mean);
            double sd = sqrt(ss / (double)n_samples) * c->sensor_noise;
            for (size_t k = 0; k < n_samples; k++)
                v[k] += sd * el_rng_normal(rng);
        }
}

static const char *const chan_names[] = { "x0", "x1", "x2", "x3" };
static const char *const chan_units[] = { "", "", "", "" };

/* Index of the true least-damped eigenvalue (largest Re; Im >= 0). */
static size_t least_damped(const truth *t)
{
    size_t best = 0;
    for (size_t i = 1; i < t->n; i++)
        if (t->re[i] > t->re[best] || (t->re[i] == t->re[best] && t->im[i] > t->im[best]))
            best = i;
    return best;
}

/* The estimator --method auto (the default) fits on this log: hankel for
 * two or more channels when the block Hankel at the automatic horizon has
 * at least 20 windows per row and the envelope does not grow
 * (EL_ASSESS_HANKEL_GROWTH_FACTOR), else iv (el_assess.c, choose_subspace and
 * EL_ASSESS_SUBSPACE_WINDOWS_PER_ROW; no inputs, no --lags here). The
 * fallback to iv when hankel gives no model is in one_log. */
#define CAL_SUBSPACE_WINDOWS_PER_ROW 20
static int log_envelope_grows(const cal_options *o, const el_series *s);
static el_method method_for(const cal_options *o, const el_series *s)
{
    if (!o->method_auto)
        return o->method;
    if (s->n_channels < 2 || log_envelope_grows(o, s))
        return EL_METHOD_IV;
    el_subspace_options so;
    el_subspace_defaults(&so);
    el_subspace_horizon hz;
    el_error local;
    el_error_clear(&local);
    if (el_subspace_choose_horizon(s, &so, &hz, &local) != EL_OK)
        return EL_METHOD_IV;
    size_t rows = hz.rows * s->n_channels;
    size_t windows = s->n_samples + 1 - 2 * hz.rows;
    return windows < CAL_SUBSPACE_WINDOWS_PER_ROW * rows ? EL_METHOD_IV : EL_METHOD_HANKEL;
}

/* The regime stage run on s as el_assess runs it before the fit (the
 * plan's FFTW calls under the lock), or NULL when it cannot be run; free
 * with regime_free. */
static el_regime *regime_of(const cal_options *o, const el_series *s)
{
    el_regime *rg = NULL;
    el_error local;
    el_error_clear(&local);
    pthread_mutex_lock(o->fftw_lock);
    el_status st = el_regime_create(s->n_samples, s->n_channels, &rg, &local);
    pthread_mutex_unlock(o->fftw_lock);
    if (st == EL_OK && el_regime_run(rg, s, NULL, NULL, &local) == EL_OK)
        return rg;
    pthread_mutex_lock(o->fftw_lock);
    el_regime_destroy(rg);
    pthread_mutex_unlock(o->fftw_lock);
    return NULL;
}

static void regime_free(const cal_options *o, el_regime *rg)
{
    pthread_mutex_lock(o->fftw_lock);
    el_regime_destroy(rg);
    pthread_mutex_unlock(o->fftw_lock);
}

/* Whether the regime stage finds the envelope growth that keeps auto off
 * hankel (el_assess.h, EL_ASSESS_HANKEL_GROWTH_FACTOR); 0 when it cannot
 * tell. */
static int log_envelope_grows(const cal_options *o, const el_series *s)
{
    el_regime *rg = regime_of(o, s);
    int grows = rg != NULL && el_regime_envelope_grows(rg, EL_ASSESS_HANKEL_GROWTH_FACTOR,
                                                       EL_ASSESS_HANKEL_GROWTH_P, NULL,
                                                       NULL, NULL);
    if (rg != NULL)
        regime_free(o, rg);
    return grows;
}

/* Whether the regime stage calls this log stationary (no free transient),
 * as el_assess does before the fit; 0 when it cannot tell. */
static int log_is_stationary(const cal_options *o, const el_series *s)
{
    el_regime *rg = regime_of(o, s);
    int stationary = rg != NULL && rg->regime == EL_REGIME_STATIONARY;
    if (rg != NULL)
        regime_free(o, rg);
    return stationary;
}

/* The old rule (b) on this log: four times the first zero crossing
 * whatever its lobe's depth (before 2026-12-05), from the chosen horizon's
 * record, with the same caps. */
static size_t old_rule_rows(const el_series *s, const el_subspace_horizon *hz, size_t max_rows)
{
    size_t p = s->n_channels, hmin = 1 + (24 + p - 1) / p;
    if (hmin < 3)
        hmin = 3;
    size_t cap = max_rows / p, hdata = (s->n_samples + 1) / (2 + 4 * p);
    if (cap < hmin)
        cap = hmin;
    size_t scale = hz->scale_lags;
    if (4 * hz->crossing_lags > scale)
        scale = 4 * hz->crossing_lags;
    size_t h = scale < cap ? scale : cap;
    if (h > hdata)
        h = hdata;
    return h < hmin ? hmin : h;
}

/* --horizons: one line per log (stderr) with the first zero crossing of
 * the mean autocorrelation, its lobe's depth in standard errors, and the
 * horizon rows for hankel (cap 200 rows) and iv's multi-step state
 * (iv's prepare, cap 120) under the rule and under the old rule (b). */
static void print_horizons(const cal_case *c, size_t n_samples, size_t rep, const el_series *s)
{
    el_subspace_options so;
    el_subspace_defaults(&so);
    el_subspace_horizon hz, hzi;
    el_error local;
    el_error_clear(&local);
    if (el_subspace_choose_horizon(s, &so, &hz, &local) != EL_OK)
        return;
    so.max_rows = 120;
    if (el_subspace_choose_horizon(s, &so, &hzi, &local) != EL_OK)
        return;
    el_fit_options fo;
    el_fit_defaults(&fo);
    fo.method = EL_METHOD_IV;
    if (el_estimator_prepare(s, &fo, &local) != EL_OK)
        return;
    size_t iv_new = fo.lags + 1;
    el_fit_defaults(&fo);
    fo.method = EL_METHOD_IV;
    fo.horizon_time = (double)old_rule_rows(s, &hzi, 120) * s->dt;
    if (el_estimator_prepare(s, &fo, &local) != EL_OK)
        return;
    size_t iv_old = fo.lags + 1;
    fprintf(stderr, "horizon: %s n %zu log %zu cross %zu se %.3f hankel %zu old %zu iv %zu old %zu\n",
            c->name, n_samples, rep, hz.crossing_lags, hz.crossing_se, hz.rows,
            old_rule_rows(s, &hz, 200), iv_new, iv_old);
}

static void one_log(const cal_case *c, size_t n_samples, size_t rep, const cal_options *o,
                    log_result *out)
{
    memset(out, 0, sizeof *out);
    truth t;
    if (build_truth(c, n_samples, &t))
        return;
    double *values = malloc(t.n * n_samples * sizeof(double));
    if (values == NULL)
        return;
    el_rng rng;
    el_rng_seed(&rng, 20240601u + 1000003u * (uint64_t)(c - cases) + n_samples, rep);
    simulate(c, &t, n_samples, &rng, values);
    el_series s;
    memset(&s, 0, sizeof s);
    s.n_samples = n_samples;
    s.n_channels = t.n;
    s.dt = c->dt;
    s.values = values;
    s.names = (char **)chan_names;
    s.units = (char **)chan_units;
    s.rows_used = n_samples;
    el_fit_options fo;
    el_fit_defaults(&fo);
    fo.method = method_for(o, &s);
    fo.horizon_time = o->horizon_s;
    if (o->horizons)
        print_horizons(c, n_samples, rep, &s);
    if (o->choices || o->horizons) {
        out->ok = 1;
        out->method = fo.method;
        free(values);
        return;
    }
    el_model model;
    memset(&model, 0, sizeof model);
    el_modes modes;
    memset(&modes, 0, sizeof modes);
    el_boot_result br;
    memset(&br, 0, sizeof br);
    el_boot_options bo;
    el_boot_defaults(&bo);
    bo.replicates = o->boot;
    bo.threads = 1;
    bo.kind = o->kind;
    bo.block_length = o->block;
    bo.seed = 1 + rep;
    bo.bias_correct = o->bias;
    el_error err;
    el_error_clear(&err);
    el_status fst = el_fit(&s, &fo, &model, NULL, &err);
    if (fst != EL_OK && o->method_auto && fo.method == EL_METHOD_HANKEL) {
        el_model_free(&model);
        memset(&model, 0, sizeof model);
        el_error_clear(&err);
        fo.method = EL_METHOD_IV;
        fst = el_fit(&s, &fo, &model, NULL, &err);
    }
    out->method = fo.method;
    if (fst != EL_OK
        || el_modes_compute(&model, &modes, NULL, &err) != EL_OK
        || el_boot_run(&s, &fo, &model, &modes, &bo, &br, NULL, &err) != EL_OK)
        goto done;
    /* As el_assess_execute: a method the log shows to be inconsistent gets
     * no class and no bounds at their level: withheld, not covered or missed. */
    int stationary = (fo.method == EL_METHOD_FB || fo.method == EL_METHOD_TLS)
                     && log_is_stationary(o, &s);
    if (el_verdict_method_fault(fo.method, stationary,
                                br.bias_refused ? br.bias_refused_spreads : 0.0)
        != EL_METHOD_FAULT_NONE) {
        out->withheld = 1;
        goto done;
    }
    /* As el_assess_execute: an "unstable" from iv's automatic multi-step
     * state that iv on the plain state confidently contradicts is
     * withdrawn (el_state_check): withheld, not covered or missed. */
    if (br.p_stable <= 1.0 - bo.level && el_state_check_applies(&fo, &model)) {
        el_state_check sc;
        if (el_state_check_run(&s, &fo, &bo, &sc, &err) != EL_OK)
            goto done;
        if (sc.withdraws) {
            out->withheld = 1;
            goto done;
        }
    }
    /* As el_verdict_compute: a "stable" resting on a real least damped
     * mode the data cannot tell from a random walk is withheld. */
    if (br.p_stable >= bo.level) {
        double t_ur = NAN;
        if (el_verdict_unit_root_t(&modes, &model, &br, &t_ur, &err) != EL_OK)
            goto done;
        if (t_ur > el_verdict_unit_root_critical(bo.level)) {
            out->withheld = 1;
            goto done;
        }
    }
    size_t ti = least_damped(&t);
    double tre = t.re[ti], tim = fabs(t.im[ti]);
    size_t best = 0;
    double bd = HUGE_VAL;
    for (size_t q = 0; q < modes.n_modes; q++) {
        double dd = hypot(modes.modes[q].lambda_re - tre, fabs(modes.modes[q].lambda_im) - tim);
        if (dd < bd) {
            bd = dd;
            best = q;
        }
    }
    const el_mode_bounds *b = &br.bounds[best];
    double tz = -tre / hypot(tre, tim);
    out->ok = 1;
    out->cover_re = b->re.lo <= tre && tre <= b->re.hi;
    out->above_re = tre > b->re.hi;
    out->oscillatory = tim > 0.0;
    out->cover_zeta = b->damping_ratio.lo <= tz && tz <= b->damping_ratio.hi;
    out->width_re = b->re.hi - b->re.lo;
    out->point_re = modes.modes[best].lambda_re;
    out->p_stable = br.p_stable;
    out->block = br.block_length;
    int truly_stable = tre < 0.0;
    out->confident = br.p_stable >= 0.95 || br.p_stable <= 0.05;
    out->confident_wrong = truly_stable ? br.p_stable <= 0.05 : br.p_stable >= 0.95;
    if (o->each)
        fprintf(stderr, "log: %s n %zu log %zu %s order %zu rows %zu block %zu point %.5f "
                "bounds %.5f %.5f truth %.5f own %.5f %.5f repeated %d merged %.4f "
                "mean %.5f %.5f\n", c->name, n_samples, rep, el_method_name(fo.method),
                model.state_dim, model.subspace_rows, br.block_length,
                modes.modes[best].lambda_re, b->re.lo, b->re.hi, tre, b->re_own.lo,
                b->re_own.hi, b->repeated_root, b->merged_fraction, b->re_pair_mean.lo,
                b->re_pair_mean.hi);
    if (!out->cover_re && o->misses) {
        fprintf(stderr, "miss: %s n %zu log %zu truth %.4f%+.4fi %s order %zu; modes:",
                c->name, n_samples, rep, tre, tim, el_method_name(fo.method), model.state_dim);
        for (size_t qm = 0; qm < modes.n_modes; qm++)
            fprintf(stderr, " %.4f%+.4fi [%.4f, %.4f]", modes.modes[qm].lambda_re,
                    modes.modes[qm].lambda_im, br.bounds[qm].re.lo, br.bounds[qm].re.hi);
        fprintf(stderr, "\n");
    }
    if (out->confident_wrong && o->verbose) {
        fprintf(stderr, "wrong: %s n %zu log %zu p_stable %.3f truth %.4f%+.4fi; modes:",
                c->name, n_samples, rep, br.p_stable, tre, tim);
        for (size_t qm = 0; qm < modes.n_modes; qm++)
            fprintf(stderr, " %.4f%+.4fi [%.4f, %.4f]", modes.modes[qm].lambda_re,
                    modes.modes[qm].lambda_im, br.bounds[qm].re.lo, br.bounds[qm].re.hi);
        fprintf(stderr, "\n");
    }
done:
    el_boot_free(&br);
    el_modes_free(&modes);
    el_model_free(&model);
    free(values);
}

/* Work queue over (case, length, log). */
typedef struct {
    const cal_options *o;
    size_t n_jobs;
    size_t *job_case, *job_len;
    log_result *res;
    atomic_size_t next;
} queue;

static void *worker(void *arg)
{
    queue *q = arg;
    for (;;) {
        size_t j = atomic_fetch_add(&q->next, 1);
        if (j >= q->n_jobs)
            break;
        size_t rep = q->o->first_log + j % q->o->logs;
        one_log(&cases[q->job_case[j]], lengths[q->job_len[j]], rep, q->o, &q->res[j]);
    }
    return NULL;
}

static int parse_args(int argc, char **argv, cal_options *o)
{
    o->logs = 60;
    o->boot = 400;
    o->threads = 0;
    o->block = 0;
    o->kind = EL_RESAMPLE_BLOCKS;
    o->only = NULL;
    o->verbose = 0;
    o->misses = 0;
    o->each = 0;
    o->horizon_s = 0.0;
    o->bias = 1;
    o->method_auto = 0;
    o->method = EL_METHOD_LS;
    o->only_length = 0;
    o->choices = 0;
    o->horizons = 0;
    o->first_log = 0;
    for (int i = 1; i < argc; i++) {
        const char *a = argv[i], *v = i + 1 < argc ? argv[i + 1] : NULL;
        if (strcmp(a, "--quick") == 0) {
            o->logs = 20;
            o->boot = 200;
        } else if (strcmp(a, "--no-bias-correction") == 0) {
            o->bias = 0;
        } else if (strcmp(a, "--verbose") == 0) {
            o->verbose = 1;
        } else if (strcmp(a, "--misses") == 0) {
            o->misses = 1;
        } else if (strcmp(a, "--each") == 0) {
            o->each = 1;
        } else if (strcmp(a, "--horizon") == 0 && v) {
            o->horizon_s = strtod(v, NULL);
            i++;
        } else if (strcmp(a, "--logs") == 0 && v) {
            o->logs = (size_t)strtoul(v, NULL, 10);
            i++;
        } else if (strcmp(a, "--boot") == 0 && v) {
            o->boot = (size_t)strtoul(v, NULL, 10);
            i++;
        } else if (strcmp(a, "--threads") == 0 && v) {
            o->threads = (size_t)strtoul(v, NULL, 10);
            i++;
        } else if (strcmp(a, "--block") == 0 && v) {
            o->block = (size_t)strtoul(v, NULL, 10);
            i++;
        } else if (strcmp(a, "--method") == 0 && v) {
            el_error perr;
            el_error_clear(&perr);
            o->method_auto = strcmp(v, "auto") == 0;
            if (!o->method_auto && el_method_parse(v, &o->method, &perr) != EL_OK) {
                fprintf(stderr, "calibrate: %s\n", perr.message);
                return 1;
            }
            i++;
        } else if (strcmp(a, "--horizons") == 0) {
            o->horizons = 1;
        } else if (strcmp(a, "--choices") == 0) {
            o->choices = 1;
            o->method_auto = 1;
        } else if (strcmp(a, "--first-log") == 0 && v) {
            o->first_log = (size_t)strtoul(v, NULL, 10);
            i++;
        } else if (strcmp(a, "--length") == 0 && v) {
            o->only_length = (size_t)strtoul(v, NULL, 10);
            i++;
        } else if (strcmp(a, "--case") == 0 && v) {
            o->only = v;
            i++;
        } else if (strcmp(a, "--resample") == 0 && v) {
            o->kind = strcmp(v, "model") == 0 ? EL_RESAMPLE_MODEL : EL_RESAMPLE_BLOCKS;
            i++;
        } else {
            fprintf(stderr,
                    "usage: calibrate [--quick] [--logs N] [--boot N] [--threads N]\n"
                    "                 [--case NAME] [--resample blocks|model] [--block L]\n"
                    "                 [--method ls|fb|tls|iv|ssi|hankel|auto] [--length N]\n"
                    "                 [--choices] [--horizons]\n"
                    "                 [--no-bias-correction] [--verbose] [--misses] [--each]\n"
                    "                 [--horizon T] [--first-log K]\n");
            return 1;
        }
    }
    if (o->logs < 2 || o->boot < 10) {
        fprintf(stderr, "calibrate: need --logs >= 2 and --boot >= 10\n");
        return 1;
    }
    return 0;
}

/* The cell's binomial judgement (el_boot_coverage_judge): "ok" when its
 * coverage of x in n is consistent with 0.95 (exact test, 5 % two-sided),
 * "low" or "high" when it is not. */
static const char *binom_judge(size_t x, size_t n)
{
    if (n == 0)
        return "-";
    int j = el_boot_coverage_judge(x, n, 0.95, 0.95);
    return j < 0 ? "low" : j > 0 ? "high" : "ok";
}

typedef struct {
    size_t n, re, zeta, osc, wrong, confident, withheld;
} tally;

/* Withheld logs count apart: no bounds are given as bounds at their level
 * there, so they are neither covered nor missed. */
static void tally_add(tally *t, const log_result *r)
{
    t->withheld += (size_t)r->withheld;
    if (!r->ok)
        return;
    t->n++;
    t->re += (size_t)r->cover_re;
    if (r->oscillatory) {
        t->osc++;
        t->zeta += (size_t)r->cover_zeta;
    }
    t->wrong += (size_t)r->confident_wrong;
    t->confident += (size_t)r->confident;
}

int main(int argc, char **argv)
{
    cal_options o;
    if (parse_args(argc, argv, &o))
        return 1;
    /* Parallel over logs: BLAS threads would only compete with them. */
    openblas_set_num_threads(1);
    size_t nt = o.threads;
    if (nt == 0) {
        long c = sysconf(_SC_NPROCESSORS_ONLN);
        nt = c > 0 ? (size_t)c : 1;
    }
    queue q;
    memset(&q, 0, sizeof q);
    q.o = &o;
    size_t max_jobs = N_CASES * N_LENGTHS * o.logs;
    q.job_case = malloc(max_jobs * sizeof(size_t));
    q.job_len = malloc(max_jobs * sizeof(size_t));
    q.res = calloc(max_jobs, sizeof(log_result));
    if (!q.job_case || !q.job_len || !q.res)
        return 4;
    for (size_t c = 0; c < N_CASES; c++) {
        if (o.only && strcmp(o.only, cases[c].name) != 0)
            continue;
        for (size_t l = 0; l < N_LENGTHS; l++) {
            if (o.only_length && lengths[l] != o.only_length)
                continue;
            for (size_t r = 0; r < o.logs; r++) {
                q.job_case[q.n_jobs] = c;
                q.job_len[q.n_jobs] = l;
                q.n_jobs++;
            }
        }
    }
    atomic_init(&q.next, 0);
    struct timespec t0, t1;
    clock_gettime(CLOCK_MONOTONIC, &t0);
    pthread_mutex_t fftw_lock = PTHREAD_MUTEX_INITIALIZER;
    o.fftw_lock = &fftw_lock;
    pthread_t *tid = calloc(nt, sizeof(pthread_t));
    size_t started = 0;
    for (size_t i = 0; i < nt; i++)
        if (pthread_create(&tid[i], NULL, worker, &q) == 0)
            started++;
    if (started == 0)
        worker(&q);
    for (size_t i = 0; i < started; i++)
        pthread_join(tid[i], NULL);
    clock_gettime(CLOCK_MONOTONIC, &t1);
    double secs = (double)(t1.tv_sec - t0.tv_sec) + 1e-9 * (double)(t1.tv_nsec - t0.tv_nsec);

    if (o.first_log > 0)
        printf("logs %zu .. %zu of each cell (--first-log)\n", o.first_log,
               o.first_log + o.logs - 1);
    printf("eigenlog bootstrap calibration: %zu logs per case and length, %zu replicates, "
           "method %s, resample %s, block %s, bias correction %s, %zu threads, %.1f s\n",
           o.logs, o.boot, o.method_auto ? "auto" : el_method_name(o.method), o.kind == EL_RESAMPLE_MODEL ? "model" : "blocks",
           o.block ? "given" : "auto", o.bias ? "on" : "off", started, secs);
    printf("coverage of the nominal 95%% bounds of the least-damped mode; wrong = p >= 0.95 "
           "for the wrong class; held = logs whose class the tool withholds because the "
           "method is inconsistent for them (not in ok, coverage or wrong)\n\n");
    printf("%-14s %6s %5s %7s %7s %7s %7s %6s %9s %7s %7s %6s %6s %5s %11s %5s\n", "case", "n",
           "ok", "cov_re", "cov_zeta", "p_stab", "wrong", "conf", "block", "w/sd", "bias/sd",
           "method", "above", "held", "ci95_re", "vs95");
    tally all_long = { 0 }, all = { 0 }, unstable = { 0 }, clean_long = { 0 };
    /* Cells of >= 2000 samples: outside the band, judged low or high by the
     * binomial test, and what chance alone gives for a perfect method. */
    size_t cells_long = 0, cells_out = 0, cells_low = 0, cells_high = 0;
    double chance_out = 0.0, chance_reject = 0.0;
    for (size_t j0 = 0; j0 < q.n_jobs; j0 += o.logs) {
        const cal_case *c = &cases[q.job_case[j0]];
        size_t len = lengths[q.job_len[j0]];
        tally t = { 0 };
        double ps = 0.0, blk = 0.0, sw = 0.0, sx = 0.0, sxx = 0.0, above = 0.0;
        size_t used[EL_METHOD_COUNT] = { 0 };
        for (size_t j = j0; j < j0 + o.logs; j++) {
            tally_add(&t, &q.res[j]);
            tally_add(&all, &q.res[j]);
            if (len >= 2000)
                tally_add(&all_long, &q.res[j]);
            if (len >= 2000 && c->sensor_noise == 0.0)
                tally_add(&clean_long, &q.res[j]);
            if (c->blocks[0].a_grows)
                tally_add(&unstable, &q.res[j]);
            if (q.res[j].ok) {
                ps += q.res[j].p_stable;
                blk += (double)q.res[j].block;
                sw += q.res[j].width_re;
                above += q.res[j].above_re;
                sx += q.res[j].point_re;
                sxx += q.res[j].point_re * q.res[j].point_re;
                if ((size_t)q.res[j].method < EL_METHOD_COUNT)
                    used[q.res[j].method]++;
            }
        }
        double n = t.n > 0 ? (double)t.n : 1.0;
        char zeta[16];
        if (t.osc > 0)
            snprintf(zeta, sizeof zeta, "%.3f", (double)t.zeta / (double)t.osc);
        else
            snprintf(zeta, sizeof zeta, "n/a");
        /* w/sd: mean width of the Re bounds over the width a normal 95%
         * interval with the spread of the point estimates across logs would
         * have (2 x 1.96 sd); below 1: bounds too narrow. bias/sd: mean
         * point error of Re over that spread. */
        truth tr;
        double tre = NAN;
        if (build_truth(c, len, &tr) == 0)
            tre = tr.re[least_damped(&tr)];
        double mean_pt = sx / n, var_pt = t.n > 1 ? (sxx - n * mean_pt * mean_pt) / (n - 1.0) : NAN;
        double sd_pt = var_pt > 0.0 ? sqrt(var_pt) : NAN;
        size_t mode_m = 0;
        for (size_t k = 1; k < EL_METHOD_COUNT; k++)
            if (used[k] > used[mode_m])
                mode_m = k;
        char meth[24];
        if (t.n == 0)
            snprintf(meth, sizeof meth, "-");
        else if (used[mode_m] == t.n)
            snprintf(meth, sizeof meth, "%s", el_method_name((el_method)mode_m));
        else
            snprintf(meth, sizeof meth, "%s%zu", el_method_name((el_method)mode_m), used[mode_m]);
        double ci_lo, ci_hi;
        el_boot_coverage_interval(t.re, t.n, 0.95, &ci_lo, &ci_hi);
        const char *judge = binom_judge(t.re, t.n);
        if (len >= 2000 && t.n > 0) {
            double po, pr;
            el_boot_coverage_chance(t.n, 0.95, 0.92, 0.98, 0.95, &po, &pr);
            cells_long++;
            chance_out += po;
            chance_reject += pr;
            double cov = (double)t.re / (double)t.n;
            cells_out += cov < 0.92 - 1e-12 || cov > 0.98 + 1e-12;
            cells_low += strcmp(judge, "low") == 0;
            cells_high += strcmp(judge, "high") == 0;
        }
        printf("%-14s %6zu %5zu %7.3f %7s %7.3f %7.3f %6.3f %9.1f %7.2f %7.2f %6s %6.3f %5zu "
               "%5.3f-%5.3f %5s\n",
               c->name, len, t.n, (double)t.re / n, zeta, ps / n, (double)t.wrong / n,
               (double)t.confident / n, blk / n, sw / n / (3.92 * sd_pt), (mean_pt - tre) / sd_pt,
               meth, above / n, t.withheld, ci_lo, ci_hi, judge);
    }
    printf("\noverall (logs >= 2000 samples): coverage Re %.3f (%zu logs), zeta %.3f (%zu "
           "oscillatory)\n",
           all_long.n ? (double)all_long.re / (double)all_long.n : NAN, all_long.n,
           all_long.osc ? (double)all_long.zeta / (double)all_long.osc : NAN, all_long.osc);
    printf("process noise only (no sensor noise), >= 2000 samples: coverage Re %.3f (%zu "
           "logs), zeta %.3f (%zu oscillatory)\n",
           clean_long.n ? (double)clean_long.re / (double)clean_long.n : NAN, clean_long.n,
           clean_long.osc ? (double)clean_long.zeta / (double)clean_long.osc : NAN,
           clean_long.osc);
    printf("confident wrong verdicts: %.4f overall (%zu of %zu logs), %zu in unstable cases "
           "(%zu logs)\n",
           all.n ? (double)all.wrong / (double)all.n : NAN, all.wrong, all.n, unstable.wrong,
           unstable.n);
    printf("withheld (method inconsistent for the log): %zu of %zu logs\n", all.withheld,
           all.withheld + all.n);
    printf("cells of >= 2000 samples: %zu; outside 0.92-0.98: %zu (a method covering exactly "
           "0.95 would put %.1f there by chance); coverage Re not consistent with 0.95 "
           "(exact binomial test, 5 %% two-sided): %zu low, %zu high (%.1f by chance)\n",
           cells_long, cells_out, chance_out, cells_low, cells_high, chance_reject);
    printf("targets: coverage 0.92-0.98 at >= 2000 samples; wrong <= 0.01 overall, 0 when "
           "unstable\n");
    free(tid);
    free(q.job_case);
    free(q.job_len);
    free(q.res);
    return 0;
}
