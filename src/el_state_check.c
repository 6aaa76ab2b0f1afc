/* el_state_check: an iv "unstable" from a multi-step state checked
 * against iv on the plain state (el_state_check.h says why). */
#include "el_state_check.h"

#include <math.h>
#include <string.h>

#include "el_fit.h"
#include "el_modes.h"

int el_state_check_applies(const el_fit_options *fit_asked, const el_model *model)
{
    if (fit_asked == NULL || model == NULL)
        return 0;
    if (model->method != EL_METHOD_IV || model->lags == 0 || model->n_inputs > 0)
        return 0;
    /* A multi-step state the user asked for (--lags, --depth, --rank) is
     * the user's model: only the automatic horizon's is checked. */
    if (fit_asked->lags > 0 || fit_asked->depth > 0 || fit_asked->rank > 0 ||
        fit_asked->rank == EL_RANK_ALL || fit_asked->inputs != NULL)
        return 0;
    return model->n_channels >= 2 && model->rank <= model->n_channels;
}

/* The data refusing the plain-state fit (too short, weak instruments, a
 * singular step) leaves the check unmade; memory and internal faults stop
 * the caller. */
static int check_fatal(el_status st)
{
    return st == EL_ERR_NOMEM || st == EL_ERR_INTERNAL;
}

el_status el_state_check_run(const el_series *series, const el_fit_options *fit_asked,
                             const el_boot_options *boot, el_state_check *out,
                             el_error *err)
{
    if (series == NULL || fit_asked == NULL || boot == NULL || out == NULL)
        return el_error_set(err, EL_ERR_INTERNAL, "state check: NULL argument");
    memset(out, 0, sizeof *out);
    out->p_stable = NAN;
    out->re_max = NAN;
    out->im_max = NAN;
    el_fit_options fo = *fit_asked;
    fo.method = EL_METHOD_IV;
    fo.lags = 0;
    fo.depth = EL_STATE_CHECK_DEPTH;
    el_boot_options bo = *boot;
    bo.progress = NULL;
    bo.progress_ctx = NULL;
    if (bo.replicates > EL_STATE_CHECK_REPLICATES)
        bo.replicates = EL_STATE_CHECK_REPLICATES;
    el_model model = {0};
    el_modes modes = {0};
    el_boot_result br = {0};
    el_error local;
    el_error_clear(&local);
    el_status st = el_fit(series, &fo, &model, NULL, &local);
    if (st == EL_OK)
        st = el_modes_compute(&model, &modes, NULL, &local);
    if (st == EL_OK && bo.replicates > 0)
        st = el_boot_run(series, &fo, &model, &modes, &bo, &br, NULL, &local);
    if (st == EL_OK && br.replicates > 0 && modes.n_modes > 0 && isfinite(br.p_stable)) {
        out->ran = 1;
        out->p_stable = br.p_stable;
        out->replicates = br.replicates;
        out->re_max = modes.modes[0].lambda_re;
        out->im_max = modes.modes[0].lambda_im;
        out->withdraws = br.p_stable >= boot->level;
    }
    el_boot_free(&br);
    el_modes_free(&modes);
    el_model_free(&model);
    if (check_fatal(st)) {
        *err = local;
        return st;
    }
    return EL_OK;
}
