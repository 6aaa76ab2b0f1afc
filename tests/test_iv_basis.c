/* test_iv_basis: does the step-1 basis that iv's bootstrap replicates keep
 * fixed narrow its bounds? Checked against a brute-force refit: on one
 * simulated log of the calibration's spiral sink (bench/calibrate.c: two
 * channels, -0.3 +- 2i 1/s, dt 0.1 s, 2,000 samples; iv's automatic
 * multi-step state of 15 samples, 30 states reduced to rank 2), every
 * replicate is computed twice from the same moving-block draw of the
 * sample times: with the point fit's basis (what el_resample does) and
 * with the basis re-estimated from the replicate's own weighted step-1
 * Gram (el_est_s1_from_gram on the block-weighted rows of state and
 * past), then the same weighted window sums and iv's own solve. The
 * second is the ideal bootstrap the shortcut stands for
 * (docs/uncertainty.md, "iv's basis in the replicates"). */
#include "el_test.h"

#include <cblas.h>
#include <stdlib.h>
#include <string.h>

#include "el_boot_engine.h"
#include "el_est_common.h"
#include "el_estimator.h"
#include "el_fit.h"
#include "el_rng.h"

#define N_SAMPLES 2000
#define N_CH 2
#define DT_S 0.1
#define BLOCK 35          /* calibrate's automatic block length in this cell: 34.9 */
#define REPLICATES 40
#define RANK 2

/* The calibration's spiral sink: Ad = T B T^-1, B the exact discretisation
 * of [[-0.3, -2], [2, -0.3]] over 0.1 s, T the fixed mixing of
 * bench/calibrate.c (build_truth); unit process noise, 3,000 samples of
 * burn-in. */
static void simulate(double *values)
{
    double g = exp(-0.3 * DT_S), c = cos(2.0 * DT_S), s = sin(2.0 * DT_S);
    double b00 = g * c, b01 = -g * s, b10 = g * s, b11 = g * c;
    double t01 = 0.35 * sin(8.0), t10 = 0.35 * sin(4.0);
    double det = 1.0 - t01 * t10;
    /* Ad = T B T^-1 with T = [[1, t01], [t10, 1]]. */
    double tb00 = b00 + t01 * b10, tb01 = b01 + t01 * b11;
    double tb10 = t10 * b00 + b10, tb11 = t10 * b01 + b11;
    double a00 = (tb00 - tb01 * t10) / det, a01 = (tb01 - tb00 * t01) / det;
    double a10 = (tb10 - tb11 * t10) / det, a11 = (tb11 - tb10 * t01) / det;
    el_rng rng;
    el_rng_seed(&rng, 20261205u, 3);
    double x0 = 0.0, x1 = 0.0;
    for (size_t k = 0; k < 3000 + N_SAMPLES; k++) {
        if (k >= 3000) {
            values[k - 3000] = x0;
            values[N_SAMPLES + k - 3000] = x1;
        }
        double n0 = el_rng_normal(&rng), n1 = el_rng_normal(&rng);
        double y0 = a00 * x0 + a01 * x1 + n0, y1 = a10 * x0 + a11 * x1 + n1;
        x0 = y0;
        x1 = y1;
    }
}

/* Re lambda (1/s) of the least damped eigenvalue of the 2 x 2 a. */
static double least_damped_re(const double *a)
{
    double tr = a[0] + a[3], det = a[0] * a[3] - a[1] * a[2];
    double disc = 0.25 * tr * tr - det;
    if (disc < 0.0)
        return 0.5 * log(det) / DT_S;
    double mu = 0.5 * tr + (tr >= 0.0 ? sqrt(disc) : -sqrt(disc));
    double mu2 = det / mu;
    return log(fmax(fabs(mu), fabs(mu2))) / DT_S;
}

typedef struct {
    size_t lags, depth, d, q, rows, k0, m, n_win;
    const double *scaled;       /* N_CH x N_SAMPLES, scaled as the fit scales */
    double *row;                /* rows x (d + q): state then past, row-major */
    double *wrow, *gram, *mean, *s1work, *rho, *basis;
    double *states, *feat, *sum, *pwork, *a;
    const el_boot_provider *prov;
    el_boot_dims dims;
} rig;

