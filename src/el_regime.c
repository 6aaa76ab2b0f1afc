/* el_regime: transient / stationary / driven classification by trends of
 * the amplitude envelope and level, tested against the stationary Gaussian
 * null built from the signal's own autocorrelation; the growth veto. */
#include "el_regime.h"

#include <fftw3.h>
#include <float.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* Fewest segments the trend tests accept: below this a slope from so few
 * points says little and the normal reference of z is poor. */
#define MIN_SEGMENTS 6
#define MIN_SEGMENT_SAMPLES 8
/* The least-squares slope and the step contrasts "first s segments against
 * the rest" for s in {1, 2, M/4, M/2, 3M/4, M-2, M-1}. */
#define MAX_CONTRASTS 8
/* The drift test: a Dickey-Fuller regression of block mean on the previous
 * block mean, M = 32 blocks of at least 8 samples, with the Phillips-Perron
 * correction for serially correlated residuals over a Bartlett window of 3
 * lags (4 (M/100)^(2/9) rounded down, the rule of thumb of Newey & West
 * 1994, Rev. Econ. Stud. 61; recalled from memory, common practice). */
#define DRIFT_BLOCKS 32
#define DRIFT_LAGS 3

/* Right-tail quantiles (probability, value) of the drift statistic under
 * the least favourable stationary process the module promises to tolerate:
 * a second-order linear process (x'' + 2 zeta wn x' + wn^2 x = white
 * noise) whose natural time scale 1/wn is a quarter of the window (wn T =
 * 4), with the least favourable damping ratio of a grid (0.1). Monte Carlo
 * of exactly this statistic on 32 block means of 16 samples, 400000
 * windows, by tests/data/make_regime_drift_table.py (the statistic depends
 * on wn T and zeta only, and barely on the block length). Faster processes
 * and first-order ones (an AR(1) or a random walk, whose 99% quantiles are
 * 0.3 and 1.1) give smaller values, so these p-values are conservative for
 * them; slower second-order ones are beyond the module's stated limits. */
static const double drift_table[][2] = {
    { 0.99, -4.3598 },
    { 0.9, -2.4461 },
    { 0.75, -1.7525 },
    { 0.5, -0.9063 },
    { 0.25, 0.2060 },
    { 0.1, 1.0948 },
    { 0.05, 1.6654 },
    { 0.025, 2.2684 },
    { 0.01, 3.1273 },
    { 0.005, 3.8626 },
    { 0.0025, 4.6270 },
    { 0.001, 5.6905 },
    { 0.0005, 6.4931 },
    { 0.0002, 7.6309 },
    { 0.0001, 8.5139 },
};
#define DRIFT_TABLE_SIZE (sizeof drift_table / sizeof drift_table[0])

/* Long windows: the autocorrelation by the blocked ("six-step") transform
 * when the single transform would be at least this long. Its buffers
 * (16 bytes a point: 64 MiB here) then leave the last-level cache, and
 * FFTW's one transform of them, memory-bound, cost 1.6 s of 8 channels at
 * 4e6 samples against 0.27 s at 1e6 (6x for 4x the data); the blocked one
 * works on cache-sized columns and rows and costs about 4x. Below it the
 * single transform keeps every result bit for bit as before. */
#define BLOCKED_MIN_LENGTH ((size_t)1 << 22)
/* The blocked transform's grid: rows of BLOCKED_ROWS points (the column
 * transforms' length, a power of two), columns taken BLOCKED_BATCH at a
 * time (a batch of columns is 8 x 2048 x 16 bytes = 256 KiB: it stays in
 * the second-level cache). */
#define BLOCKED_ROWS 2048
#define BLOCKED_BATCH 8

struct el_regime_work {
    size_t fft_length;        /* >= 2 N - 1: linear, not circular, correlation */
    /* The blocked transform (rows > 0; else the single one below): two
     * channels at once as the complex series a + i b on a rows x cols
     * grid, point t at grid[t] (t = cols n1 + n2). */
    size_t rows, cols;
    fftw_complex *grid;       /* fftw_malloc'ed, rows x cols */
    fftw_complex *batch;      /* fftw_malloc'ed, BLOCKED_BATCH x rows */
    fftw_complex *tw_hi, *tw_lo; /* e^(-2 pi i m / L) = tw_hi[m >> shift] tw_lo[m & mask] */
    unsigned tw_shift;
    fftw_plan col_forward, col_inverse, row_forward, row_inverse;
    double *y_b, *m_b;        /* M: the second channel's segment sums */
    size_t rho_stride;        /* rho[k] is rho[k * rho_stride] */
    double *buffer;           /* fftw_malloc'ed, fft_length */
    fftw_complex *spectrum;   /* fftw_malloc'ed, fft_length / 2 + 1 */
    fftw_plan forward, inverse;
    double *rho;              /* N: autocorrelation at lags 0..N-1 (in buffer: the
                                 transform's output, divided in place) */
    double *y, *m;            /* M: log-amplitude and level per segment */
    double *cov_y, *cov_m;    /* M: null covariance at segment lag k */
    double *weight;           /* M: least-squares slope weights */
    double *contrast;         /* MAX_CONTRASTS x M: contrast 0 = weight, then steps */
    size_t n_contrasts;
    double block[DRIFT_BLOCKS];    /* block means of the drift test */
    double residual[DRIFT_BLOCKS]; /* its regression residuals */
};

const char *el_regime_name(el_regime_class regime)
{
    switch (regime) {
    case EL_REGIME_STATIONARY: return "stationary";
    case EL_REGIME_TRANSIENT: return "transient";
    case EL_REGIME_DRIVEN: return "driven";
    case EL_REGIME_UNDETERMINED: return "undetermined";
    }
    return "unknown";
}

void el_regime_defaults(el_regime_options *opt)
{
    opt->level = 0.01;
    opt->segments = 16;
    opt->min_growth_factor = 1.25;
    opt->driven = 0;
}

/* Smallest 2^a 3^b 5^c 7^d >= n: FFTW's fast sizes. */
static size_t smooth_size(size_t n)
{
    for (size_t m = n;; m++) {
        size_t r = m;
        static const size_t primes[] = { 2, 3, 5, 7 };
        for (size_t i = 0; i < 4; i++)
            while (r % primes[i] == 0)
                r /= primes[i];
        if (r == 1)
            return m;
    }
}

