/* el_boot_bounds: from the replicates' matched eigenvalues to percentile
 * bounds, P(stable) and the trace-determinant region probabilities. */
#include "el_boot_bounds.h"

#include <float.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "el_sort.h"

#define BOOT_PI 3.14159265358979323846

/* ------------------------------------------------------------------ */
/* Percentiles. */

double el_boot_quantile(const double *sorted, size_t n, double p)
{
    if (n == 1)
        return sorted[0];
    if (p <= 0.0)
        return sorted[0];
    if (p >= 1.0)
        return sorted[n - 1];
    double h = (double)(n - 1) * p;
    size_t lo = (size_t)floor(h);
    if (lo >= n - 1)
        return sorted[n - 1];
    double frac = h - (double)lo;
    return sorted[lo] + frac * (sorted[lo + 1] - sorted[lo]);
}

/* Percentile interval of the finite values among v[0..n) (reordered in
 * place); NaN bounds when there are none. */
static el_interval percentile_interval(double *v, size_t n, double level)
{
    size_t k = 0;
    for (size_t i = 0; i < n; i++)
        if (isfinite(v[i]))
            v[k++] = v[i];
    el_interval out = { NAN, NAN };
    if (k == 0)
        return out;
    el_sort_finite(v, k);
    out.lo = el_boot_quantile(v, k, 0.5 * (1.0 - level));
    out.hi = el_boot_quantile(v, k, 0.5 * (1.0 + level));
    return out;
}

/* ------------------------------------------------------------------ */
/* Growing modes: reflected bounds. */

double el_boot_reflect_weight(double efolds)
{
    if (!isfinite(efolds) || efolds <= EL_BOOT_REFLECT_FROM)
        return 0.0;
    if (efolds >= EL_BOOT_REFLECT_FULL)
        return 1.0;
    return (efolds - EL_BOOT_REFLECT_FROM) / (EL_BOOT_REFLECT_FULL - EL_BOOT_REFLECT_FROM);
}

/* The median of the finite values of v[0..n) (reordered); NaN when none. */
static double finite_median(double *v, size_t n)
{
    size_t k = 0;
    for (size_t i = 0; i < n; i++)
        if (isfinite(v[i]))
            v[k++] = v[i];
    if (k == 0)
        return NAN;
    el_sort_finite(v, k);
    return el_boot_quantile(v, k, 0.5);
}

/* A real mode growing by more than EL_BOOT_REFLECT_FROM e-foldings over
 * the log. Given the growth's envelope its estimate is close to normal (an
 * explosive autoregression's least-squares estimate is mixed normal:
 * Anderson 1959, Ann. Math. Statist. 30(3); recalled from memory), and
 * resampled pairs keep the envelope; what skew is left comes from the
 * eigenvalue being a curved function of the estimated matrix (two growing
 * roots close together, a growing and a decaying root of one matrix),
 * (a real root of a 2 x 2 block is m +- sqrt(D) / 2: curved in the
 * discriminant D, whereas a pair's Re is the smooth mean m, whose
 * replicates show no skew; pairs keep the percentile form), and the
 * replicates reproduce that skew with the same sign (to first
 * order the bootstrap copies the law of a smooth function: Hall 1988,
 * Ann. Statist. 16(3); recalled from memory). The percentile interval
 * then puts the long tail on the wrong side of the estimate; the basic
 * (reflected) interval [2 c - q_hi, 2 c - q_lo] about the replicates'
 * centre c (their median: after recentre the bias-corrected estimate)
 * puts it on the right one (Davison & Hinkley 1997, Bootstrap Methods and
 * their Application, sec. 5.2; recalled from memory). Re and decay-rate
 * bounds of such a mode are blended toward it with el_boot_reflect_weight;
 * a decaying or slowly growing mode keeps its bounds bit for bit
 * (stationary logs keep the percentile form, whose cells are calibrated
 * as they are). v: n_ok doubles of scratch. */
static void reflect_growing(const el_modes *point, const double *re, size_t n_ok,
                            double duration_s, double *v, el_boot_result *res)
{
    size_t nm = point->n_modes;
    for (size_t q = 0; q < nm && duration_s > 0.0; q++) {
        const el_mode *md = &point->modes[q];
        double g = el_boot_reflect_weight(md->lambda_re * duration_s);
        el_mode_bounds *b = &res->bounds[q];
        if (md->pair || md->instantaneous || !(g > 0.0) || !isfinite(b->re.lo)
            || !isfinite(b->re.hi))
            continue;
        for (size_t i = 0; i < n_ok; i++)
            v[i] = re[i * nm + q];
        double c = finite_median(v, n_ok);
        if (!isfinite(c))
            continue;
        double lo = 2.0 * c - b->re.hi, hi = 2.0 * c - b->re.lo;
        b->re.lo = (1.0 - g) * b->re.lo + g * lo;
        b->re.hi = (1.0 - g) * b->re.hi + g * hi;
        b->decay_rate.lo = -b->re.hi;
        b->decay_rate.hi = -b->re.lo;
    }
}

