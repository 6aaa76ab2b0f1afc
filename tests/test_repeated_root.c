/* Bounds at a repeated real root (el_boot_summarise, docs/uncertainty.md
 * "Repeated roots"). The replicate records are synthetic: a two-state
 * pair is described by its mean m and its discriminant D = (lambda_1 -
 * lambda_2)^2, both smooth functions of the model matrix and therefore
 * close to normal in a bootstrap; the roots follow in closed form, m +-
 * sqrt(D) / 2 (two reals) for D >= 0 and m +- i sqrt(-D) / 2 (a pair)
 * below zero. The records are built as the matcher fills them (the
 * larger real root to the larger point root; both slots of a replicate
 * pair folded onto Im >= 0, so both real point modes get its Re and |Im|;
 * a point pair gets the mean of its two slots). The truth is a double
 * root at m = -0.8 1/s (bench/calibrate.c's degenerate node), so every
 * check is against that closed form, not against the program. */
#include "el_test.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "el_boot_bounds.h"
#include "el_boot_match.h"
#include "el_modes.h"
#include "el_rng.h"

#define RR_TRUTH (-0.8)  /* the double root, 1/s */
/* Spreads of the pair's mean (1/s) and of its discriminant ((1/s)^2): at a
 * double root the split sqrt(D) / 2 moves like the square root of the
 * matrix's error, so a discriminant spread of 0.04 splits the roots by
 * about 0.1, three times the mean's spread (the failure calibrate sees:
 * the larger root's bounds sit above the truth). */
#define RR_SD_MEAN 0.03
#define RR_SD_DISC 0.04
#define RR_LEVEL 0.95
#define RR_MAX_MODES 4

typedef struct {
    size_t total, nm;
    unsigned char ok[2000], amb[2000], stable[2000];
    double re[2000 * RR_MAX_MODES], im[2000 * RR_MAX_MODES];
    el_mode modes[RR_MAX_MODES];
    el_modes point;
} rr_fixture;

/* Type 7 quantile (Hyndman & Fan 1996) of v[0..n), sorted here: written
 * out again so that the bounds are checked against an independent copy. */
