/* test_wide: the fast paths for wide states (issue 13 item 5) against the
 * reference paths they replace, on moderate sizes where both run: the
 * Cholesky inverse against the eigenvector pseudo-inverse, the BLAS
 * elimination against LAPACK's dgesv, the engine's re-adding in runs
 * against pair by pair, and a whole bootstrap with the wide paths forced
 * (el_boot_options.wide_states = 1) against the default on a ring of 40
 * channels. The paths differ only in rounding, so each tolerance is a
 * rounding tolerance; a wrong fast path (a lost term, another matrix)
 * moves the numbers by orders of magnitude more. */
#include "el_test.h"

#include <lapacke.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "el_boot_engine.h"
#include "el_boot_match.h"
#include "el_est_common.h"
#include "el_fit.h"
#include "el_modes.h"
#include "el_resample.h"
#include "el_rng.h"

/* S = M M' / k + ridge I from a random n x k matrix M (SPD when ridge > 0
 * or k >= n; rank min(n, k) when ridge == 0). */
static double *random_gram(size_t n, size_t k, double ridge, uint64_t seed)
{
    double *m = malloc(n * k * sizeof(double)), *s = malloc(n * n * sizeof(double));
    assert_non_null(m);
    assert_non_null(s);
    el_rng rng;
    el_rng_seed(&rng, seed, 0);
    for (size_t i = 0; i < n * k; i++)
        m[i] = el_rng_normal(&rng);
    for (size_t j = 0; j < n; j++)
        for (size_t i = 0; i < n; i++) {
            double v = 0.0;
            for (size_t q = 0; q < k; q++)
                v += m[i + q * n] * m[j + q * n];
            s[i + j * n] = v / (double)k + (i == j ? ridge : 0.0);
        }
    free(m);
    return s;
}

/* The Cholesky inverse equals el_est_sym_fun's pseudo-inverse (the
 * eigenvector path below EL_EST_WIDE_ORDER) and S S^-1 = I. */
static void test_chol_inverse_matches_eigen(void **state)
{
    (void)state;
    size_t n = 80;
    double *s = random_gram(n, 120, 0.1, 7);
    double *inv = malloc(n * n * sizeof(double)), *ref = malloc(n * n * sizeof(double));
    double *work = malloc(el_est_sym_fun_work(n) * sizeof(double));
    assert_true(inv && ref && work);
    assert_int_equal(el_est_sym_inverse_chol(n, s, n, inv, n, work), (int)n);
    assert_int_equal(el_est_sym_fun(n, s, n, -1.0, ref, n, work), (int)n);
    double top = 0.0;
    for (size_t i = 0; i < n * n; i++)
        top = fmax(top, fabs(ref[i]));
    /* Both are backward stable: entries agree to about cond(S) n eps of
     * the largest; S's condition here is below 100 (eigenvalues of a
     * Wishart(120)/120 of order 80 lie in about [0.03, 3.4], plus the
     * ridge), so 1e-10 leaves a factor 50 above that. */
    for (size_t i = 0; i < n * n; i++)
        assert_close(inv[i], ref[i], 0.0, 1e-10 * top);
    /* Closed form: S S^-1 = I. */
    for (size_t j = 0; j < n; j++)
        for (size_t i = 0; i < n; i++) {
            double v = 0.0;
            for (size_t q = 0; q < n; q++)
                v += s[i + q * n] * inv[q + j * n];
            assert_close(v, i == j ? 1.0 : 0.0, 0.0, 1e-11);
        }
    free(s);
    free(inv);
    free(ref);
    free(work);
}

/* A singular S is refused by the Cholesky path, and el_est_sym_fun above
 * EL_EST_WIDE_ORDER then still gives the pseudo-inverse of the kept
 * eigenvalues (fewer than n): the fast path never turns a rank-deficient
 * instrument Gram into an inverse. */