static void work_free(struct el_regime_work *w)
{
    if (w == NULL)
        return;
    fftw_plan plans[6] = { w->forward, w->inverse, w->col_forward, w->col_inverse,
                           w->row_forward, w->row_inverse };
    for (size_t i = 0; i < 6; i++)
        if (plans[i])
            fftw_destroy_plan(plans[i]);
    fftw_free(w->buffer);
    fftw_free(w->spectrum);
    fftw_free(w->grid);
    fftw_free(w->batch);
    fftw_free(w->tw_hi);
    fftw_free(w->tw_lo);
    free(w->y);
    free(w->m);
    free(w->y_b);
    free(w->m_b);
    free(w->cov_y);
    free(w->cov_m);
    free(w->weight);
    free(w->contrast);
    free(w);
}

void el_regime_release_work(el_regime *r)
{
    if (r == NULL)
        return;
    work_free(r->work);
    r->work = NULL;
}

void el_regime_destroy(el_regime *r)
{
    if (r == NULL)
        return;
    work_free(r->work);
    free(r->tested);
    free(r->envelope_rate);
    free(r->envelope_factor);
    free(r->envelope_z);
    free(r->envelope_p_growth);
    free(r->level_rate);
    free(r->level_z);
    free(r->change_p);
    free(r->change_direction);
    free(r->drift_rate);
    free(r->drift_factor);
    free(r->drift_z);
    free(r->drift_p_growth);
    free(r);
}

/* The single transform: buffer and spectrum of fft_length and their plans.
 * Returns 1, 0 when memory is short, -1 when FFTW gives no plan. */
static int single_create(struct el_regime_work *w, size_t n)
{
    w->fft_length = smooth_size(2 * n - 1);
    w->buffer = fftw_malloc(w->fft_length * sizeof *w->buffer);
    w->spectrum = fftw_malloc((w->fft_length / 2 + 1) * sizeof *w->spectrum);
    w->rho = w->buffer;
    w->rho_stride = 1;
    if (!w->buffer || !w->spectrum)
        return 0;
    w->forward = fftw_plan_dft_r2c_1d((int)w->fft_length, w->buffer, w->spectrum,
                                      FFTW_ESTIMATE);
    w->inverse = fftw_plan_dft_c2r_1d((int)w->fft_length, w->spectrum, w->buffer,
                                      FFTW_ESTIMATE);
    return w->forward && w->inverse ? 1 : -1;
}

/* The blocked transform on a grid of rows (a power of two) x cols (a
 * multiple of BLOCKED_BATCH, rows x cols >= 2 N - 1), its twiddle tables
 * (two of about sqrt(L) entries each: every factor the product of two
 * values computed directly, so within a few units of rounding) and plans:
 * BLOCKED_BATCH column transforms of the batch at once, one row in place.
 * Returns as single_create. */
static int blocked_create(struct el_regime_work *w, size_t n, size_t rows)
{
    size_t per_row = (2 * n - 1 + rows - 1) / rows;
    w->rows = rows;
    w->cols = BLOCKED_BATCH * smooth_size((per_row + BLOCKED_BATCH - 1) / BLOCKED_BATCH);
    w->fft_length = rows * w->cols;
    size_t step = 1;
    w->tw_shift = 0;
    while (step * step < w->fft_length) {
        step *= 2;
        w->tw_shift++;
    }
    size_t n_hi = w->fft_length / step + 1;
    w->grid = fftw_malloc(w->fft_length * sizeof *w->grid);
    w->batch = fftw_malloc(BLOCKED_BATCH * rows * sizeof *w->batch);
    w->tw_hi = fftw_malloc(n_hi * sizeof *w->tw_hi);
    w->tw_lo = fftw_malloc(step * sizeof *w->tw_lo);
    w->rho = (double *)w->grid;
    w->rho_stride = 2;
    if (!w->grid || !w->batch || !w->tw_hi || !w->tw_lo)
        return 0;   /* no memory */
    double length = (double)w->fft_length;
    for (size_t i = 0; i < n_hi; i++) {
        double angle = -2.0 * M_PI * ((double)(i * step) / length);
        w->tw_hi[i][0] = cos(angle);
        w->tw_hi[i][1] = sin(angle);
    }
    for (size_t i = 0; i < step; i++) {
        double angle = -2.0 * M_PI * ((double)i / length);
        w->tw_lo[i][0] = cos(angle);
        w->tw_lo[i][1] = sin(angle);
    }
    int len_col = (int)rows, len_row = (int)w->cols;
    w->col_forward = fftw_plan_many_dft(1, &len_col, BLOCKED_BATCH, w->batch, NULL, 1, len_col,
                                        w->batch, NULL, 1, len_col, FFTW_FORWARD,
                                        FFTW_ESTIMATE);
    w->col_inverse = fftw_plan_many_dft(1, &len_col, BLOCKED_BATCH, w->batch, NULL, 1, len_col,
                                        w->batch, NULL, 1, len_col, FFTW_BACKWARD,
                                        FFTW_ESTIMATE);
    w->row_forward = fftw_plan_dft_1d(len_row, w->grid, w->grid, FFTW_FORWARD, FFTW_ESTIMATE);
    w->row_inverse = fftw_plan_dft_1d(len_row, w->grid, w->grid, FFTW_BACKWARD, FFTW_ESTIMATE);
    return w->col_forward && w->col_inverse && w->row_forward && w->row_inverse ? 1 : -1;
}

/* rows: 0 the single transform, else the blocked one with that many rows. */
static el_status work_create(size_t n, size_t rows, struct el_regime_work **out,
                             el_error *err)
{
    struct el_regime_work *w = calloc(1, sizeof *w);
    if (w == NULL)
        return el_error_set(err, EL_ERR_NOMEM, "out of memory");
    size_t max_segments = n / MIN_SEGMENT_SAMPLES + 1;
    int made = rows ? blocked_create(w, n, rows) : single_create(w, n);
    w->y = malloc(max_segments * sizeof *w->y);
    w->m = malloc(max_segments * sizeof *w->m);
    w->y_b = malloc(max_segments * sizeof *w->y_b);
    w->m_b = malloc(max_segments * sizeof *w->m_b);
    w->cov_y = malloc(max_segments * sizeof *w->cov_y);
    w->cov_m = malloc(max_segments * sizeof *w->cov_m);
    w->weight = malloc(max_segments * sizeof *w->weight);
    w->contrast = malloc(MAX_CONTRASTS * max_segments * sizeof *w->contrast);
    if (made == 0 || !w->y || !w->m || !w->y_b || !w->m_b || !w->cov_y || !w->cov_m
        || !w->weight || !w->contrast) {
        work_free(w);
        return el_error_set(err, EL_ERR_NOMEM, "out of memory");
    }
    if (made < 0) {
        work_free(w);
        return el_error_set(err, EL_ERR_NUMERIC, "FFTW could not plan a transform of %zu "
                            "samples", n);
    }
    *out = w;
    return EL_OK;
}