/* Scaled sample k - back of channel c. */
static double at(const rig *g, size_t c, size_t k, size_t back)
{
    return g->scaled[c * N_SAMPLES + k - back];
}

/* The basis from the block-weighted step-1 Gram (weights per sample). */
static void weighted_basis(rig *g, const double *w)
{
    size_t cols = g->d + g->q;
    double tot = 0.0;
    memset(g->mean, 0, cols * sizeof(double));
    for (size_t i = 0; i < g->rows; i++) {
        double wi = w[g->k0 + i];
        tot += wi;
        for (size_t j = 0; j < cols; j++)
            g->mean[j] += wi * g->row[i * cols + j];
    }
    for (size_t j = 0; j < cols; j++)
        g->mean[j] /= tot;
    for (size_t i = 0; i < g->rows; i++) {
        double sw = sqrt(w[g->k0 + i]);
        for (size_t j = 0; j < cols; j++)
            g->wrow[i * cols + j] = sw * (g->row[i * cols + j] - g->mean[j]);
    }
    cblas_dsyrk(CblasColMajor, CblasLower, CblasNoTrans, (int)cols, (int)g->rows, 1.0,
                g->wrow, (int)cols, 0.0, g->gram, (int)cols);
    for (size_t j = 0; j < cols; j++)
        for (size_t i = 0; i < j; i++)
            g->gram[i + j * cols] = g->gram[j + i * cols];
    el_est_s1_result res;
    assert_int_equal(el_est_s1_from_gram(g->d, g->q, g->gram, NULL, 0, g->lags, RANK,
                                         g->rho, g->basis, &res, g->s1work), 0);
    assert_int_equal(res.rank, RANK);
}

/* iv's solve on the window sums weighted per sample (the sample of x),
 * in the coordinates of basis (d x RANK, leading dimension ldb): the
 * provider's features of the states p[t] = basis' z[K + t]. */
static double weighted_iv(rig *g, const double *basis, size_t ldb, const double *w)
{
    for (size_t t = 0; t <= g->m; t++)
        for (size_t j = 0; j < RANK; j++) {
            double v = 0.0;
            for (size_t col = 0; col < g->d; col++)
                v += basis[col + j * ldb] * at(g, col % N_CH, g->lags + t, col / N_CH);
            g->states[t * RANK + j] = v;
        }
    size_t nf = g->prov->n_features(&g->dims);
    memset(g->sum, 0, nf * sizeof(double));
    for (size_t u = 0; u < g->n_win; u++) {
        double wu = w[g->lags + u + 2 * g->lags + 2];
        if (wu == 0.0)
            continue;
        g->prov->features(&g->dims, g->states + u * RANK, g->feat);
        for (size_t f = 0; f < nf; f++)
            g->sum[f] += wu * g->feat[f];
    }
    assert_int_equal(g->prov->solve(&g->dims, g->sum, g->a, NULL, NULL, g->pwork), 0);
    return least_damped_re(g->a);
}

/* Largest principal angle (degrees) between span(u) and span(v), both
 * d x RANK orthonormal. */
static double largest_angle_deg(size_t d, const double *u, size_t ldu, const double *v)
{
    double c[RANK * RANK];
    for (size_t j = 0; j < RANK; j++)
        for (size_t i = 0; i < RANK; i++) {
            double s = 0.0;
            for (size_t k = 0; k < d; k++)
                s += u[k + i * ldu] * v[k + j * d];
            c[i + j * RANK] = s;
        }
    /* Smallest singular value of the 2 x 2 c: sqrt of the smaller
     * eigenvalue of c' c. */
    double p = c[0] * c[0] + c[1] * c[1], r = c[2] * c[2] + c[3] * c[3];
    double q = c[0] * c[2] + c[1] * c[3];
    double lo = 0.5 * (p + r) - sqrt(0.25 * (p - r) * (p - r) + q * q);
    double smin = sqrt(fmax(lo, 0.0));
    return acos(fmin(smin, 1.0)) * 180.0 / 3.14159265358979323846;
}

