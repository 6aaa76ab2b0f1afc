/* verdict_study: calibration of the two honest-verdict rules of issue 10,
 * item 7 (docs/method.md, "No verdict from nothing" and "Limit-cycle
 * flag"). Seeded simulated logs; not part of `make test`.
 *
 * Part 1, no dynamics. (a) White noise, 1, 2, 4 and 8 channels, 200,
 * 1,000, 5,000 and 20,000 samples, through the whole pipeline
 * (el_assess_analyse, no bootstrap: the rule does not read it) with every
 * --method: the share of logs whose verdict is withheld (cause
 * no_dynamics, or the estimator refuses to fit with an error, which gives
 * no verdict either). Target >= 95 %. (b) Real dynamics at 10 dB sensor
 * noise (and 0 dB for information): damped oscillators (1-3 modes,
 * damping ratio 0.02-0.3, the slowest mode 4-300 samples per period,
 * 1-8 sensors, stationary or ring-down) and slow overdamped processes
 * (one or two real modes, time constants 10-10,000 samples: close to a
 * random walk), 200 to 20,000 samples: the share whose data passes the
 * whiteness test, an upper bound on false withholding (the rule also
 * needs the model's R2 below 0.2). Target <= 1 %.
 *
 * Part 2, limit cycle. van der Pol oscillators (van der Pol 1926; mu 1,
 * 1.5, 2, 3) with 40 and 20 dB sensor noise and a little process noise,
 * 30-100 periods: the share flagged by el_cycle (target: nearly all);
 * against linear systems at the same fundamental: one lightly damped mode
 * driven by noise (damping ratio 0.005-0.3), two modes at f0 and 3 f0,
 * and a ring-down of modes at f0, 3 f0 and 5 f0: the share flagged
 * (target: none).
 *
 * Part 3 (--files CSV...): logs from files (the demo logs) through the
 * pipeline: the whiteness test, the cause, and el_cycle's candidate.
 *
 * Usage: verdict_study [--seeds N] [--part 1|2] [--files CSV...]
 * (default 25 seeds, parts 1 and 2; a few minutes on one core, most of it
 * in part 1 (a)). */
#include <cblas.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "el_assess.h"
#include "el_cycle.h"
#include "el_dynamics.h"
#include "el_estimator.h"
#include "el_linalg.h"
#include "el_rng.h"
#include "el_spectrum.h"

#define VS_PI 3.14159265358979323846
#define VS_MAX_STATES 6
#define VS_MAX_SENSORS 8

/* ---- series --------------------------------------------------------- */

static int series_alloc(el_series *s, size_t n, size_t p, double dt)
{
    memset(s, 0, sizeof *s);
    s->n_samples = n;
    s->n_channels = p;
    s->dt = dt;
    s->rows_used = n;
    s->values = calloc(n * p, sizeof(double));
    s->names = calloc(p, sizeof(char *));
    s->units = calloc(p, sizeof(char *));
    s->source_column = calloc(p, sizeof(size_t));
    if (!s->values || !s->names || !s->units || !s->source_column)
        return 1;
    for (size_t c = 0; c < p; c++) {
        s->names[c] = malloc(24);
        s->units[c] = calloc(1, 1);
        if (!s->names[c] || !s->units[c])
            return 1;
        snprintf(s->names[c], 24, "y%zu", c + 1);
        s->source_column[c] = c + 1;
    }
    return 0;
}

/* White noise sensor error at snr_db below each channel's clean standard
 * deviation, and an offset per channel (a logged level). */
static void add_sensor_noise(el_series *s, double snr_db, el_rng *rng)
{
    size_t n = s->n_samples;
    for (size_t c = 0; c < s->n_channels; c++) {
        double *v = s->values + c * n, mean = 0.0, ss = 0.0;
        for (size_t k = 0; k < n; k++)
            mean += v[k];
        mean /= (double)n;
        for (size_t k = 0; k < n; k++)
            ss += (v[k] - mean) * (v[k] - mean);
        double sd = sqrt(ss / (double)n) * pow(10.0, -snr_db / 20.0);
        for (size_t k = 0; k < n; k++)
            v[k] += 3.0 + (double)c + sd * el_rng_normal(rng);
    }
}