el_status el_regime_create(size_t n_samples, size_t n_channels, el_regime **out,
                           el_error *err)
{
    size_t rows = n_samples >= 3 && smooth_size(2 * n_samples - 1) >= BLOCKED_MIN_LENGTH
                      ? BLOCKED_ROWS : 0;
    return el_regime_create_using(n_samples, n_channels, rows, out, err);
}

el_status el_regime_create_using(size_t n_samples, size_t n_channels, size_t rows,
                                 el_regime **out, el_error *err)
{
    if (out == NULL || n_samples < 3 || n_channels == 0 || (rows != 0 && (rows < 2 ||
        (rows & (rows - 1)) != 0 || rows > 2 * n_samples)))
        return el_error_set(err, EL_ERR_INTERNAL, "el_regime_create: bad arguments");
    *out = NULL;
    if (n_samples > (size_t)(0x7fffffff / 4))
        return el_error_set(err, EL_ERR_DATA, "%zu samples are too many for the regime "
                            "test's transform", n_samples);
    el_regime *r = calloc(1, sizeof *r);
    if (r == NULL)
        return el_error_set(err, EL_ERR_NOMEM, "out of memory");
    r->n_samples = n_samples;
    r->n_channels = n_channels;
    size_t nc = n_channels;
    r->tested = malloc(nc * sizeof *r->tested);
    r->envelope_rate = malloc(nc * sizeof(double));
    r->envelope_factor = malloc(nc * sizeof(double));
    r->envelope_z = malloc(nc * sizeof(double));
    r->envelope_p_growth = malloc(nc * sizeof(double));
    r->level_rate = malloc(nc * sizeof(double));
    r->level_z = malloc(nc * sizeof(double));
    r->change_p = malloc(nc * sizeof(double));
    r->change_direction = malloc(nc * sizeof *r->change_direction);
    r->drift_rate = malloc(nc * sizeof(double));
    r->drift_factor = malloc(nc * sizeof(double));
    r->drift_z = malloc(nc * sizeof(double));
    r->drift_p_growth = malloc(nc * sizeof(double));
    if (!r->tested || !r->envelope_rate || !r->envelope_factor || !r->envelope_z
        || !r->envelope_p_growth || !r->level_rate || !r->level_z || !r->change_p
        || !r->change_direction || !r->drift_rate || !r->drift_factor || !r->drift_z
        || !r->drift_p_growth) {
        el_regime_destroy(r);
        return el_error_set(err, EL_ERR_NOMEM, "out of memory");
    }
    r->transform_rows = rows;
    el_status st = work_create(n_samples, rows, &r->work, err);
    if (st != EL_OK) {
        el_regime_destroy(r);
        return st;
    }
    *out = r;
    return EL_OK;
}

/* Upper tail of the standard normal distribution. */
static double normal_sf(double z)
{
    return 0.5 * erfc(z / M_SQRT2);
}

/* Sample autocorrelation rho[0..n) of buffer[0..n) (already mean-removed) with the
 * divisor-n autocovariance (positive semi-definite, and damped at long
 * lags where it is noisy), by zero-padded FFT. Returns gamma(0). */
static double autocorrelation(struct el_regime_work *w, size_t n)
{
    /* the data are already in buffer[0 .. n) (test_channel puts them there) */
    memset(w->buffer + n, 0, (w->fft_length - n) * sizeof *w->buffer);
    fftw_execute(w->forward);
    for (size_t k = 0; k < w->fft_length / 2 + 1; k++) {
        double re = w->spectrum[k][0], im = w->spectrum[k][1];
        w->spectrum[k][0] = re * re + im * im;
        w->spectrum[k][1] = 0.0;
    }
    fftw_execute(w->inverse);
    double gamma0 = w->buffer[0];
    for (size_t k = 0; k < n; k++)   /* in place: rho is buffer */
        w->rho[k] = gamma0 > 0.0 ? w->buffer[k] / gamma0 : 0.0;
    return gamma0 / ((double)w->fft_length * (double)n);
}

/* Twiddle factor e^(-2 pi i m / L) of the blocked transform (m < L). */
static void twiddle(const struct el_regime_work *w, size_t m, double *re, double *im)
{
    const double *hi = w->tw_hi[m >> w->tw_shift];
    const double *lo = w->tw_lo[m & (((size_t)1 << w->tw_shift) - 1)];
    *re = hi[0] * lo[0] - hi[1] * lo[1];
    *im = hi[0] * lo[1] + hi[1] * lo[0];
}

/* Column pass of the blocked transform (the "six-step" FFT, Bailey 1990,
 * J. Supercomputing 4; recalled from memory): with point t = cols n1 + n2
 * and frequency f = k1 + rows k2, a transform of length rows down each
 * column n2, then the twiddle e^(-2 pi i k1 n2 / L) (forward); the
 * inverse applies the conjugate twiddle first. A batch of columns is
 * copied to contiguous scratch, transformed there and copied back; only
 * grid rows below rows_in are read (the rest are zero padding: scale_re
 * and scale_im multiply the two parts on the way in), only rows below
 * rows_out are written back. */
static void column_pass(struct el_regime_work *w, int forward, size_t rows_in,
                        size_t rows_out, double scale_re, double scale_im)
{
    size_t rows = w->rows, cols = w->cols;
    fftw_complex *g = w->grid, *b = w->batch;
    for (size_t c0 = 0; c0 < cols; c0 += BLOCKED_BATCH) {
        for (size_t k = 0; k < rows; k++) {
            const double *src = g[cols * k + c0];
            for (size_t j = 0; j < BLOCKED_BATCH; j++) {
                double re = k < rows_in ? src[2 * j] : 0.0;
                double im = k < rows_in ? src[2 * j + 1] : 0.0;
                if (!forward) {
                    double cr, ci;   /* times the conjugate twiddle */
                    twiddle(w, k * (c0 + j), &cr, &ci);
                    double t = re * cr + im * ci;
                    im = im * cr - re * ci;
                    re = t;
                }
                b[j * rows + k][0] = re * scale_re;
                b[j * rows + k][1] = im * scale_im;
            }
        }
        fftw_execute_dft(forward ? w->col_forward : w->col_inverse, b, b);
        for (size_t k = 0; k < rows_out; k++) {
            double *dst = g[cols * k + c0];
            for (size_t j = 0; j < BLOCKED_BATCH; j++) {
                double re = b[j * rows + k][0], im = b[j * rows + k][1];
                if (forward) {
                    double cr, ci;
                    twiddle(w, k * (c0 + j), &cr, &ci);
                    double t = re * cr - im * ci;
                    im = re * ci + im * cr;
                    re = t;
                }
                dst[2 * j] = re;
                dst[2 * j + 1] = im;
            }
        }
    }
}