/* ------------------------------------------------------------------ */
/* A possible repeated root. */

/* Two real point modes' replicate values come from one complex pair when
 * both carry the same positive Im: the matcher folds a pair onto Im >= 0
 * as two equal slots, and a real mode's Im is never shifted (el_resample.c,
 * recentre). Relative tolerance 1e-9: |Im| of a conjugate pair is equal to
 * the last bits, while two different pairs of one replicate differ far
 * more than that. */
static int one_pair(double im_q, double im_p)
{
    return im_q > 0.0 && im_p > 0.0 && fabs(im_q - im_p) <= 1e-9 * fmax(im_q, im_p);
}

/* Whether point mode q can be half of a repeated real root: a real mode
 * with a Re (not at the Nyquist limit, not instantaneous). */
static int repeat_candidate(const el_mode *md)
{
    return !md->pair && !md->at_nyquist && !md->instantaneous && isfinite(md->lambda_re);
}

/* The candidate nearest to q in Re (ties: the lower index); nm when none. */
static size_t nearest_real(const el_modes *point, size_t q)
{
    size_t best = point->n_modes;
    double bd = HUGE_VAL;
    for (size_t p = 0; p < point->n_modes; p++) {
        if (p == q || !repeat_candidate(&point->modes[p]))
            continue;
        double d = fabs(point->modes[p].lambda_re - point->modes[q].lambda_re);
        if (d < bd) {
            bd = d;
            best = p;
        }
    }
    return best;
}

/* The number of replicates in which a pair must merge (or split) for the
 * data not to exclude a double root: EL_BOOT_REPEATED_TAIL (1 - level) of
 * them, at least one. Less one part in 1e12: 0.1 x 0.05 x 400 is 2 + 4e-16
 * in doubles. */
static double repeated_need(double level, size_t n_ok)
{
    return fmax(1.0, EL_BOOT_REPEATED_TAIL * (1.0 - level) * (double)n_ok * (1.0 - 1e-12));
}

/* Extends one mode's Re, decay-rate and damping-ratio bounds by the pair
 * mean's Re bounds (a real root at any Re inside them: decay rate -Re,
 * damping ratio 1 below zero and -1 above). */
static void extend_by_mean(el_mode_bounds *b)
{
    el_interval m = b->re_pair_mean;
    b->repeated_root = 1;
    b->re.lo = fmin(b->re.lo, m.lo);
    b->re.hi = fmax(b->re.hi, m.hi);
    b->decay_rate.lo = fmin(b->decay_rate.lo, -m.hi);
    b->decay_rate.hi = fmax(b->decay_rate.hi, -m.lo);
    if (m.lo < 0.0) {
        b->damping_ratio.lo = fmin(b->damping_ratio.lo, 1.0);
        b->damping_ratio.hi = fmax(b->damping_ratio.hi, 1.0);
    }
    if (m.hi > 0.0) {
        b->damping_ratio.lo = fmin(b->damping_ratio.lo, -1.0);
        b->damping_ratio.hi = fmax(b->damping_ratio.hi, -1.0);
    }
}

/* At a double real root the eigenvalues are not differentiable functions
 * of the matrix (they move like the square root of the discriminant), and
 * the bootstrap of either root is not consistent (Beran & Srivastava 1985,
 * Ann. Statist. 13(1), for a multiple root of a covariance matrix;
 * recalled from memory): the larger of two split roots sits above the
 * double root, and its replicates spread about the split estimate, not
 * about the truth. The mean of the two roots (a smooth function of the
 * matrix: log det / (2 dt) of a two-state model's Ad) has a consistent
 * bootstrap, and a double root equals it. So when two real point modes
 * (each the other's nearest real mode) were one complex pair in at least
 * EL_BOOT_REPEATED_TAIL (1 - level) of the replicates, i.e. the bounds of
 * the pair's discriminant (lambda_q - lambda_p)^2 at that tail reach below
 * zero and the data cannot tell the two real roots from a double one,
 * each mode's bounds are extended to hold the mean's. For two distinct
 * real roots the larger is above the mean and the smaller below it, so
 * the extension can only add coverage. A point pair needs nothing: its
 * replicate Re is already the mean of the two slots it is matched to. The
 * mean's bounds and the merged fraction are kept for every real pair that
 * merged at all (el_mode_bounds). v: n_ok doubles of scratch. */
