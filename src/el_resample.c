/* el_resample: bootstrap replicates of the fit assembled from additive
 * per-block statistics, eigenvalue matching and the bounds they give. */
#include "el_resample.h"

#include "el_eig.h"
#include "el_estimators.h"

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

#define BOOT_DEFAULT_MAX_BYTES ((size_t)256 << 20)
#define BOOT_MATCH_FORBIDDEN 1e30
#define BOOT_AMBIGUITY_RATIO 1.10
/* Above this many eigenvalues the second-best assignment is bounded by the
 * best exchange of two links instead of n extra Hungarian runs. */
#define BOOT_MURTY_MAX_SLOTS 12
#define BOOT_PI 3.14159265358979323846
/* Model-based replicates that measure the bias (a mean of a few hundred
 * replicates leaves a Monte Carlo error far below the bootstrap spread),
 * drawn from streams far above any replicate index. */
#define BOOT_BIAS_REPLICATES 200
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

static double wall_seconds(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

/* ------------------------------------------------------------------ */
/* Small dense kernels (r is small; no LAPACK so that nothing allocates
 * and every thread runs the same instruction sequence). */

/* In-place lower Cholesky of the n x n column-major s (upper part is left
 * as it was). Returns 1 when a pivot is not above rel_tol times the largest
 * diagonal entry: the matrix is singular to the precision that matters. */
static int cholesky_lower(size_t n, double *s, double rel_tol)
{
    double dmax = 0.0;
    for (size_t j = 0; j < n; j++)
        if (s[j + j * n] > dmax)
            dmax = s[j + j * n];
    if (!(dmax > 0.0) || !isfinite(dmax))
        return 1;
    for (size_t j = 0; j < n; j++) {
        double d = s[j + j * n];
        for (size_t k = 0; k < j; k++)
            d -= s[j + k * n] * s[j + k * n];
        if (!(d > rel_tol * dmax))
            return 1;
        d = sqrt(d);
        s[j + j * n] = d;
        for (size_t i = j + 1; i < n; i++) {
            double v = s[i + j * n];
            for (size_t k = 0; k < j; k++)
                v -= s[i + k * n] * s[j + k * n];
            s[i + j * n] = v / d;
        }
    }
    return 0;
}

/* Solves L x = b in place (L lower, from cholesky_lower). */
static void forward_subst(size_t n, const double *l, double *x)
{
    for (size_t i = 0; i < n; i++) {
        double v = x[i];
        for (size_t k = 0; k < i; k++)
            v -= l[i + k * n] * x[k];
        x[i] = v / l[i + i * n];
    }
}

/* Solves L' x = b in place. */
static void backward_subst(size_t n, const double *l, double *x)
{
    for (size_t ii = n; ii-- > 0;) {
        double v = x[ii];
        for (size_t k = ii + 1; k < n; k++)
            v -= l[k + ii * n] * x[k];
        x[ii] = v / l[ii + ii * n];
    }
}

/* ------------------------------------------------------------------ */
/* Least-squares statistics provider (with inputs: DMD with control). */

static size_t ls_span(const el_boot_dims *dims)
{
    (void)dims;
    return 2;
}

static size_t ls_n_features(const el_boot_dims *dims)
{
    size_t r = dims->r, g = r + dims->n_inputs;
    return 1 + g + r + g * (g + 1) / 2 + r * g;
}

static size_t ls_work_doubles(const el_boot_dims *dims)
{
    size_t r = dims->r, g = r + dims->n_inputs;
    return g * g + r * g + g + r + g;
}

/* Regressor xi = [w_k; u_k] (the state's stored values), response
 * y = w_k+1 (the next state's first r values). */
static void ls_features(const el_boot_dims *dims, const double *states, double *out)
{
    size_t r = dims->r, g = r + dims->n_inputs;
    const double *xi = states, *v = states + g;
    size_t idx = 1 + g + r;
    out[0] = 1.0;
    for (size_t i = 0; i < g; i++)
        out[1 + i] = xi[i];
    for (size_t i = 0; i < r; i++)
        out[1 + g + i] = v[i];
    for (size_t j = 0; j < g; j++)
        for (size_t i = j; i < g; i++)
            out[idx++] = xi[i] * xi[j];
    for (size_t j = 0; j < g; j++)
        for (size_t i = 0; i < r; i++)
            out[idx++] = v[i] * xi[j];
}

/* [A B] = Syxi Sxixi^-1 with the centred cross-products. In the reduced
 * coordinates the state block of Sxixi over the full sample is m I
 * (orthonormal projection, then whitening) and the scaled inputs have
 * unit variance, so a replicate's Sxixi stays well conditioned unless an
 * input follows the state (which the point fit refuses), and a Cholesky
 * factorisation loses nothing that a QR of the weighted regression would
 * keep; the pivot test only catches a replicate that really lost a
 * direction. */
static int ls_solve(const el_boot_dims *dims, const double *sum, double *a, double *b,
                    double *offset, double *work)
{
    size_t r = dims->r, nu = dims->n_inputs, g = r + nu;
    double n = sum[0];
    if (!(n >= (double)(g + 2)))
        return 1;
    double *xbar = work, *vbar = work + g, *x = vbar + r;
    double *sxx = x + g, *syx = sxx + g * g;
    for (size_t i = 0; i < g; i++)
        xbar[i] = sum[1 + i] / n;
    for (size_t i = 0; i < r; i++)
        vbar[i] = sum[1 + g + i] / n;
    size_t idx = 1 + g + r;
    for (size_t j = 0; j < g; j++)
        for (size_t i = j; i < g; i++) {
            double v = sum[idx++] - n * xbar[i] * xbar[j];
            sxx[i + j * g] = v;
            sxx[j + i * g] = v;
        }
    for (size_t j = 0; j < g; j++)
        for (size_t i = 0; i < r; i++)
            syx[i + j * r] = sum[idx++] - n * vbar[i] * xbar[j];
    if (cholesky_lower(g, sxx, 1e-12))
        return 1;
    /* Row i of [A B] solves Sxixi c_i' = (row i of Syxi)'. */
    for (size_t i = 0; i < r; i++) {
        for (size_t j = 0; j < g; j++)
            x[j] = syx[i + j * r];
        forward_subst(g, sxx, x);
        backward_subst(g, sxx, x);
        for (size_t j = 0; j < g; j++)
            if (!isfinite(x[j]))
                return 1;
        for (size_t j = 0; j < r; j++)
            a[i + j * r] = x[j];
        if (b != NULL)
            for (size_t j = 0; j < nu; j++)
                b[i + j * r] = x[r + j];
        if (offset != NULL) {
            double v = vbar[i];
            for (size_t j = 0; j < g; j++)
                v -= x[j] * xbar[j];
            offset[i] = v;
        }
    }
    return 0;
}

/* ls_features summed over n_pairs consecutive pairs by two matrix
 * products (the states of the run are a g x n_pairs matrix X with leading
 * dimension g, the responses the r x n_pairs matrix one state further):
 * five times faster than adding per-pair feature vectors. */
static void ls_accumulate(const el_boot_dims *dims, const double *states, size_t n_pairs,
                          double *acc, double *work)
{
    size_t r = dims->r, g = r + dims->n_inputs;
    double *sx = acc + 1, *sy = acc + 1 + g, *sxx = acc + 1 + g + r;
    double *syx = sxx + g * (g + 1) / 2;
    acc[0] += (double)n_pairs;
    for (size_t k = 0; k < n_pairs; k++) {
        const double *xi = states + k * g;
        for (size_t i = 0; i < g; i++)
            sx[i] += xi[i];
        for (size_t i = 0; i < r; i++)
            sy[i] += xi[g + i];
    }
    /* Lower triangle of X X' into work, then packed column by column as
     * ls_features lays it out. */
    cblas_dsyrk(CblasColMajor, CblasLower, CblasNoTrans, (int)g, (int)n_pairs, 1.0, states,
                (int)g, 0.0, work, (int)g);
    size_t idx = 0;
    for (size_t j = 0; j < g; j++)
        for (size_t i = j; i < g; i++)
            sxx[idx++] += work[i + j * g];
    /* Y X' is r x g column-major, the layout of the features. */
    cblas_dgemm(CblasColMajor, CblasNoTrans, CblasTrans, (int)r, (int)g, (int)n_pairs, 1.0,
                states + g, (int)g, states, (int)g, 1.0, syx, (int)r);
}

static const el_boot_provider ls_provider = {
    "least squares", ls_span, ls_n_features, ls_work_doubles, ls_features, ls_accumulate,
    ls_solve
};

const el_boot_provider *el_boot_provider_ls(void)
{
    return &ls_provider;
}

/* ------------------------------------------------------------------ */
/* Moving blocks. */

size_t el_boot_block_count(size_t n_pairs, size_t block_length)
{
    if (n_pairs == 0 || block_length == 0)
        return 0;
    return (n_pairs + block_length - 1) / block_length;
}

size_t el_boot_draw_blocks(el_rng *rng, size_t n_pairs, size_t block_length,
                           el_boot_block *blocks)
{
    size_t nb = el_boot_block_count(n_pairs, block_length);
    size_t n_starts = n_pairs - block_length + 1;
    size_t left = n_pairs;
    for (size_t b = 0; b < nb; b++) {
        blocks[b].start = (size_t)el_rng_below(rng, (uint64_t)n_starts);
        blocks[b].length = left < block_length ? left : block_length;
        left -= blocks[b].length;
    }
    return nb;
}

size_t el_boot_draw_blocks_grid(el_rng *rng, size_t n_pairs, size_t block_length,
                                size_t grid, el_boot_block *blocks)
{
    if (grid <= 1)
        return el_boot_draw_blocks(rng, n_pairs, block_length, blocks);
    size_t nb = el_boot_block_count(n_pairs, block_length);
    size_t n_starts = (n_pairs - block_length) / grid + 1;
    size_t left = n_pairs;
    for (size_t b = 0; b < nb; b++) {
        blocks[b].start = grid * (size_t)el_rng_below(rng, (uint64_t)n_starts);
        blocks[b].length = left < block_length ? left : block_length;
        left -= blocks[b].length;
    }
    return nb;
}

/* ------------------------------------------------------------------ */
/* Engine. */

struct el_boot_engine {
    const el_boot_provider *prov;
    el_boot_dims dims;
    size_t r, sw, n_states, n_pairs, d, stride, n_chk;  /* sw: doubles per state */
    const double *states; /* n_states * sw, the caller's (borrowed) */
    double *gbar;     /* d: mean feature vector */
    double *prefix;   /* n_chk * d: prefix sums of centred features at j = q * stride */
    size_t block_steps;   /* el_boot_engine_plan_blocks: block length / stride (0: none) */
    double *block_sum;    /* (n_chk - block_steps) * d: P(q + block_steps) - P(q) */
};

/* Hint to fetch a table row before it is needed: a replicate's rows are
 * scattered over a table larger than a core's cache, and their loads are
 * most of its cost. A no-op where the builtin does not exist. */
#if defined(__GNUC__) || defined(__clang__)
#define BOOT_PREFETCH(p) __builtin_prefetch(p)
#else
#define BOOT_PREFETCH(p) ((void)(p))
#endif

/* Neumaier's compensated addition of y into (s, c). */
static void kahan_add(double *s, double *c, double y)
{
    double t = *s + y;
    if (fabs(*s) >= fabs(y))
        *c += (*s - t) + y;
    else
        *c += (y - t) + *s;
    *s = t;
}

/* Pairs summed plainly before their sum joins a compensated total: short
 * enough that a plain sum of O(1) features loses nothing that matters
 * (about BOOT_RUN_PAIRS * eps relative), long enough that the compensated
 * addition, which no compiler vectorises, is paid once per run instead of
 * once per pair. */
#define BOOT_RUN_PAIRS 256

/* Adds sum over pairs [first, first + count) of (features - centre) to the
 * compensated total (s, c) (centre NULL: no centring). run holds d doubles
 * of scratch, g d + prov->work_doubles. */
static void sum_pairs_compensated(const el_boot_provider *prov, const el_boot_dims *dims,
                                  const double *states, size_t first, size_t count,
                                  const double *centre, double *s, double *c,
                                  double *run, double *g)
{
    size_t d = prov->n_features(dims), sw = dims->r + dims->n_inputs;
    for (size_t k0 = first; k0 < first + count; k0 += BOOT_RUN_PAIRS) {
        size_t k1 = k0 + BOOT_RUN_PAIRS < first + count ? k0 + BOOT_RUN_PAIRS : first + count;
        memset(run, 0, d * sizeof(double));
        if (prov->accumulate != NULL) {
            prov->accumulate(dims, states + k0 * sw, k1 - k0, run, g);
        } else {
            for (size_t k = k0; k < k1; k++) {
                prov->features(dims, states + k * sw, g);
                double *restrict acc = run;
                const double *restrict gk = g;
                for (size_t f = 0; f < d; f++)
                    acc[f] += gk[f];
            }
        }
        double len = (double)(k1 - k0);
        for (size_t f = 0; f < d; f++)
            kahan_add(&s[f], &c[f], centre != NULL ? run[f] - len * centre[f] : run[f]);
    }
}

static el_status engine_create(const el_boot_provider *provider,
                               const el_boot_dims *dims, const double *states,
                               size_t n_states, size_t max_bytes, size_t stride,
                               el_boot_engine **engine, el_error *err);

el_status el_boot_engine_create(const el_boot_provider *provider,
                                const el_boot_dims *dims, const double *states,
                                size_t n_states, size_t max_bytes,
                                el_boot_engine **engine, el_error *err)
{
    return engine_create(provider, dims, states, n_states, max_bytes, 0, engine, err);
}

el_status el_boot_engine_create_strided(const el_boot_provider *provider,
                                        const el_boot_dims *dims,
                                        const double *states, size_t n_states,
                                        size_t stride, el_boot_engine **engine,
                                        el_error *err)
{
    return engine_create(provider, dims, states, n_states, 0, stride < 1 ? 1 : stride,
                         engine, err);
}

/* stride 0: derived from max_bytes (0 = the default cap). */
static el_status engine_create(const el_boot_provider *provider,
                               const el_boot_dims *dims, const double *states,
                               size_t n_states, size_t max_bytes, size_t stride,
                               el_boot_engine **engine, el_error *err)
{
    if (engine == NULL)
        return el_error_set(err, EL_ERR_INTERNAL, "el_boot_engine_create: engine is NULL");
    *engine = NULL;
    size_t span = provider != NULL && dims != NULL ? provider->span(dims) : 0;
    if (provider == NULL || dims == NULL || states == NULL || dims->r == 0 || span < 1
        || n_states < span)
        return el_error_set(err, EL_ERR_INTERNAL,
                            "el_boot_engine_create: bad arguments (r %zu, %zu states)",
                            dims != NULL ? dims->r : 0, n_states);
    size_t r = dims->r, sw = dims->r + dims->n_inputs;
    if (max_bytes == 0)
        max_bytes = BOOT_DEFAULT_MAX_BYTES;
    el_boot_engine *e = calloc(1, sizeof *e);
    if (e == NULL)
        return el_error_set(err, EL_ERR_NOMEM, "out of memory (bootstrap engine)");
    e->prov = provider;
    e->dims = *dims;
    e->r = r;
    e->sw = sw;
    e->n_states = n_states;
    e->n_pairs = n_states - span + 1;
    e->d = provider->n_features(dims);
    double table_bytes = (double)(e->n_pairs + 1) * (double)e->d * sizeof(double);
    e->stride = (size_t)ceil(table_bytes / (double)max_bytes);
    if (e->stride < stride)
        e->stride = stride;
    if (e->stride < 1)
        e->stride = 1;
    e->n_chk = e->n_pairs / e->stride + 1;
    e->states = states;
    e->gbar = calloc(e->d, sizeof(double));
    e->prefix = malloc(e->n_chk * e->d * sizeof(double));
    double *s = calloc(2 * e->d, sizeof(double));
    double *g = malloc((e->d + provider->work_doubles(dims)) * sizeof(double));
    if (e->gbar == NULL || e->prefix == NULL || s == NULL
        || g == NULL) {
        free(s);
        free(g);
        el_boot_engine_destroy(e);
        return el_error_set(err, EL_ERR_NOMEM, "out of memory (bootstrap engine, %zu pairs)",
                            n_states);
    }
    size_t d = e->d;
    double *c = s + d;
    /* One pass. The prefixes are centred on the mean of a leading sample
     * of pairs, not on the exact mean (which needs a pass of its own): any
     * centre close to the mean keeps them a random walk of size
     * O(sqrt(n_pairs)); the exact mean gbar then comes from the last
     * prefix, and block sums add length * gbar back exactly as before. */
    size_t lead = e->n_pairs < 4096 ? e->n_pairs : 4096;
    double *centre = calloc(2 * d, sizeof(double));
    if (centre == NULL) {
        free(s);
        free(g);
        el_boot_engine_destroy(e);
        return el_error_set(err, EL_ERR_NOMEM, "out of memory (bootstrap engine)");
    }
    double *run = centre + d;
    sum_pairs_compensated(provider, &e->dims, e->states, 0, lead, NULL, s, c, run, g);
    for (size_t f = 0; f < d; f++)
        centre[f] = (s[f] + c[f]) / (double)lead;
    memset(s, 0, 2 * d * sizeof(double));
    memset(e->prefix, 0, d * sizeof(double));
    for (size_t q = 1; q < e->n_chk; q++) {
        sum_pairs_compensated(provider, &e->dims, e->states, (q - 1) * e->stride,
                              e->stride, centre, s, c, run, g);
        double *p = e->prefix + q * d;
        for (size_t f = 0; f < d; f++)
            p[f] = s[f] + c[f];
    }
    size_t done = (e->n_chk - 1) * e->stride;
    sum_pairs_compensated(provider, &e->dims, e->states, done, e->n_pairs - done, centre,
                          s, c, run, g);
    /* Re-centre on the exact mean: P'(j) = P(j) - j (gbar - centre). */
    for (size_t f = 0; f < d; f++)
        e->gbar[f] = centre[f] + (s[f] + c[f]) / (double)e->n_pairs;
    for (size_t q = 1; q < e->n_chk; q++) {
        double j = (double)(q * e->stride);
        double *p = e->prefix + q * d;
        for (size_t f = 0; f < d; f++)
            p[f] -= j * (e->gbar[f] - centre[f]);
    }
    free(centre);
    free(s);
    free(g);
    *engine = e;
    return EL_OK;
}

void el_boot_engine_destroy(el_boot_engine *engine)
{
    if (engine == NULL)
        return;
    free(engine->gbar);
    free(engine->prefix);
    free(engine->block_sum);
    free(engine);
}

size_t el_boot_engine_pairs(const el_boot_engine *engine) { return engine->n_pairs; }
size_t el_boot_engine_stride(const el_boot_engine *engine) { return engine->stride; }
size_t el_boot_engine_features(const el_boot_engine *engine) { return engine->d; }

size_t el_boot_engine_work_doubles(const el_boot_engine *engine)
{
    return 3 * engine->d + engine->prov->work_doubles(&engine->dims);
}

/* acc += sign * P(j), the prefix sum of centred features over pairs [0, j). */
static void add_prefix(const el_boot_engine *e, size_t j, double sign,
                       double *acc, double *tmp)
{
    size_t d = e->d, q = j / e->stride;
    const double *p = e->prefix + q * d;
    for (size_t f = 0; f < d; f++)
        acc[f] += sign * p[f];
    for (size_t k = q * e->stride; k < j; k++) {
        e->prov->features(&e->dims, e->states + k * e->sw, tmp);
        for (size_t f = 0; f < d; f++)
            acc[f] += sign * (tmp[f] - e->gbar[f]);
    }
}

el_status el_boot_engine_plan_blocks(el_boot_engine *engine, size_t block_length,
                                     el_error *err)
{
    if (engine == NULL || block_length == 0 || block_length % engine->stride != 0
        || block_length > engine->n_pairs)
        return el_error_set(err, EL_ERR_INTERNAL,
                            "el_boot_engine_plan_blocks: block length %zu is no multiple "
                            "of the stride", block_length);
    el_boot_engine *e = engine;
    size_t steps = block_length / e->stride, rows = e->n_chk - steps, d = e->d;
    double *table = malloc(rows * d * sizeof(double));
    if (table == NULL)
        return el_error_set(err, EL_ERR_NOMEM, "out of memory (bootstrap block table)");
    for (size_t q = 0; q < rows; q++) {
        const double *p0 = e->prefix + q * d, *p1 = e->prefix + (q + steps) * d;
        for (size_t f = 0; f < d; f++)
            table[q * d + f] = p1[f] - p0[f];
    }
    free(e->block_sum);
    e->block_sum = table;
    e->block_steps = steps;
    return EL_OK;
}

/* Fetches the rows block b will read. */
static void prefetch_block(const el_boot_engine *e, const el_boot_block *bl)
{
    size_t s = e->stride, d = e->d, a0 = bl->start, a1 = bl->start + bl->length;
    const char *r0, *r1 = NULL;
    if (e->block_sum != NULL && a0 % s == 0 && bl->length == e->block_steps * s) {
        r0 = (const char *)(e->block_sum + (a0 / s) * d);
    } else {
        r0 = (const char *)(e->prefix + (a0 / s) * d);
        r1 = (const char *)(e->prefix + (a1 / s) * d);
    }
    for (size_t o = 0; o < d * sizeof(double); o += 64) {
        BOOT_PREFETCH(r0 + o);
        if (r1 != NULL)
            BOOT_PREFETCH(r1 + o);
    }
}

void el_boot_engine_sum(const el_boot_engine *engine,
                        const el_boot_block *blocks, size_t n_blocks,
                        double *sum, double *work)
{
    const el_boot_engine *e = engine;
    size_t d = e->d, total = 0, planned = e->block_steps * e->stride;
    memset(sum, 0, d * sizeof(double));
    for (size_t b = 0; b < n_blocks; b++) {
        size_t a0 = blocks[b].start, a1 = blocks[b].start + blocks[b].length;
        total += blocks[b].length;
        /* Two blocks ahead: far enough for the row to arrive in time. */
        if (b + 2 < n_blocks)
            prefetch_block(e, &blocks[b + 2]);
        if (e->block_sum != NULL && a0 % e->stride == 0 && blocks[b].length == planned) {
            /* The planned length: its sum was stored, one row to read. */
            const double *restrict p = e->block_sum + (a0 / e->stride) * d;
            double *restrict acc = sum;
            for (size_t f = 0; f < d; f++)
                acc[f] += p[f];
        } else if (a0 % e->stride == 0 && a1 % e->stride == 0) {
            /* Both ends on stored prefixes (always for stride 1, and for
             * blocks drawn on the engine's grid). */
            const double *restrict p1 = e->prefix + (a1 / e->stride) * d;
            const double *restrict p0 = e->prefix + (a0 / e->stride) * d;
            double *restrict acc = sum;
            for (size_t f = 0; f < d; f++)
                acc[f] += p1[f] - p0[f];
        } else {
            add_prefix(e, a1, 1.0, sum, work);
            add_prefix(e, a0, -1.0, sum, work);
        }
    }
    for (size_t f = 0; f < d; f++)
        sum[f] += (double)total * e->gbar[f];
}

int el_boot_engine_assemble(const el_boot_engine *engine,
                            const el_boot_block *blocks, size_t n_blocks,
                            double *a, double *offset, double *work)
{
    double *sum = work, *rest = work + engine->d;
    el_boot_engine_sum(engine, blocks, n_blocks, sum, rest);
    return engine->prov->solve(&engine->dims, sum, a, NULL, offset, rest);
}

/* ------------------------------------------------------------------ */
/* Politis & White block length. */

/* Sample autocovariance at lag k of the demeaned x (divisor n). */
static double autocov(const double *x, size_t n, size_t k)
{
    /* Four partial sums: one running sum is a single chain of dependent
     * additions, four let the processor overlap them (4x faster here). */
    double s0 = 0.0, s1 = 0.0, s2 = 0.0, s3 = 0.0;
    size_t len = n - k, t = 0;
    for (; t + 4 <= len; t += 4) {
        s0 += x[t] * x[t + k];
        s1 += x[t + 1] * x[t + k + 1];
        s2 += x[t + 2] * x[t + k + 2];
        s3 += x[t + 3] * x[t + k + 3];
    }
    for (; t < len; t++)
        s0 += x[t] * x[t + k];
    return ((s0 + s1) + (s2 + s3)) / (double)n;
}

/* Flat-top (trapezoid) lag window of Politis & Romano. */
static double flat_top(double t)
{
    t = fabs(t);
    if (t <= 0.5)
        return 1.0;
    if (t <= 1.0)
        return 2.0 * (1.0 - t);
    return 0.0;
}

el_status el_boot_pw_block_length(const double *x, size_t n, double *b_out,
                                  el_error *err)
{
    *b_out = 1.0;
    if (n < 8)
        return EL_OK;
    double *y = malloc(n * sizeof(double));
    size_t kn = (size_t)ceil(sqrt(log10((double)n)));
    if (kn < 5)
        kn = 5;
    size_t m_max = (size_t)ceil(sqrt((double)n)) + kn;
    if (m_max + kn >= n)
        m_max = n > kn + 1 ? n - kn - 1 : 0;
    double *acv = malloc((m_max + kn + 1) * sizeof(double));
    if (y == NULL || acv == NULL) {
        free(y);
        free(acv);
        return el_error_set(err, EL_ERR_NOMEM, "out of memory (block length)");
    }
    double mean = 0.0;
    for (size_t t = 0; t < n; t++)
        mean += x[t];
    mean /= (double)n;
    for (size_t t = 0; t < n; t++)
        y[t] = x[t] - mean;
    size_t have = 0; /* acv[0..have) computed; autocovariances are costly, so lazily */
    acv[have++] = autocov(y, n, 0);
    if (!(acv[0] > 0.0)) {
        free(y);
        free(acv);
        return EL_OK;
    }
    double crit = 2.0 * sqrt(log10((double)n) / (double)n);
    size_t m_hat = m_max, run = 0;
    for (size_t k = 1; k <= m_max + kn; k++) {
        if (k >= have) {
            acv[k] = autocov(y, n, k);
            have = k + 1;
        }
        if (fabs(acv[k] / acv[0]) < crit) {
            if (++run == kn) {
                m_hat = k - kn;
                break;
            }
        } else {
            run = 0;
        }
    }
    size_t big_m = 2 * m_hat;
    if (big_m > m_max)
        big_m = m_max;
    for (; have <= big_m; have++)
        acv[have] = autocov(y, n, have);
    double g_sum = acv[0], big_g = 0.0;
    for (size_t k = 1; k <= big_m; k++) {
        double lam = flat_top((double)k / (double)big_m);
        g_sum += 2.0 * lam * acv[k];
        big_g += 2.0 * lam * (double)k * acv[k];
    }
    free(y);
    free(acv);
    if (!(g_sum > 0.0))
        return EL_OK;
    double d_cb = 4.0 / 3.0 * g_sum * g_sum;
    double b = cbrt(2.0 * big_g * big_g / d_cb) * cbrt((double)n);
    double b_max = ceil(fmin(3.0 * sqrt((double)n), (double)n / 3.0));
    if (b > b_max)
        b = b_max;
    *b_out = b;
    return EL_OK;
}

/* ------------------------------------------------------------------ */
/* Matching by the Hungarian algorithm. */

struct el_boot_matcher {
    size_t n_modes, n;            /* point modes, eigenvalue slots */
    size_t *slot_mode;            /* n: point mode of each row slot */
    double *pre, *pim;            /* n: folded point lambda per slot */
    double *fre, *fim;            /* n: folded replicate lambda per column */
    size_t *group;                /* n: replicate mode (conjugate group) of each column */
    double *cost, *cwork;         /* n * n, [row + col * n] */
    double *u, *v, *minv;         /* n + 1 */
    size_t *p, *way;              /* n + 1 */
    unsigned char *used;          /* n + 1 */
    size_t *assign, *best;        /* n: column of each row */
    double *lower;                /* n: lower bound on the cost without row i's link */
};

void el_boot_matcher_destroy(el_boot_matcher *m)
{
    if (m == NULL)
        return;
    free(m->slot_mode);
    free(m->pre);
    free(m->pim);
    free(m->fre);
    free(m->fim);
    free(m->group);
    free(m->cost);
    free(m->cwork);
    free(m->u);
    free(m->v);
    free(m->minv);
    free(m->p);
    free(m->way);
    free(m->used);
    free(m->assign);
    free(m->best);
    free(m->lower);
    free(m);
}

el_status el_boot_matcher_create(const el_modes *point, el_boot_matcher **matcher,
                                 el_error *err)
{
    *matcher = NULL;
    if (point == NULL || point->n_modes == 0 || point->modes == NULL)
        return el_error_set(err, EL_ERR_INTERNAL, "el_boot_matcher_create: no point modes");
    size_t n = 0;
    for (size_t i = 0; i < point->n_modes; i++)
        n += point->modes[i].pair ? 2 : 1;
    el_boot_matcher *m = calloc(1, sizeof *m);
    if (m == NULL)
        return el_error_set(err, EL_ERR_NOMEM, "out of memory (matcher)");
    m->n_modes = point->n_modes;
    m->n = n;
    m->slot_mode = malloc(n * sizeof(size_t));
    m->pre = malloc(n * sizeof(double));
    m->pim = malloc(n * sizeof(double));
    m->fre = malloc(n * sizeof(double));
    m->fim = malloc(n * sizeof(double));
    m->group = malloc(n * sizeof(size_t));
    m->cost = malloc(n * n * sizeof(double));
    m->cwork = malloc(n * n * sizeof(double));
    m->u = malloc((n + 1) * sizeof(double));
    m->v = malloc((n + 1) * sizeof(double));
    m->minv = malloc((n + 1) * sizeof(double));
    m->p = malloc((n + 1) * sizeof(size_t));
    m->way = malloc((n + 1) * sizeof(size_t));
    m->used = malloc(n + 1);
    m->assign = malloc(n * sizeof(size_t));
    m->best = malloc(n * sizeof(size_t));
    m->lower = malloc(n * sizeof(double));
    if (!m->slot_mode || !m->pre || !m->pim || !m->fre || !m->fim || !m->group
        || !m->cost || !m->cwork || !m->u || !m->v || !m->minv || !m->p || !m->way
        || !m->used || !m->assign || !m->best || !m->lower) {
        el_boot_matcher_destroy(m);
        return el_error_set(err, EL_ERR_NOMEM, "out of memory (matcher)");
    }
    size_t s = 0;
    for (size_t i = 0; i < point->n_modes; i++) {
        const el_mode *md = &point->modes[i];
        /* An instantaneous mode (mu = 0) has Re = -inf; a floor keeps the
         * costs finite and it still attracts the most negative replicate. */
        double re = isfinite(md->lambda_re) ? md->lambda_re : -DBL_MAX / 4;
        for (int k = 0; k < (md->pair ? 2 : 1); k++) {
            m->slot_mode[s] = i;
            m->pre[s] = re;
            m->pim[s] = fabs(md->lambda_im);
            s++;
        }
    }
    *matcher = m;
    return EL_OK;
}

/* Minimum-cost perfect assignment of rows to columns of the n x n cost
 * (potentials form of the Hungarian algorithm, O(n^3)). assign[row] =
 * column. Returns the total cost. */
static double hungarian(el_boot_matcher *m, const double *cost, size_t *assign)
{
    size_t n = m->n;
    double *u = m->u, *v = m->v, *minv = m->minv;
    size_t *p = m->p, *way = m->way;
    unsigned char *used = m->used;
    for (size_t j = 0; j <= n; j++) {
        u[j] = 0.0;
        v[j] = 0.0;
        p[j] = 0;
        way[j] = 0;
    }
    for (size_t i = 1; i <= n; i++) {
        p[0] = i;
        size_t j0 = 0;
        for (size_t j = 0; j <= n; j++) {
            minv[j] = HUGE_VAL;
            used[j] = 0;
        }
        do {
            used[j0] = 1;
            size_t i0 = p[j0], j1 = 0;
            double delta = HUGE_VAL;
            for (size_t j = 1; j <= n; j++) {
                if (used[j])
                    continue;
                double cur = cost[(i0 - 1) + (j - 1) * n] - u[i0] - v[j];
                if (cur < minv[j]) {
                    minv[j] = cur;
                    way[j] = j0;
                }
                if (minv[j] < delta) {
                    delta = minv[j];
                    j1 = j;
                }
            }
            for (size_t j = 0; j <= n; j++) {
                if (used[j]) {
                    u[p[j]] += delta;
                    v[j] -= delta;
                } else {
                    minv[j] -= delta;
                }
            }
            j0 = j1;
        } while (p[j0] != 0);
        do {
            size_t j1 = way[j0];
            p[j0] = p[j1];
            j0 = j1;
        } while (j0 != 0);
    }
    double total = 0.0;
    for (size_t j = 1; j <= n; j++) {
        assign[p[j] - 1] = j - 1;
        total += cost[(p[j] - 1) + (j - 1) * n];
    }
    return total;
}

/* Groups the replicate columns into modes: the two members of a conjugate
 * pair fold onto the same point and form one mode. */
static void group_columns(el_boot_matcher *m, const double *im)
{
    size_t n = m->n;
    for (size_t j = 0; j < n; j++) {
        m->group[j] = j;
        if (im[j] == 0.0)
            continue;
        for (size_t k = 0; k < j; k++) {
            if (m->group[k] == k && m->fre[k] == m->fre[j] && m->fim[k] == m->fim[j]
                && im[k] == -im[j]) {
                int taken = 0;
                for (size_t q = k + 1; q < j; q++)
                    if (m->group[q] == k)
                        taken = 1;
                if (!taken) {
                    m->group[j] = k;
                    break;
                }
            }
        }
    }
}

/* Distance in the lambda plane: hypot's overflow care only where it is
 * needed (an instantaneous mode sits at -DBL_MAX / 4), a plain root
 * elsewhere, several times cheaper. */
static double plane_distance(double dx, double dy)
{
    if (fabs(dx) < 1e150 && fabs(dy) < 1e150)
        return sqrt(dx * dx + dy * dy);
    return hypot(dx, dy);
}

/* A lower bound on cost_without_link for the link of row (slot) i in the
 * best assignment, from that run's potentials u, v (u_r + v_c <= cost,
 * equality on the assignment, so any assignment costs sum u + sum v plus
 * its reduced costs, all >= 0). An assignment without the link must give
 * each slot of i's point mode a column outside i's replicate group, and
 * the column the best run gave i some row outside that mode: two distinct
 * entries, each at least the smallest reduced cost available to it. With
 * well separated modes this bound alone shows that no swap comes within
 * BOOT_AMBIGUITY_RATIO, and the n extra Hungarian runs are skipped; the
 * margin absorbs rounding in the potentials. */
static double link_lower_bound(const el_boot_matcher *m, size_t i)
{
    size_t n = m->n, pm = m->slot_mode[i], j = m->best[i], g = m->group[j];
    const double *u = m->u, *v = m->v;
    double base = 0.0, scale = 0.0;
    for (size_t k = 1; k <= n; k++) {
        base += u[k] + v[k];
        scale += fabs(u[k]) + fabs(v[k]);
    }
    double row_min = HUGE_VAL, col_min = HUGE_VAL;
    for (size_t c = 0; c < n; c++)
        if (m->group[c] != g) {
            double rc = m->cost[i + c * n] - u[i + 1] - v[c + 1];
            row_min = rc < row_min ? rc : row_min;
        }
    for (size_t r = 0; r < n; r++)
        if (m->slot_mode[r] != pm) {
            double rc = m->cost[r + j * n] - u[r + 1] - v[j + 1];
            col_min = rc < col_min ? rc : col_min;
        }
    if (!isfinite(row_min) || !isfinite(col_min))
        return HUGE_VAL; /* no alternative exists: the exact run says so too */
    return base + fmax(0.0, row_min) + fmax(0.0, col_min) - 1e-9 * (scale + 1.0);
}

/* Cost of the best assignment that never links point mode pm to the
 * replicate mode (group) g. */
static double cost_without_link(el_boot_matcher *m, size_t pm, size_t g)
{
    size_t n = m->n;
    memcpy(m->cwork, m->cost, n * n * sizeof(double));
    for (size_t i = 0; i < n; i++) {
        if (m->slot_mode[i] != pm)
            continue;
        for (size_t j = 0; j < n; j++)
            if (m->group[j] == g)
                m->cwork[i + j * n] = BOOT_MATCH_FORBIDDEN;
    }
    double c = hungarian(m, m->cwork, m->assign);
    return c >= BOOT_MATCH_FORBIDDEN / 2 ? HUGE_VAL : c;
}

int el_boot_match(el_boot_matcher *m, const double *lambda_re,
                  const double *lambda_im, size_t n_eig, double *mode_re,
                  double *mode_im, int *ambiguous)
{
    size_t n = m->n;
    if (n_eig != n)
        return -1;
    for (size_t j = 0; j < n; j++) {
        m->fre[j] = lambda_re[j];
        m->fim[j] = fabs(lambda_im[j]);
    }
    group_columns(m, lambda_im);
    for (size_t j = 0; j < n; j++)
        for (size_t i = 0; i < n; i++)
            m->cost[i + j * n] = plane_distance(m->pre[i] - m->fre[j], m->pim[i] - m->fim[j]);
    double c1 = hungarian(m, m->cost, m->best);
    for (size_t q = 0; q < m->n_modes; q++) {
        mode_re[q] = 0.0;
        mode_im[q] = 0.0;
    }
    for (size_t i = 0; i < n; i++) {
        size_t q = m->slot_mode[i], j = m->best[i];
        double w = (i + 1 < n && m->slot_mode[i + 1] == q)
                           || (i > 0 && m->slot_mode[i - 1] == q)
                       ? 0.5
                       : 1.0;
        mode_re[q] += w * m->fre[j];
        mode_im[q] += w * m->fim[j];
    }
    /* Second best: take away one mode-to-mode link of the best assignment
     * at a time (a Murty-style partition restricted to the links that
     * matter; swapping the two equal slots of a pair is no alternative). */
    double c2 = HUGE_VAL;
    if (n > BOOT_MURTY_MAX_SLOTS) {
        /* Many modes: n Hungarian runs per replicate would cost O(n^4);
         * the best single exchange of two links is the usual cheap bound
         * on the second-best cost (exact when the alternative is a swap of
         * two modes, the case that matters). */
        for (size_t i = 0; i < n; i++)
            for (size_t k = i + 1; k < n; k++) {
                size_t ji = m->best[i], jk = m->best[k];
                if (m->slot_mode[i] == m->slot_mode[k] || m->group[ji] == m->group[jk])
                    continue;
                double c = c1 - m->cost[i + ji * n] - m->cost[k + jk * n]
                           + m->cost[i + jk * n] + m->cost[k + ji * n];
                if (c < c2)
                    c2 = c;
            }
        *ambiguous = isfinite(c2) && c2 <= BOOT_AMBIGUITY_RATIO * c1;
        return 0;
    }
    /* Bounds first (they read the potentials of the best run, which the
     * exact runs overwrite); an exact run only for a link whose bound does
     * not already rule it out. */
    double limit = BOOT_AMBIGUITY_RATIO * c1;
    for (size_t i = 0; i < n; i++)
        m->lower[i] = link_lower_bound(m, i);
    for (size_t i = 0; i < n; i++) {
        size_t pm = m->slot_mode[i], g = m->group[m->best[i]];
        int seen = 0;
        for (size_t k = 0; k < i; k++)
            if (m->slot_mode[k] == pm && m->group[m->best[k]] == g)
                seen = 1;
        if (seen || m->lower[i] > limit)
            continue;
        double c = cost_without_link(m, pm, g);
        if (c < c2)
            c2 = c;
    }
    *ambiguous = isfinite(c2) && c2 <= BOOT_AMBIGUITY_RATIO * c1;
    return 0;
}

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

static int cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
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
    qsort(v, k, sizeof(double), cmp_double);
    out.lo = el_boot_quantile(v, k, 0.5 * (1.0 - level));
    out.hi = el_boot_quantile(v, k, 0.5 * (1.0 + level));
    return out;
}