/* Row pass: each row's transform of length cols gives the spectrum Z(f)
 * of the complex series a + i b at f = k1 + rows k2 (row k1, column k2).
 * The parts' periodograms follow from Z(f) and Z(L - f), which lies in
 * row (rows - k1) mod rows: |A(f)|^2 = |Z(f) + conj Z(L - f)|^2 / 4 and
 * |B(f)|^2 = |Z(f) - conj Z(L - f)|^2 / 4, both even in f, so
 * |A|^2 + i |B|^2 transforms back to the two autocorrelations as the real
 * and imaginary parts. Rows k1 and rows - k1 are done together, forward,
 * periodograms, inverse, while both are in cache. */
static void row_pass(struct el_regime_work *w)
{
    size_t rows = w->rows, cols = w->cols;
    for (size_t k1 = 0; k1 <= rows / 2; k1++) {
        size_t km = (rows - k1) % rows;
        fftw_complex *z = w->grid + cols * k1, *zm = w->grid + cols * km;
        fftw_execute_dft(w->row_forward, z, z);
        if (km != k1)
            fftw_execute_dft(w->row_forward, zm, zm);
        for (size_t k2 = 0; k2 < cols; k2++) {
            size_t m2 = k1 == 0 ? (cols - k2) % cols : cols - 1 - k2;
            if (km == k1 && m2 < k2)
                continue;   /* a pair within one row: done from its first point */
            double zr = z[k2][0], zi = z[k2][1], mr = zm[m2][0], mi = zm[m2][1];
            double pa = 0.25 * ((zr + mr) * (zr + mr) + (zi - mi) * (zi - mi));
            double pb = 0.25 * ((zr - mr) * (zr - mr) + (zi + mi) * (zi + mi));
            z[k2][0] = zm[m2][0] = pa;
            z[k2][1] = zm[m2][1] = pb;
        }
        fftw_execute_dft(w->row_inverse, z, z);
        if (km != k1)
            fftw_execute_dft(w->row_inverse, zm, zm);
    }
}

/* The autocorrelations of two channels at once by the blocked transform:
 * grid[t] holds (d_a(t), d_b(t)) for t < n and zeros up to the end of row
 * rows_in - 1; the parts are scaled by scale_a and scale_b on the way in
 * (to unit variance, so that rounding of one does not swamp the other).
 * On return the real and imaginary parts of grid[t], t < n, are L times
 * the lag-t sums of the scaled channels. Linear, not circular: L >= 2N - 1. */
static void blocked_autocorrelation(struct el_regime_work *w, size_t n, double scale_a,
                                    double scale_b)
{
    size_t rows_used = (n + w->cols - 1) / w->cols;
    column_pass(w, 1, rows_used, w->rows, scale_a, scale_b);
    row_pass(w);
    column_pass(w, 0, w->rows, rows_used, 1.0, 1.0);
}

/* Null covariances of segment log-amplitudes and levels at segment lags
 * k = 0..M-1 (see the contract in el_regime.h). */
static void null_covariances(struct el_regime_work *w, size_t segments, size_t len)
{
    double l2 = (double)len * (double)len;
    for (size_t k = 0; k < segments; k++) {
        double sy = 0.0, sm = 0.0;
        for (size_t a = 0; a + 1 < 2 * len; a++) {
            /* u = a - (len - 1) runs over -(len - 1) .. len - 1 */
            double weight = (double)(len - (a < len ? len - 1 - a : a - (len - 1)));
            long lag = (long)(k * len) + (long)a - (long)(len - 1);
            double rho = w->rho[(size_t)(lag < 0 ? -lag : lag) * w->rho_stride];
            sy += weight * rho * rho;
            sm += weight * rho;
        }
        w->cov_y[k] = sy / (2.0 * l2);
        w->cov_m[k] = sm / l2;
    }
}

/* w' C w for the Toeplitz C with first column cov. */
static double quadratic_form(const double *weight, const double *cov, size_t m)
{
    double q = 0.0;
    for (size_t a = 0; a < m; a++)
        for (size_t b = 0; b < m; b++)
            q += weight[a] * weight[b] * cov[a > b ? a - b : b - a];
    return q;
}

static double slope(const double *weight, const double *v, size_t m)
{
    double s = 0.0;
    for (size_t a = 0; a < m; a++)
        s += weight[a] * v[a];
    return s;
}

/* Right-tail probability of the drift statistic: log-linear interpolation
 * in drift_table; below its first entry 1; beyond its last, the log-linear
 * slope of the last two entries continued (an exponential tail, heavier
 * than the table's own, so p is not understated). */
static double drift_sf(double z)
{
    if (z <= drift_table[0][1])
        return 1.0;
    size_t last = DRIFT_TABLE_SIZE - 1;
    size_t i = 1;
    while (i < last && z > drift_table[i][1])
        i++;
    double z0 = drift_table[i - 1][1], z1 = drift_table[i][1];
    double l0 = log(drift_table[i - 1][0]), l1 = log(drift_table[i][0]);
    return fmin(1.0, exp(l0 + (l1 - l0) * (z - z0) / (z1 - z0)));
}

/* The drift test on x (N samples): block means b_0..b_{M-1}, the
 * least-squares regression b_a = mu + rho b_{a-1} + u_a, and the
 * Phillips-Perron statistic Z_t = sqrt(g0 / lam2) t - (lam2 - g0) / (2 lam)
 * n se / s (Phillips & Perron 1988, Biometrika 75; the form recalled from
 * memory) with t = (rho - 1) / se, g0 the residual variance, lam2 its
 * Bartlett long-run variance. A deviation that runs away from a level
 * (x - x* growing like e^(r t)) gives rho = e^(r L dt) > 1 whatever x*,
 * so the reference level is fitted, not taken from the window mean that
 * the runaway drags. Fills the drift outputs of channel c. */
