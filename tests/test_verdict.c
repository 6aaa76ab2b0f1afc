/* test_verdict: trace-determinant regions, n-state types, stability and
 * the ambiguity judgement, on exactly sampled linear systems, the Lorenz
 * Jacobian, the Canadian lynx series and hand-built bootstrap results. */
#include "el_test.h"

#include <stdlib.h>
#include <string.h>

#include "el_fit.h"
#include "el_modes.h"
#include "el_report.h"
#include "el_resample.h"
#include "el_verdict.h"

#include "data/fixture_fit.h"

#define TEST_PI 3.14159265358979323846
#define MAX_CH 4

static int has_warning(const el_warnings *w, const char *needle)
{
    for (size_t i = 0; i < w->count; i++)
        if (strstr(w->items[i], needle) != NULL)
            return 1;
    return 0;
}

/* exp(A t) of a real 2x2 matrix in closed form (Cayley-Hamilton: with
 * s = tr/2, q = s^2 - det, exp(At) = e^{st} [c(t) I + g(t) (A - sI)],
 * c = cosh(rt), g = sinh(rt)/r for q = r^2 > 0; cos, sin/r for q = -r^2;
 * 1, t for q = 0). Independent of the library's el_expm. */
static void expm2(const double a[4], double t, double e[4])
{
    double s = 0.5 * (a[0] + a[3]), det = a[0] * a[3] - a[1] * a[2];
    double q = s * s - det, c, g;
    if (q > 0) {
        double r = sqrt(q);
        c = cosh(r * t);
        g = sinh(r * t) / r;
    } else if (q < 0) {
        double r = sqrt(-q);
        c = cos(r * t);
        g = sin(r * t) / r;
    } else {
        c = 1.0;
        g = t;
    }
    double f = exp(s * t);
    e[0] = f * (c + g * (a[0] - s));
    e[1] = f * g * a[1];
    e[2] = f * g * a[2];
    e[3] = f * (c + g * (a[3] - s));
}

/* A fitted two-state system and everything derived from it. */
typedef struct {
    el_model model;
    el_modes modes;
    el_verdict verdict;
    el_warnings warnings;
} fitted;

static void fitted_free(fitted *f)
{
    el_model_free(&f->model);
    el_modes_free(&f->modes);
    el_warnings_free(&f->warnings);
}

static void fit_series(double *values, size_t n, size_t nc, double dt, size_t lags,
                       fitted *f)
{
    static char name_buf[MAX_CH][8] = {"x1", "x2", "x3", "x4"};
    char empty[1] = "";
    char *names[MAX_CH], *units[MAX_CH];
    for (size_t c = 0; c < MAX_CH; c++) {
        names[c] = name_buf[c];
        units[c] = empty;
    }
    el_series s = {.n_samples = n, .n_channels = nc, .dt = dt, .values = values,
                   .names = names, .units = units};
    el_fit_options opt;
    el_fit_defaults(&opt);
    opt.lags = lags;
    memset(f, 0, sizeof *f);
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_fit(&s, &opt, &f->model, &f->warnings, &err), EL_OK);
    assert_int_equal(el_modes_compute(&f->model, &f->modes, &f->warnings, &err), EL_OK);
}

/* x(t_k) = x* + exp(A t_k)(x0 - x*), sampled exactly (no time stepping),
 * then fitted and classified without a bootstrap. */
static void fit_plane_system(const double a[4], fitted *f)
{
    const size_t n = 200;
    const double dt = 0.01, xs[2] = {1.0, -2.0}, x0[2] = {1.7, -1.1};
    double *v = malloc(2 * n * sizeof *v);
    assert_non_null(v);
    for (size_t k = 0; k < n; k++) {
        double e[4];
        expm2(a, (double)k * dt, e);
        double d0 = x0[0] - xs[0], d1 = x0[1] - xs[1];
        v[k] = xs[0] + e[0] * d0 + e[2] * d1;
        v[n + k] = xs[1] + e[1] * d0 + e[3] * d1;
    }
    fit_series(v, n, 2, dt, 0, f);
    free(v);
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_verdict_compute(&f->modes, &f->model, NULL, 0.95, &f->verdict,
                                        &f->warnings, &err),
                     EL_OK);
}

/* One analytic matrix per region of the trace-determinant plane (the
 * classification as in Strogatz, Nonlinear Dynamics and Chaos, 1994,
 * sec. 5.2): the fitted continuous eigenvalues give trace(A) and det(A).
 * Tolerance 1e-8 relative to max(1, |det|): noise-free exact samples, so
 * only rounding (~1e-14 in mu) amplified by 1/dt = 100 and by |lambda|. */
