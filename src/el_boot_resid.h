/* el_boot_resid: the point fit's residuals in reduced coordinates and the
 * automatic block length of the bootstrap from them. */
#ifndef EL_BOOT_RESID_H
#define EL_BOOT_RESID_H

#include <stddef.h>

#include "el_error.h"

/* Residuals of more cells (pairs x reduced states) than this are not
 * stored when only the block length needs them (moving blocks): each
 * component is made again, a chunk of pairs at a time, for its
 * Politis-White length. At 1e6 x 8 that is 64 MB less at the bootstrap's
 * peak for some 0.1 s of products. Below it (every log under 260,000
 * pairs at 8 states) they are stored once. */
#define EL_BOOT_RESID_STORE_MAX_CELLS ((size_t)1 << 21)

/* The point fit whose residuals are made on the fly: m + 1 states of r +
 * nu doubles each (the inputs after the state), the reduced A (r x r), B
 * (r x nu, NULL when nu is 0) and c (r), all borrowed. */
typedef struct {
    const double *states, *a, *bm, *c;
    size_t m, r, nu;
} el_boot_resid_source;

/* The centred residuals of the point fit, res[k r + i] for pair k and
 * component i: y - A x - B u - c, minus each component's mean. states as
 * in el_boot_resid_source; res holds m r + r doubles (the last r are
 * scratch). Nothing fails; nothing is allocated. */
void el_boot_reduced_residuals(const double *states, size_t m, size_t r, size_t nu,
                               const double *a, const double *bm, const double *c,
                               double *res);

/* The automatic block length: Politis-White on each residual component
 * (on up to threads threads), the largest wins, so the component with the
 * longest memory sets the block; rounded and kept in 1..m. res: the
 * stored residuals (el_boot_reduced_residuals), or NULL, and then each
 * component is made from src a chunk of pairs at a time, bit for bit the
 * stored column. *block gets the length. EL_OK or EL_ERR_NOMEM. */
el_status el_boot_auto_block(const double *res, const el_boot_resid_source *src, size_t m,
                             size_t r, size_t threads, size_t *block, el_error *err);

#endif