static void test_chol_refuses_singular(void **state)
{
    (void)state;
    size_t n = EL_EST_WIDE_ORDER + 4, k = n / 2;
    double *s = random_gram(n, k, 0.0, 11);
    double *out = malloc(n * n * sizeof(double));
    double *work = malloc(el_est_sym_fun_work(n) * sizeof(double));
    assert_true(out && work);
    assert_int_equal(el_est_sym_inverse_chol(n, s, n, out, n, work), 0);
    int kept = el_est_sym_fun(n, s, n, -1.0, out, n, work);
    assert_int_equal(kept, (int)k);
    /* A well-conditioned one of the same order takes the Cholesky path:
     * every eigenvalue kept. */
    free(s);
    s = random_gram(n, 2 * n, 0.1, 12);
    assert_int_equal(el_est_sym_fun(n, s, n, -1.0, out, n, work), (int)n);
    free(s);
    free(out);
    free(work);
}

/* The BLAS elimination (from EL_EST_WIDE_GAUSS) against LAPACK's dgesv
 * (partial pivoting too), and a singular matrix refused. */
static void test_gauss_wide_matches_lapack(void **state)
{
    (void)state;
    size_t n = EL_EST_WIDE_GAUSS + 22, k = 37;
    double *a = malloc(n * n * sizeof(double)), *a2 = malloc(n * n * sizeof(double));
    double *b = malloc(n * k * sizeof(double)), *b2 = malloc(n * k * sizeof(double));
    lapack_int *ipiv = malloc(n * sizeof(lapack_int));
    assert_true(a && a2 && b && b2 && ipiv);
    el_rng rng;
    el_rng_seed(&rng, 21, 0);
    for (size_t i = 0; i < n * n; i++)
        a[i] = el_rng_normal(&rng);
    for (size_t i = 0; i < n * k; i++)
        b[i] = el_rng_normal(&rng);
    memcpy(a2, a, n * n * sizeof(double));
    memcpy(b2, b, n * k * sizeof(double));
    assert_int_equal(el_est_gauss_solve(n, a, n, b, n, k), 0);
    assert_int_equal(LAPACKE_dgesv(LAPACK_COL_MAJOR, (lapack_int)n, (lapack_int)k, a2,
                                   (lapack_int)n, ipiv, b2, (lapack_int)n), 0);
    /* A Gaussian n x n matrix has condition about n (Edelman 1988,
     * recalled from memory): 150 here, so solutions agree to about
     * 150 n eps ~ 1e-11 of their size; 1e-9 leaves a margin of 100. */
    double top = 0.0;
    for (size_t i = 0; i < n * k; i++)
        top = fmax(top, fabs(b2[i]));
    for (size_t i = 0; i < n * k; i++)
        assert_close(b[i], b2[i], 0.0, 1e-9 * top);
    /* Two equal rows: singular, refused. */
    el_rng_seed(&rng, 22, 0);
    for (size_t i = 0; i < n * n; i++)
        a[i] = el_rng_normal(&rng);
    for (size_t j = 0; j < n; j++)
        a[1 + j * n] = a[0 + j * n];
    assert_int_equal(el_est_gauss_solve(n, a, n, b, n, k), 1);
    free(a);
    free(a2);
    free(b);
    free(b2);
    free(ipiv);
}

/* A ring of p coupled damped channels driven by noise (the wide log of
 * bench/bench_track.sh, smaller): channel-major values. */
static double *ring_values(size_t p, size_t n, uint64_t seed)
{
    double *v = malloc(p * n * sizeof(double)), *x = calloc(p, sizeof(double));
    double *y = malloc(p * sizeof(double));
    assert_true(v && x && y);
    el_rng rng;
    el_rng_seed(&rng, seed, 0);
    for (size_t k = 0; k < n; k++) {
        for (size_t c = 0; c < p; c++)
            y[c] = 0.9 * x[c] + 0.05 * x[(c + p - 1) % p] + el_rng_normal(&rng);
        for (size_t c = 0; c < p; c++) {
            x[c] = y[c];
            v[c * n + k] = x[c];
        }
    }
    free(x);
    free(y);
    return v;
}

/* The engine's sums with re-adding in runs (wide) equal the sums pair by
 * pair, on blocks that end between stored prefixes. */
