/* el_boot_engine: the bootstrap's replicate engine: moving blocks of
 * snapshot pairs, prefix sums of a provider's centred features so that a
 * replicate's sums cost O(blocks), and the Politis-White block length.
 * Knows estimators only through el_boot_provider (el_estimator.h). */
#include "el_boot_engine.h"

#include "el_bigmem.h"

#include <float.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#if defined(__x86_64__) && (defined(__GNUC__) || defined(__clang__))
#include <immintrin.h>
#define EL_ENGINE_AVX2 1
#else
#define EL_ENGINE_AVX2 0
#endif

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
    int runs;             /* re-add pairs by the provider's accumulate (wide states) */
    size_t block_steps;   /* el_boot_engine_plan_blocks: block length / stride (0: none) */
    double *block_sum;    /* (n_chk - block_steps) * d: P(q + block_steps) - P(q) */
    /* Wide engines (el_boot_engine_create_wide): no prefix table; after
     * el_boot_engine_plan_blocks the centred sums of every block of the
     * planned length and of the cut length that starts on the stride, in
     * single precision. */
    int wide;
    size_t wide_len, wide_cut, wide_rows;  /* block length, cut length, rows */
    float *wide_block, *wide_cut_sum;      /* wide_rows * d each */
    int vector;           /* add table rows four features a step (AVX2 CPUs) */
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

static int cpu_has_avx2(void);

/* kahan_add of y[f] = run[f] - len * centre[f] (centre NULL: run[f]) into
 * (s[f], c[f]) for every feature f < d. */
static void kahan_run_plain(double *s, double *c, const double *run, const double *centre,
                            double len, size_t d)
{
    for (size_t f = 0; f < d; f++)
        kahan_add(&s[f], &c[f], centre != NULL ? run[f] - len * centre[f] : run[f]);
}

#if EL_ENGINE_AVX2
/* kahan_run_plain four features a step: both of kahan_add's branches are
 * computed and the one its comparison picks is kept (an ordered >=, so a
 * NaN takes the second branch as there), with the same IEEE operations in
 * the same order and no fused ones: the same doubles, without a branch
 * per feature (the compensated pass over the data of a 32-number window,
 * 561 features a stride, spent a fifth of the engine's build on it). */
__attribute__((target("avx2"))) static void kahan_run_avx2(double *s, double *c,
                                                           const double *run,
                                                           const double *centre,
                                                           double len, size_t d)
{
    const __m256d sign = _mm256_set1_pd(-0.0), lv = _mm256_set1_pd(len);
    size_t f = 0;
    for (; f + 4 <= d; f += 4) {
        __m256d y = _mm256_loadu_pd(run + f);
        if (centre != NULL)
            y = _mm256_sub_pd(y, _mm256_mul_pd(lv, _mm256_loadu_pd(centre + f)));
        __m256d sv = _mm256_loadu_pd(s + f), cv = _mm256_loadu_pd(c + f);
        __m256d t = _mm256_add_pd(sv, y);
        __m256d ge = _mm256_cmp_pd(_mm256_andnot_pd(sign, sv), _mm256_andnot_pd(sign, y),
                                   _CMP_GE_OQ);
        __m256d big_s = _mm256_add_pd(_mm256_sub_pd(sv, t), y);
        __m256d big_y = _mm256_add_pd(_mm256_sub_pd(y, t), sv);
        cv = _mm256_add_pd(cv, _mm256_blendv_pd(big_y, big_s, ge));
        _mm256_storeu_pd(c + f, cv);
        _mm256_storeu_pd(s + f, t);
    }
    kahan_run_plain(s + f, c + f, run + f, centre != NULL ? centre + f : NULL, len, d - f);
}
#endif

static void kahan_run(double *s, double *c, const double *run, const double *centre,
                      double len, size_t d)
{
#if EL_ENGINE_AVX2
    if (cpu_has_avx2()) {
        kahan_run_avx2(s, c, run, centre, len, d);
        return;
    }
#endif
    kahan_run_plain(s, c, run, centre, len, d);
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
        kahan_run(s, c, run, centre, (double)(k1 - k0), d);
    }
}

static el_status engine_create(const el_boot_provider *provider,
                               const el_boot_dims *dims, const double *states,
                               size_t n_states, size_t max_bytes, size_t stride,
                               el_boot_engine **engine, el_error *err);

/* 1 when the table rows may be added by the AVX2 loop (checked at run
 * time: the build targets every x86-64 CPU). */