/* The replicates with the basis held and with it re-estimated. The point
 * first: with unit weights the held-basis computation is iv's own fit
 * (Re lambda of model->a_reduced to 1e-9 relative, rounding of sums over
 * 1,950 windows), and the re-estimated basis spans the model's (angle
 * below 1e-5 degrees: the same Gram up to the order of its sums). Then
 * 40 replicates of moving blocks of 35 samples:
 *  - the re-estimated basis moves (mean largest principal angle above
 *    0.5 degrees; 2-2.5 measured on three logs of a numpy version of this
 *    check), so the comparison below is not empty;
 *  - the replicate's Re lambda moves with it by little: the root mean
 *    square difference of the two is below 0.1 of the spread of the
 *    held-basis replicates (measured 0.023-0.025 on those three logs,
 *    the same order here). For the basis to explain the measured
 *    shortfall of the bounds (width / spread 0.84, calibrate --method iv
 *    --case spiral-sink --length 2000 --logs 240), the replicates would
 *    have to spread 19 % more with it, a difference of at least 0.6 of
 *    the spread if uncorrelated with the held-basis value; 0.1 leaves
 *    four times the measured value and lies far below that;
 *  - the two spreads agree within 5 % (an effect of 19 % is what the
 *    shortfall needs; 40 paired replicates measure a ratio of two
 *    spreads with a 0.999 correlation to well under 1 %). */