static void test_engine_runs_match_pairs(void **state)
{
    (void)state;
    size_t r = 12, n_states = 700;
    double *w = ring_values(r, n_states, 5);
    /* Row-major states (r doubles per state) from the channel-major values. */
    double *st = malloc(r * n_states * sizeof(double));
    assert_non_null(st);
    for (size_t k = 0; k < n_states; k++)
        for (size_t c = 0; c < r; c++)
            st[k * r + c] = w[c * n_states + k];
    el_boot_dims dims = { r, 0, 0 };
    const el_boot_provider *prov = el_boot_provider_ls();
    el_boot_engine *e = NULL;
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_boot_engine_create_strided(prov, &dims, st, n_states, 16, &e, &err),
                     EL_OK);
    size_t d = el_boot_engine_features(e), wd = el_boot_engine_work_doubles(e);
    double *plain = malloc(d * sizeof(double)), *runs = malloc(d * sizeof(double));
    double *work = malloc(wd * sizeof(double));
    assert_true(plain && runs && work);
    el_boot_block blocks[4] = { { 3, 50 }, { 101, 37 }, { 400, 99 }, { 17, 250 } };
    el_boot_engine_sum(e, blocks, 4, plain, work);
    el_boot_engine_set_runs(e, 1);
    el_boot_engine_sum(e, blocks, 4, runs, work);
    /* Sums of about 436 products of unit-variance (ring: variance ~6)
     * values, features up to ~3000 in size: rounding of the two orders
     * differs by ~1e-12 of that; 1e-9 absolute leaves 1000 times more. */
    double top = 0.0;
    for (size_t f = 0; f < d; f++)
        top = fmax(top, fabs(plain[f]));
    for (size_t f = 0; f < d; f++)
        assert_close(runs[f], plain[f], 0.0, 1e-12 * top + 1e-9);
    el_boot_engine_destroy(e);
    free(plain);
    free(runs);
    free(work);
    free(st);
    free(w);
}

/* The wide engine (el_boot_engine_create_wide: no prefix table, float
 * tables of the planned block and of the cut block) sums what the prefix
 * engine sums, on replicates drawn on its grid (every block from a table
 * row) and on blocks off the grid (summed from the states). */
static void test_wide_engine_matches_prefix(void **state)
{
    (void)state;
    size_t r = 12, n_states = 700, stride = 8, block = 48;
    double *w = ring_values(r, n_states, 6);
    double *st = malloc(r * n_states * sizeof(double));
    assert_non_null(st);
    for (size_t k = 0; k < n_states; k++)
        for (size_t c = 0; c < r; c++)
            st[k * r + c] = w[c * n_states + k];
    el_boot_dims dims = { r, 0, 0 };
    const el_boot_provider *prov = el_boot_provider_ls();
    el_boot_engine *ref = NULL, *wide = NULL;
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_boot_engine_create_strided(prov, &dims, st, n_states, stride, &ref,
                                                   &err), EL_OK);
    assert_int_equal(el_boot_engine_create_wide(prov, &dims, st, n_states, stride, &wide,
                                                &err), EL_OK);
    assert_int_equal(el_boot_engine_stride(wide), stride);
    assert_int_equal(el_boot_engine_pairs(wide), el_boot_engine_pairs(ref));
    assert_int_equal(el_boot_engine_plan_blocks(wide, block, &err), EL_OK);
    size_t d = el_boot_engine_features(ref), m = el_boot_engine_pairs(ref);
    size_t wd = el_boot_engine_work_doubles(ref);
    assert_true(wd >= el_boot_engine_work_doubles(wide));
    double *a = malloc(d * sizeof(double)), *b = malloc(d * sizeof(double));
    double *work = malloc(wd * sizeof(double));
    el_boot_block *blocks = malloc((m / block + 2) * sizeof(el_boot_block));
    assert_true(a && b && work && blocks);
    el_rng rng;
    el_rng_seed(&rng, 11, 0);
    for (int rep = 0; rep < 40; rep++) {
        size_t nb = el_boot_draw_blocks_grid(&rng, m, block, stride, blocks);
        if (rep % 4 == 3) /* off the grid and not of a planned length */
            blocks[0] = (el_boot_block){ 5 + (size_t)rep, 31 };
        el_boot_engine_sum(ref, blocks, nb, a, work);
        el_boot_engine_sum(wide, blocks, nb, b, work);
        /* Features are sums over ~700 pairs of products of values of
         * variance ~6 (sizes up to ~4000); a block's centred sum is
         * O(sqrt(48) 6) = O(50) per feature, its float rounding 6e-8 of
         * that (3e-6) per block, ~15 blocks: 1e-4 absolute is the float
         * bound with a factor 2; the double paths alone agree to 1e-9.
         * A lost or doubled block moves a feature by O(50). */
        for (size_t f = 0; f < d; f++)
            assert_close(b[f], a[f], 0.0, 1e-4);
    }
    /* The full sample, summed from the states. */
    el_boot_block all = { 0, m };
    el_boot_engine_sum(ref, &all, 1, a, work);
    el_boot_engine_sum(wide, &all, 1, b, work);
    for (size_t f = 0; f < d; f++)
        assert_close(b[f], a[f], 0.0, 1e-9 * fmax(1.0, fabs(a[f])));
    el_boot_engine_destroy(ref);
    el_boot_engine_destroy(wide);
    free(a);
    free(b);
    free(work);
    free(blocks);
    free(st);
    free(w);
}