/* ------------------------------------------------------------------ */
/* Work shared by threads in fixed chunks. Which thread takes a chunk does
 * not matter: every chunk is computed the same way, and whatever is
 * combined across chunks is combined in chunk order afterwards, so the
 * numbers do not depend on the thread count. */

/* fn(ctx, chunk, slot): slot (< the thread count) names the thread, so
 * that scratch space can be per thread. */
typedef void (*chunk_fn)(void *ctx, size_t chunk, size_t slot);

#define BOOT_CHUNK_THREADS 16

typedef struct {
    chunk_fn fn;
    void *ctx;
    size_t n_chunks;
    atomic_size_t next;
} chunk_pool;

typedef struct {
    chunk_pool *pool;
    size_t slot;
} chunk_worker;

static void *chunk_pool_work(void *arg)
{
    chunk_worker *w = arg;
    for (;;) {
        size_t c = atomic_fetch_add(&w->pool->next, 1);
        if (c >= w->pool->n_chunks)
            return NULL;
        w->pool->fn(w->pool->ctx, c, w->slot);
    }
}

/* Threads run_chunks uses for n_chunks chunks when threads are asked. */
static size_t chunk_threads(size_t n_chunks, size_t threads)
{
    size_t t = threads < n_chunks ? threads : n_chunks;
    t = t > BOOT_CHUNK_THREADS ? BOOT_CHUNK_THREADS : t;
    return t < 1 ? 1 : t;
}

