/* el_subspace: block-Hankel subspace identification (future against past
 * of the scaled channels), models of every order from one SVD, their
 * stabilisation labels, and the per-block sums and replicate solve of a
 * block bootstrap. */
#include "el_subspace.h"

#include "el_horizon.h"
#include "el_stats.h"

#include <cblas.h>
#include <float.h>
#include <lapacke.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#define SUB_PI 3.14159265358979323846

/* Windows centred and multiplied at a time (bounded scratch whatever the
 * record length; 256 columns keep the dgemm calls efficient). */
#define SUB_CHUNK 256

/* The shift equations are rank deficient when the smallest diagonal entry
 * of the triangular factor of O_up is below this fraction of the largest:
 * the least-squares A would then follow rounding. O = U_n S_n^1/2 has
 * orthogonal columns, so a well-posed O_up loses at most the one block
 * row's share; 1e-10 leaves six orders of margin above rounding. */
#define SUB_RANK_TOL 1e-10

/* Shift equations need room: at the smallest horizon (h_min = 1 +
 * ceil(SUB_MIN_ORDER_ROOM / p), at least 3) the h - 1 block rows hold
 * this many rows, so that orders up to half of it (SUB_ORDER_SHARE) are
 * tried: six oscillatory modes. */
#define SUB_MIN_ORDER_ROOM 24

/* Largest order tried: the rows of the shift equations divided by this.
 * As the order approaches the row count the least-squares shift becomes
 * nearly exactly determined and fits the noise; its poles then drift to
 * the unit circle and can persist over several orders (measured: a
 * 43 Hz pole with |mu| ~ 1.01 over orders 23-28 of white noise with 36
 * rows). Half the rows keeps those orders out; our choice. */
#define SUB_ORDER_SHARE 2

/* At least this many windows per row of H (m >= 4 h p): fewer, and the
 * sample cross-products are too noisy for their SVD to separate signal
 * from noise directions. A rule of thumb of ours, not a published value. */
#define SUB_WINDOWS_PER_ROW 4

/* Weighted past directions a bootstrap record carries (nv): all hp when
 * hp >= SUB_WHOLE_PAST_RATIO sqrt(windows) and hp * hp is within the
 * largest record an automatic plan makes anyway (200 rows x 30: hp <= 77),
 * else max_order. The left-out directions' noise enters the leading
 * subspace at second order, about hp / sqrt(windows) of the first: 1.5 at
 * 2,000 samples of two channels (hp 66), where a few logs had bounds far
 * too narrow with 30 directions; 0.47 at 20,000 (widths moved under 2 %).
 * bench_boot (100,000 samples) and track's bench windows (hp 96) keep
 * their records bit for bit; the whole past at hp = 200 cost 8.2 point
 * fits per 1,000 replicates (docs/uncertainty.md, "hankel's bounds"). */
#define SUB_WHOLE_PAST_RATIO 0.5
#define SUB_RECORD_BUDGET ((size_t)EL_SUBSPACE_MAX_ROWS * EL_SUBSPACE_MAX_ORDER)

struct el_subspace_plan {
    size_t p, max_samples, h, hp, nmax;
    size_t nv;                    /* past directions of a bootstrap record (>= nmax):
                                     set by each execute, at most nv_cap */
    size_t nv_cap;                /* hp when hp * hp <= SUB_RECORD_BUDGET, else nmax */
    /* scaled data, time-major: sample k of channel c at y[k * p + c] */
    double *y;
    size_t n_samples, n_windows;
    int executed;
    size_t executed_order;        /* the order the last execute chose */
    double dt;
    double *mean, *scale;
    double *hank;
    /* build_hankel: SUB_CHUNK stacked windows (2hp each), the core's
     * lagged products (2hp x p), the stacked means (2hp), channel sums */
    double *schunk, *core, *sbar, *csum;
    int cva;                      /* weighting of the last execute */
    double *sff, *spp;            /* hp x hp Grams of the centred future / past */
    double *w1, *w1inv, *w2;      /* CVA weights: Sff^-1/2, Sff^1/2, Spp^-1/2 */
    double *sym_vec, *sym_lam, *sym_work, *tmp;
    size_t sym_lwork;
    double *sv, *u, *vt, *v;      /* SVD of H; v: hp x nv right vectors */
    double *svd_work;
    size_t svd_lwork;
    double *obs;                  /* hp x nmax: W1^-1 U S^1/2 */
    double *gp;                   /* hp x nmax: W2^-1 V S^1/2 (past side of H) */
    double *w2inv;                /* CVA: Spp^1/2 */
    double *oup, *odown;          /* (h-1)p x nmax */
    double *ls_work;
    size_t ls_lwork;
    double *acopy, *wr, *wi, *vr, *vl, *ev_work;
    size_t ev_lwork;
    double *a, *c_scaled, *c_raw;
    el_subspace_pole *poles;
    size_t max_poles;
    double *shape_re, *shape_im;
    size_t *chain_len;
    unsigned char *taken_chain;   /* per chain: present at the last solvable order */
    size_t *first;                /* nmax + 2: index of each order's first pole */
    int *taken;
    /* replicate solve sizes */
    size_t rep_svd_lwork, rep_ls_lwork, rep_ev_lwork;
};

void el_subspace_defaults(el_subspace_options *opt)
{
    memset(opt, 0, sizeof *opt);
    opt->horizon_time = 0.0;
    opt->max_rows = EL_SUBSPACE_MAX_ROWS;
    opt->max_order = EL_SUBSPACE_MAX_ORDER;
    opt->order = 0;
    opt->stab_freq_rel = 0.01;
    opt->stab_damp_rel = 0.05;
    opt->stab_damp_abs = 0.005;
    opt->stab_mac_min = 0.98;
    opt->stab_min_run = 5;
    opt->weighting = EL_SUBSPACE_CVA;
    opt->stab_min_share = 0.003;
}

/* ------------------------------------------------------------------ */
/* Horizon                                                            */
/* ------------------------------------------------------------------ */

static size_t min_horizon(size_t p)
{
    size_t h = 1 + (SUB_MIN_ORDER_ROOM + p - 1) / p;
    return h < 3 ? 3 : h;
}

/* Largest h with m = N - 2h + 1 >= SUB_WINDOWS_PER_ROW h p. */
static size_t max_horizon_for(size_t n, size_t p)
{
    return (n + 1) / (2 + SUB_WINDOWS_PER_ROW * p);
}

/* Lags of the mean autocorrelation an automatic horizon of at most
 * max_rows rows reads (the cost cap + 1, at most half the record). */
static size_t horizon_lags(size_t n, size_t p, size_t max_rows)
{
    size_t hmin = min_horizon(p);
    size_t cap = (max_rows ? max_rows : EL_SUBSPACE_MAX_ROWS) / p;
    if (cap < hmin)
        cap = hmin;
    size_t lmax = cap + 1;
    if (lmax > n / 2)
        lmax = n / 2;
    return lmax;
}

/* A stage kept by an el_subspace_acf (el_subspace_keep), with what it ran
 * on: the series' identity and sizes, and the options that decide it. */
struct el_subspace_kept {
    el_subspace_plan *plan;   /* NULL: nothing kept */
    el_subspace_result res;
    el_subspace_horizon hz;
    const double *values;
    size_t n_samples, n_channels;
    double dt, horizon_time;
    size_t order;
};

/* The shared autocorrelation of exactly this series, when it holds the
 * lags asked for. */
static int acf_fits(const el_subspace_acf *acf, const el_series *s, size_t lmax)
{
    return acf != NULL && acf->r != NULL && acf->values == s->values &&
           acf->n_samples == s->n_samples && acf->n_channels == s->n_channels &&
           acf->lags >= lmax;
}

el_status el_subspace_acf_compute(const el_series *series, size_t max_rows,
                                  el_subspace_acf *acf, el_error *err)
{
    if (series == NULL || acf == NULL || series->values == NULL || series->n_channels == 0)
        return el_error_set(err, EL_ERR_INTERNAL, "el_subspace_acf_compute: bad arguments");
    acf->values = NULL;
    /* A stage kept for the series before belongs to its old values. The
     * record is optional: without it nothing is kept. */
    el_subspace_drop_kept(acf);
    if (acf->kept == NULL)
        acf->kept = calloc(1, sizeof *acf->kept);
    size_t lmax = horizon_lags(series->n_samples, series->n_channels, max_rows);
    if (acf->capacity < 2 * (lmax + 1)) {
        free(acf->r);
        acf->capacity = 0;
        acf->r = malloc(2 * (lmax + 1) * sizeof *acf->r);
        if (acf->r == NULL)
            return el_error_set(err, EL_ERR_NOMEM, "out of memory (horizon)");
        acf->capacity = 2 * (lmax + 1);
    }
    /* Each lag's sum is the same whatever the number of lags computed
     * (el_stats_lagged_products), so a prefix is what a smaller cap reads. */
    acf->unusable = el_horizon_mean_acf(series, 0, lmax, acf->r, acf->r + lmax + 1);
    acf->lags = lmax;
    acf->values = series->values;
    acf->n_samples = series->n_samples;
    acf->n_channels = series->n_channels;
    return EL_OK;
}