static void widen_repeated_roots(const el_modes *point, const double *re, const double *im,
                                 size_t n_ok, double level, double *v, el_boot_result *res)
{
    size_t nm = point->n_modes;
    double need = repeated_need(level, n_ok);
    for (size_t q = 0; q < nm; q++) {
        if (!repeat_candidate(&point->modes[q]))
            continue;
        size_t p = nearest_real(point, q);
        if (p >= nm || p < q || nearest_real(point, p) != q)
            continue; /* each pair once (q < p), and only mutual nearest modes */
        size_t merged = 0;
        for (size_t i = 0; i < n_ok; i++)
            merged += (size_t)one_pair(im[i * nm + q], im[i * nm + p]);
        if (merged == 0)
            continue;
        for (size_t i = 0; i < n_ok; i++)
            v[i] = 0.5 * (re[i * nm + q] + re[i * nm + p]);
        el_interval mean_re = percentile_interval(v, n_ok, level);
        el_mode_bounds *bq = &res->bounds[q], *bp = &res->bounds[p];
        bq->repeated_partner = p;
        bp->repeated_partner = q;
        bq->merged_fraction = bp->merged_fraction = (double)merged / (double)n_ok;
        bq->re_pair_mean = bp->re_pair_mean = mean_re;
        if ((double)merged < need || !isfinite(mean_re.lo) || !isfinite(mean_re.hi))
            continue;
        extend_by_mean(bq);
        extend_by_mean(bp);
    }
}

/* IQR / 1.349 of the finite values of v[0..n) (reordered): the standard
 * deviation for a normal law, unmoved by a few far values; 0 when fewer
 * than two. */
static double robust_spread(double *v, size_t n)
{
    size_t k = 0;
    for (size_t i = 0; i < n; i++)
        if (isfinite(v[i]))
            v[k++] = v[i];
    if (k < 2)
        return 0.0;
    el_sort_finite(v, k);
    return (el_boot_quantile(v, k, 0.75) - el_boot_quantile(v, k, 0.25)) / 1.349;
}

/* The regression slope of y on x over n records (stride, offset) from
 * robust scales: s_y rho / s_x, with rho by Gnanadesikan and Kettenring
 * (1972, Biometrics 28(1); recalled from memory) from the spreads of the
 * standardised sum and difference, (s_u^2 - s_v^2) / (s_u^2 + s_v^2) for
 * u, v = y / s_y +- x / s_x, every spread robust_spread. A replicate whose
 * pair split into a far real root has a discriminant and a mean far out
 * (both grow with the split); a least-squares slope would follow those few
 * and miss the linear relation of the rest. 0 when a spread is 0. w: n
 * doubles of scratch. */
static double robust_slope(const double *y, const double *x, size_t n, size_t stride,
                           size_t off, double *w)
{
    for (size_t i = 0; i < n; i++)
        w[i] = y[i * stride + off];
    double sy = robust_spread(w, n);
    for (size_t i = 0; i < n; i++)
        w[i] = x[i * stride + off];
    double sx = robust_spread(w, n);
    if (!(sy > 0.0) || !(sx > 0.0))
        return 0.0;
    for (size_t i = 0; i < n; i++)
        w[i] = y[i * stride + off] / sy + x[i * stride + off] / sx;
    double su = robust_spread(w, n);
    for (size_t i = 0; i < n; i++)
        w[i] = y[i * stride + off] / sy - x[i * stride + off] / sx;
    double sv = robust_spread(w, n);
    double den = su * su + sv * sv;
    return den > 0.0 ? sy * (su * su - sv * sv) / den / sx : 0.0;
}