static char *ring_names[40];
static char *ring_units[40];
static char ring_name_buf[40][8];

static void ring_series(el_series *s, double *values, size_t p, size_t n)
{
    memset(s, 0, sizeof *s);
    for (size_t c = 0; c < p; c++) {
        snprintf(ring_name_buf[c], sizeof ring_name_buf[c], "s%02u", (unsigned)(c % 100));
        ring_names[c] = ring_name_buf[c];
        ring_units[c] = (char *)"";
    }
    s->n_samples = n;
    s->n_channels = p;
    s->dt = 0.01;
    s->values = values;
    s->names = ring_names;
    s->units = ring_units;
    s->rows_used = n;
}

/* 40 channels that see three well separated damped oscillators (1, 3
 * and 7 Hz, damping ratios 0.05 to 0.1, each driven by white noise) through
 * a random mixing, plus sensor noise: channel-major values. Modes this far
 * apart never tie in the matching (two real eigenvalues between two real
 * modes cost the same either way round, and rounding then decides; a ring
 * of 40 channels has such ties, and any change of rounding moved whole
 * replicate distributions there). */
static double *mixed_values(size_t p, size_t n, double dt, uint64_t seed)
{
    const double hz[3] = { 1.0, 3.0, 7.0 }, zeta[3] = { 0.05, 0.08, 0.1 };
    double *v = malloc(p * n * sizeof(double)), mix[40 * 6], x[6] = {0};
    assert_non_null(v);
    assert_true(p <= 40);
    el_rng rng;
    el_rng_seed(&rng, seed, 0);
    for (size_t i = 0; i < p * 6; i++)
        mix[i] = el_rng_normal(&rng);
    for (size_t k = 0; k < n; k++) {
        for (size_t o = 0; o < 3; o++) {
            /* Exact discretisation of a pair: radius exp(-zeta w dt),
             * angle w sqrt(1 - zeta^2) dt. */
            double w = 2.0 * 3.14159265358979323846 * hz[o];
            double g = exp(-zeta[o] * w * dt), th = w * sqrt(1.0 - zeta[o] * zeta[o]) * dt;
            double a = x[2 * o], b = x[2 * o + 1];
            x[2 * o] = g * (cos(th) * a - sin(th) * b) + el_rng_normal(&rng);
            x[2 * o + 1] = g * (sin(th) * a + cos(th) * b) + el_rng_normal(&rng);
        }
        for (size_t c = 0; c < p; c++) {
            double y = 0.0;
            for (size_t s6 = 0; s6 < 6; s6++)
                y += mix[c + s6 * p] * x[s6];
            v[c * n + k] = y + 0.05 * el_rng_normal(&rng);
        }
    }
    return v;
}

/* Runs the bootstrap of the fitted model twice, wide paths at their
 * default threshold (not taken) and forced, and compares. */