/* Runs fn for chunks 0 .. n_chunks - 1 on chunk_threads(n_chunks, threads)
 * threads at most (the calling thread is slot 0; fewer when a thread
 * cannot be made). */
static void run_chunks(size_t n_chunks, size_t threads, chunk_fn fn, void *ctx)
{
    chunk_pool pool = { fn, ctx, n_chunks, 0 };
    atomic_init(&pool.next, 0);
    size_t t = chunk_threads(n_chunks, threads);
    pthread_t tid[BOOT_CHUNK_THREADS];
    chunk_worker workers[BOOT_CHUNK_THREADS];
    size_t started = 1;
    for (; started < t; started++) {
        workers[started] = (chunk_worker){ &pool, started };
        if (pthread_create(&tid[started], NULL, chunk_pool_work, &workers[started]) != 0)
            break;
    }
    workers[0] = (chunk_worker){ &pool, 0 };
    chunk_pool_work(&workers[0]);
    for (size_t i = 1; i < started; i++)
        pthread_join(tid[i], NULL);
}

/* ------------------------------------------------------------------ */
/* Reduced states. */

/* Snapshots built and projected per chunk: a chunk of states (sd x rows)
 * stays in cache while one product projects it. */
#define BOOT_STATE_CHUNK 2048

/* Centred scaled snapshots z[t] of states t0 .. t0 + rows - 1 into z
 * (sd x rows, column-major): z[t] stacks the channels at lags 0..K of
 * sample lags + t, scaled as in the fit and centred on zbar. */