void el_subspace_acf_free(el_subspace_acf *acf)
{
    if (acf == NULL)
        return;
    el_subspace_drop_kept(acf);
    free(acf->kept);
    free(acf->r);
    memset(acf, 0, sizeof *acf);
}


static int kept_matches(const struct el_subspace_kept *k, const el_series *s,
                        double horizon_time, size_t order)
{
    return k->plan != NULL && k->values == s->values && k->n_samples == s->n_samples &&
           k->n_channels == s->n_channels && k->dt == s->dt &&
           k->horizon_time == horizon_time && k->order == order;
}

void el_subspace_drop_kept(const el_subspace_acf *acf)
{
    if (acf == NULL || acf->kept == NULL)
        return;
    el_subspace_plan_destroy(acf->kept->plan);
    acf->kept->plan = NULL;
}

int el_subspace_keep(const el_subspace_acf *acf, const el_series *series,
                     double horizon_time, size_t order, el_subspace_plan *plan,
                     const el_subspace_result *result, const el_subspace_horizon *hz)
{
    if (acf == NULL || acf->kept == NULL || series == NULL || plan == NULL ||
        result == NULL || hz == NULL || !plan->executed ||
        !acf_fits(acf, series, 0))
        return 0;
    el_subspace_drop_kept(acf);
    struct el_subspace_kept *k = acf->kept;
    k->plan = plan;
    k->res = *result;
    k->hz = *hz;
    k->values = series->values;
    k->n_samples = series->n_samples;
    k->n_channels = series->n_channels;
    k->dt = series->dt;
    k->horizon_time = horizon_time;
    k->order = order;
    return 1;
}

int el_subspace_take(const el_subspace_acf *acf, const el_series *series,
                     double horizon_time, size_t order, el_subspace_plan **plan,
                     el_subspace_result *result, el_subspace_horizon *hz)
{
    if (acf == NULL || acf->kept == NULL || series == NULL || plan == NULL ||
        result == NULL || hz == NULL || !acf_fits(acf, series, 0) ||
        !kept_matches(acf->kept, series, horizon_time, order))
        return 0;
    struct el_subspace_kept *k = acf->kept;
    el_subspace_result res = k->res;
    el_subspace_plan *pl = k->plan;
    /* The keeper may have moved the model to another order (hankel's kept
     * poles): back to the execute's own, the same shift solve it ran. */
    if (res.order != pl->executed_order) {
        el_error quiet;
        el_error_clear(&quiet);
        if (pl->executed_order == 0 ||
            el_subspace_set_order(pl, pl->executed_order, &res, &quiet) != EL_OK)
            return 0;
    }
    k->plan = NULL;
    *plan = pl;
    *result = res;
    *hz = k->hz;
    return 1;
}

el_status el_subspace_choose_horizon(const el_series *series,
                                     const el_subspace_options *opt,
                                     el_subspace_horizon *out, el_error *err)
{
    if (series == NULL || out == NULL || series->values == NULL || series->n_channels == 0)
        return el_error_set(err, EL_ERR_INTERNAL, "el_subspace_choose_horizon: bad arguments");
    el_subspace_options d;
    if (opt == NULL) {
        el_subspace_defaults(&d);
        opt = &d;
    }
    memset(out, 0, sizeof *out);
    size_t n = series->n_samples, p = series->n_channels;
    size_t hmin = min_horizon(p), hdata = max_horizon_for(n, p);
    if (hdata < hmin) {
        el_error_set(err, EL_ERR_DATA,
                     "the record is too short for subspace identification: %zu samples of "
                     "%zu channels, at least %zu needed",
                     n, p, hmin * (2 + SUB_WINDOWS_PER_ROW * p));
        el_error_hint(err, "use a longer window");
        return EL_ERR_DATA;
    }
    if (opt->horizon_time > 0.0) {
        double rows = opt->horizon_time / series->dt;
        size_t h = rows > 1e9 ? (size_t)1e9 : (size_t)llround(rows);
        if (h > hdata) {
            el_error_set(err, EL_ERR_USAGE,
                         "a horizon of %g leaves too few windows: at most %zu samples "
                         "(%g) for this record",
                         opt->horizon_time, hdata, (double)hdata * series->dt);
            el_error_option(err, "--horizon");
            el_error_hint(err, "a shorter horizon or a longer window");
            return EL_ERR_USAGE;
        }
        out->rows = h < hmin ? hmin : h;
        out->time = (double)out->rows * series->dt;
        out->scale_lags = 0;
        snprintf(out->reason, sizeof out->reason,
                 "horizon %zu samples (%.4g) as given%s", out->rows, out->time,
                 h < hmin ? ", raised to the smallest the shift equations need" : "");
        return EL_OK;
    }
    size_t cap = (opt->max_rows ? opt->max_rows : EL_SUBSPACE_MAX_ROWS) / p;
    if (cap < hmin)
        cap = hmin;
    size_t lmax = horizon_lags(n, p, opt->max_rows);
    /* Rule (b) reads a crossing's lobe at least as far as the default cap's
     * lags (a prefix of the shared autocorrelation el_assess computes). */
    size_t lread = horizon_lags(n, p, 0);
    if (lread < lmax)
        lread = lmax;
    double *r = malloc(2 * (lread + 1) * sizeof *r);
    if (r == NULL)
        return el_error_set(err, EL_ERR_NOMEM, "out of memory (horizon)");
    int unusable;
    if (acf_fits(opt->acf, series, lread)) {
        unusable = opt->acf->unusable;
        memcpy(r, opt->acf->r, (lread + 1) * sizeof *r);
    } else {
        unusable = el_horizon_mean_acf(series, 0, lread, r, r + lread + 1);
    }
    if (unusable) {
        free(r);
        el_error_set(err, EL_ERR_DATA, "a channel is constant or not finite");
        el_error_hint(err, "drop constant channels");
        return EL_ERR_DATA;
    }
    /* (a) envelope below 1/e: scan from the end keeping the running max. */
    size_t k_env = lmax;
    double env = 0.0;
    for (size_t k = lmax + 1; k-- > 0;) {
        env = fmax(env, fabs(r[k]));
        if (env < exp(-1.0))
            k_env = k;
    }
    /* (b) four times the first zero crossing, when its negative lobe is
     * deeper than the sampling noise of r (el_horizon_crossing). A lobe
     * still open at the last lag read is read on to twice the crossing's
     * lag, where an oscillation's lobe has its bottom (a slow mode seen
     * by many channels crosses near the cap's lags). */
    double lobe_se = 0.0;
    int open = 0;
    size_t k_cross = el_horizon_crossing(r, lmax, lread, n, &lobe_se, &open);
    size_t lfar = 2 * k_cross + 2 < n / 2 ? 2 * k_cross + 2 : n / 2;
    if (opt->crossing_test && open && lobe_se < EL_HORIZON_LOBE_SE && lfar > lread) {
        double *rf = realloc(r, 2 * (lfar + 1) * sizeof *r);
        if (rf == NULL) {
            free(r);
            return el_error_set(err, EL_ERR_NOMEM, "out of memory (horizon)");
        }
        r = rf;
        el_horizon_mean_acf(series, lread + 1, lfar, r, r + lfar + 1);
        k_cross = el_horizon_crossing(r, lmax, lfar, n, &lobe_se, &open);
    }
    size_t k_zero = !opt->crossing_test || lobe_se >= EL_HORIZON_LOBE_SE ? k_cross : 0;
    free(r);
    /* No zero crossing within the lags looked at, or one within the noise
     * (a positive, decaying autocorrelation whose estimate wanders below
     * zero): no oscillation seen, the envelope alone says how long the
     * memory is. */
    size_t scale = k_env;
    if (k_zero > 0 && 4 * k_zero > scale)
        scale = 4 * k_zero;
    size_t h = scale;
    int capped = 0;
    if (h > cap) {
        h = cap;
        capped = 1;
    }
    if (h > hdata) {
        h = hdata;
        capped = 1;
    }
    if (h < hmin)
        h = hmin;
    out->rows = h;
    out->time = (double)h * series->dt;
    out->scale_lags = scale;
    out->capped = capped;
    out->crossing_lags = k_cross;
    out->crossing_se = lobe_se;
    char noise[128] = "";
    if (k_cross > 0 && k_zero == 0)
        snprintf(noise, sizeof noise,
                 " (a zero crossing at %zu samples is within the noise: its lobe is %.2g "
                 "standard errors deep)",
                 k_cross, lobe_se);
    snprintf(out->reason, sizeof out->reason,
             "horizon %zu samples (%.4g): the slowest time scale seen in the "
             "autocorrelation is %s%zu samples%s%s",
             h, out->time, scale >= lmax ? ">= " : "",
             scale,
             capped ? (h == hdata ? ", capped by the record length"
                                  : ", capped for cost")
                    : "", noise);
    return EL_OK;
}