static int cmp_d(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

static double quantile7(double *v, size_t n, double p)
{
    qsort(v, n, sizeof(double), cmp_d);
    double h = (double)(n - 1) * p;
    size_t lo = (size_t)floor(h);
    if (lo + 1 >= n)
        return v[n - 1];
    return v[lo] + (h - (double)lo) * (v[lo + 1] - v[lo]);
}

static void set_mode(el_mode *md, double re, double im)
{
    memset(md, 0, sizeof *md);
    md->lambda_re = re;
    md->lambda_im = im;
    md->pair = im > 0.0;
}

/* The point modes of a pair with mean mh and discriminant dh: two reals
 * (larger first) or one pair. Returns the number of modes. */
static size_t pair_modes(el_mode *modes, double mh, double dh)
{
    if (dh >= 0.0) {
        set_mode(&modes[0], mh + 0.5 * sqrt(dh), 0.0);
        set_mode(&modes[1], mh - 0.5 * sqrt(dh), 0.0);
        return 2;
    }
    set_mode(&modes[0], mh, 0.5 * sqrt(-dh));
    return 1;
}

/* One replicate (mean ms, discriminant ds) as the matcher records it for
 * the point modes of pair_modes at offset o of a row of nm values. */
static void pair_record(double *re, double *im, size_t o, size_t n_point, double ms, double ds)
{
    double half = 0.5 * sqrt(fabs(ds));
    if (n_point == 1) {
        re[o] = ms;                   /* the mean of the two slots */
        im[o] = ds < 0.0 ? half : 0.0;
        return;
    }
    if (ds >= 0.0) {
        re[o] = ms + half;
        re[o + 1] = ms - half;
        im[o] = im[o + 1] = 0.0;
    } else {
        re[o] = re[o + 1] = ms;       /* both slots of one folded pair */
        im[o] = im[o + 1] = half;
    }
}

static void finish_records(rr_fixture *f)
{
    for (size_t i = 0; i < f->total; i++) {
        double top = -HUGE_VAL;
        for (size_t q = 0; q < f->nm; q++)
            top = fmax(top, f->re[i * f->nm + q]);
        f->ok[i] = 1;
        f->amb[i] = 0;
        f->stable[i] = (unsigned char)(top < 0.0);
    }
    f->point.n_modes = f->nm;
    f->point.modes = f->modes;
}

/* A log of the double root: point (mh, dh), `total` replicates around it
 * drawn from stream `stream`. */
static void double_root_log(rr_fixture *f, double mh, double dh, size_t total, uint64_t stream)
{
    memset(f, 0, sizeof *f);
    f->total = total;
    f->nm = pair_modes(f->modes, mh, dh);
    el_rng rng;
    el_rng_seed(&rng, 20261205u, stream);
    for (size_t i = 0; i < total; i++) {
        double ms = mh + RR_SD_MEAN * el_rng_normal(&rng);
        double ds = dh + RR_SD_DISC * el_rng_normal(&rng);
        pair_record(f->re + i * f->nm, f->im + i * f->nm, 0, f->nm, ms, ds);
    }
    finish_records(f);
}

static el_status summarise(rr_fixture *f, el_boot_result *res)
{
    el_boot_records r = { f->total, f->nm, 0, f->ok, f->amb, f->stable,
                          f->re, f->im, NULL, NULL, NULL, 0.0 };
    el_error err;
    el_error_clear(&err);
    memset(res, 0, sizeof *res);
    return el_boot_summarise(&r, &f->point, RR_LEVEL, res, &err);
}

/* One log whose point estimate split the double root into -0.638 and
 * -0.862 (mean 1.67 spreads above the truth, discriminant 1.25 spreads
 * above zero: 10 % of the replicates are a pair). The larger root's own
 * bounds exclude the truth; the widened ones hold it. */
static void test_double_root_widened(void **state)
{
    (void)state;
    static rr_fixture f;
    double mh = -0.75, dh = 0.05;
    double_root_log(&f, mh, dh, 2000, 1);
    el_boot_result res;
    assert_int_equal(summarise(&f, &res), EL_OK);
    /* A library caller's result says how many bounds it holds, so that
     * el_boot_warn_repeated sees them without the caller's help. */
    assert_int_equal(res.n_modes, f.nm);
    el_warnings said = {0};
    el_error werr;
    assert_int_equal(el_boot_warn_repeated(&res, &said, &werr), EL_OK);
    assert_true(said.count >= 1);
    el_warnings_free(&said);
    const el_mode_bounds *b0 = &res.bounds[0], *b1 = &res.bounds[1];
    /* The failure: the larger root's own percentile bounds sit above the
     * double root (checked so that the test keeps testing it). */
    assert_true(b0->re_own.lo > RR_TRUTH);
    /* The fix: both roots' bounds hold the double root. */
    assert_true(b0->re.lo <= RR_TRUTH && RR_TRUTH <= b0->re.hi);
    assert_true(b1->re.lo <= RR_TRUTH && RR_TRUTH <= b1->re.hi);
    assert_int_equal(b0->repeated_root, 1);
    assert_int_equal(b1->repeated_root, 1);
    assert_int_equal(b0->repeated_partner, 1);
    assert_int_equal(b1->repeated_partner, 0);
    /* The mean's bounds from an independent quantile of (re0 + re1) / 2,
     * and the widened bounds as the union; 1e-12 relative: the same
     * additions and halving, a few roundings. */
    double *v = malloc(f.total * sizeof(double));
    assert_non_null(v);
    size_t merged = 0;
    for (size_t i = 0; i < f.total; i++) {
        v[i] = 0.5 * (f.re[2 * i] + f.re[2 * i + 1]);
        merged += f.im[2 * i] > 0.0;
    }
    double mlo = quantile7(v, f.total, 0.025), mhi = quantile7(v, f.total, 0.975);
    assert_close(b0->re_pair_mean.lo, mlo, 1e-12, 0.0);
    assert_close(b0->re_pair_mean.hi, mhi, 1e-12, 0.0);
    assert_close(b0->merged_fraction, (double)merged / (double)f.total, 1e-15, 0.0);
    assert_close(b0->re.lo, fmin(b0->re_own.lo, mlo), 1e-12, 0.0);
    assert_close(b0->re.hi, fmax(b0->re_own.hi, mhi), 1e-12, 0.0);
    assert_close(b1->re.lo, fmin(b1->re_own.lo, mlo), 1e-12, 0.0);
    assert_close(b1->re.hi, fmax(b1->re_own.hi, mhi), 1e-12, 0.0);
    /* The mean is normal with sd RR_SD_MEAN about mh, so its bounds are
     * mh -+ 1.959964 sd (the normal 97.5 % point, closed form) to within
     * the Monte Carlo error of a 2.5 % quantile of 2000 draws,
     * sqrt(0.025 x 0.975 / 2000) / phi(1.96) = 0.06 sd: 0.25 sd is four
     * of those. */
    assert_close(mlo, mh - 1.959964 * RR_SD_MEAN, 0.0, 0.25 * RR_SD_MEAN);
    assert_close(mhi, mh + 1.959964 * RR_SD_MEAN, 0.0, 0.25 * RR_SD_MEAN);
    /* Decay rate and damping ratio follow Re: decay = -Re (1e-12: the
     * mirrored quantile's rounding); a real root below zero has damping
     * ratio 1, inside the bounds. */
    assert_close(b0->decay_rate.lo, -b0->re.hi, 1e-12, 0.0);
    assert_close(b0->decay_rate.hi, -b0->re.lo, 1e-12, 0.0);
    assert_close(b1->decay_rate.lo, -b1->re.hi, 1e-12, 0.0);
    assert_close(b1->decay_rate.hi, -b1->re.lo, 1e-12, 0.0);
    assert_true(b0->damping_ratio.lo <= 1.0 && 1.0 <= b0->damping_ratio.hi);
    /* Bounds only: P(stable) is the fraction of stable replicates. */
    size_t stable = 0;
    for (size_t i = 0; i < f.total; i++)
        stable += f.stable[i];
    assert_close(res.p_stable, (double)stable / (double)f.total, 1e-15, 0.0);
    free(v);
    el_boot_free(&res);
}

/* Two clearly distinct real roots (-0.5 and -2 1/s, the calibrate sink):
 * the replicates never merge them, and every bound is the plain
 * percentile bound of its own root, bit for bit. */
static void test_distinct_roots_unchanged(void **state)
{
    (void)state;
    static rr_fixture f;
    double_root_log(&f, -1.25, 2.25, 1000, 2);
    el_boot_result res;
    assert_int_equal(summarise(&f, &res), EL_OK);
    double *v = malloc(f.total * sizeof(double));
    assert_non_null(v);
    for (size_t q = 0; q < 2; q++) {
        const el_mode_bounds *b = &res.bounds[q];
        assert_int_equal(b->repeated_root, 0);
        assert_true(b->merged_fraction == 0.0);
        assert_true(isnan(b->re_pair_mean.lo));
        assert_true(b->re.lo == b->re_own.lo && b->re.hi == b->re_own.hi);
        for (size_t i = 0; i < f.total; i++)
            v[i] = f.re[2 * i + q];
        assert_close(b->re.lo, quantile7(v, f.total, 0.025), 1e-15, 0.0);
        assert_close(b->re.hi, quantile7(v, f.total, 0.975), 1e-15, 0.0);
    }
    free(v);
    el_boot_free(&res);
}

/* The threshold: 400 replicates of two real roots 0.4 apart about a mean
 * that moves, k of them one pair. At level 0.95 the bounds are widened
 * from EL_BOOT_REPEATED_TAIL x 0.05 x 400 = 2 merged replicates on. */
static void records_with_merged(rr_fixture *f, size_t k)
{
    memset(f, 0, sizeof *f);
    f->total = 400;
    f->nm = pair_modes(f->modes, -0.8, 0.16);
    for (size_t i = 0; i < f->total; i++) {
        double ms = -0.8 + 0.03 * ((double)i - 199.5) / 115.0;
        pair_record(f->re + 2 * i, f->im + 2 * i, 0, 2, ms, i < k ? -0.01 : 0.16);
    }
    finish_records(f);
}

static void test_merged_threshold(void **state)
{
    (void)state;
    static rr_fixture f;
    el_boot_result res;
    records_with_merged(&f, 1);
    assert_int_equal(summarise(&f, &res), EL_OK);
    assert_int_equal(res.bounds[0].repeated_root, 0);
    assert_close(res.bounds[0].merged_fraction, 1.0 / 400.0, 1e-15, 0.0);
    assert_true(res.bounds[0].re.lo == res.bounds[0].re_own.lo);
    el_boot_free(&res);
    records_with_merged(&f, 2);
    assert_int_equal(summarise(&f, &res), EL_OK);
    assert_int_equal(res.bounds[0].repeated_root, 1);
    assert_int_equal(res.bounds[1].repeated_root, 1);
    assert_true(res.bounds[0].re.lo < res.bounds[0].re_own.lo);
    el_boot_free(&res);
}

/* Four modes: a lightly damped pair (-0.3 +- 3i), a nearly double real
 * pair (-0.7, -0.9) and a distant real (-3). Only the mutual nearest real
 * modes are a candidate pair; two reals matched to two different
 * replicate pairs (different |Im|) are not one pair; the point pair and
 * the distant real keep their own bounds. */
static void test_four_modes(void **state)
{
    (void)state;
    static rr_fixture f;
    memset(&f, 0, sizeof f);
    f.total = 1000;
    f.nm = 4;
    set_mode(&f.modes[0], -0.3, 3.0);
    set_mode(&f.modes[1], -0.7, 0.0);
    set_mode(&f.modes[2], -0.9, 0.0);
    set_mode(&f.modes[3], -3.0, 0.0);
    el_rng rng;
    el_rng_seed(&rng, 20261205u, 3);
    size_t merged = 0;
    for (size_t i = 0; i < f.total; i++) {
        double *re = f.re + 4 * i, *im = f.im + 4 * i;
        re[0] = -0.3 + 0.02 * el_rng_normal(&rng);
        im[0] = 3.0 + 0.02 * el_rng_normal(&rng);
        double ms = -0.8 + RR_SD_MEAN * el_rng_normal(&rng);
        double ds = 0.04 + RR_SD_DISC * el_rng_normal(&rng);
        pair_record(re, im, 1, 2, ms, ds);
        merged += ds < 0.0;
        re[3] = -3.0 + 0.1 * el_rng_normal(&rng);
        im[3] = 0.0;
        if (i % 50 == 0) { /* two different pairs: not one merged pair */
            im[1] = 0.1;
            im[2] = 0.2;
        }
    }
    finish_records(&f);
    el_boot_result res;
    assert_int_equal(summarise(&f, &res), EL_OK);
    assert_int_equal(res.bounds[0].repeated_root, 0);
    assert_int_equal(res.bounds[3].repeated_root, 0);
    assert_true(res.bounds[0].merged_fraction == 0.0 && res.bounds[3].merged_fraction == 0.0);
    assert_true(res.bounds[0].re.lo == res.bounds[0].re_own.lo);
    assert_true(res.bounds[3].re.hi == res.bounds[3].re_own.hi);
    assert_int_equal(res.bounds[1].repeated_root, 1);
    assert_int_equal(res.bounds[2].repeated_root, 1);
    assert_int_equal(res.bounds[1].repeated_partner, 2);
    assert_int_equal(res.bounds[2].repeated_partner, 1);
    /* Replicates i = 0, 50, ... had their Im overwritten: those that were
     * merged no longer count (exact count, no tolerance beyond rounding). */
    size_t lost = 0;
    for (size_t i = 0; i < f.total; i += 50)
        lost += f.re[4 * i + 1] == f.re[4 * i + 2];
    assert_close(res.bounds[1].merged_fraction,
                 (double)(merged - lost) / (double)f.total, 1e-15, 0.0);
    el_boot_free(&res);
}

/* Coverage over 400 logs of the double root, 400 replicates each, as
 * calibrate measures it: the bounds of the least damped point mode (the
 * larger real root, or the pair) against the truth. A point pair's Re is
 * the mean already (consistent: covers about 0.95); a split point's
 * larger root covers far less on its own bounds. Expected with the rule:
 * about 0.95 less the logs whose split point merges in fewer than 0.5 %
 * of the replicates (D above 2.6 spreads: 0.5 % of the logs); the
 * Monte Carlo standard error of 400 logs is 0.011, so the check asks the
 * band 0.92-0.98 (issue 10's target) for the widened bounds, and below
 * 0.92 for the own bounds (fixed seeds: 0.877 own, 0.955 widened; 0.932
 * with the widening made at the interval's own tail, 2.5 %). */
static void test_double_root_coverage(void **state)
{
    (void)state;
    static rr_fixture f;
    el_rng rng;
    el_rng_seed(&rng, 20261205u, 4);
    size_t logs = 400, own = 0, widened = 0;
    for (size_t g = 0; g < logs; g++) {
        double mh = RR_TRUTH + RR_SD_MEAN * el_rng_normal(&rng);
        double dh = RR_SD_DISC * el_rng_normal(&rng);
        double_root_log(&f, mh, dh, 400, 100 + g);
        el_boot_result res;
        assert_int_equal(summarise(&f, &res), EL_OK);
        const el_mode_bounds *b = &res.bounds[0];
        own += b->re_own.lo <= RR_TRUTH && RR_TRUTH <= b->re_own.hi;
        widened += b->re.lo <= RR_TRUTH && RR_TRUTH <= b->re.hi;
        el_boot_free(&res);
    }
    double c_own = (double)own / (double)logs, c_new = (double)widened / (double)logs;
    print_message("double root: coverage %.3f own bounds, %.3f widened\n", c_own, c_new);
    assert_true(c_own < 0.92);
    assert_true(c_new >= 0.92 && c_new <= 0.98);
}

/* ------------------------------------------------------------------ */
/* A point pair at the double root (widen_split_pairs): the estimate's
 * mean m and discriminant D correlated, as at a Jordan block where both
 * are functions of one matrix error (to first order m - a = (e11 + e22) / 2
 * and D = 4 e21 in Jordan coordinates, correlated through the regressors'
 * covariance; calibrate's degenerate node shows a correlation of -0.49
 * across hankel's logs and -0.74 across iv's at 5,000 samples). */

#define CV_RHO (-0.8)    /* correlation of m and D */
#define CV_SD_DISC 0.06  /* spread of D, (1/s)^2 */
#define CV_REPS 400

typedef struct {
    unsigned char ok[CV_REPS], amb[CV_REPS], stable[CV_REPS];
    double re[CV_REPS], im[CV_REPS], disc[CV_REPS], ms[CV_REPS], ds[CV_REPS];
    el_mode mode;
    el_modes point;
} cv_fixture;

/* One correlated draw (m, D) about (m0, d0). */
static void cv_draw(el_rng *rng, double m0, double d0, double *m, double *d)
{
    double z1 = el_rng_normal(rng), z2 = el_rng_normal(rng);
    *m = m0 + RR_SD_MEAN * (CV_RHO * z1 + sqrt(1.0 - CV_RHO * CV_RHO) * z2);
    *d = d0 + CV_SD_DISC * z1;
}

/* A log whose point is the pair (mh, dh < 0): replicates about it, recorded
 * as the matcher records a point pair (the mean of its two slots, the
 * folded Im, el_boot_match_discriminants' D). */
static void cv_log(cv_fixture *f, double mh, double dh, el_rng *rng)
{
    memset(f, 0, sizeof *f);
    set_mode(&f->mode, mh, 0.5 * sqrt(-dh));
    f->point.n_modes = 1;
    f->point.modes = &f->mode;
    for (size_t i = 0; i < CV_REPS; i++) {
        cv_draw(rng, mh, dh, &f->ms[i], &f->ds[i]);
        f->re[i] = f->ms[i];
        f->im[i] = f->ds[i] < 0.0 ? 0.5 * sqrt(-f->ds[i]) : 0.0;
        f->disc[i] = f->ds[i];
        f->ok[i] = 1;
        f->stable[i] = (unsigned char)(f->re[i] < 0.0);
    }
}

static el_status cv_summarise(cv_fixture *f, int with_disc, el_boot_result *res)
{
    el_boot_records r = { CV_REPS, 1, 0, f->ok, f->amb, f->stable, f->re, f->im, NULL, NULL,
                          with_disc ? f->disc : NULL, 0.0 };
    el_error err;
    el_error_clear(&err);
    memset(res, 0, sizeof *res);
    return el_boot_summarise(&r, &f->point, RR_LEVEL, res, &err);
}

/* IQR / 1.349 of a copy of v (quantile7 sorts its argument). */
static double iqr_sd(const double *v, size_t n)
{
    double w[CV_REPS];
    memcpy(w, v, n * sizeof(double));
    double q3 = quantile7(w, n, 0.75);
    memcpy(w, v, n * sizeof(double));
    return (q3 - quantile7(w, n, 0.25)) / 1.349;
}

/* One pair log against the closed form written out here: the slope of m
 * on D from robust scales (Gnanadesikan & Kettenring 1972: rho = (s_u^2 -
 * s_v^2) / (s_u^2 + s_v^2), u, v = m / s_m +- D / s_D), the double root's
 * replicates m - beta (D - median D) - beta D_hat, their percentile
 * bounds, and the pair's Re bounds extended to hold them. Tolerance 1e-12
 * relative: the same quantiles of values that differ only by rounding
 * in the order of a few operations. Without the discriminants (a run that
 * keeps none) the bounds are the pair's own, bit for bit. */
static void test_split_pair_control_variate(void **state)
{
    (void)state;
    static cv_fixture f;
    el_rng rng;
    el_rng_seed(&rng, 20261205u, 40);
    double mh = -0.74, dh = -0.08; /* m 2 spreads high, D 1.3 of its spreads below 0 */
    cv_log(&f, mh, dh, &rng);
    el_boot_result res;
    assert_int_equal(cv_summarise(&f, 1, &res), EL_OK);
    const el_mode_bounds *b = &res.bounds[0];
    double sm = iqr_sd(f.ms, CV_REPS), sd = iqr_sd(f.ds, CV_REPS);
    double u[CV_REPS], v[CV_REPS], w[CV_REPS];
    size_t split = 0;
    for (size_t i = 0; i < CV_REPS; i++) {
        u[i] = f.ms[i] / sm + f.ds[i] / sd;
        v[i] = f.ms[i] / sm - f.ds[i] / sd;
        split += f.ds[i] >= 0.0;
    }
    double su = iqr_sd(u, CV_REPS), sv = iqr_sd(v, CV_REPS);
    double beta = sm * (su * su - sv * sv) / (su * su + sv * sv) / sd;
    memcpy(w, f.ds, sizeof w);
    double dmed = quantile7(w, CV_REPS, 0.5);
    for (size_t i = 0; i < CV_REPS; i++)
        w[i] = f.ms[i] - beta * (f.ds[i] - dmed) - beta * dh;
    double lo = quantile7(w, CV_REPS, 0.025);
    double hi = quantile7(w, CV_REPS, 0.975);
    memcpy(w, f.ms, sizeof w);
    double own_lo = quantile7(w, CV_REPS, 0.025), own_hi = quantile7(w, CV_REPS, 0.975);
    assert_true(split >= 2); /* the rule applies (0.5 % of 400) */
    assert_close(b->double_root_slope, beta, 1e-12, 0.0);
    assert_close(b->re_double_root.lo, lo, 1e-12, 0.0);
    assert_close(b->re_double_root.hi, hi, 1e-12, 0.0);
    assert_close(b->split_fraction, (double)split / CV_REPS, 1e-15, 0.0);
    assert_int_equal(b->repeated_root, 1);
    assert_int_equal(b->repeated_partner, 0);
    assert_close(b->re.lo, fmin(own_lo, lo), 1e-12, 0.0);
    assert_close(b->re.hi, fmax(own_hi, hi), 1e-12, 0.0);
    assert_true(b->re_own.lo == own_lo && b->re_own.hi == own_hi);
    /* The failure it mends: the own bounds exclude the double root. */
    assert_true(own_lo > RR_TRUTH);
    assert_true(b->re.lo <= RR_TRUTH);
    /* A real double root is critically damped, with no frequency. */
    assert_true(b->damping_ratio.lo <= 1.0 && 1.0 <= b->damping_ratio.hi);
    assert_true(b->im.lo == 0.0 && b->frequency_hz.lo == 0.0);
    /* The warning names the pair and the double root's bounds. */
    el_warnings wl;
    memset(&wl, 0, sizeof wl);
    res.n_modes = 1; /* as el_boot_run sets it */
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_boot_warn_repeated(&res, &wl, &err), EL_OK);
    assert_int_equal(wl.count, 1);
    assert_non_null(strstr(wl.items[0], "mode 1 (a complex pair) may be one repeated real root"));
    el_warnings_free(&wl);
    el_boot_free(&res);
    /* No discriminants kept: the pair's own bounds. */
    assert_int_equal(cv_summarise(&f, 0, &res), EL_OK);
    assert_true(res.bounds[0].re.lo == own_lo && res.bounds[0].re.hi == own_hi);
    assert_int_equal(res.bounds[0].repeated_root, 0);
    el_boot_free(&res);
}

