/* subspace_study: the multi-sensor family of issue 10 (item 8), run through
 * (i) the current default pipeline (el_assess_analyse with --method auto,
 * default lags, rank and depth; no bootstrap, which does not change the
 * point estimate of the modes) and (ii) the block-Hankel subspace
 * estimator of el_subspace (automatic horizon and order), and the fraction
 * of logs in which every mode of the truth is found within 5 % in natural
 * frequency and 0.05 in damping ratio, per SNR (docs/subspace.md).
 *
 * Family (seeded; each system from its own random stream): 2-8 sensors
 * (random normal mixing), 1-3 modes, damping ratio log-uniform in
 * 0.02-0.30, the slowest mode sampled 20, 50, 100, 200 or 300 times per
 * period (100 Hz sampling), the other modes 1.4-2.5 times faster than the
 * one below; every fourth system has one slightly growing mode (damping
 * ratio -0.002 to -0.006) and is a transient from a random start, the
 * others are stationary (white process noise, burn-in). Stationary logs
 * hold 200 periods of the slowest mode (8,000-40,000 samples); growing
 * logs end when the growing mode has grown 8-fold. Sensor noise: white,
 * standard deviation 10^(-SNR/20) of each clean channel's, at 30, 20 and
 * 10 dB (the same draws scaled).
 *
 * Usage: subspace_study [--systems N] [--seed S] [--unweighted] [--share X]
 *                       [--verbose] [--poles] [--boot N] [--family]
 *                       [--method NAME] [--first I]
 * Default: 48 systems from seed 20261204, the el_subspace defaults.
 * --seed draws another family (a check that the defaults were not tuned
 * to one draw); --unweighted and --share X change the subspace options;
 * --verbose prints one line per log, --poles also the chosen order's
 * poles. --boot N runs the default pipeline with N bootstrap replicates
 * and adds its verdicts and bounds to the table: confidently wrong
 * verdicts (P >= 0.95 on the wrong side), undecided ones (marginal or
 * ambiguous) and the coverage of the 95 % bounds of Re lambda of every
 * true mode. --family runs the default pipeline only (the accuracy
 * study's multi-sensor family M: `make accuracy` runs it with --boot 200,
 * docs/accuracy.md). --method NAME runs the pipeline with that estimator
 * (as --method spells it) instead of auto, everything else at the
 * defaults; --first I starts at system I (subsets while iterating: with
 * --systems N it runs systems I .. I + N - 1, the same draws as in the
 * full run). */
#include <cblas.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "el_assess.h"
#include "el_linalg.h"
#include "el_rng.h"
#include "el_subspace.h"

#define ST_PI 3.14159265358979323846
#define ST_MAX_MODES 3
#define ST_MAX_STATES (2 * ST_MAX_MODES)
#define ST_MAX_SENSORS 8
#define ST_DT 0.01

static const double snr_list[] = { 30.0, 20.0, 10.0 };
#define N_SNR 3

typedef struct {
    size_t n_sensors, n_modes, n_samples;
    double fn_hz[ST_MAX_MODES], zeta[ST_MAX_MODES];
    double spp;               /* samples per period of the slowest mode */
    int growing;
    double mix[ST_MAX_SENSORS * ST_MAX_STATES];   /* p x n column-major */
} st_system;