/* A point pair at a possible double real root. Its replicate Re is the
 * mean m of its two slots, a smooth function of the model matrix, and its
 * bounds cover the mean over all logs; but at a Jordan block the
 * discriminant D = (lambda_1 - lambda_2)^2, also smooth (to first order
 * linear in the matrix's error), is correlated with m, and the logs whose
 * estimate is a pair (D < 0) are those whose m came out on one side.
 * Given a double root (D = 0) the estimate of the root with that
 * correlation removed is m - beta D, beta the regression slope of m on D
 * (a control variate; both are functions of the same matrix error, so the
 * slope is the replicates', robust_slope, consistent since m and D are
 * smooth); it is
 * uncorrelated with D, so its bounds hold whatever the sign of the
 * estimate's D. When the replicates split the pair into two reals in at
 * least the share of the repeated-root rule for merging (the data cannot
 * exclude D = 0 at that tail) the pair's Re bounds are extended to the
 * percentile bounds of m* - beta (D* - median D*) - beta D_hat over the
 * replicates (D_hat = -4 Im^2 of the point pair), its decay rate alike,
 * its damping ratio to 1 (or -1) and its Im and frequency down to 0.
 * disc: n_ok x nm discriminants in replicate order; v, w: n_ok doubles. */
static void widen_split_pairs(const el_modes *point, const double *re, const double *disc,
                              size_t n_ok, double level, double need, double *v, double *w,
                              el_boot_result *res)
{
    size_t nm = point->n_modes;
    for (size_t q = 0; q < nm; q++) {
        const el_mode *md = &point->modes[q];
        if (!md->pair || md->at_nyquist || md->instantaneous || !isfinite(md->lambda_re))
            continue;
        size_t split = 0, k = 0;
        for (size_t i = 0; i < n_ok; i++) {
            double d = disc[i * nm + q];
            split += (size_t)(d >= 0.0);
            if (isfinite(d))
                w[k++] = d;
        }
        el_mode_bounds *b = &res->bounds[q];
        b->split_fraction = (double)split / (double)n_ok;
        if (split == 0 || k == 0)
            continue;
        el_sort_finite(w, k);
        double d_med = el_boot_quantile(w, k, 0.5);
        double d_hat = -4.0 * md->lambda_im * md->lambda_im;
        double beta = robust_slope(re, disc, n_ok, nm, q, w);
        b->double_root_slope = beta;
        for (size_t i = 0; i < n_ok; i++) {
            double d = disc[i * nm + q];
            v[i] = re[i * nm + q] - beta * ((isfinite(d) ? d - d_med : 0.0) + d_hat);
        }
        el_interval root = percentile_interval(v, n_ok, level);
        b->re_double_root = root;
        if ((double)split < need || !isfinite(root.lo) || !isfinite(root.hi))
            continue;
        b->repeated_partner = q;
        b->re_pair_mean = root;
        extend_by_mean(b);
        b->im.lo = fmin(b->im.lo, 0.0);
        b->frequency_hz.lo = fmin(b->frequency_hz.lo, 0.0);
    }
}

el_status el_boot_warn_repeated(const el_boot_result *res, el_warnings *w, el_error *err)
{
    for (size_t q = 0; res->bounds != NULL && q < res->n_modes; q++) {
        const el_mode_bounds *b = &res->bounds[q];
        if (b->repeated_root && b->repeated_partner == q) {
            /* A point pair (widen_split_pairs). */
            el_status st = el_warnings_add(
                w,
                "mode %zu (a complex pair) may be one repeated real root (two real roots "
                "in %.1f%% of the bootstrap replicates): its Re bounds also hold those of "
                "the double root, %.4g to %.4g",
                q + 1, 100.0 * b->split_fraction, b->re_double_root.lo,
                b->re_double_root.hi);
            if (st != EL_OK)
                return el_error_set(err, st, "out of memory for a warning");
            continue;
        }
        if (!b->repeated_root || b->repeated_partner <= q)
            continue; /* each pair once */
        el_status st = el_warnings_add(
            w,
            "modes %zu and %zu may be one repeated real root (one complex pair in %.1f%% "
            "of the bootstrap replicates): the Re bounds of each also hold those of "
            "their mean, %.4g to %.4g",
            q + 1, b->repeated_partner + 1, 100.0 * b->merged_fraction, b->re_pair_mean.lo,
            b->re_pair_mean.hi);
        if (st != EL_OK)
            return el_error_set(err, st, "out of memory for a warning");
    }
    return EL_OK;
}

void el_boot_free(el_boot_result *result)
{
    if (result == NULL)
        return;
    free(result->bounds);
    free(result->lambda_re);
    free(result->lambda_im);
    free(result->trace_samples);
    free(result->det_samples);
    memset(result, 0, sizeof *result);
}