static void compare_wide_forced(el_method method, el_resample_kind kind)
{
    size_t p = 40, n = 2000;
    double *values = mixed_values(p, n, 0.01, 9);
    el_series s;
    ring_series(&s, values, p, n);
    el_fit_options fit;
    el_fit_defaults(&fit);
    fit.method = method;
    fit.rank = 6;
    el_model model = {0};
    el_modes modes = {0};
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_fit(&s, &fit, &model, NULL, &err), EL_OK);
    assert_int_equal(el_modes_compute(&model, &modes, NULL, &err), EL_OK);
    assert_int_equal(model.rank, 6);
    el_boot_options opt;
    el_boot_defaults(&opt);
    opt.replicates = 120;
    opt.kind = kind;
    opt.seed = 77;
    el_boot_result ref = {0}, fast = {0};
    assert_int_equal(el_boot_run(&s, &fit, &model, &modes, &opt, &ref, NULL, &err), EL_OK);
    opt.wide_states = 1;
    assert_int_equal(el_boot_run(&s, &fit, &model, &modes, &opt, &fast, NULL, &err), EL_OK);
    assert_int_equal(fast.replicates, ref.replicates);
    assert_int_equal(fast.bias_corrected, ref.bias_corrected);
    /* The same draws through the same model: every model-based replicate
     * differs in rounding only (~1e-13 of the sampling rate 1/dt = 100
     * 1/s after the solves and the eigenvalues of well separated modes),
     * so do the bounds; 1e-8 1/s leaves five orders for amplification.
     * Moving blocks go through the wide engine's float tables: a block's
     * centred sum rounded to 6e-8 of itself, which the iv solve and the
     * eigenvalues amplify by its conditioning (measured: 7e-8 1/s at
     * most); 1e-5 1/s leaves two orders above that. Both are far below a
     * wrong path's effect (a lost feature, block or step moves a
     * replicate by its spread, ~0.1 1/s here). */
    double tol = kind == EL_RESAMPLE_BLOCKS ? 1e-5 : 1e-8;
    for (size_t i = 0; i < ref.replicates * modes.n_modes; i++) {
        assert_close(fast.lambda_re[i], ref.lambda_re[i], 0.0, tol);
        assert_close(fast.lambda_im[i], ref.lambda_im[i], 0.0, tol);
    }
    for (size_t q = 0; q < modes.n_modes; q++) {
        assert_close(fast.bounds[q].re.lo, ref.bounds[q].re.lo, 0.0, tol);
        assert_close(fast.bounds[q].re.hi, ref.bounds[q].re.hi, 0.0, tol);
    }
    assert_close(fast.p_stable, ref.p_stable, 0.0, 0.0);
    el_boot_free(&ref);
    el_boot_free(&fast);
    el_modes_free(&modes);
    el_model_free(&model);
    free(values);
}

/* Least squares with model-based replicates: every replicate and the bias
 * round simulate the series (model_replicate_wide) and sum by accumulate. */
static void test_wide_model_replicates(void **state)
{
    (void)state;
    compare_wide_forced(EL_METHOD_LS, EL_RESAMPLE_MODEL);
}

/* iv with moving blocks: LAPACK's eigenvalues (matched to the same modes:
 * no ties here), the wide engine (float tables of the block and cut
 * block sums, no prefix table) and the block grid on the engine's stride
 * (here the stride it was asked for: 6 states are far from the memory
 * cap). */
static void test_wide_iv_blocks(void **state)
{
    (void)state;
    compare_wide_forced(EL_METHOD_IV, EL_RESAMPLE_BLOCKS);
}

/* Residuals made per component for the block length (not stored: what a
 * long log gets, forced here with el_boot_options.resid_store_cells = 1)
 * give the same bootstrap, bit for bit, as stored residuals: the chunked
 * products are the same doubles (el_resample.c, resid_component). The
 * residuals reach the replicates only through the automatic block length,
 * so this catches a wrong residual series when it moves that length (the
 * Politis-White length is compared too); the replicates are compared bit
 * for bit, the claim the narrow logs' byte-for-byte tests rest on. */