static void check_region(const double a[4], el_region want, el_stability stab)
{
    fitted f;
    fit_plane_system(a, &f);
    const el_verdict *v = &f.verdict;
    double tr = a[0] + a[3], det = a[0] * a[3] - a[1] * a[2];
    assert_true(v->has_plane);
    assert_close(v->trace, tr, 0.0, 1e-8 * fmax(1.0, fabs(tr)));
    assert_close(v->determinant, det, 0.0, 1e-8 * fmax(1.0, fabs(det)));
    assert_int_equal(v->region, want);
    assert_string_equal(v->type, el_region_name(want));
    assert_int_equal(v->stability, stab);
    assert_false(v->ambiguous);
    assert_true(isnan(v->p_stable));
    assert_true(has_warning(&f.warnings, "bounds not yet computed"));
    fitted_free(&f);
}

static void test_six_regions(void **state)
{
    (void)state;
    /* Column-major [a00, a10, a01, a11]. */
    const double saddle[4] = {0.5, 1.5, 1.5, 0.5};        /* eig 2, -1 */
    const double sink[4] = {-2.0, 0.0, 1.0, -1.0};        /* eig -2, -1 */
    const double spiral_sink[4] = {-0.5, -2.0, 2.0, -0.5}; /* -0.5 +/- 2i */
    const double center[4] = {0.0, -2.0, 2.0, 0.0};        /* +/- 2i */
    const double spiral_source[4] = {0.3, -2.0, 2.0, 0.3}; /* 0.3 +/- 2i */
    const double source[4] = {1.0, 0.0, 1.0, 2.0};         /* eig 1, 2 */
    check_region(saddle, EL_REGION_SADDLE, EL_UNSTABLE);
    check_region(sink, EL_REGION_SINK, EL_STABLE);
    check_region(spiral_sink, EL_REGION_SPIRAL_SINK, EL_STABLE);
    check_region(center, EL_REGION_CENTER, EL_MARGINAL);
    check_region(spiral_source, EL_REGION_SPIRAL_SOURCE, EL_UNSTABLE);
    check_region(source, EL_REGION_SOURCE, EL_UNSTABLE);
}

/* Boundary cases straight from the definitions (Strogatz 1994, sec. 5.2):
 * det = 0 non-isolated, trace^2 = 4 det degenerate node, trace = 0 with
 * det > 0 center; the tolerance decides what counts as zero. */
static void test_plane_boundaries(void **state)
{
    (void)state;
    const double tol = 1e-9;
    assert_int_equal(el_verdict_plane_region(-1.0, 0.0, tol), EL_REGION_NON_ISOLATED);
    assert_int_equal(el_verdict_plane_region(-1.0, 5e-10, tol), EL_REGION_NON_ISOLATED);
    assert_int_equal(el_verdict_plane_region(-2.0, 1.0, tol), EL_REGION_DEGENERATE_NODE);
    assert_int_equal(el_verdict_plane_region(2.0, 1.0, tol), EL_REGION_DEGENERATE_NODE);
    assert_int_equal(el_verdict_plane_region(0.0, 1.0, tol), EL_REGION_CENTER);
    assert_int_equal(el_verdict_plane_region(0.0, 0.0, tol), EL_REGION_NON_ISOLATED);
    assert_int_equal(el_verdict_plane_region(1.0, -2e-9, tol), EL_REGION_SADDLE);
    assert_int_equal(el_verdict_plane_region(-3.0, 2.0, tol), EL_REGION_SINK);
    assert_int_equal(el_verdict_plane_region(3.0, 2.0, tol), EL_REGION_SOURCE);
    assert_int_equal(el_verdict_plane_region(-1.0, 1.0, tol), EL_REGION_SPIRAL_SINK);
    assert_int_equal(el_verdict_plane_region(1.0, 1.0, tol), EL_REGION_SPIRAL_SOURCE);
    assert_int_equal(el_verdict_plane_region(2e-9, 1.0, tol), EL_REGION_SPIRAL_SOURCE);
    /* Matched tolerances: a pair is a center exactly when |Re| <= delta. */
    double tt, tq, delta = 1e-7, im = 3.0;
    el_verdict_plane_tolerances(delta, hypot(0.99 * delta, im), &tt, &tq);
    double re = 0.99 * delta;
    assert_int_equal(el_verdict_plane_region_tols(2 * re, re * re + im * im, tt, tq),
                     EL_REGION_CENTER);
    re = 1.01 * delta;
    assert_int_equal(el_verdict_plane_region_tols(2 * re, re * re + im * im, tt, tq),
                     EL_REGION_SPIRAL_SOURCE);
    assert_string_equal(el_region_name(EL_REGION_SPIRAL_SINK), "spiral sink");
    assert_string_equal(el_region_name(EL_REGION_NON_ISOLATED), "non-isolated");
    assert_string_equal(el_region_name(EL_REGION_NONE), "none");
}