/* A pair whose replicates split in fewer than 0.5 % of them (one of 400)
 * is not widened: the data exclude a double root at that tail. The double
 * root's bounds and the split share are still kept. */
static void test_split_pair_threshold(void **state)
{
    (void)state;
    static cv_fixture f;
    el_rng rng;
    el_rng_seed(&rng, 20261205u, 41);
    cv_log(&f, -0.74, -0.08, &rng);
    /* All replicates a pair but one. */
    size_t first = CV_REPS;
    for (size_t i = 0; i < CV_REPS; i++)
        if (f.disc[i] >= 0.0) {
            if (first == CV_REPS) {
                first = i;
                continue;
            }
            f.disc[i] = f.ds[i] = -f.disc[i] - 1e-3;
            f.im[i] = 0.5 * sqrt(-f.ds[i]);
        }
    assert_true(first < CV_REPS);
    el_boot_result res;
    assert_int_equal(cv_summarise(&f, 1, &res), EL_OK);
    const el_mode_bounds *b = &res.bounds[0];
    assert_close(b->split_fraction, 1.0 / CV_REPS, 1e-15, 0.0);
    assert_int_equal(b->repeated_root, 0);
    assert_true(b->re.lo == b->re_own.lo && b->re.hi == b->re_own.hi);
    assert_true(isfinite(b->re_double_root.lo) && isfinite(b->re_double_root.hi));
    el_boot_free(&res);
}