static void drift_test(el_regime *r, const double *x, double dt, size_t c)
{
    struct el_regime_work *w = r->work;
    size_t n_all = r->n_samples, len = n_all / DRIFT_BLOCKS;
    size_t start = (n_all - DRIFT_BLOCKS * len) / 2;
    double *b = w->block, *u = w->residual;
    for (size_t a = 0; a < DRIFT_BLOCKS; a++) {
        double s = 0.0;
        for (size_t k = 0; k < len; k++)
            s += x[start + a * len + k];
        b[a] = s / (double)len;
    }
    size_t n = DRIFT_BLOCKS - 1;
    double mx = 0.0, my = 0.0;
    for (size_t a = 0; a < n; a++) {
        mx += b[a];
        my += b[a + 1];
    }
    mx /= (double)n;
    my /= (double)n;
    double sxx = 0.0, sxy = 0.0;
    for (size_t a = 0; a < n; a++) {
        sxx += (b[a] - mx) * (b[a] - mx);
        sxy += (b[a] - mx) * (b[a + 1] - my);
    }
    if (!(sxx > 0.0))
        return;
    double rho = sxy / sxx, ss = 0.0;
    for (size_t a = 0; a < n; a++) {
        u[a] = (b[a + 1] - my) - rho * (b[a] - mx);
        ss += u[a] * u[a];
    }
    /* residuals near rounding level (an exactly linear ramp gives rho = 1
     * up to rounding) would turn rounding into a large z of either sign:
     * floor the residual standard deviation at 1e-8 of the block means'
     * spread, far below any noise a log carries */
    ss = fmax(ss, (double)n * 1e-16 * sxx);
    double g0 = ss / (double)n, s2 = ss / (double)(n - 2), lam2 = g0;
    for (size_t j = 1; j <= DRIFT_LAGS; j++) {
        double gj = 0.0;
        for (size_t a = j; a < n; a++)
            gj += u[a] * u[a - j];
        lam2 += 2.0 * (1.0 - (double)j / (DRIFT_LAGS + 1.0)) * gj / (double)n;
    }
    /* the Bartlett window keeps lam2 >= 0; the floor keeps the correction
     * finite for a residual with strongly negative correlation */
    lam2 = fmax(lam2, 1e-3 * g0);
    double se = sqrt(s2 / sxx), lam = sqrt(lam2);
    double z = sqrt(g0 / lam2) * (rho - 1.0) / se
               - (lam2 - g0) / (2.0 * lam) * (double)n * se / sqrt(s2);
    r->drift_z[c] = z;
    r->drift_p_growth[c] = drift_sf(z);
    if (rho > 0.0) {
        r->drift_rate[c] = log(rho) / ((double)len * dt);
        r->drift_factor[c] = pow(rho, (double)n);
    }
}

/* The mean of x and the mean-removed copy d into dst[k * stride], k < N,
 * and in the same pass each segment's sums of d and d^2 into lev and ms
 * (the values and the order of a pass of their own: one read of x
 * fewer). Returns the sum of d^2 over the window when sum_squares. */
static double centre(const el_regime *r, const double *x, double *dst, size_t stride,
                     double *ms_out, double *lev_out, int sum_squares)
{
    size_t n = r->n_samples, segs = r->segments, len = r->segment_length;
    size_t start = (n - segs * len) / 2;
    double mean = 0.0, all = 0.0;
    for (size_t k = 0; k < n; k++)
        mean += x[k];
    mean /= (double)n;
    for (size_t k = 0; k < start; k++)
        dst[k * stride] = x[k] - mean;
    for (size_t a = 0; a < segs; a++) {
        const double *seg = x + start + a * len;
        double *out = dst + (start + a * len) * stride;
        double ms = 0.0, lev = 0.0;
        for (size_t k = 0; k < len; k++) {
            double d = seg[k] - mean;
            out[k * stride] = d;
            ms += d * d;
            lev += d;
        }
        ms_out[a] = ms;
        lev_out[a] = lev;
    }
    for (size_t k = start + segs * len; k < n; k++)
        dst[k * stride] = x[k] - mean;
    if (sum_squares)
        for (size_t k = 0; k < n; k++)
            all += dst[k * stride] * dst[k * stride];
    return all;
}

static int finish_channel(el_regime *r, const double *x, double dt, size_t c, double gamma0);
static void set_untested(el_regime *r, size_t c);

/* Tests one channel by the single transform; returns 0 when it does not
 * vary. */
static int test_channel(el_regime *r, const double *x, double dt, size_t c)
{
    struct el_regime_work *w = r->work;
    /* y and m hold the segments' sums until gamma0 is known */
    centre(r, x, w->buffer, 1, w->y, w->m, 0);
    return finish_channel(r, x, dt, c, autocorrelation(w, r->n_samples));
}

/* Tests channels c and c + 1 (c alone when it is the last) by the blocked
 * transform; sets tested[] or the untested outputs of each. */
static void test_pair(el_regime *r, const el_series *series, size_t c)
{
    struct el_regime_work *w = r->work;
    size_t n = r->n_samples;
    int two = c + 1 < r->n_channels;
    double *g = (double *)w->grid;
    const double *xa = series->values + c * n, *xb = two ? xa + n : NULL;
    double ssa = centre(r, xa, g, 2, w->y, w->m, 1), ssb = 0.0;
    if (two)
        ssb = centre(r, xb, g + 1, 2, w->y_b, w->m_b, 1);
    else
        for (size_t k = 0; k < n; k++)
            g[2 * k + 1] = 0.0;
    size_t padded = (n + w->cols - 1) / w->cols * w->cols;
    memset(w->grid + n, 0, (padded - n) * sizeof *w->grid);
    /* a channel with no motion at all (or not finite) is not tested */
    int va = ssa > 0.0 && isfinite(ssa), vb = ssb > 0.0 && isfinite(ssb);
    if (va || vb)
        blocked_autocorrelation(w, n, va ? 1.0 / sqrt(ssa / (double)n) : 0.0,
                                vb ? 1.0 / sqrt(ssb / (double)n) : 0.0);
    double ra = g[0], rb = g[1];
    for (size_t k = 0; k < n; k++) {
        g[2 * k] = ra > 0.0 ? g[2 * k] / ra : 0.0;
        g[2 * k + 1] = rb > 0.0 ? g[2 * k + 1] / rb : 0.0;
    }
    w->rho = g;
    if (!(va && ra > 0.0 && finish_channel(r, xa, series->dt, c, ssa / (double)n)))
        set_untested(r, c);
    else
        r->tested[c] = 1;
    if (!two)
        return;
    memcpy(w->y, w->y_b, r->segments * sizeof *w->y);
    memcpy(w->m, w->m_b, r->segments * sizeof *w->m);
    w->rho = g + 1;
    if (!(vb && rb > 0.0 && finish_channel(r, xb, series->dt, c + 1, ssb / (double)n)))
        set_untested(r, c + 1);
    else
        r->tested[c + 1] = 1;
}

/* The tests of channel c after its autocorrelation (w->rho) and its
 * variance gamma0 are known; y and m hold the segments' sums. Returns 0
 * when it does not vary. */