el_status el_boot_summarise(const el_boot_records *sh, const el_modes *point,
                            double level, el_boot_result *res, el_error *err)
{
    size_t nm = sh->n_modes, total = sh->total, n_ok = 0, n_stable = 0, n_amb = 0;
    for (size_t i = 0; i < total; i++)
        if (sh->ok[i]) {
            n_ok++;
            n_stable += sh->stable[i];
            n_amb += sh->amb[i];
        }
    res->replicates = n_ok;
    res->failed_replicates = total - n_ok;
    res->ambiguous_matches = n_amb;
    if (n_ok == 0 || 2 * n_ok < total) {
        el_error_set(err, EL_ERR_NUMERIC,
                     "only %zu of %zu bootstrap replicates gave a model", n_ok, total);
        el_error_hint(err, "use a longer window, fewer --lags or a lower --rank");
        return EL_ERR_NUMERIC;
    }
    res->p_stable = (double)n_stable / (double)n_ok;
    res->n_modes = nm; /* the count of bounds: el_boot_warn_repeated reads it */
    res->bounds = calloc(nm, sizeof(el_mode_bounds));
    res->lambda_re = malloc(n_ok * nm * sizeof(double));
    res->lambda_im = malloc(n_ok * nm * sizeof(double));
    double *v = malloc(n_ok * sizeof(double));
    double *disc = sh->mode_disc != NULL ? malloc(n_ok * nm * sizeof(double)) : NULL;
    double *w = sh->mode_disc != NULL ? malloc(n_ok * sizeof(double)) : NULL;
    if (sh->has_plane) {
        res->trace_samples = malloc(n_ok * sizeof(double));
        res->det_samples = malloc(n_ok * sizeof(double));
    }
    if (!res->bounds || !res->lambda_re || !res->lambda_im || !v
        || (sh->mode_disc != NULL && (!disc || !w))
        || (sh->has_plane && (!res->trace_samples || !res->det_samples))) {
        free(v);
        free(disc);
        free(w);
        return el_error_set(err, EL_ERR_NOMEM, "out of memory (bootstrap result)");
    }
    size_t k = 0;
    for (size_t i = 0; i < total; i++) {
        if (!sh->ok[i])
            continue;
        memcpy(res->lambda_re + k * nm, sh->mode_re + i * nm, nm * sizeof(double));
        memcpy(res->lambda_im + k * nm, sh->mode_im + i * nm, nm * sizeof(double));
        if (disc != NULL)
            memcpy(disc + k * nm, sh->mode_disc + i * nm, nm * sizeof(double));
        if (sh->has_plane) {
            res->trace_samples[k] = sh->trace[i];
            res->det_samples[k] = sh->det[i];
        }
        k++;
    }
    for (size_t q = 0; q < nm; q++) {
        const el_mode *md = &point->modes[q];
        el_mode_bounds *b = &res->bounds[q];
        const double *re = res->lambda_re, *im = res->lambda_im;
        for (size_t i = 0; i < n_ok; i++)
            v[i] = re[i * nm + q];
        b->re = percentile_interval(v, n_ok, level);
        for (size_t i = 0; i < n_ok; i++)
            v[i] = im[i * nm + q];
        b->im = percentile_interval(v, n_ok, level);
        for (size_t i = 0; i < n_ok; i++)
            v[i] = im[i * nm + q] / (2.0 * BOOT_PI);
        b->frequency_hz = percentile_interval(v, n_ok, level);
        for (size_t i = 0; i < n_ok; i++) {
            double mag = hypot(re[i * nm + q], im[i * nm + q]);
            v[i] = mag > 0.0 ? -re[i * nm + q] / mag : NAN;
        }
        b->damping_ratio = percentile_interval(v, n_ok, level);
        for (size_t i = 0; i < n_ok; i++)
            v[i] = -re[i * nm + q];
        b->decay_rate = percentile_interval(v, n_ok, level);
        /* Quantities the point estimate itself does not have stay flagged. */
        el_interval none = { NAN, NAN };
        if (md->at_nyquist)
            b->frequency_hz = none;
        if (md->instantaneous) {
            b->re = none;
            b->damping_ratio = none;
            b->decay_rate = none;
        }
        b->re_pair_mean = none;
        b->re_double_root = none;
    }
    reflect_growing(point, res->lambda_re, n_ok, sh->duration_s, v, res);
    for (size_t q = 0; q < nm; q++)
        res->bounds[q].re_own = res->bounds[q].re;
    widen_repeated_roots(point, res->lambda_re, res->lambda_im, n_ok, level, v, res);
    if (disc != NULL)
        widen_split_pairs(point, res->lambda_re, disc, n_ok, level, repeated_need(level, n_ok),
                          v, w, res);
    free(disc);
    free(w);
    if (sh->has_plane) {
        double scale = 0.0;
        for (size_t q = 0; q < nm; q++) {
            double mag = hypot(point->modes[q].lambda_re, point->modes[q].lambda_im);
            if (isfinite(mag) && mag > scale)
                scale = mag;
        }
        double tol = 1e-9 * fmax(1.0, scale * scale);
        size_t counts[EL_REGION_COUNT] = { 0 };
        for (size_t i = 0; i < n_ok; i++) {
            el_region rg = el_verdict_plane_region(res->trace_samples[i],
                                                   res->det_samples[i], tol);
            if (rg < EL_REGION_COUNT)
                counts[rg]++;
        }
        for (size_t g = 0; g < EL_REGION_COUNT; g++)
            res->region_probability[g] = (double)counts[g] / (double)n_ok;
        memcpy(v, res->trace_samples, n_ok * sizeof(double));
        res->trace = percentile_interval(v, n_ok, level);
        memcpy(v, res->det_samples, n_ok * sizeof(double));
        res->determinant = percentile_interval(v, n_ok, level);
        for (size_t i = 0; i < n_ok; i++)
            v[i] = res->trace_samples[i] * res->trace_samples[i]
                   - 4.0 * res->det_samples[i];
        res->discriminant = percentile_interval(v, n_ok, level);
    }
    free(v);
    return EL_OK;
}