static void build_state_chunk(const el_series *series, const el_model *model,
                              const double *zbar, size_t t0, size_t rows, double *z)
{
    size_t nn = series->n_samples, nc = model->n_channels, sd = model->state_dim;
    for (size_t j = 0; j <= model->lags; j++)
        for (size_t c = 0; c < nc; c++) {
            const double *x = series->values + c * nn + model->lags + t0 - j;
            double mean = model->channel_mean[c], inv = 1.0 / model->channel_scale[c];
            double zb = zbar[j * nc + c];
            double *out = z + j * nc + c;
            for (size_t t = 0; t < rows; t++)
                out[t * sd] = (x[t] - mean) * inv - zb;
        }
}

typedef struct {
    const el_series *series;
    const el_model *model;
    const double *zbar;
    double *p, *grams;            /* grams: one r x r Gram per chunk */
    double *scratch;              /* one sd x BOOT_STATE_CHUNK block per thread */
    const double *chol;           /* whitening: L of G (r x r), then scale */
    double scale;
    size_t m;
} states_ctx;

static size_t chunk_rows(size_t m, size_t c)
{
    size_t t0 = c * BOOT_STATE_CHUNK;
    return m + 1 - t0 < BOOT_STATE_CHUNK ? m + 1 - t0 : BOOT_STATE_CHUNK;
}