/* Lorenz (1963) equations linearised at the origin, sigma 10, rho 28,
 * beta 8/3: J = [[-s, s, 0], [r, -1, 0], [0, 0, -b]], eigenvalues
 * -(s+1)/2 +/- sqrt((s+1)^2/4 + s(r-1)) (11.83, -22.83) and -b (closed
 * form of the characteristic polynomial). Sampled exactly (closed-form
 * exponential of the 2x2 block, e^{-bt} for z) at dt = 0.001, 400 samples:
 * a saddle with one unstable direction. */
static void test_lorenz_origin(void **state)
{
    (void)state;
    const double sg = 10.0, rh = 28.0, bt = 8.0 / 3.0, dt = 0.001;
    const size_t n = 400;
    const double blk[4] = {-sg, rh, sg, -1.0}, x0[3] = {0.3, -0.8, 0.5};
    double *x = malloc(3 * n * sizeof *x);
    assert_non_null(x);
    for (size_t k = 0; k < n; k++) {
        double e[4], t = (double)k * dt;
        expm2(blk, t, e);
        x[k] = e[0] * x0[0] + e[2] * x0[1];
        x[n + k] = e[1] * x0[0] + e[3] * x0[1];
        x[2 * n + k] = exp(-bt * t) * x0[2];
    }
    fitted f;
    fit_series(x, n, 3, dt, 0, &f);
    free(x);
    double root = sqrt((sg + 1) * (sg + 1) / 4 + sg * (rh - 1));
    double want[3] = {-(sg + 1) / 2 + root, -bt, -(sg + 1) / 2 - root};
    assert_int_equal(f.modes.n_modes, 3);
    /* Sorted largest first. Tolerance 1e-7 relative: exact samples, so
     * the error is rounding, eps * cond(X) (cond about 1e2 here, printed
     * by the singular values) times 1/(|mu| dt) = 1e3 from ln(mu)/dt,
     * ~1e-10; 1e-7 leaves three orders for other platforms' BLAS. */
    for (int i = 0; i < 3; i++) {
        assert_false(f.modes.modes[i].pair);
        assert_close(f.modes.modes[i].lambda_re, want[i], 1e-7, 0.0);
    }
    /* The hand-quoted values 11.83, -22.83, -2.667 (3 decimals). */
    assert_close(want[0], 11.83, 0.0, 0.005);
    assert_close(want[2], -22.83, 0.0, 0.005);
    el_verdict v;
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_verdict_compute(&f.modes, &f.model, NULL, 0.95, &v, &f.warnings,
                                        &err),
                     EL_OK);
    assert_false(v.has_plane);
    assert_string_equal(v.type, "saddle");
    assert_int_equal(v.stability, EL_UNSTABLE);
    assert_int_equal(v.n_unstable_real, 1);
    assert_int_equal(v.n_stable_real, 2);
    assert_int_equal(v.n_unstable_oscillatory + v.n_stable_oscillatory, 0);
    /* Margin = the least damped (unstable) mode: decay rate -11.83. */
    assert_close(v.margin_decay_rate, -want[0], 1e-7, 0.0);
    fitted_free(&f);
}

/* Reads year,trappings into log10 values (a few lines of plain C: the
 * file is two numeric columns after a header). */
static size_t read_lynx(double *out, size_t max)
{
    FILE *fp = fopen("tests/data/lynx_1821_1934.csv", "r");
    if (fp == NULL)
        fail_msg("cannot open tests/data/lynx_1821_1934.csv "
                 "(run from the repository root)");
    char line[128];
    size_t n = 0;
    if (fgets(line, sizeof line, fp) == NULL)
        fail_msg("empty lynx file");
    while (n < max && fgets(line, sizeof line, fp) != NULL) {
        double year, count;
        if (sscanf(line, "%lf,%lf", &year, &count) == 2)
            out[n++] = log10(count);
    }
    fclose(fp);
    return n;
}

/* Moran (1953), Australian Journal of Zoology 1, 163-173: AR(2) on log10
 * lynx trappings, x_t = 1.05 + 1.41 x_{t-1} - 0.77 x_{t-2}; period about
 * 9.8 years. Tolerances from tests/data/README.md: ordinary least squares
 * on this file gives 1.0576, 1.3842, -0.7478 and a period of 9.77 years; the difference
 * from Moran is his estimator, not the data (the series mean matches his),
 * so 0.03 on the coefficients and 0.3 years on the period are the honest
 * allowance. The exact OLS answer is checked separately against numpy. */