static void white(el_series *s, el_rng *rng)
{
    for (size_t i = 0; i < s->n_samples * s->n_channels; i++)
        s->values[i] = 2.0 + el_rng_normal(rng);
}

/* A linear system of n_modes modes (re[i] < 0; im[i] > 0 a pair, 0 a real
 * mode) seen through a random normal mixing onto the series' channels.
 * stationary: white process noise on every state, after a burn-in of ten
 * slowest time constants; else a ring-down from a random start. */
static int linear(el_series *s, size_t n_modes, const double *re, const double *im,
                  int stationary, el_rng *rng)
{
    size_t n = 0;
    double a[VS_MAX_STATES * VS_MAX_STATES] = {0}, q[VS_MAX_STATES * VS_MAX_STATES] = {0};
    double slow = INFINITY;
    for (size_t m = 0; m < n_modes; m++) {
        slow = fmin(slow, -re[m]);
        if (im[m] > 0.0) {
            a[n + n * VS_MAX_STATES] = a[n + 1 + (n + 1) * VS_MAX_STATES] = re[m];
            a[n + (n + 1) * VS_MAX_STATES] = im[m];
            a[n + 1 + n * VS_MAX_STATES] = -im[m];
            q[n + 1 + (n + 1) * VS_MAX_STATES] = -2.0 * re[m];
            n += 2;
        } else {
            a[n + n * VS_MAX_STATES] = re[m];
            q[n + n * VS_MAX_STATES] = -2.0 * re[m];
            n += 1;
        }
    }
    /* compact to n x n */
    double ac[VS_MAX_STATES * VS_MAX_STATES], qc[VS_MAX_STATES * VS_MAX_STATES];
    for (size_t j = 0; j < n; j++)
        for (size_t i = 0; i < n; i++) {
            ac[i + j * n] = a[i + j * VS_MAX_STATES];
            qc[i + j * n] = q[i + j * VS_MAX_STATES];
        }
    double ad[VS_MAX_STATES * VS_MAX_STATES], qd[VS_MAX_STATES * VS_MAX_STATES];
    double g[VS_MAX_STATES * VS_MAX_STATES];
    double work[32 * VS_MAX_STATES * VS_MAX_STATES + 2 * VS_MAX_STATES + 64];
    int iwork[2 * VS_MAX_STATES + 2];
    el_error err;
    el_error_clear(&err);
    if (el_discretise(n, ac, qc, s->dt, ad, qd, g, work, iwork, &err) != EL_OK)
        return 1;
    size_t p = s->n_channels, N = s->n_samples;
    double mix[VS_MAX_SENSORS * VS_MAX_STATES];
    for (size_t i = 0; i < p * n; i++)
        mix[i] = el_rng_normal(rng);
    double x[VS_MAX_STATES], xn[VS_MAX_STATES], z[VS_MAX_STATES];
    for (size_t i = 0; i < n; i++)
        x[i] = stationary ? 0.0 : el_rng_normal(rng);
    long burn = stationary ? (long)ceil(10.0 / slow / s->dt) : 0;
    if (burn > 2000000)
        burn = 2000000;
    for (long k = -burn; k < (long)N; k++) {
        if (k >= 0)
            for (size_t r = 0; r < p; r++) {
                double v = 0.0;
                for (size_t j = 0; j < n; j++)
                    v += mix[r + j * p] * x[j];
                s->values[(size_t)k + r * N] = v;
            }
        for (size_t j = 0; j < n; j++)
            z[j] = stationary ? el_rng_normal(rng) : 0.0;
        for (size_t i = 0; i < n; i++) {
            double v = 0.0;
            for (size_t j = 0; j < n; j++)
                v += ad[i + j * n] * x[j] + g[i + j * n] * z[j];
            xn[i] = v;
        }
        memcpy(x, xn, n * sizeof *x);
    }
    return 0;
}

/* van der Pol (1926): x'' - mu (1 - x^2) x' + x = 0, RK4 with 10 steps per
 * sample, a small process noise (standard deviation sigma_p sqrt(h) on v
 * per step: the amplitude stays steady, the phase wanders), a random
 * start, 50 periods of settling; channels x and v. */