/* ------------------------------------------------------------------ */
/* Plan                                                               */
/* ------------------------------------------------------------------ */

static size_t ceil_lwork(double q)
{
    return q > 1.0 ? (size_t)q + 1 : 1;
}

/* Workspace sizes of the LAPACK calls, by query. Returns 0 or 1. */
static int query_work(el_subspace_plan *pl)
{
    size_t hp = pl->hp, n = pl->nmax, rows = (pl->h - 1) * pl->p;
    double q = 0.0, dummy = 0.0;
    lapack_int info = LAPACKE_dgesvd_work(LAPACK_COL_MAJOR, 'S', 'S', (lapack_int)hp,
                                          (lapack_int)hp, &dummy, (lapack_int)hp, &dummy,
                                          &dummy, (lapack_int)hp, &dummy, (lapack_int)hp,
                                          &q, -1);
    if (info != 0)
        return 1;
    pl->svd_lwork = ceil_lwork(q);
    info = LAPACKE_dgesvd_work(LAPACK_COL_MAJOR, 'S', 'N', (lapack_int)hp, (lapack_int)n,
                               &dummy, (lapack_int)hp, &dummy, &dummy, (lapack_int)hp,
                               &dummy, 1, &q, -1);
    if (info != 0)
        return 1;
    pl->rep_svd_lwork = ceil_lwork(q);
    size_t ls = 1;
    for (size_t ord = 1; ord <= n; ord++) {
        info = LAPACKE_dgels_work(LAPACK_COL_MAJOR, 'N', (lapack_int)rows, (lapack_int)ord,
                                  (lapack_int)ord, &dummy, (lapack_int)rows, &dummy,
                                  (lapack_int)rows, &q, -1);
        if (info != 0)
            return 1;
        if (ceil_lwork(q) > ls)
            ls = ceil_lwork(q);
    }
    pl->ls_lwork = ls;
    pl->rep_ls_lwork = ls;
    size_t ev = 1, evn = 1;
    for (size_t ord = 1; ord <= n; ord++) {
        info = LAPACKE_dgeev_work(LAPACK_COL_MAJOR, 'V', 'V', (lapack_int)ord, &dummy,
                                  (lapack_int)ord, &dummy, &dummy, &dummy, (lapack_int)ord, &dummy,
                                  (lapack_int)ord, &q, -1);
        if (info != 0)
            return 1;
        if (ceil_lwork(q) > ev)
            ev = ceil_lwork(q);
        info = LAPACKE_dgeev_work(LAPACK_COL_MAJOR, 'N', 'N', (lapack_int)ord, &dummy,
                                  (lapack_int)ord, &dummy, &dummy, &dummy, 1, &dummy, 1,
                                  &q, -1);
        if (info != 0)
            return 1;
        if (ceil_lwork(q) > evn)
            evn = ceil_lwork(q);
    }
    pl->ev_lwork = ev;
    pl->rep_ev_lwork = evn;
    info = LAPACKE_dsyev_work(LAPACK_COL_MAJOR, 'V', 'L', (lapack_int)hp, &dummy,
                              (lapack_int)hp, &dummy, &q, -1);
    if (info != 0)
        return 1;
    pl->sym_lwork = ceil_lwork(q);
    return 0;
}

el_status el_subspace_plan_create(size_t n_channels, size_t max_samples,
                                  size_t horizon, size_t max_order,
                                  el_subspace_plan **out, el_error *err)
{
    if (out == NULL)
        return el_error_set(err, EL_ERR_INTERNAL, "el_subspace_plan_create: NULL out");
    *out = NULL;
    if (n_channels == 0 || horizon < 2 || max_samples < 2 * horizon + 1)
        return el_error_set(err, EL_ERR_INTERNAL,
                            "el_subspace_plan_create: bad sizes (%zu channels, %zu "
                            "samples, horizon %zu)",
                            n_channels, max_samples, horizon);
    el_subspace_plan *pl = calloc(1, sizeof *pl);
    if (pl == NULL)
        return el_error_set(err, EL_ERR_NOMEM, "out of memory (subspace plan)");
    size_t p = n_channels, h = horizon, hp = h * p;
    size_t nmax = max_order ? max_order : EL_SUBSPACE_MAX_ORDER;
    if (nmax > (h - 1) * p / SUB_ORDER_SHARE)
        nmax = (h - 1) * p / SUB_ORDER_SHARE;
    if (nmax == 0)
        nmax = 1;
    pl->p = p;
    pl->max_samples = max_samples;
    pl->h = h;
    pl->hp = hp;
    pl->nmax = nmax;
    size_t nv = hp * hp <= SUB_RECORD_BUDGET ? hp : nmax;
    pl->nv_cap = nv;
    pl->nv = nmax;
    pl->max_poles = nmax * (nmax + 1) / 2;
    if (query_work(pl)) {
        free(pl);
        return el_error_set(err, EL_ERR_NUMERIC, "LAPACK workspace query failed");
    }
    size_t rows = (h - 1) * p;
    pl->y = malloc(max_samples * p * sizeof(double));
    pl->mean = malloc(p * sizeof(double));
    pl->scale = malloc(p * sizeof(double));
    pl->hank = malloc(hp * hp * sizeof(double));
    pl->sff = malloc(hp * hp * sizeof(double));
    pl->spp = malloc(hp * hp * sizeof(double));
    pl->w1 = malloc(hp * hp * sizeof(double));
    pl->w1inv = malloc(hp * hp * sizeof(double));
    pl->w2 = malloc(hp * hp * sizeof(double));
    pl->tmp = malloc(hp * hp * sizeof(double));
    pl->sym_vec = malloc(hp * hp * sizeof(double));
    pl->sym_lam = malloc(hp * sizeof(double));
    pl->sym_work = malloc(pl->sym_lwork * sizeof(double));
    pl->schunk = malloc(2 * hp * SUB_CHUNK * sizeof(double));
    pl->core = malloc(2 * hp * p * sizeof(double));
    pl->sbar = malloc(2 * hp * sizeof(double));
    pl->csum = malloc(p * sizeof(double));
    pl->sv = malloc(hp * sizeof(double));
    pl->u = malloc(hp * hp * sizeof(double));
    pl->vt = malloc(hp * hp * sizeof(double));
    pl->v = malloc(hp * nv * sizeof(double));
    pl->svd_work = malloc(pl->svd_lwork * sizeof(double));
    pl->obs = malloc(hp * nmax * sizeof(double));
    pl->gp = malloc(hp * nmax * sizeof(double));
    pl->w2inv = malloc(hp * hp * sizeof(double));
    pl->oup = malloc(rows * nmax * sizeof(double));
    pl->odown = malloc(rows * nmax * sizeof(double));
    pl->ls_work = malloc(pl->ls_lwork * sizeof(double));
    pl->acopy = malloc(nmax * nmax * sizeof(double));
    pl->wr = malloc(nmax * sizeof(double));
    pl->wi = malloc(nmax * sizeof(double));
    pl->vr = malloc(nmax * nmax * sizeof(double));
    pl->vl = malloc(nmax * nmax * sizeof(double));
    pl->ev_work = malloc(pl->ev_lwork * sizeof(double));
    pl->a = malloc(nmax * nmax * sizeof(double));
    pl->c_scaled = malloc(p * nmax * sizeof(double));
    pl->c_raw = malloc(p * nmax * sizeof(double));
    pl->poles = malloc(pl->max_poles * sizeof *pl->poles);
    pl->shape_re = malloc(pl->max_poles * p * sizeof(double));
    pl->shape_im = malloc(pl->max_poles * p * sizeof(double));
    pl->chain_len = malloc(pl->max_poles * sizeof(size_t));
    pl->taken_chain = malloc(pl->max_poles);
    pl->taken = malloc(nmax * sizeof(int));
    pl->first = malloc((nmax + 2) * sizeof(size_t));
    if (!pl->sff || !pl->spp || !pl->w1 || !pl->w1inv || !pl->w2 || !pl->tmp ||
        !pl->sym_vec || !pl->sym_lam || !pl->sym_work) {
        el_subspace_plan_destroy(pl);
        return el_error_set(err, EL_ERR_NOMEM, "out of memory (subspace plan)");
    }
    if (!pl->y || !pl->mean || !pl->scale || !pl->hank || !pl->schunk || !pl->core ||
        !pl->sbar || !pl->csum || !pl->sv || !pl->u || !pl->vt || !pl->v ||
        !pl->svd_work || !pl->obs || !pl->gp || !pl->w2inv || !pl->oup || !pl->odown || !pl->ls_work ||
        !pl->acopy || !pl->wr || !pl->wi || !pl->vr || !pl->vl || !pl->ev_work || !pl->a ||
        !pl->c_scaled || !pl->c_raw || !pl->poles || !pl->shape_re || !pl->shape_im ||
        !pl->chain_len || !pl->taken_chain || !pl->taken || !pl->first) {
        el_subspace_plan_destroy(pl);
        return el_error_set(err, EL_ERR_NOMEM, "out of memory (subspace plan)");
    }
    *out = pl;
    return EL_OK;
}

