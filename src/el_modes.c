/* el_modes: eigenvalues of the fitted model, their continuous-time
 * meaning (frequency, damping, time constants) and the mode shapes. */
#include "el_modes.h"

#include <cblas.h>
#include <float.h>
#include <lapacke.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

/* Relative distance from the negative real axis under which a discrete
 * eigenvalue counts as sitting at the Nyquist frequency: dgeev returns
 * exactly real eigenvalues for real ones, so this only has to absorb
 * rounding in a nearly real pair (1e-12 is ~1e4 eps). */
#define EL_MODES_NYQUIST_REL 1e-12

/* M_PI and M_LN2 are not in strict C11 with only POSIX features on. */
#define EL_PI 3.14159265358979323846
#define EL_LN2 0.69314718055994530942

void el_modes_lambda(double mu_re, double mu_im, double dt, double *lambda_re,
                     double *lambda_im, int *at_nyquist)
{
    double mag = hypot(mu_re, mu_im);
    int nyq = 0;
    double re, im;
    if (mag == 0.0) {
        re = -INFINITY;
        im = 0.0;
    } else if (mu_re < 0.0 && fabs(mu_im) <= EL_MODES_NYQUIST_REL * mag) {
        /* atan2 would give +pi or -pi by the sign of a rounding error in
         * Im mu; the alias is reported once, at +pi/dt. */
        nyq = 1;
        re = log(mag) / dt;
        im = EL_PI / dt;
    } else {
        re = log(mag) / dt;
        im = atan2(mu_im, mu_re) / dt;
    }
    if (lambda_re != NULL)
        *lambda_re = re;
    if (lambda_im != NULL)
        *lambda_im = im;
    if (at_nyquist != NULL)
        *at_nyquist = nyq;
}

static void mode_free(el_mode *m)
{
    free(m->shape_magnitude);
    free(m->shape_phase_deg);
    free(m->shape_scaled_magnitude);
    free(m->shape_scaled_phase_deg);
    free(m->participation);
}

void el_modes_free(el_modes *modes)
{
    if (modes == NULL)
        return;
    if (modes->modes != NULL) {
        for (size_t i = 0; i < modes->n_modes; i++)
            mode_free(&modes->modes[i]);
        free(modes->modes);
    }
    memset(modes, 0, sizeof *modes);
}

/* Frequency, damping and time constants from lambda and the flags. */
static void continuous_quantities(el_mode *m)
{
    if (m->instantaneous) {
        m->frequency_hz = 0.0;
        m->damping_ratio = 1.0;
        m->decay_rate = NAN;
        m->time_constant_s = 0.0;
        return;
    }
    double re = m->lambda_re, im = m->lambda_im;
    double mag = hypot(re, im);
    m->decay_rate = -re;
    if (m->at_nyquist) {
        m->frequency_hz = NAN;
        m->damping_ratio = NAN;
    } else {
        m->frequency_hz = m->pair ? im / (2.0 * EL_PI) : 0.0;
        m->damping_ratio = mag > 0.0 ? -re / mag : NAN;
    }
    if (re < 0.0)
        m->time_constant_s = 1.0 / -re;
    else if (re > 0.0)
        m->time_constant_s = EL_LN2 / re;
    else
        m->time_constant_s = NAN;
}

/* Lag-0 shape from a complex vector phi (d entries, real and imaginary
 * parts apart), each channel's entry times scale[c] (NULL: 1): magnitude
 * relative to the largest, phase relative to the largest-magnitude
 * channel in (-180, 180]. */
static void shape_from_vector(size_t nc, const double *scale, const double *phi_re,
                              const double *phi_im, double *magnitude, double *phase_deg)
{
    size_t ref = 0;
    double best = -1.0;
    for (size_t c = 0; c < nc; c++) {
        double mag = (scale != NULL ? scale[c] : 1.0) * hypot(phi_re[c], phi_im[c]);
        magnitude[c] = mag;
        if (mag > best) {
            best = mag;
            ref = c;
        }
    }
    double ref_re = phi_re[ref], ref_im = phi_im[ref];
    for (size_t c = 0; c < nc; c++) {
        if (best > 0.0)
            magnitude[c] /= best;
        /* arg(phi_c / phi_ref) = arg(phi_c * conj(phi_ref)); the positive
         * channel scales do not change angles. */
        double re = phi_re[c] * ref_re + phi_im[c] * ref_im;
        double im = phi_im[c] * ref_re - phi_re[c] * ref_im;
        double deg = (re == 0.0 && im == 0.0) ? 0.0 : atan2(im, re) * (180.0 / EL_PI);
        phase_deg[c] = deg <= -180.0 ? deg + 360.0 : deg;
    }
    phase_deg[ref] = 0.0;
}