/* Chunk c: p = U_r' z and its Gram over the pairs it holds. */
static void project_chunk(void *arg, size_t c, size_t slot)
{
    states_ctx *x = arg;
    const el_model *md = x->model;
    size_t r = md->rank, sd = md->state_dim, t0 = c * BOOT_STATE_CHUNK;
    size_t rows = chunk_rows(x->m, c);
    double *z = x->scratch + slot * sd * BOOT_STATE_CHUNK, *g = x->grams + c * r * r;
    build_state_chunk(x->series, md, x->zbar, t0, rows, z);
    cblas_dgemm(CblasColMajor, CblasTrans, CblasNoTrans, (int)r, (int)rows, (int)sd, 1.0,
                md->basis, (int)sd, z, (int)sd, 0.0, x->p + t0 * r, (int)r);
    size_t in_pairs = t0 + rows <= x->m ? rows : x->m - t0;
    memset(g, 0, r * r * sizeof(double));
    if (in_pairs > 0)
        cblas_dsyrk(CblasColMajor, CblasLower, CblasNoTrans, (int)r, (int)in_pairs, 1.0,
                    x->p + t0 * r, (int)r, 0.0, g, (int)r);
}

/* Chunk c: w = scale L^-1 p in place. */
static void whiten_chunk(void *arg, size_t c, size_t slot)
{
    (void)slot;
    states_ctx *x = arg;
    size_t r = x->model->rank;
    cblas_dtrsm(CblasColMajor, CblasLeft, CblasLower, CblasNoTrans, CblasNonUnit, (int)r,
                (int)chunk_rows(x->m, c), x->scale, x->chol, (int)r,
                x->p + c * BOOT_STATE_CHUNK * r, (int)r);
}