void el_subspace_plan_destroy(el_subspace_plan *pl)
{
    if (pl == NULL)
        return;
    free(pl->y);
    free(pl->mean);
    free(pl->scale);
    free(pl->hank);
    free(pl->sff);
    free(pl->spp);
    free(pl->w1);
    free(pl->w1inv);
    free(pl->w2);
    free(pl->tmp);
    free(pl->sym_vec);
    free(pl->sym_lam);
    free(pl->sym_work);
    free(pl->schunk);
    free(pl->core);
    free(pl->sbar);
    free(pl->csum);
    free(pl->sv);
    free(pl->u);
    free(pl->vt);
    free(pl->v);
    free(pl->svd_work);
    free(pl->obs);
    free(pl->gp);
    free(pl->w2inv);
    free(pl->oup);
    free(pl->odown);
    free(pl->ls_work);
    free(pl->acopy);
    free(pl->wr);
    free(pl->wi);
    free(pl->vr);
    free(pl->vl);
    free(pl->ev_work);
    free(pl->a);
    free(pl->c_scaled);
    free(pl->c_raw);
    free(pl->poles);
    free(pl->shape_re);
    free(pl->shape_im);
    free(pl->chain_len);
    free(pl->taken_chain);
    free(pl->taken);
    free(pl->first);
    free(pl);
}

/* ------------------------------------------------------------------ */
/* The block Hankel cross-product                                     */
/* ------------------------------------------------------------------ */

/* Internally the past is stored in ascending time, [y_t-h; ...; y_t-1],
 * so that both window vectors are contiguous runs of the time-major data;
 * that permutes the columns of H (the header's order is descending), which
 * changes neither its singular values nor its left singular vectors, and V
 * is used only with the same internal order. */
static const double *future_of(const el_subspace_plan *pl, size_t w)
{
    return pl->y + (w + pl->h) * pl->p;
}

static const double *past_of(const el_subspace_plan *pl, size_t w)
{
    return pl->y + w * pl->p;
}

/* The Grams from lagged products. Stack each window as s_w = [y_w; ...;
 * y_w+2h-1] (2hp: the past, then the future); every matrix the stage needs
 * is a block of G = (1/m) sum_w (s_w - sbar)(s_w - sbar)'. Block (u, v),
 * u >= v, of the raw sum is T(u, v) = sum_{t=v}^{v+m-1} y_t+d y_t' with
 * d = u - v: a lagged product over a range that differs from window to
 * window only by its ends. So the long sums are taken once, over the core
 * t = 2h-1 .. m-1 that every range contains (core(d) for d = 0 .. 2h-1:
 * a (2hp x p) product, 2hp p per window instead of the 3 (hp)^2 of the
 * three Grams window by window), and each block adds its own at most
 * 2h - 1 first and last terms. G = T / m - sbar sbar', the same matrix as
 * the sum of centred products up to rounding (the channels are centred
 * and scaled to unit spread, so the mean term is far below T / m). */

/* True when every window's range contains the core (m >= 2h - 1). */
static int core_fits(const el_subspace_plan *pl)
{
    return pl->n_windows >= 2 * pl->h - 1;
}

/* sum_{t=t0}^{t1-1} y_t+d[c] y_t[c2] */
static double lag_sum(const el_subspace_plan *pl, size_t d, size_t c, size_t c2, size_t t0,
                      size_t t1)
{
    size_t p = pl->p;
    double s = 0.0;
    for (size_t t = t0; t < t1; t++)
        s += pl->y[(t + d) * p + c] * pl->y[t * p + c2];
    return s;
}

/* Entry (r, q) of G, r and q indices of the stacked window. */
static double gram_entry(const el_subspace_plan *pl, size_t r, size_t q)
{
    size_t p = pl->p, m = pl->n_windows, c0 = 2 * pl->h - 1;
    if (r < q) {
        size_t tmp = r;
        r = q;
        q = tmp;
    }
    size_t u = r / p, c = r % p, v = q / p, c2 = q % p, d = u - v;
    double t;
    if (core_fits(pl))
        t = pl->core[(d * p + c) + c2 * 2 * pl->hp] + lag_sum(pl, d, c, c2, v, c0) +
            lag_sum(pl, d, c, c2, m, v + m);
    else
        t = lag_sum(pl, d, c, c2, v, v + m);
    return t / (double)m - pl->sbar[r] * pl->sbar[q];
}

/* core(d) for d = 0 .. 2h-1 into pl->core (2hp x p, column c2, row d p + c:
 * sum over the core of y_t+d[c] y_t[c2]) by matrix products of SUB_CHUNK
 * stacked windows at a time; and the stacked means sbar. */
static void build_core(el_subspace_plan *pl)
{
    size_t p = pl->p, sp = 2 * pl->hp, m = pl->n_windows, c0 = 2 * pl->h - 1;
    double *csum = pl->csum;
    for (size_t c = 0; c < p; c++)
        csum[c] = 0.0;
    int fits = core_fits(pl);
    for (size_t t = c0; fits && t < m; t++)
        for (size_t c = 0; c < p; c++)
            csum[c] += pl->y[t * p + c];
    for (size_t r = 0; r < sp; r++) {
        size_t u = r / p, c = r % p;
        double s = fits ? csum[c] : 0.0;
        size_t head_end = fits ? c0 : u + m, tail_begin = fits ? m : u + m;
        for (size_t t = u; t < head_end; t++)
            s += pl->y[t * p + c];
        for (size_t t = tail_begin; t < u + m; t++)
            s += pl->y[t * p + c];
        pl->sbar[r] = s / (double)m;
    }
    if (!fits)
        return;
    /* m = 2h - 1 leaves the core empty: core(d) = 0 */
    memset(pl->core, 0, sp * p * sizeof(double));
    for (size_t t0 = c0; t0 < m; t0 += SUB_CHUNK) {
        size_t len = m - t0 < SUB_CHUNK ? m - t0 : SUB_CHUNK;
        for (size_t j = 0; j < len; j++)
            memcpy(pl->schunk + j * sp, pl->y + (t0 + j) * p, sp * sizeof(double));
        cblas_dgemm(CblasColMajor, CblasNoTrans, CblasTrans, (int)sp, (int)p, (int)len, 1.0,
                    pl->schunk, (int)sp, pl->y + t0 * p, (int)p, 1.0, pl->core, (int)sp);
    }
}

/* hank = (1/m) sum (f - fbar)(p - pbar)' over every window and, for CVA,
 * the Grams sff and spp (both triangles), from build_core's sums. */
static void build_hankel(el_subspace_plan *pl)
{
    size_t hp = pl->hp;
    build_core(pl);
    for (size_t j = 0; j < hp; j++)
        for (size_t i = 0; i < hp; i++)
            pl->hank[i + j * hp] = gram_entry(pl, hp + i, j);
    if (!pl->cva)
        return;
    for (size_t j = 0; j < hp; j++)
        for (size_t i = j; i < hp; i++) {
            pl->sff[i + j * hp] = pl->sff[j + i * hp] = gram_entry(pl, hp + i, hp + j);
            pl->spp[i + j * hp] = pl->spp[j + i * hp] = gram_entry(pl, i, j);
        }
}

/* Eigenvalues of a Gram below this fraction of the largest are zero in
 * its (pseudo-)inverse and roots: noise-free data make the Grams of the
 * window vectors exactly singular (rank = system order for a transient),
 * and rounding leaves those eigenvalues near eps times the largest, six
 * orders below this cut; sensor noise of any realistic level keeps real
 * directions far above it. */
#define SUB_PINV_TOL 1e-10

/* out = V f(Lambda) V' for the symmetric s (lower triangle), f(l) =
 * l^power above SUB_PINV_TOL * max and 0 below. Returns 0 or 1 (LAPACK). */