static void van_der_pol(el_series *s, double mu, double sigma_p, el_rng *rng)
{
    const int sub = 10;
    double h = s->dt / sub, x = 2.0 * el_rng_uniform(rng) - 1.0, v = 0.0;
    size_t N = s->n_samples;
    long settle = (long)ceil(50.0 * 2.0 * VS_PI / s->dt);
    for (long k = -settle; k < (long)N; k++) {
        for (int i = 0; i < sub; i++) {
            double k1x = v, k1v = mu * (1 - x * x) * v - x;
            double x2 = x + 0.5 * h * k1x, v2 = v + 0.5 * h * k1v;
            double k2x = v2, k2v = mu * (1 - x2 * x2) * v2 - x2;
            double x3 = x + 0.5 * h * k2x, v3 = v + 0.5 * h * k2v;
            double k3x = v3, k3v = mu * (1 - x3 * x3) * v3 - x3;
            double x4 = x + h * k3x, v4 = v + h * k3v;
            double k4x = v4, k4v = mu * (1 - x4 * x4) * v4 - x4;
            x += h / 6.0 * (k1x + 2 * k2x + 2 * k3x + k4x);
            v += h / 6.0 * (k1v + 2 * k2v + 2 * k3v + k4v) + sigma_p * sqrt(h) * el_rng_normal(rng);
        }
        if (k >= 0) {
            s->values[(size_t)k] = x;
            s->values[(size_t)k + N] = v;
        }
    }
}

/* ---- part 1 ----------------------------------------------------------- */

/* 1: withheld (no_dynamics), 2: refused with an error, 0: a verdict. */
static int run_method(const el_series *src, int method, int *cause_out)
{
    el_assess_options opt;
    el_assess_defaults(&opt);
    opt.path = "simulated";
    opt.boot.replicates = 0;
    opt.boot.threads = 1;
    if (method < 0) {
        opt.method_auto = 1;
    } else {
        opt.method_auto = 0;
        opt.fit.method = (el_method)method;
    }
    el_assessment r;
    memset(&r, 0, sizeof r);
    el_series copy;
    if (series_alloc(&copy, src->n_samples, src->n_channels, src->dt))
        return 2;
    memcpy(copy.values, src->values, src->n_samples * src->n_channels * sizeof(double));
    r.series = copy;
    el_error err;
    el_error_clear(&err);
    el_status st = el_assess_analyse(&opt, &r, &err);
    int out = st != EL_OK ? 2 : r.verdict.cause == EL_CAUSE_NO_DYNAMICS ? 1 : 0;
    *cause_out = st == EL_OK ? (int)r.verdict.cause : -1;
    el_assessment_free(&r);
    return out;
}

static void part_white(size_t seeds)
{
    static const size_t dims[] = {1, 2, 4, 8};
    static const size_t lens[] = {200, 1000, 5000, 20000};
    static const int methods[] = {EL_METHOD_LS, EL_METHOD_FB, EL_METHOD_TLS, EL_METHOD_IV,
                                  EL_METHOD_SSI, EL_METHOD_HANKEL, -1};
    enum { NM = 7 };
    printf("Part 1 (a): white noise, %zu logs per cell; withheld = cause no_dynamics "
           "(+ refused: the estimator gave no model, an error)\n", seeds);
    printf("%-8s %-7s", "channels", "samples");
    for (int m = 0; m < NM; m++)
        printf(" %13s", methods[m] < 0 ? "auto" : el_method_name((el_method)methods[m]));
    printf("\n");
    size_t tot_w[NM] = {0}, tot_r[NM] = {0}, tot = 0, white_pass = 0;
    for (size_t di = 0; di < 4; di++)
        for (size_t li = 0; li < 4; li++) {
            size_t w[NM] = {0}, rf[NM] = {0};
            for (size_t sd = 0; sd < seeds; sd++) {
                el_rng rng;
                el_rng_seed(&rng, 20261204, 1000 * di + 100 * li + sd);
                el_series s;
                if (series_alloc(&s, lens[li], dims[di], 0.01))
                    exit(1);
                white(&s, &rng);
                el_dynamics_test t;
                el_dynamics_test_series(&s, &t, NULL);
                white_pass += t.white;
                for (int m = 0; m < NM; m++) {
                    int cause = 0;
                    int o = run_method(&s, methods[m], &cause);
                    w[m] += o == 1;
                    rf[m] += o == 2;
                }
                el_series_free(&s);
                tot++;
            }
            printf("%-8zu %-7zu", dims[di], lens[li]);
            for (int m = 0; m < NM; m++) {
                printf(" %4.0f%% (+%3.0f%%)", 100.0 * (double)w[m] / (double)seeds,
                       100.0 * (double)rf[m] / (double)seeds);
                tot_w[m] += w[m];
                tot_r[m] += rf[m];
            }
            printf("\n");
        }
    printf("%-16s", "all");
    for (int m = 0; m < NM; m++)
        printf(" %4.1f%% (+%3.1f%%)", 100.0 * (double)tot_w[m] / (double)tot,
               100.0 * (double)tot_r[m] / (double)tot);
    printf("\nwhiteness test alone passes %zu of %zu white logs (%.1f%%)\n\n", white_pass,
           tot, 100.0 * (double)white_pass / (double)tot);
}