static void test_lynx_moran(void **state)
{
    (void)state;
    double *v = malloc(200 * sizeof *v);
    assert_non_null(v);
    size_t n = read_lynx(v, 200);
    assert_int_equal(n, 114);
    fitted f;
    fit_series(v, n, 1, 1.0, 1, &f);
    free(v);
    const el_model *m = &f.model;
    assert_close(m->ad[0], 1.41, 0.0, 0.03);    /* x_{t-1} */
    assert_close(m->ad[2], -0.77, 0.0, 0.03);   /* x_{t-2} */
    assert_close(m->offset[0], 1.05, 0.0, 0.03);
    /* numpy.linalg.lstsq on the same regression (fixture): 1e-9 relative,
     * as for the other numpy fixtures (backward-stable solvers, rounding). */
    assert_close_array(m->ad, fx_lynx_ad, 4, 0.0, 1e-9 * 1.4);
    assert_close(m->offset[0], fx_lynx_c[0], 1e-9, 0.0);
    assert_int_equal(f.modes.n_modes, 1);
    assert_close(f.modes.modes[0].mu_re, fx_lynx_mu_re[0], 1e-9, 0.0);
    assert_close(f.modes.modes[0].mu_im, fabs(fx_lynx_mu_im[0]), 1e-9, 0.0);
    double period_years = 1.0 / f.modes.modes[0].frequency_hz;
    assert_close(period_years, 9.8, 0.0, 0.3);
    el_verdict verdict;
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_verdict_compute(&f.modes, &f.model, NULL, 0.95, &verdict,
                                        &f.warnings, &err),
                     EL_OK);
    assert_int_equal(verdict.region, EL_REGION_SPIRAL_SINK);
    assert_string_equal(verdict.type, "spiral sink");
    assert_int_equal(verdict.stability, EL_STABLE);
    fitted_free(&f);
}

/* ---- bootstrap-based verdicts (hand-built el_boot_result) --------------- */

static void fit_spiral_sink(fitted *f)
{
    const double a[4] = {-0.5, -2.0, 2.0, -0.5};   /* -0.5 +/- 2i */
    fit_plane_system(a, f);
    el_warnings_free(&f->warnings);
}

typedef struct {
    el_boot_result b;
    el_mode_bounds bounds[1];
    double samples[100];
} test_boot;

/* A bootstrap result for the one-mode spiral sink: bounds around the
 * point estimate, everything in the spiral-sink region. */
static void boot_init(test_boot *t, double p_stable)
{
    memset(t, 0, sizeof *t);
    t->b.replicates = 100;
    t->b.level = 0.95;
    t->b.n_modes = 1;
    t->b.bounds = t->bounds;
    t->b.p_stable = p_stable;
    t->bounds[0].re = (el_interval){-0.6, -0.4};
    t->bounds[0].im = (el_interval){1.9, 2.1};
    t->bounds[0].frequency_hz = (el_interval){1.9 / (2 * TEST_PI), 2.1 / (2 * TEST_PI)};
    t->bounds[0].damping_ratio = (el_interval){0.2, 0.3};
    t->bounds[0].decay_rate = (el_interval){0.4, 0.6};
    t->b.has_plane = 1;
    t->b.trace = (el_interval){-1.2, -0.8};
    t->b.determinant = (el_interval){3.8, 4.7};
    t->b.discriminant = (el_interval){-18.0, -14.0};
    t->b.region_probability[EL_REGION_SPIRAL_SINK] = 1.0;
}

static void test_boot_stable(void **state)
{
    (void)state;
    fitted f;
    fit_spiral_sink(&f);
    test_boot tb;
    boot_init(&tb, 0.99);
    el_verdict v;
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_verdict_compute(&f.modes, &f.model, &tb.b, 0.95, &v, &f.warnings,
                                        &err),
                     EL_OK);
    assert_int_equal(v.stability, EL_STABLE);
    assert_string_equal(v.stability_name, "stable");
    assert_false(v.ambiguous);
    assert_close(v.p_stable, 0.99, 0.0, 0.0);
    assert_string_equal(v.type, "spiral sink");
    assert_int_equal(v.n_stable_oscillatory, 2);
    assert_int_equal(f.warnings.count, 0);
    /* p_stable 0.02: unstable holds with 0.98 >= 0.95. */
    boot_init(&tb, 0.02);
    tb.bounds[0].re = (el_interval){0.1, 0.3};
    assert_int_equal(el_verdict_compute(&f.modes, &f.model, &tb.b, 0.95, &v, &f.warnings,
                                        &err),
                     EL_OK);
    assert_int_equal(v.stability, EL_UNSTABLE);
    fitted_free(&f);
}