static int sym_power(el_subspace_plan *pl, const double *sm, double power, double *out)
{
    size_t n = pl->hp;
    memcpy(pl->sym_vec, sm, n * n * sizeof(double));
    lapack_int info = LAPACKE_dsyev_work(LAPACK_COL_MAJOR, 'V', 'L', (lapack_int)n,
                                         pl->sym_vec, (lapack_int)n, pl->sym_lam,
                                         pl->sym_work, (lapack_int)pl->sym_lwork);
    if (info != 0)
        return 1;
    double top = pl->sym_lam[n - 1];
    if (!(top > 0.0) || !isfinite(top))
        return 1;
    /* tmp = V f(Lambda), out = tmp V' */
    for (size_t j = 0; j < n; j++) {
        double l = pl->sym_lam[j];
        double f = l > SUB_PINV_TOL * top ? pow(l, power) : 0.0;
        for (size_t i = 0; i < n; i++)
            pl->tmp[i + j * n] = pl->sym_vec[i + j * n] * f;
    }
    cblas_dgemm(CblasColMajor, CblasNoTrans, CblasTrans, (int)n, (int)n, (int)n, 1.0,
                pl->tmp, (int)n, pl->sym_vec, (int)n, 0.0, out, (int)n);
    return 0;
}

/* CVA: the weights, and hank <- W1 hank W2. Returns 0 or 1. */
static int cva_weight(el_subspace_plan *pl)
{
    size_t n = pl->hp;
    if (sym_power(pl, pl->sff, -0.5, pl->w1) || sym_power(pl, pl->sff, 0.5, pl->w1inv) ||
        sym_power(pl, pl->spp, -0.5, pl->w2) || sym_power(pl, pl->spp, 0.5, pl->w2inv))
        return 1;
    cblas_dgemm(CblasColMajor, CblasNoTrans, CblasNoTrans, (int)n, (int)n, (int)n, 1.0,
                pl->w1, (int)n, pl->hank, (int)n, 0.0, pl->tmp, (int)n);
    cblas_dgemm(CblasColMajor, CblasNoTrans, CblasNoTrans, (int)n, (int)n, (int)n, 1.0,
                pl->tmp, (int)n, pl->w2, (int)n, 0.0, pl->hank, (int)n);
    return 0;
}

/* ------------------------------------------------------------------ */
/* Shift invariance and eigenvalues                                   */
/* ------------------------------------------------------------------ */

/* A (n x n) = O_up^+ O_down for O (ldo x >= n, hp rows used) by dgels.
 * oup, odown: (h-1)p x n scratch. Returns 0; 1 when LAPACK fails or
 * O_up is rank deficient (SUB_RANK_TOL). */
static int shift_solve(size_t h, size_t p, size_t n, const double *o, size_t ldo,
                       double *oup, double *odown, double *a, double *work, size_t lwork)
{
    size_t rows = (h - 1) * p;
    for (size_t j = 0; j < n; j++) {
        memcpy(oup + j * rows, o + j * ldo, rows * sizeof(double));
        memcpy(odown + j * rows, o + j * ldo + p, rows * sizeof(double));
    }
    lapack_int info = LAPACKE_dgels_work(LAPACK_COL_MAJOR, 'N', (lapack_int)rows,
                                         (lapack_int)n, (lapack_int)n, oup,
                                         (lapack_int)rows, odown, (lapack_int)rows, work,
                                         (lapack_int)lwork);
    if (info != 0)
        return 1;
    double rmax = 0.0, rmin = INFINITY;
    for (size_t j = 0; j < n; j++) {
        double d = fabs(oup[j + j * rows]);
        rmax = fmax(rmax, d);
        rmin = fmin(rmin, d);
    }
    if (!(rmin > SUB_RANK_TOL * rmax) || !isfinite(rmax))
        return 1;
    for (size_t j = 0; j < n; j++)
        for (size_t i = 0; i < n; i++) {
            a[i + j * n] = odown[i + j * rows];
            if (!isfinite(a[i + j * n]))
                return 1;
        }
    return 0;
}

/* O (hp x n) = U_n S_n^1/2. */
static void observability(size_t hp, size_t n, const double *u, size_t ldu,
                          const double *sv, double *o)
{
    for (size_t j = 0; j < n; j++) {
        double s = sqrt(fmax(sv[j], 0.0));
        for (size_t i = 0; i < hp; i++)
            o[i + j * hp] = u[i + j * ldu] * s;
    }
}

/* Continuous-time quantities of a pole from mu (principal branch). */
static void pole_from_mu(double mu_re, double mu_im, double dt, el_subspace_pole *q)
{
    q->mu_re = mu_re;
    q->mu_im = mu_im;
    double mag = hypot(mu_re, mu_im);
    q->lambda_re = mag > 0.0 ? log(mag) / dt : -INFINITY;
    q->lambda_im = atan2(mu_im, mu_re) / dt;
    if (mu_im == 0.0 && mu_re < 0.0)
        q->lambda_im = SUB_PI / dt;   /* at Nyquist: no frequency of its own */
    double lam = hypot(q->lambda_re, q->lambda_im);
    q->frequency_hz = q->lambda_im / (2.0 * SUB_PI);
    q->natural_hz = isfinite(lam) ? lam / (2.0 * SUB_PI) : NAN;
    q->damping_ratio = (lam > 0.0 && isfinite(lam)) ? -q->lambda_re / lam : NAN;
    if (mu_im == 0.0 && mu_re < 0.0) {
        q->frequency_hz = NAN;
        q->natural_hz = NAN;
        q->damping_ratio = NAN;
    }
}

/* The size of mode k's part of the block Hankel H (in the scaled
 * channels, unweighted whatever the weighting of the SVD) in the order-n
 * model: H ~ O G' with O = W1^-1 U S^1/2 (obs) and G = W2^-1 V S^1/2
 * (gp; W = I unweighted); with A = sum_j phi_j lambda_j u_j^H /
 * (u_j^H phi_j) (right and left eigenvectors) mode j contributes
 * (O phi_j)(G u_j)^H / (u_j^H phi_j), whose Frobenius norm is
 * ||O phi_j|| ||G u_j|| / |u_j^H phi_j|. Measured in H itself because
 * the noise directions of the CVA-weighted matrix carry canonical
 * correlations of 0.1-0.3, not small next to the signal's, while in H
 * they are re-scaled by the data's spectrum and stay ~1e-3 of the
 * signal's. vr, vl: dgeev's right and left vectors (a pair in columns k,
 * k+1 as real and imaginary parts). */
static double contribution(size_t hp, size_t n, const double *obs, const double *gp,
                           const double *vr, const double *vl, size_t k, int pair)
{
    double nr = 0.0, nl = 0.0, cre = 0.0, cim = 0.0;
    for (size_t r = 0; r < hp; r++) {
        double xr = 0.0, xi = 0.0, yr = 0.0, yi = 0.0;
        for (size_t i = 0; i < n; i++) {
            double o = obs[r + i * hp], g = gp[r + i * hp];
            xr += o * vr[i + k * n];
            yr += g * vl[i + k * n];
            if (pair) {
                xi += o * vr[i + (k + 1) * n];
                yi += g * vl[i + (k + 1) * n];
            }
        }
        nr += xr * xr + xi * xi;
        nl += yr * yr + yi * yi;
    }
    for (size_t i = 0; i < n; i++) {
        double ar = vr[i + k * n], ai = pair ? vr[i + (k + 1) * n] : 0.0;
        double br = vl[i + k * n], bi = pair ? vl[i + (k + 1) * n] : 0.0;
        /* u^H phi = (br - i bi)(ar + i ai) */
        cre += br * ar + bi * ai;
        cim += br * ai - bi * ar;
    }
    double c = hypot(cre, cim);
    return c > 0.0 ? sqrt(nr) * sqrt(nl) / c : 0.0;
}

/* MAC of two complex shapes. */
static double mac(size_t p, const double *ar, const double *ai, const double *br,
                  const double *bi)
{
    double xr = 0.0, xi = 0.0, na = 0.0, nb = 0.0;
    for (size_t c = 0; c < p; c++) {
        xr += ar[c] * br[c] + ai[c] * bi[c];
        xi += ar[c] * bi[c] - ai[c] * br[c];
        na += ar[c] * ar[c] + ai[c] * ai[c];
        nb += br[c] * br[c] + bi[c] * bi[c];
    }
    return na > 0.0 && nb > 0.0 ? (xr * xr + xi * xi) / (na * nb) : 0.0;
}

/* The poles of order n (A in pl->a-like storage a, C rows of o): appends
 * them with their shapes. Returns 0, or 1 when dgeev fails. */