/* One family row of part 1 (b): the share of logs that pass the
 * whiteness test. kind 0: oscillators at spp samples per period of the
 * slowest mode; kind 1: overdamped, slowest time constant spp samples. */
static void dyn_row(int kind, double spp, size_t n, double snr_db, size_t seeds,
                    size_t *pass_out, size_t *total_out)
{
    size_t pass = 0;
    for (size_t sd = 0; sd < seeds; sd++) {
        el_rng rng;
        el_rng_seed(&rng, 777 + (uint64_t)kind, (uint64_t)(spp * 10) * 100000 + n * 10 + sd);
        size_t n_modes = 1 + el_rng_below(&rng, kind == 0 ? 3 : 2);
        size_t p = 1 + el_rng_below(&rng, VS_MAX_SENSORS);
        double re[3], im[3], dt = 0.01;
        double f = 1.0 / (spp * dt);
        for (size_t m = 0; m < n_modes; m++) {
            if (kind == 0) {
                double zeta = exp(log(0.02) + (log(0.3) - log(0.02)) * el_rng_uniform(&rng));
                double w = 2.0 * VS_PI * f;
                re[m] = -zeta * w;
                im[m] = w * sqrt(1.0 - zeta * zeta);
                f *= 1.4 + 1.1 * el_rng_uniform(&rng);
                if (f > 0.4 / dt)   /* keep the faster modes below 0.8 Nyquist */
                    f = 0.4 / dt;
            } else {
                re[m] = -1.0 / (spp * dt) * (m == 0 ? 1.0 : 3.0 + 5.0 * el_rng_uniform(&rng));
                im[m] = 0.0;
            }
        }
        int stationary = kind == 1 || el_rng_below(&rng, 2) == 0;
        el_series s;
        if (series_alloc(&s, n, p, dt) || linear(&s, n_modes, re, im, stationary, &rng))
            exit(1);
        add_sensor_noise(&s, snr_db, &rng);
        el_dynamics_test t;
        el_dynamics_test_series(&s, &t, NULL);
        pass += t.white;
        el_series_free(&s);
    }
    *pass_out += pass;
    *total_out += seeds;
    printf(" %5.1f%%", 100.0 * (double)pass / (double)seeds);
}