/* Participation factors (Perez-Arriaga, Verghese & Schweppe 1982) of the
 * mode with right vector phi and left vector l = basis * v (d entries
 * each): |conj(l_i) phi_i| normalised to sum 1, summed per channel over
 * its lags (state j * nc + c is channel c at lag j). NaN when every
 * product is 0 (nothing to share). */
static void participation(const el_model *model, const double *phi_re,
                          const double *phi_im, const double *l_re, const double *l_im,
                          double *share)
{
    size_t nc = model->n_channels, d = model->state_dim;
    double total = 0.0;
    for (size_t c = 0; c < nc; c++)
        share[c] = 0.0;
    for (size_t i = 0; i < d; i++) {
        /* |conj(l) phi| = |l| |phi|: the phase of the product does not
         * enter the magnitude. */
        double p = hypot(l_re[i], l_im[i]) * hypot(phi_re[i], phi_im[i]);
        share[i % nc] += p;
        total += p;
    }
    for (size_t c = 0; c < nc; c++)
        share[c] = total > 0.0 && isfinite(total) ? share[c] / total : NAN;
}

/* Exact DMD mode phi = lift * w (Tu et al. 2014). It is Ad_s phi / mu, so
 * for mu = 0 it may vanish; then the projected mode basis * w (the
 * eigenvector of U_r' Ad_s U_r lifted into the state space) stands in. */
static void mode_shape(const el_model *model, const double *w_re, const double *w_im,
                       double lift_norm, double *phi_re, double *phi_im, el_mode *m)
{
    int d = (int)model->state_dim, r = (int)model->rank;
    cblas_dgemv(CblasColMajor, CblasNoTrans, d, r, 1.0, model->lift, d, w_re, 1, 0.0,
                phi_re, 1);
    cblas_dgemv(CblasColMajor, CblasNoTrans, d, r, 1.0, model->lift, d, w_im, 1, 0.0,
                phi_im, 1);
    double w_norm = hypot(cblas_dnrm2(r, w_re, 1), cblas_dnrm2(r, w_im, 1));
    double phi_norm = hypot(cblas_dnrm2(d, phi_re, 1), cblas_dnrm2(d, phi_im, 1));
    if (m->instantaneous || phi_norm <= 1e3 * DBL_EPSILON * lift_norm * w_norm) {
        cblas_dgemv(CblasColMajor, CblasNoTrans, d, r, 1.0, model->basis, d, w_re, 1,
                    0.0, phi_re, 1);
        cblas_dgemv(CblasColMajor, CblasNoTrans, d, r, 1.0, model->basis, d, w_im, 1,
                    0.0, phi_im, 1);
    }
    shape_from_vector(model->n_channels, model->channel_scale, phi_re, phi_im,
                      m->shape_magnitude, m->shape_phase_deg);
    shape_from_vector(model->n_channels, NULL, phi_re, phi_im, m->shape_scaled_magnitude,
                      m->shape_scaled_phase_deg);
}

typedef struct {
    el_mode mode;
    size_t order;      /* position in LAPACK's output: the last tie-breaker */
} sortable_mode;

static int compare_modes(const void *pa, const void *pb)
{
    const sortable_mode *a = pa, *b = pb;
    double ra = a->mode.lambda_re, rb = b->mode.lambda_re;
    if (ra != rb)
        return ra > rb ? -1 : 1;
    double fa = a->mode.frequency_hz, fb = b->mode.frequency_hz;
    int na = isnan(fa), nb = isnan(fb);
    if (na != nb)
        return na ? 1 : -1;
    if (!na && fa != fb)
        return fa < fb ? -1 : 1;
    return (a->order > b->order) - (a->order < b->order);
}

/* Workspace of one computation, allocated as a unit. */
typedef struct {
    double *a, *wr, *wi, *vr, *vl, *phi_re, *phi_im, *w_re, *w_im, *l_re, *l_im, *work;
    lapack_int lwork;
    sortable_mode *list;
} modes_work;