static void test_boot_ambiguous(void **state)
{
    (void)state;
    fitted f;
    fit_spiral_sink(&f);
    test_boot tb;
    boot_init(&tb, 0.5);
    tb.bounds[0].re = (el_interval){-0.2, 0.2};
    tb.b.trace = (el_interval){-0.4, 0.4};
    tb.b.region_probability[EL_REGION_SPIRAL_SINK] = 0.5;
    tb.b.region_probability[EL_REGION_SPIRAL_SOURCE] = 0.5;
    el_verdict v;
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_verdict_compute(&f.modes, &f.model, &tb.b, 0.95, &v, &f.warnings,
                                        &err),
                     EL_OK);
    /* The bounds cannot decide: undecided (not marginal, which is kept for
     * a point estimate on the boundary), for the cause "bounds". */
    assert_int_equal(v.stability, EL_UNDECIDED);
    assert_string_equal(v.stability_name, "undecided");
    assert_int_equal(v.cause, EL_CAUSE_BOUNDS);
    assert_string_equal(el_verdict_cause_code(v.cause), "bounds");
    assert_true(v.ambiguous);
    assert_int_equal(v.n_marginal_oscillatory, 2);
    assert_true(has_warning(&f.warnings, "stability boundary Re lambda = 0 for mode 1"));
    /* Words for the number: a count of the 100 replicates, no bare
     * probability. */
    assert_true(has_warning(&f.warnings, "decays in 50 of 100 bootstrap replicates"));
    assert_false(has_warning(&f.warnings, "P(stable) ="));
    assert_true(has_warning(&f.warnings, "a longer log"));
    assert_true(has_warning(&f.warnings, "trace = 0"));
    fitted_free(&f);
}

/* Stable for sure, but node or spiral is not settled: the discriminant
 * line is named. */
static void test_boot_plane_ambiguous(void **state)
{
    (void)state;
    fitted f;
    fit_spiral_sink(&f);
    test_boot tb;
    boot_init(&tb, 1.0);
    tb.b.discriminant = (el_interval){-2.0, 0.5};
    tb.b.region_probability[EL_REGION_SPIRAL_SINK] = 0.7;
    tb.b.region_probability[EL_REGION_SINK] = 0.3;
    el_verdict v;
    assert_int_equal(el_verdict_compute(&f.modes, &f.model, &tb.b, 0.95, &v, &f.warnings,
                                        NULL),
                     EL_OK);
    assert_int_equal(v.stability, EL_STABLE);
    assert_true(v.ambiguous);
    assert_int_equal(v.cause, EL_CAUSE_TYPE_OPEN);   /* the word stays "stable" */
    assert_true(has_warning(&f.warnings, "discriminant"));
    assert_true(has_warning(&f.warnings, "next most likely: sink"));
    fitted_free(&f);
}

/* Per-mode replicates decide the side of a mode: 90 of 100 below zero is
 * not enough at level 0.95; bounds too wide draw the undetermined-mode
 * warning (damping interval 0.6 > 0.5, frequency interval > frequency). */
static void test_boot_samples_and_wide(void **state)
{
    (void)state;
    fitted f;
    fit_spiral_sink(&f);
    test_boot tb;
    boot_init(&tb, 0.9);
    for (size_t r = 0; r < 100; r++)
        tb.samples[r] = r < 90 ? -0.1 : 0.1;
    tb.b.lambda_re = tb.samples;
    tb.bounds[0].re = (el_interval){-0.1, 0.1};
    tb.bounds[0].damping_ratio = (el_interval){0.0, 0.6};
    tb.bounds[0].frequency_hz = (el_interval){0.05, 0.5};
    el_verdict v;
    assert_int_equal(el_verdict_compute(&f.modes, &f.model, &tb.b, 0.95, &v, &f.warnings,
                                        NULL),
                     EL_OK);
    assert_int_equal(v.n_marginal_oscillatory, 2);
    assert_true(v.ambiguous);
    assert_true(has_warning(&f.warnings, "not determined"));
    assert_true(has_warning(&f.warnings, "frequency bounds are wider"));
    assert_true(has_warning(&f.warnings, "damping-ratio bounds span"));
    /* Its JSON code is "ambiguous" (docs/json.md): its remedy's words
     * ("a lower rank") must not make it "rank_limited". */
    for (size_t i = 0; i < f.warnings.count; i++)
        if (strstr(f.warnings.items[i], "not determined by the data") != NULL)
            assert_string_equal(el_warning_code(f.warnings.items[i]), "ambiguous");
    /* Likewise correlated residuals whose cause may be the lowered rank
     * (el_validate's wording): "residuals_correlated", not "rank_limited". */
    assert_string_equal(el_warning_code("residuals strongly correlated (Ljung-Box p < 1e-16 on "
                                        "channel acc_2), which the lowered rank (4 of 6 states: "
                                        "the directions left out stay in the residuals) can "
                                        "cause by itself: no sign of missing lags"),
                        "residuals_correlated");
    el_warnings_free(&f.warnings);
    /* 97 of 100 below zero: the mode is on the stable side. */
    for (size_t r = 0; r < 100; r++)
        tb.samples[r] = r < 97 ? -0.1 : 0.1;
    tb.b.p_stable = 0.97;
    assert_int_equal(el_verdict_compute(&f.modes, &f.model, &tb.b, 0.95, &v, &f.warnings,
                                        NULL),
                     EL_OK);
    assert_int_equal(v.n_stable_oscillatory, 2);
    assert_int_equal(v.stability, EL_STABLE);
    fitted_free(&f);
}

/* The words and codes are a contract (JSON verdict.stability and
 * verdict.cause, docs/cli.md): each value has its own text, and a value
 * out of range is "unknown", never a neighbour's word. */