static void test_basis_uncertainty_negligible(void **state)
{
    (void)state;
    double *values = malloc(N_CH * N_SAMPLES * sizeof(double));
    assert_non_null(values);
    simulate(values);
    static char *names[N_CH] = { "x0", "x1" }, *units[N_CH] = { "", "" };
    el_series s;
    memset(&s, 0, sizeof s);
    s.n_samples = N_SAMPLES;
    s.n_channels = N_CH;
    s.dt = DT_S;
    s.values = values;
    s.names = names;
    s.units = units;
    s.rows_used = N_SAMPLES;
    el_fit_options fo;
    el_fit_defaults(&fo);
    fo.method = EL_METHOD_IV;
    el_model model;
    memset(&model, 0, sizeof model);
    el_error err;
    el_error_clear(&err);
    assert_int_equal(el_fit(&s, &fo, &model, NULL, &err), EL_OK);
    /* The automatic state of this cell: 15 samples (calibrate reports
     * order 30 on all 240 logs of it), rank 2. */
    assert_int_equal(model.lags, 14);
    assert_int_equal(model.rank, RANK);

    rig g;
    memset(&g, 0, sizeof g);
    g.lags = model.lags;
    g.depth = model.depth;
    g.d = N_CH * (g.lags + 1);
    g.q = N_CH * g.depth;
    g.k0 = g.lags + g.depth;
    g.rows = N_SAMPLES - g.k0;
    g.m = model.n_pairs;
    g.n_win = g.m - 2 * g.lags - 2;
    double *scaled = malloc(N_CH * N_SAMPLES * sizeof(double));
    assert_non_null(scaled);
    for (size_t c = 0; c < N_CH; c++)
        for (size_t k = 0; k < N_SAMPLES; k++)
            scaled[c * N_SAMPLES + k] =
                (values[c * N_SAMPLES + k] - model.channel_mean[c]) / model.channel_scale[c];
    g.scaled = scaled;
    size_t cols = g.d + g.q;
    g.row = malloc(g.rows * cols * sizeof(double));
    g.wrow = malloc(g.rows * cols * sizeof(double));
    g.gram = malloc(cols * cols * sizeof(double));
    g.mean = malloc(cols * sizeof(double));
    g.s1work = malloc(el_est_s1_work_size(g.d, g.q, 0) * sizeof(double));
    g.rho = malloc(g.d * sizeof(double));
    g.basis = malloc(g.d * g.d * sizeof(double));
    g.states = malloc((g.m + 1) * RANK * sizeof(double));
    g.prov = el_estimator_provider(EL_METHOD_IV);
    assert_non_null(g.prov);
    g.dims.r = RANK;
    g.dims.n_inputs = 0;
    g.dims.lags = g.lags;
    size_t nf = g.prov->n_features(&g.dims);
    g.feat = malloc(nf * sizeof(double));
    g.sum = malloc(nf * sizeof(double));
    g.pwork = malloc(g.prov->work_doubles(&g.dims) * sizeof(double));
    g.a = malloc(RANK * RANK * sizeof(double));
    double *w = malloc(N_SAMPLES * sizeof(double));
    el_boot_block *blocks = malloc(el_boot_block_count(N_SAMPLES, BLOCK) * sizeof *blocks);
    assert_true(g.row && g.wrow && g.gram && g.mean && g.s1work && g.rho && g.basis &&
                g.states && g.feat && g.sum && g.pwork && g.a && w && blocks);
    /* Row i is sample k0 + i: the state (lags 0..K), then the past
     * (lags K+1 .. K+depth), as the instrument step builds it. */
    for (size_t i = 0; i < g.rows; i++)
        for (size_t col = 0; col < cols; col++) {
            size_t back = col < g.d ? col / N_CH : g.lags + 1 + (col - g.d) / N_CH;
            g.row[i * cols + col] = at(&g, col % N_CH, g.k0 + i, back);
        }

    for (size_t k = 0; k < N_SAMPLES; k++)
        w[k] = 1.0;
    double point_re = least_damped_re(model.a_reduced);
    assert_close(weighted_iv(&g, model.basis, model.state_dim, w), point_re, 1e-9, 0.0);
    weighted_basis(&g, w);
    assert_true(largest_angle_deg(g.d, model.basis, model.state_dim, g.basis) < 1e-5);

    double held[REPLICATES], refit[REPLICATES], angle = 0.0;
    el_rng rng;
    el_rng_seed(&rng, 7, 0);
    for (size_t b = 0; b < REPLICATES; b++) {
        size_t nb = el_boot_draw_blocks(&rng, N_SAMPLES, BLOCK, blocks);
        memset(w, 0, N_SAMPLES * sizeof(double));
        for (size_t j = 0; j < nb; j++)
            for (size_t t = 0; t < blocks[j].length; t++)
                w[blocks[j].start + t] += 1.0;
        held[b] = weighted_iv(&g, model.basis, model.state_dim, w);
        weighted_basis(&g, w);
        angle += largest_angle_deg(g.d, model.basis, model.state_dim, g.basis);
        refit[b] = weighted_iv(&g, g.basis, g.d, w);
    }
    double mh = 0.0, mr = 0.0;
    for (size_t b = 0; b < REPLICATES; b++) {
        mh += held[b] / REPLICATES;
        mr += refit[b] / REPLICATES;
    }
    double vh = 0.0, vr = 0.0, vd = 0.0;
    for (size_t b = 0; b < REPLICATES; b++) {
        vh += (held[b] - mh) * (held[b] - mh) / (REPLICATES - 1);
        vr += (refit[b] - mr) * (refit[b] - mr) / (REPLICATES - 1);
        vd += (refit[b] - held[b]) * (refit[b] - held[b]) / REPLICATES;
    }
    angle /= REPLICATES;
    print_message("iv basis: mean angle %.2f deg, spread held %.4f refit %.4f, rms "
                  "difference %.5f (%.3f of the spread)\n",
                  angle, sqrt(vh), sqrt(vr), sqrt(vd), sqrt(vd / vh));
    assert_true(angle > 0.5);
    assert_true(sqrt(vd / vh) < 0.1);
    assert_close(sqrt(vr / vh), 1.0, 0.0, 0.05);

    free(blocks);
    free(w);
    free(g.a);
    free(g.pwork);
    free(g.sum);
    free(g.feat);
    free(g.states);
    free(g.basis);
    free(g.rho);
    free(g.s1work);
    free(g.mean);
    free(g.gram);
    free(g.wrow);
    free(g.row);
    free(scaled);
    el_model_free(&model);
    free(values);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_basis_uncertainty_negligible),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