static int cpu_has_avx2(void)
{
#if EL_ENGINE_AVX2
    return __builtin_cpu_supports("avx2");
#else
    return 0;
#endif
}

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
        max_bytes = EL_BOOT_DEFAULT_MAX_BYTES;
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
    e->vector = cpu_has_avx2();
    e->gbar = calloc(e->d, sizeof(double));
    e->prefix = el_bigmem_alloc(e->n_chk * e->d * sizeof(double));
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

el_status el_boot_engine_create_wide(const el_boot_provider *provider,
                                     const el_boot_dims *dims, const double *states,
                                     size_t n_states, size_t stride,
                                     el_boot_engine **engine, el_error *err)
{
    if (engine == NULL)
        return el_error_set(err, EL_ERR_INTERNAL, "el_boot_engine_create_wide: engine is NULL");
    *engine = NULL;
    size_t span = provider != NULL && dims != NULL ? provider->span(dims) : 0;
    if (provider == NULL || dims == NULL || states == NULL || dims->r == 0 || span < 1
        || n_states < span || provider->accumulate == NULL)
        return el_error_set(err, EL_ERR_INTERNAL,
                            "el_boot_engine_create_wide: bad arguments (r %zu, %zu states)",
                            dims != NULL ? dims->r : 0, n_states);
    el_boot_engine *e = calloc(1, sizeof *e);
    if (e == NULL)
        return el_error_set(err, EL_ERR_NOMEM, "out of memory (bootstrap engine)");
    e->prov = provider;
    e->dims = *dims;
    e->r = dims->r;
    e->sw = dims->r + dims->n_inputs;
    e->n_states = n_states;
    e->n_pairs = n_states - span + 1;
    e->d = provider->n_features(dims);
    e->states = states;
    e->wide = 1;
    e->runs = 1;
    /* The stride the prefix table would have had (its memory cap): the
     * block grid, and so the replicates' draws, stay what they were. */
    double table_bytes = (double)(e->n_pairs + 1) * (double)e->d * sizeof(double);
    e->stride = (size_t)ceil(table_bytes / (double)EL_BOOT_DEFAULT_MAX_BYTES);
    if (e->stride < stride)
        e->stride = stride;
    if (e->stride < 1)
        e->stride = 1;
    e->n_chk = e->n_pairs / e->stride + 1;
    size_t d = e->d;
    e->gbar = calloc(d, sizeof(double));
    double *s = calloc(3 * d + provider->work_doubles(dims), sizeof(double));
    if (e->gbar == NULL || s == NULL) {
        free(s);
        el_boot_engine_destroy(e);
        return el_error_set(err, EL_ERR_NOMEM, "out of memory (bootstrap engine, %zu pairs)",
                            n_states);
    }
    sum_pairs_compensated(provider, &e->dims, states, 0, e->n_pairs, NULL, s, s + d,
                          s + 2 * d, s + 3 * d);
    for (size_t f = 0; f < d; f++)
        e->gbar[f] = (s[f] + s[d + f]) / (double)e->n_pairs;
    free(s);
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
    free(engine->wide_block);
    free(engine->wide_cut_sum);
    free(engine);
}

size_t el_boot_engine_pairs(const el_boot_engine *engine) { return engine->n_pairs; }
size_t el_boot_engine_stride(const el_boot_engine *engine) { return engine->stride; }
size_t el_boot_engine_features(const el_boot_engine *engine) { return engine->d; }

size_t el_boot_engine_work_doubles(const el_boot_engine *engine)
{
    return 3 * engine->d + engine->prov->work_doubles(&engine->dims);
}

void el_boot_engine_set_runs(el_boot_engine *engine, int runs)
{
    if (engine != NULL && !engine->wide)
        engine->runs = runs != 0 && engine->prov->accumulate != NULL;
}

/* acc[f] += sign * (g[f] - gbar[f]) for every feature: a pair's centred
 * features (add_prefix). */
static void centred_add_plain(const el_boot_engine *e, double sign, const double *g,
                              double *acc)
{
    double *restrict a = acc;
    const double *restrict t = g, *restrict gb = e->gbar;
    for (size_t f = 0; f < e->d; f++)
        a[f] += sign * (t[f] - gb[f]);
}

#if EL_ENGINE_AVX2
/* centred_add_plain four features a step: the same subtraction,
 * multiplication and addition per feature (no fused operations), so the
 * same doubles. */