static void modes_work_free(modes_work *w, size_t n_list)
{
    if (w->list != NULL) {
        for (size_t i = 0; i < n_list; i++)
            mode_free(&w->list[i].mode);
    }
    free(w->list);
    free(w->a);
    free(w->wr);
    free(w->wi);
    free(w->vr);
    free(w->vl);
    free(w->l_re);
    free(w->l_im);
    free(w->phi_re);
    free(w->phi_im);
    free(w->w_re);
    free(w->w_im);
    free(w->work);
    memset(w, 0, sizeof *w);
}

static el_status modes_work_alloc(modes_work *w, size_t r, size_t d, el_error *err)
{
    memset(w, 0, sizeof *w);
    double query = 0.0, dummy = 0.0;
    lapack_int info = LAPACKE_dgeev_work(LAPACK_COL_MAJOR, 'V', 'V', (lapack_int)r,
                                         &dummy, (lapack_int)r, &dummy, &dummy, &dummy,
                                         (lapack_int)r, &dummy, (lapack_int)r, &query, -1);
    if (info != 0)
        return el_error_set(err, EL_ERR_INTERNAL,
                            "dgeev workspace query failed (info %d)", (int)info);
    w->lwork = (lapack_int)ceil(query) + 1;
    w->a = malloc(r * r * sizeof(double));
    w->wr = malloc(r * sizeof(double));
    w->wi = malloc(r * sizeof(double));
    w->vr = malloc(r * r * sizeof(double));
    w->vl = malloc(r * r * sizeof(double));
    w->l_re = malloc(d * sizeof(double));
    w->l_im = malloc(d * sizeof(double));
    w->phi_re = malloc(d * sizeof(double));
    w->phi_im = malloc(d * sizeof(double));
    w->w_re = malloc(r * sizeof(double));
    w->w_im = malloc(r * sizeof(double));
    w->work = malloc((size_t)w->lwork * sizeof(double));
    w->list = calloc(r, sizeof *w->list);
    if (!w->a || !w->wr || !w->wi || !w->vr || !w->vl || !w->l_re || !w->l_im || !w->phi_re || !w->phi_im || !w->w_re ||
        !w->w_im || !w->work || !w->list) {
        modes_work_free(w, 0);
        return el_error_set(err, EL_ERR_NOMEM, "out of memory for the modes");
    }
    return EL_OK;
}

/* Builds mode n of the list from eigenvalue j of dgeev (and j+1 for a
 * pair, whose eigenvector is vr[:,j] + i vr[:,j+1]). */
static el_status build_mode(const el_model *model, modes_work *w, size_t j, int pair,
                            double lift_norm, sortable_mode *out, el_error *err)
{
    size_t r = model->rank, nc = model->n_channels;
    el_mode *m = &out->mode;
    m->shape_magnitude = calloc(nc, sizeof(double));
    m->shape_phase_deg = calloc(nc, sizeof(double));
    m->shape_scaled_magnitude = calloc(nc, sizeof(double));
    m->shape_scaled_phase_deg = calloc(nc, sizeof(double));
    m->participation = calloc(nc, sizeof(double));
    if (m->shape_magnitude == NULL || m->shape_phase_deg == NULL ||
        m->shape_scaled_magnitude == NULL || m->shape_scaled_phase_deg == NULL ||
        m->participation == NULL)
        return el_error_set(err, EL_ERR_NOMEM, "out of memory for the mode shapes");
    m->mu_re = w->wr[j];
    m->mu_im = pair ? fabs(w->wi[j]) : 0.0;
    m->pair = pair;
    el_modes_lambda(m->mu_re, m->mu_im, model->dt, &m->lambda_re, &m->lambda_im,
                    &m->at_nyquist);
    m->instantaneous = m->mu_re == 0.0 && m->mu_im == 0.0;
    continuous_quantities(m);
    /* dgeev lists the member with Im > 0 first; its eigenvector is
     * vr[:,j] + i vr[:,j+1]. */
    for (size_t q = 0; q < r; q++) {
        w->w_re[q] = w->vr[q + r * j];
        w->w_im[q] = pair ? w->vr[q + r * (j + 1)] : 0.0;
    }
    mode_shape(model, w->w_re, w->w_im, lift_norm, w->phi_re, w->phi_im, m);
    /* The left vector of the pair member with Im > 0 is vl[:,j] + i
     * vl[:,j+1] (dgeev), lifted into the state space by the basis. */
    for (size_t q = 0; q < r; q++) {
        w->w_re[q] = w->vl[q + r * j];
        w->w_im[q] = pair ? w->vl[q + r * (j + 1)] : 0.0;
    }
    int d = (int)model->state_dim, ri = (int)r;
    cblas_dgemv(CblasColMajor, CblasNoTrans, d, ri, 1.0, model->basis, d, w->w_re, 1, 0.0,
                w->l_re, 1);
    cblas_dgemv(CblasColMajor, CblasNoTrans, d, ri, 1.0, model->basis, d, w->w_im, 1, 0.0,
                w->l_im, 1);
    participation(model, w->phi_re, w->phi_im, w->l_re, w->l_im, m->participation);
    return EL_OK;
}

