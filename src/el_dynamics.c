/* el_dynamics: the whiteness test of the data and the "no dynamics" rule
 * (no verdict from nothing). */
#include "el_dynamics.h"

#include <math.h>
#include <string.h>

#include "el_validate.h"

el_status el_dynamics_test_series(const el_series *series, el_dynamics_test *out,
                                  el_error *err)
{
    return el_dynamics_test_channels(series, out, NULL, NULL, err);
}

el_status el_dynamics_test_channels(const el_series *series, el_dynamics_test *out,
                                    double *q_channel, double *p_channel, el_error *err)
{
    if (series == NULL || out == NULL || (q_channel == NULL) != (p_channel == NULL))
        return el_error_set(err, EL_ERR_INTERNAL, "el_dynamics_test_channels: NULL argument");
    memset(out, 0, sizeof *out);
    for (size_t c = 0; q_channel != NULL && c < series->n_channels; c++)
        q_channel[c] = p_channel[c] = NAN;
    out->q = out->p_min = out->p_family = NAN;
    size_t n = series->n_samples;
    out->n_samples = n;
    /* No parameters were fitted to the data, so the lag count is the one
     * the validation uses for residuals with p = 0. */
    out->lags = el_validate_ljung_box_lags(n, 0);
    if (out->lags == 0 || series->values == NULL)
        return EL_OK;
    for (size_t c = 0; c < series->n_channels; c++) {
        double q = el_validate_ljung_box(series->values + c * n, n, out->lags);
        if (!isfinite(q))        /* a constant channel: no correlation exists */
            continue;
        double p = el_validate_chi2_sf(q, (double)out->lags);
        if (q_channel != NULL) {
            q_channel[c] = q;
            p_channel[c] = p;
        }
        out->n_tested++;
        if (!(p >= out->p_min)) {
            out->p_min = p;
            out->q = q;
            out->channel = c;
        }
    }
    if (out->n_tested == 0)
        return EL_OK;
    out->tested = 1;
    out->p_family = fmin(1.0, (double)out->n_tested * out->p_min);
    out->white = out->p_family >= EL_DYNAMICS_ALPHA;
    return EL_OK;
}

int el_dynamics_none(const el_dynamics_test *t, double fit_r2)
{
    if (t == NULL || !t->tested || !t->white)
        return 0;
    return !(fit_r2 >= EL_DYNAMICS_R2_MAX);
}
