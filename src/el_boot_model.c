/* el_boot_model: the rules of the bootstrap's model rounds and the
 * regeneration of a provider's reduced states through a model of them. */
#include "el_boot_model.h"

#include "el_boot_resid.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

el_boot_bias_plan el_boot_bias_rule(size_t n_pairs)
{
    el_boot_bias_plan p = { EL_BOOT_BIAS_REPLICATES, 1.0 };
    if (n_pairs > EL_BOOT_BIAS_FULL_PAIRS) {
        /* B(n) = 200 (n0 / n)^2: the cost B n falls like 1/n, the weight
         * B / 200 like 1/n^2, and both join the full round at n0. */
        double f = (double)EL_BOOT_BIAS_FULL_PAIRS / (double)n_pairs;
        p.replicates = (size_t)floor((double)EL_BOOT_BIAS_REPLICATES * f * f);
        p.weight = (double)p.replicates / (double)EL_BOOT_BIAS_REPLICATES;
    }
    return p;
}

el_boot_bias_plan el_boot_spread_rule(size_t n_pairs, size_t windows, size_t features)
{
    el_boot_bias_plan p = el_boot_bias_rule(n_pairs);
    if (windows == 0 || features == 0) {
        p.replicates = 0;
        p.weight = 0.0;
        return p;
    }
    double cap = floor(EL_BOOT_SPREAD_BUDGET / ((double)windows * (double)features));
    if (cap < (double)p.replicates)
        p.replicates = (size_t)cap;
    if (p.replicates < EL_BOOT_BIAS_MIN_JUDGED)
        p.replicates = 0;
    p.weight = (double)p.replicates / (double)EL_BOOT_BIAS_REPLICATES;
    return p;
}

double el_boot_widen_factor(double model_spread, double blocks_spread, double weight,
                            size_t n_model)
{
    if (n_model < EL_BOOT_BIAS_MIN_JUDGED || !(blocks_spread > 0.0) || !(weight > 0.0))
        return 1.0;
    double f = model_spread / blocks_spread;
    return isfinite(f) && f > 1.0 ? 1.0 + (weight < 1.0 ? weight : 1.0) * (f - 1.0) : 1.0;
}

double el_boot_growth_weight(double efolds)
{
    if (!isfinite(efolds) || efolds <= EL_BOOT_GROWTH_WIDEN_FULL)
        return 1.0;
    if (efolds >= EL_BOOT_GROWTH_WIDEN_NONE)
        return 0.0;
    return (EL_BOOT_GROWTH_WIDEN_NONE - efolds)
           / (EL_BOOT_GROWTH_WIDEN_NONE - EL_BOOT_GROWTH_WIDEN_FULL);
}

double el_boot_growth_share(const el_modes *point, size_t k, double duration_s)
{
    size_t nm = point->n_modes;
    if (k < 2 * nm)
        return el_boot_growth_weight(point->modes[k % nm].lambda_re * duration_s);
    double share = 0.0;
    for (size_t q = 0; q < nm; q++)
        share = fmax(share, el_boot_growth_weight(point->modes[q].lambda_re * duration_s));
    return share;
}

el_status el_boot_state_model_fit(el_boot_state_model *m, double **store, int *fitted,
                                  el_error *err)
{
    const el_boot_provider *prov = m->prov;
    size_t r = m->dims.r, nu = m->dims.n_inputs, n = m->n_pairs;
    size_t d = prov->n_features(&m->dims);
    *fitted = 0;
    double *work = malloc((4 * d + prov->work_doubles(&m->dims)) * sizeof(double));
    *store = malloc((r * r + r * nu + r + (n + 1) * r) * sizeof(double));
    if (work == NULL || *store == NULL) {
        free(work);
        return el_error_set(err, EL_ERR_NOMEM, "out of memory (bootstrap spread round)");
    }
    double *a = *store, *b = a + r * r, *c = b + r * nu, *res = c + r;
    int fail = el_boot_full_sample_solve(prov, &m->dims, m->states, n + 1, a,
                                         nu > 0 ? b : NULL, c, work);
    free(work);
    if (fail)
        return EL_OK;
    el_boot_reduced_residuals(m->states, n, r, nu, a, nu > 0 ? b : NULL, c, res);
    m->a = a;
    m->b = b;
    m->c = c;
    m->resid = res;
    *fitted = 1;
    return EL_OK;
}

int el_boot_state_model_sum(const el_boot_state_model *m, const el_boot_block *blocks,
                            size_t n_blocks, double *path, double *sum, double *feat,
                            double *work)
{
    size_t r = m->dims.r, nu = m->dims.n_inputs, sw = r + nu;
    size_t d = m->prov->n_features(&m->dims);
    memcpy(path, m->states, sw * sizeof(double));
    size_t step = 0;
    for (size_t bl = 0; bl < n_blocks; bl++)
        for (size_t t = 0; t < blocks[bl].length; t++, step++) {
            const double *e = m->resid + (blocks[bl].start + t) * r;
            const double *prev = path + step * sw;
            double *next = path + (step + 1) * sw;
            el_boot_model_step(r, nu, m->a, m->b, m->c, e, prev, next);
            memcpy(next + r, m->states + (step + 1) * sw + r, nu * sizeof(double));
        }
    size_t span = m->prov->span(&m->dims);
    if (step + 1 < span)
        return 1;
    size_t windows = step + 2 - span;
    memset(sum, 0, d * sizeof(double));
    if (m->prov->accumulate != NULL) {
        m->prov->accumulate(&m->dims, path, windows, sum, work);
    } else {
        for (size_t k = 0; k < windows; k++) {
            m->prov->features(&m->dims, path + k * sw, feat);
            for (size_t f = 0; f < d; f++)
                sum[f] += feat[f];
        }
    }
    for (size_t f = 0; f < d; f++)
        if (!isfinite(sum[f]))
            return 1;
    return 0;
}