static void part_dynamics(size_t seeds)
{
    static const double spp_osc[] = {4, 10, 20, 50, 100, 300};
    static const double tau[] = {1, 3, 10, 100, 1000, 10000};
    static const size_t lens[] = {200, 1000, 5000, 20000};
    static const double snrs[] = {10.0, 0.0};
    for (int kind = 0; kind < 2; kind++)
        for (int si = 0; si < 2; si++) {
            size_t pass = 0, total = 0, pass_core = 0, total_core = 0;
            printf("Part 1 (b): %s, %.0f dB sensor noise, %zu logs per cell: share whose "
                   "data passes the whiteness test (would be withheld)\n",
                   kind == 0 ? "damped oscillators (1-3 modes, zeta 0.02-0.3, 1-8 sensors, "
                               "stationary or ring-down)"
                             : "overdamped (1-2 real modes, stationary, 1-8 sensors)",
                   snrs[si], 4 * seeds);
            printf("%-22s", kind == 0 ? "samples per period" : "time constant, samples");
            for (size_t li = 0; li < 4; li++)
                printf(" %6zu", lens[li]);
            printf("\n");
            for (size_t r = 0; r < 6; r++) {
                double spp = kind == 0 ? spp_osc[r] : tau[r];
                printf("%-22g", spp);
                for (size_t li = 0; li < 4; li++) {
                    size_t p0 = pass, t0 = total;
                    dyn_row(kind, spp, lens[li], snrs[si], 4 * seeds, &pass, &total);
                    /* the core family: oscillators 10+ samples per period,
                     * time constants of 3+ samples */
                    if ((kind == 0 && spp >= 10) || (kind == 1 && spp >= 3)) {
                        pass_core += pass - p0;
                        total_core += total - t0;
                    }
                }
                printf("\n");
            }
            printf("all: %zu of %zu (%.2f%%); %s: %zu of %zu (%.2f%%)\n\n", pass, total,
                   100.0 * (double)pass / (double)total,
                   kind == 0 ? "10+ samples per period" : "time constant 3+ samples",
                   pass_core, total_core, 100.0 * (double)pass_core / (double)total_core);
        }
}

/* ---- part 2 ----------------------------------------------------------- */

static int flagged(const el_series *s, el_cycle *c)
{
    el_spectra sp;
    el_peaks pk;
    memset(&sp, 0, sizeof sp);
    memset(&pk, 0, sizeof pk);
    el_error err;
    el_error_clear(&err);
    int f = 0;
    if (el_spectrum_compute(s, NULL, &sp, &pk, NULL, &err) == EL_OK &&
        el_cycle_detect(s, &pk, c, &err) == EL_OK)
        f = c->flagged;
    el_spectra_free(&sp);
    el_peaks_free(&pk);
    return f;
}

static void cycle_row(const char *label, int kind, double param, double snr_db,
                      double periods, size_t seeds)
{
    size_t hits = 0, tested = 0;
    double cv_min = INFINITY, cv_max = 0.0;
    /* van der Pol's period for mu up to 3 is 6.3-8.9 s (2 pi at mu -> 0);
     * the linear controls use f0 = 1 / 6.66 Hz, the mu = 1 cycle's. */
    double dt = 0.05, f0 = 1.0 / 6.66;
    size_t n = (size_t)(periods * 6.66 / dt);
    for (size_t sd = 0; sd < seeds; sd++) {
        el_rng rng;
        el_rng_seed(&rng, 4242 + (uint64_t)kind, (uint64_t)(param * 1000) * 1000 + sd);
        el_series s;
        if (series_alloc(&s, n, kind == 0 ? 2 : 2, dt))
            exit(1);
        if (kind == 0) {
            van_der_pol(&s, param, 0.05, &rng);
        } else {
            double re[3], im[3], w = 2 * VS_PI * f0;
            size_t nm = kind == 1 ? 1 : kind == 2 ? 2 : 3;
            for (size_t m = 0; m < nm; m++) {
                double wm = w * (double)(2 * m + 1), z = param;
                re[m] = -z * wm;
                im[m] = wm * sqrt(1 - z * z);
            }
            if (linear(&s, nm, re, im, kind != 3, &rng))
                exit(1);
        }
        add_sensor_noise(&s, snr_db, &rng);
        el_cycle c;
        hits += flagged(&s, &c);
        if (c.tested) {
            tested++;
            cv_min = fmin(cv_min, c.envelope_cv);
            cv_max = fmax(cv_max, c.envelope_cv);
        }
        el_series_free(&s);
    }
    printf("%-44s %5.0f dB %4.0f periods: flagged %3zu of %zu (harmonics found in %zu; "
           "envelope CV %.3f-%.3f)\n", label, snr_db, periods, hits, seeds, tested,
           tested ? cv_min : NAN, tested ? cv_max : NAN);
}

