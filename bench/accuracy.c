/* accuracy: the accuracy study of issue 4 (docs/accuracy.md). Seeded
 * simulated logs of known linear systems in three regimes (transient decay,
 * transient growth, stationary disturbance-driven) and with a measured
 * input, at sensor SNR infinity, 40, 30, 20 and 10 dB, each run through the
 * whole pipeline (el_assess_run, bootstrap included) with every estimator
 * and with --method auto; prints per case and SNR the bias and spread of
 * the least-damped mode, bound coverage, confident wrong verdicts, and the
 * targets of the issue met or not.
 *
 * Usage: accuracy [--quick] [--seeds N] [--boot N] [--workers N]
 *                 [--case NAME[,NAME...]] [--list] [--csv CASE SEED SNR|inf]
 * Default: 10 seeds per cell, 200 bootstrap replicates, one worker process
 * per core (about 2.5 minutes on two cores). --quick: 2 seeds, 100
 * replicates. --list names the cases; --csv prints the log of one cell
 * exactly as the study feeds it to the pipeline (SEED counts from 0), so a
 * row can be reproduced with the eigenlog program; the bootstrap seed of
 * seed s is 1000 s + 7.
 *
 * Workers are processes, not threads: el_assess_run creates FFTW plans,
 * and FFTW's planner is not thread-safe. Each log is simulated from its
 * own (case, seed) random stream and every bootstrap has a fixed seed, so
 * the table does not depend on the number of workers. */
#include <cblas.h>
#include <math.h>
#include <stdatomic.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/mman.h>
#include <sys/types.h>
#include <sys/wait.h>
#include <time.h>
#include <unistd.h>

#include "el_assess.h"
#include "el_linalg.h"
#include "el_rng.h"

#define ACC_PI 3.14159265358979323846
#define MAX_STATES 4
#define MAX_SENSORS 6
#define MAX_MODES 4
#define MAX_CASES 24

/* ------------------------------------------------------------------ */
/* Cases                                                              */
/* ------------------------------------------------------------------ */

typedef enum { SIM_DECAY = 0, SIM_GROWTH, SIM_STATIONARY, SIM_DRIVEN } sim_regime;

static const char *const sim_regime_names[] = {
    "transient decay", "transient growth", "stationary (process noise only)",
    "driven by a measured input"
};

/* One eigenvalue of the continuous system: im > 0 is a complex pair (two
 * states, re +- i im), im == 0 a real mode (one state). 1/s. */
typedef struct {
    double re, im;
} eig_spec;

typedef struct {
    char name[24];
    char about[96];
    sim_regime regime;
    size_t n_modes;
    eig_spec modes[MAX_MODES];
    size_t n_sensors;
    int has_input;
    int lags_auto;            /* 1: --lags auto (one sensor) */
    double dt_s;
    size_t n_samples;
    size_t id;                /* position in build_cases: the random stream */
} acc_case;

/* A pair with natural frequency f_n (Hz) and damping ratio zeta. */
static eig_spec damped(double f_n_hz, double zeta)
{
    double w = 2.0 * ACC_PI * f_n_hz;
    eig_spec e = { -zeta * w, w * sqrt(1.0 - zeta * zeta) };
    return e;
}

/* A pair with the given real part and damped frequency (Hz). */
static eig_spec pair_re(double re, double f_hz)
{
    eig_spec e = { re, 2.0 * ACC_PI * f_hz };
    return e;
}

static eig_spec real_mode(double re)
{
    eig_spec e = { re, 0.0 };
    return e;
}

static size_t add_case(acc_case *cs, size_t n, const char *name, const char *about,
                       sim_regime regime, size_t n_sensors, double dt_s,
                       size_t n_samples, size_t n_modes, const eig_spec *modes)
{
    acc_case *c = &cs[n];
    memset(c, 0, sizeof *c);
    snprintf(c->name, sizeof c->name, "%s", name);
    snprintf(c->about, sizeof c->about, "%s", about);
    c->regime = regime;
    c->n_sensors = n_sensors;
    c->has_input = regime == SIM_DRIVEN;
    c->lags_auto = n_sensors == 1;
    c->dt_s = dt_s;
    c->n_samples = n_samples;
    c->n_modes = n_modes;
    c->id = n;
    for (size_t i = 0; i < n_modes; i++)
        c->modes[i] = modes[i];
    return n + 1;
}

/* The study's cases. Durations: a decay log covers about 8 time constants
 * of the slowest mode (it ends in the noise floor, as a real ring-down
 * record does); a growth log grows by a factor 6 to 20; a stationary log
 * holds 20 to 40 correlation times 1/|Re lambda| of the slowest mode, so
 * that its statistical scatter is comparable with the bias being looked
 * for. 2-state systems are seen through a 2 x 2 mixing, the 4-state one
 * through 6 mixed sensors or through one sensor. */
static size_t build_cases(acc_case *cs)
{
    size_t n = 0;
    eig_spec sink[2] = { real_mode(-0.2), real_mode(-1.0) };
    eig_spec spiral[1] = { damped(0.5, 0.13) };
    eig_spec light[1] = { damped(1.0, 0.01) };
    eig_spec saddle[2] = { real_mode(0.05), real_mode(-0.8) };
    eig_spec source[2] = { real_mode(0.05), real_mode(0.025) };
    eig_spec sspiral[1] = { pair_re(0.04, 0.8) };
    eig_spec two[2] = { damped(1.30, 0.03), damped(3.10, 0.08) };
    eig_spec two_grow[2] = { pair_re(0.04, 1.30), damped(3.10, 0.08) };
    eig_spec drv[1] = { damped(0.7, 0.05) };
    eig_spec drv_grow[1] = { pair_re(0.03, 0.7) };
    n = add_case(cs, n, "sink-decay", "sink, real -0.2 and -1.0", SIM_DECAY, 2, 0.02, 2000, 2, sink);
    n = add_case(cs, n, "sink-stat", "sink, real -0.2 and -1.0", SIM_STATIONARY, 2, 0.02, 6000, 2, sink);
    n = add_case(cs, n, "spiral-decay", "spiral sink, 0.5 Hz, zeta 0.13", SIM_DECAY, 2, 0.02, 1000, 1, spiral);
    n = add_case(cs, n, "spiral-stat", "spiral sink, 0.5 Hz, zeta 0.13", SIM_STATIONARY, 2, 0.02, 4000, 1, spiral);
    n = add_case(cs, n, "light-decay", "center-like spiral sink, 1 Hz, zeta 0.01", SIM_DECAY, 2, 0.02, 6000, 1, light);
    n = add_case(cs, n, "light-stat", "center-like spiral sink, 1 Hz, zeta 0.01", SIM_STATIONARY, 2, 0.02, 15000, 1, light);
    n = add_case(cs, n, "saddle-grow", "saddle, real +0.05 and -0.8", SIM_GROWTH, 2, 0.02, 3000, 2, saddle);
    n = add_case(cs, n, "source-grow", "source, real +0.05 and +0.025", SIM_GROWTH, 2, 0.02, 3000, 2, source);
    n = add_case(cs, n, "sspiral-grow", "spiral source, 0.8 Hz, Re +0.04", SIM_GROWTH, 2, 0.02, 3000, 1, sspiral);
    n = add_case(cs, n, "six-decay", "4 states, 1.30 Hz zeta 0.03 + 3.10 Hz zeta 0.08, 6 sensors", SIM_DECAY, 6, 0.02, 2000, 2, two);
    n = add_case(cs, n, "six-stat", "4 states, 1.30 Hz zeta 0.03 + 3.10 Hz zeta 0.08, 6 sensors", SIM_STATIONARY, 6, 0.02, 30000, 2, two);
    n = add_case(cs, n, "six-grow", "4 states, 1.30 Hz Re +0.04 + 3.10 Hz zeta 0.08, 6 sensors", SIM_GROWTH, 6, 0.02, 3000, 2, two_grow);
    n = add_case(cs, n, "one-decay", "4 states, 1.30 Hz zeta 0.03 + 3.10 Hz zeta 0.08, 1 sensor", SIM_DECAY, 1, 0.02, 2000, 2, two);
    n = add_case(cs, n, "one-stat", "4 states, 1.30 Hz zeta 0.03 + 3.10 Hz zeta 0.08, 1 sensor", SIM_STATIONARY, 1, 0.02, 30000, 2, two);
    n = add_case(cs, n, "input-stable", "0.7 Hz zeta 0.05, measured random input", SIM_DRIVEN, 2, 0.02, 6000, 1, drv);
    n = add_case(cs, n, "input-grow", "0.7 Hz Re +0.03, measured random input", SIM_DRIVEN, 2, 0.02, 3000, 1, drv_grow);
    return n;
}

