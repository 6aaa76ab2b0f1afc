/* el_split: the split-half drift check's halves, compared modes,
 * white-half test and z-test (el_split.h). */
#include "el_split.h"
#include "el_dynamics.h"

#include <math.h>
#include <stdio.h>
#include <string.h>

void el_split_half_series(const el_series *s, size_t h, double *buf, el_series *half)
{
    size_t m = s->n_samples / 2, off = h == 0 ? 0 : s->n_samples - m;
    for (size_t c = 0; c < s->n_channels; c++)
        memcpy(buf + c * m, s->values + c * s->n_samples + off, m * sizeof *buf);
    memset(half, 0, sizeof *half);
    half->n_samples = m;
    half->n_channels = s->n_channels;
    half->dt = s->dt;
    half->t0 = s->t0 + (double)off * s->dt;
    half->values = buf;
    half->names = s->names;
    half->units = s->units;
    half->source_column = s->source_column;
    half->rows_used = m;
}

/* Why the nearest mode and not each half's least damped: they need not be
 * the same mode. In a decay the second half is mostly noise, whose least
 * damped direction can be a noise mode far from the window's (one-decay
 * in docs/accuracy.md: 4.9-17 Hz against 1.3 Hz, read as drift). */
size_t el_split_mode(const el_modes *modes, const double ref[2])
{
    size_t best = 0;
    double best_d = INFINITY;
    if (isnan(ref[0]) || isnan(ref[1]))
        return 0;
    for (size_t j = 0; j < modes->n_modes; j++) {
        const el_mode *m = &modes->modes[j];
        double d = hypot(m->lambda_re - ref[0], fabs(m->lambda_im) - ref[1]);
        if (d < best_d) {
            best_d = d;
            best = j;
        }
    }
    return best;
}

void el_split_take_mode(el_split_check *sc, size_t h, const el_modes *modes, size_t j,
                        const el_boot_result *b)
{
    const el_mode *m = &modes->modes[j];
    sc->decay_rate[h] = m->decay_rate;
    sc->frequency_hz[h] = m->pair && !m->at_nyquist ? m->frequency_hz : 0.0;
    sc->lambda_half[h][0] = m->lambda_re;
    sc->lambda_half[h][1] = m->lambda_im;
    /* The spread of mode j's replicates (matched to the point modes by
     * the bootstrap). */
    double n = (double)b->replicates, md = 0.0, mf = 0.0, vd = 0.0, vf = 0.0;
    for (size_t k = 0; k < b->replicates; k++) {
        md += -b->lambda_re[k * b->n_modes + j];
        mf += fabs(b->lambda_im[k * b->n_modes + j]) / (2.0 * M_PI);
    }
    md /= n;
    mf /= n;
    for (size_t k = 0; k < b->replicates; k++) {
        double d = -b->lambda_re[k * b->n_modes + j] - md;
        double f = fabs(b->lambda_im[k * b->n_modes + j]) / (2.0 * M_PI) - mf;
        vd += d * d;
        vf += f * f;
    }
    sc->decay_sd[h] = sqrt(vd / (n - 1.0));
    sc->frequency_sd[h] = sqrt(vf / (n - 1.0));
}

/* Why: a half that cannot be told from white noise (the test of "no
 * verdict from nothing" at its family-wise level) holds no mode to
 * compare, whatever a fit of it returns: the least damped direction of
 * noise lies anywhere. In a free decay the second half is often that, the
 * decay having died into the sensor noise. */
el_status el_split_white_half(const el_series *s, double *buf, el_split_check *sc,
                              el_error *err)
{
    if (s == NULL || buf == NULL || sc == NULL)
        return el_error_set(err, EL_ERR_INTERNAL, "el_split_white_half: NULL argument");
    for (size_t h = 0; h < 2; h++) {
        el_series half;
        el_dynamics_test t;
        el_split_half_series(s, h, buf, &half);
        el_status st = el_dynamics_test_series(&half, &t, err);
        if (st != EL_OK)
            return st;
        if (t.tested && t.white) {
            sc->white_half = (int)h + 1;
            snprintf(sc->not_tested, sizeof sc->not_tested,
                     "half %zu cannot be told from white noise (Ljung-Box p = %.2g on %zu "
                     "samples): it holds no dynamics to compare",
                     h + 1, t.p_family, half.n_samples);
            return EL_OK;
        }
    }
    return EL_OK;
}

void el_split_decide(el_split_check *sc)
{
    sc->tested = 1;
    /* The fit's own precision beside the bootstrap spread: on exact data
     * (a noise-free decay) the spread is at rounding level and any
     * rounding difference would be "drift" (EL_ASSESS_SPLIT_FLOOR_REL). */
    double size = fmax(hypot(sc->lambda_half[0][0], sc->lambda_half[0][1]),
                       hypot(sc->lambda_half[1][0], sc->lambda_half[1][1]));
    double floor_rate = isfinite(size) ? EL_ASSESS_SPLIT_FLOOR_REL * size : 0.0;
    double sd = hypot(hypot(sc->decay_sd[0], sc->decay_sd[1]), floor_rate);
    double sf = hypot(hypot(sc->frequency_sd[0], sc->frequency_sd[1]),
                      floor_rate / (2.0 * M_PI));
    sc->z_decay = sd > 0.0 ? (sc->decay_rate[1] - sc->decay_rate[0]) / sd : 0.0;
    sc->z_frequency = sf > 0.0 ? (sc->frequency_hz[1] - sc->frequency_hz[0]) / sf : 0.0;
    sc->drift = fabs(sc->z_decay) >= EL_ASSESS_SPLIT_Z ||
                fabs(sc->z_frequency) >= EL_ASSESS_SPLIT_Z;
}