static void part_cycle(size_t seeds)
{
    printf("Part 2: limit-cycle flag, %zu logs per row (2 channels, dt 0.05 s)\n", seeds);
    static const double mus[] = {1.0, 1.5, 2.0, 3.0};
    static const double snr[] = {40.0, 20.0};
    static const double periods[] = {30.0, 100.0};
    char label[64];
    for (size_t i = 0; i < 4; i++)
        for (size_t j = 0; j < 2; j++)
            for (size_t k = 0; k < 2; k++) {
                snprintf(label, sizeof label, "van der Pol mu %.1f", mus[i]);
                cycle_row(label, 0, mus[i], snr[j], periods[k], seeds);
            }
    static const double zetas[] = {0.005, 0.02, 0.05, 0.1, 0.3};
    for (size_t i = 0; i < 5; i++)
        for (size_t j = 0; j < 2; j++)
            for (size_t k = 0; k < 2; k++) {
                snprintf(label, sizeof label, "linear, noise-driven, zeta %.3f", zetas[i]);
                cycle_row(label, 1, zetas[i], snr[j], periods[k], seeds);
            }
    for (size_t i = 0; i < 5; i++)
        for (size_t j = 0; j < 2; j++) {
            snprintf(label, sizeof label, "linear f0 + 3 f0, noise-driven, zeta %.3f",
                     zetas[i]);
            cycle_row(label, 2, zetas[i], snr[j], 100.0, seeds);
        }
    for (size_t i = 0; i < 3; i++)
        for (size_t j = 0; j < 2; j++) {
            snprintf(label, sizeof label, "ring-down f0, 3 f0, 5 f0, zeta %.3f", zetas[i]);
            cycle_row(label, 3, zetas[i], snr[j], 30.0, seeds);
        }
    printf("\n");
}

/* ---- part 3: logs from files (the demo logs) ------------------------- */

static void part_files(int argc, char **argv, int first)
{
    printf("Part 3: logs from files, whole pipeline (--method auto, no bootstrap)\n");
    for (int i = first; i < argc; i++) {
        el_assess_options opt;
        el_assess_defaults(&opt);
        opt.path = argv[i];
        opt.boot.replicates = 0;
        opt.boot.threads = 1;
        el_assessment r;
        memset(&r, 0, sizeof r);
        el_error err;
        el_error_clear(&err);
        if (el_assess_run(&opt, &r, &err) != EL_OK) {
            printf("%s: error: %s\n", argv[i], err.message);
            el_assessment_free(&r);
            continue;
        }
        char orders[64];
        el_cycle_orders_text(&r.cycle, orders, sizeof orders);
        printf("%s: whiteness family p = %.3g (%s), fit R2 %.3f, cause %s; cycle %s "
               "(harmonics %s of %.4g Hz, envelope CV %.3f)\n",
               argv[i], r.dynamics.p_family, r.dynamics.white ? "white" : "not white",
               r.model.fit_r2, el_verdict_cause_code(r.verdict.cause),
               r.cycle.flagged ? "FLAGGED" : r.cycle.tested ? "tested, not flagged"
                                                            : "not tested",
               r.cycle.tested ? orders : "-", r.cycle.fundamental_hz, r.cycle.envelope_cv);
        el_assessment_free(&r);
    }
    printf("\n");
}

int main(int argc, char **argv)
{
    size_t seeds = 25;
    int part = 0;
    for (int i = 1; i < argc; i++) {
        if (strcmp(argv[i], "--seeds") == 0 && i + 1 < argc)
            seeds = (size_t)strtoul(argv[++i], NULL, 10);
        else if (strcmp(argv[i], "--part") == 0 && i + 1 < argc)
            part = atoi(argv[++i]);
        else if (strcmp(argv[i], "--files") == 0) {
            openblas_set_num_threads(1);
            part_files(argc, argv, i + 1);
            return 0;
        } else {
            fprintf(stderr, "usage: verdict_study [--seeds N] [--part 1|2] [--files CSV...]\n");
            return 1;
        }
    }
    if (seeds == 0)
        seeds = 1;
    openblas_set_num_threads(1);
    if (part == 0 || part == 1) {
        part_dynamics(seeds);
        part_white(seeds);
    }
    if (part == 0 || part == 2)
        part_cycle(seeds);
    return 0;
}