static int finish_channel(el_regime *r, const double *x, double dt, size_t c, double gamma0)
{
    struct el_regime_work *w = r->work;
    size_t n = r->n_samples, segs = r->segments, len = r->segment_length;
    if (!(gamma0 > 0.0) || !isfinite(gamma0))
        return 0;
    double sd = sqrt(gamma0);
    for (size_t a = 0; a < segs; a++) {
        double ms = w->y[a] / (double)len;
        /* a segment with no motion at all would give ln 0: floor it at
         * rounding level of the window's variance */
        w->y[a] = 0.5 * log(fmax(ms, DBL_EPSILON * gamma0));
        w->m[a] = w->m[a] / ((double)len * sd);
    }
    null_covariances(w, segs, len);
    double var_env = quadratic_form(w->weight, w->cov_y, segs);
    double var_lev = quadratic_form(w->weight, w->cov_m, segs);
    /* the null variances are quadratic forms of positive semi-definite
     * matrices; exactly zero only when the window has no randomness */
    if (!(var_env > 0.0) || !(var_lev > 0.0))
        return 0;
    double env_rate = slope(w->weight, w->y, segs);
    double lev_rate = slope(w->weight, w->m, segs);
    double span = (double)((segs - 1) * len) * dt;
    double ze = env_rate / sqrt(var_env);
    r->envelope_rate[c] = env_rate;
    r->envelope_factor[c] = exp(env_rate * span);
    r->envelope_z[c] = ze;
    r->envelope_p_growth[c] = normal_sf(ze);
    r->level_rate[c] = lev_rate;
    r->level_z[c] = lev_rate / sqrt(var_lev);
    /* every contrast on both series: the smallest two-sided p-value,
     * Bonferroni over the 2 K tests */
    double best = INFINITY;
    int direction = 0;
    for (size_t j = 0; j < w->n_contrasts; j++) {
        const double *con = w->contrast + j * segs;
        double vy = quadratic_form(con, w->cov_y, segs);
        double vm = quadratic_form(con, w->cov_m, segs);
        double zy = vy > 0.0 ? slope(con, w->y, segs) / sqrt(vy) : 0.0;
        double zm = vm > 0.0 ? slope(con, w->m, segs) / sqrt(vm) : 0.0;
        double py = 2.0 * normal_sf(fabs(zy)), pm = 2.0 * normal_sf(fabs(zm));
        if (py < best) {
            best = py;
            /* contrast 0 rises with time; a step contrast is early minus late */
            direction = (zy > 0.0) == (j == 0) ? 1 : -1;
        }
        if (pm < best) {
            best = pm;
            direction = 0;
        }
    }
    r->change_p[c] = fmin(1.0, best * 2.0 * (double)w->n_contrasts);
    r->change_direction[c] = direction;
    if (n >= DRIFT_BLOCKS * MIN_SEGMENT_SAMPLES)
        drift_test(r, x, dt, c);
    return 1;
}

static void set_untested(el_regime *r, size_t c)
{
    r->tested[c] = 0;
    r->envelope_rate[c] = r->envelope_factor[c] = r->envelope_z[c] = NAN;
    r->envelope_p_growth[c] = r->change_p[c] = NAN;
    r->level_rate[c] = r->level_z[c] = NAN;
    r->change_direction[c] = 0;
    r->drift_rate[c] = r->drift_factor[c] = r->drift_z[c] = r->drift_p_growth[c] = NAN;
}

/* Least-squares slope weights of M equally spaced points L dt apart, and
 * the contrasts: 0 the slope, then "mean of the first s segments minus
 * mean of the rest" for each distinct s of {1, 2, M/4, M/2, 3M/4, M-2,
 * M-1}. A slope is the best linear test of a steady trend; the steps catch
 * a transient that is over early (a fast decay into the noise floor, an
 * L-shaped envelope) or starts late, which a slope dilutes. */
static void make_contrasts(struct el_regime_work *w, size_t segs, double step)
{
    double centre = 0.5 * (double)(segs - 1), sxx = 0.0;
    for (size_t a = 0; a < segs; a++)
        sxx += ((double)a - centre) * ((double)a - centre);
    for (size_t a = 0; a < segs; a++)
        w->weight[a] = ((double)a - centre) / (sxx * step);
    memcpy(w->contrast, w->weight, segs * sizeof *w->weight);
    size_t splits[MAX_CONTRASTS - 1] = { 1, 2, segs / 4, segs / 2, 3 * segs / 4,
                                         segs - 2, segs - 1 };
    w->n_contrasts = 1;
    size_t last = 0;
    for (size_t i = 0; i < MAX_CONTRASTS - 1; i++) {
        size_t s = splits[i];
        if (s <= last || s >= segs)
            continue;
        last = s;
        double *con = w->contrast + w->n_contrasts * segs;
        for (size_t a = 0; a < segs; a++)
            con[a] = a < s ? 1.0 / (double)s : -1.0 / (double)(segs - s);
        w->n_contrasts++;
    }
}

/* The growth family: per tested channel the envelope slope test and the
 * drift test, one-sided; Bonferroni over the 2 m tests. */
static void decide(el_regime *r, const el_regime_options *opt)
{
    size_t tested = 0, change_channel = 0;
    double best_change = INFINITY, best_growth = INFINITY;
    for (size_t c = 0; c < r->n_channels; c++) {
        if (!r->tested[c])
            continue;
        tested++;
        if (r->change_p[c] < best_change) {
            best_change = r->change_p[c];
            change_channel = c;
        }
        if (r->envelope_p_growth[c] < best_growth) {
            best_growth = r->envelope_p_growth[c];
            r->growth_channel = c;
            r->growth_test = EL_REGIME_GROWTH_ENVELOPE;
        }
        /* NaN (window too short for the drift test) never compares less */
        if (r->drift_p_growth[c] < best_growth) {
            best_growth = r->drift_p_growth[c];
            r->growth_channel = c;
            r->growth_test = EL_REGIME_GROWTH_DRIFT;
        }
    }
    if (tested == 0) {
        r->regime = EL_REGIME_UNDETERMINED;
        return;
    }
    r->trend_p = fmin(1.0, (double)tested * best_change);
    r->growth_p = fmin(1.0, 2.0 * (double)tested * best_growth);
    r->growth_factor = r->growth_test == EL_REGIME_GROWTH_DRIFT
                           ? r->drift_factor[r->growth_channel]
                           : r->envelope_factor[r->growth_channel];
    /* a NaN factor (block means alternating in sign) is no growth */
    r->growth = r->growth_p < opt->level && r->growth_factor >= opt->min_growth_factor;
    /* a significant growth is a change too: the window is never called
     * stationary while its growth vetoes a stable verdict */
    int changed = r->trend_p < opt->level;
    r->regime = changed || r->growth ? EL_REGIME_TRANSIENT : EL_REGIME_STATIONARY;
    r->direction = r->growth ? 1 : changed ? r->change_direction[change_channel] : 0;
}