/* Coverage over the logs whose estimate is a pair with D below minus one of
 * its spreads (an Im of 0.12 1/s and more here: calibrate's misses at
 * 5,000 samples are such pairs), drawn until 300 of them: selected by
 * their D, their m came out high (E[m - a | D] = rho s_m D / s_D), and the
 * pair's own bounds cover about 0.84 (a Monte Carlo of 4,000 logs in a
 * script of the same law: 0.843 own, 0.94 the double root's bounds, 0.95
 * widened). The check asks the band 0.92-0.98 (issue 10's target) for the
 * widened bounds (binomial standard error at 300 logs 0.013) and below
 * 0.92 for the own ones, so that the fixture keeps showing the failure. */
static void test_split_pair_coverage(void **state)
{
    (void)state;
    static cv_fixture f;
    el_rng rng;
    el_rng_seed(&rng, 20261205u, 42);
    size_t logs = 0, own = 0, widened = 0;
    while (logs < 300) {
        double mh, dh;
        cv_draw(&rng, RR_TRUTH, 0.0, &mh, &dh);
        if (dh >= -CV_SD_DISC)
            continue;
        cv_log(&f, mh, dh, &rng);
        el_boot_result res;
        assert_int_equal(cv_summarise(&f, 1, &res), EL_OK);
        const el_mode_bounds *b = &res.bounds[0];
        own += b->re_own.lo <= RR_TRUTH && RR_TRUTH <= b->re_own.hi;
        widened += b->re.lo <= RR_TRUTH && RR_TRUTH <= b->re.hi;
        el_boot_free(&res);
        logs++;
    }
    double c_own = (double)own / (double)logs, c_new = (double)widened / (double)logs;
    print_message("point pair at a double root: coverage %.3f own bounds, %.3f widened\n",
                  c_own, c_new);
    assert_true(c_own < 0.92);
    assert_true(c_new >= 0.92 && c_new <= 0.98);
}