static int order_poles(el_subspace_plan *pl, size_t n, const double *a, size_t *count)
{
    size_t p = pl->p;
    memcpy(pl->acopy, a, n * n * sizeof(double));
    lapack_int info = LAPACKE_dgeev_work(LAPACK_COL_MAJOR, 'V', 'V', (lapack_int)n,
                                         pl->acopy, (lapack_int)n, pl->wr, pl->wi, pl->vl,
                                         (lapack_int)n, pl->vr, (lapack_int)n, pl->ev_work,
                                         (lapack_int)pl->ev_lwork);
    if (info != 0)
        return 1;
    size_t first_new = *count;
    double total = 0.0;
    for (size_t k = 0; k < n; k++) {
        if (pl->wi[k] < 0.0)
            continue;   /* the second member of a pair */
        el_subspace_pole *q = &pl->poles[*count];
        memset(q, 0, sizeof *q);
        q->order = n;
        pole_from_mu(pl->wr[k], pl->wi[k], pl->dt, q);
        q->contribution = contribution(pl->hp, n, pl->obs, pl->gp, pl->vr, pl->vl, k,
                                       pl->wi[k] > 0.0);
        total += (pl->wi[k] > 0.0 ? 2.0 : 1.0) * q->contribution;
        q->shape_offset = *count * p;
        double *sr = pl->shape_re + q->shape_offset, *si = pl->shape_im + q->shape_offset;
        const double *vre = pl->vr + k * n;
        const double *vim = pl->wi[k] > 0.0 ? pl->vr + (k + 1) * n : NULL;
        for (size_t c = 0; c < p; c++) {
            double re = 0.0, im = 0.0;
            for (size_t j = 0; j < n; j++) {
                double cj = pl->obs[c + j * pl->hp];
                re += cj * vre[j];
                if (vim)
                    im += cj * vim[j];
            }
            sr[c] = re;
            si[c] = im;
        }
        /* Largest magnitude 1, phase 0. */
        size_t cmax = 0;
        double best = -1.0;
        for (size_t c = 0; c < p; c++) {
            double m2 = sr[c] * sr[c] + si[c] * si[c];
            if (m2 > best) {
                best = m2;
                cmax = c;
            }
        }
        if (best > 0.0) {
            double dr = sr[cmax] / best, di = -si[cmax] / best;   /* 1 / s[cmax] */
            for (size_t c = 0; c < p; c++) {
                double re = sr[c] * dr - si[c] * di, im = sr[c] * di + si[c] * dr;
                sr[c] = re;
                si[c] = im;
            }
            si[cmax] = 0.0;
        }
        (*count)++;
    }
    for (size_t k = first_new; k < *count; k++) {
        el_subspace_pole *q = &pl->poles[k];
        q->contribution = total > 0.0 && isfinite(total)
                              ? (q->mu_im > 0.0 ? 2.0 : 1.0) * q->contribution / total
                              : 0.0;
    }
    return 0;
}

/* A pole's frequency is only as sharp as its resonance: its half-power
 * band is 2 zeta f_n wide, and the estimate of a pole of decay rate
 * sigma = zeta omega_n from a record of length T scatters by about
 * sqrt(sigma / T), which grows with the damping. The stabilisation
 * diagram's 1 % (stab_freq_rel, common practice for lightly damped modes)
 * is a tenth of the band at zeta = 0.05; for heavier damping the tolerance
 * stays a tenth of the band (SUB_STAB_BAND_SHARE x 2 zeta), up to 20 % for
 * a real pole (zeta = 1). A fixed 1 % dropped the slow real pole of
 * overdamped nodes (it moved 4.5 % between orders on a 20,000-sample log)
 * and left the fast one as the model (docs/uncertainty.md). */
#define SUB_STAB_BAND_SHARE 0.1
static double freq_tolerance(const el_subspace_options *o, const el_subspace_pole *y)
{
    double zeta = fmin(fabs(y->damping_ratio), 1.0);
    return fmax(o->stab_freq_rel, SUB_STAB_BAND_SHARE * 2.0 * zeta);
}

/* Do poles x (order n) and y (order n - 1) match by the criteria? */
static int poles_match(const el_subspace_plan *pl, const el_subspace_options *o,
                       const el_subspace_pole *x, const el_subspace_pole *y)
{
    if ((x->mu_im > 0.0) != (y->mu_im > 0.0))
        return 0;
    if (!isfinite(x->natural_hz) || !isfinite(y->natural_hz) ||
        !isfinite(x->damping_ratio) || !isfinite(y->damping_ratio))
        return 0;
    if (!(fabs(x->natural_hz - y->natural_hz) <= freq_tolerance(o, y) * y->natural_hz))
        return 0;
    double dz = fabs(x->damping_ratio - y->damping_ratio);
    if (!(dz <= fmax(o->stab_damp_rel * fabs(y->damping_ratio), o->stab_damp_abs)))
        return 0;
    size_t p = pl->p;
    return mac(p, pl->shape_re + x->shape_offset, pl->shape_im + x->shape_offset,
               pl->shape_re + y->shape_offset, pl->shape_im + y->shape_offset) >=
           o->stab_mac_min;
}

/* Links the poles of each order to those of the order below (one to one,
 * greedily by the smallest relative frequency difference), assigns chain
 * ids, and labels the chains of at least stab_min_run poles physical.
 * first[n] is the index of order n's first pole (first[nmax + 1] = total). */
static void stabilise(el_subspace_plan *pl, const el_subspace_options *o,
                      const size_t *first, size_t n_poles)
{
    size_t nchains = 0;
    for (size_t n = 1; n <= pl->nmax; n++) {
        size_t a0 = first[n], a1 = first[n + 1];
        for (size_t k = a0; k < a1; k++)
            pl->poles[k].chain = SIZE_MAX;
        if (n > 1) {
            size_t b0 = first[n - 1], b1 = first[n];
            for (size_t k = b0; k < b1; k++)
                pl->taken[k - b0] = 0;
            for (;;) {
                double best = INFINITY;
                size_t bx = 0, by = 0;
                for (size_t x = a0; x < a1; x++) {
                    if (pl->poles[x].chain != SIZE_MAX)
                        continue;
                    for (size_t y = b0; y < b1; y++) {
                        if (pl->taken[y - b0] ||
                            !poles_match(pl, o, &pl->poles[x], &pl->poles[y]))
                            continue;
                        double d = fabs(pl->poles[x].natural_hz - pl->poles[y].natural_hz) /
                                   pl->poles[y].natural_hz;
                        if (d < best) {
                            best = d;
                            bx = x;
                            by = y;
                        }
                    }
                }
                if (!isfinite(best))
                    break;
                pl->poles[bx].chain = pl->poles[by].chain;
                pl->poles[bx].stable = 1;
                pl->taken[by - b0] = 1;
            }
        }
        for (size_t k = a0; k < a1; k++)
            if (pl->poles[k].chain == SIZE_MAX) {
                pl->poles[k].chain = nchains;
                pl->chain_len[nchains++] = 0;
            }
        for (size_t k = a0; k < a1; k++)
            pl->chain_len[pl->poles[k].chain]++;
    }
    size_t run = o->stab_min_run ? o->stab_min_run : 1;
    /* Exact data: when no order above n_top has a model (the shift
     * equations are rank deficient there: the record holds no further
     * direction, as for a noise-free log), no chain can grow to `run`
     * orders; the chains present at n_top then count as persistent. */
    size_t n_top = 0;
    for (size_t n = 1; n <= pl->nmax; n++)
        if (first[n + 1] > first[n])
            n_top = n;
    for (size_t k = 0; k < nchains; k++)
        pl->taken_chain[k] = 0;
    if (n_top > 0 && n_top < pl->nmax)
        for (size_t k = first[n_top]; k < first[n_top + 1]; k++)
            pl->taken_chain[pl->poles[k].chain] = 1;
    for (size_t k = 0; k < n_poles; k++) {
        size_t c = pl->poles[k].chain;
        pl->poles[k].physical = (pl->chain_len[c] >= run || pl->taken_chain[c]) &&
                                pl->poles[k].contribution >= o->stab_min_share;
    }
}

/* ------------------------------------------------------------------ */
/* Execute                                                            */
/* ------------------------------------------------------------------ */

/* Samples of every channel written to the time-major y at a time: the
 * rows of a block stay in cache while each channel's stretch is written
 * into them, where one channel at a time over the whole record wrote one
 * double per cache line per pass (same values). */
#define SUB_SCALE_BLOCK 512

static el_status scale_series(el_subspace_plan *pl, const el_series *s, el_error *err)
{
    size_t n = s->n_samples, p = pl->p;
    for (size_t c = 0; c < p; c++) {
        const double *x = s->values + c * n;
        double mean = 0.0;
        for (size_t t = 0; t < n; t++)
            mean += x[t];
        mean /= (double)n;
        double ss = 0.0;
        for (size_t t = 0; t < n; t++)
            ss += (x[t] - mean) * (x[t] - mean);
        double sd = sqrt(ss / (double)n);
        if (!(sd > 0.0) || !isfinite(sd)) {
            el_error_set(err, EL_ERR_DATA, "channel %zu (%s) is %s", c + 1,
                         s->names && s->names[c] ? s->names[c] : "?",
                         isfinite(sd) ? "constant" : "not finite");
            el_error_hint(err, "drop that channel");
            return EL_ERR_DATA;
        }
        pl->mean[c] = mean;
        pl->scale[c] = sd;
    }
    for (size_t t0 = 0; t0 < n; t0 += SUB_SCALE_BLOCK) {
        size_t t1 = n - t0 < SUB_SCALE_BLOCK ? n : t0 + SUB_SCALE_BLOCK;
        for (size_t c = 0; c < p; c++) {
            const double *x = s->values + c * n;
            double mean = pl->mean[c], sd = pl->scale[c];
            for (size_t t = t0; t < t1; t++)
                pl->y[t * p + c] = (x[t] - mean) / sd;
        }
    }
    return EL_OK;
}