/* ---- level check (step 7) --------------------------------------------- */

#define LEVEL_MAX_SEGMENTS 256
/* Median of a chi-square variable with one degree of freedom. */
#define CHI2_1_MEDIAN 0.454936423119573

static int cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

/* One channel's candidate movement. */
typedef struct {
    el_regime_level kind;
    double z, share, r2, change, step_t;
} level_move;

/* The least-squares split of x[lo..hi) (j samples before it, within the
 * whole window x[0..n)): maximises j (n - j) (mean after - mean before)^2.
 * *before_best: the sum of x[0..j) for that j, added in ascending order. */
static size_t locate_step(const double *x, size_t n, size_t lo, size_t hi,
                          double *before_best)
{
    double total = 0.0, before = 0.0, best = -1.0;
    size_t best_j = lo;
    for (size_t k = 0; k < n; k++)
        total += x[k];
    for (size_t k = 0; k < lo; k++)
        before += x[k];
    *before_best = before;
    for (size_t j = lo; j < hi && j < n; j++) {
        if (j > 0) {
            double d = (total - before) / (double)(n - j) - before / (double)j;
            double score = (double)j * (double)(n - j) * d * d;
            if (score > best) {
                best = score;
                best_j = j;
                *before_best = before;
            }
        }
        before += x[j];
    }
    return best_j;
}

static void level_channel(const el_regime *r, const double *x, double t0, double dt,
                          level_move *out)
{
    size_t m = r->segments, len = r->segment_length, n = r->n_samples;
    size_t off = (n - m * len) / 2;
    double b[LEVEL_MAX_SEGMENTS], d2[LEVEL_MAX_SEGMENTS];
    out->kind = EL_REGIME_LEVEL_NONE;
    double mean = 0.0, sst = 0.0;
    for (size_t a = 0; a < m; a++) {
        double sum = 0.0;
        for (size_t k = 0; k < len; k++)
            sum += x[off + a * len + k];
        b[a] = sum / (double)len;
        mean += sum;
    }
    mean /= (double)(m * len);
    for (size_t k = off; k < off + m * len; k++)
        sst += (x[k] - mean) * (x[k] - mean);
    for (size_t a = 0; a + 1 < m; a++)
        d2[a] = (b[a + 1] - b[a]) * (b[a + 1] - b[a]);
    qsort(d2, m - 1, sizeof *d2, cmp_double);
    double med = (m - 1) % 2 ? d2[(m - 1) / 2] : 0.5 * (d2[(m - 1) / 2 - 1] + d2[(m - 1) / 2]);
    double v = med / (2.0 * CHI2_1_MEDIAN);
    double abar = 0.5 * (double)(m - 1), saa = 0.0, sab = 0.0, sbb = 0.0;
    for (size_t a = 0; a < m; a++) {
        saa += ((double)a - abar) * ((double)a - abar);
        sab += ((double)a - abar) * (b[a] - mean);
        sbb += (b[a] - mean) * (b[a] - mean);
    }
    if (!(v > 0.0) || !(sst > 0.0) || !(sbb > 0.0))
        return;
    /* Trend. */
    double slope = sab / saa;
    level_move trend = {EL_REGIME_LEVEL_TREND, slope / sqrt(v / saa),
                        (double)len * slope * slope * saa / sst, slope * slope * saa / sbb,
                        slope * (double)n / (double)len, NAN};
    /* Step: the best split of the blocks. */
    level_move shift = {EL_REGIME_LEVEL_SHIFT, 0.0, 0.0, 0.0, NAN, NAN};
    size_t best_k = 0;
    for (size_t k = 2; k + 2 <= m; k++) {
        double lo = 0.0, hi = 0.0;
        for (size_t a = 0; a < m; a++)
            *(a < k ? &lo : &hi) += b[a];
        lo /= (double)k;
        hi /= (double)(m - k);
        double z = (hi - lo) / sqrt(v * (1.0 / (double)k + 1.0 / (double)(m - k)));
        if (fabs(z) > fabs(shift.z)) {
            double ss = (double)k * (lo - mean) * (lo - mean) +
                        (double)(m - k) * (hi - mean) * (hi - mean);
            shift.z = z;
            shift.share = (double)len * ss / sst;
            shift.r2 = ss / sbb;
            best_k = k;
        }
    }
    if (best_k > 0) {
        /* the sum before the split is locate_step's (the same additions);
         * the one after it is taken here */
        double before = 0.0, after = 0.0;
        size_t j = locate_step(x, n, off + (best_k - 1) * len, off + (best_k + 1) * len,
                               &before);
        for (size_t k = j; k < n; k++)
            after += x[k];
        shift.step_t = t0 + ((double)j - 0.5) * dt;
        shift.change = after / (double)(n - j) - before / (double)j;
    }
    const level_move *cand[2] = {&shift, &trend};
    for (size_t i = 0; i < 2; i++) {
        const level_move *c = cand[i];
        if (fabs(c->z) >= EL_REGIME_LEVEL_Z && c->share >= EL_REGIME_LEVEL_SHARE &&
            c->r2 >= EL_REGIME_LEVEL_BLOCK_R2 &&
            (out->kind == EL_REGIME_LEVEL_NONE || c->r2 > out->r2))
            *out = *c;
    }
}

/* Step 7 over the tested channels: the movement with the largest share,
 * leaving out a channel whose movement another explanation fits better
 * (rms_error[c]^2 < 1 - share; rms_error NULL: none). */
static void level_check(el_regime *r, const el_series *series, const double *rms_error)
{
    r->level_kind = EL_REGIME_LEVEL_NONE;
    r->level_channel = 0;
    r->level_step_t = r->level_change = r->level_move_z = NAN;
    r->level_share = r->level_fit_r2 = NAN;
    r->level_explained = 0;
    if (r->segments < MIN_SEGMENTS || r->segments > LEVEL_MAX_SEGMENTS)
        return;
    for (size_t c = 0; c < r->n_channels; c++) {
        if (!r->tested[c])
            continue;
        level_move mv;
        level_channel(r, series->values + c * r->n_samples, series->t0, series->dt, &mv);
        if (mv.kind != EL_REGIME_LEVEL_NONE && rms_error != NULL &&
            rms_error[c] * rms_error[c] < 1.0 - mv.share) {
            r->level_explained++;
            continue;
        }
        if (mv.kind == EL_REGIME_LEVEL_NONE ||
            (r->level_kind != EL_REGIME_LEVEL_NONE && !(mv.share > r->level_share)))
            continue;
        r->level_kind = mv.kind;
        r->level_channel = c;
        r->level_step_t = mv.step_t;
        r->level_change = mv.change;
        r->level_move_z = mv.z;
        r->level_share = mv.share;
        r->level_fit_r2 = mv.r2;
    }
}