static void test_words_and_codes(void **state)
{
    (void)state;
    /* JSON warning codes of the estimator fallbacks (el_assess.c's
     * messages, docs/json.md): the plain fallback, and the one on white
     * data, which is no_dynamics. */
    assert_string_equal(el_warning_code("the subspace estimator gave no model (no persistent "
                                        "mode): instrumental variables instead"),
                        "estimator_fallback");
    assert_string_equal(el_warning_code("iv gave no model (singular); the data shows no "
                                        "dynamics, so least squares stands in"),
                        "no_dynamics");
    assert_string_equal(el_stability_name(EL_STABLE), "stable");
    assert_string_equal(el_stability_name(EL_UNSTABLE), "unstable");
    assert_string_equal(el_stability_name(EL_MARGINAL), "marginal");
    assert_string_equal(el_stability_name(EL_UNDECIDED), "undecided");
    assert_string_equal(el_stability_name((el_stability)9), "unknown");
    assert_string_equal(el_verdict_cause_code(EL_CAUSE_DRIFT), "drift");
    assert_string_equal(el_verdict_cause_code(EL_CAUSE_LEVEL_SHIFT), "level_shift");
    assert_string_equal(el_verdict_cause_code(EL_CAUSE_NO_BOOTSTRAP), "no_bootstrap");
    assert_string_equal(el_verdict_cause_code((el_verdict_cause)99), "unknown");
    el_verdict v;
    memset(&v, 0, sizeof v);
    el_verdict_set_undecided(&v, EL_CAUSE_ESTIMATORS_DISAGREE);
    assert_int_equal(v.stability, EL_UNDECIDED);
    assert_string_equal(v.stability_name, "undecided");
    assert_true(v.ambiguous);
    assert_int_equal(v.cause, EL_CAUSE_ESTIMATORS_DISAGREE);
}

static void test_bad_arguments(void **state)
{
    (void)state;
    fitted f;
    fit_spiral_sink(&f);
    test_boot tb;
    boot_init(&tb, 0.99);
    el_verdict v;
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_verdict_compute(&f.modes, &f.model, &tb.b, 0.3, &v, NULL, &err),
                     EL_ERR_USAGE);
    assert_string_equal(err.option, "--level");
    tb.b.n_modes = 2;
    assert_int_equal(el_verdict_compute(&f.modes, &f.model, &tb.b, 0.95, &v, NULL, &err),
                     EL_ERR_INTERNAL);
    /* Without a bootstrap the level is not used. */
    assert_int_equal(el_verdict_compute(&f.modes, &f.model, NULL, 0.0, &v, NULL, &err),
                     EL_OK);
    fitted_free(&f);
}

/* Hand-built modes for the n-state naming and the Nyquist rule. */
static void test_nstate_types_and_nyquist(void **state)
{
    (void)state;
    el_model model = {0};
    model.dt = 0.1;
    model.state_dim = 3;
    el_mode md[2];
    memset(md, 0, sizeof md);
    el_modes modes = {.n_modes = 2, .n_eigenvalues = 3, .n_channels = 3, .modes = md};
    md[0].pair = 1;
    md[0].lambda_re = -0.2;
    md[0].lambda_im = 1.0;
    md[1].lambda_re = -1.0;
    el_verdict v;
    el_warnings w = {0};
    assert_int_equal(el_verdict_compute(&modes, &model, NULL, 0.95, &v, &w, NULL), EL_OK);
    assert_string_equal(v.type, "spiral sink");
    assert_false(v.has_plane);
    assert_int_equal(v.n_stable_oscillatory, 2);
    assert_int_equal(v.n_stable_real, 1);
    /* A pair on the imaginary axis within 1e-9/dt: marginal. */
    md[0].lambda_re = 1e-9;
    assert_int_equal(el_verdict_compute(&modes, &model, NULL, 0.95, &v, &w, NULL), EL_OK);
    assert_string_equal(v.type, "marginal");
    assert_int_equal(v.stability, EL_MARGINAL);
    assert_string_equal(v.stability_name, "marginal");
    assert_int_equal(v.cause, EL_CAUSE_ON_BOUNDARY);
    assert_close(v.marginal_tolerance, 1e-8, 1e-15, 0.0);
    /* A growing real mode (least damped, so first) with the stable pair:
     * saddle, unstable. */
    md[0] = (el_mode){.lambda_re = 0.5};
    md[1] = (el_mode){.pair = 1, .lambda_re = -0.2, .lambda_im = 1.0};
    assert_int_equal(el_verdict_compute(&modes, &model, NULL, 0.95, &v, &w, NULL), EL_OK);
    assert_string_equal(v.type, "saddle");
    assert_int_equal(v.stability, EL_UNSTABLE);
    assert_int_equal(v.n_unstable_real, 1);
    assert_int_equal(v.n_stable_oscillatory, 2);
    /* Nyquist: ambiguous with a warning, whatever the rest says. */
    md[0] = (el_mode){.lambda_re = -0.5, .lambda_im = 10 * TEST_PI, .at_nyquist = 1,
                      .frequency_hz = NAN, .damping_ratio = NAN, .decay_rate = 0.5};
    md[1] = (el_mode){.lambda_re = -1.0};
    el_warnings_free(&w);
    assert_int_equal(el_verdict_compute(&modes, &model, NULL, 0.95, &v, &w, NULL), EL_OK);
    assert_true(v.ambiguous);
    assert_true(has_warning(&w, "Nyquist"));
    assert_int_equal(v.stability, EL_STABLE);
    assert_int_equal(v.cause, EL_CAUSE_NYQUIST);
    el_warnings_free(&w);
}