/* The chosen order: the smallest order at which the most physical chains
 * are present at once. Returns 0 when no pole is physical; *count the
 * number present there. */
static size_t auto_order(const el_subspace_plan *pl, const size_t *first, size_t *count)
{
    size_t best_n = 0, best_c = 0;
    for (size_t n = 1; n <= pl->nmax; n++) {
        size_t c = 0;
        for (size_t k = first[n]; k < first[n + 1]; k++)
            c += pl->poles[k].physical != 0;
        if (c > best_c) {
            best_c = c;
            best_n = n;
        }
    }
    *count = best_c;
    return best_n;
}

el_status el_subspace_execute(el_subspace_plan *pl, const el_series *series,
                              const el_subspace_options *opt,
                              el_subspace_result *res, el_error *err)
{
    if (pl == NULL || series == NULL || res == NULL || series->values == NULL ||
        series->n_channels != pl->p || series->n_samples > pl->max_samples ||
        series->n_samples < 2 * pl->h + 1 || !(series->dt > 0.0))
        return el_error_set(err, EL_ERR_INTERNAL,
                            "el_subspace_execute: the series does not fit the plan");
    el_subspace_options d;
    if (opt == NULL) {
        el_subspace_defaults(&d);
        opt = &d;
    }
    if (opt->order > pl->nmax) {
        el_error_set(err, EL_ERR_USAGE, "order %zu is above the largest this horizon "
                     "allows (%zu)", opt->order, pl->nmax);
        el_error_option(err, "--order");
        el_error_hint(err, "a lower order or a longer horizon");
        return EL_ERR_USAGE;
    }
    memset(res, 0, sizeof *res);
    pl->executed = 0;
    el_status st = scale_series(pl, series, err);
    if (st != EL_OK)
        return st;
    size_t p = pl->p, h = pl->h, hp = pl->hp, nmax = pl->nmax;
    pl->n_samples = series->n_samples;
    pl->n_windows = series->n_samples - 2 * h + 1;
    pl->dt = series->dt;
    pl->cva = opt->weighting == EL_SUBSPACE_CVA;
    pl->nv = pl->nv_cap > nmax &&
             (double)hp >= SUB_WHOLE_PAST_RATIO * sqrt((double)pl->n_windows)
             ? pl->nv_cap : nmax;
    build_hankel(pl);
    if (pl->cva && cva_weight(pl))
        return el_error_set(err, EL_ERR_NUMERIC, "the weights of the block Hankel failed "
                            "(LAPACK dsyev)");
    lapack_int info = LAPACKE_dgesvd_work(LAPACK_COL_MAJOR, 'S', 'S', (lapack_int)hp,
                                          (lapack_int)hp, pl->hank, (lapack_int)hp, pl->sv,
                                          pl->u, (lapack_int)hp, pl->vt, (lapack_int)hp,
                                          pl->svd_work, (lapack_int)pl->svd_lwork);
    if (info != 0)
        return el_error_set(err, EL_ERR_NUMERIC, "the SVD of the block Hankel failed "
                            "(LAPACK dgesvd info %d)", (int)info);
    for (size_t j = 0; j < pl->nv; j++)
        for (size_t i = 0; i < hp; i++)
            pl->v[i + j * hp] = pl->vt[j + i * hp];
    observability(hp, nmax, pl->u, hp, pl->sv, pl->obs);
    observability(hp, nmax, pl->v, hp, pl->sv, pl->gp);
    if (pl->cva) {
        memcpy(pl->tmp, pl->gp, hp * nmax * sizeof(double));
        cblas_dgemm(CblasColMajor, CblasNoTrans, CblasNoTrans, (int)hp, (int)nmax, (int)hp,
                    1.0, pl->w2inv, (int)hp, pl->tmp, (int)hp, 0.0, pl->gp, (int)hp);
        /* O = W1^-1 U S^1/2; the block sums project the past on W2 V */
        memcpy(pl->tmp, pl->obs, hp * nmax * sizeof(double));
        cblas_dgemm(CblasColMajor, CblasNoTrans, CblasNoTrans, (int)hp, (int)nmax, (int)hp,
                    1.0, pl->w1inv, (int)hp, pl->tmp, (int)hp, 0.0, pl->obs, (int)hp);
        memcpy(pl->tmp, pl->v, hp * pl->nv * sizeof(double));
        cblas_dgemm(CblasColMajor, CblasNoTrans, CblasNoTrans, (int)hp, (int)pl->nv,
                    (int)hp, 1.0, pl->w2, (int)hp, pl->tmp, (int)hp, 0.0, pl->v, (int)hp);
    }

    size_t *fst = pl->first;
    size_t count = 0;
    fst[0] = 0;
    for (size_t n = 1; n <= nmax; n++) {
        fst[n] = count;
        if (shift_solve(h, p, n, pl->obs, hp, pl->oup, pl->odown, pl->a, pl->ls_work,
                        pl->ls_lwork) == 0) {
            if (order_poles(pl, n, pl->a, &count))
                return el_error_set(err, EL_ERR_NUMERIC, "the eigenvalues of the order-%zu "
                                    "model failed (LAPACK dgeev)", n);
        }
    }
    fst[nmax + 1] = count;
    stabilise(pl, opt, fst, count);

    size_t n_phys = 0, order = opt->order;
    size_t n_auto = auto_order(pl, fst, &n_phys);
    res->order_was_auto = order == 0;
    if (order == 0)
        order = n_auto;
    if (order > 0) {
        if (shift_solve(h, p, order, pl->obs, hp, pl->oup, pl->odown, pl->a, pl->ls_work,
                        pl->ls_lwork)) {
            el_error_set(err, EL_ERR_NUMERIC, "the shift equations of order %zu are rank "
                         "deficient", order);
            el_error_hint(err, "a lower order");
            return EL_ERR_NUMERIC;
        }
        for (size_t j = 0; j < order; j++)
            for (size_t c = 0; c < p; c++) {
                pl->c_scaled[c + j * p] = pl->obs[c + j * hp];
                pl->c_raw[c + j * p] = pl->obs[c + j * hp] * pl->scale[c];
            }
        res->first_pole = fst[order];
        res->n_order_poles = fst[order + 1] - fst[order];
    }
    pl->executed = 1;
    pl->executed_order = order;
    res->n_channels = p;
    res->horizon = h;
    res->n_windows = pl->n_windows;
    res->dt = pl->dt;
    res->channel_mean = pl->mean;
    res->channel_scale = pl->scale;
    res->n_singular = hp;
    res->singular = pl->sv;
    res->max_order = nmax;
    res->order = order;
    res->n_physical = n_phys;
    res->a = pl->a;
    res->c_scaled = pl->c_scaled;
    res->c_raw = pl->c_raw;
    res->n_poles = count;
    res->poles = pl->poles;
    res->shape_re = pl->shape_re;
    res->shape_im = pl->shape_im;
    return EL_OK;
}

el_status el_subspace_set_order(el_subspace_plan *pl, size_t order,
                                el_subspace_result *res, el_error *err)
{
    if (pl == NULL || res == NULL || !pl->executed || order == 0 || order > pl->nmax)
        return el_error_set(err, EL_ERR_INTERNAL, "el_subspace_set_order: bad order %zu",
                            order);
    size_t p = pl->p, hp = pl->hp;
    if (shift_solve(pl->h, p, order, pl->obs, hp, pl->oup, pl->odown, pl->a, pl->ls_work,
                    pl->ls_lwork)) {
        el_error_set(err, EL_ERR_NUMERIC, "the shift equations of order %zu are rank "
                     "deficient", order);
        el_error_hint(err, "a lower order");
        return EL_ERR_NUMERIC;
    }
    for (size_t j = 0; j < order; j++)
        for (size_t c = 0; c < p; c++) {
            pl->c_scaled[c + j * p] = pl->obs[c + j * hp];
            pl->c_raw[c + j * p] = pl->obs[c + j * hp] * pl->scale[c];
        }
    res->order = order;
    res->first_pole = pl->first[order];
    res->n_order_poles = pl->first[order + 1] - pl->first[order];
    return EL_OK;
}

/* ------------------------------------------------------------------ */
/* Bootstrap building blocks                                          */
/* ------------------------------------------------------------------ */

size_t el_subspace_sum_doubles(const el_subspace_plan *pl)
{
    if (pl == NULL)
        return 0;
    return 1 + pl->hp + pl->nv + pl->hp * pl->nv;
}