el_status el_regime_run(el_regime *r, const el_series *series,
                        const el_regime_options *opt, el_warnings *warnings,
                        el_error *err)
{
    el_regime_options defaults;
    if (opt == NULL) {
        el_regime_defaults(&defaults);
        opt = &defaults;
    }
    if (r == NULL || series == NULL || series->values == NULL
        || series->n_samples != r->n_samples || series->n_channels != r->n_channels
        || !(series->dt > 0.0) || opt->segments < MIN_SEGMENTS)
        return el_error_set(err, EL_ERR_INTERNAL, "el_regime_run: bad arguments or a series "
                            "that does not match the plan");
    if (!(opt->level > 0.0 && opt->level < 0.5)) {
        el_error_set(err, EL_ERR_USAGE, "significance level %g is outside (0, 0.5)",
                     opt->level);
        el_error_option(err, "--level");
        el_error_hint(err, "use a small level such as 0.01");
        return EL_ERR_USAGE;
    }
    /* Made again after el_regime_release_work. */
    el_status made = r->work == NULL ? work_create(r->n_samples, r->transform_rows, &r->work, err) : EL_OK;
    if (made != EL_OK)
        return made;
    size_t n = r->n_samples;
    size_t segs = opt->segments;
    if (segs > n / MIN_SEGMENT_SAMPLES)
        segs = n / MIN_SEGMENT_SAMPLES;
    r->regime = EL_REGIME_UNDETERMINED;
    r->direction = 0;
    r->trend_p = r->growth_p = r->growth_factor = NAN;
    r->growth = 0;
    r->growth_channel = 0;
    r->growth_test = EL_REGIME_GROWTH_ENVELOPE;
    r->segments = segs >= MIN_SEGMENTS ? segs : 0;
    r->segment_length = r->segments ? n / segs : 0;
    for (size_t c = 0; c < r->n_channels; c++)
        set_untested(r, c);
    r->level_kind = EL_REGIME_LEVEL_NONE;
    r->level_channel = 0;
    r->level_step_t = r->level_change = r->level_move_z = NAN;
    r->level_share = r->level_fit_r2 = NAN;
    r->level_explained = 0;
    el_status st = EL_OK;
    if (r->segments == 0) {
        st = el_warnings_add(warnings, "the window has %zu samples, too few to tell a "
                             "transient from stationary motion (the regime test needs %d)",
                             n, MIN_SEGMENTS * MIN_SEGMENT_SAMPLES);
    } else {
        make_contrasts(r->work, segs, (double)r->segment_length * series->dt);
        for (size_t c = 0; c < r->n_channels && r->work->rows; c += 2)
            test_pair(r, series, c);
        for (size_t c = 0; c < r->n_channels && !r->work->rows; c++) {
            if (test_channel(r, series->values + c * n, series->dt, c))
                r->tested[c] = 1;
            else
                set_untested(r, c);
        }
        decide(r, opt);
        level_check(r, series, NULL);
        if (r->regime == EL_REGIME_UNDETERMINED)
            st = el_warnings_add(warnings, "no channel varies over the window: its regime "
                                 "cannot be determined");
    }
    if (opt->driven)
        r->regime = EL_REGIME_DRIVEN;
    r->regime_name = el_regime_name(r->regime);
    if (st != EL_OK)
        return el_error_set(err, st, "out of memory");
    return EL_OK;
}

void el_regime_level_recheck(el_regime *r, const el_series *series,
                             const double *rms_error)
{
    if (r == NULL || series == NULL || series->values == NULL ||
        series->n_samples != r->n_samples || series->n_channels != r->n_channels)
        return;
    level_check(r, series, rms_error);
}

int el_regime_growth_veto(const el_regime *r, double *factor, double *p_value,
                          size_t *channel)
{
    if (factor != NULL)
        *factor = r ? r->growth_factor : NAN;
    if (p_value != NULL)
        *p_value = r ? r->growth_p : NAN;
    if (channel != NULL)
        *channel = r ? r->growth_channel : 0;
    return r != NULL && r->growth;
}

int el_regime_envelope_grows(const el_regime *r, double min_factor, double max_p,
                             size_t *channel, double *factor, double *p_value)
{
    if (r == NULL || r->tested == NULL)
        return 0;
    size_t best = 0;
    int found = 0;
    for (size_t c = 0; c < r->n_channels; c++) {
        /* NaN (untested) never compares true */
        if (!r->tested[c] || !(r->envelope_factor[c] >= min_factor) ||
            !(r->envelope_p_growth[c] <= max_p))
            continue;
        if (!found || r->envelope_p_growth[c] < r->envelope_p_growth[best])
            best = c;
        found = 1;
    }
    if (!found)
        return 0;
    if (channel != NULL)
        *channel = best;
    if (factor != NULL)
        *factor = r->envelope_factor[best];
    if (p_value != NULL)
        *p_value = r->envelope_p_growth[best];
    return 1;
}

el_status el_regime_growth_warning(const el_regime *r, const el_series *series,
                                   el_warnings *warnings, el_error *err)
{
    if (r == NULL || series == NULL)
        return el_error_set(err, EL_ERR_INTERNAL, "el_regime_growth_warning: missing argument");
    if (!r->growth)
        return EL_OK;
    char buf[32];
    const char *name = buf;
    if (series->names != NULL && series->names[r->growth_channel] != NULL)
        name = series->names[r->growth_channel];
    else
        snprintf(buf, sizeof buf, "%zu", r->growth_channel + 1);
    const char *what = r->growth_test == EL_REGIME_GROWTH_DRIFT
                           ? "deviation from its level" : "amplitude";
    const char *test = r->growth_test == EL_REGIME_GROWTH_DRIFT
                           ? "model-free drift test" : "model-free envelope test";
    char p_text[32];
    /* below 1e-16 a tail probability means no more than "zero" */
    if (r->growth_p < 1e-16)
        snprintf(p_text, sizeof p_text, "p < 1e-16");
    else
        snprintf(p_text, sizeof p_text, "p = %.2g", r->growth_p);
    el_status st = el_warnings_add(warnings, "the %s of channel %s grows by a factor %.3g "
                                   "over the window (%s, %s): the operating point cannot "
                                   "be called stable", what, name, r->growth_factor, p_text,
                                   test);
    if (st != EL_OK)
        return el_error_set(err, st, "out of memory");
    return EL_OK;
}