static void test_streamed_residuals_bitwise(void **state)
{
    (void)state;
    size_t p = 8, n = 9000;
    double *values = mixed_values(p, n, 0.01, 21);
    el_series s;
    ring_series(&s, values, p, n);
    el_fit_options fit;
    el_fit_defaults(&fit);
    fit.method = EL_METHOD_IV;
    fit.rank = 6;
    el_model model = {0};
    el_modes modes = {0};
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_fit(&s, &fit, &model, NULL, &err), EL_OK);
    assert_int_equal(el_modes_compute(&model, &modes, NULL, &err), EL_OK);
    el_boot_options opt;
    el_boot_defaults(&opt);
    opt.replicates = 150;
    opt.seed = 5;
    el_boot_result ref = {0}, streamed = {0};
    assert_int_equal(el_boot_run(&s, &fit, &model, &modes, &opt, &ref, NULL, &err), EL_OK);
    opt.resid_store_cells = 1;
    assert_int_equal(el_boot_run(&s, &fit, &model, &modes, &opt, &streamed, NULL, &err), EL_OK);
    assert_true(ref.block_was_auto);
    assert_int_equal(streamed.block_length, ref.block_length);
    assert_int_equal(streamed.block_length_pw, ref.block_length_pw);
    assert_int_equal(streamed.replicates, ref.replicates);
    for (size_t i = 0; i < ref.replicates * modes.n_modes; i++) {
        assert_true(memcmp(&streamed.lambda_re[i], &ref.lambda_re[i], sizeof(double)) == 0);
        assert_true(memcmp(&streamed.lambda_im[i], &ref.lambda_im[i], sizeof(double)) == 0);
    }
    assert_true(memcmp(&streamed.p_stable, &ref.p_stable, sizeof(double)) == 0);
    el_boot_free(&ref);
    el_boot_free(&streamed);
    el_modes_free(&modes);
    el_model_free(&model);
    free(values);
}

/* el_boot_engine_sum_many (a batch of replicates reading the wide
 * engine's table a tile at a time) gives every replicate's sum bit for
 * bit as el_boot_engine_sum does, on grid draws and with blocks off the
 * grid (summed from the states): the wide bootstrap's replicates rest on
 * it being the same doubles. A tile added twice or a block left out
 * moves a feature by a block's sum, O(50) here. */
static void test_wide_sum_many_bitwise(void **state)
{
    (void)state;
    size_t r = 12, n_states = 700, stride = 8, block = 48, count = 5;
    double *w = ring_values(r, n_states, 7);
    double *st = malloc(r * n_states * sizeof(double));
    assert_non_null(st);
    for (size_t k = 0; k < n_states; k++)
        for (size_t c = 0; c < r; c++)
            st[k * r + c] = w[c * n_states + k];
    el_boot_dims dims = { r, 0, 0 };
    el_boot_engine *wide = NULL;
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_boot_engine_create_wide(el_boot_provider_ls(), &dims, st, n_states,
                                                stride, &wide, &err), EL_OK);
    assert_int_equal(el_boot_engine_plan_blocks(wide, block, &err), EL_OK);
    assert_true(el_boot_engine_is_wide(wide));
    size_t d = el_boot_engine_features(wide), m = el_boot_engine_pairs(wide);
    size_t wd = el_boot_engine_work_doubles(wide), nbmax = m / block + 2;
    double *one = malloc(d * sizeof(double)), *many = malloc(count * d * sizeof(double));
    double *work = malloc(wd * sizeof(double));
    el_boot_block *blocks = malloc(count * nbmax * sizeof(el_boot_block));
    assert_true(one && many && work && blocks);
    const el_boot_block *bl[5];
    size_t nb[5];
    double *sums[5];
    el_rng rng;
    el_rng_seed(&rng, 13, 0);
    for (size_t k = 0; k < count; k++) {
        bl[k] = blocks + k * nbmax;
        sums[k] = many + k * d;
        nb[k] = el_boot_draw_blocks_grid(&rng, m, block, stride, blocks + k * nbmax);
    }
    blocks[nbmax + 1] = (el_boot_block){ 9, 31 }; /* off the grid, unplanned length */
    el_boot_engine_sum_many(wide, bl, nb, count, sums, work);
    for (size_t k = 0; k < count; k++) {
        el_boot_engine_sum(wide, bl[k], nb[k], one, work);
        assert_true(memcmp(one, sums[k], d * sizeof(double)) == 0);
    }
    el_boot_engine_destroy(wide);
    free(one);
    free(many);
    free(work);
    free(blocks);
    free(st);
    free(w);
}