static size_t case_states(const acc_case *c)
{
    size_t n = 0;
    for (size_t i = 0; i < c->n_modes; i++)
        n += c->modes[i].im > 0 ? 2 : 1;
    return n;
}

/* The truth's least-damped mode (largest Re; a pair shown with Im > 0). */
static eig_spec case_least_damped(const acc_case *c)
{
    eig_spec best = c->modes[0];
    for (size_t i = 1; i < c->n_modes; i++)
        if (c->modes[i].re > best.re)
            best = c->modes[i];
    return best;
}

static double case_slowest_rate(const acc_case *c)
{
    double r = INFINITY;
    for (size_t i = 0; i < c->n_modes; i++)
        if (fabs(c->modes[i].re) < r)
            r = fabs(c->modes[i].re);
    return r;
}

/* Lightly damped: a decaying pair with damping ratio <= 0.05, the cases the
 * issue's frequency and damping target is about. */
static int case_lightly_damped(const acc_case *c)
{
    eig_spec e = case_least_damped(c);
    if (e.im <= 0 || e.re >= 0)
        return 0;
    return -e.re / hypot(e.re, e.im) <= 0.05;
}

/* ------------------------------------------------------------------ */
/* Simulation                                                         */
/* ------------------------------------------------------------------ */

/* Fixed sensor mixings (rows: sensors), well conditioned, every mode seen
 * by every sensor. Written row by row here, stored column-major. */
static void sensor_mixing(size_t p, size_t n, double *c)
{
    static const double two[2][2] = { { 1.00, 0.45 }, { -0.35, 0.90 } };
    static const double six[6][4] = {
        { 1.00, 0.20, 0.50, -0.30 },
        { 0.40, 0.90, -0.20, 0.60 },
        { -0.30, 0.50, 1.00, 0.20 },
        { 0.70, -0.40, 0.30, 0.90 },
        { 0.20, 0.60, -0.70, 0.40 },
        { 0.50, 0.30, 0.40, -0.80 },
    };
    static const double one[4] = { 1.00, 0.30, 0.80, -0.50 };
    for (size_t i = 0; i < p; i++)
        for (size_t j = 0; j < n; j++) {
            double v;
            if (p == 1)
                v = one[j];
            else if (p == 2)
                v = two[i][j];
            else
                v = six[i][j];
            c[i + j * p] = v;
        }
}

/* A simulated log before sensor noise: the clean channels d (n_samples x
 * n_sensors, column-major, deviations from the operating point), the
 * measured input u (n_samples, deviation from its mean level) and one
 * standard normal draw per cell for the sensor noise, scaled per SNR. */
typedef struct {
    size_t n_samples, n_sensors;
    double *d, *noise, *u;
    double channel_sd[MAX_SENSORS];
} sim_log;

static void sim_free(sim_log *s)
{
    free(s->d);
    free(s->noise);
    free(s->u);
    memset(s, 0, sizeof *s);
}

/* x' = A x + b u + w with A block-diagonal in real modal form, sampled
 * exactly: Ad, Qd by el_discretise (Van Loan 1978) and the zero-order-hold
 * input matrix from the exponential of [[A, b], [0, 0]] dt. Transients
 * start from x0 = 1 in every state with process noise of stationary
 * standard deviation 1% of that; stationary and driven logs start after a
 * burn-in of 10 time constants of the slowest mode. The input is a
 * Gaussian level held for 5 samples (0.1 s: flat spectrum to about 5 Hz). */
static int simulate(const acc_case *c, uint64_t seed, uint64_t stream, sim_log *s)
{
    size_t n = case_states(c), p = c->n_sensors, N = c->n_samples;
    double a[MAX_STATES * MAX_STATES] = { 0 }, q[MAX_STATES * MAX_STATES] = { 0 };
    double b[MAX_STATES] = { 0 }, cm[MAX_SENSORS * MAX_STATES];
    size_t o = 0;
    for (size_t i = 0; i < c->n_modes; i++) {
        eig_spec e = c->modes[i];
        if (e.im > 0) {
            a[o + o * n] = e.re;
            a[o + 1 + o * n] = -e.im;
            a[o + (o + 1) * n] = e.im;
            a[o + 1 + (o + 1) * n] = e.re;
            b[o + 1] = 1.0;
            o += 2;
        } else {
            a[o + o * n] = e.re;
            b[o] = 1.0;
            o += 1;
        }
    }
    sensor_mixing(p, n, cm);
    double slow = case_slowest_rate(c);
    /* Intensity q gives a one-state stationary variance q / (2 |re|). */
    double qi = 1.0;
    if (c->regime == SIM_DECAY || c->regime == SIM_GROWTH)
        qi = 2.0 * slow * 1e-4;
    else if (c->regime == SIM_DRIVEN)
        qi = 0.01;
    for (size_t i = 0; i < n; i++)
        q[i + i * n] = qi;

    double ad[MAX_STATES * MAX_STATES], qd[MAX_STATES * MAX_STATES];
    double g[MAX_STATES * MAX_STATES], bd[MAX_STATES] = { 0 };
    double work[32 * MAX_STATES * MAX_STATES + 2 * MAX_STATES + 64];
    int iwork[2 * MAX_STATES + 2];
    el_error err;
    el_error_clear(&err);
    if (el_discretise(n, a, q, c->dt_s, ad, qd, g, work, iwork, &err) != EL_OK) {
        fprintf(stderr, "accuracy: discretisation failed: %s\n", err.message);
        return 1;
    }
    if (c->has_input) {
        size_t m = n + 1;
        double aug[(MAX_STATES + 1) * (MAX_STATES + 1)] = { 0 };
        double e[(MAX_STATES + 1) * (MAX_STATES + 1)];
        for (size_t j = 0; j < n; j++)
            for (size_t i = 0; i < n; i++)
                aug[i + j * m] = a[i + j * n] * c->dt_s;
        for (size_t i = 0; i < n; i++)
            aug[i + n * m] = b[i] * c->dt_s;
        if (el_expm(m, aug, e, work, iwork, &err) != EL_OK) {
            fprintf(stderr, "accuracy: input discretisation failed: %s\n", err.message);
            return 1;
        }
        for (size_t i = 0; i < n; i++)
            bd[i] = e[i + n * m];
    }

    memset(s, 0, sizeof *s);
    s->n_samples = N;
    s->n_sensors = p;
    s->d = malloc(N * p * sizeof *s->d);
    s->noise = malloc(N * p * sizeof *s->noise);
    s->u = calloc(N, sizeof *s->u);
    if (!s->d || !s->noise || !s->u) {
        sim_free(s);
        return 1;
    }
    el_rng rng;
    el_rng_seed(&rng, seed, stream);
    double x[MAX_STATES], xn[MAX_STATES], z[MAX_STATES];
    int transient = c->regime == SIM_DECAY || c->regime == SIM_GROWTH;
    for (size_t i = 0; i < n; i++)
        x[i] = transient ? 1.0 : 0.0;
    long burn = transient ? 0 : (long)ceil(10.0 / (slow * c->dt_s));
    double level = 0.0;
    for (long k = -burn; k < (long)N; k++) {
        if (k >= 0)
            for (size_t r = 0; r < p; r++) {
                double v = 0.0;
                for (size_t j = 0; j < n; j++)
                    v += cm[r + j * p] * x[j];
                s->d[(size_t)k + r * N] = v;
            }
        if (c->has_input && (k % 5 == 0))
            level = el_rng_normal(&rng);
        if (c->has_input && k >= 0)
            s->u[k] = level;
        for (size_t j = 0; j < n; j++)
            z[j] = el_rng_normal(&rng);
        for (size_t i = 0; i < n; i++) {
            double v = bd[i] * level;
            for (size_t j = 0; j < n; j++)
                v += ad[i + j * n] * x[j] + g[i + j * n] * z[j];
            xn[i] = v;
        }
        memcpy(x, xn, n * sizeof *x);
    }
    for (size_t r = 0; r < p; r++) {
        double mean = 0.0, ss = 0.0;
        for (size_t k = 0; k < N; k++)
            mean += s->d[k + r * N];
        mean /= (double)N;
        for (size_t k = 0; k < N; k++) {
            double v = s->d[k + r * N] - mean;
            ss += v * v;
        }
        s->channel_sd[r] = sqrt(ss / (double)N);
    }
    /* Sensor noise from its own stream: the same draws at every SNR, so
     * the SNR columns differ by the noise level only. */
    el_rng_seed(&rng, seed, stream + 1000000);
    for (size_t i = 0; i < N * p; i++)
        s->noise[i] = el_rng_normal(&rng);
    return 0;
}