/* The near-unit-root rule (el_verdict.h, EL_VERDICT_UNIT_ROOT_T: the
 * Dickey-Fuller 5% critical value with a constant, -2.86, MacKinnon 2010,
 * recalled from memory). A sink with a slow real root (-0.05 and -1 1/s,
 * closed-form samples) and hand-made replicates of the slow root spread
 * evenly, 0.001 1/s apart, around -0.05: all below zero (P(stable) 1),
 * but the interquartile range (Hyndman-Fan type 7: x at ranks 24.75 and
 * 74.25, 0.0495 apart) gives a robust sd of 0.0495 / 1.349 = 0.03669 and
 * t = -0.05 / 0.03669 = -1.3626: not "stable", cause near_unit_root.
 * The same spread ten times narrower gives t = -13.6: "stable" stands.
 * Tolerance 1e-9 relative: t is a ratio of a fitted root (exact samples,
 * rounding ~1e-12) and a spread computed exactly from the samples. */
static void test_near_unit_root(void **state)
{
    (void)state;
    const double a[4] = {-0.05, 0.0, 0.0, -1.0};
    fitted f;
    fit_plane_system(a, &f);
    el_warnings_free(&f.warnings);
    assert_int_equal(f.modes.n_modes, 2);
    assert_close(f.modes.modes[0].lambda_re, -0.05, 1e-9, 0.0);
    double samples[200];
    el_mode_bounds bounds[2];
    memset(bounds, 0, sizeof bounds);
    el_boot_result b;
    memset(&b, 0, sizeof b);
    b.replicates = 100;
    b.level = 0.95;
    b.n_modes = 2;
    b.bounds = bounds;
    b.p_stable = 1.0;
    b.lambda_re = samples;
    bounds[0].re = (el_interval){-0.0995, -0.0005};
    bounds[1].re = (el_interval){-1.1, -0.9};
    for (size_t r = 0; r < 100; r++) {
        samples[2 * r] = -0.05 + ((double)r - 49.5) * 0.001;
        samples[2 * r + 1] = -1.0;
    }
    el_verdict v;
    assert_int_equal(el_verdict_compute(&f.modes, &f.model, &b, 0.95, &v, &f.warnings, NULL),
                     EL_OK);
    double t_want = f.modes.modes[0].lambda_re / (0.0495 / 1.349);
    assert_close(v.unit_root_t, t_want, 1e-9, 0.0);
    assert_int_equal(v.stability, EL_UNDECIDED);
    assert_int_equal(v.cause, EL_CAUSE_NEAR_UNIT_ROOT);
    assert_string_equal(el_verdict_cause_code(v.cause), "near_unit_root");
    assert_true(has_warning(&f.warnings, "random walk"));
    assert_false(has_warning(&f.warnings, "neither stable nor unstable"));
    el_warnings_free(&f.warnings);
    for (size_t r = 0; r < 100; r++)
        samples[2 * r] = -0.05 + ((double)r - 49.5) * 0.0001;
    assert_int_equal(el_verdict_compute(&f.modes, &f.model, &b, 0.95, &v, &f.warnings, NULL),
                     EL_OK);
    assert_close(v.unit_root_t, 10.0 * t_want, 1e-9, 0.0);
    assert_int_equal(v.stability, EL_STABLE);
    assert_false(v.ambiguous && v.cause == EL_CAUSE_NEAR_UNIT_ROOT);
    /* The critical value follows the bounds' level (MacKinnon 2010's 1%,
     * 5% and 10% asymptotic values with a constant, recalled from memory). */
    assert_close(el_verdict_unit_root_critical(0.99), -3.43, 0.0, 0.0);
    assert_close(el_verdict_unit_root_critical(0.95), -2.86, 0.0, 0.0);
    assert_close(el_verdict_unit_root_critical(0.90), -2.57, 0.0, 0.0);
    /* The spread scaled so that t = -2.9 (to the 1e-3 of the rounded
     * -1.3626 above): stable at the 95% level, not at the 99% level. */
    for (size_t r = 0; r < 100; r++)
        samples[2 * r] = -0.05 + ((double)r - 49.5) * 0.001 * (1.3626 / 2.9);
    el_warnings_free(&f.warnings);
    assert_int_equal(el_verdict_compute(&f.modes, &f.model, &b, 0.95, &v, &f.warnings, NULL),
                     EL_OK);
    assert_close(v.unit_root_t, -2.9, 1e-3, 0.0);
    assert_int_equal(v.stability, EL_STABLE);
    assert_int_equal(el_verdict_compute(&f.modes, &f.model, &b, 0.99, &v, &f.warnings, NULL),
                     EL_OK);
    assert_int_equal(v.cause, EL_CAUSE_NEAR_UNIT_ROOT);
    fitted_free(&f);
}