/* ------------------------------------------------------------------ */
/* Judging a coverage study: exact binomial sums. */

static double binom_pmf(size_t k, size_t n, double p)
{
    if (p <= 0.0)
        return k == 0 ? 1.0 : 0.0;
    if (p >= 1.0)
        return k == n ? 1.0 : 0.0;
    return exp(lgamma((double)n + 1.0) - lgamma((double)k + 1.0) -
               lgamma((double)(n - k) + 1.0) + (double)k * log(p) +
               (double)(n - k) * log1p(-p));
}

/* P(X <= x) of binomial(n, p). */
static double binom_le(size_t x, size_t n, double p)
{
    double s = 0.0;
    for (size_t k = 0; k <= x && k <= n; k++)
        s += binom_pmf(k, n, p);
    return s > 1.0 ? 1.0 : s;
}

/* P(X >= x) of binomial(n, p). */
static double binom_ge(size_t x, size_t n, double p)
{
    double s = 0.0;
    for (size_t k = x; k <= n; k++)
        s += binom_pmf(k, n, p);
    return s > 1.0 ? 1.0 : s;
}

void el_boot_coverage_interval(size_t covered, size_t n, double level, double *lo,
                               double *hi)
{
    double tail = 0.5 * (1.0 - level);
    *lo = 0.0;
    *hi = 1.0;
    if (n == 0 || covered > n)
        return;
    /* Each tail is monotone in p: bisection, 60 halvings (2^-60 of [0, 1]). */
    if (covered > 0) {
        double a = 0.0, b = 1.0;
        for (int i = 0; i < 60; i++) {
            double m = 0.5 * (a + b);
            if (binom_ge(covered, n, m) < tail)
                a = m;
            else
                b = m;
        }
        *lo = 0.5 * (a + b);
    }
    if (covered < n) {
        double a = 0.0, b = 1.0;
        for (int i = 0; i < 60; i++) {
            double m = 0.5 * (a + b);
            if (binom_le(covered, n, m) < tail)
                b = m;
            else
                a = m;
        }
        *hi = 0.5 * (a + b);
    }
}

int el_boot_coverage_judge(size_t covered, size_t n, double nominal, double level)
{
    if (n == 0 || covered > n)
        return 0;
    double tail = 0.5 * (1.0 - level);
    if (binom_le(covered, n, nominal) < tail)
        return -1;
    if (binom_ge(covered, n, nominal) < tail)
        return 1;
    return 0;
}

void el_boot_coverage_chance(size_t n, double nominal, double band_lo, double band_hi,
                             double level, double *out_band, double *reject)
{
    *out_band = 0.0;
    *reject = 0.0;
    for (size_t x = 0; x <= n && n > 0; x++) {
        double pmf = binom_pmf(x, n, nominal), c = (double)x / (double)n;
        /* The band as printed: a coverage equal to an end is inside. */
        if (c < band_lo - 1e-12 || c > band_hi + 1e-12)
            *out_band += pmf;
        if (el_boot_coverage_judge(x, n, nominal, level) != 0)
            *reject += pmf;
    }
}
