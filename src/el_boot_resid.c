/* el_boot_resid: the point fit's residuals in reduced coordinates and the
 * automatic block length from them (Politis-White per component), stored
 * or made again a chunk of pairs at a time. Split from el_resample. */
#include "el_boot_resid.h"

#include <cblas.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "el_boot_engine.h"
#include "el_chunks.h"

/* Residuals of the point fit in reduced coordinates, centred (states of
 * r + nu doubles, the inputs after the state). */
void el_boot_reduced_residuals(const double *states, size_t m, size_t r, size_t nu,
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
    /* restrict: the r spare doubles of the mean lie past the m r
     * residuals, so the loops vectorise (the same operations per cell). */
    double *restrict rs = res, *restrict mn = mean;
    const double *restrict cc = c;
    memset(mn, 0, r * sizeof(double));
    for (size_t k = 0; k < m; k++)
        for (size_t i = 0; i < r; i++) {
            rs[k * r + i] -= cc[i];
            mn[i] += rs[k * r + i];
        }
    for (size_t i = 0; i < r; i++)
        mn[i] /= (double)m;
    for (size_t k = 0; k < m; k++)
        for (size_t i = 0; i < r; i++)
            rs[k * r + i] -= mn[i];
}

/* Pairs whose residuals are made at a time when they are not stored. */
#define BOOT_RESID_CHUNK 4096

/* Component i of the centred residuals (reduced_residuals' res[k r + i])
 * into x (m doubles), a chunk of pairs at a time through chunk (r x
 * BOOT_RESID_CHUNK doubles). The same products on a chunk's columns give
 * the same doubles as on all of them (checked under every OpenBLAS kernel
 * the tests run: the product of one column does not depend on the
 * others), and the mean adds them in the same order, so x is bit for bit
 * the stored column. */
static void resid_component(const el_boot_resid_source *src, size_t i, double *x, double *chunk)
{
    size_t r = src->r, nu = src->nu, sw = r + nu, m = src->m;
    double mean = 0.0;
    for (size_t k0 = 0; k0 < m; k0 += BOOT_RESID_CHUNK) {
        size_t n = m - k0 < BOOT_RESID_CHUNK ? m - k0 : BOOT_RESID_CHUNK;
        for (size_t k = 0; k < n; k++)
            memcpy(chunk + k * r, src->states + (k0 + k + 1) * sw, r * sizeof(double));
        cblas_dgemm(CblasColMajor, CblasNoTrans, CblasNoTrans, (int)r, (int)n, (int)r, -1.0,
                    src->a, (int)r, src->states + k0 * sw, (int)sw, 1.0, chunk, (int)r);
        if (nu > 0)
            cblas_dgemm(CblasColMajor, CblasNoTrans, CblasNoTrans, (int)r, (int)n, (int)nu,
                        -1.0, src->bm, (int)r, src->states + k0 * sw + r, (int)sw, 1.0, chunk,
                        (int)r);
        for (size_t k = 0; k < n; k++) {
            double v = chunk[k * r + i] - src->c[i];
            x[k0 + k] = v;
            mean += v;
        }
    }
    mean /= (double)m;
    for (size_t k = 0; k < m; k++)
        x[k] -= mean;
}

typedef struct {
    const double *res;            /* stored residuals, or NULL: made from src */
    const el_boot_resid_source *src;
    size_t m, r;
    double *x;                    /* m doubles per thread */
    double *chunk;                /* r x BOOT_RESID_CHUNK per thread (streamed) */
    double *b;                    /* r: each component's length */
    double *mean;                 /* r: each stored component's mean (pw_means) */
    el_status *st;                /* r */
} pw_ctx;

static void pw_component(void *arg, size_t i, size_t slot)
{
    pw_ctx *c = arg;
    double *x = c->x + slot * c->m;
    el_error err;
    el_error_clear(&err);
    c->b[i] = 1.0;
    if (c->res != NULL) {
        /* Copied and demeaned in one pass: the mean is the one
         * el_boot_pw_block_length takes (pw_means), so these are the
         * doubles it would demean the copy to. */
        const double *restrict src = c->res + i;
        double *restrict y = x, mean = c->mean[i];
        size_t r = c->r;
        for (size_t k = 0; k < c->m; k++)
            y[k] = src[k * r] - mean;
        c->st[i] = el_boot_pw_block_length_centred(x, c->m, &c->b[i], &err);
        return;
    }
    resid_component(c->src, i, x, c->chunk + slot * c->r * BOOT_RESID_CHUNK);
    c->st[i] = el_boot_pw_block_length_inplace(x, c->m, &c->b[i], &err);
}

/* mean[i] = el_boot_pw_mean of component i of the stored residuals, all
 * components in one pass over them: each adds its column in pair order,
 * as el_boot_pw_mean does, but the r sums advance together instead of one
 * chain of m dependent additions after another. */
static void pw_means(const double *res, size_t m, size_t r, double *mean)
{
    double *restrict s = mean;
    memset(s, 0, r * sizeof(double));
    for (size_t k = 0; k < m; k++) {
        const double *restrict row = res + k * r;
        for (size_t i = 0; i < r; i++)
            s[i] += row[i];
    }
    for (size_t i = 0; i < r; i++)
        s[i] /= (double)m;
}

el_status el_boot_auto_block(const double *res, const el_boot_resid_source *src, size_t m,
                             size_t r, size_t threads, size_t *block, el_error *err)
{
    size_t slots = el_chunks_threads(r, threads);
    pw_ctx c = { res, src, m, r, malloc(slots * m * sizeof(double)),
                 res == NULL ? malloc(slots * r * BOOT_RESID_CHUNK * sizeof(double)) : NULL,
                 malloc(2 * r * sizeof(double)), NULL, malloc(r * sizeof(el_status)) };
    if (c.x == NULL || c.b == NULL || c.st == NULL || (res == NULL && c.chunk == NULL)) {
        free(c.x);
        free(c.chunk);
        free(c.b);
        free(c.st);
        return el_error_set(err, EL_ERR_NOMEM, "out of memory (block length)");
    }
    c.mean = c.b + r;
    memset(c.mean, 0, r * sizeof(double));
    if (res != NULL && m > 0)
        pw_means(res, m, r, c.mean);
    el_chunks_run(r, slots, pw_component, &c);
    double best = 1.0;
    el_status st = EL_OK;
    for (size_t i = 0; i < r; i++) {
        if (c.st[i] != EL_OK && st == EL_OK)
            st = el_error_set(err, c.st[i], "out of memory (block length)");
        if (c.b[i] > best)
            best = c.b[i];
    }
    free(c.x);
    free(c.chunk);
    free(c.b);
    free(c.st);
    if (st != EL_OK)
        return st;
    size_t l = (size_t)llround(best);
    *block = l < 1 ? 1 : (l > m ? m : l);
    return EL_OK;
}