/* Writes the log as CSV text: t, y1..yp (operating point 10 + 3 r plus the
 * clean channel plus noise of standard deviation channel_sd 10^(-snr/20)),
 * and u (input level 2 plus its deviation) when there is an input. The
 * returned buffer is malloc'ed (open_memstream); NULL on failure. */
static char *write_csv(const acc_case *c, const sim_log *s, double snr_db, size_t *len)
{
    char *buf = NULL;
    FILE *f = open_memstream(&buf, len);
    if (f == NULL)
        return NULL;
    size_t N = s->n_samples, p = s->n_sensors;
    double sd[MAX_SENSORS];
    for (size_t r = 0; r < p; r++)
        sd[r] = isinf(snr_db) ? 0.0 : s->channel_sd[r] * pow(10.0, -snr_db / 20.0);
    fputs("t", f);
    for (size_t r = 0; r < p; r++)
        fprintf(f, ",y%zu", r + 1);
    if (c->has_input)
        fputs(",u", f);
    fputc('\n', f);
    for (size_t k = 0; k < N; k++) {
        fprintf(f, "%.6f", (double)k * c->dt_s);
        for (size_t r = 0; r < p; r++)
            fprintf(f, ",%.12g", 10.0 + 3.0 * (double)r + s->d[k + r * N] +
                                     sd[r] * s->noise[k + r * N]);
        if (c->has_input)
            fprintf(f, ",%.12g", 2.0 + s->u[k]);
        fputc('\n', f);
    }
    if (fclose(f) != 0) {
        free(buf);
        return NULL;
    }
    return buf;
}

/* ------------------------------------------------------------------ */
/* One assessment                                                     */
/* ------------------------------------------------------------------ */

#define N_METHODS 6   /* auto, then the five estimators */
static const char *const method_label[N_METHODS] = { "auto", "ls", "fb", "tls", "iv", "ssi" };
static const el_method method_enum[N_METHODS] = {
    EL_METHOD_IV, EL_METHOD_LS, EL_METHOD_FB, EL_METHOD_TLS, EL_METHOD_IV, EL_METHOD_SSI
};

static const double snr_list[] = { INFINITY, 40.0, 30.0, 20.0, 10.0 };
#define N_SNR (sizeof snr_list / sizeof snr_list[0])

typedef struct {
    int ran;                  /* the slot was filled */
    int ok;                   /* el_assess_run succeeded */
    int matched;              /* an estimated mode was matched to the truth */
    double re, freq_hz, zeta; /* of the matched mode */
    int has_bounds, covered;  /* truth Re lambda inside the matched mode's bounds */
    int stability, ambiguous; /* final verdict */
    int raw_class;            /* the estimator's own bootstrap: +1 stable, -1 unstable, 0 */
    int regime;               /* detected regime (el_regime_class) */
    int method;               /* estimator that ran (auto: the primary) */
    int cross_ran, cross_agrees, growth_veto;
    int no_input;             /* the method takes no input: run on the outputs alone */
    size_t lags, rank;
    double seconds;
    char error[160];          /* why the run failed (ok == 0) */
} run_result;

/* Nearest estimated mode to the truth's least-damped eigenvalue in the
 * complex plane (pairs compared with Im > 0); -1 when none is finite. */
static long match_mode(const el_modes *modes, eig_spec truth)
{
    long best = -1;
    double bd = INFINITY;
    for (size_t m = 0; m < modes->n_modes; m++) {
        const el_mode *e = &modes->modes[m];
        if (!isfinite(e->lambda_re) || !isfinite(e->lambda_im))
            continue;
        double d = hypot(e->lambda_re - truth.re, fabs(e->lambda_im) - truth.im);
        if (d < bd) {
            bd = d;
            best = (long)m;
        }
    }
    return best;
}

