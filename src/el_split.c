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

/* Mode j's figures and shape into rec: the spread of its replicates
 * (matched to the point modes by the bootstrap) and its scaled shape. */
static void record_mode(el_split_mode_record *rec, size_t nc, const el_modes *modes,
                        size_t j, const el_boot_result *b)
{
    const el_mode *m = &modes->modes[j];
    rec->lambda[0] = m->lambda_re;
    rec->lambda[1] = fabs(m->lambda_im);
    rec->frequency_hz = m->pair && !m->at_nyquist ? m->frequency_hz : 0.0;
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
    rec->decay_sd = sqrt(vd / (n - 1.0));
    rec->frequency_sd = sqrt(vf / (n - 1.0));
    for (size_t c = 0; c < nc; c++) {
        double mag = m->shape_scaled_magnitude != NULL ? m->shape_scaled_magnitude[c] : NAN;
        double ph = m->shape_scaled_phase_deg != NULL ? m->shape_scaled_phase_deg[c] : NAN;
        rec->shape[c][0] = mag * cos(ph * M_PI / 180.0);
        rec->shape[c][1] = mag * sin(ph * M_PI / 180.0);
    }
}

/* Makes record i of half h the compared mode. */
static void compare_record(el_split_check *sc, size_t h, size_t i)
{
    const el_split_mode_record *rec = &sc->records[h][i];
    sc->compared[h] = i;
    sc->lambda_half[h][0] = rec->lambda[0];
    sc->lambda_half[h][1] = rec->lambda[1];
    sc->decay_rate[h] = -rec->lambda[0];
    sc->frequency_hz[h] = rec->frequency_hz;
    sc->decay_sd[h] = rec->decay_sd;
    sc->frequency_sd[h] = rec->frequency_sd;
}

void el_split_take_mode(el_split_check *sc, size_t h, const el_modes *modes, size_t j,
                        const el_boot_result *b)
{
    size_t nc = modes->n_channels < EL_SPLIT_SHAPE_CHANNELS ? modes->n_channels
                                                           : EL_SPLIT_SHAPE_CHANNELS;
    sc->shape_channels = nc;
    /* The least damped modes, with mode j in the last slot when it is
     * beyond them. */
    size_t n = modes->n_modes < EL_SPLIT_MODES ? modes->n_modes : EL_SPLIT_MODES;
    size_t at = j < n ? j : n - 1;
    for (size_t i = 0; i < n; i++)
        record_mode(&sc->records[h][i], nc, modes, i == at ? j : i, b);
    sc->n_records[h] = n;
    compare_record(sc, h, at);
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

/* MAC of two kept shapes: |a^H b|^2 / (|a|^2 |b|^2); NaN when a shape
 * is missing or zero. */
static double shape_mac(const el_split_mode_record *a, const el_split_mode_record *b,
                        size_t nc)
{
    double re = 0.0, im = 0.0, na = 0.0, nb = 0.0;
    for (size_t c = 0; c < nc; c++) {
        const double *x = a->shape[c], *y = b->shape[c];
        re += x[0] * y[0] + x[1] * y[1];
        im += x[0] * y[1] - x[1] * y[0];
        na += x[0] * x[0] + x[1] * x[1];
        nb += y[0] * y[0] + y[1] * y[1];
    }
    return na > 0.0 && nb > 0.0 ? (re * re + im * im) / (na * nb) : NAN;
}

/* The mode of half `other` of one shape with record i of half h and
 * nearest it in the complex plane; returns its index, or n_records when
 * none reaches EL_SPLIT_MAC_SAME. */
static size_t shape_partner(const el_split_check *sc, size_t h, size_t i)
{
    size_t other = 1 - h, best = sc->n_records[other];
    double best_d = INFINITY;
    const el_split_mode_record *a = &sc->records[h][i];
    for (size_t k = 0; k < sc->n_records[other]; k++) {
        const el_split_mode_record *b = &sc->records[other][k];
        if (!(shape_mac(a, b, sc->shape_channels) >= EL_SPLIT_MAC_SAME))
            continue;
        double d = hypot(a->lambda[0] - b->lambda[0], a->lambda[1] - b->lambda[1]);
        if (d < best_d) {
            best_d = d;
            best = k;
        }
    }
    return best;
}

/* Compares like with like: 0 when the halves share no mode of one shape
 * (not_tested set), 1 else (the compared pair possibly replaced). */
static int match_shapes(el_split_check *sc)
{
    sc->mac = NAN;
    sc->rematched = 0;
    if (sc->shape_channels < 2 || sc->n_records[0] == 0 || sc->n_records[1] == 0)
        return 1;
    const el_split_mode_record *a = &sc->records[0][sc->compared[0]];
    const el_split_mode_record *b = &sc->records[1][sc->compared[1]];
    sc->mac = shape_mac(a, b, sc->shape_channels);
    if (!(sc->mac < EL_SPLIT_MAC_SAME))
        return 1;
    double mac_before = sc->mac;
    size_t k = shape_partner(sc, 0, sc->compared[0]);
    if (k < sc->n_records[1]) {
        compare_record(sc, 1, k);
    } else if ((k = shape_partner(sc, 1, sc->compared[1])) < sc->n_records[0]) {
        compare_record(sc, 0, k);
    } else {
        snprintf(sc->not_tested, sizeof sc->not_tested,
                 "the halves share no mode of one shape (the nearest pair, %.4g and %.4g "
                 "Hz, has MAC %.2f): a mode one half's model missed is no drift",
                 sc->frequency_hz[0], sc->frequency_hz[1], mac_before);
        return 0;
    }
    sc->rematched = 1;
    sc->mac = shape_mac(&sc->records[0][sc->compared[0]], &sc->records[1][sc->compared[1]],
                        sc->shape_channels);
    return 1;
}

void el_split_decide(el_split_check *sc)
{
    if (!match_shapes(sc))
        return;
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