/* iv/ssi given more states than the rank test supports (--rank): an
 * "unstable" stands only when the least damped mode is determined by the
 * data and grows in its own replicates. A spiral source (0.5 +/- 2i 1/s)
 * with hand-made bounds: narrow and growing -> unstable; damping bounds
 * spanning 1.0 (> 0.5) or replicates of the mode on both sides of zero ->
 * undecided, cause rank_forced; the same with the rank chosen by the test,
 * or not above the tested rank -> unstable. Exact comparisons: the rule
 * reads counts and interval widths, no tolerance involved. */
static void test_rank_forced_unstable(void **state)
{
    (void)state;
    const double a[4] = {0.5, -2.0, 2.0, 0.5};
    fitted f;
    fit_plane_system(a, &f);
    el_warnings_free(&f.warnings);
    assert_int_equal(f.modes.n_modes, 1);
    test_boot tb;
    boot_init(&tb, 0.0);
    tb.b.has_plane = 0;
    tb.bounds[0].re = (el_interval){0.4, 0.6};
    tb.bounds[0].damping_ratio = (el_interval){-0.3, -0.2};
    tb.bounds[0].decay_rate = (el_interval){-0.6, -0.4};
    tb.b.lambda_re = tb.samples;
    for (size_t r = 0; r < 100; r++)
        tb.samples[r] = 0.5;
    f.model.rank = 2;
    f.model.tested_rank = 1;
    f.model.rank_was_auto = 0;
    el_verdict v;
    assert_int_equal(el_verdict_compute(&f.modes, &f.model, &tb.b, 0.95, &v, &f.warnings,
                                        NULL), EL_OK);
    assert_int_equal(v.stability, EL_UNSTABLE);
    tb.bounds[0].damping_ratio = (el_interval){-0.9, 0.1};
    assert_int_equal(el_verdict_compute(&f.modes, &f.model, &tb.b, 0.95, &v, &f.warnings,
                                        NULL), EL_OK);
    assert_int_equal(v.stability, EL_UNDECIDED);
    assert_int_equal(v.cause, EL_CAUSE_RANK_FORCED);
    assert_string_equal(el_verdict_cause_code(v.cause), "rank_forced");
    assert_true(has_warning(&f.warnings, "more states than the rank test supports"));
    el_warnings_free(&f.warnings);
    tb.bounds[0].damping_ratio = (el_interval){-0.3, -0.2};
    for (size_t r = 0; r < 100; r += 2)
        tb.samples[r] = -0.5;
    assert_int_equal(el_verdict_compute(&f.modes, &f.model, &tb.b, 0.95, &v, &f.warnings,
                                        NULL), EL_OK);
    assert_int_equal(v.cause, EL_CAUSE_RANK_FORCED);
    f.model.rank_was_auto = 1;
    assert_int_equal(el_verdict_compute(&f.modes, &f.model, &tb.b, 0.95, &v, &f.warnings,
                                        NULL), EL_OK);
    assert_int_equal(v.stability, EL_UNSTABLE);
    f.model.rank_was_auto = 0;
    f.model.tested_rank = 2;
    assert_int_equal(el_verdict_compute(&f.modes, &f.model, &tb.b, 0.95, &v, &f.warnings,
                                        NULL), EL_OK);
    assert_int_equal(v.stability, EL_UNSTABLE);
    fitted_free(&f);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_six_regions),
        cmocka_unit_test(test_plane_boundaries),
        cmocka_unit_test(test_lorenz_origin),
        cmocka_unit_test(test_lynx_moran),
        cmocka_unit_test(test_boot_stable),
        cmocka_unit_test(test_boot_ambiguous),
        cmocka_unit_test(test_boot_plane_ambiguous),
        cmocka_unit_test(test_boot_samples_and_wide),
        cmocka_unit_test(test_words_and_codes),
        cmocka_unit_test(test_bad_arguments),
        cmocka_unit_test(test_nstate_types_and_nyquist),
        cmocka_unit_test(test_near_unit_root),
        cmocka_unit_test(test_rank_forced_unstable),
    };
    return cmocka_run_group_tests_name("verdict", tests, NULL, NULL);
}