/* el_boot_match_discriminants against the closed form (z1 - z2)^2 of the
 * two eigenvalues a point pair's slots received: two reals -0.7, -0.9
 * give 0.04; a conjugate pair -0.8 +- 0.2i gives (0.4i)^2 = -0.16; a real
 * mode has one slot and gets NaN. Tolerance 1e-15 relative (one
 * subtraction and one product of exact inputs). */
static void test_match_discriminants(void **state)
{
    (void)state;
    el_mode modes[2];
    set_mode(&modes[0], -0.8, 0.1);  /* a pair: two slots */
    set_mode(&modes[1], -3.0, 0.0);  /* a real mode: one slot */
    el_modes point;
    memset(&point, 0, sizeof point);
    point.n_modes = 2;
    point.n_eigenvalues = 3;
    point.modes = modes;
    el_boot_matcher *m = NULL;
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_boot_matcher_create(&point, &m, &err), EL_OK);
    double re[3] = { -0.7, -3.1, -0.9 }, im[3] = { 0.0, 0.0, 0.0 };
    double mre[2], mim[2], disc[2];
    int amb = 0;
    assert_int_equal(el_boot_match(m, re, im, 3, mre, mim, &amb), 0);
    el_boot_match_discriminants(m, disc);
    assert_close(disc[0], 0.04, 1e-15, 1e-17);
    assert_true(isnan(disc[1]));
    assert_close(mre[0], -0.8, 1e-15, 0.0);
    double re2[3] = { -0.8, -0.8, -3.1 }, im2[3] = { 0.2, -0.2, 0.0 };
    assert_int_equal(el_boot_match(m, re2, im2, 3, mre, mim, &amb), 0);
    el_boot_match_discriminants(m, disc);
    assert_close(disc[0], -0.16, 1e-15, 0.0);
    assert_true(isnan(disc[1]));
    el_boot_matcher_destroy(m);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_double_root_widened),
        cmocka_unit_test(test_distinct_roots_unchanged),
        cmocka_unit_test(test_merged_threshold),
        cmocka_unit_test(test_four_modes),
        cmocka_unit_test(test_double_root_coverage),
        cmocka_unit_test(test_split_pair_control_variate),
        cmocka_unit_test(test_split_pair_threshold),
        cmocka_unit_test(test_split_pair_coverage),
        cmocka_unit_test(test_match_discriminants),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