__attribute__((target("avx2"))) static void centred_add_avx2(const el_boot_engine *e,
                                                             double sign, const double *g,
                                                             double *acc)
{
    size_t d = e->d, f = 0;
    const double *gb = e->gbar;
    __m256d sv = _mm256_set1_pd(sign);
    for (; f + 4 <= d; f += 4) {
        __m256d t = _mm256_sub_pd(_mm256_loadu_pd(g + f), _mm256_loadu_pd(gb + f));
        _mm256_storeu_pd(acc + f, _mm256_add_pd(_mm256_loadu_pd(acc + f),
                                                _mm256_mul_pd(sv, t)));
    }
    for (; f < d; f++)
        acc[f] += sign * (g[f] - gb[f]);
}
#endif

static void centred_add(const el_boot_engine *e, double sign, const double *g, double *acc)
{
#if EL_ENGINE_AVX2
    if (e->vector) {
        centred_add_avx2(e, sign, g, acc);
        return;
    }
#endif
    centred_add_plain(e, sign, g, acc);
}

/* acc += sign * P(j), the prefix sum of centred features over pairs [0, j).
 * tmp: d doubles, and with runs d + the provider's work after them. */
static void add_prefix(const el_boot_engine *e, size_t j, double sign,
                       double *acc, double *tmp)
{
    size_t d = e->d, q = j / e->stride;
    const double *p = e->prefix + q * d;
    for (size_t f = 0; f < d; f++)
        acc[f] += sign * p[f];
    if (e->runs && j > q * e->stride) {
        /* The pairs since the prefix as one run of matrix products. */
        size_t k0 = q * e->stride, len = j - k0;
        memset(tmp, 0, d * sizeof(double));
        e->prov->accumulate(&e->dims, e->states + k0 * e->sw, len, tmp, tmp + d);
        for (size_t f = 0; f < d; f++)
            acc[f] += sign * (tmp[f] - (double)len * e->gbar[f]);
        return;
    }
    for (size_t k = q * e->stride; k < j; k++) {
        e->prov->features(&e->dims, e->states + k * e->sw, tmp);
        centred_add(e, sign, tmp, acc);
    }
}

/* acc (d doubles, zeroed here) = sum of the features of pairs [k0, k0 +
 * len) by the provider's accumulate; g: the provider's work. */
static void run_sum(const el_boot_engine *e, size_t k0, size_t len, double *acc, double *g)
{
    memset(acc, 0, e->d * sizeof(double));
    if (len > 0)
        e->prov->accumulate(&e->dims, e->states + k0 * e->sw, len, acc, g);
}

/* row = (float)(sum - len * gbar). */
static void store_centred(const el_boot_engine *e, const double *sum, size_t len, float *row)
{
    for (size_t f = 0; f < e->d; f++)
        row[f] = (float)(sum[f] - (double)len * e->gbar[f]);
}

/* The wide engine's tables: for every start q * stride that a block of
 * block_length pairs can have, the centred sum of that block and of the
 * cut last block of a replicate (the pairs left over, n_pairs - (nb - 1)
 * block_length). Sliding sums: each step adds the run of stride pairs that
 * enters a block and takes away the one that leaves it, so the tables
 * cost about three passes of the provider's accumulate over the pairs
 * whatever the block length. Single precision: a block's centred sum is
 * O(sqrt(block) sd) of the features, and its float rounding (6e-8
 * relative) is some 1e-7 of the bootstrap's own spread, while it halves
 * the table and the memory traffic of a replicate (two double prefix
 * rows per block before, one float row now). */
