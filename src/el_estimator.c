/* el_estimator: the table of estimators (--method) and the lookups the fit,
 * the bootstrap and the reports use. Adding an estimator: its file
 * (el_est_NAME.c defining an el_estimator_type) and one row below. */
#include "el_estimator.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* Defined in el_est_ls.c, el_est_fb.c (fb and tls), el_est_iv.c and
 * el_est_ssi.c; declared here only, so nothing else names them. */
extern const el_estimator_type el_estimator_ls;
extern const el_estimator_type el_estimator_fb;
extern const el_estimator_type el_estimator_tls;
extern const el_estimator_type el_estimator_iv;
extern const el_estimator_type el_estimator_ssi;
extern const el_estimator_type el_estimator_hankel;

/* In el_method order (the enum is the index; el_estimator_for checks it). */
static const el_estimator_type *const estimators[] = {
    &el_estimator_ls,
    &el_estimator_fb,
    &el_estimator_tls,
    &el_estimator_iv,
    &el_estimator_ssi,
    &el_estimator_hankel,
};

#define N_ESTIMATORS (sizeof estimators / sizeof estimators[0])

const el_estimator_type *el_estimator_for(el_method m)
{
    for (size_t i = 0; i < N_ESTIMATORS; i++)
        if (estimators[i]->method == m)
            return estimators[i];
    return NULL;
}

const el_estimator_type *el_estimator_find(const char *name)
{
    for (size_t i = 0; name != NULL && i < N_ESTIMATORS; i++)
        if (strcmp(name, estimators[i]->name) == 0)
            return estimators[i];
    return NULL;
}

el_status el_estimator_prepare(const el_series *series, el_fit_options *opt,
                               el_error *err)
{
    const el_estimator_type *t = opt != NULL ? el_estimator_for(opt->method) : NULL;
    if (t == NULL || t->prepare == NULL)
        return EL_OK;
    return t->prepare(series, opt, err);
}

const el_estimator_type *el_estimator_reference(void)
{
    return &el_estimator_ls;
}

const char *el_method_name(el_method m)
{
    const el_estimator_type *t = el_estimator_for(m);
    return t != NULL ? t->name : "?";
}

const char *el_method_description(el_method m)
{
    const el_estimator_type *t = el_estimator_for(m);
    return t != NULL ? t->description : "unknown method";
}

const char *el_estimator_names(char *buf, size_t size)
{
    size_t used = 0;
    if (size == 0)
        return buf;
    buf[0] = '\0';
    for (size_t i = 0; i < N_ESTIMATORS; i++) {
        int n = snprintf(buf + used, size - used, "%s%s", i > 0 ? ", " : "",
                         estimators[i]->name);
        if (n < 0 || (size_t)n >= size - used) {
            buf[used] = '\0'; /* no half entry */
            break;
        }
        used += (size_t)n;
    }
    return buf;
}

el_status el_method_parse(const char *text, el_method *m, el_error *err)
{
    const el_estimator_type *t = el_estimator_find(text);
    if (t != NULL) {
        *m = t->method;
        return EL_OK;
    }
    el_error_set(err, EL_ERR_USAGE, "unknown method '%s'", text != NULL ? text : "");
    el_error_option(err, "--method");
    char names[128];
    el_error_hint(err, "use one of %s", el_estimator_names(names, sizeof names));
    return EL_ERR_USAGE;
}

const el_boot_provider *el_estimator_provider(el_method m)
{
    const el_estimator_type *t = el_estimator_for(m);
    return t != NULL ? t->provider : NULL;
}

const el_boot_provider *el_estimator_provider_for(const el_model *model)
{
    if (model == NULL)
        return NULL;
    const el_estimator_type *t = el_estimator_for(model->method);
    if (t == NULL || (model->n_inputs > 0 && !t->takes_inputs))
        return NULL;
    return t->provider;
}

el_boot_dims el_estimator_boot_dims(const el_model *model)
{
    el_boot_dims dims = {0, 0, 0};
    if (model != NULL) {
        dims.r = model->rank;
        dims.n_inputs = model->n_inputs;
        dims.lags = model->lags;
    }
    return dims;
}

el_status el_estimator_boot_states(const el_series *series, const el_series *inputs,
                                   const el_model *model, double **states,
                                   size_t *n_states, el_error *err)
{
    const el_estimator_type *t = model != NULL ? el_estimator_for(model->method) : NULL;
    if (t == NULL) {
        if (states != NULL)
            *states = NULL;
        if (n_states != NULL)
            *n_states = 0;
        return el_error_set(err, EL_ERR_INTERNAL,
                            "el_estimator_boot_states: the series does not fit the model");
    }
    return t->boot_states(series, inputs, model, states, n_states, err);
}