el_status el_subspace_block_sums(const el_subspace_plan *pl, size_t t_begin,
                                 size_t t_end, double *sum, el_error *err)
{
    if (pl == NULL || sum == NULL || !pl->executed || t_begin > t_end ||
        t_end > pl->n_windows)
        return el_error_set(err, EL_ERR_INTERNAL, "el_subspace_block_sums: bad arguments");
    size_t hp = pl->hp, nv = pl->nv;
    double *sf = sum + 1, *sg = sf + hp, *sfg = sg + nv;
    memset(sum, 0, el_subspace_sum_doubles(pl) * sizeof(double));
    sum[0] = (double)(t_end - t_begin);
    /* One window at a time (the plan is read only here, so threads may
     * sum different runs at once): g = V' p (nv), then sf += f, sg += g,
     * sfg += f g'. Cost per window O(hp nv). */
    for (size_t w = t_begin; w < t_end; w++) {
        const double *f = future_of(pl, w), *q = past_of(pl, w);
        for (size_t i = 0; i < hp; i++)
            sf[i] += f[i];
        for (size_t j = 0; j < nv; j++) {
            const double *vj = pl->v + j * hp;
            double g = 0.0;
            for (size_t i = 0; i < hp; i++)
                g += vj[i] * q[i];
            sg[j] += g;
            double *col = sfg + j * hp;
            for (size_t i = 0; i < hp; i++)
                col[i] += f[i] * g;
        }
    }
    return EL_OK;
}

/* Doubles of the replicate's Gram eigenproblem (leading_singular): the
 * nv x nv Gram matrix, its nv x nv eigenvectors, nv eigenvalues, dsyevr's work (26 nv,
 * its documented minimum) and integer work (10 nv + 2 nv lapack_ints,
 * held in 12 nv doubles). */
#define REP_GRAM_DOUBLES(nv) (2 * (nv) * (nv) + (nv) + 26 * (nv) + 12 * (nv))

/* The order leading singular values and left vectors of the hp x nv
 * matrix hv (hp >= nv), from the eigenvectors of its nv x nv Gram matrix:
 * u_k = hv z_k / s_k. A replicate needs only these, and a full SVD with
 * all nv left vectors was a fifth of a `track` window's time. Squaring
 * the matrix costs accuracy only for singular values near eps^(1/2) s_1;
 * the leading ones a model keeps are canonical correlations far above
 * that (and their vectors depend on the gap to the next, as in the SVD).
 * sv: order values, descending; u: hp x order. Returns 0, or 1 when a
 * kept value is not positive or LAPACK fails. */
static int leading_singular(size_t hp, size_t nv, size_t order, const double *hv,
                            double *scratch, double *sv, double *u)
{
    double *gram = scratch, *z = gram + nv * nv, *ev = z + nv * nv, *work = ev + nv;
    lapack_int *iwork = (lapack_int *)(void *)(work + 26 * nv);
    lapack_int *isuppz = iwork + 10 * nv;
    cblas_dsyrk(CblasColMajor, CblasLower, CblasTrans, (int)nv, (int)hp, 1.0, hv, (int)hp,
                0.0, gram, (int)nv);
    lapack_int found = 0;
    /* Every eigenpair ('A'): dsyevr then takes the MRRR path (dstemr),
     * measured faster at these sizes than bisection for a subset. */
    lapack_int info = LAPACKE_dsyevr_work(
        LAPACK_COL_MAJOR, 'V', 'A', 'L', (lapack_int)nv, gram, (lapack_int)nv, 0.0, 0.0,
        0, 0, 0.0, &found, ev, z, (lapack_int)nv,
        isuppz, work, (lapack_int)(26 * nv), iwork, (lapack_int)(10 * nv));
    if (info != 0 || (size_t)found != nv)
        return 1;
    /* Ascending from dsyevr: the largest first here. */
    for (size_t k = 0; k < order; k++) {
        size_t src = nv - 1 - k;
        if (!(ev[src] > 0.0))
            return 1;
        sv[k] = sqrt(ev[src]);
        cblas_dgemv(CblasColMajor, CblasNoTrans, (int)hp, (int)nv, 1.0 / sv[k], hv, (int)hp,
                    z + src * nv, 1, 0.0, u + k * hp, 1);
    }
    return 0;
}

size_t el_subspace_replicate_work(const el_subspace_plan *pl)
{
    if (pl == NULL)
        return 0;
    /* the largest record an execute of this plan can make */
    size_t hp = pl->hp, nv = pl->nv_cap, rows = (pl->h - 1) * pl->p;
    size_t lw = pl->rep_svd_lwork;
    if (pl->rep_ls_lwork > lw)
        lw = pl->rep_ls_lwork;
    if (pl->rep_ev_lwork > lw)
        lw = pl->rep_ev_lwork;
    /* hv, u, sv, o, oup, odown, acopy, a, wr, wi, cva scratch, the Gram
     * eigenproblem (gram, z, its work and integer work), lapack work */
    return hp * nv + hp * nv + nv + hp * nv + 2 * rows * nv + 2 * nv * nv + 2 * nv +
           hp * nv + REP_GRAM_DOUBLES(nv) + lw;
}

el_status el_subspace_replicate_solve(const el_subspace_plan *pl, const double *sum,
                                      size_t order, double *a_out, double *mu_re,
                                      double *mu_im, double *work, el_error *err)
{
    if (pl == NULL || sum == NULL || work == NULL || order == 0 || order > pl->nmax ||
        !pl->executed)
        return el_error_set(err, EL_ERR_INTERNAL, "el_subspace_replicate_solve: bad arguments");
    size_t hp = pl->hp, nv = pl->nv, rows = (pl->h - 1) * pl->p;
    double cnt = sum[0];
    if (!(cnt > 0.0) || !isfinite(cnt))
        return el_error_set(err, EL_ERR_NUMERIC, "replicate without windows");
    const double *sf = sum + 1, *sg = sf + hp, *sfg = sg + nv;
    double *pool = work;
    double *hv = pool;
    pool += hp * nv;
    double *u = pool;
    pool += hp * nv;
    double *sv = pool;
    pool += nv;
    double *o = pool;
    pool += hp * nv;
    double *oup = pool;
    pool += rows * nv;
    double *odown = pool;
    pool += rows * nv;
    double *acopy = pool;
    pool += nv * nv;
    double *a = pool;
    pool += nv * nv;
    double *wr = pool;
    pool += nv;
    double *wi = pool;
    pool += nv;
    double *cv = pool;
    pool += hp * nv;
    double *gram = pool;
    pool += REP_GRAM_DOUBLES(nv);
    double *lw = pool;
    size_t lwork = el_subspace_replicate_work(pl) - (size_t)(pool - work);
    for (size_t j = 0; j < nv; j++)
        for (size_t i = 0; i < hp; i++)
            hv[i + j * hp] = (sfg[i + j * hp] - sf[i] * sg[j] / cnt) / cnt;
    if (pl->cva) {
        /* the point's weights (fixed across replicates): W1 Hv */
        memcpy(cv, hv, hp * nv * sizeof(double));
        cblas_dgemm(CblasColMajor, CblasNoTrans, CblasNoTrans, (int)hp, (int)nv, (int)hp,
                    1.0, pl->w1, (int)hp, cv, (int)hp, 0.0, hv, (int)hp);
    }
    double dummy = 0.0;
    if (leading_singular(hp, nv, order, hv, gram, sv, u))
        return el_error_set(err, EL_ERR_NUMERIC, "replicate SVD failed");
    observability(hp, order, u, hp, sv, o);
    if (pl->cva) {
        memcpy(cv, o, hp * order * sizeof(double));
        cblas_dgemm(CblasColMajor, CblasNoTrans, CblasNoTrans, (int)hp, (int)order, (int)hp,
                    1.0, pl->w1inv, (int)hp, cv, (int)hp, 0.0, o, (int)hp);
    }
    if (shift_solve(pl->h, pl->p, order, o, hp, oup, odown, a, lw, lwork))
        return el_error_set(err, EL_ERR_NUMERIC,
                            "replicate shift equations are rank deficient");
    if (a_out != NULL)
        memcpy(a_out, a, order * order * sizeof(double));
    if (mu_re != NULL || mu_im != NULL) {
        memcpy(acopy, a, order * order * sizeof(double));
        lapack_int info = LAPACKE_dgeev_work(LAPACK_COL_MAJOR, 'N', 'N', (lapack_int)order, acopy,
                                  (lapack_int)order, wr, wi, &dummy, 1, &dummy, 1, lw,
                                  (lapack_int)lwork);
        if (info != 0)
            return el_error_set(err, EL_ERR_NUMERIC, "replicate eigenvalues failed");
        for (size_t k = 0; k < order; k++) {
            if (mu_re)
                mu_re[k] = wr[k];
            if (mu_im)
                mu_im[k] = wi[k];
        }
    }
    return EL_OK;
}