static double now_s(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

typedef struct {
    size_t seeds, boot, workers;
    const char *only;
    const char *methods;      /* --methods: the labels to run (NULL: all) */
    int list;
    const char *csv_case;     /* --csv CASE SEED SNR: print that log and stop */
    size_t csv_seed;
    double csv_snr_db;
} acc_options;

static void run_one(const acc_case *c, char *csv, size_t len, size_t method,
                    uint64_t boot_seed, const acc_options *o, run_result *res)
{
    memset(res, 0, sizeof *res);
    res->ran = 1;
    double t0 = now_s();
    FILE *in = fmemopen(csv, len, "r");
    if (in == NULL)
        return;
    char channels[64] = "";
    for (size_t r = 0; r < c->n_sensors; r++) {
        size_t used = strlen(channels);
        snprintf(channels + used, sizeof channels - used, "%sy%zu", r ? "," : "", r + 1);
    }
    el_assess_options opt;
    el_assess_defaults(&opt);
    opt.path = "simulated.csv";
    opt.stream = in;
    opt.time_column = "t";
    opt.channels = channels;
    el_method m = method_enum[method];
    int takes_input = method == 0 || m == EL_METHOD_LS || m == EL_METHOD_IV;
    opt.inputs = c->has_input && takes_input ? "u" : NULL;
    res->no_input = c->has_input && !takes_input;
    opt.lags_auto = c->lags_auto;
    opt.method_auto = method == 0;
    opt.fit.method = m;
    /* fb and tls fit every kept direction as dynamics: where the state has
     * more directions than the system (6 sensors of 4 states; delay
     * states) they get --rank auto, as docs/method.md advises. */
    if ((m == EL_METHOD_FB || m == EL_METHOD_TLS) && method != 0 &&
        (c->n_sensors > case_states(c) || c->lags_auto))
        opt.fit.rank = EL_RANK_AUTO;
    opt.boot.replicates = o->boot;
    opt.boot.threads = 1;
    opt.boot.seed = boot_seed;
    el_assessment r;
    memset(&r, 0, sizeof r);
    el_error err;
    el_error_clear(&err);
    el_status st = el_assess_run(&opt, &r, &err);
    fclose(in);
    res->seconds = now_s() - t0;
    if (st != EL_OK) {
        /* Truncated on purpose: the table needs the gist, not the hint. */
        size_t n = strlen(err.message);
        if (n >= sizeof res->error)
            n = sizeof res->error - 1;
        memcpy(res->error, err.message, n);
        res->error[n] = '\0';
        el_assessment_free(&r);
        return;
    }
    res->ok = 1;
    eig_spec truth = case_least_damped(c);
    long mm = match_mode(&r.modes, truth);
    if (mm >= 0) {
        const el_mode *e = &r.modes.modes[mm];
        res->matched = 1;
        res->re = e->lambda_re;
        res->freq_hz = e->frequency_hz;
        res->zeta = e->damping_ratio;
        if (r.boot.replicates > 0 && (size_t)mm < r.boot.n_modes) {
            el_interval b = r.boot.bounds[mm].re;
            res->has_bounds = isfinite(b.lo) && isfinite(b.hi);
            res->covered = res->has_bounds && b.lo <= truth.re && truth.re <= b.hi;
        }
    }
    res->stability = (int)r.verdict.stability;
    res->ambiguous = r.verdict.ambiguous;
    double ps = r.boot.replicates > 0 ? r.boot.p_stable : NAN;
    double level = opt.boot.level;
    res->raw_class = !isfinite(ps) ? 0 : ps >= level ? 1 : 1.0 - ps >= level ? -1 : 0;
    res->regime = r.regime ? (int)r.regime->regime : (int)EL_REGIME_UNDETERMINED;
    res->method = (int)r.model.method;
    res->cross_ran = r.cross_ran;
    res->cross_agrees = r.cross_agrees;
    res->growth_veto = r.growth_veto;
    res->lags = r.model.lags;
    res->rank = r.model.rank;
    el_assessment_free(&r);
}

/* ------------------------------------------------------------------ */
/* Jobs: one (case, seed) = one simulated log at every SNR, every method */
/* ------------------------------------------------------------------ */

typedef struct {
    _Atomic size_t next;      /* next job to take (shared between workers) */
    _Atomic size_t done;
    run_result res[];         /* [job][snr][method] */
} shared_block;

static size_t slot(size_t job, size_t snr, size_t method)
{
    return (job * N_SNR + snr) * N_METHODS + method;
}

/* 1 when name is in the comma-separated list (NULL: every name). */
static int in_list(const char *list, const char *name);

static void run_job(const acc_case *cases, const size_t *job_case, size_t job,
                    size_t n_jobs, const acc_options *o, shared_block *sh)
{
    size_t ci = job_case[job];
    size_t seed = job % o->seeds;
    const acc_case *c = &cases[ci];
    sim_log s;
    if (simulate(c, 20240 + seed, c->id, &s) != 0)
        return;
    for (size_t k = 0; k < N_SNR; k++) {
        size_t len = 0;
        char *csv = write_csv(c, &s, snr_list[k], &len);
        if (csv == NULL)
            continue;
        for (size_t m = 0; m < N_METHODS; m++)
            if (in_list(o->methods, method_label[m]))
                run_one(c, csv, len, m, 1000 * seed + 7, o, &sh->res[slot(job, k, m)]);
        free(csv);
    }
    sim_free(&s);
    size_t d = atomic_fetch_add(&sh->done, 1) + 1;
    if (isatty(STDERR_FILENO))
        fprintf(stderr, "\raccuracy: %zu/%zu logs  ", d, n_jobs);
}

static int run_all(const acc_case *cases, const size_t *job_case, size_t n_jobs,
                   const acc_options *o, shared_block *sh)
{
    size_t workers = o->workers;
    pid_t pids[64];
    size_t started = 0;
    fflush(stdout);
    fflush(stderr);
    for (size_t w = 0; w < workers && w < 64; w++) {
        pid_t pid = fork();
        if (pid < 0)
            break;
        if (pid == 0) {
            for (;;) {
                size_t j = atomic_fetch_add(&sh->next, 1);
                if (j >= n_jobs)
                    break;
                run_job(cases, job_case, j, n_jobs, o, sh);
            }
            fflush(stderr);
            _exit(0);
        }
        pids[started++] = pid;
    }
    if (started == 0) {
        /* No fork: do the work here. */
        for (;;) {
            size_t j = atomic_fetch_add(&sh->next, 1);
            if (j >= n_jobs)
                break;
            run_job(cases, job_case, j, n_jobs, o, sh);
        }
        return 0;
    }
    int bad = 0;
    for (size_t w = 0; w < started; w++) {
        int status = 0;
        if (waitpid(pids[w], &status, 0) < 0 || !WIFEXITED(status) ||
            WEXITSTATUS(status) != 0)
            bad = 1;
    }
    if (isatty(STDERR_FILENO))
        fputc('\n', stderr);
    return bad;
}

/* ------------------------------------------------------------------ */
/* Statistics and the table                                           */
/* ------------------------------------------------------------------ */

static int cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

/* Quantile by linear interpolation between order statistics (sorted v). */
static double quantile(const double *v, size_t n, double p)
{
    if (n == 0)
        return NAN;
    double h = (double)(n - 1) * p;
    size_t i = (size_t)floor(h);
    if (i + 1 >= n)
        return v[n - 1];
    return v[i] + (h - (double)i) * (v[i + 1] - v[i]);
}

typedef struct {
    double med, iqr;
    size_t n;
} summary;

static summary summarise(double *v, size_t n)
{
    summary s = { NAN, NAN, n };
    if (n == 0)
        return s;
    qsort(v, n, sizeof *v, cmp_double);
    s.med = quantile(v, n, 0.5);
    s.iqr = quantile(v, n, 0.75) - quantile(v, n, 0.25);
    return s;
}

/* Everything one row of the table shows, over the seeds of a cell. */
typedef struct {
    size_t n, ok, matched;
    summary dre, dfreq_pct, dzeta_pct;
    double worst_freq_pct, worst_zeta_pct;   /* largest |error| over the seeds */
    size_t covered, with_bounds, raw_wrong, no_input;
    size_t right;            /* verdict word = the true class (flagged or not) */
    size_t undecided;        /* verdict word "undecided" or "marginal": the class is left open */
    size_t wrong;            /* wrong class, not flagged AMBIGUOUS: confident and wrong */
    size_t ambiguous;        /* flagged AMBIGUOUS for any reason (class, type, Nyquist) */
    size_t regime_count[4];
    size_t zeta_outside, freq_outside;       /* seeds outside 15% / 1% */
    size_t wrong_said_stable;
    size_t wrong_flagged;    /* wrong class in the verdict word, flagged AMBIGUOUS */
} cell_stats;

static int true_class(const acc_case *c)
{
    return case_least_damped(c).re < 0 ? 1 : -1;
}

static cell_stats cell(const acc_case *c, const size_t *job_case, size_t n_jobs,
                       size_t ci, size_t k, size_t m, const shared_block *sh)
{
    cell_stats cs;
    memset(&cs, 0, sizeof cs);
    double dre[64], df[64], dz[64];
    size_t nre = 0, nf = 0, nz = 0;
    eig_spec truth = case_least_damped(c);
    double f_true = truth.im / (2.0 * ACC_PI);
    double z_true = -truth.re / hypot(truth.re, truth.im);
    int tc = true_class(c);
    for (size_t j = 0; j < n_jobs; j++) {
        if (job_case[j] != ci)
            continue;
        const run_result *r = &sh->res[slot(j, k, m)];
        if (!r->ran)
            continue;
        cs.n++;
        cs.no_input += (size_t)r->no_input;
        if (!r->ok)
            continue;
        cs.ok++;
        if (r->regime >= 0 && r->regime < 4)
            cs.regime_count[r->regime]++;
        int said = r->stability == EL_STABLE ? 1 : r->stability == EL_UNSTABLE ? -1 : 0;
        if (said == tc)
            cs.right++;
        else if (said == 0)
            cs.undecided++;
        else if (!r->ambiguous) {
            cs.wrong++;
            cs.wrong_said_stable += said == 1;
        } else {
            cs.wrong_flagged++;
        }
        cs.ambiguous += (size_t)r->ambiguous;
        cs.raw_wrong += (size_t)(r->raw_class != 0 && r->raw_class != tc);
        if (!r->matched)
            continue;
        cs.matched++;
        if (nre < 64)
            dre[nre++] = r->re - truth.re;
        cs.with_bounds += (size_t)r->has_bounds;
        cs.covered += (size_t)r->covered;
        if (truth.im > 0) {
            double e_f = isfinite(r->freq_hz) ? 100.0 * (r->freq_hz - f_true) / f_true : NAN;
            double e_z = isfinite(r->zeta) ? 100.0 * (r->zeta - z_true) / fabs(z_true) : NAN;
            if (!isfinite(e_f) || fabs(e_f) > 1.0)
                cs.freq_outside++;
            if (!isfinite(e_z) || fabs(e_z) > 15.0)
                cs.zeta_outside++;
            if (isfinite(e_f)) {
                if (nf < 64)
                    df[nf++] = e_f;
                if (fabs(e_f) > cs.worst_freq_pct)
                    cs.worst_freq_pct = fabs(e_f);
            }
            if (isfinite(e_z)) {
                if (nz < 64)
                    dz[nz++] = e_z;
                if (fabs(e_z) > cs.worst_zeta_pct)
                    cs.worst_zeta_pct = fabs(e_z);
            }
        }
    }
    cs.dre = summarise(dre, nre);
    cs.dfreq_pct = summarise(df, nf);
    cs.dzeta_pct = summarise(dz, nz);
    return cs;
}

static void snr_text(double snr, char *buf, size_t size)
{
    if (isinf(snr))
        snprintf(buf, size, "inf");
    else
        snprintf(buf, size, "%.0f dB", snr);
}

/* v with the given decimals (signed: always a sign), or "-" when it does
 * not exist. */
static void fmt_num(char *buf, size_t size, double v, int decimals, int is_signed)
{
    if (!isfinite(v))
        snprintf(buf, size, "-");
    else if (is_signed)
        snprintf(buf, size, "%+.*f", decimals, v);
    else
        snprintf(buf, size, "%.*f", decimals, v);
}

static void print_case_header(const acc_case *c)
{
    eig_spec t = case_least_damped(c);
    printf("\n### %s: %s; %s\n\n", c->name, c->about, sim_regime_names[c->regime]);
    printf("%zu states, %zu %s, %zu samples at dt %.3g s (%.0f s)%s%s.\n",
           case_states(c), c->n_sensors, c->n_sensors > 1 ? "mixed sensors" : "sensor",
           c->n_samples, c->dt_s, (double)c->n_samples * c->dt_s,
           c->lags_auto ? ", --lags auto" : "", c->has_input ? ", --input u" : "");
    if (t.im > 0)
        printf("Truth, least damped: lambda = %+.4f +/- %.4fi 1/s, %.4f Hz, zeta %.4f, %s.\n",
               t.re, t.im, t.im / (2.0 * ACC_PI), -t.re / hypot(t.re, t.im),
               t.re < 0 ? "stable" : "unstable");
    else
        printf("Truth, least damped: lambda = %+.4f 1/s (real), %s.\n", t.re,
               t.re < 0 ? "stable" : "unstable");
    printf("\n");
    printf("| SNR | method | ok | dRe med | dRe IQR | df%% med | df%% IQR | dzeta%% med | dzeta%% IQR "
           "| cover | right | undec | WRONG | wrong, flagged | raw wrong | regime |\n");
    printf("|---|---|---|---|---|---|---|---|---|---|---|---|---|---|---|---|\n");
}

static void regime_text(const cell_stats *cs, char *buf, size_t size)
{
    static const char letter[4] = { 'S', 'T', 'D', 'U' };
    size_t used = 0;
    buf[0] = '\0';
    for (size_t i = 0; i < 4 && used < size; i++)
        if (cs->regime_count[i] > 0)
            used += (size_t)snprintf(buf + used, size - used, "%s%c%zu", used ? " " : "",
                                     letter[i], cs->regime_count[i]);
}

static void print_row(const acc_case *c, size_t k, size_t m, const cell_stats *cs)
{
    char snr[16] = "", a[24], b[24], f1[24], f2[24], z1[24], z2[24], cov[24], reg[48] = "";
    if (m == 0)
        snr_text(snr_list[k], snr, sizeof snr);
    fmt_num(a, sizeof a, cs->dre.med, 4, 1);
    fmt_num(b, sizeof b, cs->dre.iqr, 4, 0);
    int osc = case_least_damped(c).im > 0;
    fmt_num(f1, sizeof f1, osc ? cs->dfreq_pct.med : NAN, 2, 1);
    fmt_num(f2, sizeof f2, osc ? cs->dfreq_pct.iqr : NAN, 2, 0);
    fmt_num(z1, sizeof z1, osc ? cs->dzeta_pct.med : NAN, 1, 1);
    fmt_num(z2, sizeof z2, osc ? cs->dzeta_pct.iqr : NAN, 1, 0);
    if (cs->with_bounds > 0)
        snprintf(cov, sizeof cov, "%zu/%zu", cs->covered, cs->with_bounds);
    else
        snprintf(cov, sizeof cov, "-");
    if (m == 0)
        regime_text(cs, reg, sizeof reg);
    char label[24];
    snprintf(label, sizeof label, "%s%s", method_label[m], cs->no_input ? "*" : "");
    printf("| %s | %s | %zu/%zu | %s | %s | %s | %s | %s | %s | %s | %zu | %zu | %zu | %zu | %zu "
           "| %s |\n",
           snr, label, cs->ok, cs->n, a, b, f1, f2, z1, z2, cov, cs->right, cs->undecided,
           cs->wrong, cs->wrong_flagged, cs->raw_wrong, reg);
}

/* Verdicts of auto per case and SNR on one screen. */
static void print_glance_auto(const acc_case *cases, size_t n_cases, const size_t *job_case,
                              size_t n_jobs, const shared_block *sh)
{
    printf("\n## auto at a glance: verdicts right / undecided / WRONG per SNR\n\n");
    printf("| case | truth |");
    for (size_t k = 0; k < N_SNR; k++) {
        char snr[16];
        snr_text(snr_list[k], snr, sizeof snr);
        printf(" %s |", snr);
    }
    printf(" regime detected (all SNR) |\n|---|---|");
    for (size_t k = 0; k < N_SNR; k++)
        printf("---|");
    printf("---|\n");
    for (size_t ci = 0; ci < n_cases; ci++) {
        printf("| %s | %s |", cases[ci].name, true_class(&cases[ci]) > 0 ? "stable" : "unstable");
        cell_stats all;
        memset(&all, 0, sizeof all);
        for (size_t k = 0; k < N_SNR; k++) {
            cell_stats cs = cell(&cases[ci], job_case, n_jobs, ci, k, 0, sh);
            printf(" %zu / %zu / %zu |", cs.right, cs.undecided + cs.wrong_flagged, cs.wrong);
            for (size_t i = 0; i < 4; i++)
                all.regime_count[i] += cs.regime_count[i];
        }
        char reg[48];
        regime_text(&all, reg, sizeof reg);
        printf(" %s |\n", reg);
    }
}

/* Median error of Re lambda of every method for one SNR, with the count
 * of confident wrong verdicts where there are any. */
static void print_glance_methods(const acc_case *cases, size_t n_cases,
                                 const size_t *job_case, size_t n_jobs,
                                 const shared_block *sh, size_t k)
{
    char snr[16];
    snr_text(snr_list[k], snr, sizeof snr);
    printf("\n## Every method at %s: median error of Re lambda (1/s); W n = n confident wrong "
           "verdicts\n\n", snr);
    printf("| case | truth Re |");
    for (size_t m = 0; m < N_METHODS; m++)
        printf(" %s |", method_label[m]);
    printf("\n|---|---|");
    for (size_t m = 0; m < N_METHODS; m++)
        printf("---|");
    printf("\n");
    for (size_t ci = 0; ci < n_cases; ci++) {
        printf("| %s | %+.4f |", cases[ci].name, case_least_damped(&cases[ci]).re);
        for (size_t m = 0; m < N_METHODS; m++) {
            cell_stats cs = cell(&cases[ci], job_case, n_jobs, ci, k, m, sh);
            char v[24];
            fmt_num(v, sizeof v, cs.dre.med, 4, 1);
            if (cs.wrong > 0)
                printf(" %s W %zu |", v, cs.wrong);
            else
                printf(" %s |", v);
        }
        printf("\n");
    }
}

/* ------------------------------------------------------------------ */
/* Targets                                                            */
/* ------------------------------------------------------------------ */

static size_t snr_index(double snr)
{
    for (size_t k = 0; k < N_SNR; k++)
        if (snr_list[k] == snr)
            return k;
    return 0;
}

static void print_targets(const acc_case *cases, size_t n_cases, const size_t *job_case,
                          size_t n_jobs, const shared_block *sh)
{
    printf("\n## Targets for auto\n\n");
    /* T1: no confident wrong verdict at 20 dB and above. */
    size_t bad1 = 0, tot1 = 0, flagged1 = 0;
    printf("**T1. No confident wrong stability verdict at 20 dB and above, any regime.**\n\n");
    for (size_t ci = 0; ci < n_cases; ci++)
        for (size_t k = 0; k < N_SNR; k++) {
            if (!(isinf(snr_list[k]) || snr_list[k] >= 20.0))
                continue;
            cell_stats cs = cell(&cases[ci], job_case, n_jobs, ci, k, 0, sh);
            tot1 += cs.ok;
            if (cs.n == 0)
                continue;
            char snr[16];
            snr_text(snr_list[k], snr, sizeof snr);
            if (cs.wrong > 0) {
                bad1 += cs.wrong;
                printf("- %s, %s: %zu of %zu logs WRONG (%zu called stable)\n",
                       cases[ci].name, snr, cs.wrong, cs.ok, cs.wrong_said_stable);
            }
            if (cs.wrong_flagged > 0) {
                flagged1 += cs.wrong_flagged;
                printf("- %s, %s: %zu of %zu logs say the wrong class but are flagged "
                       "AMBIGUOUS\n", cases[ci].name, snr, cs.wrong_flagged, cs.ok);
            }
            if (cs.ok < cs.n)
                printf("- %s, %s: %zu of %zu runs failed (no verdict)\n", cases[ci].name,
                       snr, cs.n - cs.ok, cs.n);
        }
    printf("\nResult: **%s**: %zu confident wrong verdicts in %zu logs (%zu more with the "
           "wrong class flagged AMBIGUOUS).\n\n", bad1 == 0 ? "MET" : "NOT MET", bad1, tot1,
           flagged1);

    /* T2: 20 dB, lightly damped mode: zeta within 15%, frequency within 1%. */
    size_t k20 = snr_index(20.0);
    int met2 = 1, any2 = 0;
    printf("**T2. At 20 dB, lightly damped mode (zeta <= 0.05): damping ratio within 15%% and "
           "frequency within 1%%**, judged on the median error over the seeds (the bias); the "
           "worst seed and the seeds outside the bound are beside it, and the same count "
           "without sensor noise (SNR inf), which is the scatter the record length allows.\n\n");
    printf("| case | dzeta%% median | worst | outside 15%% | outside 15%% at inf | df%% median | "
           "worst | outside 1%% | target |\n");
    printf("|---|---|---|---|---|---|---|---|---|\n");
    for (size_t ci = 0; ci < n_cases; ci++) {
        if (!case_lightly_damped(&cases[ci]))
            continue;
        cell_stats cs = cell(&cases[ci], job_case, n_jobs, ci, k20, 0, sh);
        cell_stats ci_inf = cell(&cases[ci], job_case, n_jobs, ci, snr_index(INFINITY), 0, sh);
        if (cs.n == 0)
            continue;
        any2 = 1;
        int okz = isfinite(cs.dzeta_pct.med) && fabs(cs.dzeta_pct.med) <= 15.0;
        int okf = isfinite(cs.dfreq_pct.med) && fabs(cs.dfreq_pct.med) <= 1.0;
        if (!okz || !okf)
            met2 = 0;
        printf("| %s | %+.1f | %.1f | %zu/%zu | %zu/%zu | %+.2f | %.2f | %zu/%zu | %s |\n",
               cases[ci].name, cs.dzeta_pct.med, cs.worst_zeta_pct, cs.zeta_outside,
               cs.matched, ci_inf.zeta_outside, ci_inf.matched, cs.dfreq_pct.med,
               cs.worst_freq_pct, cs.freq_outside, cs.matched, okz && okf ? "met" : "NOT MET");
    }
    printf("\nResult: **%s**.\n\n", !any2 ? "not evaluated" : met2 ? "MET (on the median)"
                                                                  : "NOT MET");

    /* T3: 10 dB, ambiguous rather than wrong. */
    size_t k10 = snr_index(10.0);
    size_t bad3 = 0, tot3 = 0, amb3 = 0, flagged3 = 0;
    printf("**T3. At 10 dB, ambiguous rather than wrong.**\n\n");
    for (size_t ci = 0; ci < n_cases; ci++) {
        cell_stats cs = cell(&cases[ci], job_case, n_jobs, ci, k10, 0, sh);
        if (cs.n == 0)
            continue;
        tot3 += cs.ok;
        amb3 += cs.undecided + cs.wrong_flagged;
        if (cs.wrong > 0) {
            bad3 += cs.wrong;
            printf("- %s: %zu of %zu logs WRONG (%zu called stable)\n", cases[ci].name,
                   cs.wrong, cs.ok, cs.wrong_said_stable);
        }
        if (cs.wrong_flagged > 0) {
            flagged3 += cs.wrong_flagged;
            printf("- %s: %zu of %zu logs say the wrong class but are flagged AMBIGUOUS\n",
                   cases[ci].name, cs.wrong_flagged, cs.ok);
        }
        if (cs.ok < cs.n)
            printf("- %s: %zu of %zu runs failed (no verdict)\n", cases[ci].name,
                   cs.n - cs.ok, cs.n);
    }
    printf("\nResult: **%s**: %zu confident wrong verdicts in %zu logs (%zu ambiguous about "
           "the class, of which %zu say the wrong class flagged AMBIGUOUS).\n\n",
           bad3 == 0 ? "MET" : "NOT MET", bad3, tot3, amb3, flagged3);
}

/* One line per method: the same targets counted for every estimator. */
static void print_method_summary(const acc_case *cases, size_t n_cases,
                                 const size_t *job_case, size_t n_jobs,
                                 const shared_block *sh)
{
    printf("## Every method against the same targets\n\n");
    printf("| method | runs failed | WRONG >= 20 dB | WRONG 10 dB | undecided or flagged 10 dB | "
           "right 10 dB | coverage of Re | light 20 dB: worst median dzeta%% | worst median df%% |\n");
    printf("|---|---|---|---|---|---|---|---|---|\n");
    for (size_t m = 0; m < N_METHODS; m++) {
        size_t failed = 0, runs = 0, w20 = 0, n20 = 0, w10 = 0, n10 = 0, a10 = 0, r10 = 0;
        size_t cov = 0, nb = 0;
        double wz = 0.0, wf = 0.0;
        int light = 0;
        for (size_t ci = 0; ci < n_cases; ci++)
            for (size_t k = 0; k < N_SNR; k++) {
                cell_stats cs = cell(&cases[ci], job_case, n_jobs, ci, k, m, sh);
                runs += cs.n;
                failed += cs.n - cs.ok;
                cov += cs.covered;
                nb += cs.with_bounds;
                if (isinf(snr_list[k]) || snr_list[k] >= 20.0) {
                    w20 += cs.wrong;
                    n20 += cs.ok;
                } else {
                    w10 += cs.wrong;
                    n10 += cs.ok;
                    a10 += cs.undecided + cs.wrong_flagged;
                    r10 += cs.right;
                }
                if (snr_list[k] == 20.0 && case_lightly_damped(&cases[ci]) && cs.n > 0) {
                    light = 1;
                    double z = isfinite(cs.dzeta_pct.med) ? fabs(cs.dzeta_pct.med) : INFINITY;
                    double f = isfinite(cs.dfreq_pct.med) ? fabs(cs.dfreq_pct.med) : INFINITY;
                    if (z > wz)
                        wz = z;
                    if (f > wf)
                        wf = f;
                }
            }
        char zt[24], ft[24];
        fmt_num(zt, sizeof zt, light ? wz : NAN, 1, 0);
        fmt_num(ft, sizeof ft, light ? wf : NAN, 2, 0);
        printf("| %s | %zu/%zu | %zu/%zu | %zu/%zu | %zu/%zu | %zu/%zu | %.0f%% | %s | %s |\n",
               method_label[m], failed, runs, w20, n20, w10, n10, a10, n10, r10, n10,
               nb ? 100.0 * (double)cov / (double)nb : 0.0, zt, ft);
    }
}

/* Every failed run, one line per case, SNR, method and message. */
static void print_failures(const acc_case *cases, size_t n_cases, const size_t *job_case,
                           size_t n_jobs, const shared_block *sh)
{
    printf("\n## Runs that failed (no verdict)\n\n");
    size_t total = 0;
    for (size_t ci = 0; ci < n_cases; ci++)
        for (size_t k = 0; k < N_SNR; k++)
            for (size_t m = 0; m < N_METHODS; m++)
                for (size_t j = 0; j < n_jobs; j++) {
                    if (job_case[j] != ci)
                        continue;
                    const run_result *r = &sh->res[slot(j, k, m)];
                    if (!r->ran || r->ok)
                        continue;
                    /* Print a message once per cell: count its repeats. */
                    int seen = 0;
                    for (size_t i = 0; i < j && !seen; i++) {
                        const run_result *q = &sh->res[slot(i, k, m)];
                        seen = job_case[i] == ci && q->ran && !q->ok &&
                               strcmp(q->error, r->error) == 0;
                    }
                    if (seen)
                        continue;
                    size_t count = 0;
                    for (size_t i = j; i < n_jobs; i++) {
                        const run_result *q = &sh->res[slot(i, k, m)];
                        count += job_case[i] == ci && q->ran && !q->ok &&
                                 strcmp(q->error, r->error) == 0;
                    }
                    char snr[16];
                    snr_text(snr_list[k], snr, sizeof snr);
                    printf("- %s, %s, %s: %zu log%s: %s\n", cases[ci].name, snr,
                           method_label[m], count, count > 1 ? "s" : "", r->error);
                    total += count;
                }
    if (total == 0)
        printf("none\n");
}

/* ------------------------------------------------------------------ */
/* Main                                                               */
/* ------------------------------------------------------------------ */

static int parse_size(const char *s, size_t *out)
{
    char *end = NULL;
    unsigned long v = strtoul(s, &end, 10);
    if (end == s || *end != '\0' || v == 0)
        return 1;
    *out = (size_t)v;
    return 0;
}

static int parse_args(int argc, char **argv, acc_options *o)
{
    long cores = sysconf(_SC_NPROCESSORS_ONLN);
    o->seeds = 10;
    o->boot = 200;
    o->workers = cores > 0 ? (size_t)cores : 1;
    o->only = NULL;
    o->methods = NULL;
    o->list = 0;
    for (int i = 1; i < argc; i++) {
        const char *a = argv[i];
        int has = i + 1 < argc;
        if (strcmp(a, "--quick") == 0) {
            o->seeds = 2;
            o->boot = 100;
        } else if (strcmp(a, "--seeds") == 0 && has) {
            if (parse_size(argv[++i], &o->seeds) || o->seeds > 64)
                goto usage;
        } else if (strcmp(a, "--boot") == 0 && has) {
            if (parse_size(argv[++i], &o->boot))
                goto usage;
        } else if (strcmp(a, "--workers") == 0 && has) {
            if (parse_size(argv[++i], &o->workers) || o->workers > 64)
                goto usage;
        } else if (strcmp(a, "--case") == 0 && has) {
            o->only = argv[++i];
        } else if (strcmp(a, "--methods") == 0 && has) {
            o->methods = argv[++i];
        } else if (strcmp(a, "--list") == 0) {
            o->list = 1;
        } else if (strcmp(a, "--csv") == 0 && i + 3 < argc) {
            o->csv_case = argv[++i];
            char *end = NULL;
            o->csv_seed = (size_t)strtoul(argv[++i], &end, 10);
            if (*end != '\0')
                goto usage;
            const char *snr = argv[++i];
            o->csv_snr_db = strcmp(snr, "inf") == 0 ? INFINITY : strtod(snr, &end);
            if (strcmp(snr, "inf") != 0 && *end != '\0')
                goto usage;
        } else {
            goto usage;
        }
    }
    return 0;
usage:
    fprintf(stderr, "usage: accuracy [--quick] [--seeds N (1..64)] [--boot N] [--workers N]\n"
                    "                [--case NAME[,NAME...]] [--methods auto,ls,fb,tls,iv,ssi]\n"
                    "                [--list] [--csv CASE SEED SNR|inf]\n");
    return 1;
}

static int in_list(const char *list, const char *name)
{
    if (list == NULL)
        return 1;
    size_t len = strlen(name);
    const char *p = list;
    while (*p) {
        const char *comma = strchr(p, ',');
        size_t l = comma ? (size_t)(comma - p) : strlen(p);
        if (l == len && strncmp(p, name, l) == 0)
            return 1;
        p += l;
        if (*p == ',')
            p++;
    }
    return 0;
}

static int selected(const acc_options *o, const char *name)
{
    return in_list(o->only, name);
}

int main(int argc, char **argv)
{
    acc_options o;
    if (parse_args(argc, argv, &o))
        return 1;
    acc_case all[MAX_CASES];
    size_t n_all = build_cases(all);
    if (o.list) {
        for (size_t i = 0; i < n_all; i++)
            printf("%-14s %s; %s\n", all[i].name, all[i].about, sim_regime_names[all[i].regime]);
        return 0;
    }
    if (o.csv_case != NULL) {
        /* The log of one cell exactly as the study feeds it to
         * el_assess_run, to reproduce a row with the eigenlog program. */
        for (size_t i = 0; i < n_all; i++) {
            if (strcmp(all[i].name, o.csv_case) != 0)
                continue;
            sim_log s;
            if (simulate(&all[i], 20240 + o.csv_seed, all[i].id, &s) != 0)
                return 3;
            size_t len = 0;
            char *csv = write_csv(&all[i], &s, o.csv_snr_db, &len);
            sim_free(&s);
            if (csv == NULL)
                return 4;
            fwrite(csv, 1, len, stdout);
            free(csv);
            return 0;
        }
        fprintf(stderr, "accuracy: no case named %s (see --list)\n", o.csv_case);
        return 1;
    }
    acc_case cases[MAX_CASES];
    size_t n_cases = 0;
    for (size_t i = 0; i < n_all; i++)
        if (selected(&o, all[i].name))
            cases[n_cases++] = all[i];
    if (n_cases == 0) {
        fprintf(stderr, "accuracy: no case named %s (see --list)\n", o.only);
        return 1;
    }
    /* Many worker processes: BLAS threads would only compete with them. */
    openblas_set_num_threads(1);
    size_t n_jobs = n_cases * o.seeds;
    size_t *job_case = malloc(n_jobs * sizeof *job_case);
    if (job_case == NULL)
        return 4;
    /* Longest logs first, so the workers finish together. */
    size_t j = 0;
    size_t order[MAX_CASES];
    for (size_t i = 0; i < n_cases; i++)
        order[i] = i;
    for (size_t i = 1; i < n_cases; i++)
        for (size_t k = i; k > 0 && cases[order[k]].n_samples * cases[order[k]].n_sensors >
                                         cases[order[k - 1]].n_samples * cases[order[k - 1]].n_sensors;
             k--) {
            size_t t = order[k];
            order[k] = order[k - 1];
            order[k - 1] = t;
        }
    for (size_t i = 0; i < n_cases; i++)
        for (size_t s = 0; s < o.seeds; s++)
            job_case[j++] = order[i];
    /* job % seeds is the seed: jobs of one case are consecutive and seeds
     * is their count. */
    size_t bytes = sizeof(shared_block) + n_jobs * N_SNR * N_METHODS * sizeof(run_result);
    /* Results live in a shared file mapping that the worker processes
     * fill in place (a temporary file: MAP_ANONYMOUS is not POSIX). */
    FILE *tmp = tmpfile();
    if (tmp == NULL || ftruncate(fileno(tmp), (off_t)bytes) != 0) {
        fprintf(stderr, "accuracy: cannot create the result file\n");
        return 4;
    }
    shared_block *sh = mmap(NULL, bytes, PROT_READ | PROT_WRITE, MAP_SHARED, fileno(tmp), 0);
    if (sh == MAP_FAILED) {
        fprintf(stderr, "accuracy: cannot map the result file\n");
        return 4;
    }
    memset(sh, 0, bytes);
    atomic_init(&sh->next, 0);
    atomic_init(&sh->done, 0);

    double t0 = now_s();
    int bad = run_all(cases, job_case, n_jobs, &o, sh);
    double elapsed = now_s() - t0;

    printf("eigenlog accuracy study (issue 4): %zu cases x %zu SNR x %zu seeds = %zu logs, "
           "every log through auto, ls, fb, tls, iv and ssi.\n\n", n_cases, N_SNR, o.seeds,
           n_cases * N_SNR * o.seeds);
    printf("- bootstrap: %zu replicates (the defaults otherwise: moving blocks, automatic "
           "length, bias correction), level 0.95\n", o.boot);
    printf("- statistics over the seeds: median and IQR (75th - 25th percentile) of the error "
           "of the estimated mode nearest to the truth's least-damped eigenvalue: dRe in 1/s, "
           "df%% and dzeta%% relative to the truth in percent (- for a real mode)\n");
    printf("- cover: truth Re lambda inside the 95%% bounds of that mode (- : no bootstrap "
           "ran)\n");
    printf("- verdicts, counts of logs: right: the verdict word is the true class (stable or "
           "unstable), flagged AMBIGUOUS or not; undec: the word is \"undecided\" or \"marginal\", the class is "
           "left open; WRONG: the wrong class, not flagged AMBIGUOUS (confident and wrong); "
           "wrong, flagged: the wrong class, flagged AMBIGUOUS (e.g. for the plane region); "
           "raw wrong: the estimator's own bootstrap alone (P(stable) >= 0.95 or <= 0.05) says "
           "the wrong class, before the growth veto and the cross-check\n");
    printf("- regime (auto rows): detected S stationary, T transient, D driven, U "
           "undetermined\n");
    printf("- * = the method takes no input: run on the output channels alone\n");
    print_glance_auto(cases, n_cases, job_case, n_jobs, sh);
    print_glance_methods(cases, n_cases, job_case, n_jobs, sh, snr_index(20.0));
    print_glance_methods(cases, n_cases, job_case, n_jobs, sh, snr_index(10.0));
    print_targets(cases, n_cases, job_case, n_jobs, sh);
    print_method_summary(cases, n_cases, job_case, n_jobs, sh);
    print_failures(cases, n_cases, job_case, n_jobs, sh);
    printf("\n## Per case and SNR, every method\n");
    for (size_t ci = 0; ci < n_cases; ci++) {
        print_case_header(&cases[ci]);
        for (size_t k = 0; k < N_SNR; k++)
            for (size_t m = 0; m < N_METHODS; m++) {
                cell_stats cs = cell(&cases[ci], job_case, n_jobs, ci, k, m, sh);
                print_row(&cases[ci], k, m, &cs);
            }
    }
    double cpu = 0.0;
    for (size_t i = 0; i < n_jobs * N_SNR * N_METHODS; i++)
        cpu += sh->res[i].seconds;
    printf("\nRun time: %.0f s wall, %.0f s in el_assess_run over %zu workers.\n", elapsed, cpu,
           o.workers);
    munmap(sh, bytes);
    fclose(tmp);
    free(job_case);
    return bad ? 3 : 0;
}