/* The matcher on 200 eigenvalue slots (the wide search with its lists of
 * columns): replicate eigenvalues that are the point modes moved by less
 * than a tenth of their smallest distance, in a shuffled order, are
 * matched each to its own mode (the unique optimum: any other assignment
 * moves some eigenvalue by more than the whole identity cost), so every
 * mode gets back exactly its replicate values. A wrong augmenting path
 * or potential gives some mode another mode's eigenvalue. */
static void test_match_wide_identity(void **state)
{
    (void)state;
    size_t nm = 120; /* 80 pairs and 40 real modes: 200 eigenvalues */
    el_mode *md = calloc(nm, sizeof(el_mode));
    double *re = malloc(200 * sizeof(double)), *im = malloc(200 * sizeof(double));
    double *mre = malloc(nm * sizeof(double)), *mim = malloc(nm * sizeof(double));
    size_t *perm = malloc(200 * sizeof(size_t));
    assert_true(md && re && im && mre && mim && perm);
    /* Point modes on a grid of spacing 1 (Re) by 1 (Im): every two at least
     * 1 apart; the moves below are at most 0.05. */
    for (size_t q = 0; q < nm; q++) {
        md[q].pair = q < 80;
        md[q].lambda_re = -(double)(q % 10) - 0.5;
        md[q].lambda_im = q < 80 ? 1.0 + (double)(q / 10) : 0.0;
        if (q >= 80)
            md[q].lambda_re = -(double)(q - 80) - 0.25;
    }
    el_modes point = { 0 };
    point.n_modes = nm;
    point.n_eigenvalues = 200;
    point.modes = md;
    el_rng rng;
    el_rng_seed(&rng, 17, 0);
    double tre[200], tim[200];
    size_t s = 0;
    for (size_t q = 0; q < nm; q++) {
        double dre = 0.05 * (2.0 * el_rng_uniform(&rng) - 1.0);
        double dim = md[q].pair ? 0.05 * (2.0 * el_rng_uniform(&rng) - 1.0) : 0.0;
        tre[s] = md[q].lambda_re + dre;
        tim[s++] = md[q].lambda_im + dim;
        if (md[q].pair) {
            tre[s] = md[q].lambda_re + dre;
            tim[s++] = -(md[q].lambda_im + dim);
        }
    }
    for (size_t j = 0; j < 200; j++)
        perm[j] = j;
    for (size_t j = 199; j > 0; j--) {
        size_t k = (size_t)el_rng_below(&rng, (uint64_t)(j + 1)), t = perm[j];
        perm[j] = perm[k];
        perm[k] = t;
    }
    for (size_t j = 0; j < 200; j++) {
        re[j] = tre[perm[j]];
        im[j] = tim[perm[j]];
    }
    el_boot_matcher *mt = NULL;
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_boot_matcher_create(&point, &mt, &err), EL_OK);
    int amb = -1;
    assert_int_equal(el_boot_match(mt, re, im, 200, mre, mim, &amb), 0);
    s = 0;
    for (size_t q = 0; q < nm; q++) {
        /* The mean of a pair's two equal folded values is that value. */
        assert_true(mre[q] == tre[s]);
        assert_true(mim[q] == fabs(tim[s]));
        s += md[q].pair ? 2 : 1;
    }
    /* Every swap of two modes costs about 2 more against a total of at
     * most 200 x 0.07: far from within 10%. */
    assert_int_equal(amb, 0);
    el_boot_matcher_destroy(mt);
    free(md);
    free(re);
    free(im);
    free(mre);
    free(mim);
    free(perm);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_chol_inverse_matches_eigen),
        cmocka_unit_test(test_chol_refuses_singular),
        cmocka_unit_test(test_gauss_wide_matches_lapack),
        cmocka_unit_test(test_engine_runs_match_pairs),
        cmocka_unit_test(test_wide_engine_matches_prefix),
        cmocka_unit_test(test_wide_sum_many_bitwise),
        cmocka_unit_test(test_match_wide_identity),
        cmocka_unit_test(test_wide_model_replicates),
        cmocka_unit_test(test_wide_iv_blocks),
        cmocka_unit_test(test_streamed_residuals_bitwise),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