static el_status warn_nyquist(const el_modes *modes, el_warnings *warnings,
                              el_error *err)
{
    for (size_t i = 0; i < modes->n_modes; i++) {
        const el_mode *m = &modes->modes[i];
        if (!m->at_nyquist)
            continue;
        el_status st = el_warnings_add(
            warnings,
            "mode %zu (mu = %.6g) is at the Nyquist limit (discrete eigenvalue on "
            "the negative real axis): aliased or unresolved; its frequency and "
            "damping ratio are unknown; sample faster or band-limit the signals",
            i + 1, m->mu_re);
        if (st != EL_OK)
            return el_error_set(err, st, "out of memory for a warning");
    }
    return EL_OK;
}

el_status el_modes_compute(const el_model *model, el_modes *modes,
                           el_warnings *warnings, el_error *err)
{
    if (model == NULL || modes == NULL)
        return el_error_set(err, EL_ERR_INTERNAL, "el_modes_compute: NULL argument");
    memset(modes, 0, sizeof *modes);
    if (model->rank == 0 || model->a_reduced == NULL || model->lift == NULL ||
        model->basis == NULL || model->channel_scale == NULL || !(model->dt > 0.0))
        return el_error_set(err, EL_ERR_INTERNAL, "el_modes_compute: model not fitted");
    size_t r = model->rank, d = model->state_dim;
    modes_work w;
    el_status st = modes_work_alloc(&w, r, d, err);
    if (st != EL_OK)
        return st;
    memcpy(w.a, model->a_reduced, r * r * sizeof(double));
    lapack_int info = LAPACKE_dgeev_work(LAPACK_COL_MAJOR, 'V', 'V', (lapack_int)r, w.a,
                                         (lapack_int)r, w.wr, w.wi, w.vl, (lapack_int)r, w.vr,
                                         (lapack_int)r, w.work, w.lwork);
    if (info != 0) {
        modes_work_free(&w, 0);
        if (info < 0)
            return el_error_set(err, EL_ERR_INTERNAL, "dgeev called wrongly (info %d)",
                                (int)info);
        el_error_set(err, EL_ERR_NUMERIC,
                     "the eigenvalue solver (QR algorithm) did not converge on the "
                     "%zu x %zu model", r, r);
        el_error_hint(err, "a lower rank (--rank) or fewer lags may help");
        return EL_ERR_NUMERIC;
    }
    double lift_norm = 0.0;
    for (size_t i = 0; i < d * r; i++)
        lift_norm += model->lift[i] * model->lift[i];
    lift_norm = sqrt(lift_norm);

    size_t n = 0;
    for (size_t j = 0; j < r; j++) {
        int pair = w.wi[j] != 0.0 && j + 1 < r;
        w.list[n].order = n;
        st = build_mode(model, &w, j, pair, lift_norm, &w.list[n], err);
        n++;
        if (st != EL_OK) {
            modes_work_free(&w, n);
            return st;
        }
        if (pair)
            j++;
    }
    qsort(w.list, n, sizeof *w.list, compare_modes);
    modes->modes = malloc(n * sizeof *modes->modes);
    if (modes->modes == NULL) {
        modes_work_free(&w, n);
        return el_error_set(err, EL_ERR_NOMEM, "out of memory for the modes");
    }
    for (size_t i = 0; i < n; i++)
        modes->modes[i] = w.list[i].mode;  /* shapes change owner */
    modes_work_free(&w, 0);
    modes->n_modes = n;
    modes->n_eigenvalues = r;
    modes->n_channels = model->n_channels;
    st = warn_nyquist(modes, warnings, err);
    if (st != EL_OK)
        el_modes_free(modes);
    return st;
}