static int model_fits(const el_series *series, const el_model *model)
{
    size_t nn = series->n_samples, nc = model->n_channels, lags = model->lags;
    size_t sd = model->state_dim, r = model->rank;
    return series->n_channels == nc && sd == nc * (lags + 1) && nn >= lags + 3 && r > 0
           && r <= sd && model->basis != NULL && model->channel_mean != NULL
           && model->channel_scale != NULL && nn - 1 - lags == model->n_pairs;
}

el_status el_boot_project_states(const el_series *series, const el_model *model,
                                 size_t threads, double *p, double *gram, el_error *err)
{
    if (series == NULL || model == NULL || p == NULL || gram == NULL
        || !model_fits(series, model))
        return el_error_set(err, EL_ERR_INTERNAL,
                            "bootstrap: the series does not fit the model (%zu pairs, "
                            "rank %zu)", model != NULL ? model->n_pairs : 0,
                            model != NULL ? model->rank : 0);
    size_t nn = series->n_samples, nc = model->n_channels, lags = model->lags;
    size_t sd = model->state_dim, r = model->rank, m = model->n_pairs;
    size_t n_chunks = m / BOOT_STATE_CHUNK + 1;
    size_t slots = chunk_threads(n_chunks, threads);
    double *zbar = malloc(sd * sizeof(double));
    double *grams = malloc(n_chunks * r * r * sizeof(double));
    double *scratch = malloc(slots * sd * BOOT_STATE_CHUNK * sizeof(double));
    if (zbar == NULL || grams == NULL || scratch == NULL) {
        free(zbar);
        free(grams);
        free(scratch);
        return el_error_set(err, EL_ERR_NOMEM, "out of memory (bootstrap states)");
    }
    const double *x = series->values;
    for (size_t j = 0; j <= lags; j++)
        for (size_t c = 0; c < nc; c++) {
            double s = 0.0, inv = 1.0 / model->channel_scale[c];
            for (size_t k = lags; k + 1 < nn; k++)
                s += (x[c * nn + k - j] - model->channel_mean[c]) * inv;
            zbar[j * nc + c] = s / (double)m;
        }
    states_ctx ctx = { series, model, zbar, p, grams, scratch, NULL, 1.0, m };
    run_chunks(n_chunks, slots, project_chunk, &ctx);
    memset(gram, 0, r * r * sizeof(double));
    for (size_t c = 0; c < n_chunks; c++)
        for (size_t i = 0; i < r * r; i++)
            gram[i] += grams[c * r * r + i];
    free(zbar);
    free(grams);
    free(scratch);
    return EL_OK;
}

el_status el_boot_whiten_states(const double *chol, size_t r, size_t n_states, double scale,
                                size_t threads, double *states)
{
    if (chol == NULL || states == NULL || r == 0 || n_states == 0)
        return EL_ERR_INTERNAL;
    el_model shape;
    memset(&shape, 0, sizeof shape);
    shape.rank = r;
    states_ctx ctx = { NULL, &shape, NULL, states, NULL, NULL, chol, scale, n_states - 1 };
    run_chunks((n_states - 1) / BOOT_STATE_CHUNK + 1, threads, whiten_chunk, &ctx);
    return EL_OK;
}

/* el_boot_reduced_states on up to threads threads. */
static el_status reduced_states(const el_series *series, const el_model *model,
                                size_t threads, double **states, el_error *err)
{
    *states = NULL;
    if (series == NULL || model == NULL || !model_fits(series, model))
        return el_error_set(err, EL_ERR_INTERNAL,
                            "bootstrap: the series (%zu samples, %zu channels) does "
                            "not fit the model (%zu pairs, rank %zu)",
                            series != NULL ? series->n_samples : 0,
                            series != NULL ? series->n_channels : 0,
                            model != NULL ? model->n_pairs : 0,
                            model != NULL ? model->rank : 0);
    size_t r = model->rank, m = model->n_pairs;
    double *g = malloc(r * r * sizeof(double));
    double *w = malloc((m + 1) * r * sizeof(double));
    if (g == NULL || w == NULL) {
        free(g);
        free(w);
        return el_error_set(err, EL_ERR_NOMEM, "out of memory (bootstrap states)");
    }
    el_status st = el_boot_project_states(series, model, threads, w, g, err);
    if (st == EL_OK && cholesky_lower(r, g, 1e-14)) {
        el_error_set(err, EL_ERR_NUMERIC,
                     "bootstrap: the snapshots have no spread along a basis direction");
        el_error_hint(err, "use a lower --rank");
        st = EL_ERR_NUMERIC;
    }
    if (st == EL_OK)
        st = el_boot_whiten_states(g, r, m + 1, sqrt((double)m), threads, w);
    free(g);
    if (st != EL_OK) {
        free(w);
        return st;
    }
    *states = w;
    return EL_OK;
}

el_status el_boot_reduced_states(const el_series *series, const el_model *model,
                                 double **states, el_error *err)
{
    return reduced_states(series, model, 1, states, err);
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
    int bias_phase;               /* 1: the run measures the bias */
    double *bias_rec;             /* bias phase: 2 n_modes + 2 per replicate */
    unsigned char *bias_ok;
    size_t r, sw, nu, m, block, block_pw, grid, n_modes, total, n_bias;
    size_t max_blocks;            /* blocks of one replicate */
    int bias_refused;             /* the bias round measured no small-sample bias */
    el_resample_kind kind;
    uint64_t seed;
    double dt;
    int has_plane;
    /* per replicate, written by exactly one thread */
    unsigned char *ok, *amb, *stable;
    double *mode_re, *mode_im, *trace, *det;
    atomic_size_t next, done;
} boot_shared;

typedef struct {
    boot_shared *sh;
    el_boot_matcher *matcher;
    el_boot_block *blocks;        /* sh->max_blocks */
    double *work, *sum, *feat, *st;
    double *a, *ageev, *wr, *wi, *lre, *lim, *geev, *eig;
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
    memset(w, 0, sizeof *w);
}

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

