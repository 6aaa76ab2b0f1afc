/* el_envelope_check: an "unstable" checked against the log's envelope
 * (el_envelope_check.h says why). */
#include "el_envelope_check.h"

#include <math.h>
#include <string.h>

#include "el_estimator.h"

double el_envelope_check_z(double p)
{
    if (!(p > 0.0 && p < 1.0))
        return NAN;
    double lo = -40.0, hi = 40.0;
    while (hi - lo > 1e-10) {
        double mid = 0.5 * (lo + hi);
        if (0.5 * erfc(mid / M_SQRT2) > p)
            lo = mid;
        else
            hi = mid;
    }
    return 0.5 * (lo + hi);
}

/* The largest upper bound of the channels' envelope rates; sets
 * out->channels, channel and rate_hi (NaN when no channel has one). */
static void envelope_bound(const el_regime *g, el_envelope_check *out)
{
    size_t m = 0;
    for (size_t c = 0; c < g->n_channels; c++)
        if (g->tested[c] && isfinite(g->envelope_rate[c]) && isfinite(g->envelope_z[c]) &&
            g->envelope_z[c] != 0.0)
            m++;
    out->channels = m;
    out->rate_hi = NAN;
    if (m == 0)
        return;
    double za = el_envelope_check_z(EL_ENVELOPE_CHECK_ALPHA / (double)m);
    for (size_t c = 0; c < g->n_channels; c++) {
        double rate = g->envelope_rate[c], z = g->envelope_z[c];
        if (!g->tested[c] || !isfinite(rate) || !isfinite(z) || z == 0.0)
            continue;
        double bound = rate + za * fabs(rate / z);
        if (!(bound <= out->rate_hi)) {
            out->rate_hi = bound;
            out->channel = c;
        }
    }
}

void el_envelope_check_run(const el_regime *regime, const el_series *series,
                           const el_modes *modes, const el_boot_result *boot, double level,
                           el_envelope_check *out)
{
    if (out == NULL)
        return;
    memset(out, 0, sizeof *out);
    out->span = out->rate_hi = out->allowed_rate = out->model_rate = out->p_allowed = NAN;
    if (regime == NULL || series == NULL || modes == NULL || boot == NULL ||
        regime->segments < 3 || regime->tested == NULL || modes->n_modes == 0 ||
        boot->replicates == 0 || boot->lambda_re == NULL || boot->n_modes != modes->n_modes)
        return;
    envelope_bound(regime, out);
    out->span = (double)(regime->segments - 1) * (double)regime->segment_length * series->dt;
    if (out->channels == 0 || !(out->span > 0.0))
        return;
    out->allowed_rate = out->rate_hi + EL_ENVELOPE_CHECK_SLACK_EFOLDS / out->span;
    out->model_rate = -INFINITY;
    for (size_t j = 0; j < modes->n_modes; j++)
        out->model_rate = fmax(out->model_rate, modes->modes[j].lambda_re);
    /* The envelope is information the bootstrap did not use. A replicate
     * whose every growing mode grows faster than it allows says
     * "unstable" only through modes the log rules out: its class is not
     * about this log, and it is set aside. Any other replicate keeps its
     * class (its "stable", or a growth the log allows). "Unstable" must
     * hold at the level among the replicates kept, and enough must be
     * kept to say so. */
    size_t n = boot->replicates, nm = boot->n_modes, kept = 0, growing = 0;
    for (size_t k = 0; k < n; k++) {
        const double *re = boot->lambda_re + k * nm;
        int allowed_growth = 0, ruled_out = 0;
        for (size_t j = 0; j < nm; j++) {
            allowed_growth |= re[j] >= 0.0 && re[j] <= out->allowed_rate;
            ruled_out |= re[j] > out->allowed_rate;
        }
        if (ruled_out && !allowed_growth)
            continue;
        kept++;
        growing += allowed_growth;
    }
    out->made = 1;
    out->kept = kept;
    out->p_allowed = kept > 0 ? (double)growing / (double)kept : 0.0;
    out->withdraws = out->model_rate > out->allowed_rate &&
                     (kept < EL_ENVELOPE_CHECK_MIN_KEPT || out->p_allowed < level);
}

el_status el_envelope_check_verdict(const el_regime *regime, const el_series *series,
                                    const el_modes *modes, const el_boot_result *boot,
                                    el_method method, double level, el_verdict *v,
                                    el_envelope_check *out, el_warnings *warnings,
                                    el_error *err)
{
    if (v == NULL || out == NULL)
        return el_error_set(err, EL_ERR_INTERNAL, "el_envelope_check_verdict: NULL argument");
    memset(out, 0, sizeof *out);
    if (v->ambiguous || v->stability != EL_UNSTABLE)
        return EL_OK;
    el_envelope_check_run(regime, series, modes, boot, level, out);
    if (!out->withdraws)
        return EL_OK;
    el_verdict_set_undecided(v, EL_CAUSE_ESTIMATORS_DISAGREE);
    double efolds = out->model_rate * out->span;
    if (el_warnings_add(warnings,
                        "the estimators disagree: %s says unstable, its fastest mode "
                        "growing at Re lambda %.4g 1/s (%.3g e-folds over the %.4g-s "
                        "envelope), but the log's own envelope allows at most %.4g 1/s "
                        "(%s, upper bound at family level %.2g); %zu of %zu bootstrap "
                        "replicates grow only faster than the log allows, and of the "
                        "%zu others %.0f grow: the model does not describe this log's "
                        "growth; the verdict is ambiguous",
                        el_method_name(method), out->model_rate, efolds, out->span,
                        out->rate_hi, series->names != NULL ? series->names[out->channel]
                                                            : "a channel",
                        EL_ENVELOPE_CHECK_ALPHA, boot->replicates - out->kept,
                        boot->replicates, out->kept,
                        out->p_allowed * (double)out->kept) != EL_OK)
        return el_error_set(err, EL_ERR_NOMEM, "out of memory for a warning");
    return EL_OK;
}