static double now_s(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

typedef struct {
    uint64_t seed;
    int unweighted, verbose, poles;
    double share;             /* < 0: the default */
    size_t boot;              /* replicates of the default pipeline (0: none) */
    int pipeline_only;        /* --family: the default pipeline only */
    int method_given;         /* --method: that estimator instead of auto */
    el_method method;
} st_options;

static void make_system(size_t id, uint64_t seed, st_system *s)
{
    static const double spp_list[] = { 20, 50, 100, 200, 300 };
    el_rng rng;
    el_rng_seed(&rng, seed, id);
    memset(s, 0, sizeof *s);
    s->n_sensors = 2 + (size_t)el_rng_below(&rng, 7);
    s->n_modes = 1 + (size_t)el_rng_below(&rng, 3);
    s->spp = spp_list[id % 5];
    s->growing = id % 4 == 3;
    double f = 1.0 / (s->spp * ST_DT);
    for (size_t m = 0; m < s->n_modes; m++) {
        if (m > 0)
            f *= 1.4 + 1.1 * el_rng_uniform(&rng);
        s->fn_hz[m] = f;
        s->zeta[m] = 0.02 * exp(log(15.0) * el_rng_uniform(&rng));
    }
    if (s->growing) {
        size_t g = (size_t)el_rng_below(&rng, s->n_modes);
        s->zeta[g] = -(0.002 + 0.004 * el_rng_uniform(&rng));
        double sigma = -s->zeta[g] * 2.0 * ST_PI * s->fn_hz[g];
        s->n_samples = (size_t)ceil(log(8.0) / sigma / ST_DT);
    } else {
        s->n_samples = (size_t)(200.0 * s->spp);
    }
    if (s->n_samples < (s->growing ? 2000 : 8000))
        s->n_samples = s->growing ? 2000 : 8000;
    if (s->n_samples > 40000)
        s->n_samples = 40000;
    size_t n = 2 * s->n_modes;
    for (size_t i = 0; i < s->n_sensors * n; i++)
        s->mix[i] = el_rng_normal(&rng);
}

/* Clean channels (n_samples x p, column-major) and unit noise draws. */
static int simulate(size_t id, uint64_t seed, const st_system *s, double **clean,
                    double **noise, double *sd)
{
    size_t n = 2 * s->n_modes, p = s->n_sensors, N = s->n_samples;
    double a[ST_MAX_STATES * ST_MAX_STATES] = { 0 }, q[ST_MAX_STATES * ST_MAX_STATES] = { 0 };
    for (size_t m = 0; m < s->n_modes; m++) {
        double w = 2.0 * ST_PI * s->fn_hz[m], re = -s->zeta[m] * w;
        double im = w * sqrt(1.0 - s->zeta[m] * s->zeta[m]);
        size_t o = 2 * m;
        a[o + o * n] = re;
        a[o + (o + 1) * n] = im;
        a[o + 1 + o * n] = -im;
        a[o + 1 + (o + 1) * n] = re;
        /* excitation scaled so every mode has a comparable stationary
         * variance (q / (2 zeta w) per state for a decaying mode) */
        double z = fabs(s->zeta[m]) > 0.01 ? fabs(s->zeta[m]) : 0.01;
        q[o + 1 + (o + 1) * n] = 2.0 * z * w;
    }
    double ad[ST_MAX_STATES * ST_MAX_STATES], qd[ST_MAX_STATES * ST_MAX_STATES];
    double g[ST_MAX_STATES * ST_MAX_STATES];
    double work[32 * ST_MAX_STATES * ST_MAX_STATES + 2 * ST_MAX_STATES + 64];
    int iwork[2 * ST_MAX_STATES + 2];
    el_error err;
    el_error_clear(&err);
    if (el_discretise(n, a, q, ST_DT, ad, qd, g, work, iwork, &err) != EL_OK)
        return 1;
    *clean = malloc(N * p * sizeof **clean);
    *noise = malloc(N * p * sizeof **noise);
    if (*clean == NULL || *noise == NULL)
        return 1;
    el_rng rng;
    el_rng_seed(&rng, seed + 777, id);
    double x[ST_MAX_STATES], xn[ST_MAX_STATES], z[ST_MAX_STATES];
    for (size_t i = 0; i < n; i++)
        x[i] = s->growing ? el_rng_normal(&rng) : 0.0;
    double slow_rate = INFINITY;
    for (size_t m = 0; m < s->n_modes; m++)
        if (s->zeta[m] > 0)
            slow_rate = fmin(slow_rate, s->zeta[m] * 2.0 * ST_PI * s->fn_hz[m]);
    long burn = s->growing ? 0 : (long)ceil(10.0 / slow_rate / ST_DT);
    for (long k = -burn; k < (long)N; k++) {
        if (k >= 0)
            for (size_t r = 0; r < p; r++) {
                double v = 0.0;
                for (size_t j = 0; j < n; j++)
                    v += s->mix[r + j * p] * x[j];
                (*clean)[(size_t)k + r * N] = v;
            }
        for (size_t j = 0; j < n; j++)
            z[j] = el_rng_normal(&rng);
        for (size_t i = 0; i < n; i++) {
            double v = 0.0;
            for (size_t j = 0; j < n; j++)
                v += ad[i + j * n] * x[j] + g[i + j * n] * z[j];
            xn[i] = v;
        }
        memcpy(x, xn, n * sizeof *x);
    }
    for (size_t r = 0; r < p; r++) {
        double mean = 0.0, ss = 0.0;
        for (size_t k = 0; k < N; k++)
            mean += (*clean)[k + r * N];
        mean /= (double)N;
        for (size_t k = 0; k < N; k++)
            ss += ((*clean)[k + r * N] - mean) * ((*clean)[k + r * N] - mean);
        sd[r] = sqrt(ss / (double)N);
    }
    for (size_t i = 0; i < N * p; i++)
        (*noise)[i] = el_rng_normal(&rng);
    return 0;
}

/* A series owned by the caller (names etc. malloc'd: el_series_free). */
static int make_series(const st_system *s, const double *clean, const double *noise,
                       const double *sd, double snr_db, el_series *out)
{
    size_t N = s->n_samples, p = s->n_sensors;
    memset(out, 0, sizeof *out);
    out->n_samples = N;
    out->n_channels = p;
    out->dt = ST_DT;
    out->values = malloc(N * p * sizeof(double));
    out->names = calloc(p, sizeof(char *));
    out->units = calloc(p, sizeof(char *));
    out->source_column = calloc(p, sizeof(size_t));
    if (!out->values || !out->names || !out->units || !out->source_column)
        return 1;
    double f = pow(10.0, -snr_db / 20.0);
    for (size_t r = 0; r < p; r++) {
        out->names[r] = malloc(24);
        out->units[r] = calloc(1, 1);
        if (!out->names[r] || !out->units[r])
            return 1;
        snprintf(out->names[r], 24, "y%zu", r + 1);
        out->source_column[r] = r + 1;
        for (size_t k = 0; k < N; k++)
            out->values[k + r * N] = 5.0 + (double)r + clean[k + r * N] +
                                     f * sd[r] * noise[k + r * N];
    }
    out->rows_used = N;
    return 0;
}

/* Every true mode matched (one to one, greedily by distance in the
 * lambda plane) within 5 % natural frequency and 0.05 damping ratio. */
static int all_modes_ok(const st_system *s, size_t n_est, const double *lre,
                        const double *lim, double *worst_f, double *worst_z)
{
    int used[64] = { 0 };
    int ok = 1;
    *worst_f = 0.0;
    *worst_z = 0.0;
    for (size_t m = 0; m < s->n_modes; m++) {
        double w = 2.0 * ST_PI * s->fn_hz[m];
        double tre = -s->zeta[m] * w, tim = w * sqrt(1.0 - s->zeta[m] * s->zeta[m]);
        long best = -1;
        double bd = INFINITY;
        for (size_t k = 0; k < n_est && k < 64; k++) {
            if (used[k] || !isfinite(lre[k]) || !isfinite(lim[k]))
                continue;
            double d = hypot(lre[k] - tre, fabs(lim[k]) - tim);
            if (d < bd) {
                bd = d;
                best = (long)k;
            }
        }
        if (best < 0) {
            *worst_f = INFINITY;
            *worst_z = INFINITY;
            return 0;
        }
        used[best] = 1;
        double lam = hypot(lre[best], lim[best]);
        double fn = lam / (2.0 * ST_PI), z = lam > 0 ? -lre[best] / lam : NAN;
        double ef = fabs(fn - s->fn_hz[m]) / s->fn_hz[m], ez = fabs(z - s->zeta[m]);
        if (!(ef <= 0.05) || !(ez <= 0.05))
            ok = 0;
        *worst_f = fmax(*worst_f, isfinite(ef) ? ef : INFINITY);
        *worst_z = fmax(*worst_z, isfinite(ez) ? ez : INFINITY);
    }
    return ok;
}

typedef struct {
    int ok;
    int confident_wrong;      /* verdict with P >= 0.95 on the wrong side */
    int undecided;            /* marginal / ambiguous verdict */
    size_t covered, n_bounds; /* true Re lambda inside the mode's 95 % bounds */
    double wf, wz, seconds;
    int growing_found;        /* growing systems: the growing mode has Re > 0 */
    int extra;                /* subspace: more physical poles than true modes */
    char note[96];
} st_outcome;

/* Verdict and bounds of the default pipeline against the truth: a
 * verdict is confidently wrong when it says stable (unstable) with
 * P(stable) (1 - P(stable)) >= 0.95 for a system that grows (decays);
 * undecided when marginal or ambiguous. Coverage: each true mode's Re
 * lambda inside the 95 % bounds of the mode matched to it. */
static void verdict_stats(const st_system *s, const el_assessment *r, st_outcome *o)
{
    int truly_stable = !s->growing;
    double p = r->verdict.p_stable;
    if (r->verdict.ambiguous || r->verdict.stability == EL_MARGINAL)
        o->undecided = 1;
    else if (truly_stable && r->verdict.stability == EL_UNSTABLE && isfinite(p) && p <= 0.05)
        o->confident_wrong = 1;
    else if (!truly_stable && r->verdict.stability == EL_STABLE && isfinite(p) && p >= 0.95)
        o->confident_wrong = 1;
    if (r->boot.replicates == 0 || r->boot.bounds == NULL)
        return;
    int used[64] = { 0 };
    for (size_t m = 0; m < s->n_modes; m++) {
        double w = 2.0 * ST_PI * s->fn_hz[m];
        double tre = -s->zeta[m] * w, tim = w * sqrt(1.0 - s->zeta[m] * s->zeta[m]);
        long best = -1;
        double bd = INFINITY;
        for (size_t k = 0; k < r->modes.n_modes && k < 64; k++) {
            const el_mode *md = &r->modes.modes[k];
            double d = hypot(md->lambda_re - tre, fabs(md->lambda_im) - tim);
            if (!used[k] && d < bd) {
                bd = d;
                best = (long)k;
            }
        }
        if (best < 0)
            continue;
        used[best] = 1;
        const el_interval *b = &r->boot.bounds[best].re;
        o->n_bounds++;
        o->covered += b->lo <= tre && tre <= b->hi;
    }
}

static void run_pipeline(const st_system *s, el_series *series, size_t boot,
                         const st_options *so, st_outcome *o)
{
    memset(o, 0, sizeof *o);
    double t0 = now_s();
    el_assess_options opt;
    el_assess_defaults(&opt);
    opt.path = "simulated";
    opt.method_auto = !so->method_given;
    if (so->method_given)
        opt.fit.method = so->method;
    opt.boot.replicates = boot;
    opt.boot.threads = 1;
    el_assessment r;
    memset(&r, 0, sizeof r);
    r.series = *series;   /* owned by the result from here on */
    memset(series, 0, sizeof *series);
    el_error err;
    el_error_clear(&err);
    el_status st = el_assess_analyse(&opt, &r, &err);
    if (st == EL_OK) {
        double lre[64], lim[64];
        size_t ne = r.modes.n_modes < 64 ? r.modes.n_modes : 64;
        for (size_t k = 0; k < ne; k++) {
            lre[k] = r.modes.modes[k].lambda_re;
            lim[k] = r.modes.modes[k].lambda_im;
            if (lre[k] > 0 && lim[k] > 0)
                o->growing_found = 1;
        }
        o->ok = all_modes_ok(s, ne, lre, lim, &o->wf, &o->wz);
        verdict_stats(s, &r, o);
        snprintf(o->note, sizeof o->note, "%s rank %zu lags %zu %s%s P %.3f",
                 el_method_name(r.model.method), r.model.rank, r.model.lags,
                 r.verdict.stability_name, r.verdict.ambiguous ? " (amb)" : "",
                 r.verdict.p_stable);
    } else {
        o->wf = o->wz = INFINITY;
        o->undecided = 1;
        snprintf(o->note, sizeof o->note, "error: %.80s", err.message);
    }
    el_assessment_free(&r);
    o->seconds = now_s() - t0;
}

static void run_subspace(const st_system *s, const el_series *series,
                         const st_options *so, st_outcome *o)
{
    memset(o, 0, sizeof *o);
    double t0 = now_s();
    el_subspace_options opt;
    el_subspace_defaults(&opt);
    if (so->unweighted)
        opt.weighting = EL_SUBSPACE_UNWEIGHTED;
    if (so->share >= 0.0)
        opt.stab_min_share = so->share;
    el_subspace_horizon hz;
    el_error err;
    el_error_clear(&err);
    el_subspace_plan *plan = NULL;
    el_subspace_result res;
    el_status st = el_subspace_choose_horizon(series, &opt, &hz, &err);
    if (st == EL_OK)
        st = el_subspace_plan_create(series->n_channels, series->n_samples, hz.rows,
                                     opt.max_order, &plan, &err);
    if (st == EL_OK)
        st = el_subspace_execute(plan, series, &opt, &res, &err);
    if (st == EL_OK && res.order > 0) {
        /* only the poles labelled physical count: they are what a report
         * would show as the modes */
        double lre[64], lim[64];
        size_t ne = 0;
        for (size_t k = 0; k < res.n_order_poles && ne < 64; k++) {
            const el_subspace_pole *q = &res.poles[res.first_pole + k];
            if (!q->physical)
                continue;
            lre[ne] = q->lambda_re;
            lim[ne] = q->lambda_im;
            if (lre[ne] > 0 && lim[ne] > 0)
                o->growing_found = 1;
            ne++;
        }
        o->extra = ne > s->n_modes;
        o->ok = all_modes_ok(s, ne, lre, lim, &o->wf, &o->wz);
        if (so->poles)
            for (size_t k = 0; k < res.n_order_poles; k++) {
                const el_subspace_pole *q = &res.poles[res.first_pole + k];
                printf("   pole %zu: fn %.4f zeta %.4f mu %.4f%+.4fi phys %d stable %d chain %zu share %.4f\n",
                       k, q->natural_hz, q->damping_ratio, q->mu_re, q->mu_im, q->physical,
                       q->stable, q->chain, q->contribution);
            }
        snprintf(o->note, sizeof o->note, "h %zu order %zu phys %zu", hz.rows, res.order,
                 res.n_physical);
    } else {
        o->wf = o->wz = INFINITY;
        snprintf(o->note, sizeof o->note, "%.80s",
                 st == EL_OK ? "no persistent mode" : err.message);
    }
    el_subspace_plan_destroy(plan);
    o->seconds = now_s() - t0;
}

int main(int argc, char **argv)
{
    size_t n_sys = 48;
    st_options so = { 20261204, 0, 0, 0, -1.0, 0, 0, 0, EL_METHOD_IV };
    size_t first = 0;
    for (int i = 1; i < argc; i++) {
        if (strcmp(argv[i], "--systems") == 0 && i + 1 < argc)
            n_sys = (size_t)strtoul(argv[++i], NULL, 10);
        else if (strcmp(argv[i], "--seed") == 0 && i + 1 < argc)
            so.seed = strtoull(argv[++i], NULL, 10);
        else if (strcmp(argv[i], "--share") == 0 && i + 1 < argc)
            so.share = atof(argv[++i]);
        else if (strcmp(argv[i], "--boot") == 0 && i + 1 < argc)
            so.boot = (size_t)strtoul(argv[++i], NULL, 10);
        else if (strcmp(argv[i], "--first") == 0 && i + 1 < argc)
            first = (size_t)strtoul(argv[++i], NULL, 10);
        else if (strcmp(argv[i], "--method") == 0 && i + 1 < argc) {
            el_error perr;
            el_error_clear(&perr);
            if (el_method_parse(argv[++i], &so.method, &perr) != EL_OK) {
                fprintf(stderr, "subspace_study: %s\n", perr.message);
                return 1;
            }
            so.method_given = 1;
        } else if (strcmp(argv[i], "--family") == 0)
            so.pipeline_only = 1;
        else if (strcmp(argv[i], "--unweighted") == 0)
            so.unweighted = 1;
        else if (strcmp(argv[i], "--verbose") == 0)
            so.verbose = 1;
        else if (strcmp(argv[i], "--poles") == 0)
            so.verbose = so.poles = 1;
        else {
            fprintf(stderr, "usage: subspace_study [--systems N] [--seed S] [--unweighted] "
                            "[--share X] [--verbose] [--poles] [--boot N] [--family] "
                            "[--method NAME] [--first I]\n");
            return 1;
        }
    }
    openblas_set_num_threads(1);
    size_t ok[2][N_SNR] = { { 0 } }, grow_ok[2][N_SNR] = { { 0 } }, n_grow = 0;
    size_t extra[N_SNR] = { 0 }, wrong[N_SNR] = { 0 }, undecided[N_SNR] = { 0 };
    size_t covered[N_SNR] = { 0 }, n_bounds[N_SNR] = { 0 };
    double secs[2] = { 0, 0 };
    double t_start = now_s();
    for (size_t id = first; id < first + n_sys; id++) {
        st_system s;
        make_system(id, so.seed, &s);
        double *clean = NULL, *noise = NULL, sd[ST_MAX_SENSORS];
        if (simulate(id, so.seed, &s, &clean, &noise, sd)) {
            fprintf(stderr, "subspace_study: simulation %zu failed\n", id);
            return 3;
        }
        n_grow += s.growing != 0;
        for (size_t k = 0; k < N_SNR; k++) {
            el_series ser;
            st_outcome out[2];
            if (make_series(&s, clean, noise, sd, snr_list[k], &ser)) {
                fprintf(stderr, "subspace_study: out of memory\n");
                return 4;
            }
            if (so.pipeline_only)
                memset(&out[1], 0, sizeof out[1]);
            else
                run_subspace(&s, &ser, &so, &out[1]);
            run_pipeline(&s, &ser, so.boot, &so, &out[0]);
            wrong[k] += out[0].confident_wrong != 0;
            undecided[k] += out[0].undecided != 0;
            covered[k] += out[0].covered;
            n_bounds[k] += out[0].n_bounds;
            el_series_free(&ser);
            for (size_t m = 0; m < 2; m++) {
                ok[m][k] += out[m].ok != 0;
                grow_ok[m][k] += s.growing && out[m].growing_found;
                secs[m] += out[m].seconds;
            }
            extra[k] += out[1].extra != 0;
            if (so.verbose)
                printf("sys %2zu p %zu modes %zu spp %3.0f N %5zu %s %2.0f dB | %s %s "
                       "f %.3f z %.3f (%s) | subspace %s f %.3f z %.3f (%s)\n",
                       id, s.n_sensors, s.n_modes, s.spp, s.n_samples,
                       s.growing ? "grow" : "stat", snr_list[k],
                       so.method_given ? el_method_name(so.method) : "auto",
                       out[0].ok ? "ok " : "BAD",
                       out[0].wf, out[0].wz, out[0].note, out[1].ok ? "ok " : "BAD",
                       out[1].wf, out[1].wz, out[1].note);
        }
        free(clean);
        free(noise);
    }
    printf("subspace_study: %zu systems (%zu growing) from seed %llu, 3 SNRs, %.0f s\n",
           n_sys, n_grow, (unsigned long long)so.seed, now_s() - t_start);
    if (so.pipeline_only)
        goto pipeline;
    printf("every mode within 5 %% natural frequency and 0.05 damping ratio:\n");
    printf("| SNR | default --method auto | subspace (el_subspace) |\n");
    printf("| --- | --- | --- |\n");
    for (size_t k = 0; k < N_SNR; k++)
        printf("| %.0f dB | %zu / %zu (%.0f %%) | %zu / %zu (%.0f %%) |\n", snr_list[k],
               ok[0][k], n_sys, 100.0 * (double)ok[0][k] / (double)n_sys, ok[1][k], n_sys,
               100.0 * (double)ok[1][k] / (double)n_sys);
    printf("growing systems with a growing mode reported (of %zu), 30/20/10 dB: "
           "auto %zu/%zu/%zu, subspace %zu/%zu/%zu\n",
           n_grow, grow_ok[0][0], grow_ok[0][1], grow_ok[0][2], grow_ok[1][0],
           grow_ok[1][1], grow_ok[1][2]);
    printf("subspace logs with more physical modes than the truth, 30/20/10 dB: "
           "%zu/%zu/%zu\n", extra[0], extra[1], extra[2]);
pipeline:
    printf("%s pipeline (--method %s, %zu replicates): confidently wrong verdicts, "
           "undecided (marginal or ambiguous), coverage of the 95 %% bounds of Re lambda:\n",
           so.method_given ? "the" : "default",
           so.method_given ? el_method_name(so.method) : "auto", so.boot);
    printf("| SNR | every mode within 5 %% / 0.05 | confidently wrong | undecided | coverage |\n");
    printf("| --- | --- | --- | --- | --- |\n");
    for (size_t k = 0; k < N_SNR; k++)
        printf("| %.0f dB | %.0f %% | %zu | %zu (%.0f %%) | %s%.3f (%zu modes) |\n", snr_list[k],
               100.0 * (double)ok[0][k] / (double)n_sys, wrong[k], undecided[k],
               100.0 * (double)undecided[k] / (double)n_sys, n_bounds[k] ? "" : "n/a ",
               n_bounds[k] ? (double)covered[k] / (double)n_bounds[k] : 0.0, n_bounds[k]);
    printf("mean seconds per log: auto %.2f, subspace %.2f\n",
           secs[0] / (double)(n_sys * N_SNR), secs[1] / (double)(n_sys * N_SNR));
    return 0;
}