static el_status plan_wide(el_boot_engine *e, size_t block_length, el_error *err)
{
    size_t s = e->stride, d = e->d, len = block_length;
    size_t nb = el_boot_block_count(e->n_pairs, len);
    size_t cut = e->n_pairs - (nb - 1) * len;
    size_t rows = (e->n_pairs - len) / s + 1;
    float *tb = malloc(rows * d * sizeof(float));
    float *tc = cut < len ? malloc(rows * d * sizeof(float)) : NULL;
    size_t wd = e->prov->work_doubles(&e->dims);
    double *buf = malloc((4 * d + wd) * sizeof(double));
    if (tb == NULL || buf == NULL || (cut < len && tc == NULL)) {
        free(tb);
        free(tc);
        free(buf);
        return el_error_set(err, EL_ERR_NOMEM, "out of memory (bootstrap block table)");
    }
    double *bsum = buf, *tail = buf + d, *run = buf + 2 * d, *out = buf + 3 * d;
    double *g = buf + 4 * d;
    /* bsum: pairs [q s, q s + len); tail: pairs [q s + cut, q s + len). */
    run_sum(e, 0, len, bsum, g);
    if (tc != NULL)
        run_sum(e, cut, len - cut, tail, g);
    for (size_t q = 0; q < rows; q++) {
        store_centred(e, bsum, len, tb + q * d);
        if (tc != NULL) {
            for (size_t f = 0; f < d; f++)
                out[f] = bsum[f] - tail[f];
            store_centred(e, out, cut, tc + q * d);
        }
        if (q + 1 == rows)
            break;
        size_t a = q * s;
        run_sum(e, a + len, s, run, g);          /* enters both */
        for (size_t f = 0; f < d; f++) {
            bsum[f] += run[f];
            tail[f] += run[f];
        }
        run_sum(e, a, s, run, g);                /* leaves the block */
        for (size_t f = 0; f < d; f++)
            bsum[f] -= run[f];
        if (tc != NULL) {
            run_sum(e, a + cut, s, run, g);      /* leaves the tail */
            for (size_t f = 0; f < d; f++)
                tail[f] -= run[f];
        }
    }
    free(buf);
    free(e->wide_block);
    free(e->wide_cut_sum);
    e->wide_block = tb;
    e->wide_cut_sum = tc;
    e->wide_len = len;
    e->wide_cut = cut;
    e->wide_rows = rows;
    return EL_OK;
}