/* Residual bootstrap: regenerate the reduced series through the point
 * model with moving blocks of centred residuals and sum its features. */
static int model_replicate(boot_worker *w, el_rng *rng)
{
    boot_shared *sh = w->sh;
    size_t r = sh->r, sw = sh->sw, nu = sh->nu, d = el_boot_engine_features(sh->engine);
    size_t nb = el_boot_draw_blocks(rng, sh->m, sh->block, w->blocks);
    double *prev = w->st, *next = w->st + sw;
    memcpy(prev, sh->w0, sw * sizeof(double));
    memset(w->sum, 0, d * sizeof(double));
    size_t step = 0;
    for (size_t b = 0; b < nb; b++)
        for (size_t t = 0; t < w->blocks[b].length; t++, step++) {
            const double *e = sh->resid + (w->blocks[b].start + t) * r;
            /* The measured inputs stay where they were (fixed regressors):
             * only the state is regenerated. */
            for (size_t i = 0; i < r; i++) {
                double v = sh->c0[i] + e[i];
                for (size_t j = 0; j < r; j++)
                    v += sh->a0[i + j * r] * prev[j];
                for (size_t j = 0; j < nu; j++)
                    v += sh->b0[i + j * r] * prev[r + j];
                next[i] = v;
            }
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

/* Continuous eigenvalues of the r x r reduced matrix a. Returns 0 or 1.
 * el_eig first (a third of LAPACK's time at r = 8, where LAPACK's call
 * overhead was the largest cost of a replicate); LAPACK when it reports a
 * failure. */
static int eigen_lambda(boot_worker *w, const double *a, size_t r, double dt)
{
    if (el_eig_values(r, a, r, w->wr, w->wi, w->eig) != 0) {
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

/* Point mode that the last match gave eigenvalue (column) j. */
static size_t matched_mode_of_column(const el_boot_matcher *m, size_t j)
{
    for (size_t i = 0; i < m->n; i++)
        if (m->best[i] == j)
            return m->slot_mode[i];
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
            re -= br[matched_mode_of_column(w->matcher, j)];
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
    int fail = model_replicate(w, &rng);
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

/* Residuals of the point fit in reduced coordinates, centred (states of
 * r + nu doubles, the inputs after the state). */
static void reduced_residuals(const double *states, size_t m, size_t r, size_t nu,
                              const double *a, const double *bm, const double *c,
                              double *res)
{
    double *mean = res + m * r; /* caller gives r spare doubles */
    size_t sw = r + nu;
    /* res = Y - A X - B U (columns are pairs), then minus c and centred. */
    if (sw == r) {
        memcpy(res, states + r, m * r * sizeof(double));
    } else {
        for (size_t k = 0; k < m; k++)
            for (size_t i = 0; i < r; i++)
                res[k * r + i] = states[(k + 1) * sw + i];
    }
    cblas_dgemm(CblasColMajor, CblasNoTrans, CblasNoTrans, (int)r, (int)m, (int)r, -1.0, a,
                (int)r, states, (int)sw, 1.0, res, (int)r);
    if (nu > 0)
        cblas_dgemm(CblasColMajor, CblasNoTrans, CblasNoTrans, (int)r, (int)m, (int)nu,
                    -1.0, bm, (int)r, states + r, (int)sw, 1.0, res, (int)r);
    memset(mean, 0, r * sizeof(double));
    for (size_t k = 0; k < m; k++)
        for (size_t i = 0; i < r; i++) {
            res[k * r + i] -= c[i];
            mean[i] += res[k * r + i];
        }
    for (size_t i = 0; i < r; i++)
        mean[i] /= (double)m;
    for (size_t k = 0; k < m; k++)
        for (size_t i = 0; i < r; i++)
            res[k * r + i] -= mean[i];
}

typedef struct {
    const double *res;
    size_t m, r;
    double *x;                    /* m doubles per thread */
    double *b;                    /* r: each component's length */
    el_status *st;                /* r */
} pw_ctx;

static void pw_component(void *arg, size_t i, size_t slot)
{
    pw_ctx *c = arg;
    double *x = c->x + slot * c->m;
    for (size_t k = 0; k < c->m; k++)
        x[k] = c->res[k * c->r + i];
    el_error err;
    el_error_clear(&err);
    c->b[i] = 1.0;
    c->st[i] = el_boot_pw_block_length(x, c->m, &c->b[i], &err);
}

/* Politis-White on each reduced residual component (on up to threads
 * threads); the largest wins, so the component with the longest memory
 * sets the block. */
static el_status auto_block(const double *res, size_t m, size_t r, size_t threads,
                            size_t *block, el_error *err)
{
    size_t slots = chunk_threads(r, threads);
    pw_ctx c = { res, m, r, malloc(slots * m * sizeof(double)), malloc(r * sizeof(double)),
                 malloc(r * sizeof(el_status)) };
    if (c.x == NULL || c.b == NULL || c.st == NULL) {
        free(c.x);
        free(c.b);
        free(c.st);
        return el_error_set(err, EL_ERR_NOMEM, "out of memory (block length)");
    }
    run_chunks(r, slots, pw_component, &c);
    double best = 1.0;
    el_status st = EL_OK;
    for (size_t i = 0; i < r; i++) {
        if (c.st[i] != EL_OK && st == EL_OK)
            st = el_error_set(err, c.st[i], "out of memory (block length)");
        if (c.b[i] > best)
            best = c.b[i];
    }
    free(c.x);
    free(c.b);
    free(c.st);
    if (st != EL_OK)
        return st;
    size_t l = (size_t)llround(best);
    *block = l < 1 ? 1 : (l > m ? m : l);
    return EL_OK;
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

/* Fills the result from the per-replicate records (in replicate order, so
 * the thread count cannot change anything). */
static el_status aggregate(const boot_shared *sh, const el_modes *point,
                           const el_boot_options *opt, el_boot_result *res,
                           el_error *err)
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
    res->bounds = calloc(nm, sizeof(el_mode_bounds));
    res->lambda_re = malloc(n_ok * nm * sizeof(double));
    res->lambda_im = malloc(n_ok * nm * sizeof(double));
    double *v = malloc(n_ok * sizeof(double));
    if (sh->has_plane) {
        res->trace_samples = malloc(n_ok * sizeof(double));
        res->det_samples = malloc(n_ok * sizeof(double));
    }
    if (!res->bounds || !res->lambda_re || !res->lambda_im || !v
        || (sh->has_plane && (!res->trace_samples || !res->det_samples))) {
        free(v);
        return el_error_set(err, EL_ERR_NOMEM, "out of memory (bootstrap result)");
    }
    size_t k = 0;
    for (size_t i = 0; i < total; i++) {
        if (!sh->ok[i])
            continue;
        memcpy(res->lambda_re + k * nm, sh->mode_re + i * nm, nm * sizeof(double));
        memcpy(res->lambda_im + k * nm, sh->mode_im + i * nm, nm * sizeof(double));
        if (sh->has_plane) {
            res->trace_samples[k] = sh->trace[i];
            res->det_samples[k] = sh->det[i];
        }
        k++;
    }
    double level = opt->level;
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
    }
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
    double *states, *resid, *a0, *b0, *c0, *pwork, *bias, *bias_samples;
    double *est_states;           /* the method's own states (non-ls methods) */
    unsigned char *bias_ok;
    el_boot_engine *engine;
    el_boot_engine *est_engine;   /* engine of the method's provider (non-ls) */
    boot_worker *workers;
    size_t n_workers;
    unsigned char *flags;
    double *rec;
} boot_buffers;

static void buffers_free(boot_buffers *b)
{
    for (size_t i = 0; i < b->n_workers; i++)
        worker_free(&b->workers[i]);
    free(b->workers);
    free(b->states);
    free(b->est_states);
    el_boot_engine_destroy(b->est_engine);
    free(b->resid);
    free(b->a0);
    free(b->b0);
    free(b->c0);
    free(b->pwork);
    el_boot_engine_destroy(b->engine);
    free(b->flags);
    free(b->rec);
    free(b->bias);
    free(b->bias_samples);
    free(b->bias_ok);
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
static el_status measure_bias(boot_shared *sh, boot_buffers *bf, el_error *err)
{
    size_t nm = sh->n_modes, nb = BOOT_BIAS_REPLICATES, stride = 2 * nm + 2;
    bf->bias = calloc(2 * nm, sizeof(double));
    bf->bias_samples = malloc(nb * stride * sizeof(double));
    bf->bias_ok = calloc(nb, 1);
    if (!bf->bias || !bf->bias_samples || !bf->bias_ok)
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
            if (isfinite(shift) && fabs(shift) > 0.5 * sd && fabs(shift) > bias_cap)
                implausible = 1;
        }
    }
    if (implausible) {
        free(med);
        free(tmp);
        sh->bias_refused = 1;
        return EL_OK;
    }
    for (size_t q = 0; q < nm; q++) {
        const el_mode *md_q = &sh->point->modes[q];
        double b_re = med[q] - md_q->lambda_re;
        double b_im = med[nm + q] - fabs(md_q->lambda_im);
        bf->bias[q] = isfinite(b_re) ? b_re : 0.0;
        /* A real mode's replicates fold onto Im >= 0: no frequency bias. */
        bf->bias[nm + q] = md_q->pair && isfinite(b_im) ? b_im : 0.0;
    }
    if (sh->has_plane) {
        double tr, det;
        point_plane(sh->point, &tr, &det);
        sh->bias_trace = isfinite(med[2 * nm] - tr) ? med[2 * nm] - tr : 0.0;
        sh->bias_det = isfinite(med[2 * nm + 1] - det) ? med[2 * nm + 1] - det : 0.0;
    }
    free(med);
    free(tmp);
    sh->bias_re = bf->bias;
    sh->bias_im = bf->bias + nm;
    return EL_OK;
}

/* Sets up the engine, the point fit, the residuals and the block length. */
/* The provider's solve on the sum of the features of every pair (the
 * full-sample refit), in one compensated pass. work holds 4 d +
 * prov->work_doubles doubles. Returns 0, or 1 when singular. */
static int full_sample_solve(const el_boot_provider *prov, const el_boot_dims *dims,
                             const double *states, size_t n_states, double *a,
                             double *bm, double *offset, double *work)
{
    size_t d = prov->n_features(dims), pairs = n_states - prov->span(dims) + 1;
    double *sum = work, *comp = work + d, *run = work + 2 * d, *g = work + 3 * d;
    memset(sum, 0, 2 * d * sizeof(double));
    sum_pairs_compensated(prov, dims, states, 0, pairs, NULL, sum, comp, run, g);
    for (size_t f = 0; f < d; f++)
        sum[f] += comp[f];
    return prov->solve(dims, sum, a, bm, offset, work + d);
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
 * memory the prefix table may take (else blocks read two prefix rows). */
static el_status plan_block_table(el_boot_engine *engine, size_t block, el_error *err)
{
    size_t stride = el_boot_engine_stride(engine);
    double rows = (double)(el_boot_engine_pairs(engine) / stride + 1);
    double bytes = rows * (double)el_boot_engine_features(engine) * sizeof(double);
    if (block % stride != 0 || block > el_boot_engine_pairs(engine)
        || bytes > (double)BOOT_DEFAULT_MAX_BYTES)
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
} engine_job;

static void *engine_job_run(void *arg)
{
    engine_job *j = arg;
    el_error_clear(&j->err);
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
 * least-squares whitening of el_estimator_boot_states (an ls model's own
 * states: the method is not consulted for the scale). */
static el_status ls_states(const el_series *series, const el_series *inputs,
                           const el_model *model, size_t threads, double **states,
                           el_error *err)
{
    if (model->n_inputs == 0)
        return reduced_states(series, model, threads, states, err);
    el_model ls_view = *model;
    ls_view.method = EL_METHOD_LS;
    size_t n_states = 0;
    return el_estimator_boot_states(series, inputs, &ls_view, states, &n_states, err);
}

/* The states the engine resamples and the stride to build it with. The
 * least-squares states serve fb, iv and ssi as they are (el_estimators
 * gives them the same whitening of the same basis, inputs included); only
 * tls scales its own. The stride: from a given block length its
 * grid, for an automatic one grid_base, for model-based resampling 1. */
static el_status engine_states(const el_series *series, const el_series *inputs,
                               const el_model *model, const el_boot_options *opt,
                               boot_shared *sh, boot_buffers *bf, engine_job *job,
                               el_error *err)
{
    const el_boot_provider *prov = el_estimator_provider_for(model);
    if (prov == NULL)
        return el_error_set(err, EL_ERR_INTERNAL, "no bootstrap statistics for method %s",
                            el_method_name(model->method));
    el_boot_dims dims = el_estimator_boot_dims(model);
    size_t n_states = model->n_pairs + 1;
    const double *states = bf->states;
    sh->grid = 1;
    if (model->method == EL_METHOD_TLS) {
        el_status st = el_estimator_boot_states(series, inputs, model, &bf->est_states,
                                                &n_states, err);
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
    el_status st = auto_block(bf->resid, ls_pairs, r, threads, &sh->block, err);
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

/* Everything before the replicates: the least-squares states, fit,
 * residuals and block length (every method takes its block length from
 * them; with inputs the fit is DMD with control), and the engine of the
 * model's own method, built beside them when there are threads to spare.
 * A method other than least squares resamples its own statistics (the
 * engine of its provider, el_estimators), so each replicate is that
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
    if (opt->kind == EL_RESAMPLE_MODEL && model->method != EL_METHOD_LS) {
        el_error_set(err, EL_ERR_USAGE, "model-based resampling works with --method ls only");
        el_error_option(err, "--resample");
        el_error_hint(err, "use --resample blocks (the default) with --method %s",
                      el_method_name(model->method));
        return EL_ERR_USAGE;
    }
    size_t threads = thread_count(opt->threads, (size_t)-1);
    el_status st = ls_states(series, inputs, model, threads, &bf->states, err);
    if (st != EL_OK)
        return st;
    engine_job job;
    st = engine_states(series, inputs, model, opt, sh, bf, &job, err);
    if (st != EL_OK)
        return st;
    engine_job_start(&job, threads >= 2);
    const el_boot_provider *ls = el_boot_provider_ls();
    size_t d = ls->n_features(&dims);
    bf->a0 = malloc(r * r * sizeof(double));
    bf->b0 = malloc((r * nu + 1) * sizeof(double));
    bf->c0 = malloc(r * sizeof(double));
    bf->pwork = malloc((4 * d + ls->work_doubles(&dims)) * sizeof(double));
    bf->resid = malloc((m + 1) * r * sizeof(double));
    if (!bf->a0 || !bf->b0 || !bf->c0 || !bf->pwork || !bf->resid) {
        st = el_error_set(err, EL_ERR_NOMEM, "out of memory (bootstrap)");
    } else if (full_sample_solve(ls, &dims, bf->states, m + 1, bf->a0, bf->b0, bf->c0,
                                 bf->pwork)) {
        el_error_set(err, EL_ERR_NUMERIC, "bootstrap: the full-sample refit is singular");
        el_error_hint(err, "use a lower --rank");
        st = EL_ERR_NUMERIC;
    }
    if (st == EL_OK)
        reduced_residuals(bf->states, m, r, nu, bf->a0, bf->b0, bf->c0, bf->resid);
    /* The engine is done by now (it and the refit take about as long);
     * the block length then has every thread. */
    el_boot_engine *engine = NULL;
    el_status jst = engine_job_finish(&job, &engine, st == EL_OK ? err : NULL);
    if (st == EL_OK && jst == EL_OK)
        st = block_length(opt, sh, bf, m, r, job.stride, threads, block_auto, err);
    if (model->method == EL_METHOD_LS)
        bf->engine = engine;
    else
        bf->est_engine = engine;
    if (st != EL_OK)
        return st;
    if (jst != EL_OK)
        return jst;
    if (opt->kind == EL_RESAMPLE_BLOCKS) {
        st = plan_block_table(engine, sh->block, err);
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
    if (model->method == EL_METHOD_LS)
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
        bf.flags = calloc(3 * total, 1);
        bf.rec = malloc((2 * nm + 2) * total * sizeof(double));
        size_t nt = thread_count(opt->threads, total);
        bf.workers = calloc(nt, sizeof(boot_worker));
        if (!bf.flags || !bf.rec || !bf.workers) {
            st = el_error_set(err, EL_ERR_NOMEM, "out of memory (bootstrap)");
        } else {
            sh.ok = bf.flags;
            sh.amb = bf.flags + total;
            sh.stable = bf.flags + 2 * total;
            sh.mode_re = bf.rec;
            sh.mode_im = bf.rec + nm * total;
            sh.trace = bf.rec + 2 * nm * total;
            sh.det = sh.trace + total;
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
        if (opt->bias_correct && model->method == EL_METHOD_LS &&
            model->n_pairs < EL_BOOT_BIAS_MAX_PAIRS) {
            st = measure_bias(&sh, &bf, err);
            result->bias_corrected = st == EL_OK && sh.bias_re != NULL;
            result->bias_replicates = sh.n_bias;
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
            st = aggregate(&sh, modes, opt, result, err);
    }
    if (st == EL_OK)
        st = add_run_warnings(&sh, model, mismatch, result, warnings);
    buffers_free(&bf);
    if (st != EL_OK)
        el_boot_free(result);
    return st;
}