el_status el_boot_engine_plan_blocks(el_boot_engine *engine, size_t block_length,
                                     el_error *err)
{
    if (engine != NULL && engine->wide && block_length > 0
        && block_length <= engine->n_pairs)
        return plan_wide(engine, block_length, err);
    if (engine == NULL || block_length == 0 || block_length % engine->stride != 0
        || block_length > engine->n_pairs)
        return el_error_set(err, EL_ERR_INTERNAL,
                            "el_boot_engine_plan_blocks: block length %zu is no multiple "
                            "of the stride", block_length);
    el_boot_engine *e = engine;
    size_t steps = block_length / e->stride, rows = e->n_chk - steps, d = e->d;
    double *table = el_bigmem_alloc(rows * d * sizeof(double));
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

/* The planned table row of a block of a wide engine, or NULL. */
static const float *wide_row(const el_boot_engine *e, const el_boot_block *bl)
{
    if (e->wide_block == NULL || bl->start % e->stride != 0
        || bl->start / e->stride >= e->wide_rows)
        return NULL;
    size_t q = bl->start / e->stride;
    if (bl->length == e->wide_len)
        return e->wide_block + q * e->d;
    if (e->wide_cut_sum != NULL && bl->length == e->wide_cut)
        return e->wide_cut_sum + q * e->d;
    return NULL;
}

/* Features per tile of wide_sum: 2,048 doubles of the sum (16 KiB) stay
 * in the first-level cache while every block's float row adds its part. */
#define BOOT_WIDE_TILE 2048

/* Features per tile of wide_sum_many: every replicate of the batch adds
 * its rows' part of the tile in turn, so the tile of the table (4 KiB a
 * row, a few hundred KiB for all rows) is fetched from memory once per
 * batch and then read from the cache. */
#define BOOT_WIDE_MANY_TILE 1024

/* The blocks of a wide engine that have no table row, by the provider's
 * accumulate: sum is zeroed, then those blocks' centred sums are added in
 * block order. Returns the replicate's pairs. */
static size_t wide_unplanned(const el_boot_engine *e, const el_boot_block *blocks,
                             size_t n_blocks, double *sum, double *work)
{
    size_t d = e->d, total = 0;
    memset(sum, 0, d * sizeof(double));
    for (size_t b = 0; b < n_blocks; b++) {
        total += blocks[b].length;
        if (wide_row(e, &blocks[b]) != NULL)
            continue;
        run_sum(e, blocks[b].start, blocks[b].length, work, work + d);
        double len = (double)blocks[b].length;
        for (size_t f = 0; f < d; f++)
            sum[f] += work[f] - len * e->gbar[f];
    }
    return total;
}

/* Adds the table rows of the planned blocks to features [f0, f1) of sum,
 * in block order. Four rows per pass over the tile: each feature still
 * adds its rows one after the other in block order (the same sums to the
 * last bit), but the sum is loaded and stored once per four rows instead
 * of once per row, which was most of the loop's memory traffic. */
static void wide_rows_add(const el_boot_engine *e, const el_boot_block *blocks,
                          size_t n_blocks, size_t f0, size_t f1, double *sum)
{
    const float *rows[4];
    size_t k = 0;
    double *restrict acc = sum;
    for (size_t b = 0; b <= n_blocks; b++) {
        const float *row = b < n_blocks ? wide_row(e, &blocks[b]) : NULL;
        if (row != NULL)
            rows[k++] = row;
        if (k < 4 && (b < n_blocks || k == 0))
            continue;
        if (k == 4) {
            const float *restrict p0 = rows[0], *restrict p1 = rows[1];
            const float *restrict p2 = rows[2], *restrict p3 = rows[3];
            for (size_t f = f0; f < f1; f++) {
                double a = acc[f];
                a += (double)p0[f];
                a += (double)p1[f];
                a += (double)p2[f];
                a += (double)p3[f];
                acc[f] = a;
            }
        } else {
            for (size_t q = 0; q < k; q++) {
                const float *restrict p = rows[q];
                for (size_t f = f0; f < f1; f++)
                    acc[f] += (double)p[f];
            }
        }
        k = 0;
    }
}

/* el_boot_engine_sum of a wide engine: a table row per planned block,
 * else the block's pairs by the provider's accumulate. The rows are added
 * a tile of features at a time (all blocks per tile): the sum of a wide
 * state is megabytes, and adding whole rows in turn moved it through
 * memory once per block. Each feature still adds its blocks in order. */
static void wide_sum(const el_boot_engine *e, const el_boot_block *blocks,
                     size_t n_blocks, double *sum, double *work)
{
    size_t d = e->d, total = wide_unplanned(e, blocks, n_blocks, sum, work);
    for (size_t f0 = 0; f0 < d; f0 += BOOT_WIDE_TILE) {
        size_t f1 = f0 + BOOT_WIDE_TILE < d ? f0 + BOOT_WIDE_TILE : d;
        wide_rows_add(e, blocks, n_blocks, f0, f1, sum);
    }
    for (size_t f = 0; f < d; f++)
        sum[f] += (double)total * e->gbar[f];
}

void el_boot_engine_sum_many(const el_boot_engine *engine,
                             const el_boot_block *const *blocks, const size_t *n_blocks,
                             size_t count, double *const *sums, double *work)
{
    const el_boot_engine *e = engine;
    if (!e->wide) {
        for (size_t k = 0; k < count; k++)
            el_boot_engine_sum(e, blocks[k], n_blocks[k], sums[k], work);
        return;
    }
    size_t d = e->d;
    for (size_t k = 0; k < count; k++)
        wide_unplanned(e, blocks[k], n_blocks[k], sums[k], work);
    for (size_t f0 = 0; f0 < d; f0 += BOOT_WIDE_MANY_TILE) {
        size_t f1 = f0 + BOOT_WIDE_MANY_TILE < d ? f0 + BOOT_WIDE_MANY_TILE : d;
        for (size_t k = 0; k < count; k++)
            wide_rows_add(e, blocks[k], n_blocks[k], f0, f1, sums[k]);
    }
    for (size_t k = 0; k < count; k++) {
        size_t total = 0;
        for (size_t b = 0; b < n_blocks[k]; b++)
            total += blocks[k][b].length;
        for (size_t f = 0; f < d; f++)
            sums[k][f] += (double)total * e->gbar[f];
    }
}

int el_boot_engine_solve(const el_boot_engine *engine, const double *sum, double *a,
                         double *offset, double *work)
{
    return engine->prov->solve(&engine->dims, sum, a, NULL, offset, work + engine->d);
}

int el_boot_engine_is_wide(const el_boot_engine *engine)
{
    return engine != NULL && engine->wide;
}

/* Table rows added per pass of rows_add, and how many blocks ahead of
 * the pass their rows are fetched (one pass ahead: the rows of a
 * replicate are scattered over a table larger than a core's cache). */
#define BOOT_ROW_GROUP 8

/* acc[f] += rows[0][f], then rows[1][f], ... rows[k - 1][f] for every
 * feature f < d: each feature adds the rows one after the other in the
 * given order (the sum of adding them row by row, to the last bit), but
 * acc is loaded and stored once per k rows instead of once per row. */
static void rows_add_plain(const double *const *rows, size_t k, size_t d, double *acc)
{
    if (k == BOOT_ROW_GROUP) {
        const double *restrict p0 = rows[0], *restrict p1 = rows[1], *restrict p2 = rows[2];
        const double *restrict p3 = rows[3], *restrict p4 = rows[4], *restrict p5 = rows[5];
        const double *restrict p6 = rows[6], *restrict p7 = rows[7];
        double *restrict a = acc;
        for (size_t f = 0; f < d; f++) {
            double v = a[f];
            v += p0[f];
            v += p1[f];
            v += p2[f];
            v += p3[f];
            v += p4[f];
            v += p5[f];
            v += p6[f];
            v += p7[f];
            a[f] = v;
        }
        return;
    }
    for (size_t q = 0; q < k; q++) {
        const double *restrict p = rows[q];
        double *restrict a = acc;
        for (size_t f = 0; f < d; f++)
            a[f] += p[f];
    }
}

#if EL_ENGINE_AVX2
/* rows_add_plain four features a step: the same additions in the same
 * order per feature (IEEE additions, no fused operations), so the same
 * doubles. */
__attribute__((target("avx2"))) static void rows_add_avx2(const double *const *rows,
                                                           size_t k, size_t d, double *acc)
{
    size_t f = 0;
    for (; f + 16 <= d; f += 16) {
        __m256d a0 = _mm256_loadu_pd(acc + f), a1 = _mm256_loadu_pd(acc + f + 4);
        __m256d a2 = _mm256_loadu_pd(acc + f + 8), a3 = _mm256_loadu_pd(acc + f + 12);
        for (size_t q = 0; q < k; q++) {
            const double *p = rows[q] + f;
            a0 = _mm256_add_pd(a0, _mm256_loadu_pd(p));
            a1 = _mm256_add_pd(a1, _mm256_loadu_pd(p + 4));
            a2 = _mm256_add_pd(a2, _mm256_loadu_pd(p + 8));
            a3 = _mm256_add_pd(a3, _mm256_loadu_pd(p + 12));
        }
        _mm256_storeu_pd(acc + f, a0);
        _mm256_storeu_pd(acc + f + 4, a1);
        _mm256_storeu_pd(acc + f + 8, a2);
        _mm256_storeu_pd(acc + f + 12, a3);
    }
    for (; f + 4 <= d; f += 4) {
        __m256d a0 = _mm256_loadu_pd(acc + f);
        for (size_t q = 0; q < k; q++)
            a0 = _mm256_add_pd(a0, _mm256_loadu_pd(rows[q] + f));
        _mm256_storeu_pd(acc + f, a0);
    }
    for (; f < d; f++) {
        double v = acc[f];
        for (size_t q = 0; q < k; q++)
            v += rows[q][f];
        acc[f] = v;
    }
}
#endif

static void rows_add(const el_boot_engine *e, const double *const *rows, size_t k,
                     double *acc)
{
#if EL_ENGINE_AVX2
    if (e->vector) {
        rows_add_avx2(rows, k, e->d, acc);
        return;
    }
#endif
    rows_add_plain(rows, k, e->d, acc);
}

/* Fetches a table row (d doubles). */
static void prefetch_row(const double *row, size_t d)
{
    /* Every 64-byte line the row touches (it need not start on one); four
     * a step, so the loop costs little beside the fetches themselves. */
    const char *p = (const char *)row;
    size_t n = d * sizeof(double), o = 0;
    for (; o + 256 <= n; o += 256) {
        BOOT_PREFETCH(p + o);
        BOOT_PREFETCH(p + o + 64);
        BOOT_PREFETCH(p + o + 128);
        BOOT_PREFETCH(p + o + 192);
    }
    for (; o < n; o += 64)
        BOOT_PREFETCH(p + o);
    BOOT_PREFETCH(p + n - 1);
}

/* The stored row of a block of the planned length that starts on a stored
 * prefix, or NULL for any other block. */
static const double *planned_row(const el_boot_engine *e, const el_boot_block *bl)
{
    if (bl->start % e->stride != 0 || bl->length != e->block_steps * e->stride)
        return NULL;
    return e->block_sum + (bl->start / e->stride) * e->d;
}

/* The leading blocks that have a stored row (every block of a replicate
 * but its cut last one, for blocks drawn on the grid): their rows added
 * into the zeroed sum in block order, BOOT_ROW_GROUP rows a pass, each
 * row fetched a pass before it is added. Returns how many blocks were
 * added and adds their pairs to *total. */
static size_t planned_rows_sum(const el_boot_engine *e, const el_boot_block *blocks,
                               size_t n_blocks, double *sum, size_t *total)
{
    /* ring[k % (2 G)]: the row of block k, fetched when it was found. */
    const double *ring[2 * BOOT_ROW_GROUP];
    size_t found = 0, added = 0;
    for (;;) {
        const double *row = found < n_blocks ? planned_row(e, &blocks[found]) : NULL;
        if (row != NULL) {
            prefetch_row(row, e->d);
            ring[found % (2 * BOOT_ROW_GROUP)] = row;
            found++;
        }
        /* A full pass once the next one is being fetched; the rest at the
         * end of the planned blocks. */
        if (row != NULL && found - added < 2 * BOOT_ROW_GROUP)
            continue;
        while (added < found) {
            size_t k = found - added < BOOT_ROW_GROUP ? found - added : BOOT_ROW_GROUP;
            if (row != NULL && k < BOOT_ROW_GROUP)
                break;
            const double *rows[BOOT_ROW_GROUP];
            for (size_t q = 0; q < k; q++)
                rows[q] = ring[(added + q) % (2 * BOOT_ROW_GROUP)];
            rows_add(e, rows, k, sum);
            added += k;
            if (row != NULL)
                break;
        }
        if (row == NULL)
            break;
    }
    *total += found * e->block_steps * e->stride;
    return found;
}

void el_boot_engine_set_vector(el_boot_engine *engine, int allow)
{
    if (engine != NULL)
        engine->vector = allow != 0 && cpu_has_avx2();
}

void el_boot_engine_sum(const el_boot_engine *engine,
                        const el_boot_block *blocks, size_t n_blocks,
                        double *sum, double *work)
{
    const el_boot_engine *e = engine;
    if (e->wide) {
        wide_sum(e, blocks, n_blocks, sum, work);
        return;
    }
    size_t d = e->d, total = 0, planned = e->block_steps * e->stride;
    memset(sum, 0, d * sizeof(double));
    size_t first = e->block_sum != NULL ? planned_rows_sum(e, blocks, n_blocks, sum, &total)
                                        : 0;
    for (size_t b = first; b < n_blocks; b++) {
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

/* The provider's solve on the sum of the features of every pair (the
 * full-sample refit), in one compensated pass. work holds 4 d +
 * prov->work_doubles doubles. Returns 0, or 1 when singular. */
int el_boot_full_sample_solve(const el_boot_provider *prov, const el_boot_dims *dims,
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

/* Lags autocov_many takes in one pass over x. */
#define BOOT_ACV_LAGS 4

#if EL_ENGINE_AVX2
/* autocov for lags k0 .. k0 + count - 1 (count <= BOOT_ACV_LAGS) in one
 * pass: lane l of lag j's register is autocov's s_l (the products of
 * t = l mod 4 in ascending t, each a rounded multiplication then a
 * rounded addition, no fused operations), so every lag gets autocov's
 * doubles; x[t .. t + 3] is loaded once for all lags. */
__attribute__((target("avx2"))) static void autocov_many_avx2(const double *x, size_t n,
                                                              size_t k0, size_t count,
                                                              double *out)
{
    __m256d acc[BOOT_ACV_LAGS];
    for (size_t j = 0; j < count; j++)
        acc[j] = _mm256_setzero_pd();
    /* Steps of four that every lag takes (the shortest, the last lag's). */
    size_t common = (n - (k0 + count - 1)) / 4 * 4, t = 0;
    if (count == BOOT_ACV_LAGS) {
        __m256d a0 = acc[0], a1 = acc[1], a2 = acc[2], a3 = acc[3];
        const double *y = x + k0;
        for (; t < common; t += 4) {
            __m256d v = _mm256_loadu_pd(x + t);
            a0 = _mm256_add_pd(a0, _mm256_mul_pd(v, _mm256_loadu_pd(y + t)));
            a1 = _mm256_add_pd(a1, _mm256_mul_pd(v, _mm256_loadu_pd(y + t + 1)));
            a2 = _mm256_add_pd(a2, _mm256_mul_pd(v, _mm256_loadu_pd(y + t + 2)));
            a3 = _mm256_add_pd(a3, _mm256_mul_pd(v, _mm256_loadu_pd(y + t + 3)));
        }
        acc[0] = a0;
        acc[1] = a1;
        acc[2] = a2;
        acc[3] = a3;
    } else {
        for (; t < common; t += 4) {
            __m256d v = _mm256_loadu_pd(x + t);
            for (size_t j = 0; j < count; j++)
                acc[j] = _mm256_add_pd(acc[j],
                                       _mm256_mul_pd(v, _mm256_loadu_pd(x + t + k0 + j)));
        }
    }
    for (size_t j = 0; j < count; j++) {
        size_t k = k0 + j, len = n - k, u = common;
        __m256d a = acc[j];
        for (; u + 4 <= len; u += 4)
            a = _mm256_add_pd(a, _mm256_mul_pd(_mm256_loadu_pd(x + u),
                                               _mm256_loadu_pd(x + u + k)));
        double s[4];
        _mm256_storeu_pd(s, a);
        for (; u < len; u++)
            s[0] += x[u] * x[u + k];
        out[j] = ((s[0] + s[1]) + (s[2] + s[3])) / (double)n;
    }
}
#endif

void el_boot_autocov_lags(const double *x, size_t n, size_t k0, size_t count,
                          int allow_vector, double *out)
{
#if EL_ENGINE_AVX2
    if (allow_vector && cpu_has_avx2()) {
        for (size_t j = 0; j < count; j += BOOT_ACV_LAGS) {
            size_t c = count - j < BOOT_ACV_LAGS ? count - j : BOOT_ACV_LAGS;
            autocov_many_avx2(x, n, k0 + j, c, out + j);
        }
        return;
    }
#else
    (void)allow_vector;
#endif
    for (size_t j = 0; j < count; j++)
        out[j] = autocov(x, n, k0 + j);
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

static el_status pw_length(double *y, size_t n, double *b_out, el_error *err);
static el_status pw_from_centred(const double *x, size_t n, double *b_out, el_error *err);

el_status el_boot_pw_block_length(const double *x, size_t n, double *b_out,
                                  el_error *err)
{
    *b_out = 1.0;
    if (n < 8)
        return EL_OK;
    double *y = malloc(n * sizeof(double));
    if (y == NULL)
        return el_error_set(err, EL_ERR_NOMEM, "out of memory (block length)");
    memcpy(y, x, n * sizeof(double));
    el_status st = pw_length(y, n, b_out, err);
    free(y);
    return st;
}

el_status el_boot_pw_block_length_inplace(double *x, size_t n, double *b_out, el_error *err)
{
    *b_out = 1.0;
    if (n < 8)
        return EL_OK;
    return pw_length(x, n, b_out, err);
}

el_status el_boot_pw_block_length_centred(const double *y, size_t n, double *b_out,
                                          el_error *err)
{
    *b_out = 1.0;
    if (n < 8)
        return EL_OK;
    return pw_from_centred(y, n, b_out, err);
}

double el_boot_pw_mean(const double *x, size_t n)
{
    double mean = 0.0;
    for (size_t t = 0; t < n; t++)
        mean += x[t];
    return mean / (double)n;
}

/* The block length of y (n >= 8), demeaned in place. */
static el_status pw_length(double *y, size_t n, double *b_out, el_error *err)
{
    double mean = el_boot_pw_mean(y, n);
    for (size_t t = 0; t < n; t++)
        y[t] = y[t] - mean;
    return pw_from_centred(y, n, b_out, err);
}

/* The block length of the demeaned x (n >= 8). Autocovariances are
 * costly, so they are computed lazily, BOOT_ACV_LAGS lags a pass (a lag
 * or three past the last one needed cost little and are not read). */
static el_status pw_from_centred(const double *x, size_t n, double *b_out, el_error *err)
{
    size_t kn = (size_t)ceil(sqrt(log10((double)n)));
    if (kn < 5)
        kn = 5;
    size_t m_max = (size_t)ceil(sqrt((double)n)) + kn;
    if (m_max + kn >= n)
        m_max = n > kn + 1 ? n - kn - 1 : 0;
    size_t n_acv = m_max + kn + 1;
    double *acv = malloc(n_acv * sizeof(double));
    if (acv == NULL)
        return el_error_set(err, EL_ERR_NOMEM, "out of memory (block length)");
    size_t have = 0; /* acv[0..have) computed */
    acv[have++] = autocov(x, n, 0);
    if (!(acv[0] > 0.0)) {
        free(acv);
        return EL_OK;
    }
    double crit = 2.0 * sqrt(log10((double)n) / (double)n);
    size_t m_hat = m_max, run = 0;
    for (size_t k = 1; k <= m_max + kn; k++) {
        if (k >= have) {
            size_t c = n_acv - have < BOOT_ACV_LAGS ? n_acv - have : BOOT_ACV_LAGS;
            el_boot_autocov_lags(x, n, have, c, 1, acv + have);
            have += c;
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
    if (have <= big_m) {
        el_boot_autocov_lags(x, n, have, big_m + 1 - have, 1, acv + have);
        have = big_m + 1;
    }
    double g_sum = acv[0], big_g = 0.0;
    for (size_t k = 1; k <= big_m; k++) {
        double lam = flat_top((double)k / (double)big_m);
        g_sum += 2.0 * lam * acv[k];
        big_g += 2.0 * lam * (double)k * acv[k];
    }
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
